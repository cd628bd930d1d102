//! `gemmule show`: a run at a glance, read from its journal only.

use super::args::ShowArgs;
use super::show_json::{status_counts, ShowDocument};
use crate::render::{lineage, lineage_lines, pareto_front, DrawableGenome};
use crate::search::{
    EvalStatus, EvaluationRecord, Journal, JournalContents, RunHeader, RunSummary, RunVerdict,
    TimingEntry, TimingLog,
};
use crate::workflow::FinalReport;
use crate::Error;
use anyhow::Result;
use serde_json::Value;
use std::path::Path;

/// Prints the summary of the run in `args.run`: settings, leaderboard,
/// best-so-far curve, the drawn architecture (the best, or `--index`) with its
/// lineage, and the Pareto front; writes `--dot` / `--svg` files when asked.
/// With `--json` the same facts go to standard output as one JSON document
/// (docs/json-output.md) and nothing else is printed there.
pub fn show(args: &ShowArgs) -> Result<i32> {
    let run = args.run.as_path();
    let ascii = args.ascii || !utf8_terminal();
    let journal = Journal::path_in(run);
    if !journal.exists() {
        return Err(Error::input(format!(
            "{}: no run here (there is no {}); give a run directory made by `gemmule search`",
            run.display(),
            journal.display()
        ))
        .into());
    }
    let contents: JournalContents<Value> = Journal::read(&journal)?;
    for w in &contents.warnings {
        eprintln!("gemmule: warning: {w}");
    }
    let summary = RunSummary::new(&contents.evaluations, args.top);
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
    if chosen.is_none() && (args.dot.is_some() || args.svg.is_some()) {
        return Err(Error::input(
            "no evaluation is scored yet, so there is no best architecture to draw; \
             pick one with --index N",
        )
        .into());
    }
    let seconds = training_seconds(run);
    if args.json {
        if let Some(record) = chosen {
            let genome = drawable(record)?;
            write_drawings(args, &contents.header, &genome)?;
        }
        let document = ShowDocument::new(
            run,
            &contents,
            &summary,
            chosen,
            args.index.is_some(),
            seconds,
            args.pick.map(super::args::PickArg::rule),
        );
        let text = serde_json::to_string_pretty(&document)
            .map_err(|e| Error::internal(format!("show --json: {e}")))?;
        println!("{text}");
        return Ok(0);
    }
    print_text(args, run, &contents, &summary, chosen, seconds, ascii)
}

/// Training seconds summed over the timed evaluations of `timings.jsonl` (0 when missing).
fn training_seconds(run: &Path) -> f64 {
    TimingLog::read(run)
        .map(|entries| {
            entries
                .iter()
                .map(|e| match e {
                    TimingEntry::Timing { seconds, .. } => *seconds,
                    TimingEntry::Session { .. } => 0.0,
                })
                .sum()
        })
        .unwrap_or(0.0)
}

/// `102 train / 24 validation / 24 test` from the header's `rows` block.
fn rows_text(rows: Option<&Value>) -> String {
    let count = |key: &str| rows.and_then(|r| r.get(key)).and_then(Value::as_u64);
    match (count("train"), count("valid"), count("test")) {
        (Some(train), Some(valid), Some(test)) => {
            format!("{train} train / {valid} validation / {test} test")
        }
        _ => rows.map(|r| r.to_string()).unwrap_or_else(|| "?".into()),
    }
}

/// The text form of `show`.
fn print_text(
    args: &ShowArgs,
    run: &Path,
    contents: &JournalContents<Value>,
    summary: &RunSummary<Value>,
    chosen: Option<&EvaluationRecord<Value>>,
    seconds: f64,
    ascii: bool,
) -> Result<i32> {
    let verdict = RunVerdict::new(contents, args.pick.map(super::args::PickArg::rule));
    let h = &contents.header;
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
    let encoding = h
        .space
        .get("encoding")
        .and_then(Value::as_str)
        .unwrap_or("layers");
    match h.trainer.get("size_penalty").and_then(|v| v.as_f64()) {
        Some(lambda) => println!(
            "encoding {encoding}; ranked by validation {objective} - {lambda}*log10(params) (size penalty)"
        ),
        None => println!("encoding {encoding}; ranked by validation {objective}"),
    }
    let max_epochs = h
        .trainer
        .get("max_epochs")
        .and_then(Value::as_u64)
        .map_or(0, |e| u32::try_from(e).unwrap_or(u32::MAX));
    if h.trainer.get("curve_cut").and_then(Value::as_bool) == Some(true) {
        println!("learning-curve cut on: candidates that cannot reach the population's worst score stop early");
    }
    if let Some(source) = h.data.get("source") {
        let classes = h
            .data
            .get("classes")
            .and_then(Value::as_array)
            .map_or(String::new(), |c| format!(", {} classes", c.len()));
        println!(
            "data {} (sha256 {}), rows {}{classes}",
            source.get("path").and_then(|p| p.as_str()).unwrap_or("?"),
            h.data
                .get("fingerprint")
                .and_then(|f| f.as_str())
                .map_or("?".to_string(), |f| {
                    let short: String = f.chars().take(12).collect();
                    format!("{short}{}", if ascii { "..." } else { "…" })
                }),
            rows_text(h.data.get("rows"))
        );
    }
    let statuses = status_counts(&contents.evaluations);
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
    for line in verdict.lines() {
        println!("{}", plain(&line, ascii));
    }
    print_openings(&contents.openings);
    println!();
    println!("top {} by validation {objective}:", summary.top.len());
    println!(
        "{:>5}  {:<12}  {:>9}  {:>7}  {:>9}  {:>6}  {:<14}  {:>6}",
        "index",
        "id",
        objective,
        plain("± se", ascii),
        "params",
        "epochs",
        "mutation",
        "parent"
    );
    for r in &summary.top {
        println!(
            "{:>5}  {:<12}  {:>9.4}  {:>7}  {:>9}  {:>6}  {:<14}  {:>6}",
            r.index,
            r.id,
            r.objective.unwrap_or(f64::NAN),
            r.folds
                .as_ref()
                .and_then(|f| f.standard_error)
                .map_or("-".into(), |se| format!("{se:.4}")),
            r.params.map_or("-".into(), |p| p.to_string()),
            r.epochs,
            r.mutation.as_deref().unwrap_or("(sampled)"),
            r.parent.map_or("-".into(), |p| p.to_string())
        );
    }
    println!();
    println!("best so far by evaluation:");
    print_curve(&summary.best_so_far);
    if let Some(record) = chosen {
        show_architecture(args, h, &contents.evaluations, record, ascii)?;
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
    let (cut, epochs_cut) = contents
        .evaluations
        .iter()
        .filter(|r| r.status == EvalStatus::CurveCut)
        .fold((0u64, 0u64), |(count, epochs), r| {
            (
                count + 1,
                epochs + u64::from(max_epochs.saturating_sub(r.epochs)),
            )
        });
    if cut > 0 {
        println!(
            "\n{cut} evaluation(s) stopped by the learning-curve cut (status curve_cut), \
             {epochs_cut} epoch(s) not trained; their projections are in the journal"
        );
    }
    Ok(0)
}

/// `text` with "±" written "+/-" for terminals without UTF-8 (`--ascii`).
fn plain(text: &str, ascii: bool) -> String {
    if ascii {
        text.replace('±', "+/-").replace('–', "-")
    } else {
        text.to_string()
    }
}

/// The test openings this run made, with the latest one's scores and how
/// often its test split has been opened by any run (the test ledger).
fn print_openings(openings: &[Value]) {
    let Some(last) = openings.last() else {
        println!("test split: sealed (never opened by this run)");
        return;
    };
    let plural = if openings.len() == 1 { "" } else { "s" };
    println!(
        "test split: opened {} time{plural} by this run",
        openings.len()
    );
    let Ok(report) = FinalReport::from_opening(last) else {
        return;
    };
    print!("  {}", super::final_text::opening_line(&report));
    if let Some(count) = ledger_count(&report) {
        let plural = if count == 1 { "" } else { "s" };
        println!("  the test ledger records {count} opening{plural} of this test split by any run");
    }
    let accuracy = report
        .test_scores
        .get("accuracy")
        .copied()
        .unwrap_or(f64::NAN);
    let (lo, hi) = report.test_accuracy_interval;
    println!(
        "  latest test accuracy: {accuracy:.4} (95% Wilson interval {lo:.4} to {hi:.4}, {} rows)",
        report.test_rows
    );
    if let Some(verdict) = report.verdict() {
        println!("  {verdict}");
    }
}

/// Openings of the report's test split in the user's test ledger, when it can be read.
fn ledger_count(report: &FinalReport) -> Option<usize> {
    let split = crate::ledger::TestSplitId::parse(report.split_id.as_deref()?).ok()?;
    let location = crate::ledger::LedgerLocation::from_env().ok()?;
    if !location.file().is_file() {
        return None;
    }
    let ledger = crate::ledger::Ledger::open(location).ok()?;
    ledger.openings(&split).ok().map(|entries| entries.len())
}

/// About ten marks of the best-so-far curve, wrapped to the text width.
fn print_curve(best_so_far: &[Option<f64>]) {
    let n = best_so_far.len();
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
                best_so_far[m - 1].map_or("-".into(), |v| format!("{v:.4}"))
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

/// The genome of `record`, ready to draw.
fn drawable(record: &EvaluationRecord<Value>) -> Result<DrawableGenome> {
    Ok(DrawableGenome::from_value(
        &record.genome,
        &format!("journal evaluation {}", record.index),
    )?)
}

/// Writes the `--dot` / `--svg` files of `genome` (messages on standard error).
fn write_drawings(args: &ShowArgs, header: &RunHeader, genome: &DrawableGenome) -> Result<()> {
    let (n_inputs, n_classes) = data_counts(header);
    if let Some(path) = &args.dot {
        crate::fsio::write_atomic(path, genome.dot(n_inputs, n_classes).as_bytes())?;
        eprintln!("architecture graph written to {} (DOT)", path.display());
    }
    if let Some(path) = &args.svg {
        crate::fsio::write_atomic(path, genome.svg(n_inputs, n_classes).as_bytes())?;
        eprintln!("architecture drawing written to {} (SVG)", path.display());
    }
    Ok(())
}

/// Draws `record`'s genome, writes the requested DOT / SVG files, and lists its lineage.
fn show_architecture(
    args: &ShowArgs,
    header: &RunHeader,
    records: &[EvaluationRecord<Value>],
    record: &EvaluationRecord<Value>,
    ascii: bool,
) -> Result<()> {
    let genome = drawable(record)?;
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
    write_drawings(args, header, &genome)?;
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
