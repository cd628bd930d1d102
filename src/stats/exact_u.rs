//! The exact null distribution of the Mann–Whitney U statistic without ties.
//!
//! Under the null hypothesis every one of the `C(m + n, m)` orderings of the
//! two samples is equally likely, and the number of orderings with `U = k`
//! is the coefficient of `q^k` in the Gaussian binomial coefficient
//! `[m + n choose m]_q = prod_{i=1..m} (1 - q^(n+i)) / (1 - q^i)`
//! (Andrews, *The Theory of Partitions*, 1976, Thm. 3.1). The counts are
//! computed exactly with big integers, so tail probabilities keep full
//! relative precision.

use crate::{Error, Result};
use num_bigint::BigUint;

/// Largest `m * n` the exact distribution is computed for (memory bound).
pub const MAX_PRODUCT: u64 = 1_000_000;
/// Largest `min(m, n) * m * n` (work bound: big-integer additions).
pub const MAX_WORK: u64 = 100_000_000;

/// Whether the exact distribution for sample sizes `m` and `n` is within the bounds.
pub fn exact_is_affordable(m: usize, n: usize) -> bool {
    let (m, n) = (m as u64, n as u64);
    let product = m.saturating_mul(n);
    product <= MAX_PRODUCT && m.min(n).saturating_mul(product) <= MAX_WORK
}

/// `counts[k]`: the number of orderings of samples of sizes `m` and `n` with `U = k`.
fn counts(m: usize, n: usize) -> Vec<BigUint> {
    let (small, large) = (m.min(n), m.max(n));
    let mut current = vec![BigUint::from(1u8)];
    for i in 1..=small {
        let degree = i * large;
        // Divide by (1 - q^i) as a power series, truncated at `degree` ...
        let mut divided: Vec<BigUint> = Vec::with_capacity(degree + 1);
        for k in 0..=degree {
            let mut value = current.get(k).cloned().unwrap_or_default();
            if k >= i {
                value += &divided[k - i];
            }
            divided.push(value);
        }
        // ... then multiply by (1 - q^(large + i)); every coefficient stays >= 0.
        let step = large + i;
        let mut next = divided.clone();
        for k in step..=degree {
            next[k] -= &divided[k - step];
        }
        current = next;
    }
    current
}

/// `P(U >= u)` under the null hypothesis for samples of sizes `m` and `n` without ties.
///
/// Refused when the sizes exceed [`exact_is_affordable`].
pub fn exact_upper_tail(u: u64, m: usize, n: usize) -> Result<f64> {
    if m == 0 || n == 0 {
        return Err(Error::input(
            "the exact U distribution needs two non-empty samples",
        ));
    }
    if !exact_is_affordable(m, n) {
        return Err(Error::input(format!(
            "the exact U distribution for samples of {m} and {n} values is too large to enumerate; use the normal approximation"
        )));
    }
    let table = counts(m, n);
    let total: BigUint = table.iter().sum();
    let start = usize::try_from(u).unwrap_or(usize::MAX);
    let tail: BigUint = table.iter().skip(start).sum();
    Ok(ratio(&tail, &total))
}

/// `numerator / denominator` as the nearest-ish double (relative error below 1e-15).
fn ratio(numerator: &BigUint, denominator: &BigUint) -> f64 {
    if numerator.bits() == 0 {
        return 0.0;
    }
    let shift = denominator.bits() + 64;
    let quotient = (numerator << shift) / denominator;
    let drop = quotient.bits().saturating_sub(64);
    let top = (&quotient >> drop).iter_u64_digits().next().unwrap_or(0) as f64;
    let exponent = drop as i64 - shift as i64;
    let half = (exponent / 2) as i32;
    let rest = (exponent - exponent / 2) as i32;
    top * 2f64.powi(half) * 2f64.powi(rest)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_match_small_enumerations() {
        // m = 2, n = 2: orderings xxyy..yyxx give U = 0, 1, 2, 2, 3, 4.
        let expected: Vec<BigUint> = [1u8, 1, 2, 1, 1].iter().map(|&c| c.into()).collect();
        assert_eq!(counts(2, 2), expected);
        // The counts of m = 3, n = 4 sum to C(7, 3) = 35 and are symmetric.
        let table = counts(3, 4);
        let total: BigUint = table.iter().sum();
        assert_eq!(total, BigUint::from(35u8));
        let reversed: Vec<BigUint> = table.iter().rev().cloned().collect();
        assert_eq!(table, reversed);
        assert_eq!(counts(4, 3), table);
    }

    #[test]
    fn tails_and_ratios() {
        assert_eq!(exact_upper_tail(0, 3, 4).ok(), Some(1.0));
        // P(U >= 12) = 1 / 35 for m = 3, n = 4 (only yyyyxxx).
        let tail = exact_upper_tail(12, 3, 4).unwrap_or(f64::NAN);
        assert!((tail - 1.0 / 35.0).abs() < 1e-17);
        assert_eq!(exact_upper_tail(13, 3, 4).ok(), Some(0.0));
        let third = ratio(&BigUint::from(1u8), &BigUint::from(3u8));
        assert!((third - 1.0 / 3.0).abs() < 1e-16);
        assert!(exact_upper_tail(1, 0, 3).is_err());
        assert!(exact_upper_tail(1, 2000, 2000).is_err());
    }
}
