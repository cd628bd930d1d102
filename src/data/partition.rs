//! Fixed test sets: rows assigned to the parts by a split column, and a
//! separate test file checked against the data's columns and classes.

use std::collections::BTreeSet;

use crate::data::cells::{count_of, is_missing, shorten, CellList, QUOTE_CHARS};
use crate::data::header::listed_names;
use crate::data::labels::class_index;
use crate::data::Table;
use crate::{Error, Result};

/// The values a split column may hold, in part order (train, validation, test).
pub(crate) const SPLIT_COLUMN_VALUES: [&str; 3] = ["train", "validation", "test"];

/// Row indices of the training, validation and test parts, each ascending.
pub(crate) struct PartRows {
    /// Training rows.
    pub(crate) train: Vec<usize>,
    /// Validation rows.
    pub(crate) valid: Vec<usize>,
    /// Test rows.
    pub(crate) test: Vec<usize>,
}

/// The parts `column` assigns (see [`SPLIT_COLUMN_VALUES`]), plus warnings
/// naming classes without a training or validation row.
///
/// Refuses any other value (missing cells and other letter cases too), naming
/// the first lines and values, and a part without rows.
pub(crate) fn split_by_column(
    table: &Table,
    column: usize,
    labels: &[u32],
    class_names: &[String],
) -> Result<(PartRows, Vec<String>)> {
    let name = &table.column_names()[column];
    let mut parts = PartRows {
        train: Vec::new(),
        valid: Vec::new(),
        test: Vec::new(),
    };
    let mut other = CellList::default();
    for (row, text) in table.texts(column).iter().enumerate() {
        match text.as_str() {
            "train" => parts.train.push(row),
            "validation" => parts.valid.push(row),
            "test" => parts.test.push(row),
            _ => other.add(table.line(row), name, text),
        }
    }
    if !other.is_empty() {
        return Err(Error::input(format!(
            "{}: the split column '{}' (--split-column) must hold train, validation or test \
             (lower case) in every row; found {}: {}",
            table.file(),
            shorten(name, QUOTE_CHARS),
            count_of(other.total(), "other value"),
            other.describe()
        )));
    }
    let empty: Vec<&str> = [&parts.train, &parts.valid, &parts.test]
        .iter()
        .zip(SPLIT_COLUMN_VALUES)
        .filter(|(rows, _)| rows.is_empty())
        .map(|(_, value)| value)
        .collect();
    if !empty.is_empty() {
        return Err(Error::input(format!(
            "{}: the split column '{}' (--split-column) assigns no rows to {}; every part \
             (train, validation, test) needs at least one row",
            table.file(),
            shorten(name, QUOTE_CHARS),
            empty.join(" or ")
        )));
    }
    let mut warnings = Vec::new();
    for (rows, part) in [(&parts.train, "training"), (&parts.valid, "validation")] {
        let present: BTreeSet<u32> = rows
            .iter()
            .filter_map(|&r| labels.get(r).copied())
            .collect();
        let absent: Vec<String> = class_names
            .iter()
            .enumerate()
            .filter(|(i, _)| !present.contains(&(*i as u32)))
            .map(|(_, n)| format!("'{}'", shorten(n, QUOTE_CHARS)))
            .collect();
        if !absent.is_empty() {
            warnings.push(format!(
                "the split column '{}' gives the {part} part no row of the class(es) {}",
                shorten(name, QUOTE_CHARS),
                absent.join(", ")
            ));
        }
    }
    Ok((parts, warnings))
}

/// Refuses a test file whose column names differ from the data's (order may differ),
/// naming the missing and the extra columns.
pub(crate) fn check_same_columns(data: &Table, test: &Table) -> Result<()> {
    let have: BTreeSet<&String> = test.column_names().iter().collect();
    let want: BTreeSet<&String> = data.column_names().iter().collect();
    let missing: Vec<String> = data
        .column_names()
        .iter()
        .filter(|n| !have.contains(n))
        .cloned()
        .collect();
    let extra: Vec<String> = test
        .column_names()
        .iter()
        .filter(|n| !want.contains(n))
        .cloned()
        .collect();
    if missing.is_empty() && extra.is_empty() {
        return Ok(());
    }
    let mut what = Vec::new();
    if !missing.is_empty() {
        what.push(format!("it lacks {}", listed_names(&missing)));
    }
    if !extra.is_empty() {
        what.push(format!(
            "it has the extra column(s) {}",
            listed_names(&extra)
        ));
    }
    Err(Error::input(format!(
        "{}: the test file (--test-data) must have the same columns as the data {}: {}",
        test.file(),
        data.file(),
        what.join("; ")
    )))
}

/// Refuses test rows without a label or with a class the data does not have.
pub(crate) fn check_test_labels(test: &Table, class_names: &[String]) -> Result<()> {
    let label = test.label_name();
    let mut missing = CellList::default();
    let mut unknown = CellList::default();
    for (row, text) in test.label_texts().iter().enumerate() {
        if is_missing(text) {
            missing.add(test.line(row), label, text);
        } else if class_index(class_names, text).is_none() {
            unknown.add(test.line(row), label, text);
        }
    }
    if !missing.is_empty() {
        return Err(Error::input(format!(
            "{}: {} of the test file without a label: {}; every test row needs its class",
            test.file(),
            count_of(missing.total(), "row"),
            missing.describe()
        )));
    }
    if !unknown.is_empty() {
        return Err(Error::input(format!(
            "{}: {} of the test file with a class the data does not have: {}; the data's \
             classes are {}",
            test.file(),
            count_of(unknown.total(), "row"),
            unknown.describe(),
            listed_names(class_names)
        )));
    }
    Ok(())
}
