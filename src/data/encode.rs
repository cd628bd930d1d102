//! Applying fitted column plans to table rows: the encoded feature matrix.

use std::collections::BTreeMap;

use crate::data::cells::{
    count_of, is_missing, parse_number, shorten, CellList, NumberCell, QUOTE_CHARS,
};
use crate::data::column_plan::{ColumnPlan, Fill, ValueEncoding};
use crate::data::Table;
use crate::{Error, Result};

/// Most unseen categories named per column; further ones are only counted.
const UNSEEN_SHOWN: usize = 5;

/// Unseen categories of one column: value → (rows, first line).
type Unseen = BTreeMap<String, (usize, u64)>;

/// Encodes `rows` of `table` (columns found by name) into row-major features,
/// returning warnings about categories not seen in training.
pub(crate) fn encode_features(
    plans: &[ColumnPlan],
    table: &Table,
    rows: &[usize],
) -> Result<(Vec<f32>, Vec<String>)> {
    check_rows(table, rows)?;
    let columns = find_columns(plans, table)?;
    let width: usize = plans.iter().map(ColumnPlan::width).sum();
    let mut x = Vec::with_capacity(rows.len() * width);
    let mut missing = CellList::default();
    let mut unseen: Vec<Unseen> = vec![Unseen::new(); plans.len()];
    for &row in rows {
        let line = table.line(row);
        for (p, plan) in plans.iter().enumerate() {
            let text = table.texts(columns[p])[row].as_str();
            let cell = Cell { text, line };
            encode_cell(plan, cell, table, &mut x, &mut missing, &mut unseen[p])?;
        }
    }
    if !missing.is_empty() {
        return Err(Error::input(format!(
            "{}: {} in feature columns (empty, NA, NaN or ?), and the model was fitted without \
             imputation: {}; fill them in or remove those rows",
            table.file(),
            count_of(missing.total(), "missing cell"),
            missing.describe()
        )));
    }
    let warnings = plans
        .iter()
        .zip(&unseen)
        .flat_map(|(plan, values)| unseen_warnings(&plan.name, values))
        .collect();
    Ok((x, warnings))
}

/// One cell's text and the line it came from.
#[derive(Clone, Copy)]
struct Cell<'a> {
    text: &'a str,
    line: u64,
}

/// Appends the encoded columns of one cell to `x`.
fn encode_cell(
    plan: &ColumnPlan,
    cell: Cell<'_>,
    table: &Table,
    x: &mut Vec<f32>,
    missing: &mut CellList,
    unseen: &mut Unseen,
) -> Result<()> {
    let was_missing = is_missing(cell.text);
    if was_missing && plan.fill.is_none() {
        missing.add(cell.line, &plan.name, cell.text);
        x.resize(x.len() + plan.width(), 0.0);
        return Ok(());
    }
    let number = if plan.is_numeric() {
        Some(read_number(plan, cell, table)?)
    } else {
        None
    };
    match &plan.encoding {
        ValueEncoding::Standardised { mean, std } => {
            let value = number.unwrap_or(*mean);
            let scaled = ((value - mean) / std) as f32;
            if !scaled.is_finite() {
                return Err(Error::input(format!(
                    "{}: line {}, column '{}': '{}' lies too far from the training values \
                     (mean {mean:.4e}, standard deviation {std:.4e}) to encode as a 32-bit \
                     number; check the value, or rescale the column",
                    table.file(),
                    cell.line,
                    shorten(&plan.name, QUOTE_CHARS),
                    shorten(cell.text, QUOTE_CHARS)
                )));
            }
            x.push(scaled);
        }
        ValueEncoding::OneHot { categories } => {
            let category = match (&plan.fill, was_missing) {
                (Some(Fill::Category(fill)), true) => fill.as_str(),
                _ => cell.text,
            };
            let start = x.len();
            x.resize(start + categories.len(), 0.0);
            match categories.binary_search_by(|c| c.as_str().cmp(category)) {
                Ok(index) => x[start + index] = 1.0,
                Err(_) => {
                    let entry = unseen.entry(category.to_string()).or_insert((0, cell.line));
                    entry.0 += 1;
                }
            }
        }
        ValueEncoding::IndicatorOnly { .. } => {}
    }
    if plan.missing_indicator {
        x.push(if was_missing { 1.0 } else { 0.0 });
    }
    Ok(())
}

/// The cell as a number (the fill for a missing cell); refuses text and infinity.
fn read_number(plan: &ColumnPlan, cell: Cell<'_>, table: &Table) -> Result<f64> {
    match (parse_number(cell.text), &plan.fill) {
        (NumberCell::Finite(value), _) => Ok(value),
        (NumberCell::Missing, Some(Fill::Number(fill))) => Ok(*fill),
        (NumberCell::Missing, _) => Err(Error::internal(format!(
            "column '{}' has no numeric fill",
            plan.name
        ))),
        (NumberCell::Infinite, _) => Err(Error::input(format!(
            "{}: line {}, column '{}': '{}' is infinite (or too large for a 64-bit float); \
             replace it with a finite value",
            table.file(),
            cell.line,
            shorten(&plan.name, QUOTE_CHARS),
            shorten(cell.text, QUOTE_CHARS)
        ))),
        (NumberCell::NotANumber, _) => Err(Error::input(format!(
            "{}: line {}, column '{}': '{}' is not a number, but this column held numbers in \
             the training data",
            table.file(),
            cell.line,
            shorten(&plan.name, QUOTE_CHARS),
            shorten(cell.text, QUOTE_CHARS)
        ))),
    }
}

/// Refuses row indices outside the table (a caller bug).
fn check_rows(table: &Table, rows: &[usize]) -> Result<()> {
    match rows.iter().find(|&&row| row >= table.n_rows()) {
        Some(row) => Err(Error::internal(format!(
            "row index {row} is outside the table's {} rows",
            table.n_rows()
        ))),
        None => Ok(()),
    }
}

/// Position in `table` of each plan's column; names every absent column.
fn find_columns(plans: &[ColumnPlan], table: &Table) -> Result<Vec<usize>> {
    let absent: Vec<&str> = plans
        .iter()
        .filter(|p| table.column_index(&p.name).is_none())
        .map(|p| p.name.as_str())
        .collect();
    if !absent.is_empty() {
        return Err(Error::input(format!(
            "{}: missing the feature {} the model was trained with: {}; the file has: {}",
            table.file(),
            if absent.len() == 1 {
                "column"
            } else {
                "columns"
            },
            absent.join(", "),
            table.column_names().join(", ")
        )));
    }
    Ok(plans
        .iter()
        .filter_map(|p| table.column_index(&p.name))
        .collect())
}

/// Warnings naming the column and each unseen value (the first few).
fn unseen_warnings(column: &str, values: &Unseen) -> Vec<String> {
    let mut warnings: Vec<String> = values
        .iter()
        .take(UNSEEN_SHOWN)
        .map(|(value, (rows, line))| {
            format!(
                "column '{}': category '{}' was not seen in the training split \
                 ({}, first at line {line}); encoded as all zeros",
                shorten(column, QUOTE_CHARS),
                shorten(value, QUOTE_CHARS),
                count_of(*rows, "row")
            )
        })
        .collect();
    if values.len() > UNSEEN_SHOWN {
        warnings.push(format!(
            "column '{column}': {} more unseen categories, also encoded as all zeros",
            values.len() - UNSEEN_SHOWN
        ));
    }
    warnings
}
