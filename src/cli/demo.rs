//! `gemmule demo`: the whole job on built-in invented data, in a few minutes.

use super::compare::{render_report, CliComparisonObserver};
use super::EXIT_INTERRUPTED;
use crate::workflow::{run_demo, Comparison, DemoOptions};
use anyhow::Result;
use clap::Args;
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;
use std::time::Instant;

/// Options of `gemmule demo`.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Folder for the generated data, the runs and the report (reused when
    /// it exists: finished runs are kept, nothing is opened twice).
    #[arg(long, value_name = "DIR", default_value = "gemmule-demo")]
    pub out: PathBuf,
    /// A smaller comparison (3 seeds × 20 evaluations, ≤ 20 epochs) that
    /// finishes well under a minute on 2 cores.
    #[arg(long)]
    pub quick: bool,
    /// Candidates trained at once in each run (default: available cores).
    #[arg(long, value_name = "N")]
    pub jobs: Option<usize>,
    /// No progress bars or per-run lines.
    #[arg(long, short)]
    pub quiet: bool,
}

/// Runs `gemmule demo`.
pub fn demo_command(a: DemoArgs, stop: &AtomicBool) -> Result<i32> {
    let jobs = match a.jobs {
        Some(0) => return Err(crate::Error::input("--jobs must be at least 1").into()),
        Some(j) => j,
        None => std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1),
    };
    let options = DemoOptions {
        dir: a.out.clone(),
        quick: a.quick,
        jobs,
    };
    let (seeds, evaluations, epochs) = options.sizes();
    eprintln!(
        "gemmule demo: invented coffee-roast batches; aging evolution vs random search, {} seeds × {evaluations} evaluations (≤ {epochs} epochs each), {jobs} job(s)",
        seeds.len()
    );
    let started = Instant::now();
    let mut observer = CliComparisonObserver::new(a.quiet);
    let outcome = run_demo(&options, &mut observer, stop);
    observer.finish();
    let Some(outcome) = outcome? else {
        eprintln!(
            "stopped; run the same command again to continue the demo in {}",
            a.out.display()
        );
        return Ok(EXIT_INTERRUPTED);
    };
    println!(
        "data: {} ({} file(s) written now), glyph images in {}",
        outcome.files.table.display(),
        outcome.files.written,
        outcome.files.glyphs.root.display()
    );
    let comparison = Comparison::load(&outcome.comparison_dir)?;
    print!("{}", render_report(&outcome.report, &comparison));
    let winner = &outcome.winner;
    println!();
    println!(
        "winning architecture: evaluation {} of {} (genome {})",
        winner.index,
        outcome.winner_run.display(),
        winner.id
    );
    print!(
        "{}",
        winner
            .genome
            .text(Some(winner.n_inputs), Some(winner.n_classes), false)
    );
    println!();
    println!("                               validation   test accuracy (95% interval)");
    print_line(
        "winner",
        winner.validation_objective,
        &winner.test_scores,
        winner.test_accuracy_interval,
    );
    let baseline = &outcome.baseline;
    print_line(
        "baseline, no hidden layer",
        baseline.validation_objective.unwrap_or(f64::NAN),
        &baseline.test_scores,
        baseline.test_accuracy_interval,
    );
    if let Some(m) = &winner.mcnemar {
        println!(
            "  test rows only the winner got right: {}, only the baseline: {}; exact McNemar p = {:.4}",
            m.pick_only_right, m.baseline_only_right, m.p_value
        );
    }
    println!(
        "report: {}",
        outcome.comparison_dir.join("report.html").display()
    );
    println!(
        "finished in {:.0} s; the test split was opened once, for the winner and the baseline together (see `gemmule show {}`)",
        started.elapsed().as_secs_f64(),
        outcome.winner_run.display()
    );
    Ok(0)
}

fn print_line(
    name: &str,
    validation: f64,
    test_scores: &std::collections::BTreeMap<String, f64>,
    (lo, hi): (f64, f64),
) {
    println!(
        "  {name:<27}  {validation:>9.4}   {:.4} ({lo:.4} to {hi:.4})",
        test_scores.get("accuracy").copied().unwrap_or(f64::NAN)
    );
}
