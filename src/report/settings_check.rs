//! Whether the compared runs were set up alike: same data and split, search
//! space, trainer settings, budget, jobs and gemmule version.

use super::input::ReportRun;
use serde::Serialize;
use serde_json::Value;

/// The outcome of comparing the runs' journal headers.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SettingsCheck {
    /// True when every checked setting is the same in every run.
    pub identical: bool,
    /// The settings checked, in the order checked.
    pub checked: Vec<String>,
    /// One sentence per setting that differs, naming two runs that disagree.
    pub differences: Vec<String>,
}

/// The settings compared, each read from a journal header.
fn settings_of(run: &ReportRun) -> Vec<(&'static str, Value)> {
    let header = &run.journal.header;
    vec![
        ("data and split", header.data.clone()),
        ("search space", header.space.clone()),
        ("trainer settings", header.trainer.clone()),
        ("evaluation budget", Value::from(header.budget.evaluations)),
        ("jobs", Value::from(header.jobs)),
        ("gemmule version", Value::from(header.tool_version.clone())),
    ]
}

/// Compares every run's settings with the first run's.
pub fn check_settings(runs: &[ReportRun]) -> SettingsCheck {
    let Some(first) = runs.first() else {
        return SettingsCheck {
            identical: true,
            checked: Vec::new(),
            differences: Vec::new(),
        };
    };
    let reference = settings_of(first);
    let mut differences = Vec::new();
    for (position, (what, value)) in reference.iter().enumerate() {
        let other = runs.iter().skip(1).find_map(|run| {
            let theirs = settings_of(run).swap_remove(position).1;
            (theirs != *value).then_some((run.name.as_str(), theirs))
        });
        if let Some((name, theirs)) = other {
            differences.push(format!(
                "{what} differ: {} has {}, {name} has {}",
                first.name,
                short(value),
                short(&theirs)
            ));
        }
    }
    SettingsCheck {
        identical: differences.is_empty(),
        checked: reference.iter().map(|(what, _)| what.to_string()).collect(),
        differences,
    }
}

/// A JSON value cut to a readable length.
fn short(value: &Value) -> String {
    let text = value.to_string();
    const LIMIT: usize = 160;
    if text.chars().count() <= LIMIT {
        text
    } else {
        let cut: String = text.chars().take(LIMIT).collect();
        format!("{cut}…")
    }
}
