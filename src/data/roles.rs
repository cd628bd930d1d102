//! The roles of a table's columns beyond the label: identifier, ignored and
//! split columns are found by name and kept out of the features.

use std::collections::BTreeSet;

use crate::data::cells::{shorten, QUOTE_CHARS};
use crate::data::header::listed_names;
use crate::data::{Partition, Table, TableRoles};
use crate::{Error, Result};

/// The columns of a table by role, as positions in the table.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub(crate) struct ResolvedRoles {
    /// Identifier columns, in the order given (repeats removed).
    pub(crate) ids: Vec<usize>,
    /// Every column that is not a feature apart from the label: ids, ignored
    /// columns and the split column, ascending.
    pub(crate) excluded: Vec<usize>,
    /// Ignored columns, in the order given (repeats removed).
    pub(crate) ignored: Vec<usize>,
    /// The column that assigns rows to parts.
    pub(crate) split_column: Option<usize>,
}

/// Finds every named column of `roles` in `table`.
///
/// Refuses (naming the option, the value and the file's columns) an empty or
/// unknown name, the label column in any role, a column given two roles, and
/// roles that leave no feature column.
pub(crate) fn resolve_roles(table: &Table, roles: &TableRoles) -> Result<ResolvedRoles> {
    let ids = find_all(table, &roles.ids, "--id")?;
    let ignored = find_all(table, &roles.ignore, "--ignore")?;
    let split_column = match &roles.partition {
        Partition::Column(name) => Some(find(table, name, "--split-column")?),
        _ => None,
    };
    let mut owner: Vec<(usize, &str)> = Vec::new();
    let given = ids
        .iter()
        .map(|&c| (c, "--id"))
        .chain(ignored.iter().map(|&c| (c, "--ignore")))
        .chain(split_column.map(|c| (c, "--split-column")));
    for (column, option) in given {
        if let Some((_, first)) = owner.iter().find(|(c, _)| *c == column) {
            return Err(Error::input(format!(
                "{}: column '{}' is given to both {first} and {option}; give each column one \
                 role",
                table.file(),
                shorten(&table.column_names()[column], QUOTE_CHARS)
            )));
        }
        owner.push((column, option));
    }
    let excluded: BTreeSet<usize> = owner.iter().map(|(c, _)| *c).collect();
    let features: Vec<usize> = (0..table.column_names().len())
        .filter(|c| *c != table.label_index() && !excluded.contains(c))
        .collect();
    if features.is_empty() && !excluded.is_empty() {
        let taken: Vec<String> = excluded
            .iter()
            .map(|&c| table.column_names()[c].clone())
            .collect();
        return Err(Error::input(format!(
            "{}: no feature column is left: --id, --ignore and --split-column take every column \
             besides the label '{}' ({}); keep at least one feature column",
            table.file(),
            shorten(table.label_name(), QUOTE_CHARS),
            listed_names(&taken)
        )));
    }
    Ok(ResolvedRoles {
        ids,
        excluded: excluded.into_iter().collect(),
        ignored,
        split_column,
    })
}

/// Positions of `names` (repeats removed, order kept).
fn find_all(table: &Table, names: &[String], option: &str) -> Result<Vec<usize>> {
    let mut found = Vec::with_capacity(names.len());
    for name in names {
        let column = find(table, name, option)?;
        if !found.contains(&column) {
            found.push(column);
        }
    }
    Ok(found)
}

/// Position of one named column that is not the label.
fn find(table: &Table, name: &str, option: &str) -> Result<usize> {
    if name.trim().is_empty() {
        return Err(Error::input(format!(
            "{option} holds an empty column name; give column names separated by commas, \
             e.g. {option} id"
        )));
    }
    let column = table.column_index(name.trim()).ok_or_else(|| {
        Error::input(format!(
            "{}: there is no column '{}' ({option}); the columns are: {}",
            table.file(),
            shorten(name, QUOTE_CHARS),
            listed_names(table.column_names())
        ))
    })?;
    if column == table.label_index() {
        return Err(Error::input(format!(
            "{}: {option} '{}' names the label column; the label cannot also be {}; choose \
             another column (or another label with --label)",
            table.file(),
            shorten(name, QUOTE_CHARS),
            match option {
                "--id" => "an identifier",
                "--ignore" => "ignored",
                _ => "the column that splits the rows",
            }
        )));
    }
    Ok(column)
}
