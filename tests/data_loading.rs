//! Outside checks of the data module against the copied reference datasets
//! (tests/data, provenance in tests/data/README.md), plus split and leak checks.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use gemmule::data::{
    prepare, read_table, stratified_split, CsvOptions, Dataset, SplitFractions, Table,
};
use serde_json::Value;

fn data_file(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(name)
}

fn load_stats(name: &str) -> Value {
    let text = std::fs::read_to_string(data_file(&format!("{name}.stats.json")))
        .expect("stats file is part of the repository");
    serde_json::from_str(&text).expect("stats file is valid JSON")
}

/// Equal within 1e-9 relative (exact for zero).
fn close(actual: f64, expected: f64) -> bool {
    actual == expected || (actual - expected).abs() <= 1e-9 * actual.abs().max(expected.abs())
}

fn mean_and_std(values: &[f64]) -> (f64, f64) {
    let n = values.len() as f64;
    let mean = values.iter().sum::<f64>() / n;
    let var = values.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / n;
    (mean, var.sqrt())
}

/// Checks the loaded table against every figure of `NAME.stats.json`.
fn check_table_against_stats(name: &str) {
    let stats = load_stats(name);
    let table = read_table(&data_file(&format!("{name}.csv")), &CsvOptions::default())
        .expect("reference dataset loads");
    assert_eq!(
        table.fingerprint(),
        stats["csv_sha256"].as_str().expect("sha")
    );
    assert_eq!(table.n_rows() as u64, stats["rows"].as_u64().expect("rows"));
    assert_eq!(table.label_name(), "label");

    let names: Vec<String> = stats["feature_names"]
        .as_array()
        .expect("feature names")
        .iter()
        .map(|v| v.as_str().expect("name").to_string())
        .collect();
    assert_eq!(table.feature_names(), names);

    let mut counts: BTreeMap<&str, u64> = BTreeMap::new();
    for label in table.label_texts() {
        *counts.entry(label.as_str()).or_default() += 1;
    }
    let expected_counts = stats["class_counts"].as_object().expect("class counts");
    assert_eq!(counts.len(), expected_counts.len());
    for (class, count) in expected_counts {
        assert_eq!(
            counts.get(class.as_str()).copied(),
            count.as_u64(),
            "class {class}"
        );
    }

    for feature in &names {
        let values = table.numeric_column(feature).expect("numeric, no gaps");
        let (mean, std) = mean_and_std(&values);
        let expected_mean = stats["feature_mean"][feature].as_f64().expect("mean");
        let expected_std = stats["feature_std_population_ddof0"][feature]
            .as_f64()
            .expect("std");
        assert!(
            close(mean, expected_mean),
            "{name} {feature} mean {mean} vs {expected_mean}"
        );
        assert!(
            close(std, expected_std),
            "{name} {feature} std {std} vs {expected_std}"
        );
    }
}

#[test]
fn iris_matches_its_reference_stats() {
    // Source: scikit-learn 1.9.1 copy of Fisher's iris, stats computed with NumPy by the
    // shared data README (tests/data/iris.stats.json).
    check_table_against_stats("iris");
}

#[test]
fn wine_matches_its_reference_stats() {
    // Source: scikit-learn 1.9.1 copy of UCI Wine (Forina et al.), stats computed with NumPy
    // by the shared data README (tests/data/wine.stats.json).
    check_table_against_stats("wine");
}

#[test]
fn digits_match_their_reference_stats() {
    // Source: scikit-learn 1.9.1 copy of UCI Optical Recognition of Handwritten Digits
    // (test part), stats computed with NumPy by the shared data README
    // (tests/data/digits.stats.json).
    check_table_against_stats("digits");
}

fn class_counts(data: &Dataset) -> Vec<usize> {
    let mut counts = vec![0; data.n_classes];
    for &class in &data.y {
        counts[class as usize] += 1;
    }
    counts
}

/// The documented per-class rule: valid/test = round(n * fraction), at least 1; train the rest.
fn expected_parts(n: usize) -> (usize, usize, usize) {
    let valid = ((n as f64 * 0.15).round() as usize).max(1);
    let test = ((n as f64 * 0.15).round() as usize).max(1);
    (n - valid - test, valid, test)
}

#[test]
fn iris_split_keeps_class_proportions_and_seals_the_test_part() {
    // Source: scikit-learn 1.9.1 copy of Fisher's iris (50 rows per class per the shared
    // data README).
    let prepared = prepare(
        &data_file("iris.csv"),
        &CsvOptions::default(),
        &SplitFractions::default(),
        42,
    )
    .expect("iris prepares");
    assert_eq!(class_counts(&prepared.train), vec![34, 34, 34]);
    assert_eq!(class_counts(&prepared.valid), vec![8, 8, 8]);
    assert_eq!(prepared.test.rows(), 24);
    assert_eq!(prepared.info.rows_test, 24);
    assert_eq!(
        prepared.info.class_names,
        ["setosa", "versicolor", "virginica"]
    );
    assert_eq!(prepared.info.n_features, 4);
    assert_eq!(prepared.train.n_features, 4);
    assert!(
        prepared.info.warnings.is_empty(),
        "{:?}",
        prepared.info.warnings
    );
    // Source: csv_sha256 of tests/data/iris.stats.json (shared data README).
    assert_eq!(
        prepared.info.fingerprint,
        "d3b09efd6de0066a211e69284451f0d429db5c8d21a977602a4694794a41c089"
    );
}

#[test]
fn digits_split_follows_the_rounding_rule_and_drops_constant_pixels() {
    // Source: scikit-learn 1.9.1 copy of UCI digits; class counts and the all-zero
    // pixel_0_0 column from tests/data/digits.stats.json (shared data README).
    let stats = load_stats("digits");
    let prepared = prepare(
        &data_file("digits.csv"),
        &CsvOptions::default(),
        &SplitFractions::default(),
        7,
    )
    .expect("digits prepares");
    let names = &prepared.info.class_names;
    let mut expected_test = 0;
    for (class, name) in names.iter().enumerate() {
        let n = stats["class_counts"][name].as_u64().expect("count") as usize;
        let (train, valid, test) = expected_parts(n);
        assert_eq!(class_counts(&prepared.train)[class], train, "class {name}");
        assert_eq!(class_counts(&prepared.valid)[class], valid, "class {name}");
        expected_test += test;
    }
    assert_eq!(prepared.test.rows(), expected_test);
    let dropped = prepared.preprocessor.dropped_columns();
    assert!(dropped.iter().any(|c| c == "pixel_0_0"), "{dropped:?}");
    assert_eq!(prepared.info.n_features, 64 - dropped.len());
    assert!(prepared
        .info
        .warnings
        .iter()
        .any(|w| w.contains("pixel_0_0")));
}

#[test]
fn same_seed_gives_the_same_split_and_another_seed_a_different_one() {
    let labels: Vec<u32> = (0..90).map(|i| (i % 3) as u32).collect();
    let fractions = SplitFractions::default();
    let a = stratified_split(&labels, 3, &fractions, 5).expect("split");
    let b = stratified_split(&labels, 3, &fractions, 5).expect("split");
    let c = stratified_split(&labels, 3, &fractions, 6).expect("split");
    assert_eq!((&a.train, &a.valid), (&b.train, &b.valid));
    assert_eq!(a.test.rows(), b.test.rows());
    assert_ne!((&a.train, &a.valid), (&c.train, &c.valid));
    assert_eq!(a.train.len() + a.valid.len() + a.test.rows(), 90);
    assert!(a.train.windows(2).all(|w| w[0] < w[1]), "rows ascending");

    let opts = CsvOptions::default();
    let first = prepare(&data_file("wine.csv"), &opts, &fractions, 3).expect("wine");
    let second = prepare(&data_file("wine.csv"), &opts, &fractions, 3).expect("wine");
    assert_eq!(first.train, second.train);
    assert_eq!(first.valid, second.valid);
    assert_eq!(first.preprocessor, second.preprocessor);
}

#[test]
fn standardisation_is_fitted_on_training_rows_only() {
    // 60 rows, two classes; the split depends only on labels and seed, so it is computed
    // here first and the feature is then made very different on validation/test rows.
    let seed = 11;
    let labels: Vec<u32> = (0..60).map(|i| (i % 2) as u32).collect();
    let split = stratified_split(&labels, 2, &SplitFractions::default(), seed).expect("split");
    let in_train = |row: usize| split.train.contains(&row);
    let value = |row: usize| {
        if in_train(row) {
            row as f64 * 0.5
        } else {
            1000.0 + row as f64
        }
    };
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("leak.csv");
    let mut text = String::from("x,label\n");
    for (row, &label) in labels.iter().enumerate() {
        text.push_str(&format!("{},{}\n", value(row), ["a", "b"][label as usize]));
    }
    std::fs::write(&path, text).expect("write");

    let train_values: Vec<f64> = split.train.iter().map(|&r| value(r)).collect();
    let (train_mean, train_std) = mean_and_std(&train_values);
    let all_values: Vec<f64> = (0..60).map(value).collect();
    let (all_mean, _) = mean_and_std(&all_values);
    assert!(
        (all_mean - train_mean).abs() > 100.0,
        "the crafted parts differ"
    );

    let prepared = prepare(
        &path,
        &CsvOptions::default(),
        &SplitFractions::default(),
        seed,
    )
    .expect("prepares");
    let (mean, std) = prepared
        .preprocessor
        .standardisation("x")
        .expect("x is scaled");
    assert!(
        close(mean, train_mean),
        "fitted mean {mean}, train-only mean {train_mean}"
    );
    assert!(
        close(std, train_std),
        "fitted std {std}, train-only std {train_std}"
    );

    let (train_x_mean, train_x_std) = mean_and_std(
        &prepared
            .train
            .x
            .iter()
            .map(|&v| f64::from(v))
            .collect::<Vec<_>>(),
    );
    assert!(train_x_mean.abs() < 1e-5 && (train_x_std - 1.0).abs() < 1e-5);
    for (i, &row) in split.valid.iter().enumerate() {
        let expected = (value(row) - train_mean) / train_std;
        assert!((f64::from(prepared.valid.x[i]) - expected).abs() < 1e-3 * expected.abs());
    }
}

#[test]
fn preprocessor_survives_json_and_encodes_prediction_files_like_transform() {
    let opts = CsvOptions::default();
    let prepared =
        prepare(&data_file("wine.csv"), &opts, &SplitFractions::default(), 1).expect("wine");
    let json = serde_json::to_string(&prepared.preprocessor).expect("serialises");
    let restored: gemmule::data::Preprocessor = serde_json::from_str(&json).expect("parses");
    assert_eq!(restored, prepared.preprocessor);

    let table: Table = read_table(&data_file("wine.csv"), &opts).expect("reads");
    let encoded = restored.encode_for_prediction(&table).expect("encodes");
    let all_rows: Vec<usize> = (0..table.n_rows()).collect();
    let transformed = restored.transform(&table, &all_rows).expect("transforms");
    assert_eq!(encoded.x, transformed.x);
    assert_eq!(encoded.labels.as_deref(), Some(transformed.y.as_slice()));
    assert_eq!(encoded.n_features, 13);
    assert_eq!(restored.feature_names().len(), 13);
}
