//! K-fold scoring, baselines, the pick rule and the one test opening per
//! test split, through the binary on open data (tests/data/README.md:
//! Fisher's iris and the UCI wine data as shipped in scikit-learn 1.9.1).
//!
//! Checks against outside facts: every fold's held-out class counts follow
//! scikit-learn's StratifiedKFold allocation (the `stratified_folds` values
//! of shared/fixtures/metrics_fixture.json are checked in
//! tests/metrics_reference.rs; here the folds of a real run must hold every
//! train+validation row exactly once, which the journal's per-fold row
//! counts cannot show, so we check what the journal can: five folds with
//! their own epochs and a standard error equal to the sample standard
//! deviation of the fold objectives over √5 — the textbook definition, common
//! practice, no source). The per-class test results are checked against
//! the confusion matrix recomputed here from the predictions file.

mod private_dirs;

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn gemmule(args: &[&str]) -> Output {
    let mut command = Command::new(env!("CARGO_BIN_EXE_gemmule"));
    command.args(args).env("RAYON_NUM_THREADS", "1");
    private_dirs::isolate(&mut command);
    command.output().expect("the binary runs")
}

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(name)
}

fn s(path: &Path) -> &str {
    path.to_str().expect("utf-8 path")
}

fn text(output: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    )
}

fn journal(run: &Path) -> Vec<serde_json::Value> {
    std::fs::read_to_string(run.join("journal.jsonl"))
        .expect("journal")
        .lines()
        .map(|line| serde_json::from_str(line).expect("JSON line"))
        .collect()
}

fn search(data_file: &Path, run: &Path, extra: &[&str]) -> Output {
    let mut args = vec![
        "search",
        "--data",
        s(data_file),
        "--out",
        s(run),
        "--budget",
        "8",
        "--epochs",
        "15",
        "--jobs",
        "2",
        "--quiet",
    ];
    if !extra.contains(&"--seed") {
        args.extend_from_slice(&["--seed", "3"]);
    }
    args.extend_from_slice(extra);
    gemmule(&args)
}

#[test]
fn a_small_table_is_scored_by_five_folds_with_baselines_and_repeats_byte_for_byte() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (a, b) = (dir.path().join("a"), dir.path().join("b"));
    let first = search(&data("iris.csv"), &a, &[]);
    assert!(first.status.success(), "{}", text(&first));
    assert!(search(&data("iris.csv"), &b, &[]).status.success());
    assert_eq!(
        std::fs::read(a.join("journal.jsonl")).expect("a"),
        std::fs::read(b.join("journal.jsonl")).expect("b"),
        "same seed and settings, same journal"
    );
    let records = journal(&a);
    assert_eq!(
        records[0]["trainer"]["folds"], 5,
        "auto: 5 folds for 126 rows"
    );
    let kinds: Vec<&str> = records
        .iter()
        .map(|r| r["kind"].as_str().unwrap_or(""))
        .collect();
    assert_eq!(&kinds[..3], ["header", "baseline", "baseline"]);
    assert_eq!(records[1]["name"], "majority_class");
    assert_eq!(records[2]["name"], "linear");
    assert_eq!(
        records[2]["genome"]["layers"].as_array().map(Vec::len),
        Some(0)
    );
    let evaluations: Vec<&serde_json::Value> = records
        .iter()
        .filter(|r| r["kind"] == "evaluation")
        .collect();
    assert_eq!(evaluations.len(), 8, "baselines are not in the budget");
    for record in evaluations.iter().chain([&&records[2]]) {
        let folds = &record["folds"];
        assert_eq!(folds["k"], 5);
        let each = folds["each"].as_array().expect("folds");
        assert_eq!(each.len(), 5);
        let objectives: Vec<f64> = each
            .iter()
            .map(|f| f["objective"].as_f64().expect("scored"))
            .collect();
        let mean = objectives.iter().sum::<f64>() / 5.0;
        assert!((record["objective"].as_f64().expect("objective") - mean).abs() < 1e-12);
        let sd = (objectives.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / 4.0).sqrt();
        let se = folds["standard_error"].as_f64().expect("standard error");
        assert!(
            (se - sd / 5f64.sqrt()).abs() < 1e-12,
            "{se} vs {}",
            sd / 5f64.sqrt()
        );
        let epochs: u64 = each
            .iter()
            .map(|f| f["epochs"].as_u64().expect("epochs"))
            .sum();
        assert_eq!(record["epochs"].as_u64(), Some(epochs));
    }
    // The majority class scores its share on stratified folds: iris has
    // 50/50/50 rows, so a third (within one row of a held-out fold).
    let majority = records[1]["objective"].as_f64().expect("majority");
    assert!((majority - 1.0 / 3.0).abs() < 0.04, "{majority}");
    let out = String::from_utf8_lossy(&first.stdout);
    for expected in [
        "scoring: 5-fold cross-validation",
        "pick: evaluation",
        "baselines: majority class",
        "linear baseline",
    ] {
        assert!(out.contains(expected), "missing {expected:?} in:\n{out}");
    }
    // --folds off keeps the journal of one validation split: no folds key,
    // evaluations scored on the validation rows.
    let c = dir.path().join("c");
    assert!(search(&data("iris.csv"), &c, &["--folds", "off"])
        .status
        .success());
    let records = journal(&c);
    assert!(records[0]["trainer"].get("folds").is_none());
    assert!(records.iter().all(|r| r.get("folds").is_none()));
}

#[test]
fn finalize_opens_each_test_split_once_for_the_pick_and_the_baseline() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (a, b) = (dir.path().join("a"), dir.path().join("b"));
    assert!(search(&data("wine.csv"), &a, &[]).status.success());
    assert!(search(&data("wine.csv"), &b, &["--seed", "4"])
        .status
        .success());
    let finalized = gemmule(&["finalize", s(&a)]);
    assert!(finalized.status.success(), "{}", text(&finalized));
    let out = text(&finalized);
    for expected in [
        "opening 1 of this test split by any run",
        "per class on the test rows",
        "linear baseline (no hidden layer",
        "exact McNemar p",
        "verdict:",
        "caution:",
    ] {
        assert!(out.contains(expected), "missing {expected:?} in:\n{out}");
    }
    let opening = journal(&a)
        .into_iter()
        .find(|r| r["kind"] == "test_opening")
        .expect("a test opening")["body"]
        .clone();
    assert_eq!(opening["opening"], 1);
    assert!(opening["baseline"]["test_scores"]["accuracy"].is_f64());
    assert!(opening["mcnemar"]["p_value"].is_f64());
    // The predictions file holds every test row; its confusion matrix is the
    // one reported.
    let predictions = std::fs::read_to_string(a.join("final/test_predictions.csv")).expect("file");
    let mut lines = predictions.lines();
    let head: Vec<&str> = lines.next().expect("header").split(',').collect();
    let (truth, predicted) = (
        head.iter()
            .position(|c| *c == "true_class")
            .expect("true_class"),
        head.iter()
            .position(|c| *c == "predicted_class")
            .expect("predicted_class"),
    );
    let names: Vec<String> = opening["class_names"]
        .as_array()
        .expect("class names")
        .iter()
        .map(|n| n.as_str().expect("name").to_string())
        .collect();
    let mut matrix = vec![vec![0u64; names.len()]; names.len()];
    let mut rows = 0;
    for line in lines {
        let cells: Vec<&str> = line.split(',').collect();
        let t = names
            .iter()
            .position(|n| n == cells[truth])
            .expect("a class");
        let p = names
            .iter()
            .position(|n| n == cells[predicted])
            .expect("a class");
        matrix[t][p] += 1;
        rows += 1;
    }
    assert_eq!(rows, opening["test_rows"].as_u64().expect("rows") as usize);
    let reported: Vec<Vec<u64>> =
        serde_json::from_value(opening["class_report"]["confusion_matrix"].clone())
            .expect("matrix");
    assert_eq!(matrix, reported);

    // Another run on the same data and split: the ledger refuses, names the
    // first opening, and changes nothing.
    let refused = gemmule(&["finalize", s(&b)]);
    assert_eq!(refused.status.code(), Some(2), "{}", text(&refused));
    let message = text(&refused);
    assert!(
        message.contains("already opened") && message.contains(s(&a)),
        "{message}"
    );
    assert!(!b.join("final").exists());
    assert!(journal(&b).iter().all(|r| r["kind"] != "test_opening"));
    // With --reopen it is opening 2, and every summary says so.
    let again = gemmule(&[
        "finalize",
        s(&b),
        "--reopen",
        "--index",
        "0",
        "--pick",
        "top",
    ]);
    assert!(again.status.success(), "{}", text(&again));
    assert!(
        text(&again).contains("opening 2 of this test split"),
        "{}",
        text(&again)
    );
    let shown = gemmule(&["show", s(&b)]);
    assert!(
        text(&shown).contains("records 2 openings of this test split"),
        "{}",
        text(&shown)
    );
}

#[test]
fn fold_counts_and_finalize_options_are_checked() {
    let dir = tempfile::tempdir().expect("temp dir");
    let run = dir.path().join("run");
    for (folds, expected) in [
        ("1", "not a fold count"),
        ("abc", "not a fold count"),
        ("60", "more than the"),
    ] {
        let o = search(&data("iris.csv"), &run, &["--folds", folds]);
        assert_eq!(o.status.code(), Some(2), "--folds {folds}: {}", text(&o));
        assert!(text(&o).contains(expected), "--folds {folds}: {}", text(&o));
        assert!(!run.join("journal.jsonl").exists());
    }
    assert!(search(&data("iris.csv"), &run, &[]).status.success());
    for (args, expected) in [
        (vec!["--index", "99"], "--index 99"),
        (vec!["--positive", "setosa"], "two classes only"),
    ] {
        let mut all = vec!["finalize", s(&run)];
        all.extend(args.iter().copied());
        let o = gemmule(&all);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", text(&o));
        assert!(text(&o).contains(expected), "{args:?}: {}", text(&o));
        assert!(!run.join("final").exists());
    }
    // Re-training the top genomes of a k-fold run re-scores them on the
    // same folds, not on a single validation split.
    let o = gemmule(&["finalize", s(&run), "--top-k", "2", "--repeats", "2"]);
    assert!(o.status.success(), "{}", text(&o));
    assert!(
        text(&o).contains("re-scored on the same folds"),
        "{}",
        text(&o)
    );
}

#[test]
fn a_comparison_credits_shared_genomes_and_opens_its_test_split_once() {
    let dir = tempfile::tempdir().expect("temp dir");
    let cmp = dir.path().join("cmp");
    let compared = gemmule(&[
        "compare",
        "--data",
        s(&data("iris.csv")),
        "--out",
        s(&cmp),
        "--seeds",
        "2",
        "--budget",
        "6",
        "--epochs",
        "10",
        "--jobs",
        "1",
        "--quiet",
    ]);
    assert!(compared.status.success(), "{}", text(&compared));
    let out = String::from_utf8_lossy(&compared.stdout).to_string();
    let line = out
        .lines()
        .find(|l| l.starts_with("pick over all runs"))
        .unwrap_or_else(|| panic!("no pick line in:\n{out}"));
    // The genome the pick names, and every strategy whose runs evaluated
    // it, read from the journals here.
    let id = line
        .split("genome ")
        .nth(1)
        .and_then(|rest| rest.split_whitespace().next())
        .expect("a genome id");
    let mut strategies = Vec::new();
    for entry in std::fs::read_dir(&cmp).expect("list").flatten() {
        let path = entry.path();
        if !path.join("journal.jsonl").is_file() {
            continue;
        }
        let name = entry.file_name().to_string_lossy().into_owned();
        let strategy = name.split('-').next().expect("strategy").to_string();
        if journal(&path)
            .iter()
            .any(|r| r["kind"] == "evaluation" && r["id"] == id)
            && !strategies.contains(&strategy)
        {
            strategies.push(strategy);
        }
    }
    strategies.sort();
    if strategies.len() > 1 {
        assert!(line.contains("no win for either strategy"), "{line}");
    } else {
        assert!(
            line.contains(&format!("found by {}", strategies[0])),
            "{line}"
        );
    }
    assert!(out.contains("linear baseline"), "{out}");
    let finalized = gemmule(&["finalize", s(&cmp)]);
    assert!(finalized.status.success(), "{}", text(&finalized));
    assert!(
        text(&finalized).contains(&format!("genome {id}")),
        "{}",
        text(&finalized)
    );
    // Every run of the comparison shares the test split: a second opening
    // through any of its runs is refused.
    let refused = gemmule(&["finalize", s(&cmp.join("random-seed2"))]);
    assert_eq!(refused.status.code(), Some(2), "{}", text(&refused));
}
