//! Tests of the preprocessor on small hand-made tables: imputation,
//! categories, and prediction files.

use std::path::PathBuf;

use tempfile::TempDir;

use crate::data::{read_table, CsvOptions, Preprocessor, Table};

fn table_of(text: &str, opts: &CsvOptions) -> (TempDir, PathBuf, Table) {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("t.csv");
    std::fs::write(&path, text).expect("write");
    let table = read_table(&path, opts).expect("reads");
    (dir, path, table)
}

const TRAINING: &str = "size,color,label\n\
                        1,red,a\n\
                        NA,blue,b\n\
                        3,,a\n\
                        5,red,b\n\
                        100,green,a\n";

#[test]
fn imputation_fills_from_training_rows_and_adds_indicators() {
    let opts = CsvOptions::default();
    let (_dir, _path, table) = table_of(TRAINING, &opts);
    let train = [0, 1, 2, 3];
    let (pre, warnings) = Preprocessor::fit(&table, &train, true).expect("fits");
    assert_eq!(
        pre.feature_names(),
        [
            "size",
            "size:missing",
            "color=blue",
            "color=red",
            "color:missing"
        ]
    );
    assert!(
        warnings
            .iter()
            .any(|w| w.contains("imputed 2 missing cells")),
        "{warnings:?}"
    );
    // Median of the training sizes 1, 3, 5 is 3; the row-4 value 100 must not count.
    let (mean, _) = pre.standardisation("size").expect("scaled");
    assert_eq!(mean, (1.0 + 3.0 + 3.0 + 5.0) / 4.0);
    let data = pre.transform(&table, &[1, 2]).expect("transforms");
    // Row 1: size missing → median → 0 after centring; color blue.
    assert_eq!(&data.x[..5], &[0.0, 1.0, 1.0, 0.0, 0.0]);
    // Row 2: color missing → most frequent training color, red.
    assert_eq!(&data.x[5 + 2..], &[0.0, 1.0, 1.0]);
    assert_eq!(data.y, [1, 0]);
}

#[test]
fn without_imputation_missing_cells_anywhere_are_refused() {
    let (_dir, _path, table) = table_of(TRAINING, &CsvOptions::default());
    let error = Preprocessor::fit(&table, &[0, 3, 4], false).expect_err("gaps");
    assert_eq!(error.exit_code(), 2);
    let message = error.to_string();
    assert!(message.contains("2 missing cells") && message.contains("line 3, column 'size'"));
}

#[test]
fn unseen_category_encodes_as_zeros_with_a_warning() {
    let (_d1, _p1, table) = table_of(TRAINING, &CsvOptions::default());
    let (pre, _) = Preprocessor::fit(&table, &[0, 3, 4], true).expect("fits");
    assert_eq!(pre.feature_names(), ["size", "color=green", "color=red"]);
    let prediction = "color,size\npurple,2\nred,3\n";
    let (_d2, _p2, new) = table_of(prediction, &CsvOptions::default());
    let encoded = pre.encode_for_prediction(&new).expect("encodes");
    assert_eq!(encoded.labels, None, "no label column in the file");
    assert_eq!(encoded.n_features, 3);
    assert_eq!(&encoded.x[1..3], &[0.0, 0.0]);
    assert_eq!(&encoded.x[4..6], &[0.0, 1.0]);
    assert_eq!(encoded.warnings.len(), 1);
    let warning = &encoded.warnings[0];
    assert!(
        warning.contains("'color'") && warning.contains("'purple'") && warning.contains("line 2")
    );
}

#[test]
fn prediction_labels_must_be_known_classes() {
    let (_d1, _p1, table) = table_of(TRAINING, &CsvOptions::default());
    let (pre, _) = Preprocessor::fit(&table, &[0, 3, 4], true).expect("fits");
    let (_d2, _p2, new) = table_of(
        "size,color,label\n2,red,b\n2,red,z\n",
        &CsvOptions::default(),
    );
    let error = pre.encode_for_prediction(&new).expect_err("unknown label");
    assert_eq!(error.exit_code(), 2);
    let message = error.to_string();
    assert!(message.contains("line 3") && message.contains("'z'") && message.contains("a, b"));
}

#[test]
fn prediction_needs_numbers_in_numeric_columns_and_every_feature_column() {
    let (_d1, _p1, table) = table_of(TRAINING, &CsvOptions::default());
    let (pre, _) = Preprocessor::fit(&table, &[0, 3, 4], true).expect("fits");
    let (_d2, _p2, text) = table_of("size,color\nbig,red\n", &CsvOptions::default());
    let message = pre
        .encode_for_prediction(&text)
        .expect_err("text")
        .to_string();
    assert!(message.contains("line 2, column 'size'") && message.contains("'big'"));
    let (_d3, _p3, short) = table_of("size,label\n1,a\n", &CsvOptions::default());
    let message = pre
        .encode_for_prediction(&short)
        .expect_err("absent")
        .to_string();
    assert!(message.contains("color") && message.contains("size, label"));
}
