//! Mean and standard error of per-fold scores, and the rules that pick one
//! candidate from cross-validated results.
//!
//! The standard error of a mean of n fold scores is s / √n with s the sample
//! standard deviation (divisor n − 1, [`crate::stats::sample_sd`]); this is
//! the estimate the one-standard-error rule uses (Hastie, Tibshirani &
//! Friedman, *The Elements of Statistical Learning*, 2nd ed., §7.10, which
//! also treats the folds as independent, an approximation since their
//! training sets overlap).
//!
//! The one-standard-error rule (Breiman, Friedman, Olshen & Stone,
//! *Classification and Regression Trees*, 1984; ESL 2nd ed. §7.10): among
//! the candidates whose mean score is within one standard error of the best
//! mean, take the simplest — here the one with the fewest parameters.

use crate::stats::{mean, sample_sd};
use crate::{Error, Result};

/// The mean of a sample and its standard error.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MeanAndError {
    /// Arithmetic mean.
    pub mean: f64,
    /// Sample standard deviation (divisor n − 1) over √n.
    pub standard_error: f64,
    /// Number of values.
    pub count: usize,
}

/// The mean and standard error (s / √n, s with divisor n − 1) of `values`.
///
/// Errors ([`Error::Input`]): fewer than 2 values (one value has no spread
/// to estimate) or a NaN or infinite value.
pub fn mean_and_standard_error(values: &[f64]) -> Result<MeanAndError> {
    if values.len() < 2 {
        return Err(Error::input(format!(
            "a standard error needs at least 2 values (one per fold), got {}; use 2 or more \
             folds",
            values.len()
        )));
    }
    let centre = mean(values)?;
    let sd = sample_sd(values)?.ok_or_else(|| {
        Error::internal("the sample standard deviation of 2 or more values is defined")
    })?;
    Ok(MeanAndError {
        mean: centre,
        standard_error: sd / (values.len() as f64).sqrt(),
        count: values.len(),
    })
}

/// One candidate as the pick rules see it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PickCandidate {
    /// Mean score over the folds (higher is better).
    pub mean: f64,
    /// Standard error of that mean.
    pub se: f64,
    /// Trainable parameters: fewer is simpler.
    pub params: u64,
    /// The candidate's evaluation index: earlier (lower) wins the last tie.
    pub index: u64,
}

/// The position in `candidates` of the one-standard-error pick (see the
/// module docs), or `None` when no candidate has a finite mean.
///
/// Best = highest mean (ties: lowest `index`). Threshold = best.mean −
/// best.se. Among candidates with mean ≥ threshold: fewest `params`, then
/// highest mean, then lowest `index` (then earliest position). Candidates
/// with a NaN or infinite mean are ignored; a NaN, infinite or negative
/// standard error of the best counts as 0 (the rule then reduces to
/// [`plain_pick`] among candidates tied with the best).
pub fn one_standard_error_pick(candidates: &[PickCandidate]) -> Option<usize> {
    let usable = || {
        candidates
            .iter()
            .enumerate()
            .filter(|(_, c)| c.mean.is_finite())
    };
    let (_, best) = usable().reduce(|kept, next| {
        if next.1.mean > kept.1.mean || (next.1.mean == kept.1.mean && next.1.index < kept.1.index)
        {
            next
        } else {
            kept
        }
    })?;
    let se = if best.se.is_finite() && best.se > 0.0 {
        best.se
    } else {
        0.0
    };
    let threshold = best.mean - se;
    usable()
        .filter(|(_, c)| c.mean >= threshold)
        .reduce(|kept, next| {
            let (a, b) = (kept.1, next.1);
            let better = b.params < a.params
                || (b.params == a.params
                    && (b.mean > a.mean || (b.mean == a.mean && b.index < a.index)));
            if better {
                next
            } else {
                kept
            }
        })
        .map(|(position, _)| position)
}

/// The position in `candidates` of the plain pick (no folds): highest mean;
/// among equal means the fewest `params`, then the lowest `index` (then the
/// earliest position). `None` when no candidate has a finite mean; `se` is
/// not used.
pub fn plain_pick(candidates: &[PickCandidate]) -> Option<usize> {
    candidates
        .iter()
        .enumerate()
        .filter(|(_, c)| c.mean.is_finite())
        .reduce(|kept, next| {
            let (a, b) = (kept.1, next.1);
            let better = b.mean > a.mean
                || (b.mean == a.mean
                    && (b.params < a.params || (b.params == a.params && b.index < a.index)));
            if better {
                next
            } else {
                kept
            }
        })
        .map(|(position, _)| position)
}
