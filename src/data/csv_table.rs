//! Reading a CSV file into a [`Table`]: header, cells as text, column kinds.

use std::path::{Path, PathBuf};

use crate::data::cells::{count_of, parse_number, shorten, CellList, NumberCell, QUOTE_CHARS};
use crate::data::header::{check_delimiter, check_header, find_label};
use crate::data::limits::MAX_CELL_BYTES;
use crate::data::sniff::check_looks_like_text;
use crate::data::CsvOptions;
use crate::genome::sha256_hex;
use crate::{Error, Result};

/// The kind of a column, decided by looking at every non-missing cell.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ColumnKind {
    /// Every non-missing cell is a finite number.
    Numeric,
    /// At least one non-missing cell is not a number; cells are category names.
    Categorical,
}

/// A parsed CSV file, before any preprocessing.
///
/// Every column is kept (label included) as trimmed cell text, so that a
/// fitted [`crate::data::Preprocessor`] can find its columns by name in any
/// later file; typed views are read with [`Table::numeric_column`] and
/// [`Table::column_kind`]. Missing cells are kept as their text (see
/// [`Table::is_missing_cell`]).
#[derive(Debug, Clone)]
pub struct Table {
    path: PathBuf,
    fingerprint: String,
    names: Vec<String>,
    kinds: Vec<ColumnKind>,
    /// Cell text, column-major: `cells[column][row]`.
    cells: Vec<Vec<String>>,
    lines: Vec<u64>,
    label: usize,
}

impl Table {
    /// The file the table was read from.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// SHA-256 (hex) of the file's bytes, exactly as stored on disk.
    pub fn fingerprint(&self) -> &str {
        &self.fingerprint
    }

    /// All column names, in file order (label included).
    pub fn column_names(&self) -> &[String] {
        &self.names
    }

    /// Name of the column used as the label.
    pub fn label_name(&self) -> &str {
        &self.names[self.label]
    }

    /// Names of the feature columns (every column but the label), in file order.
    pub fn feature_names(&self) -> Vec<String> {
        (0..self.names.len())
            .filter(|&c| c != self.label)
            .map(|c| self.names[c].clone())
            .collect()
    }

    /// Number of data rows.
    pub fn n_rows(&self) -> usize {
        self.lines.len()
    }

    /// The 1-based line of the file where data row `row` starts.
    pub fn line_of(&self, row: usize) -> Option<u64> {
        self.lines.get(row).copied()
    }

    /// The label text of every row (missing labels included as their text).
    pub fn label_texts(&self) -> &[String] {
        &self.cells[self.label]
    }

    /// The trimmed cell texts of a column, by name.
    pub fn column_texts(&self, name: &str) -> Option<&[String]> {
        self.column_index(name).map(|c| self.cells[c].as_slice())
    }

    /// The kind of a column, by name (the label column is inspected like the others).
    pub fn column_kind(&self, name: &str) -> Option<ColumnKind> {
        self.column_index(name).map(|c| self.kinds[c])
    }

    /// The values of a numeric column without missing cells, by name; `None`
    /// if there is no such column, it is categorical, or it has missing cells.
    pub fn numeric_column(&self, name: &str) -> Option<Vec<f64>> {
        let column = self.column_index(name)?;
        self.cells[column]
            .iter()
            .map(|text| match parse_number(text) {
                NumberCell::Finite(value) => Some(value),
                _ => None,
            })
            .collect()
    }

    /// True when the cell text marks a missing value (empty, `NA`, `NaN`, `?`).
    pub fn is_missing_cell(text: &str) -> bool {
        crate::data::cells::is_missing(text)
    }

    /// Position of a column by name.
    pub(crate) fn column_index(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n == name)
    }

    /// Index of the label column.
    pub(crate) fn label_index(&self) -> usize {
        self.label
    }

    /// The cell texts of column `column`.
    pub(crate) fn texts(&self, column: usize) -> &[String] {
        &self.cells[column]
    }

    /// The kind of column `column`.
    pub(crate) fn kind(&self, column: usize) -> ColumnKind {
        self.kinds[column]
    }

    /// Source line of `row`, 0 if out of range (only used in messages).
    pub(crate) fn line(&self, row: usize) -> u64 {
        self.lines.get(row).copied().unwrap_or(0)
    }

    /// `"path"` for messages.
    pub(crate) fn file(&self) -> String {
        self.path.display().to_string()
    }

    /// Makes the column `name` the label (e.g. the data's label in a test file
    /// read without one) and checks the numeric feature columns again, since
    /// the column that was the label until now was not checked.
    pub(crate) fn relabel(&mut self, name: &str) -> Result<()> {
        self.label = find_label(&self.file(), &self.names, Some(name))?;
        check_finite(self)
    }
}

/// Reads a CSV file with a header row into a [`Table`].
///
/// Strips a UTF-8 byte-order mark, accepts LF, CRLF and CR line ends, trims
/// spaces around cells and skips blank lines. Fails with [`Error::Input`]
/// (naming the file and the line, column or value) for an empty file, a header
/// without data rows, invalid UTF-8, duplicate or empty column names, an
/// unknown label column, a row with the wrong number of fields, and infinite
/// numbers in a numeric feature column. Missing cells are kept; whether they
/// are allowed is decided when fitting the preprocessor.
///
/// Hostile or mistaken files are refused quickly: a folder, compressed or
/// binary data (see `sniff.rs`), more than [`crate::data::MAX_COLUMNS`]
/// columns, and cells or names longer than [`crate::data::MAX_CELL_BYTES`].
pub fn read_table(path: &Path, opts: &CsvOptions) -> Result<Table> {
    let file = path.display().to_string();
    if path.is_dir() {
        return Err(Error::input(format!(
            "{file}: is a folder, not a CSV file; give the path of the CSV file itself"
        )));
    }
    let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
    let fingerprint = sha256_hex(&bytes);
    check_looks_like_text(&file, &bytes)?;
    let text = decode_utf8(&file, &bytes)?;
    if text.trim().is_empty() {
        return Err(Error::input(format!(
            "{file}: the file is empty; expected a header row of column names followed by data rows"
        )));
    }
    let delimiter = check_delimiter(opts.delimiter.unwrap_or(b','))?;
    let text = without_carriage_returns(text);
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter)
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let mut records = reader.records();
    let header = match records.next() {
        Some(record) => record.map_err(|e| csv_error(&file, e))?,
        None => {
            return Err(Error::input(format!(
                "{file}: the file is empty; expected a header row of column names followed by data rows"
            )))
        }
    };
    let names: Vec<String> = header.iter().map(str::to_string).collect();
    check_header(&file, &names, delimiter)?;
    let label = find_label(&file, &names, opts.label.as_deref())?;

    let mut cells: Vec<Vec<String>> = vec![Vec::new(); names.len()];
    let mut lines = Vec::new();
    for record in records {
        let record = record.map_err(|e| csv_error(&file, e))?;
        let line = record.position().map_or(0, |p| p.line());
        if record.len() == 1 && record[0].is_empty() && names.len() > 1 {
            continue; // a line of spaces only
        }
        if record.len() != names.len() {
            let hint = if record.iter().any(|cell| cell.contains('\n')) {
                format!(
                    "; a quoted cell starting on line {line} spans several lines: check for a \
                     missing closing quote"
                )
            } else {
                format!(
                    "; check for a missing or extra delimiter ('{}'), and quote cells that \
                     contain it",
                    delimiter as char
                )
            };
            return Err(Error::input(format!(
                "{file}: line {line} has {} but the header has {}{hint}",
                count_of(record.len(), "field"),
                count_of(names.len(), "field"),
            )));
        }
        for (column, cell) in record.iter().enumerate() {
            if cell.len() > MAX_CELL_BYTES {
                return Err(Error::input(format!(
                    "{file}: line {line}, column '{}': the cell is {} bytes long, more than the \
                     {MAX_CELL_BYTES} allowed; if it starts with a quote, check for a missing \
                     closing quote",
                    shorten(&names[column], QUOTE_CHARS),
                    cell.len()
                )));
            }
            cells[column].push(cell.to_string());
        }
        lines.push(line);
    }
    if lines.is_empty() {
        return Err(Error::input(format!(
            "{file}: the file has a header but no data rows; add at least one row per class"
        )));
    }
    let kinds = cells.iter().map(|column| inspect_kind(column)).collect();
    let table = Table {
        path: path.to_path_buf(),
        fingerprint,
        names,
        kinds,
        cells,
        lines,
        label,
    };
    check_finite(&table)?;
    Ok(table)
}

/// The file as text without a leading byte-order mark; names the first line that is not UTF-8.
fn decode_utf8<'a>(file: &str, bytes: &'a [u8]) -> Result<&'a str> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    std::str::from_utf8(bytes).map_err(|e| {
        let valid = &bytes[..e.valid_up_to()];
        let line = 1 + valid.iter().filter(|&&b| b == b'\n').count();
        Error::input(format!(
            "{file}: line {line} is not valid UTF-8 (byte {} of the file); save the file with \
             UTF-8 encoding",
            e.valid_up_to()
        ))
    })
}

/// The text with CRLF and lone CR line ends (Windows; classic Mac, still
/// written by "CSV (Macintosh)" exports) turned into LF, so the CSV reader
/// reports correct line numbers: it ends a record at a lone CR but counts only
/// LF as a new line, and counts a CRLF record as starting on the line before.
/// A carriage return inside a quoted cell becomes a line feed too.
fn without_carriage_returns(text: &str) -> std::borrow::Cow<'_, str> {
    if text.contains('\r') {
        std::borrow::Cow::Owned(text.replace("\r\n", "\n").replace('\r', "\n"))
    } else {
        std::borrow::Cow::Borrowed(text)
    }
}

/// Numeric if every non-missing cell is a number (an all-missing column counts as numeric).
fn inspect_kind(column: &[String]) -> ColumnKind {
    if column
        .iter()
        .any(|text| parse_number(text) == NumberCell::NotANumber)
    {
        ColumnKind::Categorical
    } else {
        ColumnKind::Numeric
    }
}

/// Refuses infinite values in numeric feature columns.
fn check_finite(table: &Table) -> Result<()> {
    let mut infinite = CellList::default();
    for column in 0..table.names.len() {
        if column == table.label || table.kinds[column] != ColumnKind::Numeric {
            continue;
        }
        for (row, text) in table.cells[column].iter().enumerate() {
            if parse_number(text) == NumberCell::Infinite {
                infinite.add(table.lines[row], &table.names[column], text);
            }
        }
    }
    if infinite.is_empty() {
        return Ok(());
    }
    Err(Error::input(format!(
        "{}: infinite number (or one too large for a 64-bit float) in {}: {}; replace them \
         with finite values, or leave the cells empty to mark them missing",
        table.file(),
        count_of(infinite.total(), "cell"),
        infinite.describe()
    )))
}

/// A CSV parsing error as bad input, with its position.
fn csv_error(file: &str, error: csv::Error) -> Error {
    match error.position() {
        Some(position) => Error::input(format!("{file}: line {}: {error}", position.line())),
        None => Error::input(format!("{file}: {error}")),
    }
}
