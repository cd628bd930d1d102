//! Unit tests of `prepare_with`: column roles and fixed test sets, looking
//! behind the seal (only the crate can open it).
//!
//! Data: Fisher's iris as shipped in scikit-learn 1.9.1 (copy and provenance
//! in tests/data/README.md); the id and split columns are added here. The
//! expected rows are this project's own contract (no outside source).

use std::path::{Path, PathBuf};

use crate::data::{prepare, prepare_with, CsvOptions, Partition, SplitFractions, TableRoles};

/// The iris rows (header first) as shipped.
fn iris_lines() -> Vec<String> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/iris.csv");
    std::fs::read_to_string(path)
        .expect("tests/data/iris.csv")
        .lines()
        .map(str::to_string)
        .collect()
}

/// Writes `lines` to `dir/name`.
fn write(dir: &Path, name: &str, lines: &[String]) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, lines.join("\n") + "\n").expect("write");
    path
}

/// Iris with a first column `id` = `r<line>` (the row's own line number).
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

fn roles(ids: &[&str], partition: Partition) -> TableRoles {
    TableRoles {
        ids: ids.iter().map(|s| s.to_string()).collect(),
        ignore: Vec::new(),
        partition,
    }
}

#[test]
fn an_id_column_changes_nothing_but_rides_along_with_the_test_rows() {
    let dir = tempfile::tempdir().expect("temp dir");
    let lines = iris_lines();
    let plain = write(dir.path(), "iris.csv", &lines);
    let tagged = write(dir.path(), "iris_id.csv", &with_ids(&lines));
    let fractions = SplitFractions::default();
    let csv = CsvOptions::default();
    let without = prepare(&plain, &csv, &fractions, 4).expect("plain iris");
    let with = prepare_with(
        &tagged,
        &csv,
        &roles(&["id"], Partition::Stratified),
        &fractions,
        4,
    )
    .expect("iris with ids");
    assert_eq!(with.info.n_features, without.info.n_features);
    assert_eq!(with.train, without.train);
    assert_eq!(with.valid, without.valid);
    assert_eq!(with.preprocessor.id_columns(), ["id"]);
    let ((test, tags), _) = with
        .test
        .zip(with.test_rows)
        .expect("same rows")
        .open("unit test");
    let (plain_test, _) = without.test.open("unit test");
    assert_eq!(test, plain_test);
    assert_eq!(tags.id_names, ["id"]);
    assert_eq!(tags.len(), test.len());
    for tag in &tags.rows {
        let line = tag.line.expect("a table row has a line");
        assert_eq!(tag.ids, [format!("r{line}")]);
    }
}

#[test]
fn a_test_file_gives_exactly_its_rows_in_file_order() {
    let dir = tempfile::tempdir().expect("temp dir");
    let lines = with_ids(&iris_lines());
    let (header, rows) = lines.split_first().expect("header");
    let mut data = vec![header.clone()];
    let mut test = vec![header.clone()];
    for (i, row) in rows.iter().enumerate() {
        if i % 5 == 0 { &mut test } else { &mut data }.push(row.clone());
    }
    // The test file may order its columns differently: move `id` to the end.
    let reordered: Vec<String> = test
        .iter()
        .map(|line| {
            let (id, rest) = line.split_once(',').expect("a comma");
            format!("{rest},{id}")
        })
        .collect();
    let data_path = write(dir.path(), "data.csv", &data);
    let test_path = write(dir.path(), "test.csv", &reordered);
    let prepared = prepare_with(
        &data_path,
        &CsvOptions::default(),
        &roles(&["id"], Partition::TestFile(test_path.clone())),
        &SplitFractions::default(),
        0,
    )
    .expect("a fixed test file");
    // 40 rows per class; validation gets round(40 · 0.15/0.85) = 7 of each.
    assert_eq!((prepared.train.len(), prepared.valid.len()), (99, 21));
    assert_eq!(prepared.test.rows(), 30);
    assert!(prepared.info.test_fingerprint.is_some());
    let ((test_part, tags), _) = prepared
        .test
        .zip(prepared.test_rows)
        .expect("same rows")
        .open("unit test");
    assert_eq!(tags.file, test_path);
    let expected: Vec<(Option<u64>, Vec<String>)> = reordered[1..]
        .iter()
        .enumerate()
        .map(|(i, line)| {
            let id = line.rsplit(',').next().expect("id").to_string();
            (Some(i as u64 + 2), vec![id])
        })
        .collect();
    let found: Vec<(Option<u64>, Vec<String>)> =
        tags.rows.iter().map(|t| (t.line, t.ids.clone())).collect();
    assert_eq!(found, expected);
    // Every fifth iris row: 10 of each class, in file order.
    let classes: Vec<u32> = (0..30).map(|i| i / 10).collect();
    assert_eq!(test_part.y, classes);
}

#[test]
fn a_split_column_assigns_each_row_and_is_no_feature() {
    let dir = tempfile::tempdir().expect("temp dir");
    let lines = iris_lines();
    let parted: Vec<String> = lines
        .iter()
        .enumerate()
        .map(|(i, line)| match i {
            0 => format!("{line},part"),
            _ => {
                let part = match i % 10 {
                    0..=5 => "train",
                    6 | 7 => "validation",
                    _ => "test",
                };
                format!("{line},{part}")
            }
        })
        .collect();
    let path = write(dir.path(), "parted.csv", &parted);
    let csv = CsvOptions {
        label: Some("label".into()),
        ..CsvOptions::default()
    };
    let prepared = prepare_with(
        &path,
        &csv,
        &roles(&[], Partition::Column("part".into())),
        &SplitFractions::default(),
        0,
    )
    .expect("split by column");
    assert_eq!(prepared.info.n_features, 4);
    assert_eq!(
        (
            prepared.train.len(),
            prepared.valid.len(),
            prepared.test.rows()
        ),
        (90, 30, 30)
    );
    let (tags, _) = prepared.test_rows.open("unit test");
    let lines: Vec<u64> = tags.rows.iter().filter_map(|t| t.line).collect();
    let expected: Vec<u64> = (2..=151u64).filter(|l| (l - 1) % 10 >= 8).collect();
    assert_eq!(lines, expected);
    assert!(tags.id_names.is_empty());
}
