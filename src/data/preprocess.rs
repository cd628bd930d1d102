//! The preprocessor: schema plus state fitted on the training rows only,
//! saved inside the model file and reused at prediction time.

use serde::{Deserialize, Serialize};

use crate::data::cells::{count_of, is_missing, CellList};
use crate::data::column_plan::{identifier_warning, ColumnPlan, Fitted, ValueEncoding};
use crate::data::encode::encode_features;
use crate::data::labels::{class_index, class_indices};
use crate::data::roles::resolve_roles;
use crate::data::{Dataset, Table, TableRoles};
use crate::{Error, Result};

/// Turns table rows into model input: imputation, one-hot encoding and
/// standardisation, all fitted on the training rows only.
///
/// Encoded layout: the kept source columns in file order; per column its
/// value columns (one standardised number, or one 0/1 column per training
/// category in sorted order), then a 0/1 missing-indicator column if the
/// column had missing training cells and imputation was on. Columns are found
/// by name, so a later file may order them differently. Identifier and ignored
/// columns (see [`TableRoles`]) are not features; the identifier names are kept
/// so predictions can carry their values (both lists are left out of the JSON
/// when empty, so older model files read and write the same bytes).
#[derive(Serialize, Deserialize, Clone, Debug, PartialEq)]
pub struct Preprocessor {
    label: String,
    class_names: Vec<String>,
    columns: Vec<ColumnPlan>,
    dropped: Vec<String>,
    imputes: bool,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    id_columns: Vec<String>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    ignored_columns: Vec<String>,
}

/// Rows encoded for prediction.
#[derive(Debug, Clone, PartialEq)]
pub struct Encoded {
    /// Row-major features, `rows * n_features` values.
    pub x: Vec<f32>,
    /// Number of encoded feature columns.
    pub n_features: usize,
    /// Class indices when the file has the label column, else `None`.
    pub labels: Option<Vec<u32>>,
    /// Things the user should know (e.g. categories unseen in training).
    pub warnings: Vec<String>,
}

impl Preprocessor {
    /// Fits on `train_rows` of `table`; returns warnings (dropped constant
    /// columns, imputation summary).
    ///
    /// Class names are the sorted distinct labels of all rows of the table
    /// (the task's label set); every statistic (medians, most frequent
    /// categories, category lists, means, standard deviations) comes from
    /// the training rows alone. Without `impute`, any missing feature cell in
    /// the table is an error listing the first few.
    pub fn fit(
        table: &Table,
        train_rows: &[usize],
        impute: bool,
    ) -> Result<(Preprocessor, Vec<String>)> {
        Preprocessor::fit_with_roles(table, train_rows, impute, &TableRoles::default())
    }

    /// [`Preprocessor::fit`] with identifier, ignored and split columns (by name,
    /// see [`TableRoles`]) kept out of the features; each must exist and none may
    /// be the label. Also warns about text feature columns that look like
    /// identifiers (at least 20 non-missing training cells, more than half of
    /// them distinct).
    pub fn fit_with_roles(
        table: &Table,
        train_rows: &[usize],
        impute: bool,
        roles: &TableRoles,
    ) -> Result<(Preprocessor, Vec<String>)> {
        let resolved = resolve_roles(table, roles)?;
        let names_of = |columns: &[usize]| -> Vec<String> {
            columns
                .iter()
                .map(|&c| table.column_names()[c].clone())
                .collect()
        };
        let features: Vec<usize> = (0..table.column_names().len())
            .filter(|&c| c != table.label_index() && !resolved.excluded.contains(&c))
            .collect();
        if features.is_empty() {
            return Err(Error::input(format!(
                "{}: there are no feature columns besides the label '{}'; check the delimiter \
                 and --label",
                table.file(),
                table.label_name()
            )));
        }
        if train_rows.is_empty() {
            return Err(Error::input(
                "the training split is empty; there is nothing to fit on",
            ));
        }
        if let Some(row) = train_rows.iter().find(|&&r| r >= table.n_rows()) {
            return Err(Error::internal(format!(
                "training row {row} is outside the table"
            )));
        }
        let (class_names, _) = class_indices(table)?;
        if !impute {
            refuse_missing(table, &features)?;
        }
        let mut columns = Vec::new();
        let mut dropped = Vec::new();
        let mut warnings = Vec::new();
        for &column in &features {
            let name = &table.column_names()[column];
            let texts: Vec<&str> = train_rows
                .iter()
                .map(|&r| table.texts(column)[r].as_str())
                .collect();
            match ColumnPlan::fit(name, table.kind(column), &texts, impute)? {
                Fitted::Kept(plan, warning) => {
                    if !plan.is_numeric() {
                        warnings.extend(identifier_warning(name, &texts));
                    }
                    columns.push(plan);
                    warnings.extend(warning);
                }
                Fitted::Dropped(warning) => {
                    dropped.push(name.clone());
                    warnings.push(warning);
                }
            }
        }
        if columns.is_empty() {
            return Err(Error::input(format!(
                "{}: every feature column ({}) is constant on the training split, so there is \
                 nothing to learn from",
                table.file(),
                dropped.join(", ")
            )));
        }
        if impute {
            warnings.extend(imputation_summary(table, train_rows, &columns));
        }
        let preprocessor = Preprocessor {
            label: table.label_name().to_string(),
            class_names,
            columns,
            dropped,
            imputes: impute,
            id_columns: names_of(&resolved.ids),
            ignored_columns: names_of(&resolved.ignored),
        };
        Ok((preprocessor, warnings))
    }

    /// Encodes labelled rows of `table` into a [`Dataset`] (labels required).
    pub fn transform(&self, table: &Table, rows: &[usize]) -> Result<Dataset> {
        self.transform_with_warnings(table, rows)
            .map(|(data, _)| data)
    }

    /// [`Preprocessor::transform`], also returning warnings about unseen categories.
    pub fn transform_with_warnings(
        &self,
        table: &Table,
        rows: &[usize],
    ) -> Result<(Dataset, Vec<String>)> {
        let label_column = table.column_index(&self.label).ok_or_else(|| {
            Error::input(format!(
                "{}: there is no label column '{}'; the columns are: {}",
                table.file(),
                self.label,
                table.column_names().join(", ")
            ))
        })?;
        let (x, warnings) = encode_features(&self.columns, table, rows)?;
        let y = self.class_indices_of(table, label_column, rows)?;
        let data = Dataset::new(x, y, self.n_features(), self.class_names.len())?;
        Ok((data, warnings))
    }

    /// Encodes every row of `table` for prediction; the label column is optional
    /// (when present, an unknown or missing label is an error).
    pub fn encode_for_prediction(&self, table: &Table) -> Result<Encoded> {
        let rows: Vec<usize> = (0..table.n_rows()).collect();
        let (x, warnings) = encode_features(&self.columns, table, &rows)?;
        let labels = match table.column_index(&self.label) {
            Some(column) => Some(self.class_indices_of(table, column, &rows)?),
            None => None,
        };
        Ok(Encoded {
            x,
            n_features: self.n_features(),
            labels,
            warnings,
        })
    }

    /// Number of encoded feature columns.
    pub fn n_features(&self) -> usize {
        self.columns.iter().map(ColumnPlan::width).sum()
    }

    /// Class names, sorted; class index `i` means `class_names()[i]`.
    pub fn class_names(&self) -> &[String] {
        &self.class_names
    }

    /// Names of the encoded feature columns: `col`, `col=category`, `col:missing`.
    pub fn feature_names(&self) -> Vec<String> {
        self.columns
            .iter()
            .flat_map(ColumnPlan::encoded_names)
            .collect()
    }

    /// Name of the label column.
    pub fn label_name(&self) -> &str {
        &self.label
    }

    /// Source columns dropped because they were constant on the training split.
    pub fn dropped_columns(&self) -> &[String] {
        &self.dropped
    }

    /// Whether missing feature cells are filled (fitted with imputation).
    pub fn imputes(&self) -> bool {
        self.imputes
    }

    /// Identifier columns (`--id`), in the order given: not features, but carried
    /// beside every prediction.
    pub fn id_columns(&self) -> &[String] {
        &self.id_columns
    }

    /// Columns left out of the features (`--ignore`).
    pub fn ignored_columns(&self) -> &[String] {
        &self.ignored_columns
    }

    /// The identifier values of every row of `table`, one `Vec` per row in
    /// [`Preprocessor::id_columns`] order, plus a warning for each identifier
    /// column the file lacks (its values are left empty).
    pub fn id_values(&self, table: &Table) -> (Vec<Vec<String>>, Vec<String>) {
        let mut warnings = Vec::new();
        let columns: Vec<Option<&[String]>> = self
            .id_columns
            .iter()
            .map(|name| {
                let texts = table.column_texts(name);
                if texts.is_none() {
                    warnings.push(format!(
                        "{}: there is no identifier column '{name}' (the model was trained \
                         with --id {name}); its cells in the predictions are left empty",
                        table.file()
                    ));
                }
                texts
            })
            .collect();
        let values = (0..table.n_rows())
            .map(|row| {
                columns
                    .iter()
                    .map(|texts| texts.and_then(|t| t.get(row)).cloned().unwrap_or_default())
                    .collect()
            })
            .collect();
        (values, warnings)
    }

    /// The training mean and standard deviation (ddof 0) used to standardise a
    /// numeric source column; `None` for other or dropped columns.
    pub fn standardisation(&self, column: &str) -> Option<(f64, f64)> {
        self.columns
            .iter()
            .find(|plan| plan.name == column)
            .and_then(|plan| match plan.encoding {
                ValueEncoding::Standardised { mean, std } => Some((mean, std)),
                _ => None,
            })
    }

    /// Class index of each row's label in column `column`.
    fn class_indices_of(&self, table: &Table, column: usize, rows: &[usize]) -> Result<Vec<u32>> {
        let texts = table.texts(column);
        let mut missing = CellList::default();
        let mut indices = Vec::with_capacity(rows.len());
        for &row in rows {
            let text = texts[row].as_str();
            if is_missing(text) {
                missing.add(table.line(row), &self.label, text);
                continue;
            }
            let index = class_index(&self.class_names, text).ok_or_else(|| {
                Error::input(format!(
                    "{}: line {}, column '{}': label '{text}' is not one of the model's classes \
                     ({})",
                    table.file(),
                    table.line(row),
                    self.label,
                    self.class_names.join(", ")
                ))
            })?;
            indices.push(index);
        }
        if !missing.is_empty() {
            return Err(Error::input(format!(
                "{}: {} without a label: {}; fill in or remove those rows (or drop the label \
                 column to predict only)",
                table.file(),
                count_of(missing.total(), "row"),
                missing.describe()
            )));
        }
        Ok(indices)
    }
}

/// Refuses missing cells in any feature column of the whole table.
fn refuse_missing(table: &Table, features: &[usize]) -> Result<()> {
    let mut missing = CellList::default();
    for row in 0..table.n_rows() {
        for &column in features {
            let text = &table.texts(column)[row];
            if is_missing(text) {
                missing.add(table.line(row), &table.column_names()[column], text);
            }
        }
    }
    if missing.is_empty() {
        return Ok(());
    }
    Err(Error::input(format!(
        "{}: {} in feature columns (empty, NA, NaN or ?): {}; fill them in, remove those rows, \
         or pass --impute to fill them from the training split",
        table.file(),
        count_of(missing.total(), "missing cell"),
        missing.describe()
    )))
}

/// A warning saying how many training cells were filled and which columns got indicators.
fn imputation_summary(
    table: &Table,
    train_rows: &[usize],
    columns: &[ColumnPlan],
) -> Option<String> {
    let with_indicator: Vec<&str> = columns
        .iter()
        .filter(|plan| plan.missing_indicator)
        .map(|plan| plan.name.as_str())
        .collect();
    let filled: usize = with_indicator
        .iter()
        .filter_map(|name| table.column_texts(name))
        .map(|texts| {
            train_rows
                .iter()
                .filter(|&&r| is_missing(&texts[r]))
                .count()
        })
        .sum();
    (filled > 0).then(|| {
        format!(
            "imputed {} in the training split (median for numbers, most frequent category \
             otherwise, learned on training rows); added a missing-indicator column for: {}",
            count_of(filled, "missing cell"),
            with_indicator.join(", ")
        )
    })
}
