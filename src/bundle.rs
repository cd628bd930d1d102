//! A saved model: weights (safetensors) plus everything needed to predict
//! from raw CSV rows or image files (genome, preprocessing, class names) in JSON.

use crate::data::image::ImagePreprocessor;
use crate::data::{read_table, CsvOptions, Preprocessor};
use crate::genome::AnyGenome;
use crate::model::TrainedNetwork;
use crate::workflow::InputPreprocessor;
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::path::Path;

#[path = "bundle_files.rs"]
pub mod files;

use files::{save_model_folder, ModelFolder};

/// File name of the weights in model folders of format 1; format 2 names a
/// content-addressed weights file in `model.json` (see [`files`]).
pub const WEIGHTS_FILE: &str = files::LEGACY_WEIGHTS_FILE;
/// File name of the description inside a model folder.
pub const DESCRIPTION_FILE: &str = files::DESCRIPTION_FILE;
/// Version of the model description format this gemmule writes (it reads
/// this and every older one). 2: the weights file is named in `model.json`.
pub const MODEL_FORMAT: u32 = 2;
/// Bytes a weights file may have beyond 8 per parameter (tensor names and
/// shapes; 8 per parameter leaves room for batch-norm running statistics).
const WEIGHTS_HEADER_ALLOWANCE: u64 = 1 << 20;

/// The JSON half of a saved model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelDescription {
    /// Format version ([`MODEL_FORMAT`]).
    pub format: u32,
    /// The gemmule version that saved it.
    pub tool_version: String,
    /// The architecture and training genes (a layer or cell genome).
    pub genome: AnyGenome,
    /// Encoded input features.
    pub n_inputs: usize,
    /// Classes (outputs).
    pub n_classes: usize,
    /// Preprocessing fitted on the training rows of a table; predicts from
    /// raw CSV rows. Absent for image models.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub preprocessor: Option<Preprocessor>,
    /// Channel standardisation and shape fitted on training images; absent
    /// for table models.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub image_preprocessor: Option<ImagePreprocessor>,
    /// How the model came to be (data fingerprint, seed, epochs, scores, …).
    pub provenance: serde_json::Value,
}

/// A trained model with its preprocessing, ready to predict or to save.
#[derive(Debug, Clone)]
pub struct ModelBundle {
    /// What the JSON file holds.
    pub description: ModelDescription,
    /// The trained network.
    pub model: TrainedNetwork,
}

/// Predictions for a table's rows.
#[derive(Debug, Clone, PartialEq)]
pub struct Predictions {
    /// Class names, in output order.
    pub class_names: Vec<String>,
    /// Predicted class index per row.
    pub classes: Vec<u32>,
    /// Row-major class probabilities.
    pub probabilities: Vec<f32>,
    /// True labels, when the table had the label column.
    pub labels: Option<Vec<u32>>,
    /// Problems tolerated while encoding (e.g. unseen categories).
    pub warnings: Vec<String>,
    /// Where each predicted image came from (its file, or its line in a
    /// pixel CSV); empty for table rows.
    pub sources: Vec<String>,
    /// Names of the identifier columns the model was trained with (`--id`);
    /// empty for images and for models without them.
    pub id_names: Vec<String>,
    /// Each row's identifier values, in `id_names` order (empty when
    /// `id_names` is).
    pub ids: Vec<Vec<String>>,
}

impl ModelBundle {
    /// Bundles a trained model with its preprocessing.
    pub fn new(
        genome: AnyGenome,
        model: TrainedNetwork,
        preprocessor: InputPreprocessor,
        provenance: serde_json::Value,
    ) -> Self {
        let (preprocessor, image_preprocessor) = match preprocessor {
            InputPreprocessor::Table(p) => (Some(p), None),
            InputPreprocessor::Image(p) => (None, Some(p)),
        };
        ModelBundle {
            description: ModelDescription {
                format: MODEL_FORMAT,
                tool_version: env!("CARGO_PKG_VERSION").to_string(),
                genome,
                n_inputs: model.n_inputs(),
                n_classes: model.n_classes(),
                preprocessor,
                image_preprocessor,
                provenance,
            },
            model,
        }
    }

    /// The preprocessing saved with the model.
    pub fn input_preprocessor(&self) -> Result<InputPreprocessor> {
        self.description.input_preprocessor()
    }

    /// Saves into folder `dir` (created if needed), crash-safely: the weights
    /// go to a content-addressed file first, then `model.json`, which names
    /// it, is replaced atomically; an interrupted save leaves the previous
    /// model complete (see [`files`]).
    pub fn save(&self, dir: &Path) -> Result<()> {
        let description = serde_json::to_value(&self.description)
            .map_err(|e| Error::internal(format!("model description: {e}")))?;
        save_model_folder(dir, description, |temp| self.model.save_safetensors(temp))?;
        Ok(())
    }

    /// Loads a model folder written by [`ModelBundle::save`] (or by an older
    /// gemmule, format 1), checking the weights file's size against the
    /// genome and its SHA-256 against `model.json`.
    pub fn load(dir: &Path) -> Result<Self> {
        let folder = ModelFolder::open(dir, MODEL_FORMAT)?;
        let json_path = folder.description_path();
        let description: ModelDescription = folder.parse_description()?;
        let pre = description
            .input_preprocessor()
            .map_err(|e| Error::input(format!("{}: {e}", json_path.display())))?;
        if let Some(image) = &description.image_preprocessor {
            image
                .check_resize()
                .map_err(|e| Error::input(format!("{}: {e}", json_path.display())))?;
        }
        if description.n_inputs != pre.n_features()
            || description.n_classes != pre.class_names().len()
        {
            return Err(Error::input(format!(
                "{}: n_inputs/n_classes ({}/{}) disagree with the preprocessing ({}/{})",
                json_path.display(),
                description.n_inputs,
                description.n_classes,
                pre.n_features(),
                pre.class_names().len()
            )));
        }
        let layout = pre.layout();
        let cost = crate::model::genome_cost(&description.genome, &layout, description.n_classes)
            .map_err(|e| Error::input(format!("{}: {e}", json_path.display())))?;
        let max_bytes = cost
            .params
            .saturating_mul(8)
            .saturating_add(WEIGHTS_HEADER_ALLOWANCE);
        folder.check_weights(max_bytes)?;
        let model = TrainedNetwork::load_safetensors(
            folder.weights_path(),
            &description.genome,
            &layout,
            description.n_classes,
        )?;
        Ok(ModelBundle { description, model })
    }

    /// Predicts every row of the CSV file at `path`, which must have the
    /// training features (by name); the label column is optional.
    pub fn predict_csv(&self, path: &Path, delimiter: Option<u8>) -> Result<Predictions> {
        let Some(pre) = &self.description.preprocessor else {
            return Err(Error::input(format!(
                "{}: this model was trained on images; predict from images: --data DIR, --data IMAGES --idx-labels LABELS, or a CSV of pixel columns",
                path.display()
            )));
        };
        let options = CsvOptions {
            // Columns are found by name; the label column may be absent.
            label: None,
            delimiter,
            impute: pre.imputes(),
        };
        let table = read_table_for_prediction(path, &options)?;
        let encoded = pre.encode_for_prediction(&table)?;
        let rows = encoded.x.len().checked_div(encoded.n_features).unwrap_or(0);
        let probabilities = self.model.predict_proba(&encoded.x, rows)?;
        let classes = self.model.predict_classes(&encoded.x, rows)?;
        let (ids, id_warnings) = if pre.id_columns().is_empty() {
            (Vec::new(), Vec::new())
        } else {
            pre.id_values(&table)
        };
        let mut warnings = encoded.warnings;
        warnings.extend(id_warnings);
        Ok(Predictions {
            class_names: pre.class_names().to_vec(),
            classes,
            probabilities,
            labels: encoded.labels,
            warnings,
            sources: Vec::new(),
            id_names: pre.id_columns().to_vec(),
            ids,
        })
    }
}

impl ModelDescription {
    /// The saved preprocessing: exactly one of the table and image forms.
    pub fn input_preprocessor(&self) -> Result<InputPreprocessor> {
        match (&self.preprocessor, &self.image_preprocessor) {
            (Some(p), None) => Ok(InputPreprocessor::Table(p.clone())),
            (None, Some(p)) => Ok(InputPreprocessor::Image(p.clone())),
            (Some(_), Some(_)) => Err(Error::input(
                "the model description holds both a table and an image preprocessor; keep one",
            )),
            (None, None) => Err(Error::input(
                "the model description holds no preprocessor (`preprocessor` or `image_preprocessor`)",
            )),
        }
    }
}

impl ModelBundle {
    /// Predicts every image of `table` (read with the loaders of
    /// [`crate::data::image`]); it must have the training shape. Labels are
    /// returned when the images carry known class names.
    pub fn predict_images(&self, table: &crate::data::image::ImageTable) -> Result<Predictions> {
        let Some(pre) = &self.description.image_preprocessor else {
            return Err(Error::input(format!(
                "{}: this model was trained on a table; predict from a CSV file",
                table.path.display()
            )));
        };
        let (x, labels) = pre.encode(table)?;
        let rows = table.len();
        let probabilities = self.model.predict_proba(&x, rows)?;
        let classes = self.model.predict_classes(&x, rows)?;
        Ok(Predictions {
            class_names: pre.class_names.clone(),
            classes,
            probabilities,
            labels,
            warnings: table.warnings.clone(),
            sources: table.sources.clone(),
            id_names: Vec::new(),
            ids: Vec::new(),
        })
    }
}

fn read_table_for_prediction(path: &Path, options: &CsvOptions) -> Result<crate::data::Table> {
    read_table(path, options)
}
