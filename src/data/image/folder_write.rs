//! Writing an image table as a folder tree of PNG files, one sub-folder per class.

use std::path::Path;

use ::image::codecs::png::PngEncoder;
use ::image::{ExtendedColorType, ImageEncoder};

use crate::data::image::table::pixels_as_bytes;
use crate::data::image::ImageTable;
use crate::{Error, Result};

/// Writes every image of `table` as an 8-bit PNG to `root/CLASS/NNNNNN.png`.
///
/// `NNNNNN` is the image's index in the table, zero-padded to at least six
/// digits, so [`crate::data::image::read_image_folder`] reads the images back
/// grouped by class (class names in byte order) and, within a class, in table
/// order. Pixel values must be whole numbers 0..=255 (they are written as
/// they are, without scaling); the shape must have 1 (gray) or 3 (RGB)
/// channels; class names must be usable as folder names. `root` must not
/// exist yet or be empty, so no stale files mix in.
pub fn write_image_folder(table: &ImageTable, root: &Path) -> Result<()> {
    table.check_sizes()?;
    let color = match table.shape.channels {
        1 => ExtendedColorType::L8,
        3 => ExtendedColorType::Rgb8,
        other => {
            return Err(Error::input(format!(
                "{}: cannot write images with {other} channels as PNG; only 1 (gray) or 3 (RGB)",
                root.display()
            )))
        }
    };
    if table.label_texts.len() != table.len() {
        return Err(Error::input(format!(
            "{}: the images have no labels; an image folder needs a class for every image",
            root.display()
        )));
    }
    for (label, source) in table.label_texts.iter().zip(&table.sources) {
        check_folder_name(label, source)?;
    }
    refuse_non_empty(root)?;
    std::fs::create_dir_all(root).map_err(|e| Error::io(root, e))?;
    let digits = table.len().saturating_sub(1).to_string().len().max(6);
    let shape = table.shape;
    let (width, height) = (shape.width as u32, shape.height as u32);
    let mut hwc = vec![0.0f32; shape.n_values()];
    for (index, (label, source)) in table.label_texts.iter().zip(&table.sources).enumerate() {
        let chw = table
            .image(index)
            .ok_or_else(|| Error::internal("image index outside the table"))?;
        shape.chw_to_hwc(chw, &mut hwc);
        let bytes = pixels_as_bytes(&hwc, source)?;
        let mut png = Vec::new();
        PngEncoder::new(&mut png)
            .write_image(&bytes, width, height, color)
            .map_err(|e| Error::internal(format!("PNG encoder: {e}")))?;
        let folder = root.join(label);
        std::fs::create_dir_all(&folder).map_err(|e| Error::io(&folder, e))?;
        let path = folder.join(format!("{index:0digits$}.png"));
        std::fs::write(&path, png).map_err(|e| Error::io(&path, e))?;
    }
    Ok(())
}

/// Refuses class names that cannot be a single folder name.
fn check_folder_name(label: &str, source: &str) -> Result<()> {
    let bad = label.is_empty()
        || label == "."
        || label == ".."
        || label.contains(['/', '\\', '\0'])
        || label.trim() != label;
    if bad {
        return Err(Error::input(format!(
            "image {source}: the class '{label}' cannot be used as a folder name; class names \
             must be non-empty, without slashes or surrounding spaces, and not '.' or '..'"
        )));
    }
    Ok(())
}

/// Refuses an existing `root` that already holds entries.
fn refuse_non_empty(root: &Path) -> Result<()> {
    let has_entries = match std::fs::read_dir(root) {
        Ok(mut entries) => entries.next().is_some(),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => false,
        Err(e) => return Err(Error::io(root, e)),
    };
    if has_entries {
        return Err(Error::input(format!(
            "{}: the folder is not empty; write the images to a new or empty folder",
            root.display()
        )));
    }
    Ok(())
}
