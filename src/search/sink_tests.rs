//! A full disk while the journal is written, injected through the journal's
//! sink: the session stops with an I/O error naming the journal and the
//! cause, the journal keeps exactly its complete records, and a resume
//! (once there is space again) ends with the journal of an uninterrupted run.
//!
//! The problem searched is a toy (no training): genomes are 8 symbols over
//! an alphabet of 3 and the objective counts the symbols equal to 1.

use crate::genome::{Mutated, SearchSpace, SeededRng};
use crate::search::journal::{plain_sink, JournalSink, SinkFactory};
use crate::search::run::{resume_search_with_sink, run_search_with_sink};
use crate::search::{Budget, EvalStatus, Evaluation, Evaluator, Journal, JournalContents};
use crate::search::{QuietObserver, RandomSampling, SearchContext, SearchEnding};
use crate::search::{SearchOutcome, SearchPlan};
use crate::Error;
use num_bigint::BigUint;
use rand::Rng;
use std::collections::BTreeMap;
use std::fs::File;
use std::io::Write;
use std::path::Path;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Arc;

const LENGTH: usize = 8;
const BUDGET: u64 = 12;

struct TinySpace;

impl SearchSpace for TinySpace {
    type Genome = Vec<u8>;

    fn sample(&self, rng: &mut SeededRng) -> Vec<u8> {
        (0..LENGTH).map(|_| rng.gen_range(0..3)).collect()
    }

    fn mutate(&self, parent: &Vec<u8>, rng: &mut SeededRng) -> Mutated<Vec<u8>> {
        let mut genome = parent.clone();
        let position = rng.gen_range(0..LENGTH);
        genome[position] = (genome[position] + 1) % 3;
        Mutated {
            genome,
            mutation: "step_symbol",
        }
    }

    fn genome_id(&self, genome: &Vec<u8>) -> String {
        genome.iter().map(|s| char::from(b'a' + s)).collect()
    }

    fn validate(&self, genome: &Vec<u8>) -> crate::Result<()> {
        if genome.len() != LENGTH || genome.iter().any(|&s| s > 2) {
            return Err(Error::input("not a tiny genome"));
        }
        Ok(())
    }

    fn size(&self) -> BigUint {
        BigUint::from(3u32).pow(LENGTH as u32)
    }

    fn describe(&self) -> serde_json::Value {
        serde_json::json!({ "length": LENGTH })
    }
}

struct CountOnes;

impl Evaluator<Vec<u8>> for CountOnes {
    fn evaluate(&self, genome: &Vec<u8>, _seed: u64) -> Evaluation {
        let ones = genome.iter().filter(|&&s| s == 1).count() as f64;
        Evaluation {
            status: EvalStatus::Completed,
            objective: Some(ones),
            scores: BTreeMap::from([("ones".to_string(), ones)]),
            params: Some(LENGTH as u64),
            madds: None,
            epochs: 1,
            best_epoch: 1,
            message: None,
            folds: None,
        }
    }
}

/// A journal file on a disk with `space` bytes left: a write that does not
/// fit writes what fits and fails with ENOSPC, as `write(2)` does.
struct FullDisk {
    file: File,
    space: Arc<AtomicU64>,
    truncate_fails: bool,
}

impl JournalSink for FullDisk {
    fn append(&mut self, bytes: &[u8]) -> std::io::Result<()> {
        let left = self.space.load(Ordering::SeqCst);
        let fits = usize::try_from(left).unwrap_or(usize::MAX).min(bytes.len());
        self.file.write_all(&bytes[..fits])?;
        self.space.fetch_sub(fits as u64, Ordering::SeqCst);
        if fits < bytes.len() {
            // ENOSPC: "No space left on device" (errno 28 on Linux).
            return Err(std::io::Error::from_raw_os_error(libc::ENOSPC));
        }
        Ok(())
    }

    fn sync(&mut self) -> std::io::Result<()> {
        self.file.sync_data()
    }

    fn truncate(&mut self, len: u64) -> std::io::Result<()> {
        if self.truncate_fails {
            return Err(std::io::Error::from_raw_os_error(libc::EIO));
        }
        self.file.set_len(len)?;
        self.file.sync_data()
    }
}

fn plan(jobs: usize) -> SearchPlan {
    SearchPlan {
        seed: 99,
        jobs,
        budget: Budget::evaluations(BUDGET),
        space: TinySpace.describe(),
        data: serde_json::json!({ "fingerprint": "tiny" }),
        trainer: serde_json::json!({}),
        baselines: Vec::new(),
    }
}

fn session(
    dir: &Path,
    jobs: usize,
    resume: bool,
    wrap: &SinkFactory,
) -> crate::Result<SearchOutcome> {
    let stop = AtomicBool::new(false);
    let mut strategy = RandomSampling::new(Arc::new(TinySpace));
    let mut observer = QuietObserver;
    let context = SearchContext {
        space: &TinySpace,
        evaluator: Arc::new(CountOnes),
        strategy: &mut strategy,
        observer: &mut observer,
        stop: &stop,
    };
    if resume {
        resume_search_with_sink(dir, &plan(jobs), context, wrap)
    } else {
        run_search_with_sink(dir, &plan(jobs), context, wrap)
    }
}

/// Byte offsets just past each line.
fn line_ends(bytes: &[u8]) -> Vec<usize> {
    bytes
        .iter()
        .enumerate()
        .filter(|(_, &b)| b == b'\n')
        .map(|(i, _)| i + 1)
        .collect()
}

fn full_disk(
    space: &Arc<AtomicU64>,
    truncate_fails: bool,
) -> impl Fn(File) -> Box<dyn JournalSink> + Sync {
    let space = space.clone();
    move |file| {
        Box::new(FullDisk {
            file,
            space: space.clone(),
            truncate_fails,
        })
    }
}

#[test]
fn a_full_disk_stops_the_run_cleanly_and_resume_finishes_it() {
    for jobs in [1, 2] {
        let reference = tempfile::tempdir().expect("temp dir");
        let outcome = session(reference.path(), jobs, false, &plain_sink).expect("reference");
        assert_eq!(outcome.ending, SearchEnding::BudgetSpent);
        let expected = std::fs::read(Journal::path_in(reference.path())).expect("journal");
        let ends = line_ends(&expected);
        for truncate_fails in [false, true] {
            let dir = tempfile::tempdir().expect("temp dir");
            // Room for the records 0..5 and half of record 5 (line 7).
            // The header is written before the sink exists (atomic create).
            let room = (ends[5] - ends[0]) + (ends[6] - ends[5]) / 2;
            let space = Arc::new(AtomicU64::new(room as u64));
            let error = session(dir.path(), jobs, false, &full_disk(&space, truncate_fails))
                .expect_err("the full disk stops the run");
            let enospc = std::io::Error::from_raw_os_error(libc::ENOSPC).kind();
            assert!(
                matches!(&error, Error::Io { cause, .. } if cause.kind() == enospc),
                "{error:?}"
            );
            let message = error.to_string();
            for part in [
                "journal.jsonl",
                "No space left on device",
                "evaluation record 5",
                "keeps every complete record",
                "gemmule resume",
            ] {
                assert!(message.contains(part), "`{part}` missing from: {message}");
            }
            assert_eq!(
                message.contains("partial last line"),
                truncate_fails,
                "{message}"
            );
            let path = Journal::path_in(dir.path());
            let left = std::fs::read(&path).expect("journal");
            if truncate_fails {
                assert_eq!(&left[..ends[5]], &expected[..ends[5]]);
                let torn: JournalContents<Vec<u8>> = Journal::read(&path).expect("tolerated");
                assert_eq!(torn.evaluations.len(), 5);
                assert!(torn.warnings[0].contains("torn"), "{:?}", torn.warnings);
            } else {
                assert!(
                    left == expected[..ends[5]],
                    "exactly the 5 complete records remain"
                );
            }
            // Space comes back for a while, then runs out again mid-run.
            let room = (ends[9] - ends[5]) - 3;
            space.store(room as u64, Ordering::SeqCst);
            let again = session(dir.path(), jobs, true, &full_disk(&space, false));
            assert!(again
                .err()
                .is_some_and(|e| e.to_string().contains("evaluation record 8")));
            let outcome = session(dir.path(), jobs, true, &plain_sink).expect("resume");
            assert_eq!(outcome.ending, SearchEnding::BudgetSpent);
            let finished = std::fs::read(&path).expect("journal");
            assert!(finished == expected, "jobs {jobs}: resumed journal differs");
        }
    }
}
