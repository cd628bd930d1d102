//! Whole jobs built from the stages: start or resume a search on a CSV file,
//! train one genome, and the final evaluation on the sealed test split.

mod compare;
mod compare_plan;
mod compare_report;
mod data_source;
mod finalize;
mod search_job;
mod wilson;

pub use compare::{Comparison, ComparisonEnding, ComparisonObserver, QuietComparison, RunState};
pub use compare_plan::{ComparePlan, ComparedStrategy, PlannedRun, COMPARISON_FILE};
pub use compare_report::{
    ComparisonReport, ReachSummary, ReportOptions, RunResult, StrategyResult, StrategyTest,
};
pub use data_source::DataSource;
pub use finalize::{finalize, FinalReport, FinalizeOptions, FINAL_MODEL_DIR};
pub use search_job::{resume_job, SearchJob, StrategyChoice};
pub use wilson::wilson_interval;
