//! Command-line output for scripts and terminals: `show --json` and
//! `compare --json` (keys as documented in docs/json-output.md), NO_COLOR,
//! an example in every `--help`, and the exit codes of docs/cli.md.
//!
//! Data: Fisher's iris and the UCI digits as shipped in scikit-learn 1.9.1
//! (copies and provenance in tests/data/README.md).

use clap::CommandFactory;
use serde_json::Value;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

mod private_dirs;

fn gemmule() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_gemmule"));
    c.env("RAYON_NUM_THREADS", "1");
    private_dirs::isolate(&mut c);
    c
}

fn run(args: &[&str]) -> Output {
    gemmule().args(args).output().expect("the binary runs")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn data(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(name)
        .display()
        .to_string()
}

fn path(p: &Path) -> &str {
    p.to_str().expect("a UTF-8 temp path")
}

/// The tiny iris search: 3 evaluations of at most 2 epochs, widths up to 8.
fn tiny_search(run_dir: &Path) -> Output {
    run(&[
        "search",
        "--data",
        &data("iris.csv"),
        "--out",
        path(run_dir),
        "--budget",
        "3",
        "--epochs",
        "2",
        "--max-width",
        "8",
        "--jobs",
        "1",
        "--seed",
        "1",
        "--quiet",
    ])
}

/// The documented keys of a section of docs/json-output.md: every
/// `` `key` `` at the start of a table row between `heading` and the next heading.
fn documented_keys(heading: &str) -> Vec<String> {
    let doc =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/json-output.md"))
            .expect("docs/json-output.md exists");
    let section = doc
        .split("\n## ")
        .find(|s| s.starts_with(heading))
        .unwrap_or_else(|| panic!("docs/json-output.md has a section `## {heading}`"));
    section
        .lines()
        .filter_map(|line| line.strip_prefix("| `"))
        .filter_map(|rest| rest.split('`').next())
        .map(String::from)
        .collect()
}

fn object_keys(value: &Value) -> Vec<String> {
    let mut keys: Vec<String> = value
        .as_object()
        .expect("a JSON object")
        .keys()
        .cloned()
        .collect();
    keys.sort();
    keys
}

fn sorted(mut keys: Vec<String>) -> Vec<String> {
    keys.sort();
    keys
}

#[test]
fn show_json_is_one_document_with_the_documented_keys() {
    let temp = tempfile::tempdir().expect("temp dir");
    let run_dir = temp.path().join("run");
    let searched = tiny_search(&run_dir);
    assert_eq!(searched.status.code(), Some(0), "{}", stderr(&searched));
    let shown = run(&["show", path(&run_dir), "--json"]);
    assert_eq!(shown.status.code(), Some(0), "{}", stderr(&shown));
    // The whole of stdout parses: nothing else is printed there.
    let doc: Value = serde_json::from_str(&stdout(&shown)).expect("stdout is one JSON document");
    assert_eq!(object_keys(&doc), sorted(documented_keys("`show --json`")));
    for (field, section) in [
        ("settings", "`settings`"),
        ("data", "`data`"),
        ("chosen", "`chosen`"),
        ("test_split", "`test_split`"),
    ] {
        assert_eq!(
            object_keys(&doc[field]),
            sorted(documented_keys(section)),
            "{field}"
        );
    }
    assert_eq!(
        object_keys(&doc["leaderboard"][0]),
        sorted(documented_keys("`leaderboard` entries"))
    );
    assert_eq!(doc["format"], 1);
    assert_eq!(doc["kind"], "run");
    assert_eq!(doc["evaluations"], 3);
    assert_eq!(doc["settings"]["seed"], 1);
    assert_eq!(doc["settings"]["budget"]["evaluations"], 3);
    assert_eq!(doc["settings"]["encoding"], "layers");
    assert_eq!(doc["objective"], "accuracy");
    // Source: iris has 150 rows and the classes setosa, versicolor, virginica
    // (Fisher 1936; tests/data/iris.stats.json), 4 features.
    let rows = &doc["data"]["rows"];
    let total: u64 = ["train", "valid", "test"]
        .iter()
        .map(|k| rows[k].as_u64().expect("a row count"))
        .sum();
    assert_eq!(total, 150);
    assert_eq!(
        doc["data"]["classes"],
        serde_json::json!(["setosa", "versicolor", "virginica"])
    );
    assert_eq!(doc["data"]["features"], 4);
    let statuses: u64 = doc["statuses"]
        .as_object()
        .expect("statuses")
        .values()
        .map(|v| v.as_u64().expect("a count"))
        .sum();
    assert_eq!(statuses, 3);
    assert_eq!(doc["best_so_far"].as_array().map(Vec::len), Some(3));
    let best = &doc["chosen"];
    assert_eq!(best["selected_by"], "best");
    assert_eq!(best["index"], doc["leaderboard"][0]["index"]);
    assert!(best["genome"]["layers"].is_array(), "{best}");
    let lineage = doc["lineage"].as_array().expect("lineage");
    assert_eq!(lineage.last().map(|s| &s["index"]), Some(&best["index"]));
    assert_eq!(doc["test_split"]["openings"], 0);

    // --index picks the candidate; finalize adds a test opening.
    let finalized = run(&["finalize", path(&run_dir)]);
    assert_eq!(finalized.status.code(), Some(0), "{}", stderr(&finalized));
    let shown = run(&["show", path(&run_dir), "--json", "--index", "1"]);
    assert_eq!(shown.status.code(), Some(0), "{}", stderr(&shown));
    let doc: Value = serde_json::from_str(&stdout(&shown)).expect("stdout is one JSON document");
    assert_eq!(doc["chosen"]["selected_by"], "index");
    assert_eq!(doc["chosen"]["index"], 1);
    assert_eq!(doc["test_split"]["openings"], 1);
    let opening = &doc["test_split"]["records"][0];
    assert_eq!(
        object_keys(opening),
        sorted(documented_keys("`test_split.records` entries"))
    );
    assert_eq!(opening["opening"], 1);
    let accuracy = opening["test_scores"]["accuracy"]
        .as_f64()
        .expect("a test accuracy");
    assert!((0.0..=1.0).contains(&accuracy));
}

#[test]
fn compare_json_goes_alone_to_stdout_and_progress_to_stderr() {
    let temp = tempfile::tempdir().expect("temp dir");
    let out = temp.path().join("cmp");
    // Not --quiet: the per-run lines must still stay off stdout.
    let compared = run(&[
        "compare",
        "--data",
        &data("iris.csv"),
        "--out",
        path(&out),
        "--seeds",
        "2",
        "--budget",
        "2",
        "--epochs",
        "1",
        "--max-width",
        "8",
        "--jobs",
        "1",
        "--json",
    ]);
    assert_eq!(compared.status.code(), Some(0), "{}", stderr(&compared));
    assert!(
        stderr(&compared).contains("run 1/4"),
        "{}",
        stderr(&compared)
    );
    let report: Value =
        serde_json::from_str(&stdout(&compared)).expect("stdout is one JSON document");
    assert_eq!(
        object_keys(&report),
        sorted(documented_keys("`compare --json`"))
    );
    assert_eq!(report["evaluations"], 2);
    assert_eq!(report["runs"].as_array().map(Vec::len), Some(4));
    assert_eq!(report["strategies"][0]["strategy"], "evolution");
    assert_eq!(report["test"]["mann_whitney"]["alternative"], "greater");
    // The same object is `comparison.statistics` in summary.json.
    let reported = run(&["report", path(&out)]);
    assert_eq!(reported.status.code(), Some(0), "{}", stderr(&reported));
    let summary: Value = serde_json::from_str(
        &std::fs::read_to_string(out.join("summary.json")).expect("summary.json written"),
    )
    .expect("summary.json parses");
    assert_eq!(summary["comparison"]["statistics"], report);
}

#[test]
fn usage_errors_exit_2_and_help_exits_0() {
    // Source: clap's convention (usage errors exit 2), kept by cli::main.
    for args in [
        vec!["search", "--budget"],
        vec!["show", "some-run", "--no-such-option"],
        vec!["no-such-command"],
        vec![
            "compare",
            "--data",
            "x.csv",
            "--out",
            "y",
            "--seeds",
            "2",
            "--seed-list",
            "1,2",
        ],
    ] {
        let o = run(&args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
        assert!(stdout(&o).is_empty(), "{args:?}");
    }
    for args in [vec!["--help"], vec!["--version"], vec!["show", "--help"]] {
        let o = run(&args);
        assert_eq!(o.status.code(), Some(0), "{args:?}: {}", stderr(&o));
    }
    // Bad input found by the command itself also exits 2.
    let temp = tempfile::tempdir().expect("temp dir");
    let missing = temp.path().join("no-run");
    let o = run(&["show", path(&missing), "--json"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stdout(&o).is_empty());
}

#[test]
fn every_help_has_an_example() {
    let cli = gemmule::cli::Cli::command();
    let top = run(&["--help"]);
    assert!(stdout(&top).contains("Example"), "{}", stdout(&top));
    let names: Vec<String> = cli
        .get_subcommands()
        .map(|c| c.get_name().to_string())
        .filter(|name| name != "help")
        .collect();
    assert!(names.len() >= 9, "{names:?}");
    for name in names {
        let o = run(&[&name, "--help"]);
        assert_eq!(o.status.code(), Some(0), "{name}: {}", stderr(&o));
        assert!(
            stdout(&o).contains("Example"),
            "{name} --help: {}",
            stdout(&o)
        );
    }
}

#[test]
fn no_color_search_writes_no_escape_codes() {
    let temp = tempfile::tempdir().expect("temp dir");
    let run_dir = temp.path().join("run");
    // Not --quiet: the bar is asked for, but stderr is a pipe here.
    let o = gemmule()
        .env("NO_COLOR", "1")
        .args([
            "search",
            "--data",
            &data("iris.csv"),
            "--out",
            path(&run_dir),
            "--budget",
            "3",
            "--epochs",
            "1",
            "--max-width",
            "8",
            "--jobs",
            "1",
        ])
        .output()
        .expect("the binary runs");
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(!o.stderr.contains(&0x1b), "{:?}", stderr(&o));
    assert!(!o.stdout.contains(&0x1b), "{:?}", stdout(&o));
}

/// True when `bytes` hold an SGR (colour/attribute) sequence `ESC [ … m`.
fn has_sgr(bytes: &[u8]) -> bool {
    bytes.windows(2).enumerate().any(|(i, w)| {
        w == [0x1b, b'['] && {
            let rest = &bytes[i + 2..];
            let end = rest
                .iter()
                .position(|b| !(b.is_ascii_digit() || *b == b';'))
                .unwrap_or(rest.len());
            rest.get(end) == Some(&b'm')
        }
    })
}

/// A pseudo-terminal: the master side to read, the path of the slave side.
fn open_pty() -> (std::fs::File, PathBuf) {
    use std::os::fd::FromRawFd;
    // SAFETY: plain POSIX calls; the returned descriptor is owned by the File.
    unsafe {
        let master = libc::posix_openpt(libc::O_RDWR | libc::O_NOCTTY);
        assert!(master >= 0, "posix_openpt");
        assert_eq!(libc::grantpt(master), 0, "grantpt");
        assert_eq!(libc::unlockpt(master), 0, "unlockpt");
        let mut name = [0 as libc::c_char; 128];
        assert_eq!(
            libc::ptsname_r(master, name.as_mut_ptr(), name.len()),
            0,
            "ptsname_r"
        );
        let slave = std::ffi::CStr::from_ptr(name.as_ptr())
            .to_string_lossy()
            .into_owned();
        (std::fs::File::from_raw_fd(master), PathBuf::from(slave))
    }
}

/// Runs a short search with stdout and stderr on a pseudo-terminal and
/// returns everything it wrote there.
fn search_on_terminal(no_color: Option<&str>) -> Vec<u8> {
    let temp = tempfile::tempdir().expect("temp dir");
    let (mut master, slave_path) = open_pty();
    let slave = std::fs::OpenOptions::new()
        .read(true)
        .write(true)
        .open(&slave_path)
        .expect("the pty slave opens");
    let mut command = gemmule();
    command
        .env("TERM", "xterm")
        .env_remove("NO_COLOR")
        .env_remove("CLICOLOR")
        .env_remove("CLICOLOR_FORCE")
        .args([
            "search",
            "--data",
            &data("iris.csv"),
            "--out",
            path(&temp.path().join("run")),
            "--budget",
            "4",
            "--epochs",
            "1",
            "--max-width",
            "8",
            "--jobs",
            "1",
        ])
        .stdin(Stdio::null())
        .stdout(slave.try_clone().expect("dup"))
        .stderr(slave);
    if let Some(value) = no_color {
        command.env("NO_COLOR", value);
    }
    let mut child = command.spawn().expect("the binary runs");
    // Close this process's copies of the slave so reading ends with the child.
    drop(command);
    let mut written = Vec::new();
    let mut chunk = [0u8; 4096];
    loop {
        match master.read(&mut chunk) {
            Ok(0) | Err(_) => break, // EIO once the child closed the slave
            Ok(n) => written.extend_from_slice(&chunk[..n]),
        }
    }
    let status = child.wait().expect("the child ends");
    assert_eq!(
        status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&written)
    );
    written
}

#[test]
fn no_color_on_a_terminal_turns_the_bar_colour_off() {
    // Source: https://no-color.org. The run without NO_COLOR shows that this
    // test sees the bar's colour when there is some.
    let plain = search_on_terminal(Some("1"));
    assert!(!has_sgr(&plain), "{:?}", String::from_utf8_lossy(&plain));
    let coloured = search_on_terminal(None);
    assert!(
        has_sgr(&coloured),
        "{:?}",
        String::from_utf8_lossy(&coloured)
    );
}

#[test]
fn ctrl_c_stops_a_search_with_exit_130() {
    let temp = tempfile::tempdir().expect("temp dir");
    let run_dir = temp.path().join("run");
    // Large enough that it cannot finish before the signal arrives.
    let child = gemmule()
        .args([
            "search",
            "--data",
            &data("digits.csv"),
            "--out",
            path(&run_dir),
            "--budget",
            "100000",
            "--epochs",
            "3",
            "--jobs",
            "1",
            "--quiet",
        ])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the binary runs");
    // The handler is installed before the journal exists; wait for the first evaluation.
    let journal = run_dir.join("journal.jsonl");
    let mut waited = 0;
    while std::fs::read_to_string(&journal)
        .map(|t| t.lines().count() < 2)
        .unwrap_or(true)
    {
        assert!(waited < 6000, "no evaluation after 10 minutes");
        std::thread::sleep(std::time::Duration::from_millis(100));
        waited += 1;
    }
    let pid = libc::pid_t::try_from(child.id()).expect("a pid");
    // SAFETY: sends SIGINT to the child this test started.
    assert_eq!(unsafe { libc::kill(pid, libc::SIGINT) }, 0);
    let o = child.wait_with_output().expect("the child ends");
    assert_eq!(o.status.code(), Some(130), "{}", stderr(&o));
    assert!(stdout(&o).contains("gemmule resume"), "{}", stdout(&o));
}

#[test]
fn sgr_detection_matches_hand_made_sequences() {
    // Source: ECMA-48 SGR is `CSI Ps ; … m`; erase-line `CSI 2 K` is not SGR.
    assert!(has_sgr(b"a\x1b[36mbar\x1b[0m"));
    assert!(has_sgr(b"\x1b[m"));
    assert!(!has_sgr(b"\r\x1b[2Kbar\x1b[1A"));
}
