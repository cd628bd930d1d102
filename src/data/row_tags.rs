//! Where the rows of a part came from: each row's line in its file and its
//! identifier values, so that a part's predictions can be matched to the
//! original records (the test part keeps them behind its seal).

use std::path::{Path, PathBuf};

use crate::data::image::ImageTable;
use crate::data::Table;

/// The origin of one row.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RowTag {
    /// The 1-based line of the file where the row starts (the header is line 1);
    /// `None` for images read from a folder or IDX files, which have no lines.
    pub line: Option<u64>,
    /// The row's identifier values (trimmed cell text), one per
    /// [`RowTags::id_names`] entry.
    pub ids: Vec<String>,
}

/// The origin of every row of one part, in the part's row order.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct RowTags {
    /// The file (or image folder) the rows were read from: the data, or the test file.
    pub file: PathBuf,
    /// Names of the identifier columns: the `--id` columns of a table; `file` (the
    /// image's path relative to the folder, `/`-separated) for an image folder;
    /// `record` (1-based) for IDX files; none for a pixel CSV (its rows have lines).
    pub id_names: Vec<String>,
    /// One tag per row.
    pub rows: Vec<RowTag>,
}

impl RowTags {
    /// Number of rows.
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// True when there are no rows.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// Tags of `rows` of `table`: their lines and the texts of the columns `ids`.
    pub(crate) fn from_table(table: &Table, ids: &[usize], rows: &[usize]) -> RowTags {
        RowTags {
            file: table.path().to_path_buf(),
            id_names: ids
                .iter()
                .map(|&c| table.column_names()[c].clone())
                .collect(),
            rows: rows
                .iter()
                .map(|&row| RowTag {
                    line: table.line_of(row),
                    ids: ids
                        .iter()
                        .map(|&c| table.texts(c).get(row).cloned().unwrap_or_default())
                        .collect(),
                })
                .collect(),
        }
    }

    /// Tags of images `rows` of `table`, from their sources: a file inside the
    /// folder gives its relative path (`file`), `line N` of a pixel CSV its line,
    /// `record N` of an IDX file its record (`record`); any other source is kept
    /// as it is (`source`).
    pub(crate) fn from_images(table: &ImageTable, rows: &[usize]) -> RowTags {
        let sources: Vec<&str> = rows
            .iter()
            .map(|&r| table.sources.get(r).map_or("", String::as_str))
            .collect();
        let relative: Option<Vec<String>> = sources
            .iter()
            .map(|s| relative_path(&table.path, s))
            .collect();
        let numbered = |prefix: &str| -> Option<Vec<u64>> {
            sources
                .iter()
                .map(|s| s.strip_prefix(prefix).and_then(|n| n.parse().ok()))
                .collect()
        };
        let (id_names, rows) = if let (Some(paths), false) = (relative, sources.is_empty()) {
            (vec!["file".to_string()], tagged(None, paths))
        } else if let Some(lines) = numbered("line ") {
            let rows = lines
                .into_iter()
                .map(|line| RowTag {
                    line: Some(line),
                    ids: Vec::new(),
                })
                .collect();
            (Vec::new(), rows)
        } else if let Some(records) = numbered("record ") {
            let ids = records.iter().map(u64::to_string).collect();
            (vec!["record".to_string()], tagged(None, ids))
        } else {
            let ids = sources.iter().map(|s| s.to_string()).collect();
            (vec!["source".to_string()], tagged(None, ids))
        };
        RowTags {
            file: table.path.clone(),
            id_names,
            rows,
        }
    }
}

/// One tag per id value, each with the same `line`.
fn tagged(line: Option<u64>, ids: Vec<String>) -> Vec<RowTag> {
    ids.into_iter()
        .map(|id| RowTag {
            line,
            ids: vec![id],
        })
        .collect()
}

/// `source` relative to `root`, `/`-separated, if it lies inside it.
fn relative_path(root: &Path, source: &str) -> Option<String> {
    let inside = Path::new(source).strip_prefix(root).ok()?;
    let parts: Option<Vec<&str>> = inside
        .components()
        .map(|c| c.as_os_str().to_str())
        .collect();
    parts.filter(|p| !p.is_empty()).map(|p| p.join("/"))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::image::ImageShape;

    fn images(path: &str, sources: &[&str]) -> ImageTable {
        ImageTable {
            shape: ImageShape {
                height: 1,
                width: 1,
                channels: 1,
            },
            pixels: vec![0.0; sources.len()],
            label_texts: Vec::new(),
            sources: sources.iter().map(|s| s.to_string()).collect(),
            fingerprint: String::new(),
            path: PathBuf::from(path),
            label_source: String::new(),
            warnings: Vec::new(),
            resized_to: None,
        }
    }

    #[test]
    fn image_sources_become_relative_files_lines_or_records() {
        let folder = images(
            "data/glyphs",
            &["data/glyphs/a/1.png", "data/glyphs/b/2.png"],
        );
        let tags = RowTags::from_images(&folder, &[1]);
        assert_eq!(tags.id_names, ["file"]);
        assert_eq!(tags.rows[0].ids, ["b/2.png"]);
        assert_eq!(tags.rows[0].line, None);
        let pixel_csv = images("d.csv", &["line 2", "line 3"]);
        let tags = RowTags::from_images(&pixel_csv, &[0, 1]);
        assert!(tags.id_names.is_empty());
        assert_eq!(tags.rows[1].line, Some(3));
        let idx = images("img.idx", &["record 1", "record 2"]);
        let tags = RowTags::from_images(&idx, &[1]);
        assert_eq!(
            (tags.id_names.clone(), tags.rows[0].ids.clone()),
            (vec!["record".to_string()], vec!["2".to_string()])
        );
    }
}
