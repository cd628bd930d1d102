//! A prepared, numeric dataset: what the trainer consumes.

/// Rows of prepared features (row-major `f32`) with their class indices.
///
/// Features are already encoded and scaled (see [`crate::data::Preprocessor`]);
/// labels are indices into the class names kept by the preprocessor.
#[derive(Debug, Clone, PartialEq)]
pub struct Dataset {
    /// Row-major features, `len() * n_features` values.
    pub x: Vec<f32>,
    /// One class index per row, each `< n_classes`.
    pub y: Vec<u32>,
    /// Number of feature columns after encoding.
    pub n_features: usize,
    /// Number of classes of the task (not only those present in this part).
    pub n_classes: usize,
}

impl Dataset {
    /// Builds a dataset, checking that the sizes agree.
    pub fn new(
        x: Vec<f32>,
        y: Vec<u32>,
        n_features: usize,
        n_classes: usize,
    ) -> crate::Result<Self> {
        if n_features == 0 || x.len() != y.len() * n_features {
            return Err(crate::Error::internal(format!(
                "dataset shape mismatch: {} values for {} rows of {} features",
                x.len(),
                y.len(),
                n_features
            )));
        }
        if let Some(bad) = y.iter().find(|&&c| c as usize >= n_classes) {
            return Err(crate::Error::internal(format!(
                "class index {bad} out of range for {n_classes} classes"
            )));
        }
        Ok(Dataset {
            x,
            y,
            n_features,
            n_classes,
        })
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.y.len()
    }

    /// True when there are no rows.
    pub fn is_empty(&self) -> bool {
        self.y.is_empty()
    }

    /// The features of row `i`.
    pub fn row(&self, i: usize) -> &[f32] {
        &self.x[i * self.n_features..(i + 1) * self.n_features]
    }

    /// A new dataset holding the given rows, in the given order.
    pub fn subset(&self, rows: &[usize]) -> Dataset {
        let mut x = Vec::with_capacity(rows.len() * self.n_features);
        let mut y = Vec::with_capacity(rows.len());
        for &r in rows {
            x.extend_from_slice(self.row(r));
            y.push(self.y[r]);
        }
        Dataset {
            x,
            y,
            n_features: self.n_features,
            n_classes: self.n_classes,
        }
    }

    /// Appends the rows of `other` (same feature and class counts) after this one's.
    pub fn concat(&self, other: &Dataset) -> Dataset {
        let mut out = self.clone();
        out.x.extend_from_slice(&other.x);
        out.y.extend_from_slice(&other.y);
        out
    }
}
