//! The CPU trainer and the validation scores.
//!
//! [`train`] turns a genome and data into a [`TrainOutcome`]; [`score`] and
//! [`Objective`] rate predictions. The optimiser steps ([`adam_step`],
//! [`sgd_momentum_step`]) and [`compute_gradients`] are public so tests and
//! tools can check single steps against reference numbers.

mod adam;
mod batches;
mod evaluate;
mod gradients;
mod model;
mod model_file;
mod objective;
mod optimizer;
mod scores;
mod settings;
mod sgd;
mod streams;
mod trainer;

pub use adam::{adam_step, AdamSettings};
pub use gradients::{compute_gradients, Gradients};
pub use model::TrainedModel;
pub use objective::Objective;
pub use optimizer::OptimizerState;
pub use scores::{score, Scores};
pub use settings::{TrainOutcome, TrainSettings, TrainStatus};
pub use sgd::{sgd_momentum_step, SGD_MOMENTUM};
pub use trainer::train;
