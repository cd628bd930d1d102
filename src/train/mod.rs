//! The CPU trainer and the validation scores.
//!
//! [`train`] turns a genome and data into a [`TrainOutcome`]; [`score`] and
//! [`Objective`] rate predictions. The optimiser steps ([`adam_step`],
//! [`sgd_momentum_step`]) and [`compute_gradients`] are public so tests and
//! tools can check single steps against reference numbers.
//!
//! # Learners
//! The epoch loop ([`fit`]: seeded shuffles, mini-batches, per-epoch dropout
//! streams, validation loss, early stopping with best-weight restore,
//! divergence, scores) is written once against the [`Learner`] trait:
//! - [`FastMlpLearner`] trains layer-genome MLPs on preallocated buffers
//!   with hand-written passes; [`train`] uses it.
//! - [`AutogradLearner`] trains any candle network through autograd and the
//!   same optimiser code. To train a new kind of network (conv, cells),
//!   implement [`AutogradNetwork`] for it — `forward(&Tensor, train, rng)`,
//!   its `Var`s and one weight-decay flag per `Var` — wrap it in
//!   `AutogradLearner::new(network, &genes)` and call [`fit`]. Dropout and
//!   other randomness must come from the `rng` passed to `forward` (the
//!   epoch's seeded stream) so runs stay bit-identical.

mod adam;
mod autograd_learner;
mod batches;
mod curve_cut;
mod evaluate;
mod fast_mlp;
mod fit;
mod gradients;
mod input_checks;
mod learner;
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
pub use autograd_learner::{AutogradLearner, AutogradNetwork};
pub use curve_cut::{first_cut_epoch, CurveCut, CurveWatch, CutVerdict, SLOPE_WINDOW};
pub(crate) use evaluate::softmax_rows;
pub use fast_mlp::{matmul_row_major, FastMlpLearner, PhaseTimes};
pub use fit::{fit, fit_with_cut, FitOutcome};
pub use gradients::{compute_gradients, compute_weighted_gradients, Gradients};
pub use learner::{Learner, Snapshot};
pub use model::TrainedModel;
pub use objective::Objective;
pub use optimizer::OptimizerState;
pub(crate) use scores::argmax_lowest_on_ties;
pub use scores::{score, Scores};
pub use settings::{TrainOutcome, TrainSettings, TrainStatus, Watch};
pub use sgd::{sgd_momentum_step, SGD_MOMENTUM};
pub use trainer::{train, train_with_cut, train_with_engine, TrainEngine};
