//! Whole jobs built from the stages: start or resume a search on a table or images,
//! train one genome, and the final evaluation on the sealed test split.

mod compare;
mod compare_pick;
mod compare_plan;
mod compare_report;
mod data_source;
mod demo;
mod final_report;
mod finalize;
mod predict_input;
mod prepared;
mod search_job;
mod test_predictions;
mod wilson;

pub use compare::{Comparison, ComparisonEnding, ComparisonObserver, QuietComparison, RunState};
pub use compare_pick::{comparison_pick, ComparisonPick};
pub use compare_plan::{ComparePlan, ComparedStrategy, PlannedRun, COMPARISON_FILE};
pub use compare_report::{
    ComparisonReport, ReachSummary, ReportOptions, RunResult, StrategyResult, StrategyTest,
};
pub use data_source::{DataFormat, DataSource};
pub use demo::{
    baseline_genome, demo_space, run_demo, DemoOptions, DemoOutcome, DEMO_COMPARISON_DIR,
    DEMO_DATA_DIR,
};
pub use final_report::{BaselineTest, FinalReport, McNemarSummary};
pub use finalize::{finalize, FinalizeOptions, FINAL_MODEL_DIR};
pub use predict_input::read_prediction_images;
pub use prepared::{InputPreprocessor, PreparedData};
pub use search_job::{
    resume_job, FoldChoice, SearchJob, StrategyChoice, AUTO_FOLDS, AUTO_FOLD_MAX_ROWS,
};
pub use test_predictions::{test_predictions_csv, write_test_predictions, TEST_PREDICTIONS_FILE};
pub use wilson::wilson_interval;
