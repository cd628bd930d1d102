//! The Wilson score interval for a proportion.

/// The 95% Wilson score interval (Wilson 1927) for `successes` out of `n`
/// trials, as (low, high). `n == 0` gives (0, 1).
pub fn wilson_interval(successes: u64, n: u64) -> (f64, f64) {
    if n == 0 {
        return (0.0, 1.0);
    }
    // 97.5% quantile of the standard normal distribution.
    let z = 1.959_963_984_540_054_f64;
    let n_f = n as f64;
    let p = successes as f64 / n_f;
    let z2 = z * z;
    let denominator = 1.0 + z2 / n_f;
    let centre = (p + z2 / (2.0 * n_f)) / denominator;
    let half = z * (p * (1.0 - p) / n_f + z2 / (4.0 * n_f * n_f)).sqrt() / denominator;
    ((centre - half).max(0.0), (centre + half).min(1.0))
}

#[cfg(test)]
mod tests {
    use super::wilson_interval;

    /// Reference: statsmodels `proportion_confint(8, 10, method="wilson")`
    /// gives (0.4901625, 0.9433178) — values from memory of that function's
    /// output, re-derived here by hand from the formula.
    #[test]
    fn eight_of_ten() {
        let (lo, hi) = wilson_interval(8, 10);
        assert!((lo - 0.490_162_5).abs() < 1e-6, "{lo}");
        assert!((hi - 0.943_317_8).abs() < 1e-6, "{hi}");
    }

    #[test]
    fn extremes_stay_in_the_unit_interval() {
        let (lo, hi) = wilson_interval(30, 30);
        assert!(lo > 0.88 && lo < 0.89 && hi > 0.999_999, "{lo} {hi}");
        assert_eq!(wilson_interval(0, 0), (0.0, 1.0));
    }
}
