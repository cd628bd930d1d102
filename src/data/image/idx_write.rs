//! Writing an image table as a pair of IDX files (images and labels).

use std::path::Path;

use crate::data::image::idx::{IDX_IMAGES_MAGIC, IDX_LABELS_MAGIC};
use crate::data::image::table::pixels_as_bytes;
use crate::data::image::ImageTable;
use crate::{Error, Result};

/// Writes `table` as an IDX images file (magic `0x00000803`, dimensions N, H,
/// W) and an IDX labels file (magic `0x00000801`, dimension N), in table
/// order, readable by [`crate::data::image::read_idx`].
///
/// Needs grayscale images (1 channel) with whole pixel values 0..=255 and
/// labels that are whole numbers 0..=255 (e.g. `"7"`); pixels are written
/// as they are, without scaling.
pub fn write_idx(table: &ImageTable, images_path: &Path, labels_path: &Path) -> Result<()> {
    table.check_sizes()?;
    let shape = table.shape;
    if shape.channels != 1 {
        return Err(Error::input(format!(
            "{}: IDX image files hold grayscale images; these have {} channels",
            images_path.display(),
            shape.channels
        )));
    }
    if table.label_texts.len() != table.len() {
        return Err(Error::input(format!(
            "{}: the images have no labels to write",
            labels_path.display()
        )));
    }
    let dim = |value: usize| {
        u32::try_from(value).map_err(|_| {
            Error::input(format!(
                "{}: {value} does not fit an IDX dimension (u32)",
                images_path.display()
            ))
        })
    };
    let count = dim(table.len())?;
    let mut images = Vec::with_capacity(16 + table.pixels.len());
    for word in [
        IDX_IMAGES_MAGIC,
        count,
        dim(shape.height)?,
        dim(shape.width)?,
    ] {
        images.extend_from_slice(&word.to_be_bytes());
    }
    let mut labels = Vec::with_capacity(8 + table.len());
    for word in [IDX_LABELS_MAGIC, count] {
        labels.extend_from_slice(&word.to_be_bytes());
    }
    for (index, (label, source)) in table.label_texts.iter().zip(&table.sources).enumerate() {
        let chw = table
            .image(index)
            .ok_or_else(|| Error::internal("image index outside the table"))?;
        images.extend(pixels_as_bytes(chw, source)?);
        let byte = label.trim().parse::<u8>().map_err(|_| {
            Error::input(format!(
                "image {source}: the label '{label}' is not a whole number 0..=255, which IDX \
                 label files require"
            ))
        })?;
        labels.push(byte);
    }
    std::fs::write(images_path, images).map_err(|e| Error::io(images_path, e))?;
    std::fs::write(labels_path, labels).map_err(|e| Error::io(labels_path, e))
}
