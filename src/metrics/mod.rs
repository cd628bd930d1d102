//! Verdicts on small data: a full classification report, McNemar's exact
//! test, "balanced" class weights, stratified k-fold assignment and the
//! one-standard-error rule for picking among cross-validated candidates.
//!
//! Every rule here follows a named outside definition (scikit-learn, SciPy,
//! Breiman et al. 1984); the module docs of each file say which, and
//! `tests/metrics_reference.rs` checks the numbers against
//! `tests/fixtures/metrics_fixture.json` (made with scikit-learn 1.9.1).

mod class_weight;
mod classification;
mod folds;
mod mcnemar;
mod standard_error;

pub use class_weight::balanced_class_weights;
pub use classification::{ClassReport, ClassScores};
pub use folds::stratified_folds;
pub use mcnemar::mcnemar_exact_p_value;
pub use standard_error::{
    mean_and_standard_error, one_standard_error_pick, plain_pick, MeanAndError, PickCandidate,
};
