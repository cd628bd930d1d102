//! Checks of a CSV file's header row and delimiter, with hints for common mistakes.

use crate::{Error, Result};

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

/// Checks column names: a single field that contains another likely delimiter,
/// empty names, duplicates.
pub(crate) fn check_header(file: &str, names: &[String], delimiter: u8) -> Result<()> {
    if let [only] = names {
        for (other, shown, word, flag) in [
            (b';', "';'", "semicolon", "';'"),
            (b'\t', "a tab", "tab", "$'\\t'"),
        ] {
            if delimiter != other && only.contains(other as char) {
                return Err(Error::input(format!(
                    "{file}: the header has a single column '{only}' that contains {shown}; the \
                     file looks {word}-separated, so pass --delimiter {flag}"
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
    for (second, name) in names.iter().enumerate() {
        if let Some(first) = names[..second].iter().position(|n| n == name) {
            return Err(Error::input(format!(
                "{file}: line 1: the column name '{name}' appears twice (columns {} and {}); \
                 rename one of them",
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
                "{file}: there is no column named '{wanted}' to use as the label; the columns \
                 are: {}",
                names.join(", ")
            ))
        }),
    }
}
