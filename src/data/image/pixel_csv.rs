//! Reading images stored one per CSV row: pixel columns plus a label column.

use std::path::Path;

use crate::data::cells::{parse_number, NumberCell};
use crate::data::image::{ImageShape, ImageTable};
use crate::data::{read_table, CsvOptions};
use crate::{Error, Result};

/// Reads a CSV file with one image per row: every column but the label is a
/// pixel, the label column (last, or `options.label`) holds the class.
///
/// Pixel columns are taken in file order as the flat HWC layout: row by row,
/// column by column, and for `C > 1` the channels of each pixel interleaved
/// (`r0c0ch0, r0c0ch1, …`); for `C = 1` this is the `pixel_R_C` order of
/// scikit-learn's digits CSV. Values are kept as written and reordered to
/// CHW. Parsing follows [`read_table`] (header, delimiter, line checks).
/// Image `i` has source `"line N"`, the file line of its row; the fingerprint
/// is the SHA-256 of the file's bytes. Errors (bad input): a pixel column
/// count other than `H·W·C` (naming both), and a pixel cell that is missing
/// or not a finite number (naming line, column and text).
pub fn read_pixel_csv(path: &Path, shape: ImageShape, options: &CsvOptions) -> Result<ImageTable> {
    let shape = ImageShape::new(shape.height, shape.width, shape.channels)?;
    let table = read_table(path, options)?;
    let file = path.display();
    let label = table.label_index();
    let columns: Vec<usize> = (0..table.column_names().len())
        .filter(|&c| c != label)
        .collect();
    if columns.len() != shape.n_values() {
        return Err(Error::input(format!(
            "{file}: {} pixel columns (all columns but the label '{}'), but the image shape \
             {shape} needs {} = {}·{}·{}; check --image-shape and the label column",
            columns.len(),
            table.label_name(),
            shape.n_values(),
            shape.height,
            shape.width,
            shape.channels
        )));
    }
    let rows = table.n_rows();
    let n = shape.n_values();
    let mut hwc = vec![0.0f32; rows * n];
    for (position, &column) in columns.iter().enumerate() {
        for (row, text) in table.texts(column).iter().enumerate() {
            hwc[row * n + position] = match parse_number(text) {
                NumberCell::Finite(value) if (value as f32).is_finite() => value as f32,
                _ => {
                    return Err(Error::input(format!(
                        "{file}: line {}, column '{}': '{text}' is not a pixel value; every \
                         pixel cell must hold a finite number",
                        table.line(row),
                        table.column_names()[column]
                    )))
                }
            };
        }
    }
    let mut pixels = vec![0.0f32; rows * n];
    for (from, to) in hwc.chunks_exact(n).zip(pixels.chunks_exact_mut(n)) {
        shape.hwc_to_chw(from, to);
    }
    Ok(ImageTable {
        shape,
        pixels,
        label_texts: table.label_texts().to_vec(),
        sources: (0..rows)
            .map(|row| format!("line {}", table.line(row)))
            .collect(),
        fingerprint: table.fingerprint().to_string(),
        path: path.to_path_buf(),
        label_source: format!("CSV column '{}'", table.label_name()),
        warnings: Vec::new(),
        resized_to: None,
    })
}
