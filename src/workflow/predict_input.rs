//! Reading the images a saved image model is asked to predict.

use super::data_source::{read_images_at, DataFormat};
use crate::data::image::{to_channels, ImagePreprocessor, ImageTable, IMAGE_EXTENSIONS};
use crate::data::CsvOptions;
use crate::{Error, Result};
use std::path::{Path, PathBuf};

/// Reads images for prediction with a model whose image preprocessing is
/// `pre`: `idx_labels` makes `path` an IDX images file; a folder holding
/// class sub-folders is read as a labelled image folder (converted to the
/// model's channel count); a folder holding image files directly gives
/// unlabelled images (sorted by file name); any other file is a CSV of pixel
/// columns plus a label column.
///
/// When the training images were resized (`pre.resize`), images read from
/// a folder (either layout) that have another size are resized to it with
/// the function the training folder went through, so they reach the network
/// as the training images did. IDX files and pixel CSV are not resized.
pub fn read_prediction_images(
    path: &Path,
    pre: &ImagePreprocessor,
    idx_labels: Option<&Path>,
    csv: &CsvOptions,
) -> Result<ImageTable> {
    let shape = pre.shape;
    let channels = u8::try_from(shape.channels).ok();
    let format = match idx_labels {
        Some(labels) => DataFormat::Idx {
            labels: labels.to_path_buf(),
        },
        None if path.is_dir() => {
            if image_files(path)?.is_empty() {
                DataFormat::ImageFolder {
                    channels,
                    resize: pre.resize,
                }
            } else {
                return read_flat_folder(path, pre);
            }
        }
        None => DataFormat::PixelCsv { shape },
    };
    read_images_at(path, &format, csv)
}

/// Image files directly inside `dir`, sorted by name.
fn image_files(dir: &Path) -> Result<Vec<PathBuf>> {
    let mut files = Vec::new();
    for entry in std::fs::read_dir(dir).map_err(|e| Error::io(dir, e))? {
        let path = entry.map_err(|e| Error::io(dir, e))?.path();
        let is_image = path
            .extension()
            .and_then(|e| e.to_str())
            .is_some_and(|e| IMAGE_EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()));
        if is_image && path.is_file() {
            files.push(path);
        }
    }
    files.sort();
    Ok(files)
}

/// Unlabelled images directly inside `dir`, each of the model's shape
/// (after resizing, when the training images were resized).
fn read_flat_folder(dir: &Path, pre: &ImagePreprocessor) -> Result<ImageTable> {
    let shape = pre.shape;
    let files = image_files(dir)?;
    let mut pixels = Vec::with_capacity(files.len() * shape.n_values());
    let mut sources = Vec::with_capacity(files.len());
    for file in &files {
        let image = ::image::open(file)
            .map_err(|e| Error::input(format!("{}: cannot read the image: {e}", file.display())))?;
        if !matches!(shape.channels, 1 | 3) {
            return Err(Error::input(format!(
                "the model reads images with {} channels; only 1 or 3 can be read from image files",
                shape.channels
            )));
        }
        let (hwc, h, w) = to_channels(image, shape.channels, pre.resize);
        if (h as usize, w as usize) != (shape.height, shape.width) {
            return Err(Error::input(format!(
                "{}: the image is {h}x{w} (HxW) but the model reads {}x{}; resize it first",
                file.display(),
                shape.height,
                shape.width
            )));
        }
        let hwc: Vec<f32> = hwc.into_iter().map(f32::from).collect();
        let mut chw = vec![0.0f32; shape.n_values()];
        shape.hwc_to_chw(&hwc, &mut chw);
        pixels.extend(chw);
        sources.push(
            file.file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_default(),
        );
    }
    Ok(ImageTable {
        shape,
        pixels,
        label_texts: Vec::new(),
        sources,
        fingerprint: String::new(),
        path: dir.to_path_buf(),
        label_source: "none (unlabelled images)".into(),
        warnings: Vec::new(),
        resized_to: pre.resize,
    })
}
