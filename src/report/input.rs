//! Reading what a report is made from: one run directory, or a comparison
//! directory with its plan and the journals of the runs that have started.
//!
//! Only files are read; nothing is trained and the sealed test split is never
//! opened. Test scores come from the journals' test-opening records.

use crate::search::{Journal, JournalContents, TimingEntry, TimingLog};
use crate::workflow::{ComparePlan, Comparison, ComparisonReport, ReportOptions, COMPARISON_FILE};
use crate::{Error, Result};
use serde_json::Value;
use std::path::{Path, PathBuf};

/// One run directory as the report sees it.
#[derive(Debug, Clone)]
pub struct ReportRun {
    /// The run's name: its directory name inside a comparison, else the directory's own name.
    pub name: String,
    /// The run directory.
    pub dir: PathBuf,
    /// The strategy's short name (`evolution`/`random` in comparisons, the journal's name otherwise).
    pub strategy: String,
    /// The run seed.
    pub seed: u64,
    /// The journal, genomes kept as JSON so any encoding can be reported.
    pub journal: JournalContents<Value>,
    /// The timings log (empty when the file is missing).
    pub timings: Vec<TimingEntry>,
}

/// What kind of directory the report describes.
#[derive(Debug, Clone)]
pub enum ReportSubject {
    /// A single run directory (`gemmule search`).
    Run,
    /// A comparison directory (`gemmule compare`).
    Comparison {
        /// The recorded plan.
        plan: Box<ComparePlan>,
        /// The statistics, or why they cannot be computed yet (an unfinished comparison).
        analysis: std::result::Result<Box<ComparisonReport>, String>,
        /// Planned runs that have no journal yet.
        not_started: Vec<String>,
    },
}

/// Everything a report is built from.
#[derive(Debug, Clone)]
pub struct ReportInput {
    /// The directory the report describes.
    pub dir: PathBuf,
    /// Its runs, in plan order (a single run for a run directory).
    pub runs: Vec<ReportRun>,
    /// Run or comparison.
    pub subject: ReportSubject,
}

impl ReportInput {
    /// Reads a run directory (it holds `journal.jsonl`) or a comparison
    /// directory (it holds `comparison.json`).
    pub fn load(dir: &Path) -> Result<ReportInput> {
        if dir.join(COMPARISON_FILE).is_file() {
            return load_comparison(dir);
        }
        if Journal::path_in(dir).is_file() {
            let name = dir
                .file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_else(|| "run".to_string());
            let run = read_run(dir, name, None)?;
            return Ok(ReportInput {
                dir: dir.to_path_buf(),
                runs: vec![run],
                subject: ReportSubject::Run,
            });
        }
        if !dir.is_dir() {
            return Err(Error::input(format!(
                "{} is not a directory; give a run directory (from `gemmule search`) or a comparison directory (from `gemmule compare`)",
                dir.display()
            )));
        }
        Err(Error::input(format!(
            "{} holds neither journal.jsonl (a run) nor {COMPARISON_FILE} (a comparison); give a directory made by `gemmule search` or `gemmule compare`",
            dir.display()
        )))
    }

    /// True for a comparison directory.
    pub fn is_comparison(&self) -> bool {
        matches!(self.subject, ReportSubject::Comparison { .. })
    }

    /// The objective's name, from the first run's trainer settings.
    pub fn objective(&self) -> String {
        self.runs
            .first()
            .and_then(|run| run.journal.header.trainer.get("objective"))
            .and_then(Value::as_str)
            .unwrap_or("objective")
            .to_string()
    }

    /// Warnings met while reading the journals (torn last lines).
    pub fn warnings(&self) -> Vec<String> {
        self.runs
            .iter()
            .flat_map(|run| run.journal.warnings.iter().cloned())
            .collect()
    }
}

fn load_comparison(dir: &Path) -> Result<ReportInput> {
    let comparison = Comparison::load(dir)?;
    let plan = comparison.plan().clone();
    let mut runs = Vec::new();
    let mut not_started = Vec::new();
    for planned in plan.runs() {
        let run_dir = comparison.run_dir(&planned);
        if !Journal::path_in(&run_dir).is_file() {
            not_started.push(planned.dir_name.clone());
            continue;
        }
        let strategy = planned.strategy.name().to_string();
        runs.push(read_run(&run_dir, planned.dir_name, Some(strategy))?);
    }
    if runs.is_empty() {
        return Err(Error::input(format!(
            "{}: no run of the comparison has started yet; run `gemmule compare` with the same options first",
            dir.display()
        )));
    }
    let analysis = comparison
        .report(&ReportOptions::default())
        .map(Box::new)
        .map_err(|e| e.to_string());
    Ok(ReportInput {
        dir: dir.to_path_buf(),
        runs,
        subject: ReportSubject::Comparison {
            plan: Box::new(plan),
            analysis,
            not_started,
        },
    })
}

fn read_run(dir: &Path, name: String, strategy: Option<String>) -> Result<ReportRun> {
    let journal: JournalContents<Value> = Journal::read(&Journal::path_in(dir))?;
    let timings = TimingLog::read(dir)?;
    let strategy = strategy.unwrap_or_else(|| journal.header.strategy.name.clone());
    Ok(ReportRun {
        name,
        dir: dir.to_path_buf(),
        strategy,
        seed: journal.header.seed,
        journal,
        timings,
    })
}
