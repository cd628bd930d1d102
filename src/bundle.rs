//! A saved model: weights (safetensors) plus everything needed to predict
//! from raw CSV rows (genome, preprocessing, class names) in JSON.

use crate::data::{read_table, CsvOptions, Preprocessor};
use crate::fsio::{commit_temp, temp_sibling, write_atomic};
use crate::genome::LayerGenome;
use crate::train::TrainedModel;
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::path::Path;

/// File name of the weights inside a model folder.
pub const WEIGHTS_FILE: &str = "model.safetensors";
/// File name of the description inside a model folder.
pub const DESCRIPTION_FILE: &str = "model.json";
/// Version of the model description format this gemmule writes and reads.
pub const MODEL_FORMAT: u32 = 1;
/// Largest model description read (a guard against hostile files).
const MAX_DESCRIPTION_BYTES: u64 = 64 << 20;

/// The JSON half of a saved model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelDescription {
    /// Format version ([`MODEL_FORMAT`]).
    pub format: u32,
    /// The gemmule version that saved it.
    pub tool_version: String,
    /// The architecture and training genes.
    pub genome: LayerGenome,
    /// Encoded input features.
    pub n_inputs: usize,
    /// Classes (outputs).
    pub n_classes: usize,
    /// Preprocessing fitted on the training rows; predicts from raw CSV rows.
    pub preprocessor: Preprocessor,
    /// How the model came to be (data fingerprint, seed, epochs, scores, …).
    pub provenance: serde_json::Value,
}

/// A trained model with its preprocessing, ready to predict or to save.
#[derive(Debug, Clone)]
pub struct ModelBundle {
    /// What the JSON file holds.
    pub description: ModelDescription,
    /// The network weights.
    pub model: TrainedModel,
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
}

impl ModelBundle {
    /// Bundles a trained model with its preprocessing.
    pub fn new(
        model: TrainedModel,
        preprocessor: Preprocessor,
        provenance: serde_json::Value,
    ) -> Self {
        ModelBundle {
            description: ModelDescription {
                format: MODEL_FORMAT,
                tool_version: env!("CARGO_PKG_VERSION").to_string(),
                genome: model.genome.clone(),
                n_inputs: model.n_inputs,
                n_classes: model.n_classes,
                preprocessor,
                provenance,
            },
            model,
        }
    }

    /// Saves into folder `dir` (created if needed). Each file is replaced
    /// atomically, weights first, so an interrupted save leaves the previous
    /// model readable.
    pub fn save(&self, dir: &Path) -> Result<()> {
        std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
        let weights = dir.join(WEIGHTS_FILE);
        let temp = temp_sibling(&weights);
        self.model.save_safetensors(&temp)?;
        readable_by_all(&temp)?;
        commit_temp(&temp, &weights)?;
        let json = serde_json::to_vec_pretty(&self.description)
            .map_err(|e| Error::internal(format!("model description: {e}")))?;
        write_atomic(&dir.join(DESCRIPTION_FILE), &json)
    }

    /// Loads a model folder written by [`ModelBundle::save`].
    pub fn load(dir: &Path) -> Result<Self> {
        let json_path = dir.join(DESCRIPTION_FILE);
        let weights_path = dir.join(WEIGHTS_FILE);
        for path in [&json_path, &weights_path] {
            if !path.is_file() {
                return Err(Error::input(format!(
                    "{}: missing; a model folder holds {DESCRIPTION_FILE} and {WEIGHTS_FILE} (made by `gemmule train` or `gemmule finalize`)",
                    path.display()
                )));
            }
        }
        let size = std::fs::metadata(&json_path)
            .map_err(|e| Error::io(&json_path, e))?
            .len();
        if size > MAX_DESCRIPTION_BYTES {
            return Err(Error::input(format!(
                "{}: {size} bytes is larger than any model description ({MAX_DESCRIPTION_BYTES} bytes at most)",
                json_path.display()
            )));
        }
        let text = std::fs::read_to_string(&json_path).map_err(|e| Error::io(&json_path, e))?;
        let probe: serde_json::Value = serde_json::from_str(&text).map_err(|e| {
            Error::input(format!(
                "{}:{}:{}: not valid JSON: {e}",
                json_path.display(),
                e.line(),
                e.column()
            ))
        })?;
        if let Some(format) = probe.get("format").and_then(|f| f.as_u64()) {
            if format > u64::from(MODEL_FORMAT) {
                return Err(Error::input(format!(
                    "{}: model format {format} was written by a newer gemmule ({}); upgrade gemmule to read it",
                    json_path.display(),
                    probe.get("tool_version").and_then(|v| v.as_str()).unwrap_or("unknown version")
                )));
            }
        }
        let description: ModelDescription = serde_json::from_str(&text).map_err(|e| {
            Error::input(format!(
                "{}:{}:{}: not a gemmule model description: {e}",
                json_path.display(),
                e.line(),
                e.column()
            ))
        })?;
        if description.n_inputs != description.preprocessor.n_features()
            || description.n_classes != description.preprocessor.class_names().len()
        {
            return Err(Error::input(format!(
                "{}: n_inputs/n_classes ({}/{}) disagree with the preprocessing ({}/{})",
                json_path.display(),
                description.n_inputs,
                description.n_classes,
                description.preprocessor.n_features(),
                description.preprocessor.class_names().len()
            )));
        }
        let model = TrainedModel::load_safetensors(
            &weights_path,
            description.genome.clone(),
            description.n_inputs,
            description.n_classes,
        )?;
        Ok(ModelBundle { description, model })
    }

    /// Predicts every row of the CSV file at `path`, which must have the
    /// training features (by name); the label column is optional.
    pub fn predict_csv(&self, path: &Path, delimiter: Option<u8>) -> Result<Predictions> {
        let pre = &self.description.preprocessor;
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
        Ok(Predictions {
            class_names: pre.class_names().to_vec(),
            classes,
            probabilities,
            labels: encoded.labels,
            warnings: encoded.warnings,
        })
    }
}

/// Gives a file the usual 0644 permissions (the tensor writer creates 0600).
fn readable_by_all(path: &Path) -> Result<()> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(path, std::fs::Permissions::from_mode(0o644))
            .map_err(|e| Error::io(path, e))?;
    }
    Ok(())
}

fn read_table_for_prediction(path: &Path, options: &CsvOptions) -> Result<crate::data::Table> {
    read_table(path, options)
}
