//! Per-channel standardisation of images, fitted on the training images only.

use serde::{Deserialize, Serialize};

use crate::data::image::{ImageShape, ImageTable};
use crate::data::labels::class_index;
use crate::{Error, Result};

/// Turns raw images into model input: `(value − channel_mean) / channel_std`
/// per channel, the statistics taken over all pixels of that channel in the
/// training images (population standard deviation, ddof 0). Saved with a
/// model and reused at prediction time.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ImagePreprocessor {
    /// Shape every input image must have.
    pub shape: ImageShape,
    /// Mean of each channel over the training images.
    pub channel_mean: Vec<f64>,
    /// Standard deviation of each channel over the training images (1 for a constant channel).
    pub channel_std: Vec<f64>,
    /// Class names, sorted; class index `i` means `class_names[i]`.
    pub class_names: Vec<String>,
    /// Where the training labels came from (e.g. "class folder names").
    pub label_source: String,
    /// `(height, width)` the training images were resized to (`--resize` on
    /// an image folder); prediction resizes images of another size read
    /// from folders the same way. Absent in `model.json` when the training
    /// images were not resized (and in models saved before this field).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub resize: Option<(u32, u32)>,
}

impl ImagePreprocessor {
    /// Fits the channel statistics on `train_rows` of `table`; returns
    /// warnings (constant channels, whose standard deviation is set to 1).
    pub(crate) fn fit(
        table: &ImageTable,
        train_rows: &[usize],
        class_names: Vec<String>,
    ) -> Result<(ImagePreprocessor, Vec<String>)> {
        let shape = table.shape;
        let plane = shape.plane();
        let images: Vec<&[f32]> = train_rows
            .iter()
            .map(|&row| table.image(row))
            .collect::<Option<_>>()
            .ok_or_else(|| Error::internal("a training row is outside the image table"))?;
        if images.is_empty() {
            return Err(Error::input(
                "the training split is empty; there is nothing to fit on",
            ));
        }
        let count = (images.len() * plane) as f64;
        let mut channel_mean = Vec::with_capacity(shape.channels);
        let mut channel_std = Vec::with_capacity(shape.channels);
        let mut warnings = Vec::new();
        for channel in 0..shape.channels {
            let values = || {
                images
                    .iter()
                    .flat_map(move |image| &image[channel * plane..(channel + 1) * plane])
                    .map(|&v| f64::from(v))
            };
            let mean = values().sum::<f64>() / count;
            let std = (values().map(|v| (v - mean) * (v - mean)).sum::<f64>() / count).sqrt();
            if std > 0.0 {
                channel_std.push(std);
            } else {
                warnings.push(format!(
                    "image channel {channel} is constant ({mean}) in the training images; it \
                     is only centred (standard deviation taken as 1)"
                ));
                channel_std.push(1.0);
            }
            channel_mean.push(mean);
        }
        let preprocessor = ImagePreprocessor {
            shape,
            channel_mean,
            channel_std,
            class_names,
            label_source: table.label_source.clone(),
            resize: table.resized_to,
        };
        Ok((preprocessor, warnings))
    }

    /// Checks that a recorded resize target is the image shape's height and
    /// width (a hand-edited `model.json` could make them disagree).
    pub fn check_resize(&self) -> Result<()> {
        match self.resize {
            Some((h, w)) if (h as usize, w as usize) != (self.shape.height, self.shape.width) => {
                Err(Error::input(format!(
                    "the image preprocessor resizes to {h}x{w} (HxW) but its image shape is {}",
                    self.shape
                )))
            }
            _ => Ok(()),
        }
    }

    /// Values per encoded image: `height · width · channels`.
    pub fn n_features(&self) -> usize {
        self.shape.n_values()
    }

    /// Standardised CHW values of the given images of `table`, one after another.
    pub(crate) fn standardise(&self, table: &ImageTable, rows: &[usize]) -> Result<Vec<f32>> {
        let plane = self.shape.plane();
        let mut out = Vec::with_capacity(rows.len() * self.n_features());
        for &row in rows {
            let image = table
                .image(row)
                .ok_or_else(|| Error::internal("an image row is outside the table"))?;
            for (position, &value) in image.iter().enumerate() {
                let channel = position / plane;
                let scaled =
                    (f64::from(value) - self.channel_mean[channel]) / self.channel_std[channel];
                out.push(scaled as f32);
            }
        }
        Ok(out)
    }

    /// Class index of every image of `table` (its labels must all be known classes).
    pub(crate) fn class_indices(&self, table: &ImageTable) -> Result<Vec<u32>> {
        table
            .label_texts
            .iter()
            .zip(&table.sources)
            .map(|(text, source)| {
                class_index(&self.class_names, text).ok_or_else(|| {
                    Error::input(format!(
                        "{}: image {source} has the class '{text}', which the model does not \
                         know; known classes: {}",
                        table.path.display(),
                        self.class_names.join(", ")
                    ))
                })
            })
            .collect()
    }

    /// Encodes every image of `table` for prediction: the standardised
    /// values (row-major, CHW per image) and, when the table has labels,
    /// their class indices.
    ///
    /// The table's shape must equal the fitted one and every label must be a
    /// known class (bad input otherwise, naming the file and what differs).
    pub fn encode(&self, table: &ImageTable) -> Result<(Vec<f32>, Option<Vec<u32>>)> {
        table.check_sizes()?;
        if table.shape != self.shape {
            let folders_only = if self.resize.is_some() {
                " (prediction resizes images read from folders, not IDX files or pixel CSV)"
            } else {
                ""
            };
            return Err(Error::input(format!(
                "{}: the images are {} (HxWxC) but the model was trained on {}; convert or \
                 resize the images to {}{folders_only}",
                table.path.display(),
                table.shape,
                self.shape,
                self.shape
            )));
        }
        let rows: Vec<usize> = (0..table.len()).collect();
        let x = self.standardise(table, &rows)?;
        let labels = if table.label_texts.is_empty() {
            None
        } else {
            Some(self.class_indices(table)?)
        };
        Ok((x, labels))
    }
}
