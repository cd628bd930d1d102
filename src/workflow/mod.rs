//! Whole jobs built from the stages: start or resume a search on a table or images,
//! train one genome, and the final evaluation on the sealed test split.

mod compare;
mod compare_plan;
mod compare_report;
mod data_source;
mod demo;
mod finalize;
mod predict_input;
mod prepared;
mod search_job;
mod wilson;

pub use compare::{Comparison, ComparisonEnding, ComparisonObserver, QuietComparison, RunState};
pub use compare_plan::{ComparePlan, ComparedStrategy, PlannedRun, COMPARISON_FILE};
pub use compare_report::{
    ComparisonReport, ReachSummary, ReportOptions, RunResult, StrategyResult, StrategyTest,
};
pub use data_source::{DataFormat, DataSource};
pub use demo::{
    baseline_genome, demo_space, run_demo, DemoOptions, DemoOutcome, DEMO_BASELINE_DIR,
    DEMO_COMPARISON_DIR, DEMO_DATA_DIR,
};
pub use finalize::{finalize, FinalReport, FinalizeOptions, FINAL_MODEL_DIR};
pub use predict_input::read_prediction_images;
pub use prepared::{InputPreprocessor, PreparedData};
pub use search_job::{resume_job, SearchJob, StrategyChoice};
pub use wilson::wilson_interval;
