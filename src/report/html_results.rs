//! The first sections of `report.html`: what was searched and what it found
//! (comparisons add the statistics of `html_comparison`).

use super::html_comparison::comparison_statistics;
use super::html_page::{duration, facts, or_dash, paragraph, score, table};
use super::input::ReportInput;
use super::summary::ReportSummary;
use crate::search::compare_objectives;
use serde_json::Value;

/// Rows of the leading-candidates table.
const LEADING_ROWS: usize = 10;

fn space_line(space: &Value) -> String {
    let encoding = space.get("encoding").and_then(Value::as_str).unwrap_or("?");
    let settings = space.get("settings").unwrap_or(&Value::Null);
    let number = |key: &str| settings.get(key).and_then(Value::as_u64);
    if encoding != "layers" {
        return format!("{encoding} encoding (all settings under Reproducibility)");
    }
    let activations = settings
        .get("activations")
        .and_then(Value::as_array)
        .map(|list| {
            list.iter()
                .filter_map(Value::as_str)
                .collect::<Vec<_>>()
                .join(", ")
        })
        .unwrap_or_default();
    let residual = match settings.get("residual").and_then(Value::as_bool) {
        Some(true) => "residual skips allowed",
        Some(false) => "no residual skips",
        None => "residual skips unknown",
    };
    format!(
        "multilayer perceptrons: {}–{} hidden layers of {}–{} units; activations {activations}; {residual}",
        or_dash(number("min_layers")),
        or_dash(number("max_layers")),
        or_dash(number("min_width")),
        or_dash(number("max_width")),
    )
}

/// "What was searched": data, space, strategies, objective, budget, seeds.
pub fn searched_section(input: &ReportInput, summary: &ReportSummary) -> String {
    let s = &summary.searched;
    let rows = |key: &str| s.rows.get(key).and_then(Value::as_u64);
    let strategies: Vec<String> = s
        .strategies
        .iter()
        .map(|st| {
            let alias = if st.journal_name == st.name {
                String::new()
            } else {
                format!(", recorded as {}", st.journal_name)
            };
            format!("{}{alias}; settings {}", st.name, st.settings)
        })
        .collect();
    let runs = match &summary.comparison {
        Some(c) => format!(
            "{} of {} planned runs have started ({} strategies × {} seeds)",
            input.runs.len(),
            c.planned_runs,
            s.strategies.len(),
            s.seeds.len()
        ),
        None => "one run".to_string(),
    };
    let pairs = [
        (
            "Data file",
            s.data_file.clone().unwrap_or_else(|| "–".to_string()),
        ),
        (
            "Rows",
            format!(
                "{} train, {} validation, {} test (sealed)",
                or_dash(rows("train")),
                or_dash(rows("valid")),
                or_dash(rows("test"))
            ),
        ),
        ("Inputs", format!("{} encoded features", s.features)),
        (
            "Classes",
            format!("{} ({})", s.classes.len(), s.classes.join(", ")),
        ),
        ("Search space", space_line(&s.space)),
        ("Strategy", strategies.join("; ")),
        (
            "Candidates ranked by",
            format!("validation {}", summary.objective),
        ),
        (
            "Budget",
            format!("{} evaluations per run", s.evaluations_per_run),
        ),
        (
            "Seeds",
            s.seeds
                .iter()
                .map(u64::to_string)
                .collect::<Vec<_>>()
                .join(", "),
        ),
        ("Runs", runs),
    ];
    facts(&pairs)
}

/// "Results" of any report: per-run figures and the leading candidates; a
/// comparison adds its statistics.
pub fn results_section(input: &ReportInput, summary: &ReportSummary) -> String {
    let mut out = String::new();
    if let Some(comparison) = &summary.comparison {
        if !comparison.not_started.is_empty() {
            out.push_str(&paragraph(
                &format!(
                    "Not started yet: {}. Run `gemmule compare` with the same options to finish the comparison.",
                    comparison.not_started.join(", ")
                ),
                Some("warning"),
            ));
        }
        match (&comparison.statistics, &comparison.statistics_unavailable) {
            (Some(report), _) => out.push_str(&comparison_statistics(report)),
            (None, Some(why)) => out.push_str(&paragraph(
                &format!("No statistics yet: {why}"),
                Some("warning"),
            )),
            (None, None) => {}
        }
    }
    out.push_str("<h3>Runs</h3>\n");
    let rows: Vec<Vec<String>> = summary
        .runs
        .iter()
        .map(|run| {
            let statuses: Vec<String> = run
                .statuses
                .iter()
                .map(|(k, v)| format!("{v} {k}"))
                .collect();
            vec![
                run.name.clone(),
                run.strategy.clone(),
                run.seed.to_string(),
                run.evaluations.to_string(),
                statuses.join(", "),
                score(run.best_objective),
                or_dash(run.best_index.map(|i| format!("#{i}"))),
                duration(run.cpu_seconds),
                duration(run.search_seconds),
            ]
        })
        .collect();
    out.push_str(&table(
        &[
            "run",
            "strategy",
            "seed",
            "evaluations",
            "statuses",
            &format!("best {}", summary.objective),
            "best at",
            "training time",
            "search time",
        ],
        &rows,
    ));
    out.push_str(&paragraph(
        "Training time sums every candidate's training; search time is the elapsed time of the search sessions (they differ when candidates train in parallel).",
        Some("note"),
    ));
    out.push_str(&leading_candidates(input, summary));
    out
}

fn leading_candidates(input: &ReportInput, summary: &ReportSummary) -> String {
    let mut ranked: Vec<(&str, &crate::search::EvaluationRecord<Value>)> = input
        .runs
        .iter()
        .flat_map(|run| {
            run.journal
                .evaluations
                .iter()
                .map(move |r| (run.name.as_str(), r))
        })
        .filter(|(_, r)| r.objective.is_some())
        .collect();
    ranked.sort_by(|a, b| compare_objectives(b.1.objective, a.1.objective));
    let several = input.runs.len() > 1;
    let rows: Vec<Vec<String>> = ranked
        .iter()
        .take(LEADING_ROWS)
        .enumerate()
        .map(|(rank, (run, r))| {
            let mut row = vec![(rank + 1).to_string()];
            if several {
                row.push(run.to_string());
            }
            row.extend([
                format!("#{}", r.index),
                r.id.clone(),
                score(r.objective),
                or_dash(r.params),
                or_dash(r.madds),
                r.epochs.to_string(),
                r.mutation.clone().unwrap_or_else(|| "sampled".to_string()),
                or_dash(r.parent.map(|p| format!("#{p}"))),
            ]);
            row
        })
        .collect();
    let objective = format!("validation {}", summary.objective);
    let mut head = vec!["rank"];
    if several {
        head.push("run");
    }
    head.extend([
        "index",
        "genome id",
        objective.as_str(),
        "params",
        "mult-adds",
        "epochs",
        "made by",
        "parent",
    ]);
    format!(
        "<h3>Leading candidates</h3>\n{}",
        if rows.is_empty() {
            paragraph("No evaluation has a score yet.", Some("note"))
        } else {
            table(&head, &rows)
        }
    )
}
