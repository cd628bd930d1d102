//! McNemar's exact test of two classifiers scored on the same rows.
//!
//! Of the rows exactly one of the two classifiers gets right, `b` favour the
//! first and `c` the second. Under the null hypothesis (equal error rates)
//! each such discordant row favours either side with probability 1/2, so
//! min(b, c) ~ Binomial(b + c, 1/2). The exact two-sided p-value is
//! p = min(1, 2·P(X ≤ min(b, c))) — the same number as SciPy's
//! `scipy.stats.binomtest(min(b, c), b + c, 0.5, alternative="two-sided")`,
//! whose "probabilities no larger than the observed one" rule reduces to
//! doubling the smaller tail for the symmetric p = 1/2 (checked against
//! SciPy 1.17.1 in `tests/metrics_reference.rs`). The test is McNemar's
//! (Psychometrika 12, 1947; citation from memory); its exact binomial form is
//! the definition `tests/reference/make_metrics_fixture.py` (a copy of the shared fixture script) states.

/// Exponent step used to keep the running binomial coefficient in range.
const RESCALE_BITS: i32 = 600;

/// The exact two-sided McNemar p-value for `b` and `c` discordant rows
/// (see the module docs). `b = c = 0` gives 1.0.
///
/// Stays accurate for b + c up to 10^5 and beyond (within 2e-14 relative of
/// exact rational sums in `tests/metrics_reference.rs`): the tail is summed
/// as ratios to its largest term, and that term's binomial coefficient is
/// built as a product with a separate power-of-two exponent, so nothing
/// overflows or underflows early. The work is O(min(b, c)). Values below the
/// smallest positive double come out as 0.
pub fn mcnemar_exact_p_value(b: u64, c: u64) -> f64 {
    let n = u128::from(b) + u128::from(c);
    let m = u128::from(b.min(c));
    if n == 0 || 2 * m == n {
        // P(X ≤ n/2) ≥ 1/2 for a symmetric binomial, so the doubled tail is ≥ 1.
        return 1.0;
    }
    // Hoeffding: P(X ≤ m) ≤ exp(−2 (n/2 − m)² / n). Past e^−746 the doubled
    // tail is below half the smallest subnormal double, so 0 is its rounding.
    let gap = n as f64 / 2.0 - m as f64;
    if 2.0 * gap * gap / n as f64 > 746.0 {
        return 0.0;
    }
    // C(n, m) = mantissa · 2^exponent.
    let mut mantissa = 1.0f64;
    let mut exponent: i64 = 0;
    for i in 1..=m {
        mantissa *= (n - m + i) as f64 / i as f64;
        if mantissa > 2f64.powi(RESCALE_BITS) {
            mantissa *= 2f64.powi(-RESCALE_BITS);
            exponent += i64::from(RESCALE_BITS);
        }
    }
    // Σ_{k ≤ m} P(X = k) / P(X = m): ratios P(k−1)/P(k) = k / (n − k + 1) < 1.
    let mut term = 1.0f64;
    let mut tail_ratio = 1.0f64;
    let mut k = m;
    while k > 0 {
        term *= k as f64 / (n - k + 1) as f64;
        tail_ratio += term;
        if term < tail_ratio * 1e-18 {
            break;
        }
        k -= 1;
    }
    let scaled = 2.0 * mantissa * tail_ratio;
    let p = times_power_of_two(scaled, exponent - n as i64);
    p.min(1.0)
}

/// `value · 2^power` without overflow or early underflow of the factor.
fn times_power_of_two(mut value: f64, mut power: i64) -> f64 {
    while power > 1000 {
        value *= 2f64.powi(1000);
        power -= 1000;
    }
    while power < -1000 && value != 0.0 {
        value *= 2f64.powi(-1000);
        power += 1000;
    }
    value * 2f64.powi(power as i32)
}

#[cfg(test)]
mod tests {
    //! Worked by hand from the binomial distribution (no outside source).
    use super::*;

    #[test]
    fn small_cases_match_hand_sums() {
        // n = 3, m = 0: 2 · (1/8) = 0.25.
        assert_eq!(mcnemar_exact_p_value(3, 0), 0.25);
        // n = 4, m = 1: 2 · (1 + 4)/16 = 0.625.
        assert_eq!(mcnemar_exact_p_value(1, 3), 0.625);
        assert_eq!(mcnemar_exact_p_value(0, 0), 1.0);
        assert_eq!(mcnemar_exact_p_value(5, 5), 1.0);
    }

    #[test]
    fn extreme_imbalance_underflows_to_zero() {
        // 2 · 2^−2000 is far below the smallest double.
        assert_eq!(mcnemar_exact_p_value(2000, 0), 0.0);
        assert_eq!(mcnemar_exact_p_value(0, 100_000), 0.0);
    }
}
