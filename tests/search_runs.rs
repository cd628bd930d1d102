//! The scheduler, the journal, resume and the run lock, on the toy problem.

mod search_toy;

use gemmule::search::{
    resume_search, run_search, AgingEvolution, AgingSettings, Budget, EvalStatus, EvaluationRecord,
    Journal, JournalContents, QuietObserver, RandomSampling, RunLock, SearchContext, SearchEnding,
    SearchObserver, SearchOutcome, SearchPlan, Strategy, TimingEntry, TimingLog, LOCK_FILE,
};
use search_toy::{target, MatchEvaluator, MatchSpace};
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

const RUN_SEED: u64 = 2024;
const BUDGET: u64 = 24;

#[derive(Clone, Copy, Debug)]
enum Kind {
    Evolution,
    Random,
}

fn strategy(kind: Kind) -> Box<dyn Strategy<Vec<u8>>> {
    let space = Arc::new(MatchSpace);
    match kind {
        Kind::Evolution => {
            let settings = AgingSettings {
                population: 6,
                sample_size: 3,
            };
            Box::new(AgingEvolution::new(space, settings, BUDGET).expect("valid settings"))
        }
        Kind::Random => Box::new(RandomSampling::new(space)),
    }
}

fn plan(jobs: usize, evaluations: u64) -> SearchPlan {
    SearchPlan {
        seed: RUN_SEED,
        jobs,
        budget: Budget::evaluations(evaluations),
        space: serde_json::json!({ "length": 20, "alphabet": 4 }),
        data: serde_json::json!({ "fingerprint": "toy" }),
        trainer: serde_json::json!({}),
        baselines: Vec::new(),
    }
}

/// An evaluator that sleeps 0–3 ms per candidate, so finishing order varies.
fn sleepy() -> Arc<MatchEvaluator> {
    let mut evaluator = MatchEvaluator::new(target(RUN_SEED));
    evaluator.max_sleep_ms = 3;
    Arc::new(evaluator)
}

/// Sets the stop flag after a number of commits.
struct StopAfter {
    commits: u64,
    stop: Arc<AtomicBool>,
}

impl SearchObserver<Vec<u8>> for StopAfter {
    fn on_commit(&mut self, _: &EvaluationRecord<Vec<u8>>, _: Option<f64>, _: u64, _: u64) {
        self.commits = self.commits.saturating_sub(1);
        if self.commits == 0 {
            self.stop.store(true, Ordering::SeqCst);
        }
    }
}

/// Starts (`resume == false`) or resumes a run; stops after `stop_after` new commits if given.
fn session(
    dir: &Path,
    kind: Kind,
    plan: &SearchPlan,
    resume: bool,
    stop_after: Option<u64>,
    evaluator: Arc<MatchEvaluator>,
) -> gemmule::Result<SearchOutcome> {
    let stop = Arc::new(AtomicBool::new(false));
    let mut quiet = QuietObserver;
    let mut stopper = StopAfter {
        commits: stop_after.unwrap_or(0),
        stop: stop.clone(),
    };
    let observer: &mut dyn SearchObserver<Vec<u8>> = match stop_after {
        Some(_) => &mut stopper,
        None => &mut quiet,
    };
    let mut strategy = strategy(kind);
    let context = SearchContext {
        space: &MatchSpace,
        evaluator,
        strategy: strategy.as_mut(),
        observer,
        stop: &stop,
    };
    if resume {
        resume_search(dir, plan, context)
    } else {
        run_search(dir, plan, context)
    }
}

fn journal_bytes(dir: &Path) -> Vec<u8> {
    std::fs::read(Journal::path_in(dir)).expect("journal readable")
}

fn reference(kind: Kind, jobs: usize) -> (tempfile::TempDir, Vec<u8>) {
    let dir = tempfile::tempdir().expect("temp dir");
    let outcome = session(dir.path(), kind, &plan(jobs, BUDGET), false, None, sleepy())
        .expect("reference run");
    assert_eq!(outcome.ending, SearchEnding::BudgetSpent);
    assert_eq!(outcome.evaluations, BUDGET);
    let bytes = journal_bytes(dir.path());
    (dir, bytes)
}

fn error_text<T>(result: gemmule::Result<T>) -> String {
    match result {
        Ok(_) => panic!("expected an error"),
        Err(error) => error.to_string(),
    }
}

#[test]
fn equal_seed_and_jobs_give_byte_identical_journals() {
    for kind in [Kind::Evolution, Kind::Random] {
        for jobs in [1, 2] {
            let (_first, bytes) = reference(kind, jobs);
            let (_second, again) = reference(kind, jobs);
            assert!(
                bytes == again,
                "{kind:?} with {jobs} jobs differs between runs"
            );
            let lines = bytes
                .split(|&b| b == b'\n')
                .filter(|l| !l.is_empty())
                .count();
            assert_eq!(lines as u64, BUDGET + 1);
        }
    }
}

#[test]
fn the_journal_records_lineage_and_the_lock_is_released() {
    let (dir, _) = reference(Kind::Evolution, 2);
    let contents: JournalContents<Vec<u8>> =
        Journal::read(&Journal::path_in(dir.path())).expect("readable");
    assert_eq!(contents.header.strategy.name, "aging_evolution");
    assert_eq!(contents.header.jobs, 2);
    for record in &contents.evaluations[6..] {
        let parent = record.parent.expect("children have parents") as usize;
        assert_eq!(
            record.parent_id.as_deref(),
            Some(contents.evaluations[parent].id.as_str())
        );
        assert_eq!(record.mutation.as_deref(), Some("change_symbol"));
    }
    let timings = TimingLog::read(dir.path()).expect("timings readable");
    let measured = timings
        .iter()
        .filter(|e| matches!(e, TimingEntry::Timing { .. }));
    assert_eq!(measured.count() as u64, BUDGET);
    assert!(!dir.path().join(LOCK_FILE).exists());
}

#[test]
fn a_resumed_run_equals_an_uninterrupted_one() {
    for kind in [Kind::Evolution, Kind::Random] {
        for jobs in [1, 2] {
            let (_reference, expected) = reference(kind, jobs);
            for stop_after in [1, 7, 16] {
                let dir = tempfile::tempdir().expect("temp dir");
                let full = plan(jobs, BUDGET);
                let first = session(dir.path(), kind, &full, false, Some(stop_after), sleepy())
                    .expect("first session");
                assert_eq!(first.ending, SearchEnding::Stopped);
                assert!(first.evaluations >= stop_after && first.evaluations < BUDGET);
                let second =
                    session(dir.path(), kind, &full, true, None, sleepy()).expect("resumed");
                assert_eq!(second.evaluations, BUDGET);
                assert_eq!(second.new_evaluations, BUDGET - first.evaluations);
                assert!(
                    journal_bytes(dir.path()) == expected,
                    "{kind:?}, {jobs} jobs, stopped after {stop_after}"
                );
            }
        }
    }
}

#[test]
fn the_budget_can_be_raised_on_resume() {
    let (_reference, expected) = reference(Kind::Evolution, 2);
    let dir = tempfile::tempdir().expect("temp dir");
    session(
        dir.path(),
        Kind::Evolution,
        &plan(2, 10),
        false,
        None,
        sleepy(),
    )
    .expect("short run");
    let outcome = session(
        dir.path(),
        Kind::Evolution,
        &plan(2, BUDGET),
        true,
        None,
        sleepy(),
    )
    .expect("longer run");
    assert_eq!(
        (outcome.evaluations, outcome.new_evaluations),
        (BUDGET, BUDGET - 10)
    );
    let bytes = journal_bytes(dir.path());
    let split = |bytes: &[u8]| -> (Vec<u8>, Vec<u8>) {
        let end = bytes
            .iter()
            .position(|&b| b == b'\n')
            .expect("a header line");
        (bytes[..end].to_vec(), bytes[end..].to_vec())
    };
    let (header, rest) = split(&bytes);
    let (expected_header, expected_rest) = split(&expected);
    assert!(
        rest == expected_rest,
        "evaluations differ from the uninterrupted run"
    );
    // The header keeps the budget the run was created with.
    let mut header: serde_json::Value = serde_json::from_slice(&header).expect("json");
    assert_eq!(header["budget"]["evaluations"], 10);
    header["budget"]["evaluations"] = BUDGET.into();
    let expected_header: serde_json::Value =
        serde_json::from_slice(&expected_header).expect("json");
    assert_eq!(header, expected_header);
    let sessions: Vec<u64> = TimingLog::read(dir.path())
        .expect("timings")
        .iter()
        .filter_map(|entry| match entry {
            TimingEntry::Session { budget, .. } => Some(budget.evaluations),
            TimingEntry::Timing { .. } => None,
        })
        .collect();
    assert_eq!(sessions, vec![10, BUDGET]);
}

#[test]
fn a_torn_last_line_is_dropped_and_redone() {
    for jobs in [1, 2] {
        let (_reference, expected) = reference(Kind::Evolution, jobs);
        let line_starts: Vec<usize> = std::iter::once(0)
            .chain(
                expected
                    .iter()
                    .enumerate()
                    .filter(|(_, &b)| b == b'\n')
                    .map(|(i, _)| i + 1),
            )
            .collect();
        // Keep the header and 12 evaluations, then half of the 13th.
        let cut = line_starts[13] + (line_starts[14] - line_starts[13]) / 2;
        let dir = tempfile::tempdir().expect("temp dir");
        let path = Journal::path_in(dir.path());
        std::fs::write(&path, &expected[..cut]).expect("write torn journal");
        let torn: JournalContents<Vec<u8>> = Journal::read(&path).expect("tolerated");
        assert_eq!(torn.evaluations.len(), 12);
        assert_eq!(torn.warnings.len(), 1);
        assert!(torn.warnings[0].contains("line 14"), "{}", torn.warnings[0]);
        let outcome = session(
            dir.path(),
            Kind::Evolution,
            &plan(jobs, BUDGET),
            true,
            None,
            sleepy(),
        )
        .expect("resume repairs");
        assert!(outcome.warnings.iter().any(|w| w.contains("torn")));
        assert!(journal_bytes(dir.path()) == expected);
    }
}

#[test]
fn damage_before_the_last_line_is_an_input_error_naming_the_line() {
    let (_reference, expected) = reference(Kind::Random, 1);
    let text = String::from_utf8(expected).expect("utf-8");
    let mut lines: Vec<&str> = text.lines().collect();
    lines[5] = "{\"kind\":\"evaluation\",\"index\":";
    let dir = tempfile::tempdir().expect("temp dir");
    let path = Journal::path_in(dir.path());
    std::fs::write(&path, lines.join("\n") + "\n").expect("write");
    let result = Journal::read::<Vec<u8>>(&path);
    assert!(matches!(result, Err(gemmule::Error::Input(_))));
    let message = error_text(result);
    assert!(message.contains("line 6"), "{message}");
}

#[test]
fn a_journal_of_a_newer_format_is_refused() {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = Journal::path_in(dir.path());
    let header = r#"{"kind":"header","format":99,"tool_version":"7.1.0","future":true}"#;
    std::fs::write(&path, format!("{header}\n")).expect("write");
    let message = error_text(Journal::read::<Vec<u8>>(&path));
    assert!(
        message.contains("newer gemmule 7.1.0") && message.contains("upgrade"),
        "{message}"
    );
    let resumed = session(dir.path(), Kind::Random, &plan(1, 4), true, None, sleepy());
    assert!(error_text(resumed).contains("newer gemmule 7.1.0"));
}

#[test]
fn resuming_with_a_different_setup_names_the_field() {
    let dir = tempfile::tempdir().expect("temp dir");
    session(
        dir.path(),
        Kind::Evolution,
        &plan(1, 4),
        false,
        None,
        sleepy(),
    )
    .expect("run");
    let mut other_seed = plan(1, 8);
    other_seed.seed += 1;
    let message = error_text(session(
        dir.path(),
        Kind::Evolution,
        &other_seed,
        true,
        None,
        sleepy(),
    ));
    assert!(
        message.contains("header mismatch") && message.contains("`seed`"),
        "{message}"
    );
    let message = error_text(session(
        dir.path(),
        Kind::Random,
        &plan(1, 8),
        true,
        None,
        sleepy(),
    ));
    assert!(message.contains("`strategy`"), "{message}");
    let message = error_text(session(
        dir.path(),
        Kind::Evolution,
        &plan(2, 8),
        true,
        None,
        sleepy(),
    ));
    assert!(message.contains("`jobs`"), "{message}");
    let message = error_text(session(
        dir.path(),
        Kind::Evolution,
        &plan(1, 8),
        false,
        None,
        sleepy(),
    ));
    assert!(message.contains("already holds a run journal"), "{message}");
    let empty = tempfile::tempdir().expect("temp dir");
    let message = error_text(session(
        empty.path(),
        Kind::Evolution,
        &plan(1, 8),
        true,
        None,
        sleepy(),
    ));
    assert!(message.contains("no run journal"), "{message}");
}

#[test]
fn a_live_lock_is_refused_and_a_stale_one_taken_over() {
    let dir = tempfile::tempdir().expect("temp dir");
    let lock_path = dir.path().join(LOCK_FILE);
    let mut owner = std::process::Command::new("sleep")
        .arg("30")
        .spawn()
        .expect("spawn sleep");
    std::fs::write(&lock_path, format!("{}\n", owner.id())).expect("write lock");
    let refused = error_text(RunLock::acquire(dir.path()));
    let run_refused = error_text(session(
        dir.path(),
        Kind::Random,
        &plan(1, 2),
        false,
        None,
        sleepy(),
    ));
    owner.kill().expect("kill our sleep");
    owner.wait().expect("reap our sleep");
    assert!(
        refused.contains(&format!("process {}", owner.id())),
        "{refused}"
    );
    assert!(run_refused.contains("in use"), "{run_refused}");
    let (lock, warning) = RunLock::acquire(dir.path()).expect("stale lock taken over");
    let warning = warning.expect("a takeover warning");
    assert!(
        warning.contains("stale") && warning.contains(&owner.id().to_string()),
        "{warning}"
    );
    let again = error_text(RunLock::acquire(dir.path()));
    assert!(again.contains("this process"), "{again}");
    drop(lock);
    assert!(!lock_path.exists());
    let (_lock, warning) = RunLock::acquire(dir.path()).expect("free again");
    assert!(warning.is_none());
}

#[test]
fn an_evaluator_panic_is_recorded_as_failed_and_the_search_goes_on() {
    let dir = tempfile::tempdir().expect("temp dir");
    let mut evaluator = MatchEvaluator::new(target(RUN_SEED));
    evaluator.panic_on_first = Some(0);
    let outcome = session(
        dir.path(),
        Kind::Evolution,
        &plan(2, 16),
        false,
        None,
        Arc::new(evaluator),
    )
    .expect("the search survives panics");
    assert_eq!(outcome.evaluations, 16);
    let contents: JournalContents<Vec<u8>> =
        Journal::read(&Journal::path_in(dir.path())).expect("readable");
    let failed: Vec<_> = contents
        .evaluations
        .iter()
        .filter(|record| record.genome[0] == 0)
        .collect();
    assert!(!failed.is_empty(), "some genome starts with symbol 0");
    for record in failed {
        assert_eq!(record.status, EvalStatus::Failed);
        assert_eq!(record.objective, None);
        let message = record.message.as_deref().unwrap_or("");
        assert!(message.contains("toy evaluator refuses"), "{message}");
    }
}

#[test]
fn a_time_budget_ends_the_session_with_a_consistent_journal() {
    let dir = tempfile::tempdir().expect("temp dir");
    let mut timed = plan(2, 100_000);
    timed.budget.seconds = Some(0.05);
    let outcome = session(dir.path(), Kind::Random, &timed, false, None, sleepy()).expect("run");
    assert_eq!(outcome.ending, SearchEnding::TimeUp);
    let contents: JournalContents<Vec<u8>> =
        Journal::read(&Journal::path_in(dir.path())).expect("readable");
    assert_eq!(contents.evaluations.len() as u64, outcome.evaluations);
    assert!(outcome.evaluations > 0 && outcome.evaluations < 1000);
}

#[test]
fn test_openings_are_appended_and_read_back() {
    let dir = tempfile::tempdir().expect("temp dir");
    session(dir.path(), Kind::Random, &plan(1, 3), false, None, sleepy()).expect("run");
    let (lock, _) = RunLock::acquire(dir.path()).expect("lock");
    let body = serde_json::json!({ "candidate": 2, "test_scores": { "accuracy": 0.75 } });
    Journal::append_test_opening(&lock, &body).expect("append");
    let contents: JournalContents = Journal::read(&Journal::path_in(dir.path())).expect("read");
    assert_eq!(contents.openings, vec![body]);
    assert_eq!(contents.evaluations.len(), 3);
}

#[test]
fn a_journal_that_does_not_replay_is_refused() {
    let (_reference, expected) = reference(Kind::Evolution, 1);
    let text = String::from_utf8(expected).expect("utf-8");
    let mut lines: Vec<String> = text.lines().take(7).map(String::from).collect();
    let mut record: serde_json::Value = serde_json::from_str(&lines[4]).expect("json");
    let first = record["genome"][0].as_u64().expect("a symbol");
    record["genome"][0] = ((first + 1) % 4).into();
    lines[4] = record.to_string();
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(Journal::path_in(dir.path()), lines.join("\n") + "\n").expect("write");
    let result = session(
        dir.path(),
        Kind::Evolution,
        &plan(1, BUDGET),
        true,
        None,
        sleepy(),
    );
    assert!(matches!(result, Err(gemmule::Error::Internal(_))));
    let message = error_text(result);
    assert!(
        message.contains("proposal 3") && message.contains("genome"),
        "{message}"
    );
}

#[test]
fn each_candidate_gets_the_worst_objective_of_the_population_it_was_proposed_from() {
    // The bar of aging evolution (src/search/aging.rs `cut_bar`): the worst
    // objective of the population the proposal saw, once it holds P members.
    // With lag L (1 for one job, 3 × jobs for more) proposal k saw the results
    // 0..=k − L, so its population was the records k − L − P + 1 ..= k − L.
    const POPULATION: u64 = 6;
    for (jobs, lag) in [(1usize, 1u64), (2, 6)] {
        let dir = tempfile::tempdir().expect("temp dir");
        let mut evaluator = MatchEvaluator::new(target(RUN_SEED));
        evaluator.record_bar = true;
        session(
            dir.path(),
            Kind::Evolution,
            &plan(jobs, BUDGET),
            false,
            None,
            Arc::new(evaluator),
        )
        .expect("run");
        let contents: JournalContents<Vec<u8>> =
            Journal::read(&Journal::path_in(dir.path())).expect("readable");
        assert_eq!(contents.header.lag(), lag);
        let records = &contents.evaluations;
        for record in records {
            let k = record.index;
            let bar = record.scores.get("bar").copied();
            if k + 1 < POPULATION + lag {
                assert_eq!(bar, None, "{jobs} jobs, candidate {k}: population not full");
                continue;
            }
            let seen = (k + 1 - lag - POPULATION)..=(k - lag);
            let worst = seen
                .map(|i| {
                    records[i as usize]
                        .objective
                        .expect("toy scores every genome")
                })
                .fold(f64::INFINITY, f64::min);
            assert_eq!(bar, Some(worst), "{jobs} jobs, candidate {k}");
        }
    }
}

#[test]
fn a_journal_of_the_first_parallel_rule_resumes_with_that_rule() {
    // Journals written before the header recorded `lag` used lag = jobs.
    // Such a run (simulated by removing the field from a run whose first
    // POPULATION candidates are random samples either way) must resume with
    // its own rule, deterministically, and not with today's lag.
    let dir = tempfile::tempdir().expect("temp dir");
    session(
        dir.path(),
        Kind::Evolution,
        &plan(2, 6),
        false,
        None,
        sleepy(),
    )
    .expect("start");
    let path = Journal::path_in(dir.path());
    let text = std::fs::read_to_string(&path).expect("journal");
    assert!(
        text.contains(",\"lag\":6,"),
        "today's header records the lag"
    );
    std::fs::write(&path, text.replacen(",\"lag\":6,", ",", 1)).expect("rewrite header");
    session(
        dir.path(),
        Kind::Evolution,
        &plan(2, BUDGET),
        true,
        None,
        sleepy(),
    )
    .expect("an old-rule journal resumes");
    let old_rule = journal_bytes(dir.path());
    assert!(!String::from_utf8_lossy(&old_rule).contains("\"lag\""));
    // Stopping it anywhere and resuming again gives the same bytes.
    let again = tempfile::tempdir().expect("temp dir");
    let lines: Vec<&[u8]> = old_rule.split_inclusive(|&b| b == b'\n').collect();
    std::fs::write(Journal::path_in(again.path()), lines[..11].concat()).expect("truncate");
    session(
        again.path(),
        Kind::Evolution,
        &plan(2, BUDGET),
        true,
        None,
        sleepy(),
    )
    .expect("resumes again");
    assert!(journal_bytes(again.path()) == old_rule);
    // And it differs from a run made with today's lag after the first population.
    let (_today, today) = reference(Kind::Evolution, 2);
    let records = |bytes: &[u8]| -> Vec<Vec<u8>> {
        bytes
            .split(|&b| b == b'\n')
            .skip(7)
            .map(<[u8]>::to_vec)
            .collect()
    };
    assert_ne!(records(&old_rule), records(&today), "the lag was honoured");
}
