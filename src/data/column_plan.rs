//! How one source column becomes encoded feature columns, fitted on training rows.
//!
//! Layout per kept column: its value columns (one standardised number, or one
//! 0/1 column per training category in sorted order), then, if the column had
//! missing cells in the training rows and imputation is on, one 0/1
//! missing-indicator column (1 where the cell was missing). One-hot and
//! indicator columns are left as 0/1, not standardised.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::data::cells::{is_missing, parse_number, NumberCell};
use crate::data::ColumnKind;
use crate::{Error, Result};

/// The fitted plan for one source feature column.
#[derive(Serialize, Deserialize, Clone, Debug, PartialEq)]
pub(crate) struct ColumnPlan {
    /// Source column name.
    pub(crate) name: String,
    /// Value used in place of a missing cell; `None` when fitted without imputation.
    pub(crate) fill: Option<Fill>,
    /// How the (filled) value is encoded.
    pub(crate) encoding: ValueEncoding,
    /// Whether a 0/1 missing-indicator column follows the value columns.
    pub(crate) missing_indicator: bool,
}

/// A fill value learned on the training rows.
#[derive(Serialize, Deserialize, Clone, Debug, PartialEq)]
#[serde(tag = "kind", content = "value", rename_all = "snake_case")]
pub(crate) enum Fill {
    /// Median of the training values.
    Number(f64),
    /// Most frequent training category (ties go to the smallest name).
    Category(String),
}

/// How a column's value is encoded.
#[derive(Serialize, Deserialize, Clone, Debug, PartialEq)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub(crate) enum ValueEncoding {
    /// `(value - mean) / std`, both fitted on training rows (std with ddof 0).
    Standardised {
        /// Training mean.
        mean: f64,
        /// Training standard deviation, ddof 0, never 0.
        std: f64,
    },
    /// One 0/1 column per training category, sorted; unseen categories give all zeros.
    OneHot {
        /// The categories seen in training, sorted by bytes.
        categories: Vec<String>,
    },
    /// No value columns: the value was constant on the training rows, but some
    /// were missing, so only the missing indicator carries information.
    IndicatorOnly {
        /// Whether the source column was categorical.
        categorical: bool,
    },
}

/// What fitting one column produced.
pub(crate) enum Fitted {
    /// The column is kept with this plan, plus an optional warning.
    Kept(ColumnPlan, Option<String>),
    /// The column carries no information on the training rows; the warning says why.
    Dropped(String),
}

impl ColumnPlan {
    /// Fits the plan from the column's training cells (`texts`, already trimmed).
    pub(crate) fn fit(
        name: &str,
        kind: ColumnKind,
        texts: &[&str],
        impute: bool,
    ) -> Result<Fitted> {
        let n_missing = texts.iter().filter(|t| is_missing(t)).count();
        if n_missing == texts.len() {
            return Ok(Fitted::Dropped(format!(
                "column '{name}' has no values in the training split; dropped"
            )));
        }
        let missing_indicator = impute && n_missing > 0;
        let (fill, encoding) = match kind {
            ColumnKind::Numeric => fit_numeric(name, texts, impute)?,
            ColumnKind::Categorical => fit_categorical(texts, impute),
        };
        let plan = |encoding| ColumnPlan {
            name: name.to_string(),
            fill: fill.clone(),
            encoding,
            missing_indicator,
        };
        Ok(match (encoding, missing_indicator) {
            (Some(encoding), _) => Fitted::Kept(plan(encoding), None),
            (None, true) => Fitted::Kept(
                plan(ValueEncoding::IndicatorOnly {
                    categorical: kind == ColumnKind::Categorical,
                }),
                Some(format!(
                    "column '{name}' is constant on the training split apart from missing \
                     cells; only its missing-indicator column is kept"
                )),
            ),
            (None, false) => Fitted::Dropped(format!(
                "column '{name}' is constant on the training split; dropped"
            )),
        })
    }

    /// Number of encoded columns this plan writes.
    pub(crate) fn width(&self) -> usize {
        let values = match &self.encoding {
            ValueEncoding::Standardised { .. } => 1,
            ValueEncoding::OneHot { categories } => categories.len(),
            ValueEncoding::IndicatorOnly { .. } => 0,
        };
        values + usize::from(self.missing_indicator)
    }

    /// Names of the encoded columns: `col`, `col=category`, `col:missing`.
    pub(crate) fn encoded_names(&self) -> Vec<String> {
        let mut names = match &self.encoding {
            ValueEncoding::Standardised { .. } => vec![self.name.clone()],
            ValueEncoding::OneHot { categories } => categories
                .iter()
                .map(|c| format!("{}={c}", self.name))
                .collect(),
            ValueEncoding::IndicatorOnly { .. } => Vec::new(),
        };
        if self.missing_indicator {
            names.push(format!("{}:missing", self.name));
        }
        names
    }

    /// Whether cells of this column are read as numbers.
    pub(crate) fn is_numeric(&self) -> bool {
        match &self.encoding {
            ValueEncoding::Standardised { .. } => true,
            ValueEncoding::OneHot { .. } => false,
            ValueEncoding::IndicatorOnly { categorical } => !categorical,
        }
    }
}

/// Fewest non-missing training cells before a text column can look like an identifier.
pub(crate) const IDENTIFIER_MIN_ROWS: usize = 20;

/// A warning when a text column's training cells are nearly all distinct: at least
/// [`IDENTIFIER_MIN_ROWS`] non-missing cells, more than half of them distinct values.
/// Such a column (a name, a code, a free-text note) becomes one one-hot input per
/// value, which cannot generalise to new rows.
pub(crate) fn identifier_warning(name: &str, texts: &[&str]) -> Option<String> {
    let present: Vec<&str> = texts.iter().copied().filter(|t| !is_missing(t)).collect();
    if present.len() < IDENTIFIER_MIN_ROWS {
        return None;
    }
    let distinct = present
        .iter()
        .collect::<std::collections::BTreeSet<_>>()
        .len();
    (2 * distinct > present.len()).then(|| {
        format!(
            "column '{name}' holds {distinct} distinct texts in {} training rows, so it looks \
             like an identifier: one-hot encoding turns it into {distinct} inputs that cannot \
             generalise to new rows; pass --id {name} to carry it beside the predictions, or \
             --ignore {name} to leave it out",
            present.len()
        )
    })
}

/// Median fill (if imputing) and standardisation of a numeric column; no
/// encoding if its training values are constant.
fn fit_numeric(
    name: &str,
    texts: &[&str],
    impute: bool,
) -> Result<(Option<Fill>, Option<ValueEncoding>)> {
    let mut observed = Vec::with_capacity(texts.len());
    for text in texts {
        match parse_number(text) {
            NumberCell::Finite(value) => observed.push(value),
            NumberCell::Missing => {}
            _ => {
                return Err(Error::internal(format!(
                    "column '{name}' was typed numeric but holds '{text}'"
                )))
            }
        }
    }
    observed.sort_by(f64::total_cmp);
    let median = median_of_sorted(&observed);
    let fill = impute.then_some(Fill::Number(median));
    if observed.first() == observed.last() {
        return Ok((fill, None));
    }
    let filled: Vec<f64> = texts
        .iter()
        .map(|text| match parse_number(text) {
            NumberCell::Finite(value) => value,
            _ => median,
        })
        .collect();
    let n = filled.len() as f64;
    let mean = filled.iter().sum::<f64>() / n;
    let std = (filled.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / n).sqrt();
    if !(mean.is_finite() && std.is_finite() && std > 0.0) {
        return Err(Error::input(format!(
            "column '{name}': its values are too large to standardise (mean {mean:.3e}, std {std:.3e}); \
             rescale the column"
        )));
    }
    Ok((fill, Some(ValueEncoding::Standardised { mean, std })))
}

/// Middle value of sorted values (mean of the two middle ones for an even count).
fn median_of_sorted(values: &[f64]) -> f64 {
    let n = values.len();
    match n {
        0 => 0.0,
        _ if n % 2 == 1 => values[n / 2],
        _ => (values[n / 2 - 1] + values[n / 2]) / 2.0,
    }
}

/// Most-frequent fill (if imputing) and one-hot categories of a categorical
/// column; no encoding if only one category occurs in training.
fn fit_categorical(texts: &[&str], impute: bool) -> (Option<Fill>, Option<ValueEncoding>) {
    let mut counts: BTreeMap<&str, usize> = BTreeMap::new();
    for text in texts.iter().filter(|t| !is_missing(t)) {
        *counts.entry(text).or_default() += 1;
    }
    let mut most_frequent = ("", 0);
    for (&category, &count) in &counts {
        if count > most_frequent.1 {
            most_frequent = (category, count);
        }
    }
    let fill = impute.then(|| Fill::Category(most_frequent.0.to_string()));
    if counts.len() < 2 {
        return (fill, None);
    }
    let categories = counts.keys().map(|c| c.to_string()).collect();
    (fill, Some(ValueEncoding::OneHot { categories }))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn kept(fitted: Fitted) -> ColumnPlan {
        match fitted {
            Fitted::Kept(plan, _) => plan,
            Fitted::Dropped(why) => panic!("dropped: {why}"),
        }
    }

    #[test]
    fn numeric_fill_is_the_training_median_and_scaling_uses_filled_values() {
        let plan = kept(
            ColumnPlan::fit("x", ColumnKind::Numeric, &["1", "NA", "3", "10"], true).expect("fit"),
        );
        assert_eq!(plan.fill, Some(Fill::Number(3.0)));
        assert!(plan.missing_indicator);
        match plan.encoding {
            ValueEncoding::Standardised { mean, .. } => assert_eq!(mean, 17.0 / 4.0),
            other => panic!("unexpected {other:?}"),
        }
        assert_eq!(plan.encoded_names(), ["x", "x:missing"]);
    }

    #[test]
    fn categorical_fill_is_most_frequent_with_ties_to_the_smallest() {
        let plan = kept(
            ColumnPlan::fit(
                "c",
                ColumnKind::Categorical,
                &["b", "a", "b", "a", "c"],
                true,
            )
            .expect("fit"),
        );
        assert_eq!(plan.fill, Some(Fill::Category("a".into())));
        assert!(!plan.missing_indicator);
        assert_eq!(plan.encoded_names(), ["c=a", "c=b", "c=c"]);
    }

    #[test]
    fn nearly_distinct_text_columns_look_like_identifiers() {
        let codes: Vec<String> = (0..20).map(|i| format!("r{i}")).collect();
        let texts: Vec<&str> = codes.iter().map(String::as_str).collect();
        let warning = identifier_warning("code", &texts).expect("20 distinct of 20");
        assert!(
            warning.contains("--id code") && warning.contains("20 distinct"),
            "{warning}"
        );
        assert!(
            identifier_warning("code", &texts[..19]).is_none(),
            "19 rows are too few"
        );
        // 10 distinct of 20 is half, not more than half.
        let halves: Vec<&str> = texts.iter().map(|t| &t[..2]).collect();
        assert!(identifier_warning("code", &halves).is_none());
        let mut eleven = halves.clone();
        eleven[10] = "x";
        assert!(identifier_warning("code", &eleven).is_some());
    }

    #[test]
    fn constant_columns_are_dropped_unless_missingness_varies() {
        let constant =
            ColumnPlan::fit("k", ColumnKind::Numeric, &["2", "2", "2"], true).expect("fit");
        assert!(matches!(constant, Fitted::Dropped(ref w) if w.contains("'k'")));
        let with_gaps =
            kept(ColumnPlan::fit("k", ColumnKind::Numeric, &["2", "", "2"], true).expect("fit"));
        assert_eq!(with_gaps.encoded_names(), ["k:missing"]);
        let all_missing =
            ColumnPlan::fit("m", ColumnKind::Numeric, &["", "NA"], true).expect("fit");
        assert!(matches!(all_missing, Fitted::Dropped(_)));
    }
}
