//! The hostile-input table: every bad input the reliability issue lists, each
//! with its expected outcome. `docs/bad-inputs.md` lists the same cases by id
//! (`every_case_is_documented` keeps the two in step).
//!
//! Command-line cases run the built `gemmule` binary and check, for a refusal:
//! exit code 2, exactly one `gemmule: error:` line on stderr (other stderr
//! lines may only be warnings; a refused search prints nothing else at all), a message
//! of at most 600 characters naming the facts needed to fix the input (file,
//! line, column or field), no panic text, and no output folder (model or run
//! directory) created or changed. Valid-but-unusual inputs (BOM, CRLF,
//! multi-line quoted cells, mixed labels) must work.
//!
//! Image loaders and cell genomes are not reachable from every command yet,
//! so their cases call the library and check for `Error::Input` (exit code 2)
//! with the same message rules.
//!
//! Expected facts are this project's own message contract (common practice,
//! no outside source), except where a case names a format specification.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use gemmule::data::image::{read_idx, read_image_folder, read_pixel_csv, ImageFolderOptions};
use gemmule::data::image::{ImageShape, IDX_IMAGES_MAGIC, IDX_LABELS_MAGIC};
use gemmule::data::{prepare, read_table, CsvOptions, SplitFractions};
use gemmule::genome::{CellGenome, ConvOp, ImageCellSpace, SearchSpace};
use gemmule::Error;

mod private_dirs;

/// Longest acceptable error message (one line a person reads).
const MAX_MESSAGE_CHARS: usize = 600;

// ---------------------------------------------------------------- fixtures

/// A small valid table: 3 classes × 6 rows, two numeric features.
fn good_rows() -> String {
    let mut text = String::from("x,y,label\n");
    for i in 0..18 {
        text.push_str(&format!(
            "{}.{},{},{}\n",
            i % 7,
            i,
            (i * 3) % 5,
            ["a", "b", "c"][i % 3]
        ));
    }
    text
}

/// A valid layer genome (one hidden layer of 8 units).
const GOOD_GENOME: &str = r#"{"layers":[{"width":8,"activation":"relu"}],"training":{"learning_rate":0.01,"batch_size":16}}"#;

/// A valid image cell genome of `ImageCellSpace::default()` (B = 3, F = 8, N = 1, R = 2).
const GOOD_CELL_GENOME: &str = r#"{"ops":"conv",
 "normal":{"blocks":[{"inputs":[0,1],"ops":["identity","conv3x3"]},
                     {"inputs":[1,2],"ops":["conv1x1","max_pool3x3"]},
                     {"inputs":[0,3],"ops":["identity","avg_pool3x3"]}]},
 "reduction":{"blocks":[{"inputs":[0,1],"ops":["identity","conv3x3"]},
                        {"inputs":[1,2],"ops":["conv1x1","max_pool3x3"]},
                        {"inputs":[0,3],"ops":["identity","avg_pool3x3"]}]},
 "skeleton":{"channels":8,"normal_cells":1,"repeats":2},
 "training":{"learning_rate":0.001,"batch_size":32,"weight_decay":0.0,"optimizer":"adam"}}"#;

fn write(dir: &Path, name: &str, bytes: impl AsRef<[u8]>) -> PathBuf {
    let path = dir.join(name);
    if let Some(parent) = path.parent() {
        std::fs::create_dir_all(parent).expect("create folder");
    }
    std::fs::write(&path, bytes).expect("write test file");
    path
}

fn s(path: &Path) -> String {
    path.display().to_string()
}

fn gemmule(args: &[String]) -> Output {
    private_dirs::isolate(&mut Command::new(env!("CARGO_BIN_EXE_gemmule")))
        .args(args)
        .env("RAYON_NUM_THREADS", "1")
        .output()
        .expect("the gemmule binary runs")
}

/// Every file below `dir` with its bytes (an empty map when `dir` is absent).
fn snapshot(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    let mut files = BTreeMap::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(folder) = stack.pop() {
        let Ok(entries) = std::fs::read_dir(&folder) else {
            continue;
        };
        for entry in entries.flatten() {
            let path = entry.path();
            if path.is_dir() {
                stack.push(path);
            } else {
                files.insert(path.clone(), std::fs::read(&path).unwrap_or_default());
            }
        }
    }
    files
}

// ---------------------------------------------------------------- the case table

/// What a case must lead to.
enum Expect {
    /// Exit 2 with one error line containing every fact.
    Refused(Vec<String>),
    /// A command-line parse error from the argument parser (exit 2, names the option).
    ParseError(Vec<String>),
    /// Exit 0; the combined output contains every fact.
    Works(Vec<String>),
}

/// One row of the table: a command and its expected outcome.
struct CliCase {
    id: &'static str,
    args: Vec<String>,
    expect: Expect,
    /// Paths that must not exist after a refusal (the output folder).
    not_created: Vec<PathBuf>,
    /// A folder whose files must be byte-identical before and after.
    unchanged: Option<PathBuf>,
}

fn facts(list: &[&str]) -> Vec<String> {
    list.iter().map(|f| f.to_string()).collect()
}

fn refused(id: &'static str, args: Vec<String>, expected: &[&str]) -> CliCase {
    CliCase {
        id,
        args,
        expect: Expect::Refused(facts(expected)),
        not_created: Vec::new(),
        unchanged: None,
    }
}

impl CliCase {
    fn not_created(mut self, path: &Path) -> Self {
        self.not_created.push(path.to_path_buf());
        self
    }

    fn unchanged(mut self, path: &Path) -> Self {
        self.unchanged = Some(path.to_path_buf());
        self
    }
}

/// Checks a refusal's stderr; returns the problems found.
fn check_refusal(output: &Output, expected: &[String]) -> Vec<String> {
    let stderr = String::from_utf8_lossy(&output.stderr);
    let stdout = String::from_utf8_lossy(&output.stdout);
    let mut problems = Vec::new();
    if output.status.code() != Some(2) {
        problems.push(format!("exit code {:?}, expected 2", output.status.code()));
    }
    if stderr.contains("panicked") || stdout.contains("panicked") {
        problems.push("panic text in the output".to_string());
    }
    let errors: Vec<&str> = stderr
        .lines()
        .filter(|l| l.starts_with("gemmule: error:"))
        .collect();
    if errors.len() != 1 {
        problems.push(format!("{} error lines, expected 1", errors.len()));
    }
    for line in stderr.lines().filter(|l| !l.trim().is_empty()) {
        let allowed = line.starts_with("gemmule: error:") || line.starts_with("gemmule: warning:");
        if !allowed {
            problems.push(format!("unexpected stderr line: {line:?}"));
        }
    }
    if let Some(line) = errors.first() {
        if line.chars().count() > MAX_MESSAGE_CHARS {
            problems.push(format!(
                "message of {} characters (limit {MAX_MESSAGE_CHARS})",
                line.chars().count()
            ));
        }
        if line.contains("internal error") {
            problems.push("reported as an internal error".to_string());
        }
        for fact in expected {
            if !line.contains(fact.as_str()) {
                problems.push(format!("message lacks {fact:?}"));
            }
        }
    }
    problems
}

/// Runs every case; fails once, listing all cases that went wrong.
fn run_table(cases: Vec<CliCase>) {
    let mut failures = Vec::new();
    for case in cases {
        let before = case.unchanged.as_deref().map(snapshot);
        let output = gemmule(&case.args);
        let stderr = String::from_utf8_lossy(&output.stderr).to_string();
        let stdout = String::from_utf8_lossy(&output.stdout).to_string();
        let mut problems = match &case.expect {
            Expect::Refused(expected) => check_refusal(&output, expected),
            Expect::ParseError(expected) => {
                let mut p = Vec::new();
                if output.status.code() != Some(2) {
                    p.push(format!("exit code {:?}, expected 2", output.status.code()));
                }
                for fact in expected {
                    if !stderr.contains(fact.as_str()) {
                        p.push(format!("message lacks {fact:?}"));
                    }
                }
                p
            }
            Expect::Works(expected) => {
                let mut p = Vec::new();
                if output.status.code() != Some(0) {
                    p.push(format!("exit code {:?}, expected 0", output.status.code()));
                }
                let all = format!("{stdout}{stderr}");
                for fact in expected {
                    if !all.contains(fact.as_str()) {
                        p.push(format!("output lacks {fact:?}"));
                    }
                }
                p
            }
        };
        if !matches!(case.expect, Expect::Works(_)) {
            for path in &case.not_created {
                if path.exists() {
                    problems.push(format!("{} was created", path.display()));
                }
            }
        }
        if let (Some(dir), Some(before)) = (&case.unchanged, before) {
            if snapshot(dir) != before {
                problems.push(format!("{} changed", dir.display()));
            }
        }
        if !problems.is_empty() {
            failures.push(format!(
                "{} ({}): {}\n    stderr: {}",
                case.id,
                case.args.join(" "),
                problems.join("; "),
                stderr.trim().replace('\n', "\n            ")
            ));
        }
    }
    assert!(
        failures.is_empty(),
        "{} case(s) failed:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

/// `gemmule train --data DATA --genome GENOME --out OUT --epochs 1`.
fn train_args(data: &Path, genome: &Path, out: &Path) -> Vec<String> {
    vec![
        "train".into(),
        "--data".into(),
        s(data),
        "--genome".into(),
        s(genome),
        "--out".into(),
        s(out),
        "--epochs".into(),
        "1".into(),
    ]
}

/// `gemmule search --data DATA --out OUT` plus `extra`, tiny and quiet.
fn search_args(data: &Path, out: &Path, extra: &[&str]) -> Vec<String> {
    let mut args: Vec<String> = vec![
        "search".into(),
        "--data".into(),
        s(data),
        "--out".into(),
        s(out),
        "--quiet".into(),
        "--epochs".into(),
        "1".into(),
        "--max-width".into(),
        "8".into(),
    ];
    args.extend(extra.iter().map(|a| a.to_string()));
    args
}

// ---------------------------------------------------------------- CSV files

/// C01–C26: CSV files through `gemmule train` (the loader every command shares).
#[test]
fn csv_files() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let genome = write(d, "genome.json", GOOD_GENOME);
    let out = d.join("model");
    let good = good_rows();
    let case = |id: &'static str, name: &str, bytes: Vec<u8>, expected: &[&str]| {
        let path = write(d, name, bytes);
        refused(id, train_args(&path, &genome, &out), expected).not_created(&out)
    };
    let with_line = |line: &str| format!("{good}{line}\n").into_bytes();
    let mut bom = b"\xEF\xBB\xBF".to_vec();
    bom.extend_from_slice(good.as_bytes());
    let crlf = good.replace('\n', "\r\n");
    let multiline = {
        let mut text = String::from("x,note,label\n");
        for i in 0..18 {
            let note = if i == 0 {
                "\"first line\nsecond line\"".to_string()
            } else {
                format!("n{}", i % 2)
            };
            text.push_str(&format!("{i},{note},{}\n", ["a", "b", "c"][i % 3]));
        }
        text
    };
    let mixed_labels = good
        .replace(",a\n", ",1\n")
        .replace(",b\n", ",2\n")
        .replace(",c\n", ",cat\n");
    let wide_header = {
        let mut text: String = (0..1_000_000).map(|i| format!("c{i},")).collect();
        text.push_str("label\n");
        text
    };
    let long_field = format!("x,label\n{},a\n1,b\n", "y".repeat(10_000_000));
    let mut garbage: Vec<u8> = (0..4096u32)
        .map(|i| (i.wrapping_mul(2_654_435_761) >> 13) as u8)
        .collect();
    garbage[0] = b'x';
    let gzip = {
        // RFC 1952 member header (ID1 ID2 CM FLG MTIME XFL OS) + a stored block.
        let mut bytes = vec![0x1f, 0x8b, 8, 0, 0, 0, 0, 0, 0, 3];
        bytes.extend_from_slice(b"\x01\x05\x00\xfa\xffx,y\n1");
        bytes
    };
    let missing_quote = format!("{good}1,\"2,a\n3,4,b\n");
    let ok_model = |name: &str| d.join(format!("model_{name}"));
    let works = |id: &'static str, name: &str, bytes: Vec<u8>, expected: &[&str]| CliCase {
        id,
        args: train_args(&write(d, name, bytes), &genome, &ok_model(name)),
        expect: Expect::Works(facts(expected)),
        not_created: Vec::new(),
        unchanged: None,
    };
    let cases = vec![
        case("C01", "empty.csv", Vec::new(), &["empty.csv", "empty"]),
        case(
            "C02",
            "header_only.csv",
            b"x,y,label\n".to_vec(),
            &["header_only.csv", "no data rows"],
        ),
        case(
            "C03",
            "ragged.csv",
            with_line("1,b"),
            &["ragged.csv", "line 20", "2 fields", "header has 3 fields"],
        ),
        case(
            "C04",
            "dup.csv",
            good.replacen("x,y,label", "x,x,label", 1).into_bytes(),
            &["dup.csv", "line 1", "'x'", "columns 1 and 2"],
        ),
        case(
            "C05",
            "noname.csv",
            good.replacen("x,y,label", "x,,label", 1).into_bytes(),
            &["noname.csv", "line 1", "column 2", "empty name"],
        ),
        refused(
            "C06",
            {
                let mut a = train_args(&write(d, "good.csv", good.clone()), &genome, &out);
                a.extend(["--label".to_string(), "target".to_string()]);
                a
            },
            &["good.csv", "'target'", "x, y, label"],
        )
        .not_created(&out),
        case(
            "C07",
            "one_class.csv",
            good.replace(",b\n", ",a\n")
                .replace(",c\n", ",a\n")
                .into_bytes(),
            &["one_class.csv", "single class", "'label'"],
        ),
        case(
            "C08",
            "small_class.csv",
            with_line("1,2,d"),
            &["small_class.csv", "'d' has 1 row", "at least 3"],
        ),
        case(
            "C09",
            "inf.csv",
            good.replacen("0.0,0,a", "inf,0,a", 1).into_bytes(),
            &["inf.csv", "line 2", "column 'x'", "'inf'", "infinite"],
        ),
        case(
            "C10",
            "latin1.csv",
            {
                let mut b = good.clone().into_bytes();
                b.extend_from_slice(b"1,2,caf\xe9\n");
                b
            },
            &["latin1.csv", "line 20", "UTF-8"],
        ),
        case(
            "C11",
            "gaps.csv",
            good.replacen("0.0,0,a", ",0,a", 1).into_bytes(),
            &["gaps.csv", "line 2", "column 'x'", "--impute"],
        ),
        case(
            "C12",
            "no_label.csv",
            with_line("1,2,NA"),
            &["no_label.csv", "line 20", "without a label"],
        ),
        case(
            "C13",
            "constant.csv",
            {
                let mut t = String::from("k,label\n");
                for i in 0..18 {
                    t.push_str(&format!("5,{}\n", ["a", "b", "c"][i % 3]));
                }
                t.into_bytes()
            },
            &["constant.csv", "constant", "(k)"],
        ),
        works("C14", "bom.csv", bom, &["model saved"]),
        works("C15", "crlf.csv", crlf.into_bytes(), &["model saved"]),
        works(
            "C26",
            "mac.csv",
            good.replace('\n', "\r").into_bytes(),
            &["model saved"],
        ),
        case(
            "C16",
            "semicolon.csv",
            good.replace(',', ";").into_bytes(),
            &["semicolon.csv", "semicolon-separated", "--delimiter ';'"],
        ),
        works(
            "C17",
            "multiline.csv",
            multiline.into_bytes(),
            &["model saved"],
        ),
        works(
            "C18",
            "mixed_labels.csv",
            mixed_labels.into_bytes(),
            &["model saved", "mixes numbers", "'cat'"],
        ),
        case(
            "C19",
            "wide.csv",
            wide_header.into_bytes(),
            &["wide.csv", "line 1", "1000001 columns", "at most"],
        ),
        case(
            "C20",
            "long_field.csv",
            long_field.into_bytes(),
            &["long_field.csv", "line 2", "column 'x'", "10000000 bytes"],
        ),
        case(
            "C21",
            "garbage.csv",
            garbage,
            &["garbage.csv", "binary data"],
        ),
        case(
            "C22",
            "data.csv.gz",
            gzip,
            &["data.csv.gz", "gzip-compressed", "unpack"],
        ),
        case(
            "C23",
            "missing_quote.csv",
            missing_quote.into_bytes(),
            &["missing_quote.csv", "line 20", "missing closing quote"],
        ),
        refused(
            "C24",
            train_args(&d.join("no-such-file.csv"), &genome, &out),
            &["no-such-file.csv"],
        )
        .not_created(&out),
        refused(
            "C25",
            {
                let mut a = train_args(&write(d, "good2.csv", good.clone()), &genome, &out);
                a.extend(["--delimiter".to_string(), "\"".to_string()]);
                a
            },
            &["delimiter"],
        )
        .not_created(&out),
    ];
    run_table(cases);
}

/// The valid-but-unusual CSV files load into the right cells (library view of
/// C14, C15, C17, C18 and C26).
#[test]
fn unusual_but_valid_csv_files_load_correctly() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let good = good_rows();
    let mut bom = b"\xEF\xBB\xBF".to_vec();
    bom.extend_from_slice(good.replace('\n', "\r\n").as_bytes());
    let table = read_table(&write(d, "bom_crlf.csv", bom), &CsvOptions::default())
        .expect("BOM and CRLF are accepted");
    assert_eq!(table.column_names(), ["x", "y", "label"]);
    assert_eq!(table.n_rows(), 18);
    assert_eq!(table.label_texts()[17], "c", "no \\r left on the last cell");
    assert_eq!(table.line_of(17), Some(19));

    // Classic Mac line ends (lone CR), as "CSV (Macintosh)" exports write them;
    // found by the csv_loader fuzz target (rows shared a line number).
    let table = read_table(
        &write(d, "mac.csv", good.replace('\n', "\r")),
        &CsvOptions::default(),
    )
    .expect("CR line ends are accepted");
    assert_eq!(table.n_rows(), 18);
    assert_eq!(table.line_of(0), Some(2));
    assert_eq!(table.line_of(17), Some(19));

    let text = "x,note,label\n1,\"two\nlines\",a\n2,\"say \"\"hi\"\"\",b\n3,plain,a\n";
    let table = read_table(&write(d, "quoted.csv", text), &CsvOptions::default())
        .expect("quoted cells with line breaks are accepted");
    assert_eq!(
        table.column_texts("note").expect("column note"),
        ["two\nlines", "say \"hi\"", "plain"]
    );
    assert_eq!(table.line_of(1), Some(4), "the row after a two-line cell");
    assert_eq!(table.line_of(2), Some(5));

    let mixed = good
        .replace(",a\n", ",1\n")
        .replace(",b\n", ",2\n")
        .replace(",c\n", ",cat\n");
    let prepared = prepare(
        &write(d, "mixed.csv", mixed),
        &CsvOptions::default(),
        &SplitFractions::default(),
        0,
    )
    .expect("mixed labels are classes by their text");
    assert_eq!(prepared.info.class_names, ["1", "2", "cat"]);
    assert!(
        prepared
            .info
            .warnings
            .iter()
            .any(|w| w.contains("mixes numbers")),
        "{:?}",
        prepared.info.warnings
    );

    let two_ways = good
        .replace(",a\n", ",1\n")
        .replace(",b\n", ",1.0\n")
        .replace(",c\n", ",2\n");
    let prepared = prepare(
        &write(d, "two_ways.csv", two_ways),
        &CsvOptions::default(),
        &SplitFractions::default(),
        0,
    )
    .expect("'1' and '1.0' are two classes");
    assert_eq!(prepared.info.class_names, ["1", "1.0", "2"]);
    assert!(
        prepared
            .info
            .warnings
            .iter()
            .any(|w| w.contains("'1' and '1.0'") && w.contains("same number")),
        "{:?}",
        prepared.info.warnings
    );
}

// ---------------------------------------------------------------- genome JSON

/// G01–G12: layer genome files given to `gemmule train` and `gemmule search`.
#[test]
fn genome_files() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let data = write(d, "good.csv", good_rows());
    let out = d.join("model");
    let run = d.join("run");
    let genome_case = |id: &'static str, name: &str, text: &str, expected: &[&str]| {
        let path = write(d, name, text);
        refused(id, train_args(&data, &path, &out), expected).not_created(&out)
    };
    let layer = |fields: &str| {
        format!(
            r#"{{"layers":[{{{fields}}}],"training":{{"learning_rate":0.01,"batch_size":16}}}}"#
        )
    };
    let sixty_five: Vec<String> = (0..65)
        .map(|_| r#"{"width":4,"activation":"relu"}"#.to_string())
        .collect();
    let deep = format!(
        r#"{{"layers":[{}],"training":{{"learning_rate":0.01,"batch_size":16}}}}"#,
        sixty_five.join(",")
    );
    let empty_layers = r#"{"layers":[],"training":{"learning_rate":0.001,"batch_size":16}}"#;
    let cases = vec![
        genome_case(
            "G01",
            "unknown_field.json",
            &layer(r#""width":8,"activation":"relu","colour":"red""#),
            &["unknown_field.json:1:", "unknown field `colour`"],
        ),
        genome_case(
            "G02",
            "width0.json",
            &layer(r#""width":0,"activation":"relu""#),
            &["width0.json", "layers[0].width is 0"],
        ),
        genome_case(
            "G03",
            "lr.json",
            r#"{"layers":[],"training":{"learning_rate":50,"batch_size":16}}"#,
            &["lr.json", "training.learning_rate is 50", "(0, 10]"],
        ),
        genome_case(
            "G04",
            "lr_negative.json",
            r#"{"layers":[],"training":{"learning_rate":-0.01,"batch_size":16}}"#,
            &["lr_negative.json", "training.learning_rate is -0.01"],
        ),
        genome_case(
            "G05",
            "swish.json",
            &layer(r#""width":8,"activation":"swish""#),
            &["swish.json:1:", "unknown variant `swish`", "relu"],
        ),
        genome_case(
            "G06",
            "truncated.json",
            &GOOD_GENOME[..40],
            &["truncated.json:1:", "EOF"],
        ),
        genome_case("G07", "empty.json", "", &["empty.json"]),
        genome_case(
            "G08",
            "huge_width.json",
            &layer(r#""width":4000000000,"activation":"relu""#),
            &["huge_width.json", "layers[0].width is 4000000000", "65536"],
        ),
        genome_case(
            "G09",
            "deep.json",
            &deep,
            &["deep.json", "layers has 65 entries", "64"],
        ),
        genome_case(
            "G10",
            "residual.json",
            &layer(r#""width":8,"activation":"relu","residual":true"#),
            &["residual.json", "layers[0].residual"],
        ),
        refused(
            "G11",
            search_args(
                &data,
                &run,
                &[
                    "--budget",
                    "2",
                    "--seed-genomes",
                    &s(&write(d, "seeds_empty.json", empty_layers)),
                ],
            ),
            &["seeds_empty.json", "layers has 0 entries", "1..=4"],
        )
        .not_created(&run),
        refused(
            "G12",
            search_args(
                &data,
                &run,
                &[
                    "--budget",
                    "2",
                    "--seed-genomes",
                    &s(&write(d, "seeds_list.json", format!("[{GOOD_GENOME}, 7]"))),
                ],
            ),
            &["seeds_list.json", "genome 2"],
        )
        .not_created(&run),
    ];
    run_table(cases);
}

/// The outcome of a library call as a table row.
struct LibCase {
    id: &'static str,
    result: Result<(), Error>,
    expected: Vec<String>,
}

fn lib_case<T>(id: &'static str, result: Result<T, Error>, expected: &[&str]) -> LibCase {
    LibCase {
        id,
        result: result.map(drop),
        expected: facts(expected),
    }
}

/// Fails once, listing every library case that was not a clear bad-input error.
fn run_lib_table(cases: Vec<LibCase>) {
    let mut failures = Vec::new();
    for case in cases {
        let problems: Vec<String> = match &case.result {
            Ok(()) => vec!["accepted, expected a bad-input error".to_string()],
            Err(error) => {
                let message = error.to_string();
                let mut p = Vec::new();
                if !matches!(error, Error::Input(_)) || error.exit_code() != 2 {
                    p.push(format!("not Error::Input (exit {})", error.exit_code()));
                }
                if message.contains('\n') {
                    p.push("message spans several lines".to_string());
                }
                if message.chars().count() > MAX_MESSAGE_CHARS {
                    p.push(format!("message of {} characters", message.chars().count()));
                }
                for fact in &case.expected {
                    if !message.contains(fact.as_str()) {
                        p.push(format!("message lacks {fact:?}"));
                    }
                }
                if !p.is_empty() {
                    p.push(format!("message: {message}"));
                }
                p
            }
        };
        if !problems.is_empty() {
            failures.push(format!("{}: {}", case.id, problems.join("; ")));
        }
    }
    assert!(
        failures.is_empty(),
        "{} case(s) failed:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

/// Parses and checks a cell genome as a loader would: JSON, basic limits, the space.
fn load_cell_genome(text: &str) -> Result<(), Error> {
    let genome = CellGenome::<ConvOp>::from_json(text, "cells.json")?;
    genome.validate_basic()?;
    ImageCellSpace::default().validate(&genome)
}

/// K01–K07: image cell genomes (library: `CellGenome::from_json`,
/// `validate_basic` and the default image cell space's `validate`).
#[test]
fn cell_genomes() {
    load_cell_genome(GOOD_CELL_GENOME).expect("the reference cell genome is valid");
    let edit = |from: &str, to: &str| {
        assert!(GOOD_CELL_GENOME.contains(from), "{from}");
        GOOD_CELL_GENOME.replacen(from, to, 1)
    };
    let cases = vec![
        lib_case(
            "K01",
            load_cell_genome(&edit(
                r#"{"inputs":[0,1],"ops""#,
                r#"{"inputs":[0,3],"ops""#,
            )),
            &[
                "normal.blocks[0].inputs[1] is 3",
                "0..=1",
                "block 1, which comes after block 0",
            ],
        ),
        lib_case(
            "K02",
            load_cell_genome(&edit(r#""ops":"conv","#, r#""ops":"conv","colour":1,"#)),
            &["cells.json:1:", "unknown field `colour`"],
        ),
        lib_case(
            "K03",
            load_cell_genome(&edit("\"conv3x3\"", "\"conv7x7\"")),
            &["cells.json:2:", "unknown variant `conv7x7`"],
        ),
        lib_case(
            "K04",
            load_cell_genome(&edit(r#""ops":"conv""#, r#""ops":"dense""#)),
            &["cells.json", "ops is \"dense\"", "\"conv\""],
        ),
        lib_case(
            "K05",
            load_cell_genome(&edit(r#""channels":8"#, r#""channels":0"#)),
            &["skeleton.channels is 0", "1..="],
        ),
        lib_case(
            "K06",
            load_cell_genome(&edit(r#""learning_rate":0.001"#, r#""learning_rate":1e9"#)),
            &["training.learning_rate is 1000000000", "(0, 10]"],
        ),
        lib_case(
            "K07",
            load_cell_genome(&edit(
                r#"{"inputs":[0,3],"ops":["identity","avg_pool3x3"]}]},
 "reduction""#,
                r#"{"inputs":[0,3],"ops":["identity","avg_pool3x3"]},{"inputs":[0,1],"ops":["identity","identity"]}]},
 "reduction""#,
            )),
            &["normal.blocks has 4 entries", "3..=3"],
        ),
    ];
    run_lib_table(cases);
}

// ---------------------------------------------------------------- image datasets

fn gray_png(path: &Path, height: u32, width: u32) {
    if let Some(parent) = path.parent() {
        std::fs::create_dir_all(parent).expect("class folder");
    }
    image::GrayImage::from_pixel(width, height, image::Luma([90u8]))
        .save(path)
        .expect("write PNG");
}

fn rgb_png(path: &Path, height: u32, width: u32) {
    image::RgbImage::from_pixel(width, height, image::Rgb([1u8, 2, 3]))
        .save(path)
        .expect("write PNG");
}

/// An IDX file (LeCun, Cortes & Burges' MNIST layout): big-endian magic, dimensions, bytes.
fn idx_bytes(magic: u32, dims: &[u32], payload: usize) -> Vec<u8> {
    let mut bytes = magic.to_be_bytes().to_vec();
    for d in dims {
        bytes.extend_from_slice(&d.to_be_bytes());
    }
    bytes.extend((0..payload).map(|i| (i % 251) as u8));
    bytes
}

/// I01–I12: image folders, IDX files and pixel CSVs (library loaders).
#[test]
fn image_datasets() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let options = ImageFolderOptions::default();

    let corrupt = d.join("corrupt");
    gray_png(&corrupt.join("cat/a.png"), 4, 4);
    write(&corrupt, "cat/b.png", b"\x89PNG\r\n\x1a\nnot really a png");
    let sizes = d.join("sizes");
    gray_png(&sizes.join("cat/a.png"), 4, 4);
    gray_png(&sizes.join("dog/b.png"), 5, 4);
    let channels = d.join("channels");
    gray_png(&channels.join("cat/a.png"), 4, 4);
    std::fs::create_dir_all(channels.join("dog")).expect("folder");
    rgb_png(&channels.join("dog/b.png"), 4, 4);
    let empty_class = d.join("empty_class");
    gray_png(&empty_class.join("cat/a.png"), 4, 4);
    write(&empty_class, "dog/readme.txt", "no images here");
    let no_classes = d.join("no_classes");
    gray_png(&no_classes.join("a.png"), 4, 4);

    let labels = write(d, "labels.idx", idx_bytes(IDX_LABELS_MAGIC, &[3], 3));
    let images = |name: &str, bytes: Vec<u8>| write(d, name, bytes);
    let good_images = images("images.idx", idx_bytes(IDX_IMAGES_MAGIC, &[3, 2, 2], 12));
    let wrong_magic = images("magic.idx", idx_bytes(0x0000_0804, &[3, 2, 2], 12));
    let truncated = images("truncated.idx", idx_bytes(IDX_IMAGES_MAGIC, &[3, 2, 2], 7));
    let extra = images("extra.idx", idx_bytes(IDX_IMAGES_MAGIC, &[3, 2, 2], 13));
    let short = images("short.idx", vec![0, 0, 8]);
    let four_images = images("four.idx", idx_bytes(IDX_IMAGES_MAGIC, &[4, 2, 2], 16));
    let gzipped = images("gz.idx", vec![0x1f, 0x8b, 8, 0, 0, 0, 0, 0, 0, 3, 1, 2]);
    let huge = images(
        "huge.idx",
        idx_bytes(IDX_IMAGES_MAGIC, &[u32::MAX, u32::MAX, 2], 4),
    );
    let pixel_csv = write(d, "pixels.csv", "p0,p1,p2,label\n1,2,3,a\n4,5,6,b\n");
    let pixel_text = write(
        d,
        "pixel_text.csv",
        "p0,p1,p2,p3,label\n1,2,3,4,a\n4,x,6,7,b\n",
    );
    let shape = ImageShape::parse("2x2x1").expect("shape text");

    assert!(
        read_idx(&good_images, &labels).is_ok(),
        "the reference IDX pair loads"
    );
    let cases = vec![
        lib_case(
            "I01",
            read_image_folder(&corrupt, &options),
            &["b.png", "cannot read the file as Png"],
        ),
        lib_case(
            "I02",
            read_image_folder(&sizes, &options),
            &["b.png", "is 5x4", "a.png", "is 4x4"],
        ),
        lib_case(
            "I03",
            read_image_folder(&channels, &options),
            &["b.png", "3 channel(s)", "a.png"],
        ),
        lib_case(
            "I04",
            read_image_folder(&empty_class, &options),
            &["'dog'", "holds no PNG or JPEG files"],
        ),
        lib_case(
            "I05",
            read_image_folder(&no_classes, &options),
            &["no_classes", "no class folders"],
        ),
        lib_case(
            "I06",
            read_idx(&wrong_magic, &labels),
            &[
                "magic.idx",
                "magic number 0x00000804",
                "expected 0x00000803",
            ],
        ),
        lib_case(
            "I07",
            read_idx(&truncated, &labels),
            &["truncated.idx", "truncated", "need 12 bytes", "found 7"],
        ),
        lib_case(
            "I08",
            read_idx(&extra, &labels),
            &["extra.idx", "extra bytes", "found 13"],
        ),
        lib_case(
            "I09",
            read_idx(&short, &labels),
            &["short.idx", "3 bytes long", "header"],
        ),
        lib_case(
            "I10",
            read_idx(&four_images, &labels),
            &["four.idx", "4 images", "labels.idx", "3 labels"],
        ),
        lib_case(
            "I11",
            read_idx(&gzipped, &labels),
            &["gz.idx", "gzip-compressed"],
        ),
        lib_case(
            "I12",
            read_idx(&labels, &good_images),
            &["labels.idx", "swapped"],
        ),
        lib_case(
            "I13",
            read_idx(&huge, &labels),
            &["huge.idx", "more than 2147483648 bytes"],
        ),
        lib_case(
            "I14",
            read_pixel_csv(&pixel_csv, shape, &CsvOptions::default()),
            &["pixels.csv", "3 pixel columns", "2x2x1 needs 4"],
        ),
        lib_case(
            "I15",
            read_pixel_csv(&pixel_text, shape, &CsvOptions::default()),
            &["pixel_text.csv", "line 3", "column 'p1'", "'x'"],
        ),
        lib_case(
            "I16",
            ImageShape::parse("28x28"),
            &["'28x28'", "HEIGHTxWIDTHxCHANNELS"],
        ),
    ];
    run_lib_table(cases);
}

// ---------------------------------------------------------------- options

/// O01–O12: command-line options of `gemmule search` that cannot work.
#[test]
fn search_options() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let data = write(d, "good.csv", good_rows());
    let run = d.join("run");
    let case = |id: &'static str, extra: &[&str], expected: &[&str]| {
        refused(id, search_args(&data, &run, extra), expected).not_created(&run)
    };
    let parse_error = |id: &'static str, extra: &[&str], expected: &[&str]| CliCase {
        id,
        args: search_args(&data, &run, extra),
        expect: Expect::ParseError(facts(expected)),
        not_created: vec![run.clone()],
        unchanged: None,
    };
    let cases = vec![
        case("O01", &["--budget", "0"], &["--budget", "at least 1"]),
        case("O02", &["--jobs", "0"], &["--jobs", "at least 1"]),
        case(
            "O03",
            &["--split=-0.1,0.6,0.5"],
            &["train fraction is -0.1", "between 0 and 1"],
        ),
        case(
            "O04",
            &["--split", "0.5,0.3,0.3"],
            &["sum to 1.1", "not 1", "--split"],
        ),
        case(
            "O05",
            &["--budget", "4", "--population", "10"],
            &["--population 10", "--budget 4"],
        ),
        case(
            "O06",
            &["--budget", "8", "--population", "4", "--sample-size", "5"],
            &["--sample-size 5", "--population 4"],
        ),
        case(
            "O07",
            &["--budget", "8", "--sample-size", "0"],
            &["--sample-size", "at least 1"],
        ),
        case(
            "O08",
            &["--min-layers", "3", "--max-layers", "2"],
            &["min_layers 3", "max_layers 2"],
        ),
        case("O09", &["--time-limit", "0"], &["--time-limit", "positive"]),
        case(
            "O10",
            &["--split", "0.7,0.15,abc"],
            &["--split", "`abc` is not a number"],
        ),
        parse_error("O11", &["--budget", "-3"], &["-3"]),
        parse_error("O12", &["--delimiter", ";;"], &["--delimiter"]),
        case(
            "O13",
            &["--budget", "4", "--strategy", "random", "--population", "3"],
            &["--population", "evolution"],
        ),
        parse_error("O14", &["--folds", "1"], &["--folds", "not a fold count"]),
        case(
            "O15",
            &["--folds", "9"],
            &["--folds 9", "smallest class", "--folds"],
        ),
    ];
    run_table(cases);
}

// ---------------------------------------------------------------- data columns and test sets

/// `good_rows()` with a first column `part` holding `parts[i % parts.len()]`
/// for data row i, and `replace` (row index, text) put in place of one of them.
fn parted_rows(parts: &[&str], replace: Option<(usize, &str)>) -> String {
    let mut lines = good_rows().lines().map(str::to_string).collect::<Vec<_>>();
    lines[0] = format!("part,{}", lines[0]);
    for (i, line) in lines.iter_mut().skip(1).enumerate() {
        let part = match replace {
            Some((row, text)) if row == i => text,
            _ => parts[i % parts.len()],
        };
        *line = format!("{part},{line}");
    }
    lines.join("\n") + "\n"
}

/// D01–D12: `--id`, `--ignore`, `--split-column` and `--test-data` that cannot work.
#[test]
fn data_columns_and_test_sets() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let data = write(d, "good.csv", good_rows());
    let run = d.join("run");
    let case = |id: &'static str, data: &Path, extra: &[&str], expected: &[&str]| {
        refused(id, search_args(data, &run, extra), expected).not_created(&run)
    };
    let cycle = ["train", "train", "validation", "test"];
    let parted = write(d, "parted.csv", parted_rows(&cycle, None));
    let other_value = write(d, "other.csv", parted_rows(&cycle, Some((3, "Train"))));
    let no_test = write(d, "notest.csv", parted_rows(&["train", "validation"], None));
    let other_columns = write(
        d,
        "z.csv",
        good_rows().replacen("x,y,label", "x,z,label", 1),
    );
    let unknown_class = write(d, "d.csv", "x,y,label\n1,2,d\n");
    let test = write(d, "test.csv", good_rows());
    let cases = vec![
        case(
            "D01",
            &data,
            &["--id", "label"],
            &["--id 'label' names the label column"],
        ),
        case(
            "D02",
            &data,
            &["--id", "nope"],
            &["no column 'nope' (--id)", "the columns are: x, y, label"],
        ),
        case(
            "D03",
            &data,
            &["--ignore", "x,nope"],
            &["no column 'nope' (--ignore)", "x, y, label"],
        ),
        case(
            "D04",
            &data,
            &["--ignore", "x,y"],
            &["no feature column is left", "'label' (x, y)"],
        ),
        case(
            "D05",
            &data,
            &["--id", "x", "--ignore", "x"],
            &["column 'x' is given to both --id and --ignore"],
        ),
        case(
            "D06",
            &other_value,
            &["--split-column", "part"],
            &["split column 'part'", "line 5, column 'part': 'Train'"],
        ),
        case(
            "D07",
            &no_test,
            &["--split-column", "part"],
            &["split column 'part'", "assigns no rows to test"],
        ),
        case(
            "D08",
            &data,
            &["--split-column", "label"],
            &["--split-column 'label' names the label column"],
        ),
        case(
            "D09",
            &data,
            &["--test-data", &s(&other_columns)],
            &["z.csv", "lacks y", "extra column(s) z"],
        ),
        case(
            "D10",
            &parted,
            &["--split-column", "part", "--test-data", &s(&test)],
            &["--test-data and --split-column"],
        ),
        case(
            "D11",
            &data,
            &["--test-data", &s(&unknown_class)],
            &[
                "d.csv",
                "class the data does not have",
                "line 2, column 'label': 'd'",
            ],
        ),
        case(
            "D12",
            &parted,
            &["--split-column", "part", "--split", "0.5,0.25,0.25"],
            &["--split-column part", "--split"],
        ),
    ];
    run_table(cases);
}

/// A refused search prints its one error line and nothing else on stderr:
/// not the "searching N members …" announcement, and no data warnings, which
/// belong to a run that never starts (common practice, no source).
#[test]
fn refused_searches_print_only_the_error_line() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let data = write(d, "good.csv", good_rows());
    // Missing feature cells: a warning with --impute, a refusal without.
    let mut rows = good_rows().lines().map(str::to_string).collect::<Vec<_>>();
    for row in &mut rows[1..10] {
        let first = row.find(',').expect("a comma");
        row.replace_range(..first, "");
    }
    let holes = write(d, "holes.csv", rows.join("\n") + "\n");
    let taken = d.join("taken");
    let made = gemmule(&search_args(&data, &taken, &["--budget", "1"]));
    assert_eq!(made.status.code(), Some(0), "{made:?}");
    let run = d.join("run");
    let cases: Vec<(PathBuf, PathBuf, Vec<&str>)> = vec![
        (data.clone(), run.clone(), vec!["--budget", "0"]),
        (
            data.clone(),
            run.clone(),
            vec!["--budget", "4", "--population", "10"],
        ),
        (
            data.clone(),
            run.clone(),
            vec!["--budget", "8", "--population", "4", "--sample-size", "5"],
        ),
        (
            data.clone(),
            run.clone(),
            vec!["--budget", "8", "--sample-size", "0"],
        ),
        (data.clone(), run.clone(), vec!["--time-limit", "0"]),
        (data.clone(), run.clone(), vec!["--epochs", "0"]),
        (data.clone(), run.clone(), vec!["--size-penalty=-1"]),
        (data.clone(), run.clone(), vec!["--augment"]),
        (holes.clone(), run.clone(), vec!["--budget", "4"]),
        (
            holes.clone(),
            run.clone(),
            vec!["--budget", "4", "--population", "10", "--impute"],
        ),
        (data.clone(), taken.clone(), vec!["--budget", "1"]),
    ];
    let mut failures = Vec::new();
    for (data, out, extra) in cases {
        let mut args = search_args(&data, &out, &[]);
        for pair in extra.chunks(2) {
            // An option search_args already sets gets the case's value.
            match args.iter().position(|a| a == pair[0]) {
                Some(at) if pair.len() == 2 => args[at + 1] = pair[1].to_string(),
                _ => args.extend(pair.iter().map(|a| a.to_string())),
            }
        }
        let output = gemmule(&args);
        let stderr = String::from_utf8_lossy(&output.stderr).to_string();
        let lines: Vec<&str> = stderr.lines().filter(|l| !l.trim().is_empty()).collect();
        if output.status.code() != Some(2)
            || lines.len() != 1
            || !lines[0].starts_with("gemmule: error:")
        {
            failures.push(format!(
                "{} (exit {:?}):\n    {}",
                extra.join(" "),
                output.status.code(),
                lines.join("\n    ")
            ));
        }
        assert!(
            !run.exists(),
            "{} created {}",
            extra.join(" "),
            run.display()
        );
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    // A search that runs still announces itself, then warns.
    let output = gemmule(&search_args(&holes, &run, &["--impute", "--budget", "1"]));
    assert_eq!(output.status.code(), Some(0), "{output:?}");
    let stderr = String::from_utf8_lossy(&output.stderr);
    let lines: Vec<&str> = stderr.lines().collect();
    assert!(lines.len() >= 2, "{stderr}");
    assert!(lines[0].starts_with("searching "), "{stderr}");
    assert!(
        lines[1].starts_with("gemmule: warning: imputed"),
        "{stderr}"
    );
}

// ---------------------------------------------------------------- run directories

/// Replaces line `index` (0-based) of the journal with `line`.
fn edit_journal_line(run: &Path, index: usize, edit: impl Fn(&str) -> String) {
    let path = run.join("journal.jsonl");
    let text = std::fs::read_to_string(&path).expect("journal");
    let lines: Vec<String> = text
        .lines()
        .enumerate()
        .map(|(i, l)| if i == index { edit(l) } else { l.to_string() })
        .collect();
    std::fs::write(&path, format!("{}\n", lines.join("\n"))).expect("write journal");
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("copy target");
    for entry in std::fs::read_dir(from).expect("read run").flatten() {
        let target = to.join(entry.file_name());
        if entry.path().is_dir() {
            copy_dir(&entry.path(), &target);
        } else if entry.file_name() != "lock" {
            std::fs::copy(entry.path(), &target).expect("copy file");
        }
    }
}

/// `text` with the number after the first `key` replaced by `value`.
fn with_format(text: &str, key: &str, value: u32) -> String {
    let start = text.find(key).expect("format field") + key.len();
    let digits = text[start..]
        .find(|c: char| !c.is_ascii_digit())
        .unwrap_or(text.len() - start);
    format!("{}{value}{}", &text[..start], &text[start + digits..])
}

/// The weights file of a model folder (its name carries a content hash).
fn weights_file(folder: &Path) -> PathBuf {
    std::fs::read_dir(folder)
        .expect("model folder")
        .flatten()
        .map(|e| e.path())
        .find(|p| p.extension().is_some_and(|x| x == "safetensors"))
        .expect("a .safetensors file in the model folder")
}

/// R01–R12 and C27: damaged or mismatched run directories and model folders,
/// and prediction data a model cannot encode.
#[test]
fn run_directories() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let data = write(d, "good.csv", good_rows());
    let base = d.join("base");
    let made = gemmule(&search_args(
        &data,
        &base,
        &["--budget", "2", "--jobs", "1"],
    ));
    assert!(
        made.status.success(),
        "{}",
        String::from_utf8_lossy(&made.stderr)
    );
    let genome = write(d, "genome.json", GOOD_GENOME);
    let model = d.join("model");
    let trained = gemmule(&train_args(&data, &genome, &model));
    assert!(
        trained.status.success(),
        "{}",
        String::from_utf8_lossy(&trained.stderr)
    );
    let variant = |name: &str| {
        let run = d.join(name);
        copy_dir(&base, &run);
        run
    };
    let model_variant = |name: &str| {
        let folder = d.join(name);
        copy_dir(&model, &folder);
        folder
    };
    let resume = |run: &Path| vec!["resume".to_string(), s(run), "--quiet".to_string()];
    let show = |run: &Path| vec!["show".to_string(), s(run)];

    let newer = variant("newer");
    edit_journal_line(&newer, 0, |l| {
        with_format(l, "\"format\":", 99).replacen(
            "\"tool_version\":\"",
            "\"tool_version\":\"9.",
            1,
        )
    });
    let changed_data_run = variant("changed_data");
    let moved = write(d, "changed.csv", format!("{}1.5,2,a\n", good_rows()));
    let fingerprint = variant("fingerprint");
    edit_journal_line(&fingerprint, 0, |l| {
        let at = l.find("\"fingerprint\":\"").expect("data fingerprint") + 15;
        format!("{}0000{}", &l[..at], &l[at + 4..])
    });
    let damaged = variant("damaged");
    edit_journal_line(&damaged, 1, |_| "{\"kind\":\"evaluation\",".to_string());
    let not_journal = variant("not_journal");
    write(&not_journal, "journal.jsonl", "hello, world\n");
    let empty_journal = variant("empty_journal");
    write(&empty_journal, "journal.jsonl", "");
    let no_weights = model_variant("no_weights");
    std::fs::remove_file(weights_file(&no_weights)).expect("remove weights");
    let bad_weights = model_variant("bad_weights");
    std::fs::write(
        weights_file(&bad_weights),
        b"\xff\xff\xff\xff\xff\xff\xff\x7fgarbage",
    )
    .expect("damage weights");
    let newer_model = model_variant("newer_model");
    let description = std::fs::read_to_string(newer_model.join("model.json")).expect("model.json");
    write(
        &newer_model,
        "model.json",
        with_format(&description, "\"format\": ", 99),
    );
    // A second run on the same data and split, and the first one finalized:
    // the test ledger (this test's own, see private_dirs) holds its opening.
    let second = variant("second");
    let opened = variant("opened");
    let first_opening = gemmule(&["finalize".to_string(), s(&opened)]);
    assert!(
        first_opening.status.success(),
        "{}",
        String::from_utf8_lossy(&first_opening.stderr)
    );
    let predict = |folder: &Path| {
        vec![
            "predict".to_string(),
            "--model".to_string(),
            s(folder),
            "--data".to_string(),
            s(&data),
        ]
    };

    let cases = vec![
        refused(
            "R01",
            resume(&newer),
            &["journal.jsonl", "newer gemmule", "format 99", "upgrade"],
        )
        .unchanged(&newer),
        refused("R02", show(&newer), &["journal.jsonl", "newer gemmule"]).unchanged(&newer),
        refused(
            "R03",
            {
                let mut a = resume(&changed_data_run);
                a.extend(["--data".to_string(), s(&moved)]);
                a
            },
            &["changed.csv", "changed since the run started"],
        )
        .unchanged(&changed_data_run),
        refused(
            "R04",
            resume(&fingerprint),
            &["good.csv", "changed since the run started"],
        )
        .unchanged(&fingerprint),
        refused(
            "R05",
            resume(&damaged),
            &["journal.jsonl", "line 2", "damaged"],
        )
        .unchanged(&damaged),
        refused("R06", show(&not_journal), &["journal.jsonl", "line 1"]).unchanged(&not_journal),
        refused("R07", resume(&empty_journal), &["journal.jsonl", "empty"])
            .unchanged(&empty_journal),
        refused(
            "R08",
            search_args(&data, &base, &["--budget", "2"]),
            &["base", "already holds a run"],
        )
        .unchanged(&base),
        refused(
            "R09",
            predict(&no_weights),
            &["no_weights", ".safetensors", "missing"],
        )
        .unchanged(&no_weights),
        refused(
            "R10",
            predict(&bad_weights),
            &["bad_weights", ".safetensors", "changed or damaged"],
        )
        .unchanged(&bad_weights),
        refused(
            "R11",
            predict(&newer_model),
            &["model.json", "newer gemmule", "upgrade"],
        )
        .unchanged(&newer_model),
        refused("R12", resume(&d.join("nowhere")), &["nowhere"]).not_created(&d.join("nowhere")),
        refused(
            "R13",
            vec!["finalize".to_string(), s(&second)],
            &["already opened", "opened", "--reopen"],
        )
        .unchanged(&second),
        // Found by the csv_loader fuzz target (a value far outside the training
        // range became an infinite feature).
        refused(
            "C27",
            vec![
                "predict".to_string(),
                "--model".to_string(),
                s(&model),
                "--data".to_string(),
                s(&write(d, "outlier.csv", "x,y,label\n1,2,a\n1e300,1,b\n")),
            ],
            &[
                "outlier.csv",
                "line 3",
                "column 'x'",
                "'1e300'",
                "too far from the training values",
            ],
        )
        .unchanged(&model),
    ];
    run_table(cases);
}

// ---------------------------------------------------------------- documentation

/// Every case id used above appears in docs/bad-inputs.md, and no id there is unknown.
#[test]
fn every_case_is_documented() {
    let source = include_str!("bad_inputs.rs");
    let doc_path = Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/bad-inputs.md");
    let doc = std::fs::read_to_string(&doc_path).expect("docs/bad-inputs.md exists");
    let ids = |text: &str, open: &str| -> std::collections::BTreeSet<String> {
        let mut found = std::collections::BTreeSet::new();
        for (at, _) in text.match_indices(open) {
            let rest = &text[at + open.len()..];
            let id: String = rest.chars().take(3).collect();
            let mut chars = id.chars();
            let letter = chars.next().unwrap_or(' ');
            if "CGKIORD".contains(letter) && chars.all(|c| c.is_ascii_digit()) && id.len() == 3 {
                found.insert(id);
            }
        }
        found
    };
    let in_tests = ids(source, "\"");
    let in_doc = ids(&doc, "| ");
    assert!(in_tests.len() >= 35, "only {} cases", in_tests.len());
    let undocumented: Vec<&String> = in_tests.difference(&in_doc).collect();
    let unknown: Vec<&String> = in_doc.difference(&in_tests).collect();
    assert!(
        undocumented.is_empty() && unknown.is_empty(),
        "not in docs/bad-inputs.md: {undocumented:?}; in the doc but not tested: {unknown:?}"
    );
}

/// "R14": `finalize` whose test ledger cannot be written (`GEMMULE_LEDGER_DIR`
/// names a regular file): an I/O failure, exit 1, one error line naming the
/// path and the variable, nothing trained or written, the run unchanged.
#[test]
fn an_unwritable_test_ledger_is_an_io_failure_that_changes_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let data = write(dir.path(), "good.csv", good_rows());
    let run = dir.path().join("run");
    let made = gemmule(&search_args(&data, &run, &["--budget", "2", "--jobs", "1"]));
    assert!(
        made.status.success(),
        "{}",
        String::from_utf8_lossy(&made.stderr)
    );
    let blocker = write(
        dir.path(),
        "not-a-folder",
        "a file where the ledger folder should be",
    );
    let before = snapshot(&run);
    let mut command = Command::new(env!("CARGO_BIN_EXE_gemmule"));
    private_dirs::isolate(&mut command);
    let output = command
        .args(["finalize", &s(&run)])
        .env("GEMMULE_LEDGER_DIR", &blocker)
        .env("RAYON_NUM_THREADS", "1")
        .output()
        .expect("the gemmule binary runs");
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(1), "{stderr}");
    let errors: Vec<&str> = stderr
        .lines()
        .filter(|l| l.starts_with("gemmule: error:"))
        .collect();
    assert_eq!(errors.len(), 1, "{stderr}");
    assert!(
        errors[0].contains("not-a-folder") && errors[0].contains("GEMMULE_LEDGER_DIR"),
        "{stderr}"
    );
    assert!(!stderr.contains("panicked"), "{stderr}");
    assert_eq!(snapshot(&run), before, "the run is unchanged");
    assert!(!run.join("final").exists());
}
