//! Search: strategies that propose genomes, the evaluator seam, the
//! deterministic parallel scheduler and the run journal.
//!
//! A run directory holds `journal.jsonl` (byte-deterministic: header,
//! evaluations, test openings), `timings.jsonl` (everything time-dependent)
//! and `lock` (the owner's pid while a process works on the run).

mod aging;
mod baseline_gap;
mod budget;
mod evaluation;
mod journal;
mod journal_read;
mod lock;
mod observer;
mod pick;
mod plan;
mod pool;
mod random;
mod records;
mod run;
mod scheduler;
pub mod seeds;
mod strategy;
mod summary;
mod timings;
mod verdict;

pub use aging::{AgingEvolution, AgingSettings};
pub use baseline_gap::BaselineGap;
pub use budget::{default_population, default_sample_size, Budget};
pub use evaluation::{EvalStatus, Evaluation, Evaluator, FoldResult, FoldScores};
pub use journal::{plain_sink, Journal, JournalContents, JournalSink, SinkFactory, JOURNAL_FILE};
pub use lock::{RunLock, LOCK_FILE};
pub use observer::{QuietObserver, SearchObserver};
pub use pick::{pick, PickRule, Picked};
pub use plan::{check_same_run, SearchPlan};
pub use random::RandomSampling;
pub use records::storable;
pub use records::{
    BaselineRecord, EvaluationRecord, RunHeader, StrategyInfo, JOURNAL_FORMAT, LINEAR_BASELINE,
    MAJORITY_BASELINE, TOOL_VERSION,
};
pub use run::{
    resume_search, resume_search_with_sink, run_search, run_search_with_sink, SearchContext,
    SearchEnding, SearchOutcome,
};
pub use strategy::{compare_objectives, Proposal, Strategy};
pub use summary::RunSummary;
pub use timings::{TimingEntry, TimingLog, TIMINGS_FILE};
pub use verdict::{GapSummary, RunVerdict, VerdictEntry};
