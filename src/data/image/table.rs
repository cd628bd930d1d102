//! The raw image table every loader returns.

use std::path::PathBuf;

use crate::data::image::ImageShape;
use crate::{Error, Result};

/// Images as loaded, before any splitting or scaling.
///
/// `pixels` holds one image after another, each in CHW order (see
/// [`ImageShape`]), with the values as stored: 0..255 for PNG, JPEG and IDX
/// files, whatever was written for pixel CSV files. Image `i` has the label
/// `label_texts[i]` and came from `sources[i]` (a file path, `"line N"` of a
/// CSV file or `"record N"` of an IDX file, 1-based). An empty `label_texts`
/// means the images carry no labels.
#[derive(Debug, Clone, PartialEq)]
pub struct ImageTable {
    /// Shape shared by every image.
    pub shape: ImageShape,
    /// All images, CHW each, `len() · shape.n_values()` values.
    pub pixels: Vec<f32>,
    /// The class text of each image (empty when unlabelled).
    pub label_texts: Vec<String>,
    /// Where each image came from, for messages.
    pub sources: Vec<String>,
    /// SHA-256 (hex) of the source bytes; each loader documents what it covers.
    pub fingerprint: String,
    /// The folder or file the images were read from.
    pub path: PathBuf,
    /// Where the labels came from (e.g. "class folder names"), for the run record.
    pub label_source: String,
    /// Things the user should know about the load (e.g. ignored files).
    pub warnings: Vec<String>,
    /// `(height, width)` the loader resized images of another size to
    /// (image folders read with a resize target); `None` when no resizing
    /// was asked for. Kept in the fitted [`super::ImagePreprocessor`], so
    /// prediction resizes new images the same way.
    pub resized_to: Option<(u32, u32)>,
}

impl ImageTable {
    /// Number of images.
    pub fn len(&self) -> usize {
        self.sources.len()
    }

    /// True when there are no images.
    pub fn is_empty(&self) -> bool {
        self.sources.is_empty()
    }

    /// The CHW values of image `i`, if there is such an image.
    pub fn image(&self, i: usize) -> Option<&[f32]> {
        let n = self.shape.n_values();
        self.pixels.get(i * n..(i + 1) * n)
    }

    /// Checks that pixels, labels and sources agree in number.
    pub fn check_sizes(&self) -> Result<()> {
        let images = self.len();
        if self.pixels.len() != images * self.shape.n_values() {
            return Err(Error::internal(format!(
                "image table {}: {} pixel values for {images} images of shape {}",
                self.path.display(),
                self.pixels.len(),
                self.shape
            )));
        }
        if !self.label_texts.is_empty() && self.label_texts.len() != images {
            return Err(Error::internal(format!(
                "image table {}: {} labels for {images} images",
                self.path.display(),
                self.label_texts.len()
            )));
        }
        Ok(())
    }
}

/// The pixel values of image `source` as bytes, refusing values that are not
/// whole numbers in 0..=255 (writers of 8-bit formats need them).
pub(crate) fn pixels_as_bytes(values: &[f32], source: &str) -> Result<Vec<u8>> {
    values
        .iter()
        .map(|&value| {
            if value.fract() == 0.0 && (0.0..=255.0).contains(&value) {
                Ok(value as u8)
            } else {
                Err(Error::input(format!(
                    "image {source}: pixel value {value} cannot be stored as an 8-bit pixel; \
                     only whole numbers 0..=255 can be written"
                )))
            }
        })
        .collect()
}
