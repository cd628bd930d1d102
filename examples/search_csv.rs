//! Runs a small architecture search from Rust on the shipped example table,
//! then opens the sealed test split once and predicts with the final model.
//!
//! `cargo run --release --example search_csv`

use gemmule::bundle::ModelBundle;
use gemmule::ledger::LedgerLocation;
use gemmule::search::{Journal, JournalContents, QuietObserver};
use gemmule::workflow::{finalize, DataSource, FinalizeOptions, SearchJob, StrategyChoice};
use std::path::Path;
use std::sync::atomic::AtomicBool;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let csv = root.join("data/examples/wine.csv");
    let run_dir = tempfile_dir()?;

    // Aging evolution over the default layer space: 8 candidates, 2 at a time.
    let mut job = SearchJob::new(DataSource::new(&csv))
        .strategy(StrategyChoice::Evolution(None))
        .evaluations(8)
        .jobs(2)
        .seed(11);
    job.trainer.max_epochs = 20;
    let stop = AtomicBool::new(false);
    let outcome = job.run(&run_dir, &mut QuietObserver, &stop)?;
    let (best_index, best_accuracy) = outcome.best.ok_or("no candidate was scored")?;
    println!("best validation accuracy {best_accuracy:.3} (evaluation {best_index})");
    assert_eq!(outcome.evaluations, 8);

    // The journal holds every evaluation, in index order.
    let journal: JournalContents = Journal::read(&Journal::path_in(&run_dir))?;
    assert_eq!(journal.evaluations.len(), 8);

    // One look at the sealed test split. Every opening is recorded in the
    // test ledger (docs/test-ledger.md), normally one per user; this example
    // keeps its own in the run folder, so running it again is not refused.
    let options = FinalizeOptions {
        ledger: Some(LedgerLocation::at(run_dir.join("ledger"))),
        ..FinalizeOptions::default()
    };
    let report = finalize(&run_dir, &options)?;
    let test_accuracy = report.test_scores["accuracy"];
    println!(
        "test accuracy {test_accuracy:.3} on {} rows",
        report.test_rows
    );
    assert!(
        test_accuracy > 0.5,
        "a wine classifier far better than chance"
    );

    // The final model predicts from raw CSV rows.
    let model = ModelBundle::load(&run_dir.join("final"))?;
    let predictions = model.predict_csv(&csv, None)?;
    assert_eq!(predictions.classes.len(), 178);
    std::fs::remove_dir_all(&run_dir)?;
    Ok(())
}

/// A fresh folder under the system temp directory.
fn tempfile_dir() -> std::io::Result<std::path::PathBuf> {
    let dir = std::env::temp_dir().join(format!("gemmule-example-{}", std::process::id()));
    if dir.exists() {
        std::fs::remove_dir_all(&dir)?;
    }
    Ok(dir)
}
