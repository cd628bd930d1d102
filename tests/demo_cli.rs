//! `gemmule demo --quick` end to end: invented data generated, comparison,
//! one finalized winner, a no-hidden-layer baseline, a report; a second call
//! reuses everything and opens no test split again.
//!
//! The data is the tool's own invented scenario (docs/demo-data.md); the
//! checks are properties of our generator and workflow, no outside source.

use std::path::Path;
use std::process::Command;

mod private_dirs;

fn demo(dir: &Path) -> (i32, String, String) {
    let o = private_dirs::isolate(&mut Command::new(env!("CARGO_BIN_EXE_gemmule")))
        .env("RAYON_NUM_THREADS", "1")
        .args(["demo", "--quick", "--jobs", "2", "--quiet", "--out"])
        .arg(dir)
        .output()
        .expect("the binary runs");
    (
        o.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

fn accuracy_on(line_start: &str, stdout: &str) -> (f64, f64) {
    let line = stdout
        .lines()
        .find(|l| l.trim_start().starts_with(line_start))
        .unwrap_or_else(|| panic!("no `{line_start}` line in:\n{stdout}"));
    let numbers: Vec<f64> = line
        .split_whitespace()
        .filter_map(|w| w.parse::<f64>().ok())
        .collect();
    (numbers[0], numbers[1])
}

#[test]
fn quick_demo_compares_finalizes_and_beats_the_baseline() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo");
    let (code, stdout, stderr) = demo(&out);
    assert_eq!(code, 0, "{stdout}\n{stderr}");
    for expected in [
        "best validation accuracy at the budget",
        "Mann–Whitney",
        "winning architecture",
        "baseline, no hidden layer",
        "report:",
    ] {
        assert!(
            stdout.contains(expected),
            "missing `{expected}` in:\n{stdout}"
        );
    }
    assert!(out.join("comparison/report.html").is_file());
    // The roast table has missing cells, so every one of the six runs reads
    // the same imputation warning; the demo prints each distinct warning once
    // (common practice, no source: a repeated warning is noise).
    let warnings: Vec<&str> = stderr
        .lines()
        .filter(|l| l.starts_with("gemmule: warning:"))
        .collect();
    assert!(
        warnings.iter().any(|w| w.contains("imputed")),
        "no imputation warning in:\n{stderr}"
    );
    let distinct: std::collections::BTreeSet<&&str> = warnings.iter().collect();
    assert_eq!(
        distinct.len(),
        warnings.len(),
        "repeated warnings:\n{stderr}"
    );
    assert!(out.join("data/roast.csv").is_file());
    let (winner_valid, winner_test) = accuracy_on("winner", &stdout);
    let (base_valid, base_test) = accuracy_on("baseline", &stdout);
    // The generator makes the label depend on feature interactions, so a
    // searched network must clearly beat softmax regression (measured: about
    // 0.79 vs 0.62 validation accuracy).
    assert!(
        winner_valid > base_valid + 0.08,
        "{winner_valid} vs {base_valid}"
    );
    assert!(
        winner_test > base_test + 0.05,
        "{winner_test} vs {base_test}"
    );

    // Again: nothing new is trained and no test split is opened a second time.
    let (code, stdout2, stderr2) = demo(&out);
    assert_eq!(code, 0, "{stdout2}\n{stderr2}");
    assert_eq!(accuracy_on("winner", &stdout2), (winner_valid, winner_test));
    assert!(stdout2.contains("(0 file(s) written now)"), "{stdout2}");
    let winner_run = stdout
        .lines()
        .find(|l| l.starts_with("winning architecture"))
        .and_then(|l| l.split(" of ").nth(1))
        .and_then(|rest| rest.split(" (genome").next())
        .expect("the winner's run directory is printed");
    let journal = std::fs::read_to_string(Path::new(winner_run).join("journal.jsonl")).unwrap();
    assert_eq!(journal.matches(r#""kind":"test_opening""#).count(), 1);
}
