//! Which candidate of a run is the pick: the rule that turns a journal into
//! one architecture for the final evaluation.
//!
//! * With k-fold scores the default is the one-standard-error rule
//!   (Breiman et al. 1984; Hastie, Tibshirani & Friedman, *The Elements of
//!   Statistical Learning*, 2nd ed., §7.10): among the candidates whose mean
//!   objective is within one standard error of the best mean, the one with
//!   the fewest parameters. Folds make small differences visible as noise,
//!   and the rule prefers the simpler network among those the data cannot
//!   tell apart.
//! * With one validation split (no standard error) the default is the top
//!   objective; among equal objectives the fewest parameters, then the
//!   earliest evaluation.

use super::records::EvaluationRecord;
use crate::metrics::{one_standard_error_pick, plain_pick, PickCandidate};
use serde::{Deserialize, Serialize};

/// How the pick is made from a run's scored candidates.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PickRule {
    /// The fewest parameters among the candidates within one standard error
    /// of the best mean (needs k-fold scores; without them it is [`PickRule::Top`]).
    OneSe,
    /// The highest objective; among equal ones the fewest parameters, then
    /// the earliest evaluation.
    Top,
}

impl PickRule {
    /// The default rule: [`PickRule::OneSe`] for k-fold runs, [`PickRule::Top`] otherwise.
    pub fn default_for(folded: bool) -> PickRule {
        if folded {
            PickRule::OneSe
        } else {
            PickRule::Top
        }
    }

    /// The rule's name as the command line and the journal write it.
    pub fn name(self) -> &'static str {
        match self {
            PickRule::OneSe => "one_se",
            PickRule::Top => "top",
        }
    }

    /// A sentence saying how the pick was made, for reports.
    pub fn describe(self) -> &'static str {
        match self {
            PickRule::OneSe => {
                "fewest parameters within one standard error of the best k-fold mean \
                 (one-standard-error rule)"
            }
            PickRule::Top => {
                "highest validation objective (fewest parameters, then earliest, among equals)"
            }
        }
    }
}

/// The pick of a run and how it relates to the best candidate.
#[derive(Debug, Clone, PartialEq)]
pub struct Picked<'a, G> {
    /// The chosen record.
    pub record: &'a EvaluationRecord<G>,
    /// The record with the best objective (the same as `record` under the
    /// top rule, unless a tie went to a smaller network).
    pub best: &'a EvaluationRecord<G>,
    /// The rule that chose it.
    pub rule: PickRule,
    /// Under the one-standard-error rule: the best mean minus its standard
    /// error, the objective a candidate had to reach.
    pub threshold: Option<f64>,
}

/// The pick among `records` by `rule` (`None` when none is scored).
pub fn pick<G>(records: &[EvaluationRecord<G>], rule: PickRule) -> Option<Picked<'_, G>> {
    let scored: Vec<&EvaluationRecord<G>> = records
        .iter()
        .filter(|record| record.objective.is_some_and(f64::is_finite))
        .collect();
    let candidates: Vec<PickCandidate> = scored
        .iter()
        .map(|record| PickCandidate {
            mean: record.objective.unwrap_or(f64::NEG_INFINITY),
            se: record
                .folds
                .as_ref()
                .and_then(|folds| folds.standard_error)
                .unwrap_or(0.0),
            params: record.params.unwrap_or(u64::MAX),
            index: record.index,
        })
        .collect();
    // The best mean, earliest on ties: the candidate whose standard error
    // sets the one-standard-error threshold (as `one_standard_error_pick`).
    let best_position = candidates
        .iter()
        .enumerate()
        .filter(|(_, c)| c.mean.is_finite())
        .reduce(|kept, next| {
            if next.1.mean > kept.1.mean {
                next
            } else {
                kept
            }
        })?
        .0;
    let best = scored[best_position];
    let folded = best.folds.is_some();
    let (position, threshold) = match rule {
        PickRule::OneSe if folded => {
            let se = best
                .folds
                .as_ref()
                .and_then(|folds| folds.standard_error)
                .unwrap_or(0.0);
            (
                one_standard_error_pick(&candidates)?,
                best.objective.map(|mean| mean - se),
            )
        }
        _ => (plain_pick(&candidates)?, None),
    };
    Some(Picked {
        record: scored[position],
        best,
        rule: if folded { rule } else { PickRule::Top },
        threshold,
    })
}
