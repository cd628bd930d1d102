//! `gemmule show`: a run at a glance, read from its journal only.

use super::args::ShowArgs;
use crate::render::{lineage, lineage_lines, pareto_front, DrawableGenome};
use crate::search::{
    EvalStatus, EvaluationRecord, Journal, JournalContents, RunHeader, RunSummary, TimingEntry,
    TimingLog,
};
use crate::Error;
use anyhow::Result;
use serde_json::Value;
use std::collections::BTreeMap;

/// Prints the summary of the run in `args.run`: settings, leaderboard,
/// best-so-far curve, the drawn architecture (the best, or `--index`) with its
/// lineage, and the Pareto front; writes `--dot` / `--svg` files when asked.
pub fn show(args: &ShowArgs) -> Result<i32> {
    let run = args.run.as_path();
    let top = args.top;
    let ascii = args.ascii || !utf8_terminal();
    let contents: JournalContents<Value> = Journal::read(&Journal::path_in(run))?;
    for w in &contents.warnings {
        eprintln!("gemmule: warning: {w}");
    }
    let h = &contents.header;
    let summary = RunSummary::new(&contents.evaluations, top);
    let chosen = match args.index {
        Some(index) => Some(
            contents
                .evaluations
                .iter()
                .find(|r| r.index == index)
                .ok_or_else(|| {
                    Error::input(format!(
                        "--index {index}: no evaluation has that index; the journal holds {} \
                         evaluation(s), numbered from 0",
                        contents.evaluations.len()
                    ))
                })?,
        ),
        None => summary.best.as_ref(),
    };
    let seconds: f64 = TimingLog::read(run)
        .map(|entries| {
            entries
                .iter()
                .map(|e| match e {
                    TimingEntry::Timing { seconds, .. } => *seconds,
                    TimingEntry::Session { .. } => 0.0,
                })
                .sum()
        })
        .unwrap_or(0.0);
    let objective = h
        .trainer
        .get("objective")
        .and_then(|o| o.as_str())
        .unwrap_or("objective");
    println!("run {}", run.display());
    println!(
        "strategy {} {}, seed {}, jobs {}, budget {} evaluations",
        h.strategy.name, h.strategy.settings, h.seed, h.jobs, h.budget.evaluations
    );
    if let Some(lambda) = h.trainer.get("size_penalty").and_then(|v| v.as_f64()) {
        println!("ranked by validation {objective} - {lambda}*log10(params) (size penalty)");
    }
    if let Some(source) = h.data.get("source") {
        println!(
            "data {} (sha256 {}), rows {}",
            source.get("path").and_then(|p| p.as_str()).unwrap_or("?"),
            h.data
                .get("fingerprint")
                .and_then(|f| f.as_str())
                .map_or("?".to_string(), |f| {
                    let short: String = f.chars().take(12).collect();
                    format!("{short}{}", if ascii { "..." } else { "…" })
                }),
            h.data
                .get("rows")
                .map(|r| r.to_string())
                .unwrap_or_default()
        );
    }
    let mut statuses: BTreeMap<String, usize> = BTreeMap::new();
    for r in &contents.evaluations {
        let name = serde_json::to_value(r.status)
            .ok()
            .and_then(|v| v.as_str().map(String::from))
            .unwrap_or_default();
        *statuses.entry(name).or_default() += 1;
    }
    println!(
        "{} evaluations ({}), {:.1} s of training summed over candidates",
        summary.evaluations,
        statuses
            .iter()
            .map(|(k, v)| format!("{v} {k}"))
            .collect::<Vec<_>>()
            .join(", "),
        seconds
    );
    println!("test split opened {} time(s)", contents.openings.len());
    if let Some(last) = contents.openings.last() {
        if let Some(acc) = last
            .pointer("/body/test_scores/accuracy")
            .or_else(|| last.pointer("/test_scores/accuracy"))
        {
            println!("  latest test accuracy: {acc}");
        }
    }
    println!();
    println!("top {} by validation {objective}:", summary.top.len());
    println!(
        "{:>5}  {:<12}  {:>9}  {:>9}  {:>6}  {:<14}  {:>6}",
        "index", "id", objective, "params", "epochs", "mutation", "parent"
    );
    for r in &summary.top {
        println!(
            "{:>5}  {:<12}  {:>9.4}  {:>9}  {:>6}  {:<14}  {:>6}",
            r.index,
            r.id,
            r.objective.unwrap_or(f64::NAN),
            r.params.map_or("-".into(), |p| p.to_string()),
            r.epochs,
            r.mutation.as_deref().unwrap_or("(sampled)"),
            r.parent.map_or("-".into(), |p| p.to_string())
        );
    }
    println!();
    println!("best so far by evaluation:");
    let n = summary.best_so_far.len();
    let step = (n / 10).max(1);
    let mut marks: Vec<usize> = (step..=n).step_by(step).collect();
    if marks.last() != Some(&n) && n > 0 {
        marks.push(n);
    }
    let line: Vec<String> = marks
        .iter()
        .map(|&m| {
            format!(
                "{m}: {}",
                summary.best_so_far[m - 1].map_or("-".into(), |v| format!("{v:.4}"))
            )
        })
        .collect();
    let mut row = String::new();
    for entry in line {
        if !row.is_empty() && row.len() + 2 + entry.len() > crate::render::TEXT_WIDTH - 2 {
            println!("  {row}");
            row.clear();
        }
        if !row.is_empty() {
            row.push_str("  ");
        }
        row.push_str(&entry);
    }
    println!("  {row}");
    match chosen {
        Some(record) => show_architecture(args, h, &contents.evaluations, record, ascii)?,
        None if args.dot.is_some() || args.svg.is_some() => {
            return Err(Error::input(
                "no evaluation is scored yet, so there is no best architecture to draw; \
                 pick one with --index N",
            )
            .into())
        }
        None => {}
    }
    show_pareto_front(&contents.evaluations, objective);
    let failed = contents
        .evaluations
        .iter()
        .filter(|r| r.status == EvalStatus::Failed)
        .count();
    if failed > 0 {
        println!("\n{failed} evaluation(s) failed; their messages are in the journal");
    }
    Ok(0)
}

/// Feature and class counts recorded in the journal header, when known.
fn data_counts(header: &RunHeader) -> (Option<usize>, Option<usize>) {
    let count = |key: &str| {
        header
            .data
            .get(key)
            .and_then(|v| v.as_array())
            .map(|a| a.len())
    };
    (count("features"), count("classes"))
}

/// Draws `record`'s genome, writes the requested DOT / SVG files, and lists its lineage.
fn show_architecture(
    args: &ShowArgs,
    header: &RunHeader,
    records: &[EvaluationRecord<Value>],
    record: &EvaluationRecord<Value>,
    ascii: bool,
) -> Result<()> {
    let genome = DrawableGenome::from_value(
        &record.genome,
        &format!("journal evaluation {}", record.index),
    )?;
    let (n_inputs, n_classes) = data_counts(header);
    println!();
    let which = if args.index.is_some() {
        "architecture"
    } else {
        "best architecture"
    };
    println!(
        "{which} (evaluation {}, genome {}):",
        record.index, record.id
    );
    print!("{}", genome.text(n_inputs, n_classes, ascii));
    if let Some(path) = &args.dot {
        crate::fsio::write_atomic(path, genome.dot(n_inputs, n_classes).as_bytes())?;
        eprintln!("architecture graph written to {} (DOT)", path.display());
    }
    if let Some(path) = &args.svg {
        crate::fsio::write_atomic(path, genome.svg(n_inputs, n_classes).as_bytes())?;
        eprintln!("architecture drawing written to {} (SVG)", path.display());
    }
    let steps = lineage(records, record.index);
    println!();
    println!(
        "lineage of evaluation {} ({} step(s), oldest first):",
        record.index,
        steps.len()
    );
    print!("{}", lineage_lines(&steps, ascii));
    Ok(())
}

/// Lists the non-dominated candidates: validation objective against parameters.
fn show_pareto_front(records: &[EvaluationRecord<Value>], objective: &str) {
    let front = pareto_front(records);
    if front.is_empty() {
        return;
    }
    println!();
    println!(
        "Pareto front, validation {objective} against parameters ({} candidate(s)):",
        front.len()
    );
    println!(
        "{:>7}  {:<12}  {:>9}  {:>10}",
        "index", "id", objective, "params"
    );
    for index in front {
        if let Some(r) = records.iter().find(|r| r.index == index) {
            println!(
                "{:>7}  {:<12}  {:>9.4}  {:>10}",
                r.index,
                r.id,
                r.objective.unwrap_or(f64::NAN),
                r.params.map_or("-".to_string(), |p| p.to_string())
            );
        }
    }
}

/// True when the locale says the terminal takes UTF-8.
fn utf8_terminal() -> bool {
    ["LC_ALL", "LC_CTYPE", "LANG"]
        .iter()
        .find_map(|k| std::env::var(k).ok().filter(|v| !v.is_empty()))
        .is_some_and(|v| v.to_uppercase().contains("UTF-8") || v.to_uppercase().contains("UTF8"))
}
