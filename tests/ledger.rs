//! The test ledger (`src/ledger/`): numbering and refusals per test split,
//! split identity, concurrent writers (threads and processes), torn and
//! damaged lines, size limit, a full disk, unwritable locations and where
//! the ledger lives. Every ledger here is in a temporary folder.
//!
//! The checks are properties of our own format; no outside source.

mod ci_skip;
use gemmule::data::SplitFractions;
use gemmule::ledger::{
    Ledger, LedgerEntry, LedgerLocation, LocationSource, NewOpening, SplitFacts, TestSplitId,
    LEDGER_FILE,
};
use gemmule::workflow::DataSource;
use gemmule::Error;
use std::collections::BTreeMap;
use std::ffi::OsStr;
use std::path::{Path, PathBuf};
use std::process::Command;

/// A made-up SHA-256 standing in for a data fingerprint.
const DATA: &str = "b6ad0c2f0d4c4e8b9e8a0d8ac6be4fa9f6f9f8a65d4b0b3f2d0f51f1cc0a7b3e";

fn facts(split_seed: u64) -> SplitFacts {
    SplitFacts {
        data_fingerprint: DATA.to_string(),
        label: Some("label".to_string()),
        fractions: SplitFractions::default(),
        split_seed,
        test_data_fingerprint: None,
        split_column: None,
    }
}

fn ledger_in(dir: &Path) -> Ledger {
    Ledger::open(LedgerLocation::at(dir.join("ledger"))).expect("ledger opens")
}

fn opening(facts: SplitFacts, run: &str, evaluated: &str) -> NewOpening {
    NewOpening::new(facts, Path::new("/runs").join(run), "finalize").evaluated([evaluated])
}

fn message(result: Result<impl std::fmt::Debug, Error>) -> (i32, String) {
    match result {
        Err(error) => (error.exit_code(), error.to_string()),
        Ok(value) => panic!("expected an error, got {value:?}"),
    }
}

/// The ledger's lines, each parsed as JSON (panics on a malformed line).
fn lines(ledger: &Ledger) -> Vec<serde_json::Value> {
    let text = std::fs::read_to_string(ledger.path()).expect("ledger readable");
    assert!(text.is_empty() || text.ends_with('\n'), "{text}");
    text.lines()
        .map(|line| serde_json::from_str(line).expect("a well-formed line"))
        .collect()
}

#[test]
fn the_first_opening_is_number_one_and_fully_described() {
    let dir = tempfile::tempdir().expect("temp dir");
    let ledger = ledger_in(dir.path());
    assert_eq!(ledger.path(), dir.path().join("ledger").join(LEDGER_FILE));
    let check = ledger
        .check_can_open(&facts(0).id(), false)
        .expect("a first look is allowed");
    assert!(check.earlier.is_empty());
    assert_eq!(check.number, 1);
    let entry = ledger
        .record_opening(&opening(facts(0), "wine", "pick 3f2a9c81d0e4"), false)
        .expect("recorded");
    assert_eq!(entry.opening, 1);
    assert_eq!(entry.split, facts(0).id());
    assert_eq!(entry.run, "/runs/wine");
    assert_eq!(entry.purpose, "finalize");
    assert_eq!(entry.evaluated, ["pick 3f2a9c81d0e4"]);
    assert_eq!(entry.gemmule_version, env!("CARGO_PKG_VERSION"));
    assert_eq!(entry.facts, facts(0));
    let time = entry.time.as_bytes();
    assert!(
        entry.time.len() == 20 && time[4] == b'-' && time[10] == b'T' && time[19] == b'Z',
        "RFC 3339 UTC: {}",
        entry.time
    );
    let written = lines(&ledger);
    assert_eq!(written.len(), 1);
    for key in [
        "format",
        "split",
        "opening",
        "time",
        "run",
        "purpose",
        "evaluated",
        "gemmule_version",
        "facts",
    ] {
        assert!(written[0].get(key).is_some(), "{key} in {}", written[0]);
    }
    assert_eq!(ledger.openings(&facts(0).id()).expect("read"), [entry]);
}

#[test]
fn a_second_look_is_refused_naming_the_first_and_reopen_numbers_it_two() {
    let dir = tempfile::tempdir().expect("temp dir");
    let ledger = ledger_in(dir.path());
    let first = ledger
        .record_opening(&opening(facts(0), "wine-a", "pick 3f2a9c81d0e4"), false)
        .expect("recorded");
    let before = std::fs::read(ledger.path()).expect("ledger");
    let second = opening(facts(0), "wine-b", "linear baseline");
    for (code, text) in [
        message(ledger.check_can_open(&facts(0).id(), false)),
        message(ledger.record_opening(&second, false)),
    ] {
        assert_eq!(code, 2, "{text}");
        for expected in [
            "/runs/wine-a",
            first.time.as_str(),
            "pick 3f2a9c81d0e4",
            "finalize",
            "opening 1",
            "--reopen",
            "already opened 1 time:",
            "split seed 0",
            facts(0).id().short(),
        ] {
            assert!(text.contains(expected), "{expected:?} in {text}");
        }
    }
    assert_eq!(
        std::fs::read(ledger.path()).expect("ledger"),
        before,
        "a refusal writes nothing"
    );
    let check = ledger
        .check_can_open(&facts(0).id(), true)
        .expect("allowed with reopen");
    assert_eq!((check.earlier.len(), check.number), (1, 2));
    let reopened = ledger.record_opening(&second, true).expect("recorded");
    assert_eq!(reopened.opening, 2);
    let third = message(ledger.record_opening(&opening(facts(0), "c", "x"), false)).1;
    for expected in [
        "/runs/wine-a",
        "/runs/wine-b",
        "linear baseline",
        "opened 2 times:",
    ] {
        assert!(third.contains(expected), "{expected:?} in {third}");
    }
}

#[test]
fn other_split_facts_are_independent_and_irrelevant_ones_are_not() {
    let dir = tempfile::tempdir().expect("temp dir");
    let ledger = ledger_in(dir.path());
    let base = facts(0);
    let other_seed = facts(1);
    let other_data = SplitFacts {
        data_fingerprint: "0".repeat(64),
        ..facts(0)
    };
    let other_label = SplitFacts {
        label: Some("colour".into()),
        ..facts(0)
    };
    let other_test_share = SplitFacts {
        fractions: SplitFractions {
            train: 0.6,
            valid: 0.2,
            test: 0.2,
        },
        ..facts(0)
    };
    for (n, facts) in [
        &base,
        &other_seed,
        &other_data,
        &other_label,
        &other_test_share,
    ]
    .into_iter()
    .enumerate()
    {
        let entry = ledger
            .record_opening(&opening(facts.clone(), &format!("run{n}"), "pick"), false)
            .expect("an independent split opens without --reopen");
        assert_eq!(entry.opening, 1, "{}", facts.describe());
    }
    // Only the test share chooses the test rows: moving rows between
    // training and validation leaves the same test split.
    let same_test_rows = SplitFacts {
        fractions: SplitFractions {
            train: 0.6,
            valid: 0.25,
            test: 0.15,
        },
        ..facts(0)
    };
    assert_eq!(same_test_rows.id(), base.id());
    assert!(ledger
        .record_opening(&opening(same_test_rows, "run9", "pick"), false)
        .is_err());
    // A fixed test file is the test split, whatever data and seed trained the model.
    let test_file = |data: &str, seed| SplitFacts {
        data_fingerprint: data.to_string(),
        test_data_fingerprint: Some("1".repeat(64)),
        ..facts(seed)
    };
    assert_eq!(test_file(DATA, 0).id(), test_file(&"2".repeat(64), 7).id());
    assert_ne!(test_file(DATA, 0).id(), base.id());
    // A split column chooses the rows; seed and shares no longer do.
    let by_column = |seed| SplitFacts {
        split_column: Some("fold".into()),
        ..facts(seed)
    };
    assert_eq!(by_column(0).id(), by_column(5).id());
    assert_ne!(by_column(0).id(), base.id());
}

#[test]
fn the_identity_of_a_split_never_changes() {
    // Recorded openings keep their split only if these bytes stay the same.
    assert_eq!(
        facts(3).canonical_json(),
        format!(r#"{{"data":"{DATA}","label":"label","split_seed":3,"test_fraction":0.15}}"#)
    );
    let images = SplitFacts {
        label: None,
        ..facts(3)
    };
    assert_eq!(
        images.canonical_json(),
        format!(r#"{{"data":"{DATA}","split_seed":3,"test_fraction":0.15}}"#)
    );
    let id = facts(3).id();
    assert_eq!(id.as_str().len(), 64);
    assert_eq!(
        TestSplitId::parse(id.as_str()).expect("parses"),
        id,
        "round trip"
    );
    assert_eq!(
        id.as_str(),
        gemmule::genome::sha256_hex(facts(3).canonical_json().as_bytes())
    );
    assert_eq!(TestSplitId::parse("ABC").map_err(|e| e.exit_code()), Err(2));
}

#[test]
fn the_label_column_is_resolved_before_it_is_hashed() {
    let iris = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/iris.csv");
    let default = DataSource::new(&iris).prepare().expect("iris prepares");
    let named = DataSource {
        label: Some("label".into()),
        ..DataSource::new(&iris)
    }
    .prepare()
    .expect("iris prepares");
    let facts = SplitFacts::of_prepared(&default);
    assert_eq!(facts.label.as_deref(), Some("label"));
    assert_eq!(facts.data_fingerprint, default.info.fingerprint);
    assert_eq!(facts.id(), SplitFacts::of_prepared(&named).id());
    let reseeded = DataSource {
        split_seed: 1,
        ..DataSource::new(&iris)
    }
    .prepare()
    .expect("iris prepares");
    assert_ne!(facts.id(), SplitFacts::of_prepared(&reseeded).id());
}

/// Checks that `entries` hold `per_split` openings of each split, numbered
/// 1..=n without gaps or repeats.
fn assert_numbered(entries: &[LedgerEntry], per_split: &[(TestSplitId, u64)]) {
    let mut numbers: BTreeMap<&TestSplitId, Vec<u64>> = BTreeMap::new();
    for entry in entries {
        numbers.entry(&entry.split).or_default().push(entry.opening);
    }
    assert_eq!(numbers.len(), per_split.len());
    for (split, count) in per_split {
        let got = numbers.get(split).cloned().unwrap_or_default();
        let expected: Vec<u64> = (1..=*count).collect();
        assert_eq!(got, expected, "openings of {split}, in file order");
    }
}

/// Records `count` openings with reopen, alternating seeds 0 and 1 (two of
/// every three on seed 0).
fn record_many(ledger: &Ledger, writer: &str, count: usize) {
    for n in 0..count {
        let seed = u64::from(n % 3 == 2);
        let run = format!("{writer}-{n}");
        ledger
            .record_opening(&opening(facts(seed), &run, "pick"), true)
            .expect("recorded");
    }
}

#[test]
fn two_threads_recording_at_once_lose_and_interleave_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let location = LedgerLocation::at(dir.path().join("ledger"));
    std::thread::scope(|scope| {
        for writer in ["a", "b"] {
            let location = location.clone();
            scope.spawn(move || {
                let ledger = Ledger::open(location).expect("opens");
                record_many(&ledger, writer, 51);
            });
        }
    });
    let ledger = Ledger::open(location).expect("opens");
    assert_eq!(lines(&ledger).len(), 102);
    let entries = ledger.entries().expect("read");
    assert_numbered(&entries, &[(facts(0).id(), 68), (facts(1).id(), 34)]);
}

/// Environment variable that turns [`child_writer`] into a writer process.
const CHILD_LEDGER: &str = "GEMMULE_LEDGER_TEST_CHILD_DIR";

/// Not a test of its own: when started by
/// `two_processes_recording_at_once_lose_and_interleave_nothing` with
/// [`CHILD_LEDGER`] set, it records 51 openings there; otherwise it does nothing.
#[test]
fn child_writer() {
    if let Some(dir) = std::env::var_os(CHILD_LEDGER) {
        let ledger = Ledger::open(LedgerLocation::at(dir)).expect("opens");
        record_many(&ledger, &format!("pid{}", std::process::id()), 51);
    }
}

#[test]
fn two_processes_recording_at_once_lose_and_interleave_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let ledger_dir = dir.path().join("ledger");
    let this_test_binary = std::env::current_exe().expect("the test binary");
    let children: Vec<_> = (0..2)
        .map(|_| {
            Command::new(&this_test_binary)
                .args(["--exact", "child_writer", "--test-threads", "1", "--quiet"])
                .env(CHILD_LEDGER, &ledger_dir)
                .stdout(std::process::Stdio::null())
                .spawn()
                .expect("the test binary runs")
        })
        .collect();
    for mut child in children {
        assert!(child.wait().expect("waited").success());
    }
    let ledger = Ledger::open(LedgerLocation::at(&ledger_dir)).expect("opens");
    assert_eq!(lines(&ledger).len(), 102);
    let entries = ledger.entries().expect("read");
    assert_numbered(&entries, &[(facts(0).id(), 68), (facts(1).id(), 34)]);
    let writers: std::collections::BTreeSet<&str> = entries
        .iter()
        .filter_map(|e| e.run.rsplit_once('-').map(|(writer, _)| writer))
        .collect();
    assert_eq!(writers.len(), 2, "both processes wrote: {writers:?}");
}

#[test]
fn a_torn_last_line_is_ignored_and_repaired_by_the_next_write() {
    let dir = tempfile::tempdir().expect("temp dir");
    let ledger = ledger_in(dir.path());
    ledger
        .record_opening(&opening(facts(0), "a", "pick"), false)
        .expect("recorded");
    let intact = std::fs::read(ledger.path()).expect("ledger");
    // A crash in the middle of an append: part of a line, no newline.
    let mut torn = intact.clone();
    torn.extend_from_slice(br#"{"format":1,"split":"5d1"#);
    std::fs::write(ledger.path(), &torn).expect("torn");
    assert_eq!(ledger.openings(&facts(0).id()).expect("read").len(), 1);
    assert_eq!(
        ledger
            .check_can_open(&facts(1).id(), false)
            .expect("checked")
            .number,
        1
    );
    let entry = ledger
        .record_opening(&opening(facts(1), "b", "pick"), false)
        .expect("recorded");
    assert_eq!(entry.opening, 1);
    let bytes = std::fs::read(ledger.path()).expect("ledger");
    assert!(bytes.starts_with(&intact), "the intact part stays");
    assert_eq!(lines(&ledger).len(), 2, "the torn piece is gone");
}

#[test]
fn a_damaged_line_is_refused_with_its_line_number() {
    let dir = tempfile::tempdir().expect("temp dir");
    let ledger = ledger_in(dir.path());
    ledger
        .record_opening(&opening(facts(0), "a", "pick"), false)
        .expect("recorded");
    let mut bytes = std::fs::read(ledger.path()).expect("ledger");
    bytes.extend_from_slice(b"\n{not json}\n");
    let entry = serde_json::to_string(&ledger.entries().expect("read")[0]).expect("json");
    bytes.extend_from_slice(format!("{entry}\n").as_bytes());
    std::fs::write(ledger.path(), &bytes).expect("damaged");
    let (code, text) = message(ledger.record_opening(&opening(facts(1), "b", "x"), false));
    assert_eq!(code, 2);
    for expected in [
        ledger.path().display().to_string(),
        "line 3".to_string(),
        "not valid JSON".into(),
        "move the file aside".into(),
    ] {
        assert!(text.contains(&expected), "{expected:?} in {text}");
    }
    assert_eq!(std::fs::read(ledger.path()).expect("ledger"), bytes);
    let (code, text) = message(ledger.entries());
    assert_eq!(code, 2);
    assert!(text.contains("line 3"), "{text}");
    // An entry of a newer gemmule asks for an upgrade instead.
    let newer = entry.replace("\"format\":1", "\"format\":9");
    std::fs::write(ledger.path(), format!("{entry}\n{newer}\n")).expect("newer");
    let text = message(ledger.entries()).1;
    assert!(
        text.contains("line 2") && text.contains("upgrade gemmule"),
        "{text}"
    );
}

#[test]
fn a_ledger_beyond_the_size_limit_is_refused() {
    let dir = tempfile::tempdir().expect("temp dir");
    let ledger = ledger_in(dir.path());
    let file = std::fs::OpenOptions::new()
        .write(true)
        .open(ledger.path())
        .expect("ledger");
    file.set_len(gemmule::ledger::MAX_LEDGER_BYTES + 1)
        .expect("sparse file");
    let (code, text) = message(ledger.entries());
    assert_eq!(code, 2);
    assert!(
        text.contains("larger than the 64 MiB") && text.contains("move it aside"),
        "{text}"
    );
}

#[test]
fn an_unwritable_location_is_an_io_error_naming_the_path_and_the_variable() {
    let dir = tempfile::tempdir().expect("temp dir");
    // A regular file where a folder should be: refused even for root.
    let blocker = dir.path().join("not-a-folder");
    std::fs::write(&blocker, b"x").expect("file");
    let inside = blocker.join("ledger");
    let error = Ledger::open(LedgerLocation::at(&inside)).expect_err("unwritable");
    assert!(matches!(error, Error::Io { .. }), "{error:?}");
    assert_eq!(error.exit_code(), 1);
    let text = error.to_string();
    assert!(
        text.contains(&inside.display().to_string()) && text.contains("GEMMULE_LEDGER_DIR"),
        "{text}"
    );
    // The folder exists but the ledger file's name is taken by a folder.
    let taken = dir.path().join("taken");
    std::fs::create_dir_all(taken.join(LEDGER_FILE)).expect("folder");
    let text = message(Ledger::open(LedgerLocation::at(&taken))).1;
    assert!(
        text.contains(LEDGER_FILE) && text.contains("GEMMULE_LEDGER_DIR"),
        "{text}"
    );
}

#[test]
fn the_location_follows_the_override_then_xdg_then_home() {
    let os = |text: &'static str| Some(OsStr::new(text));
    let resolve = LedgerLocation::resolve;
    let chosen = resolve(os("/ledger"), os("/xdg"), os("/home/u")).expect("resolves");
    assert_eq!(
        (chosen.dir(), chosen.source()),
        (Path::new("/ledger"), LocationSource::LedgerVariable)
    );
    assert_eq!(chosen.file(), PathBuf::from("/ledger").join(LEDGER_FILE));
    let chosen = resolve(os(""), os("/xdg"), os("/home/u")).expect("resolves");
    assert_eq!(
        (chosen.dir(), chosen.source()),
        (Path::new("/xdg/gemmule"), LocationSource::XdgDataHome)
    );
    for xdg in [None, os(""), os("relative/data")] {
        let chosen = resolve(None, xdg, os("/home/u")).expect("resolves");
        assert_eq!(
            (chosen.dir(), chosen.source()),
            (
                Path::new("/home/u/.local/share/gemmule"),
                LocationSource::Home
            )
        );
    }
    let (code, text) = message(resolve(os("ledger"), None, os("/home/u")));
    assert_eq!(code, 2);
    assert!(
        text.contains("GEMMULE_LEDGER_DIR") && text.contains("absolute"),
        "{text}"
    );
    for home in [None, os(""), os("relative")] {
        let (code, text) = message(resolve(None, None, home));
        assert_eq!(code, 2);
        assert!(
            text.contains("HOME") && text.contains("set GEMMULE_LEDGER_DIR"),
            "{text}"
        );
    }
    let given = LedgerLocation::at("/somewhere");
    assert_eq!(given.source(), LocationSource::Given);
}

/// A small tmpfs mounted for one test, unmounted on drop (needs root).
struct Tmpfs {
    dir: PathBuf,
}

impl Tmpfs {
    fn mount(dir: &Path) -> Option<Tmpfs> {
        std::fs::create_dir_all(dir).ok()?;
        let status = Command::new("mount")
            .args(["-t", "tmpfs", "-o", "size=64k", "tmpfs"])
            .arg(dir)
            .stderr(std::process::Stdio::null())
            .status()
            .ok()?;
        status.success().then(|| Tmpfs {
            dir: dir.to_path_buf(),
        })
    }
}

impl Drop for Tmpfs {
    fn drop(&mut self) {
        let _ = Command::new("umount").arg(&self.dir).status();
    }
}

#[test]
fn a_full_disk_leaves_the_ledger_as_it_was() {
    let dir = tempfile::tempdir().expect("temp dir");
    let Some(tmpfs) = Tmpfs::mount(&dir.path().join("small")) else {
        ci_skip::skip("mounting a tmpfs needs root");
        return;
    };
    let ledger = ledger_in(&tmpfs.dir);
    ledger
        .record_opening(&opening(facts(0), "a", "pick"), false)
        .expect("recorded");
    // Pad the ledger with blank lines (which readers skip) to exactly one
    // page, so the next line needs a page the full disk does not have.
    let mut bytes = std::fs::read(ledger.path()).expect("ledger");
    bytes.resize(4096 - 1, b' ');
    bytes.push(b'\n');
    std::fs::write(ledger.path(), &bytes).expect("padded");
    let filler = tmpfs.dir.join("filler");
    {
        use std::io::Write;
        let mut file = std::fs::File::create(&filler).expect("filler");
        while file.write_all(&[0u8; 4096]).is_ok() {}
    }
    let (code, text) = message(ledger.record_opening(&opening(facts(1), "b", "x"), false));
    assert_eq!(code, 1, "{text}");
    assert!(text.contains(LEDGER_FILE), "{text}");
    assert_eq!(
        std::fs::read(ledger.path()).expect("ledger"),
        bytes,
        "nothing half-written"
    );
    std::fs::remove_file(&filler).expect("space again");
    let entry = ledger
        .record_opening(&opening(facts(1), "b", "x"), false)
        .expect("recorded once there is space");
    assert_eq!(entry.opening, 1);
    assert_eq!(ledger.entries().expect("read").len(), 2);
}
