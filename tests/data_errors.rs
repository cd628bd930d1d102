//! Bad-input checks: each malformed file gives `Error::Input` (exit code 2)
//! with a message naming the file and the facts needed to fix it.

use std::path::PathBuf;

use gemmule::data::{prepare, read_table, CsvOptions, SplitFractions};
use gemmule::Error;
use tempfile::TempDir;

/// Writes `bytes` to `name` in a fresh temporary directory.
fn write_file(name: &str, bytes: &[u8]) -> (TempDir, PathBuf) {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join(name);
    std::fs::write(&path, bytes).expect("write test file");
    (dir, path)
}

/// Prepares `bytes` (written as `name`) with `opts` and returns the input error's message.
fn prepare_error(name: &str, bytes: &[u8], opts: &CsvOptions) -> String {
    let (_dir, path) = write_file(name, bytes);
    match prepare(&path, opts, &SplitFractions::default(), 1) {
        Ok(_) => panic!("{name}: expected an input error"),
        Err(error) => input_message(error, name),
    }
}

/// Checks the error is bad input (exit code 2) naming the file; returns its message.
fn input_message(error: Error, name: &str) -> String {
    assert_eq!(error.exit_code(), 2, "{error}");
    let message = match &error {
        Error::Input(message) => message.clone(),
        other => panic!("expected Error::Input, got {other:?}"),
    };
    assert!(
        message.contains(name),
        "message should name the file: {message}"
    );
    message
}

fn assert_mentions(message: &str, facts: &[&str]) {
    for fact in facts {
        assert!(message.contains(fact), "missing {fact:?} in: {message}");
    }
}

/// Three rows per class for classes a and b, with two numeric features.
fn rows_ab() -> String {
    (0..6)
        .map(|i| format!("{},{},{}\n", i, 10 - i, ["a", "b"][i % 2]))
        .collect()
}

#[test]
fn empty_file() {
    let message = prepare_error("empty.csv", b"", &CsvOptions::default());
    assert_mentions(&message, &["empty", "header"]);
    let message = prepare_error("blank.csv", b"\n \n", &CsvOptions::default());
    assert_mentions(&message, &["empty"]);
}

#[test]
fn header_only() {
    let message = prepare_error("header.csv", b"x,y,label\n", &CsvOptions::default());
    assert_mentions(&message, &["no data rows"]);
}

#[test]
fn ragged_row() {
    let text = format!("x,y,label\n1,2,a\n3,b\n{}", rows_ab());
    let message = prepare_error("ragged.csv", text.as_bytes(), &CsvOptions::default());
    assert_mentions(&message, &["line 3", "2 fields", "header has 3 fields"]);
}

#[test]
fn duplicate_column_names() {
    let text = format!("x,y,x\n{}", rows_ab());
    let message = prepare_error("dup.csv", text.as_bytes(), &CsvOptions::default());
    assert_mentions(&message, &["'x'", "columns 1 and 3", "twice"]);
}

#[test]
fn unknown_label_column() {
    let opts = CsvOptions {
        label: Some("target".into()),
        ..CsvOptions::default()
    };
    let text = format!("x,y,label\n{}", rows_ab());
    let message = prepare_error("nolabel.csv", text.as_bytes(), &opts);
    assert_mentions(&message, &["'target'", "x, y, label"]);
}

#[test]
fn single_class() {
    let message = prepare_error(
        "one.csv",
        b"x,label\n1,a\n2,a\n3,a\n4,a\n",
        &CsvOptions::default(),
    );
    assert_mentions(&message, &["single class", "'a'", "4 rows", "'label'"]);
}

#[test]
fn class_too_small_to_stratify() {
    let text = format!("x,y,label\n{}7,8,c\n9,9,c\n", rows_ab());
    let message = prepare_error("small.csv", text.as_bytes(), &CsvOptions::default());
    assert_mentions(&message, &["'c' has 2 rows", "at least 3 rows"]);
}

#[test]
fn infinite_numbers() {
    for (value, line) in [("inf", 3), ("-inf", 4), ("1e999", 5)] {
        let mut text = format!("x,y,label\n{}", rows_ab());
        let lines: Vec<&str> = text.lines().collect();
        let mut edited: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
        edited[line - 1] = format!("{value},1,{}", if line % 2 == 0 { "a" } else { "b" });
        text = edited.join("\n");
        let message = prepare_error("inf.csv", text.as_bytes(), &CsvOptions::default());
        assert_mentions(
            &message,
            &[&format!("line {line}"), "column 'x'", value, "infinite"],
        );
    }
}

#[test]
fn invalid_utf8() {
    let mut bytes = b"x,y,label\n1,2,a\n3,4,".to_vec();
    bytes.extend_from_slice(&[0xff, 0xfe]);
    bytes.extend_from_slice(b"\n5,6,b\n");
    let message = prepare_error("latin.csv", &bytes, &CsvOptions::default());
    assert_mentions(&message, &["line 3", "UTF-8"]);
}

#[test]
fn constant_feature_column_is_dropped_with_a_warning() {
    let text: String = std::iter::once("x,k,label\n".to_string())
        .chain((0..9).map(|i| format!("{i},5,{}\n", ["a", "b", "c"][i % 3])))
        .collect();
    let (_dir, path) = write_file("const.csv", text.as_bytes());
    let prepared = prepare(&path, &CsvOptions::default(), &SplitFractions::default(), 1)
        .expect("a constant column is a warning, not an error");
    assert_eq!(prepared.info.n_features, 1);
    assert_eq!(prepared.preprocessor.feature_names(), ["x"]);
    assert!(
        prepared
            .info
            .warnings
            .iter()
            .any(|w| w.contains("'k'") && w.contains("constant")),
        "{:?}",
        prepared.info.warnings
    );
}

#[test]
fn every_feature_constant() {
    let text: String = std::iter::once("k,label\n".to_string())
        .chain((0..9).map(|i| format!("5,{}\n", ["a", "b", "c"][i % 3])))
        .collect();
    let message = prepare_error("allconst.csv", text.as_bytes(), &CsvOptions::default());
    assert_mentions(&message, &["constant", "k"]);
}

#[test]
fn missing_cells_without_imputation() {
    let mut text = String::from("x,y,label\n");
    for i in 0..12 {
        let x = if i < 7 {
            ["", "NA", "nan", "?", "NaN", "na", ""][i].to_string()
        } else {
            i.to_string()
        };
        text.push_str(&format!("{x},{i},{}\n", ["a", "b"][i % 2]));
    }
    let message = prepare_error("gaps.csv", text.as_bytes(), &CsvOptions::default());
    assert_mentions(
        &message,
        &[
            "7 missing cells",
            "line 2, column 'x': ''",
            "line 3, column 'x': 'NA'",
            "line 6",
            "and 2 more",
            "imput",
        ],
    );
    assert!(
        !message.contains("line 7,"),
        "only five cells are quoted: {message}"
    );
}

#[test]
fn missing_labels_even_with_imputation() {
    let text = format!("x,y,label\n{}1,2,NA\n3,4,\n", rows_ab());
    let opts = CsvOptions {
        impute: true,
        ..CsvOptions::default()
    };
    let message = prepare_error("nolabels.csv", text.as_bytes(), &opts);
    assert_mentions(
        &message,
        &["2 rows without a label", "line 8", "line 9", "'label'"],
    );
}

#[test]
fn semicolon_separated_file_hints_at_the_delimiter() {
    let text = "x;y;label\n1;2;a\n";
    let message = prepare_error("semi.csv", text.as_bytes(), &CsvOptions::default());
    assert_mentions(&message, &["';'", "delimiter"]);
    let (_dir, path) = write_file(
        "semi_ok.csv",
        format!("x;y;label\n{}", rows_ab().replace(',', ";")).as_bytes(),
    );
    let opts = CsvOptions {
        delimiter: Some(b';'),
        ..CsvOptions::default()
    };
    assert!(prepare(&path, &opts, &SplitFractions::default(), 1).is_ok());
}

#[test]
fn invalid_split_fractions() {
    let (_dir, path) = write_file("fine.csv", format!("x,y,label\n{}", rows_ab()).as_bytes());
    for (fractions, fact) in [
        (
            SplitFractions {
                train: 0.8,
                valid: 0.15,
                test: 0.15,
            },
            "sum to",
        ),
        (
            SplitFractions {
                train: 1.0,
                valid: 0.0,
                test: 0.0,
            },
            "strictly between 0 and 1",
        ),
    ] {
        let error =
            prepare(&path, &CsvOptions::default(), &fractions, 1).expect_err("bad fractions");
        assert_eq!(error.exit_code(), 2);
        assert_mentions(&error.to_string(), &[fact]);
    }
}

#[test]
fn bom_and_crlf_are_accepted() {
    let mut bytes = b"\xEF\xBB\xBF".to_vec();
    bytes.extend_from_slice(
        format!("x,y,label\n{}", rows_ab())
            .replace('\n', "\r\n")
            .as_bytes(),
    );
    let (_dir, path) = write_file("windows.csv", &bytes);
    let table = read_table(&path, &CsvOptions::default()).expect("BOM and CRLF are fine");
    assert_eq!(table.column_names(), ["x", "y", "label"]);
    assert_eq!(table.label_texts()[0], "a");
    assert_eq!(
        table.numeric_column("x"),
        Some(vec![0.0, 1.0, 2.0, 3.0, 4.0, 5.0])
    );
    assert_eq!(table.line_of(0), Some(2));
}
