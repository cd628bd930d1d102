//! The Mann–Whitney U test (Wilcoxon rank-sum test) of two independent samples.
//!
//! Conventions follow SciPy's `scipy.stats.mannwhitneyu` (checked against
//! SciPy 1.17.1 in `tests/stats_reference.rs`):
//!
//! * `u` is the statistic of the first sample: `U1 = R1 - n1 (n1 + 1) / 2`,
//!   where `R1` is the sum of the first sample's ranks in the pooled sample
//!   (tied values get the mean of their ranks);
//! * [`Alternative::Greater`] tests whether the first sample is
//!   stochastically greater than the second, and its p-value is `P(U >= U1)`;
//!   [`Alternative::Less`] uses `P(U >= U2)` with `U2 = n1 n2 - U1`;
//!   [`Alternative::TwoSided`] doubles `P(U >= max(U1, U2))`; every p-value
//!   is clipped to at most 1;
//! * [`PValueMethod::Auto`] uses the exact null distribution when the pooled
//!   sample has no ties and at least one sample has at most 8 values (SciPy's
//!   rule; beyond the enumeration bounds of [`super::exact_upper_tail`] it
//!   falls back), and the normal approximation otherwise. The approximation uses
//!   the tie-corrected standard deviation
//!   `sqrt(n1 n2 / 12 * ((n + 1) - sum(t^3 - t) / (n (n - 1))))` and a
//!   continuity correction of 0.5 toward the mean.

use super::describe::check_sample;
use super::exact_u::{exact_is_affordable, exact_upper_tail};
use super::normal::normal_sf;
use crate::{Error, Result};
use serde::Serialize;

/// The alternative hypothesis, about the first sample relative to the second.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Alternative {
    /// The first sample is stochastically greater than the second.
    Greater,
    /// The first sample is stochastically less than the second.
    Less,
    /// The two samples' distributions differ in location.
    TwoSided,
}

/// How the p-value is computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PValueMethod {
    /// Exact without ties when a sample has at most 8 values, otherwise the
    /// normal approximation (see the module docs).
    Auto,
    /// The exact null distribution (refused when there are ties).
    Exact,
    /// The normal approximation with tie and continuity correction.
    Normal,
}

/// The outcome of a Mann–Whitney U test.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MannWhitney {
    /// `U1`, the statistic of the first sample.
    pub u: f64,
    /// The p-value for `alternative`.
    pub p_value: f64,
    /// The alternative hypothesis tested.
    pub alternative: Alternative,
    /// The method that produced the p-value (never `Auto`).
    pub method: PValueMethod,
    /// Size of the first sample.
    pub first_count: usize,
    /// Size of the second sample.
    pub second_count: usize,
    /// Whether the pooled sample holds tied values.
    pub ties: bool,
}

/// Largest sample size, on at least one side, for which `Auto` uses the exact distribution.
pub const AUTO_EXACT_MAX_SIZE: usize = 8;

/// Tests `first` against `second` (see the module docs for the conventions).
///
/// Samples must be non-empty and finite.
pub fn mann_whitney_u(
    first: &[f64],
    second: &[f64],
    alternative: Alternative,
    method: PValueMethod,
) -> Result<MannWhitney> {
    check_sample(first, "Mann–Whitney test, first sample")?;
    check_sample(second, "Mann–Whitney test, second sample")?;
    let (n1, n2) = (first.len(), second.len());
    let pooled: Vec<f64> = first.iter().chain(second).copied().collect();
    let (ranks, tie_sizes) = midranks(&pooled);
    let ties = tie_sizes.iter().any(|&t| t > 1);
    let rank_sum: f64 = ranks[..n1].iter().sum();
    let (m, n) = (n1 as f64, n2 as f64);
    let u1 = rank_sum - m * (m + 1.0) / 2.0;
    let u2 = m * n - u1;
    let (tail_u, factor) = match alternative {
        Alternative::Greater => (u1, 1.0),
        Alternative::Less => (u2, 1.0),
        Alternative::TwoSided => (u1.max(u2), 2.0),
    };
    let resolved = match method {
        PValueMethod::Auto => {
            let small = n1.min(n2) <= AUTO_EXACT_MAX_SIZE;
            if small && !ties && exact_is_affordable(n1, n2) {
                PValueMethod::Exact
            } else {
                PValueMethod::Normal
            }
        }
        PValueMethod::Exact if ties => return Err(Error::input(
            "the exact Mann–Whitney p-value assumes no tied values; use the normal approximation",
        )),
        other => other,
    };
    let tail = match resolved {
        PValueMethod::Exact => exact_upper_tail(tail_u.round() as u64, n1, n2)?,
        _ => {
            let total = m + n;
            let tie_term: f64 = tie_sizes
                .iter()
                .map(|&t| {
                    let t = t as f64;
                    t * t * t - t
                })
                .sum();
            let sd = (m * n / 12.0 * ((total + 1.0) - tie_term / (total * (total - 1.0)))).sqrt();
            normal_sf((tail_u - m * n / 2.0 - 0.5) / sd)
        }
    };
    Ok(MannWhitney {
        u: u1,
        p_value: (tail * factor).clamp(0.0, 1.0),
        alternative,
        method: resolved,
        first_count: n1,
        second_count: n2,
        ties,
    })
}

/// Ranks 1..=n with ties given their mean rank, and the sizes of the tie groups.
fn midranks(values: &[f64]) -> (Vec<f64>, Vec<usize>) {
    let mut order: Vec<usize> = (0..values.len()).collect();
    order.sort_by(|&a, &b| values[a].total_cmp(&values[b]));
    let mut ranks = vec![0.0; values.len()];
    let mut groups = Vec::new();
    let mut start = 0;
    while start < order.len() {
        let mut end = start + 1;
        while end < order.len() && values[order[end]] == values[order[start]] {
            end += 1;
        }
        // Positions start..end hold ranks start+1..=end; their mean:
        let rank = (start + 1 + end) as f64 / 2.0;
        for &index in &order[start..end] {
            ranks[index] = rank;
        }
        groups.push(end - start);
        start = end;
    }
    (ranks, groups)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn midranks_average_ties() {
        let (ranks, groups) = midranks(&[3.0, 1.0, 3.0, 2.0]);
        assert_eq!(ranks, vec![3.5, 1.0, 3.5, 2.0]);
        assert_eq!(groups, vec![1, 1, 2]);
    }

    #[test]
    fn separated_samples_give_extreme_u() {
        let high = [10.0, 11.0, 12.0];
        let low = [1.0, 2.0, 3.0, 4.0];
        let result = mann_whitney_u(&high, &low, Alternative::Greater, PValueMethod::Auto);
        let result = result.unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(result.u, 12.0);
        assert_eq!(result.method, PValueMethod::Exact);
        assert!((result.p_value - 1.0 / 35.0).abs() < 1e-16);
        let less = mann_whitney_u(&high, &low, Alternative::Less, PValueMethod::Auto);
        assert_eq!(less.map(|r| r.p_value).ok(), Some(1.0));
    }

    #[test]
    fn exact_with_ties_and_bad_input_are_refused() {
        let tied = mann_whitney_u(
            &[1.0, 2.0],
            &[2.0],
            Alternative::Greater,
            PValueMethod::Exact,
        );
        assert!(tied.is_err());
        assert!(mann_whitney_u(&[], &[1.0], Alternative::Less, PValueMethod::Auto).is_err());
        let all_tied = mann_whitney_u(
            &[1.0, 1.0],
            &[1.0],
            Alternative::TwoSided,
            PValueMethod::Auto,
        );
        assert_eq!(all_tied.map(|r| r.p_value).ok(), Some(1.0));
    }
}
