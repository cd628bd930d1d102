//! Starting and resuming a search in a run directory.

use super::evaluation::Evaluator;
use super::journal::{plain_sink, Journal, JournalContents, SinkFactory};
use super::lock::RunLock;
use super::observer::SearchObserver;
use super::plan::{check_same_run, SearchPlan};
use super::records::{JOURNAL_FORMAT, TOOL_VERSION};
use super::scheduler::{Driver, SessionFiles};
use super::strategy::Strategy;
use super::timings::{unix_now, TimingEntry, TimingLog};
use crate::genome::SearchSpace;
use crate::{Error, Result};
use std::path::Path;
use std::sync::atomic::AtomicBool;
use std::sync::Arc;

/// The moving parts of a search session.
pub struct SearchContext<'a, S: SearchSpace, E> {
    /// The search space (ids and validation of proposals).
    pub space: &'a S,
    /// Scores candidates on the worker threads.
    pub evaluator: Arc<E>,
    /// Proposes candidates; for a resume, freshly built with the run's settings.
    pub strategy: &'a mut dyn Strategy<S::Genome>,
    /// Receives progress.
    pub observer: &'a mut dyn SearchObserver<S::Genome>,
    /// When set (e.g. by Ctrl-C), no more candidates are proposed, results
    /// already in are committed, and running evaluations are abandoned.
    pub stop: &'a AtomicBool,
}

/// Why a session ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SearchEnding {
    /// The journal holds the evaluation budget.
    BudgetSpent,
    /// The wall-clock budget ran out (running evaluations were finished first).
    TimeUp,
    /// The stop flag was set; the run can be resumed.
    Stopped,
}

/// What a session did.
#[derive(Debug, Clone, PartialEq)]
pub struct SearchOutcome {
    /// Evaluations in the journal now.
    pub evaluations: u64,
    /// Evaluations added by this session.
    pub new_evaluations: u64,
    /// Journal index and objective of the best evaluation (earliest on ties).
    pub best: Option<(u64, f64)>,
    /// Why the session ended.
    pub ending: SearchEnding,
    /// Problems that were tolerated (stale lock, torn journal line).
    pub warnings: Vec<String>,
}

/// Starts a new run in `run_dir` (created if missing; it must not hold a journal yet).
pub fn run_search<S, E>(
    run_dir: &Path,
    plan: &SearchPlan,
    context: SearchContext<'_, S, E>,
) -> Result<SearchOutcome>
where
    S: SearchSpace,
    E: Evaluator<S::Genome> + 'static,
{
    run_search_with_sink(run_dir, plan, context, &plain_sink)
}

/// [`run_search`] with the journal written through the sink `wrap` builds
/// (fault injection in tests: a full disk after N bytes, say).
///
/// A failed journal write ends the session with an [`Error::Io`] naming the
/// journal and the cause; the journal keeps every complete record, and
/// [`resume_search`] continues the run once the cause is gone.
pub fn run_search_with_sink<S, E>(
    run_dir: &Path,
    plan: &SearchPlan,
    context: SearchContext<'_, S, E>,
    wrap: &SinkFactory,
) -> Result<SearchOutcome>
where
    S: SearchSpace,
    E: Evaluator<S::Genome> + 'static,
{
    plan.check()?;
    std::fs::create_dir_all(run_dir).map_err(|e| Error::io(run_dir, e))?;
    let (_lock, warning) = RunLock::acquire(run_dir)?;
    let header = plan.header(context.strategy.name(), context.strategy.settings());
    let mut journal = Journal::create_with(run_dir, &header, wrap)?;
    for baseline in &plan.baselines {
        journal.append_baseline(baseline)?;
    }
    let files = SessionFiles {
        lag: header.lag(),
        journal,
        timings: TimingLog::open(run_dir)?,
        replay: Vec::new(),
        written_by: TOOL_VERSION.to_string(),
    };
    run_session(plan, context, files, warning.into_iter().collect())
}

/// Continues the run in `run_dir` up to `plan.budget`.
///
/// The plan and strategy must describe the same run as the journal header
/// (all fields but `budget`, `format` and `tool_version`; the budget may be
/// raised or lowered). A torn last journal line is removed. Every journaled
/// proposal is re-derived and checked, and its result observed, exactly as
/// in an uninterrupted run, so the finished journal is byte-identical to one.
pub fn resume_search<S, E>(
    run_dir: &Path,
    plan: &SearchPlan,
    context: SearchContext<'_, S, E>,
) -> Result<SearchOutcome>
where
    S: SearchSpace,
    E: Evaluator<S::Genome> + 'static,
{
    resume_search_with_sink(run_dir, plan, context, &plain_sink)
}

/// [`resume_search`] with the journal written through the sink `wrap`
/// builds (see [`run_search_with_sink`]).
pub fn resume_search_with_sink<S, E>(
    run_dir: &Path,
    plan: &SearchPlan,
    context: SearchContext<'_, S, E>,
    wrap: &SinkFactory,
) -> Result<SearchOutcome>
where
    S: SearchSpace,
    E: Evaluator<S::Genome> + 'static,
{
    plan.check()?;
    let path = Journal::path_in(run_dir);
    if !path.is_file() {
        return Err(Error::input(format!(
            "{} holds no run journal to resume",
            run_dir.display()
        )));
    }
    let (_lock, warning) = RunLock::acquire(run_dir)?;
    let contents: JournalContents<S::Genome> = Journal::read(&path)?;
    if contents.header.format != JOURNAL_FORMAT {
        return Err(Error::input(format!(
            "{}: journal format {} cannot be continued by this gemmule (format {JOURNAL_FORMAT})",
            path.display(),
            contents.header.format
        )));
    }
    let mut current = plan.header(context.strategy.name(), context.strategy.settings());
    // The lag is not a setting: a run keeps the rule it started with, also
    // when a later gemmule resumes it.
    current.lag = contents.header.lag;
    if current.lag == Some(0) {
        return Err(Error::input(format!(
            "{}: the journal header has \"lag\": 0; it must be at least 1 (was the file edited?)",
            path.display()
        )));
    }
    check_same_run(&contents.header, &current)
        .map_err(|e| Error::input(format!("{}: {e}", path.display())))?;
    let mut warnings: Vec<String> = warning.into_iter().collect();
    warnings.extend(contents.warnings);
    let mut journal = Journal::reopen_with(run_dir, contents.intact_len, wrap)?;
    if contents.evaluations.is_empty() {
        // Killed between the header and the first evaluation: write the
        // baselines still missing, in order, as the uninterrupted run did.
        for baseline in &plan.baselines {
            if !contents.baselines.iter().any(|b| b.name == baseline.name) {
                journal.append_baseline(baseline)?;
            }
        }
    }
    let files = SessionFiles {
        lag: contents.header.lag(),
        journal,
        timings: TimingLog::open(run_dir)?,
        replay: contents.evaluations,
        written_by: contents.header.tool_version,
    };
    run_session(plan, context, files, warnings)
}

fn run_session<S, E>(
    plan: &SearchPlan,
    context: SearchContext<'_, S, E>,
    mut files: SessionFiles<S::Genome>,
    warnings: Vec<String>,
) -> Result<SearchOutcome>
where
    S: SearchSpace,
    E: Evaluator<S::Genome> + 'static,
{
    let before = files.replay.len() as u64;
    files.timings.append(&TimingEntry::Session {
        started_unix: unix_now(),
        evaluations_before: before,
        budget: plan.budget,
        tool_version: TOOL_VERSION.to_string(),
    })?;
    for warning in &warnings {
        context.observer.on_warning(warning);
    }
    context.observer.on_start(before, plan.budget.evaluations);
    let mut driver = Driver::new(plan, context, files)?;
    let ending = driver.run()?;
    let (evaluations, new_evaluations, best) = driver.tally();
    Ok(SearchOutcome {
        evaluations,
        new_evaluations,
        best,
        ending,
        warnings,
    })
}

#[cfg(test)]
#[path = "sink_tests.rs"]
mod sink_tests;
