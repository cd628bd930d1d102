//! A seeded percentile bootstrap interval for the difference of two medians.
//!
//! Each of `resamples` rounds draws `n1` values from the first sample and
//! `n2` values from the second, with replacement and independently, and
//! records `median(first*) - median(second*)`. The interval is the pair of
//! `(1 - level) / 2` and `(1 + level) / 2` quantiles of those differences
//! (linear interpolation, as in [`super::describe`]); Efron & Tibshirani,
//! *An Introduction to the Bootstrap*, 1993, ch. 13. All draws come from a
//! ChaCha8 generator seeded with `seed`, so equal inputs give equal intervals
//! on every platform.

use super::describe::{check_sample, median, quantile_of_sorted};
use crate::{Error, Result};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

/// Default number of bootstrap resamples.
pub const DEFAULT_RESAMPLES: usize = 10_000;

/// A bootstrap interval for `median(first) - median(second)`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MedianDifferenceInterval {
    /// The observed difference of the medians.
    pub estimate: f64,
    /// Lower end of the interval.
    pub low: f64,
    /// Upper end of the interval.
    pub high: f64,
    /// Coverage level, e.g. 0.95.
    pub level: f64,
    /// Bootstrap resamples drawn.
    pub resamples: usize,
    /// Seed of the ChaCha8 generator.
    pub seed: u64,
}

/// The percentile bootstrap interval at `level` (e.g. 0.95) for `median(first) - median(second)`.
pub fn bootstrap_median_difference(
    first: &[f64],
    second: &[f64],
    level: f64,
    resamples: usize,
    seed: u64,
) -> Result<MedianDifferenceInterval> {
    check_sample(first, "bootstrap, first sample")?;
    check_sample(second, "bootstrap, second sample")?;
    if !(level > 0.0 && level < 1.0) {
        return Err(Error::input(format!(
            "the interval's level must lie strictly between 0 and 1, got {level}"
        )));
    }
    if resamples == 0 {
        return Err(Error::input("the bootstrap needs at least 1 resample"));
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut first_draw = vec![0.0; first.len()];
    let mut second_draw = vec![0.0; second.len()];
    let mut differences = Vec::with_capacity(resamples);
    for _ in 0..resamples {
        let left = resampled_median(first, &mut first_draw, &mut rng);
        let right = resampled_median(second, &mut second_draw, &mut rng);
        differences.push(left - right);
    }
    differences.sort_by(f64::total_cmp);
    Ok(MedianDifferenceInterval {
        estimate: median(first)? - median(second)?,
        low: quantile_of_sorted(&differences, (1.0 - level) / 2.0),
        high: quantile_of_sorted(&differences, (1.0 + level) / 2.0),
        level,
        resamples,
        seed,
    })
}

/// Fills `draw` with values of `sample` drawn with replacement and returns their median.
fn resampled_median(sample: &[f64], draw: &mut [f64], rng: &mut ChaCha8Rng) -> f64 {
    for slot in draw.iter_mut() {
        // Drawn as u64 so the stream is the same on 32- and 64-bit platforms.
        *slot = sample[rng.gen_range(0..sample.len() as u64) as usize];
    }
    draw.sort_by(f64::total_cmp);
    quantile_of_sorted(draw, 0.5)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn constant_samples_give_a_point_interval() {
        let interval = bootstrap_median_difference(&[2.0; 4], &[0.5; 3], 0.95, 100, 7);
        let interval = interval.unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(
            (interval.low, interval.estimate, interval.high),
            (1.5, 1.5, 1.5)
        );
    }

    #[test]
    fn bad_settings_are_refused() {
        assert!(bootstrap_median_difference(&[1.0], &[2.0], 1.0, 10, 0).is_err());
        assert!(bootstrap_median_difference(&[1.0], &[2.0], 0.95, 0, 0).is_err());
        assert!(bootstrap_median_difference(&[], &[2.0], 0.95, 10, 0).is_err());
    }
}
