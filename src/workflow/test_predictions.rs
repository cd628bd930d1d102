//! The predictions file of the test rows, written by the final evaluation once
//! the sealed test split is opened: one line per test row with where it came
//! from, its true class, the predicted class and the class probabilities.

use crate::data::RowTags;
use crate::train::argmax_lowest_on_ties;
use crate::{Error, Result};
use std::path::Path;

/// Suggested file name of the test rows' predictions (in the run directory).
pub const TEST_PREDICTIONS_FILE: &str = "test_predictions.csv";

/// The test predictions as CSV text (documented in `docs/data.md`).
///
/// Columns: `line` (the row's 1-based line in its file, the header being line
/// 1; present when the rows were read from a CSV file), the identifier columns
/// of `tags` under their own names, `true_class`, `predicted_class` (the most
/// probable class, the first on ties, as `predict` chooses) and one
/// `p_<class>` column per class in class order, with six decimals. Rows follow
/// `tags` (ascending line order for a table). `probabilities` is row-major,
/// one row of `class_names.len()` values per tag; `true_classes` holds one
/// class index per tag. Cells holding a comma, quote or line break are quoted.
pub fn test_predictions_csv(
    tags: &RowTags,
    class_names: &[String],
    true_classes: &[u32],
    probabilities: &[f32],
) -> Result<String> {
    let rows = tags.len();
    let k = class_names.len();
    if true_classes.len() != rows || probabilities.len() != rows * k || k == 0 {
        return Err(Error::internal(format!(
            "test predictions: {rows} tagged rows, {} true classes, {} probabilities for {k} \
             classes",
            true_classes.len(),
            probabilities.len()
        )));
    }
    let with_lines = tags.rows.iter().any(|tag| tag.line.is_some());
    let mut header: Vec<String> = Vec::new();
    if with_lines {
        header.push("line".into());
    }
    header.extend(tags.id_names.iter().map(|n| csv_cell(n)));
    header.push("true_class".into());
    header.push("predicted_class".into());
    header.extend(class_names.iter().map(|n| csv_cell(&format!("p_{n}"))));
    let mut out = header.join(",");
    out.push('\n');
    for (row, (tag, &truth)) in tags.rows.iter().zip(true_classes).enumerate() {
        let p = &probabilities[row * k..(row + 1) * k];
        let predicted = argmax_lowest_on_ties(p);
        let name = |class: usize| {
            class_names.get(class).map(|n| csv_cell(n)).ok_or_else(|| {
                Error::internal(format!("test row {row}: class index {class} of {k}"))
            })
        };
        let mut cells: Vec<String> = Vec::with_capacity(header.len());
        if with_lines {
            cells.push(tag.line.map_or(String::new(), |l| l.to_string()));
        }
        cells.extend(tag.ids.iter().map(|id| csv_cell(id)));
        cells.push(name(truth as usize)?);
        cells.push(name(predicted)?);
        cells.extend(p.iter().map(|v| format!("{v:.6}")));
        out.push_str(&cells.join(","));
        out.push('\n');
    }
    Ok(out)
}

/// Writes [`test_predictions_csv`] to `path` atomically (nothing half-written
/// on error).
pub fn write_test_predictions(
    path: &Path,
    tags: &RowTags,
    class_names: &[String],
    true_classes: &[u32],
    probabilities: &[f32],
) -> Result<()> {
    let text = test_predictions_csv(tags, class_names, true_classes, probabilities)?;
    crate::fsio::write_atomic(path, text.as_bytes())
}

/// A CSV cell: quoted (quotes doubled) when it holds a comma, a quote or a line break.
fn csv_cell(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::RowTag;

    fn names(list: &[&str]) -> Vec<String> {
        list.iter().map(|s| s.to_string()).collect()
    }

    /// Hand-written expected file (common practice, no outside source).
    #[test]
    fn rows_carry_line_ids_truth_prediction_and_probabilities() {
        let tags = RowTags {
            file: "data.csv".into(),
            id_names: names(&["patient", "visit"]),
            rows: vec![
                RowTag {
                    line: Some(3),
                    ids: names(&["p-17", "1"]),
                },
                RowTag {
                    line: Some(9),
                    ids: names(&["Doe, J.", "2"]),
                },
            ],
        };
        let classes = names(&["no", "yes"]);
        let text = test_predictions_csv(&tags, &classes, &[1, 0], &[0.25, 0.75, 0.5, 0.5])
            .expect("consistent inputs");
        assert_eq!(
            text,
            "line,patient,visit,true_class,predicted_class,p_no,p_yes\n\
             3,p-17,1,yes,yes,0.250000,0.750000\n\
             9,\"Doe, J.\",2,no,no,0.500000,0.500000\n"
        );
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join(TEST_PREDICTIONS_FILE);
        write_test_predictions(&path, &tags, &classes, &[1, 0], &[0.25, 0.75, 0.5, 0.5])
            .expect("writes");
        assert_eq!(std::fs::read_to_string(&path).expect("reads"), text);
    }

    #[test]
    fn images_without_lines_have_no_line_column_and_bad_sizes_are_refused() {
        let tags = RowTags {
            file: "glyphs".into(),
            id_names: names(&["file"]),
            rows: vec![RowTag {
                line: None,
                ids: names(&["bars/0001.png"]),
            }],
        };
        let classes = names(&["bars", "ring"]);
        let text = test_predictions_csv(&tags, &classes, &[0], &[0.1, 0.9]).expect("writes");
        assert_eq!(
            text,
            "file,true_class,predicted_class,p_bars,p_ring\n\
             bars/0001.png,bars,ring,0.100000,0.900000\n"
        );
        assert!(test_predictions_csv(&tags, &classes, &[0, 1], &[0.1, 0.9]).is_err());
        assert!(test_predictions_csv(&tags, &classes, &[0], &[0.1]).is_err());
        assert!(test_predictions_csv(&tags, &classes, &[5], &[0.1, 0.9]).is_err());
    }
}
