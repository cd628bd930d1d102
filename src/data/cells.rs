//! Reading single cells: which texts mean "missing", parsing numbers, and
//! listing offending cells in error messages.

/// Most offending cells quoted in one error message; the rest are only counted.
pub(crate) const CELLS_SHOWN: usize = 5;

/// Most characters of one cell or column name quoted in a message; longer
/// texts are cut, so a hostile file cannot make an error message huge.
pub(crate) const QUOTE_CHARS: usize = 40;

/// `text` cut to `max_chars` characters, with `…` and its full length in
/// characters appended when it was cut.
pub(crate) fn shorten(text: &str, max_chars: usize) -> String {
    match text.char_indices().nth(max_chars) {
        None => text.to_string(),
        Some((cut, _)) => format!("{}… ({} characters)", &text[..cut], text.chars().count()),
    }
}

/// True for the texts that mark a missing value: the empty cell, `?`, and
/// `NA` / `NaN` in any letter case (a signed `NaN` too).
pub(crate) fn is_missing(text: &str) -> bool {
    let unsigned = text.strip_prefix(['+', '-']).unwrap_or(text);
    text.is_empty()
        || text == "?"
        || text.eq_ignore_ascii_case("na")
        || unsigned.eq_ignore_ascii_case("nan")
}

/// What a cell holds when read as a number.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum NumberCell {
    /// A missing-value marker (see [`is_missing`]).
    Missing,
    /// A finite number.
    Finite(f64),
    /// A number too large for `f64` or spelled as infinity (`inf`, `-inf`, `1e999`).
    Infinite,
    /// Text that is not a number.
    NotANumber,
}

/// Reads a (trimmed) cell as a number.
pub(crate) fn parse_number(text: &str) -> NumberCell {
    if is_missing(text) {
        return NumberCell::Missing;
    }
    match text.parse::<f64>() {
        Ok(value) if value.is_finite() => NumberCell::Finite(value),
        Ok(value) if value.is_nan() => NumberCell::Missing,
        Ok(_) => NumberCell::Infinite,
        Err(_) => NumberCell::NotANumber,
    }
}

/// `"1 row"`, `"3 rows"`: a count with its noun in the right number.
pub(crate) fn count_of(count: usize, noun: &str) -> String {
    if count == 1 {
        format!("1 {noun}")
    } else {
        format!("{count} {noun}s")
    }
}

/// Offending cells gathered for one error message: the first few quoted, all counted.
#[derive(Debug, Default)]
pub(crate) struct CellList {
    shown: Vec<String>,
    total: usize,
}

impl CellList {
    /// Records one offending cell.
    pub(crate) fn add(&mut self, line: u64, column: &str, text: &str) {
        self.total += 1;
        if self.shown.len() < CELLS_SHOWN {
            self.shown.push(format!(
                "line {line}, column '{}': '{}'",
                shorten(column, QUOTE_CHARS),
                shorten(text, QUOTE_CHARS)
            ));
        }
    }

    /// Number of cells recorded.
    pub(crate) fn total(&self) -> usize {
        self.total
    }

    /// True when nothing was recorded.
    pub(crate) fn is_empty(&self) -> bool {
        self.total == 0
    }

    /// The quoted cells, e.g. `line 3, column 'a': 'NA'; ...; and 4 more`.
    pub(crate) fn describe(&self) -> String {
        let mut text = self.shown.join("; ");
        if self.total > self.shown.len() {
            text.push_str(&format!("; and {} more", self.total - self.shown.len()));
        }
        text
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn missing_markers_are_recognised_in_any_case() {
        for text in ["", "?", "NA", "na", "Na", "NaN", "nan", "NAN", "-nan"] {
            assert!(is_missing(text), "{text:?}");
        }
        for text in ["0", "n", "none", "??", "a"] {
            assert!(!is_missing(text), "{text:?}");
        }
    }

    #[test]
    fn numbers_parse_into_finite_infinite_or_text() {
        assert_eq!(parse_number("1.5"), NumberCell::Finite(1.5));
        assert_eq!(parse_number("-2e3"), NumberCell::Finite(-2000.0));
        assert_eq!(parse_number("inf"), NumberCell::Infinite);
        assert_eq!(parse_number("-inf"), NumberCell::Infinite);
        assert_eq!(parse_number("1e999"), NumberCell::Infinite);
        assert_eq!(parse_number("NA"), NumberCell::Missing);
        assert_eq!(parse_number("red"), NumberCell::NotANumber);
    }

    #[test]
    fn long_texts_are_cut_in_messages() {
        assert_eq!(shorten("abc", 3), "abc");
        assert_eq!(shorten("abcd", 3), "abc… (4 characters)");
        assert_eq!(shorten("ééééé", 2), "éé… (5 characters)");
        let mut list = CellList::default();
        list.add(2, "a", &"x".repeat(1000));
        assert!(list.describe().len() < 100, "{}", list.describe());
    }

    #[test]
    fn cell_list_quotes_five_and_counts_the_rest() {
        let mut list = CellList::default();
        for line in 2..10 {
            list.add(line, "a", "NA");
        }
        assert_eq!(list.total(), 8);
        let text = list.describe();
        assert!(text.contains("line 6, column 'a'"), "{text}");
        assert!(!text.contains("line 7"), "{text}");
        assert!(text.ends_with("and 3 more"), "{text}");
    }
}
