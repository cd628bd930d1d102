//! Descriptive statistics of a sample of finite numbers.
//!
//! Quantiles use linear interpolation between order statistics (Hyndman &
//! Fan's definition 7, NumPy's default `method="linear"`): for probability
//! `p` and sorted values `x[0..n]`, `h = (n - 1) p` and the quantile is
//! `x[floor(h)] + (h - floor(h)) (x[floor(h) + 1] - x[floor(h)])`.

use crate::{Error, Result};
use serde::Serialize;

/// Refuses an empty sample or one with NaN or infinite values; `what` names it in the message.
pub fn check_sample(values: &[f64], what: &str) -> Result<()> {
    if values.is_empty() {
        return Err(Error::input(format!("{what}: the sample is empty")));
    }
    if let Some(bad) = values.iter().find(|v| !v.is_finite()) {
        return Err(Error::input(format!(
            "{what}: the sample holds a non-finite value ({bad})"
        )));
    }
    Ok(())
}

/// The values sorted ascending (after [`check_sample`]).
pub fn sorted(values: &[f64], what: &str) -> Result<Vec<f64>> {
    check_sample(values, what)?;
    let mut copy = values.to_vec();
    copy.sort_by(f64::total_cmp);
    Ok(copy)
}

/// The arithmetic mean.
pub fn mean(values: &[f64]) -> Result<f64> {
    check_sample(values, "mean")?;
    Ok(values.iter().sum::<f64>() / values.len() as f64)
}

/// The sample standard deviation (divisor `n - 1`); `None` for a single value.
pub fn sample_sd(values: &[f64]) -> Result<Option<f64>> {
    let centre = mean(values)?;
    if values.len() < 2 {
        return Ok(None);
    }
    let squares: f64 = values.iter().map(|v| (v - centre) * (v - centre)).sum();
    Ok(Some((squares / (values.len() - 1) as f64).sqrt()))
}

/// The median (the 0.5 quantile: the mean of the two middle values for an even count).
pub fn median(values: &[f64]) -> Result<f64> {
    quantile(values, 0.5)
}

/// The smallest value.
pub fn min(values: &[f64]) -> Result<f64> {
    check_sample(values, "min")?;
    Ok(values.iter().copied().fold(f64::INFINITY, f64::min))
}

/// The largest value.
pub fn max(values: &[f64]) -> Result<f64> {
    check_sample(values, "max")?;
    Ok(values.iter().copied().fold(f64::NEG_INFINITY, f64::max))
}

/// The `probability` quantile by linear interpolation (see the module docs).
pub fn quantile(values: &[f64], probability: f64) -> Result<f64> {
    if !(0.0..=1.0).contains(&probability) {
        return Err(Error::input(format!(
            "a quantile's probability must lie in 0..=1, got {probability}"
        )));
    }
    Ok(quantile_of_sorted(
        &sorted(values, "quantile")?,
        probability,
    ))
}

/// The `probability` quantile of already sorted, non-empty values.
pub(crate) fn quantile_of_sorted(ascending: &[f64], probability: f64) -> f64 {
    let last = ascending.len().saturating_sub(1);
    let position = last as f64 * probability;
    let below = (position.floor() as usize).min(last);
    let above = (below + 1).min(last);
    let fraction = position - below as f64;
    ascending[below] + fraction * (ascending[above] - ascending[below])
}

/// The lower quartile, median and upper quartile (0.25, 0.5, 0.75 quantiles).
pub fn quartiles(values: &[f64]) -> Result<[f64; 3]> {
    let ascending = sorted(values, "quartiles")?;
    Ok([0.25, 0.5, 0.75].map(|p| quantile_of_sorted(&ascending, p)))
}

/// Count, centre and spread of a sample.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Summary {
    /// Number of values.
    pub count: usize,
    /// Arithmetic mean.
    pub mean: f64,
    /// Sample standard deviation (divisor `n - 1`); `None` for one value.
    pub sd: Option<f64>,
    /// Smallest value.
    pub min: f64,
    /// Lower quartile.
    pub q1: f64,
    /// Median.
    pub median: f64,
    /// Upper quartile.
    pub q3: f64,
    /// Largest value.
    pub max: f64,
}

impl Summary {
    /// Summarizes a non-empty sample of finite values.
    pub fn of(values: &[f64]) -> Result<Summary> {
        let [q1, median, q3] = quartiles(values)?;
        Ok(Summary {
            count: values.len(),
            mean: mean(values)?,
            sd: sample_sd(values)?,
            min: min(values)?,
            q1,
            median,
            q3,
            max: max(values)?,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn small_samples_by_hand() {
        let values = [4.0, 1.0, 3.0, 2.0];
        assert_eq!(mean(&values).ok(), Some(2.5));
        assert_eq!(median(&values).ok(), Some(2.5));
        // Linear interpolation: h = 3 * 0.25 = 0.75 -> 1 + 0.75 * (2 - 1).
        assert_eq!(quartiles(&values).ok(), Some([1.75, 2.5, 3.25]));
        let sd = sample_sd(&values).ok().flatten().unwrap_or(f64::NAN);
        assert!((sd - (5.0f64 / 3.0).sqrt()).abs() < 1e-15);
        assert_eq!(sample_sd(&[7.0]).ok(), Some(None));
        assert_eq!(min(&values).ok(), Some(1.0));
        assert_eq!(max(&values).ok(), Some(4.0));
    }

    #[test]
    fn empty_and_non_finite_samples_are_refused() {
        assert!(mean(&[]).is_err());
        assert!(median(&[1.0, f64::NAN]).is_err());
        assert!(quantile(&[1.0], 1.5).is_err());
        assert!(Summary::of(&[f64::INFINITY]).is_err());
    }
}
