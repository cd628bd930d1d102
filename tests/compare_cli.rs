//! `gemmule compare` end to end on Fisher's iris (tests/data/iris.csv, provenance
//! in tests/data/README.md): the run directories and plan it writes, its table
//! and JSON, and that running it again continues instead of redoing work.

use std::path::Path;
use std::process::{Command, Output};

mod private_dirs;

fn gemmule() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_gemmule"));
    c.env("RAYON_NUM_THREADS", "1");
    private_dirs::isolate(&mut c);
    c
}

fn iris() -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/iris.csv")
        .display()
        .to_string()
}

/// Runs the tiny comparison (2 strategies × 2 seeds, 4 evaluations each) into `out`.
fn tiny_compare(out: &Path, extra: &[&str]) -> Output {
    compare_with_epochs(out, "3", extra)
}

fn compare_with_epochs(out: &Path, epochs: &str, extra: &[&str]) -> Output {
    let data = iris();
    let out = out.to_str().expect("a UTF-8 temp path");
    let mut args = vec![
        "compare",
        "--data",
        &data,
        "--out",
        out,
        "--budget",
        "4",
        "--seeds",
        "2",
        "--epochs",
        epochs,
        "--max-width",
        "8",
        "--jobs",
        "1",
        "--quiet",
    ];
    args.extend_from_slice(extra);
    gemmule().args(&args).output().expect("the binary runs")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

const RUNS: [&str; 4] = [
    "evolution-seed1",
    "random-seed1",
    "evolution-seed2",
    "random-seed2",
];

fn journals(dir: &Path) -> Vec<Vec<u8>> {
    RUNS.iter()
        .map(|run| std::fs::read(dir.join(run).join("journal.jsonl")).expect("journal exists"))
        .collect()
}

#[test]
fn a_tiny_comparison_writes_runs_plan_and_table() {
    let temp = tempfile::tempdir().expect("temp dir");
    let out = temp.path().join("cmp");
    let first = tiny_compare(&out, &[]);
    assert_eq!(first.status.code(), Some(0), "{}", stderr(&first));
    assert!(out.join("comparison.json").is_file());
    for (run, journal) in RUNS.iter().zip(journals(&out)) {
        let lines = journal.split(|&b| b == b'\n').filter(|l| !l.is_empty());
        // A header, the two baselines and one record per evaluation.
        assert_eq!(lines.count(), 7, "{run}");
    }
    let plan: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.join("comparison.json")).expect("plan"))
            .expect("comparison.json is JSON");
    assert_eq!(plan["plan"]["evaluations"], 4);
    assert_eq!(plan["plan"]["seeds"], serde_json::json!([1, 2]));
    let table = stdout(&first);
    for expected in [
        "best validation accuracy at the budget",
        "evolution",
        "random",
        "evaluations to reach",
        "no run is finalized",
        "Mann–Whitney",
        "bootstrap 95% interval",
    ] {
        assert!(
            table.contains(expected),
            "missing {expected:?} in:\n{table}"
        );
    }
}

/// With `--size-penalty` the runs rank by the penalised objective, so the
/// tables name that and not the bare score; test scores stay the raw score
/// (this tool's own wording, as `gemmule show` prints it; no outside source).
#[test]
fn a_size_penalty_names_the_penalised_objective() {
    let temp = tempfile::tempdir().expect("temp dir");
    let out = temp.path().join("cmp");
    let run = tiny_compare(&out, &["--size-penalty", "0.01"]);
    assert_eq!(run.status.code(), Some(0), "{}", stderr(&run));
    let table = stdout(&run);
    for expected in [
        "objective accuracy - 0.01*log10(params) (size penalty)",
        "best validation accuracy - 0.01*log10(params) at the budget",
        "Mann–Whitney U on the best accuracy - 0.01*log10(params) at the budget",
        "test accuracy (first test opening",
    ] {
        assert!(
            table.contains(expected),
            "missing {expected:?} in:\n{table}"
        );
    }
    assert!(
        !table.contains("best validation accuracy at the budget"),
        "{table}"
    );
}

#[test]
fn running_again_continues_without_redoing_finished_runs() {
    let temp = tempfile::tempdir().expect("temp dir");
    let out = temp.path().join("cmp");
    assert_eq!(tiny_compare(&out, &[]).status.code(), Some(0));
    let finished = journals(&out);

    // Nothing left to do: every journal stays byte-identical.
    let again = tiny_compare(&out, &[]);
    assert_eq!(again.status.code(), Some(0), "{}", stderr(&again));
    assert_eq!(journals(&out), finished);

    // An interrupted run (header + 2 evaluations) and a run never started are
    // completed; the resumed journal equals the uninterrupted one.
    let cut = out.join("random-seed2").join("journal.jsonl");
    let kept: Vec<&[u8]> = finished[3]
        .split_inclusive(|&b| b == b'\n')
        .take(3)
        .collect();
    std::fs::write(&cut, kept.concat()).expect("truncate a journal");
    std::fs::remove_dir_all(out.join("evolution-seed2")).expect("remove a run");
    let continued = tiny_compare(&out, &[]);
    assert_eq!(continued.status.code(), Some(0), "{}", stderr(&continued));
    assert_eq!(journals(&out), finished);
}

#[test]
fn a_changed_plan_is_refused_with_exit_2() {
    let temp = tempfile::tempdir().expect("temp dir");
    let out = temp.path().join("cmp");
    assert_eq!(tiny_compare(&out, &[]).status.code(), Some(0));
    let other = compare_with_epochs(&out, "4", &[]);
    assert_eq!(other.status.code(), Some(2));
    assert!(stderr(&other).contains("trainer"), "{}", stderr(&other));
}

#[test]
fn json_output_parses_and_holds_the_test() {
    let temp = tempfile::tempdir().expect("temp dir");
    let out = temp.path().join("cmp");
    let run = tiny_compare(&out, &["--json", "--seed-list", "3,4"]);
    // --seeds and --seed-list conflict: the extra option is refused by clap.
    assert_eq!(run.status.code(), Some(2));
    let data = iris();
    let run = gemmule()
        .args([
            "compare",
            "--data",
            &data,
            "--out",
            out.to_str().expect("a UTF-8 temp path"),
            "--budget",
            "4",
            "--seed-list",
            "3,4",
            "--epochs",
            "3",
            "--max-width",
            "8",
            "--jobs",
            "1",
            "--quiet",
            "--json",
            "--resamples",
            "500",
        ])
        .output()
        .expect("the binary runs");
    assert_eq!(run.status.code(), Some(0), "{}", stderr(&run));
    let report: serde_json::Value = serde_json::from_str(&stdout(&run)).expect("JSON report");
    assert_eq!(report["evaluations"], 4);
    assert_eq!(report["strategies"].as_array().map(Vec::len), Some(2));
    assert_eq!(report["runs"].as_array().map(Vec::len), Some(4));
    assert_eq!(report["runs"][0]["dir_name"], "evolution-seed3");
    let test = &report["test"];
    assert_eq!(test["mann_whitney"]["alternative"], "greater");
    let p = test["mann_whitney"]["p_value"].as_f64().expect("a p-value");
    assert!((0.0..=1.0).contains(&p));
    assert_eq!(test["median_difference"]["resamples"], 500);
    assert!(out.join("random-seed4").join("journal.jsonl").is_file());
}
