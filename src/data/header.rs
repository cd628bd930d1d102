//! Checks of a CSV file's header row and delimiter, with hints for common mistakes.

use std::collections::HashMap;

use crate::data::cells::{shorten, QUOTE_CHARS};
use crate::data::limits::{MAX_CELL_BYTES, MAX_COLUMNS};
use crate::{Error, Result};

/// Most column names listed when the label column is not found.
const NAMES_LISTED: usize = 20;

/// Refuses delimiters the CSV format cannot use.
pub(crate) fn check_delimiter(delimiter: u8) -> Result<u8> {
    if !delimiter.is_ascii() || matches!(delimiter, b'"' | b'\n' | b'\r') {
        return Err(Error::input(format!(
            "the delimiter must be a single ASCII character other than a quote or line break, \
             got byte {delimiter:#04x}"
        )));
    }
    Ok(delimiter)
}

/// Checks column names: how many there are and how long, a single field that
/// contains another likely delimiter, empty names, duplicates.
pub(crate) fn check_header(file: &str, names: &[String], delimiter: u8) -> Result<()> {
    if names.len() > MAX_COLUMNS {
        return Err(Error::input(format!(
            "{file}: line 1: the header has {} columns; gemmule reads at most {MAX_COLUMNS} \
             columns: keep fewer feature columns, or check the delimiter",
            names.len()
        )));
    }
    if let Some((position, name)) = names
        .iter()
        .enumerate()
        .find(|(_, name)| name.len() > MAX_CELL_BYTES)
    {
        return Err(Error::input(format!(
            "{file}: line 1: the name of column {} is {} bytes long, more than the \
             {MAX_CELL_BYTES} allowed; is the first line really a header (a missing closing \
             quote makes one huge name)?",
            position + 1,
            name.len()
        )));
    }
    if let [only] = names {
        for (other, shown, word, flag) in [
            (b';', "';'", "semicolon", "';'"),
            (b'\t', "a tab", "tab", "$'\\t'"),
        ] {
            if delimiter != other && only.contains(other as char) {
                return Err(Error::input(format!(
                    "{file}: the header has a single column '{}' that contains {shown}; the \
                     file looks {word}-separated, so pass --delimiter {flag}",
                    shorten(only, QUOTE_CHARS)
                )));
            }
        }
    }
    if let Some(position) = names.iter().position(String::is_empty) {
        return Err(Error::input(format!(
            "{file}: line 1: column {} has an empty name; give every column a name in the header",
            position + 1
        )));
    }
    let mut seen: HashMap<&str, usize> = HashMap::with_capacity(names.len());
    for (second, name) in names.iter().enumerate() {
        if let Some(first) = seen.insert(name, second) {
            return Err(Error::input(format!(
                "{file}: line 1: the column name '{}' appears twice (columns {} and {}); \
                 rename one of them",
                shorten(name, QUOTE_CHARS),
                first + 1,
                second + 1
            )));
        }
    }
    Ok(())
}

/// Index of the label column: the named one, or the last.
pub(crate) fn find_label(file: &str, names: &[String], label: Option<&str>) -> Result<usize> {
    match label {
        None => Ok(names.len() - 1),
        Some(wanted) => names.iter().position(|n| n == wanted).ok_or_else(|| {
            Error::input(format!(
                "{file}: there is no column named '{}' to use as the label; the columns \
                 are: {}",
                shorten(wanted, QUOTE_CHARS),
                listed_names(names)
            ))
        }),
    }
}

/// The column names for a message: the first 20 (each shortened), then "and N more".
pub(crate) fn listed_names(names: &[String]) -> String {
    let mut listed: Vec<String> = names
        .iter()
        .take(NAMES_LISTED)
        .map(|n| shorten(n, QUOTE_CHARS))
        .collect();
    if names.len() > NAMES_LISTED {
        listed.push(format!("and {} more", names.len() - NAMES_LISTED));
    }
    listed.join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wide_headers_are_checked_in_one_pass() {
        // A quadratic duplicate search would make 4.5e10 comparisons here.
        let mut names: Vec<String> = (0..MAX_COLUMNS).map(|i| format!("c{i}")).collect();
        assert!(check_header("f.csv", &names, b',').is_ok());
        names.push("c7".to_string());
        let message = check_header("f.csv", &names, b',')
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(
            message.contains(&format!("{} columns", MAX_COLUMNS + 1)),
            "{message}"
        );
        names.truncate(MAX_COLUMNS - 1);
        names.push("c7".to_string());
        let message = check_header("f.csv", &names, b',')
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(
            message.contains(&format!("columns 8 and {MAX_COLUMNS}")),
            "{message}"
        );
    }

    #[test]
    fn a_missing_label_lists_twenty_names_at_most() {
        let names: Vec<String> = (0..100).map(|i| format!("c{i}")).collect();
        let message = find_label("f.csv", &names, Some("label"))
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(message.contains("c19, and 80 more"), "{message}");
        assert!(!message.contains("c20"), "{message}");
    }
}
