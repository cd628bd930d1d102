//! Whole jobs built from the stages: start or resume a search on a CSV file,
//! train one genome, and the final evaluation on the sealed test split.

mod data_source;
mod finalize;
mod search_job;
mod wilson;

pub use data_source::DataSource;
pub use finalize::{finalize, FinalReport, FinalizeOptions, FINAL_MODEL_DIR};
pub use search_job::{resume_job, SearchJob, StrategyChoice};
pub use wilson::wilson_interval;
