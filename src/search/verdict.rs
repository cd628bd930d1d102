//! The verdict of a run, built from its journal alone: how candidates were
//! scored, which one the pick rule chooses, the baselines, and whether the
//! pick beat the linear baseline. `search`, `show` (text and JSON) and the
//! report all print it from this one type.

use super::baseline_gap::BaselineGap;
use super::journal::JournalContents;
use super::pick::{pick, PickRule};
use super::records::EvaluationRecord;
use serde::Serialize;

/// One candidate or baseline as the verdict names it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VerdictEntry {
    /// Journal index (`None` for a baseline).
    pub index: Option<u64>,
    /// Genome id, or the baseline's name.
    pub name: String,
    /// Its objective (k-fold mean or validation score).
    pub objective: Option<f64>,
    /// Standard error of the k-fold mean (`None` on one validation split).
    pub standard_error: Option<f64>,
    /// Trainable parameters.
    pub params: Option<u64>,
}

/// The paired difference of the pick over the linear baseline.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GapSummary {
    /// Mean of pick − linear baseline over the folds (or the one difference).
    pub mean: f64,
    /// Its standard error (`None` on one validation split).
    pub standard_error: Option<f64>,
    /// Folds paired (1 on one validation split).
    pub pairs: usize,
    /// Whether the pick is ahead by more than one standard error.
    pub beats_baseline: bool,
    /// The sentence `show` prints.
    pub text: String,
}

impl From<BaselineGap> for GapSummary {
    fn from(gap: BaselineGap) -> Self {
        GapSummary {
            mean: gap.mean,
            standard_error: gap.standard_error,
            pairs: gap.pairs,
            beats_baseline: gap.beats_baseline(),
            text: gap.describe(),
        }
    }
}

/// The verdict of a run (see the module docs).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunVerdict {
    /// K of k-fold scoring (`None`: one validation split).
    pub folds: Option<u32>,
    /// The pick rule applied.
    pub pick_rule: PickRule,
    /// The pick.
    pub pick: Option<VerdictEntry>,
    /// The candidate with the best objective (may differ from the pick).
    pub best: Option<VerdictEntry>,
    /// Under the one-standard-error rule: the objective a candidate had to reach.
    pub threshold: Option<f64>,
    /// The baselines scored on the same split or folds.
    pub baselines: Vec<VerdictEntry>,
    /// Pick minus linear baseline.
    pub baseline_gap: Option<GapSummary>,
}

impl RunVerdict {
    /// The verdict of a journal's contents under `rule` (default: one
    /// standard error for k-fold runs, the top objective otherwise).
    pub fn new<G>(contents: &JournalContents<G>, rule: Option<PickRule>) -> RunVerdict {
        let folds = contents
            .header
            .trainer
            .get("folds")
            .and_then(serde_json::Value::as_u64)
            .map(|k| k as u32);
        let rule = rule.unwrap_or(PickRule::default_for(folds.is_some()));
        let picked = pick(&contents.evaluations, rule);
        let entry = |record: &EvaluationRecord<G>| VerdictEntry {
            index: Some(record.index),
            name: record.id.clone(),
            objective: record.objective,
            standard_error: record.folds.as_ref().and_then(|f| f.standard_error),
            params: record.params,
        };
        let baseline_gap = picked
            .as_ref()
            .and_then(|p| BaselineGap::of(p.record, &contents.baselines))
            .map(GapSummary::from);
        RunVerdict {
            folds,
            pick_rule: picked.as_ref().map_or(rule, |p| p.rule),
            pick: picked.as_ref().map(|p| entry(p.record)),
            best: picked.as_ref().map(|p| entry(p.best)),
            threshold: picked.as_ref().and_then(|p| p.threshold),
            baselines: contents
                .baselines
                .iter()
                .map(|b| VerdictEntry {
                    index: None,
                    name: b.name.clone(),
                    objective: b.evaluation.objective,
                    standard_error: b.evaluation.folds.as_ref().and_then(|f| f.standard_error),
                    params: b.evaluation.params,
                })
                .collect(),
            baseline_gap,
        }
    }

    /// How candidates were scored, in words.
    pub fn scoring(&self) -> String {
        match self.folds {
            Some(k) => format!(
                "{k}-fold cross-validation on train+validation (mean ± standard error over the folds)"
            ),
            None => "one validation split".to_string(),
        }
    }

    /// The verdict as lines of text (no trailing newlines).
    pub fn lines(&self) -> Vec<String> {
        let value = |e: &VerdictEntry| match (e.objective, e.standard_error) {
            (Some(v), Some(se)) => format!("{v:.4} ± {se:.4}"),
            (Some(v), None) => format!("{v:.4}"),
            (None, _) => "not scored".to_string(),
        };
        let mut lines = vec![format!("scoring: {}", self.scoring())];
        if let Some(p) = &self.pick {
            lines.push(format!(
                "pick: evaluation {} (genome {}), {}, {} parameters; rule: {}",
                p.index.unwrap_or(0),
                p.name,
                value(p),
                p.params.map_or("?".to_string(), |n| n.to_string()),
                self.pick_rule.describe()
            ));
            if let (Some(best), Some(threshold)) = (&self.best, self.threshold) {
                if best.index != p.index {
                    lines.push(format!(
                        "  the best mean is evaluation {} ({}, {} parameters); the pick is the \
                         smallest network scoring at least {threshold:.4}",
                        best.index.unwrap_or(0),
                        value(best),
                        best.params.map_or("?".to_string(), |n| n.to_string())
                    ));
                }
            }
        }
        if !self.baselines.is_empty() {
            let listed: Vec<String> = self
                .baselines
                .iter()
                .map(|b| format!("{} {}", b.name.replace('_', " "), value(b)))
                .collect();
            lines.push(format!("baselines: {}", listed.join(", ")));
        }
        if let Some(gap) = &self.baseline_gap {
            lines.push(gap.text.clone());
        }
        lines
    }
}
