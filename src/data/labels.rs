//! Turning the label column into class names and class indices.

use crate::data::cells::{
    count_of, is_missing, parse_number, shorten, CellList, NumberCell, QUOTE_CHARS,
};
use crate::data::Table;
use crate::{Error, Result};

/// The class names of a table and the class index of every row.
///
/// Class names are the distinct label texts of all rows, sorted by their
/// bytes (so `"10"` sorts before `"2"`); a row's index points into them.
/// Missing labels are always an error, and so is a single class.
pub(crate) fn class_indices(table: &Table) -> Result<(Vec<String>, Vec<u32>)> {
    let texts = table.label_texts();
    let label = table.label_name();
    let mut missing = CellList::default();
    for (row, text) in texts.iter().enumerate() {
        if is_missing(text) {
            missing.add(table.line(row), label, text);
        }
    }
    if !missing.is_empty() {
        return Err(Error::input(format!(
            "{}: {} without a label (labels are never imputed): {}; fill in or remove those rows",
            table.file(),
            count_of(missing.total(), "row"),
            missing.describe()
        )));
    }
    let mut names: Vec<String> = texts.to_vec();
    names.sort();
    names.dedup();
    if names.len() < 2 {
        return Err(Error::input(format!(
            "{}: the label column '{label}' holds a single class ('{}') in all {}; a classifier \
             needs at least two classes; check that the label column is the right one (label \
             option)",
            table.file(),
            names.first().map_or("", String::as_str),
            count_of(texts.len(), "row")
        )));
    }
    let indices = texts
        .iter()
        .map(|text| class_index(&names, text))
        .collect::<Option<Vec<u32>>>()
        .ok_or_else(|| Error::internal("a label vanished from its own class list"))?;
    Ok((names, indices))
}

/// Index of `text` in the sorted class names.
pub(crate) fn class_index(names: &[String], text: &str) -> Option<u32> {
    names
        .binary_search_by(|name| name.as_str().cmp(text))
        .ok()
        .and_then(|i| u32::try_from(i).ok())
}

/// Warnings about class names that are probably a mistake: a label column that
/// mixes numbers and text (e.g. `1`, `2` and `two`), and numbers written in
/// two ways (e.g. `1` and `1.0`), which are different classes because classes
/// are compared as text.
pub(crate) fn label_warnings(table: &Table, names: &[String]) -> Vec<String> {
    let label = shorten(table.label_name(), QUOTE_CHARS);
    let mut warnings = Vec::new();
    let mut numeric: Vec<(&String, f64)> = names
        .iter()
        .filter_map(|name| match parse_number(name) {
            NumberCell::Finite(value) => Some((name, value)),
            _ => None,
        })
        .collect();
    let text = names
        .iter()
        .find(|name| !matches!(parse_number(name), NumberCell::Finite(_)));
    if let (Some((number, _)), Some(text)) = (numeric.first(), text) {
        warnings.push(format!(
            "{}: the label column '{label}' mixes numbers (e.g. '{}') and text (e.g. '{}'); \
             every distinct text is its own class, so check for typos",
            table.file(),
            shorten(number, QUOTE_CHARS),
            shorten(text, QUOTE_CHARS)
        ));
    }
    numeric.sort_by(|a, b| a.1.total_cmp(&b.1));
    if let Some(pair) = numeric.windows(2).find(|w| w[0].1 == w[1].1) {
        warnings.push(format!(
            "{}: the label column '{label}' holds '{}' and '{}', which are the same number \
             written two ways but count as two classes; write each class one way",
            table.file(),
            shorten(pair[0].0, QUOTE_CHARS),
            shorten(pair[1].0, QUOTE_CHARS)
        ));
    }
    warnings
}
