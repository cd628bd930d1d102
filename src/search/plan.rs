//! What the caller asks of a run: seed, workers, budget and the descriptive
//! header blocks, and how a resumed run is matched against its journal.

use super::budget::Budget;
use super::records::{
    BaselineRecord, RunHeader, StrategyInfo, JOURNAL_FORMAT, SESSION_FIELDS, TOOL_VERSION,
};
use super::scheduler::proposal_lag;
use crate::{Error, Result};
use serde_json::Value;

/// The settings of a search run that are not the strategy's own.
#[derive(Debug, Clone, PartialEq)]
pub struct SearchPlan {
    /// The run seed.
    pub seed: u64,
    /// Worker threads (at least 1). Fixes the information lag of proposals,
    /// so the journal depends on it.
    pub jobs: usize,
    /// Spending limits of this session.
    pub budget: Budget,
    /// The search space's settings, for the header (e.g. `SearchSpace::describe`).
    pub space: Value,
    /// The data's identity (source, fingerprint, split), for the header.
    pub data: Value,
    /// The trainer's settings, for the header.
    pub trainer: Value,
    /// Baselines scored on the same split or folds, journaled right after
    /// the header of a new run (and of a resumed run whose journal has no
    /// evaluation and no baseline yet); empty for none.
    pub baselines: Vec<BaselineRecord>,
}

impl SearchPlan {
    /// Checks `jobs >= 1` and the budget.
    pub fn check(&self) -> Result<()> {
        if self.jobs == 0 {
            return Err(Error::input("the number of jobs must be at least 1"));
        }
        self.budget.check()
    }

    /// The journal header of a run with this plan and strategy.
    pub fn header(&self, strategy_name: &str, strategy_settings: Value) -> RunHeader {
        RunHeader {
            format: JOURNAL_FORMAT,
            tool_version: TOOL_VERSION.to_string(),
            strategy: StrategyInfo {
                name: strategy_name.to_string(),
                settings: strategy_settings,
            },
            seed: self.seed,
            jobs: self.jobs,
            lag: Some(proposal_lag(self.jobs)).filter(|&lag| lag != self.jobs as u64),
            budget: self.budget,
            space: self.space.clone(),
            data: self.data.clone(),
            trainer: self.trainer.clone(),
        }
    }
}

/// Checks that `current` describes the same run as the journal's `stored`
/// header, ignoring the per-session fields (`format`, `tool_version`, `budget`).
///
/// The error names every differing top-level field with both values.
pub fn check_same_run(stored: &RunHeader, current: &RunHeader) -> Result<()> {
    let (stored_value, current_value) = match (to_map(stored), to_map(current)) {
        (Some(a), Some(b)) => (a, b),
        _ => {
            return Err(Error::internal(
                "a run header did not serialize to an object",
            ))
        }
    };
    let mut differences = Vec::new();
    let mut fields: Vec<&String> = stored_value.keys().chain(current_value.keys()).collect();
    fields.sort();
    fields.dedup();
    for field in fields {
        if SESSION_FIELDS.contains(&field.as_str()) {
            continue;
        }
        let before = stored_value.get(field).unwrap_or(&Value::Null);
        let now = current_value.get(field).unwrap_or(&Value::Null);
        if before != now {
            differences.push(format!(
                "`{field}`: journal has {}, this run has {}",
                abbreviate(before),
                abbreviate(now)
            ));
        }
    }
    if differences.is_empty() {
        return Ok(());
    }
    Err(Error::input(format!(
        "header mismatch, this is not the same run: {}",
        differences.join("; ")
    )))
}

fn to_map(header: &RunHeader) -> Option<serde_json::Map<String, Value>> {
    match serde_json::to_value(header) {
        Ok(Value::Object(map)) => Some(map),
        _ => None,
    }
}

fn abbreviate(value: &Value) -> String {
    const LIMIT: usize = 120;
    let text = value.to_string();
    match text.char_indices().nth(LIMIT) {
        Some((cut, _)) => format!("{}…", &text[..cut]),
        None => text,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn plan() -> SearchPlan {
        SearchPlan {
            seed: 1,
            jobs: 2,
            budget: Budget::evaluations(10),
            space: json!({"width": 3}),
            data: json!({"fingerprint": "abc"}),
            trainer: json!({}),
            baselines: Vec::new(),
        }
    }

    #[test]
    fn budget_and_version_may_change_but_data_may_not() {
        let stored = plan().header("random_sampling", json!({}));
        let mut later = plan();
        later.budget = Budget::evaluations(50);
        let mut current = later.header("random_sampling", json!({}));
        current.tool_version = "9.0.0".into();
        assert!(check_same_run(&stored, &current).is_ok());
        later.data = json!({"fingerprint": "abd"});
        later.jobs = 3;
        let message = check_same_run(&stored, &later.header("random_sampling", json!({})))
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(
            message.contains("`data`") && message.contains("`jobs`"),
            "{message}"
        );
        assert!(!message.contains("`budget`"), "{message}");
    }
}
