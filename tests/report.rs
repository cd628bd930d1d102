//! `gemmule report` end to end on Fisher's iris (tests/data/iris.csv,
//! provenance in tests/data/README.md): the three files for a run and for a
//! comparison, their agreement with the journals, self-containment and
//! escaping of the HTML, determinism, and the page loading in headless
//! Chromium (skipped with a note when Chromium is not installed).

mod ci_skip;
use gemmule::report::{
    plot_best_by_evaluation, plot_best_by_seconds, plot_lineage, plot_score_by_size,
    CandidatePoint, CurveGroup, LineagePoint, TimedCurve,
};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

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

fn text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

fn utf8(path: &Path) -> &str {
    path.to_str().expect("a UTF-8 temp path")
}

/// A finished 6-evaluation search in `out`.
fn tiny_run(out: &Path) {
    let data = iris();
    let o = gemmule()
        .args([
            "search",
            "--data",
            &data,
            "--out",
            utf8(out),
            "--budget",
            "6",
            "--epochs",
            "3",
            "--max-width",
            "8",
            "--jobs",
            "1",
            "--quiet",
        ])
        .output()
        .expect("the binary runs");
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
}

/// A finished comparison (2 strategies × 2 seeds, 4 evaluations each) in `out`.
fn tiny_comparison(out: &Path) {
    let data = iris();
    let o = gemmule()
        .args([
            "compare",
            "--data",
            &data,
            "--out",
            utf8(out),
            "--budget",
            "4",
            "--seeds",
            "2",
            "--epochs",
            "3",
            "--max-width",
            "8",
            "--jobs",
            "1",
            "--quiet",
        ])
        .output()
        .expect("the binary runs");
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
}

fn report(dir: &Path, out: Option<&Path>) -> Output {
    let mut c = gemmule();
    c.args(["report", utf8(dir)]);
    if let Some(out) = out {
        c.args(["--out", utf8(out)]);
    }
    c.output().expect("the binary runs")
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

fn evaluations_in(run: &Path) -> usize {
    read(&run.join("journal.jsonl"))
        .lines()
        .filter(|line| line.contains("\"kind\":\"evaluation\""))
        .count()
}

/// Every value of `attribute="…"` in `html`.
fn attribute_values<'a>(html: &'a str, attribute: &str) -> Vec<&'a str> {
    let needle = format!("{attribute}=\"");
    html.match_indices(&needle)
        .filter_map(|(at, _)| {
            let rest = &html[at + needle.len()..];
            rest.find('"').map(|end| &rest[..end])
        })
        .collect()
}

fn assert_self_contained(html: &str) {
    for attribute in ["src", "href", "xlink:href", "srcset", "action"] {
        for value in attribute_values(html, attribute) {
            assert!(
                value.starts_with('#') || value.starts_with("data:"),
                "{attribute}={value:?} points outside the page"
            );
        }
    }
    for forbidden in [
        "<script", "<link", "<iframe", "<img", "@import", "<object", "<embed",
    ] {
        assert!(!html.contains(forbidden), "the page holds {forbidden}");
    }
    let namespace = "\"http://www.w3.org/2000/svg\"";
    let other_urls = html.replace(namespace, "").matches("://").count();
    assert_eq!(
        other_urls, 0,
        "the page names a URL other than the SVG namespace"
    );
    for (at, _) in html.match_indices("url(") {
        assert!(
            html[at..].starts_with("url(#"),
            "a CSS url() outside the page"
        );
    }
}

const HEADINGS: [&str; 8] = [
    "What was searched",
    "Results",
    "Plots",
    "Best architecture",
    "Lineage of the best candidate",
    "Pareto-optimal candidates",
    "Test split",
    "Reproducibility",
];

#[test]
fn a_run_report_matches_its_journal() {
    let temp = tempfile::tempdir().expect("temp dir");
    let run = temp.path().join("run");
    tiny_run(&run);
    let o = report(&run, None);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let html = read(&run.join("report.html"));
    for heading in HEADINGS {
        assert!(
            html.contains(&format!(">{heading}</h2>")),
            "no heading {heading:?}"
        );
    }
    assert!(
        html.matches("<svg").count() >= 5,
        "four plots and the architecture"
    );
    assert_self_contained(&html);

    let evaluations = evaluations_in(&run);
    assert_eq!(evaluations, 6);
    let summary: Value = serde_json::from_str(&read(&run.join("summary.json"))).expect("JSON");
    assert_eq!(summary["kind"], "run");
    assert_eq!(summary["runs"][0]["evaluations"], evaluations as u64);
    assert_eq!(summary["test_split"]["openings"], 0);
    assert_eq!(summary["reproducibility"]["test_openings"], 0);
    assert!(summary["best"]["genome"]["layers"].is_array());
    assert!(summary["reproducibility"]["data_fingerprints"][0].is_string());
    assert!(summary["reproducibility"]["total_cpu_seconds"]
        .as_f64()
        .is_some());
    let lineage = summary["lineage"].as_array().expect("a lineage");
    assert_eq!(
        lineage.last().map(|s| &s["index"]),
        Some(&summary["best"]["index"])
    );

    let mut table = csv::Reader::from_path(run.join("candidates.csv")).expect("CSV");
    let header = table.headers().expect("a header").clone();
    for column in [
        "run",
        "strategy",
        "seed",
        "index",
        "id",
        "parent",
        "mutation",
        "status",
        "objective",
        "score_accuracy",
        "score_log_loss",
        "params",
        "madds",
        "epochs",
        "seconds",
    ] {
        assert!(header.iter().any(|h| h == column), "no column {column}");
    }
    let rows: Vec<csv::StringRecord> = table.records().map(|r| r.expect("a row")).collect();
    assert_eq!(rows.len(), evaluations, "one row per evaluation");
    assert_eq!(
        read(&run.join("candidates.csv")).lines().count(),
        evaluations + 1
    );
}

#[test]
fn a_comparison_report_holds_the_statistics() {
    let temp = tempfile::tempdir().expect("temp dir");
    let cmp = temp.path().join("cmp");
    tiny_comparison(&cmp);
    let out = temp.path().join("report");
    let o = report(&cmp, Some(&out));
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert!(!cmp.join("report.html").exists(), "--out is respected");
    let html = read(&out.join("report.html"));
    assert_self_contained(&html);
    for expected in [
        "Mann–Whitney",
        "bootstrap interval",
        "How to read this",
        "evolution-seed2",
        "random-seed1",
        "Identical across all 4 runs",
    ] {
        assert!(html.contains(expected), "missing {expected:?}");
    }

    let summary: Value = serde_json::from_str(&read(&out.join("summary.json"))).expect("JSON");
    assert_eq!(summary["kind"], "comparison");
    let runs = summary["runs"].as_array().expect("runs");
    assert_eq!(runs.len(), 4);
    let mut total = 0;
    for run in runs {
        let name = run["name"].as_str().expect("a name");
        let evaluations = evaluations_in(&cmp.join(name));
        assert_eq!(run["evaluations"], evaluations as u64, "{name}");
        total += evaluations;
    }
    assert_eq!(total, 16);
    let statistics = &summary["comparison"]["statistics"];
    assert!(statistics["test"]["mann_whitney"]["p_value"]
        .as_f64()
        .is_some());
    assert!(statistics["test"]["median_difference"]["low"]
        .as_f64()
        .is_some());
    assert_eq!(summary["reproducibility"]["settings"]["identical"], true);
    assert_eq!(summary["searched"]["seeds"], serde_json::json!([1, 2]));
    let csv_text = read(&out.join("candidates.csv"));
    assert_eq!(csv_text.lines().count(), total + 1);
}

#[test]
fn reports_are_deterministic() {
    let temp = tempfile::tempdir().expect("temp dir");
    let run = temp.path().join("run");
    tiny_run(&run);
    let (first, second) = (temp.path().join("a"), temp.path().join("b"));
    assert_eq!(report(&run, Some(&first)).status.code(), Some(0));
    assert_eq!(report(&run, Some(&second)).status.code(), Some(0));
    for file in ["report.html", "summary.json", "candidates.csv"] {
        assert_eq!(
            read(&first.join(file)),
            read(&second.join(file)),
            "{file} differs"
        );
    }
}

#[test]
fn plots_are_deterministic_svg() {
    let groups = vec![
        CurveGroup {
            name: "evolution".into(),
            curves: vec![
                vec![None, Some(0.4), Some(0.7)],
                vec![Some(0.2), Some(0.6), Some(0.6)],
            ],
        },
        CurveGroup {
            name: "random".into(),
            curves: vec![vec![Some(0.3), Some(0.3), Some(0.5)]],
        },
    ];
    let timed = vec![TimedCurve {
        group: "random".into(),
        points: vec![(0.5, 0.3), (2.0, 0.5)],
        end: 3.0,
    }];
    let points = vec![
        CandidatePoint {
            group: "evolution".into(),
            params: 40,
            objective: 0.4,
        },
        CandidatePoint {
            group: "random".into(),
            params: 900,
            objective: 0.7,
        },
    ];
    let chain = vec![
        LineagePoint {
            index: 2,
            objective: Some(0.4),
            mutation: None,
        },
        LineagePoint {
            index: 5,
            objective: Some(0.7),
            mutation: Some("width".into()),
        },
    ];
    let draw = || {
        [
            plot_best_by_evaluation(&groups, "accuracy").expect("drawn"),
            plot_best_by_seconds(&timed, "accuracy").expect("drawn"),
            plot_score_by_size(&points, &[(40, 0.4), (900, 0.7)], "log_loss").expect("drawn"),
            plot_lineage(&chain, "accuracy").expect("drawn"),
        ]
    };
    let (once, again) = (draw(), draw());
    assert_eq!(once, again);
    for svg in &once {
        assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
        assert!(!svg.contains("NaN") && !svg.contains("inf"));
    }
    assert!(once[0].contains("median of 2 runs"));
    let empty = plot_best_by_evaluation(&[], "accuracy").expect("drawn");
    assert!(empty.contains("no evaluation has a score yet"));
}

#[test]
fn names_from_files_are_escaped() {
    let temp = tempfile::tempdir().expect("temp dir");
    let run = temp.path().join("run<b>&\"x\"");
    tiny_run(&run);
    let o = report(&run, None);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let html = read(&run.join("report.html"));
    assert!(html.contains("run&lt;b&gt;&amp;&quot;x&quot;"));
    assert!(
        !html.contains("<b>"),
        "raw markup from a file name reached the page"
    );
}

#[test]
fn a_folder_without_a_run_is_refused_with_exit_2() {
    let temp = tempfile::tempdir().expect("temp dir");
    let o = report(temp.path(), None);
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o).contains("journal.jsonl"), "{}", text(&o));
    let missing = report(&temp.path().join("nowhere"), None);
    assert_eq!(missing.status.code(), Some(2), "{}", text(&missing));
}

/// The Chromium binary, if installed.
fn chromium() -> Option<PathBuf> {
    ["/usr/bin/chromium", "/usr/bin/chromium-browser"]
        .iter()
        .map(PathBuf::from)
        .find(|path| path.is_file())
}

/// Runs Chromium headless with `args` on `page`, stdout to `stdout_file`;
/// gives up after a minute. Returns the exit status and standard error.
fn headless(
    browser: &Path,
    profile: &Path,
    args: &[&str],
    page: &str,
    stdout_file: &Path,
) -> (bool, String) {
    let stderr_file = stdout_file.with_extension("stderr");
    let mut child = Command::new(browser)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--hide-scrollbars",
            &format!("--user-data-dir={}", profile.display()),
        ])
        .args(args)
        .arg(page)
        .stdin(Stdio::null())
        .stdout(std::fs::File::create(stdout_file).expect("stdout file"))
        .stderr(std::fs::File::create(&stderr_file).expect("stderr file"))
        .spawn()
        .expect("chromium starts");
    let deadline = Instant::now() + Duration::from_secs(60);
    let status = loop {
        if let Some(status) = child.try_wait().expect("chromium status") {
            break Some(status);
        }
        if Instant::now() > deadline {
            let _ = child.kill();
            let _ = child.wait();
            break None;
        }
        std::thread::sleep(Duration::from_millis(100));
    };
    let errors = std::fs::read_to_string(&stderr_file).unwrap_or_default();
    (status.is_some_and(|s| s.success()), errors)
}

#[test]
fn headless_chromium_renders_the_report() {
    let Some(browser) = chromium() else {
        ci_skip::skip("Chromium is not installed (apt-get install chromium)");
        return;
    };
    let temp = tempfile::tempdir().expect("temp dir");
    let cmp = temp.path().join("cmp");
    tiny_comparison(&cmp);
    assert_eq!(report(&cmp, None).status.code(), Some(0));
    let page = format!("file://{}", cmp.join("report.html").display());
    let profile = tempfile::tempdir().expect("profile dir");

    let dom_file = temp.path().join("dom.html");
    let (ok, errors) = headless(&browser, profile.path(), &["--dump-dom"], &page, &dom_file);
    assert!(ok, "chromium --dump-dom failed:\n{errors}");
    let dom = read(&dom_file);
    for heading in HEADINGS {
        assert!(dom.contains(heading), "the rendered page lacks {heading:?}");
    }
    assert!(
        dom.matches("<svg").count() >= 5,
        "plots missing from the rendered page"
    );
    assert!(dom.contains("Best score so far, by evaluation"));
    for failure in ["net::ERR_", "Failed to load resource", "Uncaught"] {
        assert!(
            !errors.contains(failure),
            "chromium reported {failure}:\n{errors}"
        );
    }

    let shot = temp.path().join("report.png");
    let screenshot = format!("--screenshot={}", shot.display());
    let out = temp.path().join("shot.out");
    let (ok, errors) = headless(
        &browser,
        profile.path(),
        &[&screenshot, "--window-size=1100,2400"],
        &page,
        &out,
    );
    assert!(ok, "chromium --screenshot failed:\n{errors}");
    let png = std::fs::read(&shot).expect("a screenshot");
    assert!(
        png.starts_with(b"\x89PNG") && png.len() > 10_000,
        "an empty screenshot"
    );
}
