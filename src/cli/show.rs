//! `gemmule show`: a run at a glance, read from its journal only.

use crate::genome::LayerGenome;
use crate::render::layer_graph;
use crate::search::{EvalStatus, Journal, JournalContents, RunSummary, TimingEntry, TimingLog};
use anyhow::Result;
use std::collections::BTreeMap;
use std::path::Path;

/// Prints the summary of the run in `run` with a `top`-row leaderboard.
pub fn show(run: &Path, top: usize) -> Result<i32> {
    let contents: JournalContents<LayerGenome> = Journal::read(&Journal::path_in(run))?;
    for w in &contents.warnings {
        eprintln!("gemmule: warning: {w}");
    }
    let h = &contents.header;
    let summary = RunSummary::new(&contents.evaluations, top);
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
    if let Some(source) = h.data.get("source") {
        println!(
            "data {} (sha256 {}…), rows {}",
            source.get("path").and_then(|p| p.as_str()).unwrap_or("?"),
            h.data
                .get("fingerprint")
                .and_then(|f| f.as_str())
                .map_or("?", |f| &f[..f.len().min(12)]),
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
    println!("  {}", line.join("  "));
    if let Some(best) = &summary.best {
        println!();
        println!(
            "best architecture (evaluation {}, genome {}):",
            best.index, best.id
        );
        let n_inputs = h
            .data
            .get("features")
            .and_then(|f| f.as_array())
            .map(|a| a.len());
        let n_classes = h
            .data
            .get("classes")
            .and_then(|c| c.as_array())
            .map(|a| a.len());
        print!(
            "{}",
            layer_graph(&best.genome, n_inputs, n_classes, !utf8_terminal())
        );
    }
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

/// True when the locale says the terminal takes UTF-8.
fn utf8_terminal() -> bool {
    ["LC_ALL", "LC_CTYPE", "LANG"]
        .iter()
        .find_map(|k| std::env::var(k).ok().filter(|v| !v.is_empty()))
        .is_some_and(|v| v.to_uppercase().contains("UTF-8") || v.to_uppercase().contains("UTF8"))
}
