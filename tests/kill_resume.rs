//! The real binary killed with SIGKILL at 20 seeded random moments of a
//! search, resumed each time: the finished journal must be byte-identical to
//! an uninterrupted run with the same seed and `--jobs` (the determinism
//! rule of DEVELOPERS.md; no outside source, common practice for
//! crash-consistency tests). Also: a second process on the same run
//! directory is refused with the owner's pid, and a dead owner's lock is
//! taken over.
//!
//! Data: Fisher's iris as shipped in scikit-learn (tests/data/README.md).

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Output};
use std::time::{Duration, Instant};

mod private_dirs;

/// Evaluations per run: enough that a run lasts about a second.
const BUDGET: u64 = 40;
/// SIGKILLs per run.
const KILLS: usize = 20;

fn gemmule() -> Command {
    let mut command = Command::new(env!("CARGO_BIN_EXE_gemmule"));
    command.env("RAYON_NUM_THREADS", "1");
    private_dirs::isolate(&mut command);
    command
}

fn iris() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/iris.csv")
}

fn text(output: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    )
}

fn search_command(run: &Path, jobs: usize, budget: u64) -> Command {
    search_with(run, "evolution", jobs, budget)
}

/// [`search_command`], with the learning-curve cut when `cut` is set.
fn search_maybe_cut(run: &Path, jobs: usize, budget: u64, cut: bool) -> Command {
    let mut command = search_command(run, jobs, budget);
    if cut {
        command.arg("--curve-cut");
    }
    command
}

fn search_with(run: &Path, strategy: &str, jobs: usize, budget: u64) -> Command {
    let mut command = gemmule();
    command
        .arg("search")
        .arg("--data")
        .arg(iris())
        .arg("--out")
        .arg(run)
        .args(["--strategy", strategy, "--seed", "7", "--epochs", "40"])
        .args(["--max-width", "32", "--quiet"])
        .args(["--budget", &budget.to_string(), "--jobs", &jobs.to_string()]);
    command
}

fn resume_command(run: &Path) -> Command {
    let mut command = gemmule();
    command.arg("resume").arg(run).arg("--quiet");
    command
}

fn journal_path(run: &Path) -> PathBuf {
    run.join("journal.jsonl")
}

/// Complete evaluation lines in the journal (0 when there is none yet).
fn evaluations_done(run: &Path) -> u64 {
    let bytes = std::fs::read(journal_path(run)).unwrap_or_default();
    let complete = bytes.iter().filter(|&&b| b == b'\n').count() as u64;
    complete.saturating_sub(1)
}

/// Starts the victim: `search` while there is no journal, else `resume`.
fn start_victim(run: &Path, jobs: usize, cut: bool) -> Child {
    let mut command = if journal_path(run).exists() {
        resume_command(run)
    } else {
        search_maybe_cut(run, jobs, BUDGET, cut)
    };
    command
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("the binary starts")
}

/// Runs `command` to the end, checking that it succeeds.
fn finish(mut command: Command) -> Output {
    let output = command.output().expect("the binary runs");
    assert!(output.status.success(), "{}", text(&output));
    output
}

fn killed_runs_end_with_the_uninterrupted_journal(jobs: usize, cut: bool) {
    let dir = tempfile::tempdir().expect("temp dir");
    let reference = dir.path().join("reference");
    let started = Instant::now();
    finish(search_maybe_cut(&reference, jobs, BUDGET, cut));
    // Wall times only scale the kill moments; no result depends on them.
    let run_ms = started.elapsed().as_millis() as u64;
    let started = Instant::now();
    finish(resume_command(&reference));
    let startup_ms = started.elapsed().as_millis() as u64;
    let expected = std::fs::read(journal_path(&reference)).expect("reference journal");
    if cut {
        let text = String::from_utf8_lossy(&expected);
        assert!(
            text.contains(r#""status":"curve_cut""#),
            "the run with the cut cuts some candidates"
        );
    }

    let victim = dir.path().join("victim");
    let mut rng = ChaCha8Rng::seed_from_u64(20_240_917 + jobs as u64 + 10 * u64::from(cut));
    let mut killed_running = 0;
    for kill in 0..KILLS {
        let left = BUDGET - evaluations_done(&victim).min(BUDGET);
        // Spread the kills over what is left of the run, and over start-up.
        let span = startup_ms + 2 * run_ms * left / BUDGET / (KILLS - kill) as u64;
        let delay = rng.gen_range(0..=span.max(1));
        let mut child = start_victim(&victim, jobs, cut);
        std::thread::sleep(Duration::from_millis(delay));
        match child.try_wait().expect("child status") {
            Some(status) => {
                let output = child.wait_with_output().expect("output");
                assert!(status.success(), "kill {kill}: {}", text(&output));
            }
            None => {
                child.kill().expect("SIGKILL");
                child.wait().expect("reaped");
                killed_running += 1;
            }
        }
    }
    eprintln!(
        "jobs {jobs}: {killed_running} of {KILLS} kills hit a running process \
         (run {run_ms} ms, start-up {startup_ms} ms)"
    );
    let last = if journal_path(&victim).exists() {
        resume_command(&victim)
    } else {
        search_maybe_cut(&victim, jobs, BUDGET, cut)
    };
    finish(last);
    let journal = std::fs::read(journal_path(&victim)).expect("victim journal");
    assert!(
        journal == expected,
        "jobs {jobs}: the journal after {KILLS} kills differs from the uninterrupted one"
    );
    assert!(!victim.join("lock").exists(), "the lock is released");
}

#[test]
fn twenty_kills_with_one_job_end_with_the_uninterrupted_journal() {
    killed_runs_end_with_the_uninterrupted_journal(1, false);
}

#[test]
fn twenty_kills_with_two_jobs_end_with_the_uninterrupted_journal() {
    killed_runs_end_with_the_uninterrupted_journal(2, false);
}

#[test]
fn twenty_kills_of_a_run_with_the_curve_cut_end_with_the_uninterrupted_journal() {
    // The bar each candidate is cut against is derived again on resume.
    killed_runs_end_with_the_uninterrupted_journal(2, true);
}

/// Waits until `path` exists (the child got that far), or fails after a minute.
fn wait_for(path: &Path, child: &mut Child) {
    for _ in 0..6000 {
        if path.exists() {
            return;
        }
        if let Ok(Some(status)) = child.try_wait() {
            panic!("the first process ended ({status}) before creating {path:?}");
        }
        std::thread::sleep(Duration::from_millis(10));
    }
    let _ = child.kill();
    panic!("{path:?} did not appear");
}

#[test]
fn a_second_process_is_refused_and_a_dead_owners_lock_taken_over() {
    let dir = tempfile::tempdir().expect("temp dir");
    let run = dir.path().join("run");
    let mut owner = search_with(&run, "random", 1, 100_000)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .expect("the binary starts");
    wait_for(&journal_path(&run), &mut owner);
    let pid = owner.id();
    let second = resume_command(&run).output().expect("runs");
    let also = search_command(&run, 1, 10).output().expect("runs");
    let finalize = gemmule().arg("finalize").arg(&run).output().expect("runs");
    owner.kill().expect("SIGKILL");
    owner.wait().expect("reaped");
    assert_eq!(also.status.code(), Some(2), "{}", text(&also));
    assert!(
        text(&also).contains("already holds a run"),
        "{}",
        text(&also)
    );
    for output in [&second, &finalize] {
        assert_eq!(output.status.code(), Some(2), "{}", text(output));
        let message = text(output);
        assert!(
            message.contains(&format!("in use by gemmule process {pid}"))
                && message.contains("lock"),
            "{message}"
        );
    }
    let lock = std::fs::read_to_string(run.join("lock")).expect("the dead owner's lock remains");
    assert!(lock.starts_with(&format!("{pid}")), "{lock}");
    // The owner is dead: its lock is stale, and taken over with a warning.
    let done = evaluations_done(&run).max(1);
    let resumed = finish({
        let mut command = resume_command(&run);
        command.args(["--budget", &done.to_string()]);
        command
    });
    let message = text(&resumed);
    assert!(
        message.contains("took over the stale lock") && message.contains(&format!("process {pid}")),
        "{message}"
    );
    assert!(!run.join("lock").exists());
}
