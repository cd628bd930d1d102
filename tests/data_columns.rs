//! Data columns and fixed test sets through the binary and the library:
//! `--id` and `--ignore` (kept out of the features, ids carried into
//! `predict`), the warning for a text column of nearly distinct values,
//! `--test-data` and `--split-column` (recorded in the journal header and
//! checked again by `resume` and `finalize`), and the unchanged header of a
//! run that uses none of them.
//!
//! Data: Fisher's iris as shipped in scikit-learn 1.9.1 (copy and provenance
//! in tests/data/README.md); id, note and split columns are added to copies
//! written by each test. Expected values are this project's own contract
//! (common practice, no outside source).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use gemmule::data::{prepare, prepare_with, CsvOptions, SplitFractions, TableRoles};
use serde_json::Value;

mod private_dirs;

const GENOME: &str = r#"{"layers":[{"width":8,"activation":"relu"}],"training":{"learning_rate":0.01,"batch_size":16}}"#;

fn run(args: &[&str]) -> Output {
    let mut command = Command::new(env!("CARGO_BIN_EXE_gemmule"));
    command.env("RAYON_NUM_THREADS", "1");
    private_dirs::isolate(&mut command);
    command.args(args).output().expect("the binary runs")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).to_string()
}

fn ok(o: &Output) {
    assert_eq!(o.status.code(), Some(0), "{}", stderr(o));
}

fn p(path: &Path) -> &str {
    path.to_str().expect("UTF-8 path")
}

/// The lines of tests/data/iris.csv (header first).
fn iris_lines() -> Vec<String> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/iris.csv");
    std::fs::read_to_string(path)
        .expect("tests/data/iris.csv")
        .lines()
        .map(str::to_string)
        .collect()
}

fn write(dir: &Path, name: &str, lines: &[String]) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, lines.join("\n") + "\n").expect("write");
    path
}

/// Iris with a first text column `id` = `r<line>`.
fn with_ids(lines: &[String]) -> Vec<String> {
    lines
        .iter()
        .enumerate()
        .map(|(i, line)| match i {
            0 => format!("id,{line}"),
            _ => format!("r{},{line}", i + 1),
        })
        .collect()
}

fn model_json(dir: &Path) -> Value {
    let text = std::fs::read_to_string(dir.join("model.json")).expect("model.json");
    serde_json::from_str(&text).expect("JSON")
}

fn journal_header(run: &Path) -> Value {
    let text = std::fs::read_to_string(run.join("journal.jsonl")).expect("journal");
    serde_json::from_str(text.lines().next().expect("a header")).expect("JSON header")
}

fn train(data: &Path, out: &Path, genome: &Path, extra: &[&str]) -> Output {
    let mut args = vec![
        "train",
        "--data",
        p(data),
        "--genome",
        p(genome),
        "--out",
        p(out),
        "--epochs",
        "2",
    ];
    args.extend_from_slice(extra);
    run(&args)
}

fn search(data: &Path, out: &Path, extra: &[&str]) -> Output {
    let mut args = vec![
        "search",
        "--data",
        p(data),
        "--out",
        p(out),
        "--budget",
        "2",
        "--epochs",
        "1",
        "--max-width",
        "8",
        "--jobs",
        "1",
        "--quiet",
    ];
    args.extend_from_slice(extra);
    run(&args)
}

#[test]
fn an_id_column_is_no_feature_and_leads_every_prediction_row() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let iris = write(d, "iris.csv", &iris_lines());
    let iris_id = write(d, "iris_id.csv", &with_ids(&iris_lines()));
    let genome = d.join("genome.json");
    std::fs::write(&genome, GENOME).expect("genome");

    // The library: the same number of features with and without the id column.
    let fractions = SplitFractions::default();
    let plain = prepare(&iris, &CsvOptions::default(), &fractions, 0).expect("iris");
    let roles = TableRoles {
        ids: vec!["id".into()],
        ..TableRoles::default()
    };
    let tagged = prepare_with(&iris_id, &CsvOptions::default(), &roles, &fractions, 0)
        .expect("iris with ids");
    assert_eq!(tagged.info.n_features, plain.info.n_features);
    assert_eq!(tagged.info.n_features, 4);

    let model = d.join("model");
    let trained = train(&iris_id, &model, &genome, &["--id", "id"]);
    ok(&trained);
    assert!(!stderr(&trained).contains("looks like an identifier"));
    let description = model_json(&model);
    assert_eq!(description["n_inputs"], 4);
    assert_eq!(
        description["preprocessor"]["id_columns"],
        serde_json::json!(["id"])
    );
    assert!(description["preprocessor"].get("ignored_columns").is_none());

    // predict needs no flag: the model remembers its id column.
    let out = d.join("predictions.csv");
    ok(&run(&[
        "predict",
        "--model",
        p(&model),
        "--data",
        p(&iris_id),
        "--out",
        p(&out),
    ]));
    let predictions = std::fs::read_to_string(&out).expect("predictions");
    let mut lines = predictions.lines();
    assert_eq!(
        lines.next(),
        Some("id,row,predicted,p_setosa,p_versicolor,p_virginica")
    );
    for (row, line) in lines.enumerate() {
        assert!(
            line.starts_with(&format!("r{},{},", row + 2, row + 1)),
            "row {row}: {line}"
        );
    }

    // A file without the id column still predicts, with empty id cells and a warning.
    let without = run(&["predict", "--model", p(&model), "--data", p(&iris)]);
    ok(&without);
    assert!(stderr(&without).contains("identifier column 'id'"));
    let text = String::from_utf8_lossy(&without.stdout).to_string();
    assert!(text.lines().nth(1).is_some_and(|l| l.starts_with(",1,")));

    // A model trained without --id keeps the keys out of model.json.
    let plain_model = d.join("plain-model");
    ok(&train(&iris, &plain_model, &genome, &[]));
    let plain_text = std::fs::read_to_string(plain_model.join("model.json")).expect("json");
    assert!(!plain_text.contains("id_columns") && !plain_text.contains("ignored_columns"));
}

#[test]
fn ignored_columns_are_left_out_and_remembered() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let noted: Vec<String> = iris_lines()
        .iter()
        .enumerate()
        .map(|(i, line)| match i {
            0 => format!("{line},note,batch"),
            _ => format!("{line},note {i},b{}", i % 4),
        })
        .collect();
    let data = write(d, "noted.csv", &noted);
    let genome = d.join("genome.json");
    std::fs::write(&genome, GENOME).expect("genome");
    let model = d.join("model");
    let trained = train(
        &data,
        &model,
        &genome,
        &["--label", "label", "--ignore", "note", "--ignore", "batch"],
    );
    ok(&trained);
    assert!(!stderr(&trained).contains("looks like an identifier"));
    let description = model_json(&model);
    assert_eq!(description["n_inputs"], 4);
    assert_eq!(
        description["preprocessor"]["ignored_columns"],
        serde_json::json!(["note", "batch"])
    );
    // The shipped iris (no note, no batch) predicts with this model.
    let iris = write(d, "iris.csv", &iris_lines());
    ok(&run(&["predict", "--model", p(&model), "--data", p(&iris)]));
}

#[test]
fn a_text_column_of_distinct_values_is_named_in_a_warning() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let data = write(d, "iris_id.csv", &with_ids(&iris_lines()));
    let genome = d.join("genome.json");
    std::fs::write(&genome, GENOME).expect("genome");
    let model = d.join("model");
    let trained = train(&data, &model, &genome, &[]);
    ok(&trained);
    let warnings = stderr(&trained);
    assert!(
        warnings.contains("gemmule: warning: column 'id' holds 102 distinct texts in 102")
            && warnings.contains("--id id")
            && warnings.contains("--ignore id"),
        "{warnings}"
    );
    // One input per training id (102 = 70% of 150 rows) besides the 4 measurements.
    assert_eq!(model_json(&model)["n_inputs"], 106);
}

/// Iris with ids split into a data file (4 of 5 rows) and a test file (every fifth).
fn data_and_test_files(d: &Path) -> (PathBuf, PathBuf) {
    let lines = with_ids(&iris_lines());
    let (header, rows) = lines.split_first().expect("header");
    let (mut data, mut test) = (vec![header.clone()], vec![header.clone()]);
    for (i, row) in rows.iter().enumerate() {
        if i % 5 == 0 { &mut test } else { &mut data }.push(row.clone());
    }
    (write(d, "data.csv", &data), write(d, "test.csv", &test))
}

#[test]
fn a_test_file_is_the_test_part_and_resume_and_finalize_check_it() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let (data, test) = data_and_test_files(d);
    let run_dir = d.join("run");
    ok(&search(
        &data,
        &run_dir,
        &["--test-data", p(&test), "--id", "id", "--split", "0.8,0.2"],
    ));
    let header = journal_header(&run_dir);
    let block = &header["data"];
    assert_eq!(block["rows"]["test"], 30);
    // 40 rows per class of data.csv: validation round(40 · 0.2) = 8 each.
    assert_eq!(block["rows"]["valid"], 24);
    assert_eq!(block["rows"]["train"], 96);
    assert_eq!(block["source"]["test_data"], p(&test));
    assert_eq!(block["source"]["id_columns"], serde_json::json!(["id"]));
    let bytes = std::fs::read(&test).expect("test file");
    assert_eq!(
        block["test_fingerprint"],
        gemmule::genome::sha256_hex(&bytes)
    );
    assert!(!block["features"]
        .as_array()
        .expect("features")
        .iter()
        .any(|f| f == "id"));

    // A changed test file is refused by resume and finalize alike.
    let mut changed = bytes.clone();
    changed.extend_from_slice(b"r999,5.0,3.0,1.5,0.2,setosa\n");
    std::fs::write(&test, &changed).expect("change the test file");
    let journal_before = std::fs::read(run_dir.join("journal.jsonl")).expect("journal");
    for args in [
        vec!["resume", p(&run_dir), "--budget", "3", "--quiet"],
        vec!["finalize", p(&run_dir)],
    ] {
        let refused = run(&args);
        assert_eq!(
            refused.status.code(),
            Some(2),
            "{args:?}: {}",
            stderr(&refused)
        );
        let message = stderr(&refused);
        assert!(
            message.contains(p(&test)) && message.contains("changed since the run started"),
            "{args:?}: {message}"
        );
    }
    assert_eq!(
        std::fs::read(run_dir.join("journal.jsonl")).expect("journal"),
        journal_before
    );
    assert!(!run_dir.join("final").exists());

    // The original file finalizes, on exactly its 30 rows.
    std::fs::write(&test, &bytes).expect("restore the test file");
    let finalized = run(&["finalize", p(&run_dir)]);
    ok(&finalized);
    assert!(
        String::from_utf8_lossy(&finalized.stdout).contains("30 rows"),
        "{}",
        String::from_utf8_lossy(&finalized.stdout)
    );
}

#[test]
fn a_split_column_assigns_the_rows_of_the_journal() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let parted: Vec<String> = iris_lines()
        .iter()
        .enumerate()
        .map(|(i, line)| match i {
            0 => format!("part,{line}"),
            _ => {
                let part = ["train", "train", "train", "validation", "test"][i % 5];
                format!("{part},{line}")
            }
        })
        .collect();
    let data = write(d, "parted.csv", &parted);
    let run_dir = d.join("run");
    ok(&search(&data, &run_dir, &["--split-column", "part"]));
    let block = journal_header(&run_dir)["data"].clone();
    assert_eq!(
        block["rows"],
        serde_json::json!({"train": 90, "valid": 30, "test": 30})
    );
    assert_eq!(block["source"]["split_column"], "part");
    assert_eq!(block["features"].as_array().map(Vec::len), Some(4));
    assert!(block.get("test_fingerprint").is_none());
}

#[test]
fn a_run_without_the_new_options_keeps_its_header_bytes() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let iris = write(d, "iris.csv", &iris_lines());
    let run_dir = d.join("run");
    ok(&search(&iris, &run_dir, &[]));
    let text = std::fs::read_to_string(run_dir.join("journal.jsonl")).expect("journal");
    let line = text.lines().next().expect("header line");
    // The data block as gemmule wrote it before --id, --ignore, --test-data
    // and --split-column existed (keys sorted, none of the new ones).
    let source = format!(
        r#""source":{{"delimiter":null,"fractions":{{"test":0.15,"train":0.7,"valid":0.15}},"impute":false,"label":null,"path":"{}","split_seed":0}}"#,
        p(&iris)
    );
    assert!(line.contains(&source), "{line}");
    let header: Value = serde_json::from_str(line).expect("JSON");
    let keys: Vec<&String> = header["data"].as_object().expect("data").keys().collect();
    assert_eq!(
        keys,
        ["classes", "features", "fingerprint", "rows", "source"]
    );
}
