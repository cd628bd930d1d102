//! The later sections of `report.html`: the best architecture, its lineage,
//! the Pareto-optimal candidates, the test split and reproducibility.

use super::figures::ReportFigures;
use super::html_page::{
    duration, escape, facts, figure, json_block, or_dash, paragraph, score, table,
};
use super::input::ReportInput;
use super::summary::ReportSummary;
use crate::render::DrawableGenome;
use serde_json::Value;

fn count_of(data: &Value, key: &str) -> Option<usize> {
    data.get(key).and_then(Value::as_array).map(Vec::len)
}

/// "Best architecture": where it was found, its scores, its graph and genome.
pub fn architecture_section(input: &ReportInput, summary: &ReportSummary) -> String {
    let Some(best) = &summary.best else {
        return paragraph(
            "No evaluation has a score yet, so there is no best candidate.",
            Some("note"),
        );
    };
    let mut pairs = vec![
        (
            "Found in",
            format!(
                "run {} ({}), evaluation #{}",
                best.run, best.strategy, best.index
            ),
        ),
        ("Genome id", best.id.clone()),
    ];
    let scores: Vec<String> = best
        .scores
        .iter()
        .map(|(name, value)| format!("{name} {value:.4}"))
        .collect();
    pairs.push(("Validation scores", scores.join(", ")));
    pairs.push(("Objective", score(best.objective)));
    pairs.push((
        "Size",
        format!(
            "{} trainable parameters, {} multiply-adds per example",
            or_dash(best.params),
            or_dash(best.madds)
        ),
    ));
    pairs.push(("Epochs trained", best.epochs.to_string()));
    pairs.push((
        "Made by",
        match (&best.mutation, best.parent) {
            (Some(mutation), Some(parent)) => format!("{mutation} of evaluation #{parent}"),
            _ => "sampled from the search space (no parent)".to_string(),
        },
    ));
    let mut out = facts(&pairs);
    let data = input
        .runs
        .iter()
        .find(|run| run.name == best.run)
        .map(|run| &run.journal.header.data);
    let (inputs, classes) = data.map_or((None, None), |d| {
        (count_of(d, "features"), count_of(d, "classes"))
    });
    match DrawableGenome::from_value(&best.genome, &format!("evaluation #{}", best.index)) {
        Ok(genome) => out.push_str(&figure(
            &genome.svg(inputs, classes),
            "The network of the best candidate, input at the top.",
            "graph",
        )),
        Err(e) => out.push_str(&paragraph(
            &format!("This genome cannot be drawn: {e}"),
            Some("warning"),
        )),
    }
    out.push_str("<h3>Genome</h3>\n");
    out.push_str(&json_block(&best.genome));
    out
}

/// "Lineage": the objective along the chain of parents, as a plot and a table.
pub fn lineage_section(figures: &ReportFigures, summary: &ReportSummary) -> String {
    if summary.lineage.is_empty() {
        return paragraph(
            "There is no best candidate, so there is no lineage.",
            Some("note"),
        );
    }
    let mut out = String::new();
    if summary.lineage.len() == 1 {
        out.push_str(&paragraph(
            "The best candidate was sampled from the search space, not derived from a parent: its lineage is itself.",
            Some("note"),
        ));
    }
    out.push_str(&figure(
        &figures.lineage,
        "Each point is one ancestor of the best candidate, oldest on the left; the line shows how the validation score changed from parent to child.",
        "plot",
    ));
    let rows: Vec<Vec<String>> = summary
        .lineage
        .iter()
        .enumerate()
        .map(|(step, link)| {
            vec![
                step.to_string(),
                format!("#{}", link.index),
                link.id.clone(),
                link.mutation
                    .clone()
                    .unwrap_or_else(|| "sampled".to_string()),
                score(link.objective),
                or_dash(link.params),
            ]
        })
        .collect();
    let objective = format!("validation {}", summary.objective);
    out.push_str(&table(
        &[
            "step",
            "index",
            "genome id",
            "made by",
            &objective,
            "params",
        ],
        &rows,
    ));
    out
}

/// "Pareto-optimal candidates": the candidates no other beats on both score and size.
pub fn pareto_section(input: &ReportInput, summary: &ReportSummary) -> String {
    let pooled = if input.runs.len() > 1 {
        " Candidates of every run are pooled."
    } else {
        ""
    };
    let mut out = paragraph(
        &format!(
            "A candidate is Pareto-optimal when no other candidate has at least its validation {} with at most its parameters (and is strictly better in one).{pooled}",
            summary.objective
        ),
        Some("note"),
    );
    if summary.pareto_front.is_empty() {
        out.push_str(&paragraph(
            "No candidate has both a score and a parameter count.",
            Some("note"),
        ));
        return out;
    }
    let rows: Vec<Vec<String>> = summary
        .pareto_front
        .iter()
        .map(|m| {
            vec![
                m.run.clone(),
                format!("#{}", m.index),
                m.id.clone(),
                m.params.to_string(),
                or_dash(m.madds),
                format!("{:.4}", m.objective),
            ]
        })
        .collect();
    let objective = format!("validation {}", summary.objective);
    out.push_str(&table(
        &[
            "run",
            "index",
            "genome id",
            "params",
            "mult-adds",
            &objective,
        ],
        &rows,
    ));
    out
}

/// "Test split": how often it was opened and the recorded test scores.
pub fn test_section(input: &ReportInput, summary: &ReportSummary) -> String {
    let t = &summary.test_split;
    let mut out = paragraph(
        "This report only reads the test scores the journals recorded when `gemmule finalize` opened a run's sealed test split; writing the report never opens it.",
        Some("note"),
    );
    let per_run: Vec<String> = summary
        .runs
        .iter()
        .map(|run| format!("{}: {}", run.name, run.test_openings))
        .collect();
    out.push_str(&facts(&[
        ("Times opened", t.openings.to_string()),
        ("Per run", per_run.join(", ")),
    ]));
    if t.openings == 0 {
        let example = input
            .runs
            .first()
            .map_or("RUN".to_string(), |r| r.dir.display().to_string());
        out.push_str(&paragraph(
            &format!("The test split has never been opened, so there are no test scores. `gemmule finalize {example}` retrains the best candidate and opens it once."),
            None,
        ));
        return out;
    }
    if summary.runs.iter().any(|run| run.test_openings > 1) {
        out.push_str(&paragraph(
            "A test split was opened more than once: only the first opening is an unbiased estimate; later ones may reflect choices made after seeing test scores.",
            Some("warning"),
        ));
    }
    let names: std::collections::BTreeSet<&str> = t
        .records
        .iter()
        .flat_map(|r| r.test_scores.keys().map(String::as_str))
        .collect();
    let mut head = vec!["run", "opening", "candidate", "test rows"];
    head.extend(names.iter().copied());
    let rows: Vec<Vec<String>> = t
        .records
        .iter()
        .map(|r| {
            let mut row = vec![
                r.run.clone(),
                r.opening.to_string(),
                format!(
                    "{} {}",
                    or_dash(r.index.map(|i| format!("#{i}"))),
                    r.id.clone().unwrap_or_default()
                ),
                or_dash(r.test_rows),
            ];
            row.extend(
                names
                    .iter()
                    .map(|name| score(r.test_scores.get(*name).copied())),
            );
            row
        })
        .collect();
    out.push_str(&table(&head, &rows));
    for record in &t.records {
        if let Some(report) = &record.final_evaluation {
            out.push_str(&super::html_verdict::final_evaluation(&record.run, report));
        }
    }
    out
}

/// Split shares as percentages, e.g. "70% train, 15% validation, 15% test".
fn shares(fractions: Option<&Value>) -> String {
    let share = |key: &str| {
        fractions
            .and_then(|f| f.get(key))
            .and_then(Value::as_f64)
            .map_or("–".to_string(), |v| {
                format!("{}%", (v * 1000.0).round() / 10.0)
            })
    };
    format!(
        "{} train, {} validation, {} test",
        share("train"),
        share("valid"),
        share("test")
    )
}

/// A recorded budget in words.
fn budget_text(budget: &Value) -> String {
    let evaluations = or_dash(budget.get("evaluations").and_then(Value::as_u64));
    match budget.get("seconds").and_then(Value::as_f64) {
        Some(seconds) => format!("{evaluations} evaluations, at most {seconds} s per session"),
        None => format!("{evaluations} evaluations"),
    }
}

/// "Reproducibility": every recorded setting needed to repeat the search.
pub fn reproducibility_section(summary: &ReportSummary) -> String {
    let r = &summary.reproducibility;
    let source = &r.data_source;
    let text = |key: &str| match source.get(key) {
        Some(Value::Null) | None => "–".to_string(),
        Some(Value::String(s)) => s.clone(),
        Some(other) => other.to_string(),
    };
    let rows = &summary.searched.rows;
    let count = |key: &str| or_dash(rows.get(key).and_then(Value::as_u64));
    let join = |items: Vec<String>| {
        if items.is_empty() {
            "–".to_string()
        } else {
            items.join(", ")
        }
    };
    let mut out = facts(&[
        ("gemmule version", join(r.tool_versions.clone())),
        (
            "Versions of the sessions",
            join(r.session_tool_versions.clone()),
        ),
        ("Data file", text("path")),
        (
            "Data fingerprint (SHA-256)",
            join(r.data_fingerprints.clone()),
        ),
        (
            "Label column",
            if text("label") == "–" {
                "the last column".to_string()
            } else {
                text("label")
            },
        ),
        (
            "Delimiter",
            if text("delimiter") == "–" {
                "comma".to_string()
            } else {
                text("delimiter")
            },
        ),
        ("Missing cells imputed", text("impute")),
        ("Split shares", shares(source.get("fractions"))),
        ("Split seed", text("split_seed")),
        (
            "Split sizes",
            format!(
                "{} train, {} validation, {} test",
                count("train"),
                count("valid"),
                count("test")
            ),
        ),
        (
            "Budget per run",
            join(r.budgets.iter().map(budget_text).collect()),
        ),
        (
            "Run seeds",
            join(r.seeds.iter().map(u64::to_string).collect()),
        ),
        (
            "Jobs (parallel candidates)",
            join(r.jobs.iter().map(usize::to_string).collect()),
        ),
        (
            "Total training time",
            format!(
                "{} ({:.1} CPU seconds, summed over candidates)",
                duration(r.total_cpu_seconds),
                r.total_cpu_seconds
            ),
        ),
        ("Test split opened", format!("{} time(s)", r.test_openings)),
    ]);
    let runs = summary.runs.len();
    if runs > 1 {
        if r.settings.identical {
            out.push_str(&paragraph(
                &format!(
                    "Identical across all {runs} runs: {}.",
                    r.settings.checked.join(", ")
                ),
                Some("note"),
            ));
        } else {
            let mut list = String::from("<ul>\n");
            for difference in &r.settings.differences {
                list.push_str(&format!("<li>{}</li>\n", escape(difference)));
            }
            list.push_str("</ul>\n");
            out.push_str(&paragraph(
                "The runs were not set up alike, so differences between them need not come from the strategies:",
                Some("warning"),
            ));
            out.push_str(&list);
        }
    }
    out.push_str("<h3>Trainer settings</h3>\n");
    out.push_str(&json_block(&r.trainer));
    out.push_str("<h3>Search space</h3>\n");
    out.push_str(&json_block(&r.space));
    out
}
