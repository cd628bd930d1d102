//! Search throughput: evaluations per minute of a fixed small search on
//! digits (`tests/data/digits.csv`) at `--jobs 1` and `--jobs 2`, and the
//! parallel efficiency (throughput at 2 jobs) / (2 × throughput at 1 job).
//!
//! Each round runs the same search (seed, budget, default space and
//! trainer settings) once at 1 job and once at 2 jobs, alternating which
//! goes first, through the library's `SearchJob`, in a fresh temporary run
//! folder. Random search proposes the same candidates at any job count, so
//! its efficiency compares equal work; aging evolution (the default
//! strategy) sees results later at 2 jobs and so trains other candidates.
//!
//! Per run it prints the wall time (data preparation included), evaluations
//! per minute, process CPU seconds, and from `timings.jsonl`: the time before
//! the session started (data preparation), the summed candidate seconds, the
//! worker utilisation (summed candidate seconds / (jobs × session span)) and
//! the tail (time from the second-to-last finish to the last one, when one
//! worker is idle at 2 jobs).
//!
//! On a machine shared with other work the wall-clock efficiency mostly
//! measures how many cores the others left free, so two load-independent
//! figures are printed too. The first is the worker utilisation at 2 jobs
//! times the ratio of process CPU seconds (1 job / 2 jobs): on an idle
//! machine the 2-job run takes (its CPU seconds) / (2 × utilisation).
//! For each 1-job run it also replays the measured candidate times through
//! the scheduling rule at 2 jobs ([`simulated_seconds`]), with the old lag
//! (2: proposal k waited for results 0..=k−2) and the current one (3 × jobs),
//! which gives the scheduler's own efficiency free of machine load.
//!
//! Run: `cargo bench --bench search_throughput -- [--rounds 3]
//! [--evaluations 60] [--strategy random|evolution|both] [--seed 1]`.

mod support;

use std::path::Path;
use std::sync::atomic::AtomicBool;
use std::time::Instant;

use gemmule::search::{QuietObserver, TimingEntry, TimingLog};
use gemmule::workflow::{DataSource, SearchJob, StrategyChoice};
use mimalloc::MiMalloc;
use support::{load_average, machine, median, process_cpu_seconds};

/// The allocator the `gemmule` binary uses.
#[global_allocator]
static GLOBAL: MiMalloc = MiMalloc;

const DIGITS: &str = "tests/data/digits.csv";

struct Options {
    rounds: usize,
    evaluations: u64,
    strategies: Vec<&'static str>,
    seed: u64,
}

fn options() -> Options {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let value = |flag: &str| {
        args.iter()
            .position(|a| a == flag)
            .and_then(|i| args.get(i + 1))
            .cloned()
    };
    let strategies = match value("--strategy").as_deref() {
        Some("random") => vec!["random"],
        Some("evolution") => vec!["evolution"],
        _ => vec!["random", "evolution"],
    };
    Options {
        rounds: value("--rounds")
            .and_then(|v| v.parse().ok())
            .unwrap_or(3)
            .max(1),
        evaluations: value("--evaluations")
            .and_then(|v| v.parse().ok())
            .unwrap_or(60)
            .max(2),
        strategies,
        seed: value("--seed").and_then(|v| v.parse().ok()).unwrap_or(1),
    }
}

/// What one search run measured.
struct RunStats {
    /// Candidate seconds in journal index order.
    durations: Vec<f64>,
    wall: f64,
    cpu: f64,
    before_session: f64,
    busy: f64,
    span: f64,
    tail: f64,
}

impl RunStats {
    fn per_minute(&self, evaluations: u64) -> f64 {
        evaluations as f64 / self.wall * 60.0
    }
}

/// Seconds until the last commit when candidates of `durations` (index
/// order) run on `jobs` workers that start them in index order, and
/// proposal k may start only once results 0..=k−lag are committed (commits
/// in index order). Scheduler overheads are left out.
fn simulated_seconds(durations: &[f64], jobs: usize, lag: usize) -> f64 {
    let mut free = vec![0.0f64; jobs.max(1)];
    let mut committed: Vec<f64> = Vec::with_capacity(durations.len());
    for (k, duration) in durations.iter().enumerate() {
        let allowed = if k < lag { 0.0 } else { committed[k - lag] };
        let (worker, _) = free
            .iter()
            .enumerate()
            .min_by(|a, b| a.1.total_cmp(b.1))
            .expect("at least one worker");
        let finish = free[worker].max(allowed) + duration;
        free[worker] = finish;
        let previous = committed.last().copied().unwrap_or(0.0);
        committed.push(finish.max(previous));
    }
    committed.last().copied().unwrap_or(0.0)
}

/// Reads the session start and every evaluation's duration and finish time.
fn timing_stats(run_dir: &Path, started_unix: f64) -> (Vec<f64>, f64, f64, f64, f64) {
    let entries = TimingLog::read(run_dir).expect("timings.jsonl is readable");
    let mut session = started_unix;
    let mut finishes = Vec::new();
    let mut durations = Vec::new();
    let mut busy = 0.0;
    for entry in entries {
        match entry {
            TimingEntry::Session { started_unix, .. } => session = started_unix,
            TimingEntry::Timing {
                index,
                seconds,
                finished_unix,
            } => {
                busy += seconds;
                finishes.push(finished_unix);
                durations.push((index, seconds));
            }
        }
    }
    durations.sort_by_key(|&(index, _)| index);
    let durations = durations.into_iter().map(|(_, seconds)| seconds).collect();
    finishes.sort_by(f64::total_cmp);
    let last = finishes.last().copied().unwrap_or(session);
    let tail = match finishes.len() {
        0 | 1 => 0.0,
        n => finishes[n - 1] - finishes[n - 2],
    };
    (
        durations,
        session - started_unix,
        busy,
        last - session,
        tail,
    )
}

fn unix_now() -> f64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0.0, |d| d.as_secs_f64())
}

/// Runs the fixed search once with `jobs` workers in a fresh folder.
fn run_once(strategy: &str, jobs: usize, options: &Options) -> RunStats {
    let folder = tempfile::tempdir().expect("a temporary folder");
    let run_dir = folder.path().join("run");
    let choice = if strategy == "random" {
        StrategyChoice::Random
    } else {
        StrategyChoice::Evolution(None)
    };
    let job = SearchJob::new(DataSource::new(DIGITS))
        .strategy(choice)
        .evaluations(options.evaluations)
        .seed(options.seed)
        .jobs(jobs)
        // One validation split, as the figures in docs/performance.md were
        // measured (k-fold scoring trains every candidate once per fold).
        .folds(gemmule::workflow::FoldChoice::Off);
    let stop = AtomicBool::new(false);
    let (started_unix, cpu_started, started) = (unix_now(), process_cpu_seconds(), Instant::now());
    let outcome = job
        .run(&run_dir, &mut QuietObserver, &stop)
        .expect("the search runs");
    let wall = started.elapsed().as_secs_f64();
    let cpu = process_cpu_seconds() - cpu_started;
    assert_eq!(outcome.new_evaluations, options.evaluations);
    let (durations, before_session, busy, span, tail) = timing_stats(&run_dir, started_unix);
    RunStats {
        durations,
        wall,
        cpu,
        before_session,
        busy,
        span,
        tail,
    }
}

fn print_run(strategy: &str, jobs: usize, stats: &RunStats, evaluations: u64) {
    println!(
        "{strategy:<9} {jobs:>4} {:>8.2} {:>10.1} {:>8.2} {:>9.3} {:>8.2} {:>11.3} {:>8.3}",
        stats.wall,
        stats.per_minute(evaluations),
        stats.cpu,
        stats.before_session,
        stats.busy,
        stats.busy / (jobs as f64 * stats.span),
        stats.tail
    );
    println!(
        "run strategy={strategy} jobs={jobs} wall_s={:.3} eval_per_min={:.1} cpu_s={:.3} prep_s={:.3} busy_s={:.3} utilisation={:.3} tail_s={:.3}",
        stats.wall,
        stats.per_minute(evaluations),
        stats.cpu,
        stats.before_session,
        stats.busy,
        stats.busy / (jobs as f64 * stats.span),
        stats.tail
    );
}

/// What one round (the same search at 1 and at 2 jobs) measured.
struct Round {
    /// Evaluations per minute at 1 and at 2 jobs.
    rates: [f64; 2],
    /// Summed candidate seconds at 1 and at 2 jobs.
    busy: [f64; 2],
    /// Process CPU seconds at 1 and at 2 jobs.
    cpu: [f64; 2],
    /// Worker utilisation at 2 jobs.
    utilisation: f64,
    /// Scheduler efficiency at 2 jobs replayed from the 1-job candidate
    /// times, with lag 2 (the old rule) and lag 6 (the current one).
    replayed: [f64; 2],
}

/// Runs `options.rounds` rounds of `strategy`, alternating which job count goes first.
fn measure(strategy: &str, options: &Options) -> Vec<Round> {
    let mut rounds = Vec::new();
    for round in 0..options.rounds {
        let order: [usize; 2] = if round % 2 == 0 { [1, 2] } else { [2, 1] };
        let mut result = Round {
            rates: [0.0; 2],
            busy: [0.0; 2],
            cpu: [0.0; 2],
            utilisation: 0.0,
            replayed: [0.0; 2],
        };
        for jobs in order {
            let stats = run_once(strategy, jobs, options);
            print_run(strategy, jobs, &stats, options.evaluations);
            let slot = jobs - 1;
            result.rates[slot] = stats.per_minute(options.evaluations);
            result.busy[slot] = stats.busy;
            result.cpu[slot] = stats.cpu;
            if jobs == 2 {
                result.utilisation = stats.busy / (2.0 * stats.span);
            } else {
                let total: f64 = stats.durations.iter().sum();
                for (replayed, lag) in result.replayed.iter_mut().zip([2, 6]) {
                    *replayed = total / (2.0 * simulated_seconds(&stats.durations, 2, lag));
                }
            }
        }
        rounds.push(result);
    }
    rounds
}

/// The median over rounds of `value`.
fn median_of(rounds: &[Round], value: impl Fn(&Round) -> f64) -> f64 {
    median(&rounds.iter().map(value).collect::<Vec<_>>())
}

/// Prints the medians over rounds and one `result` line. Random search
/// trains the same candidates at 1 and 2 jobs, so its throughput ratio is a
/// parallel efficiency; aging evolution trains other candidates at 2 jobs
/// (it sees results later), so for it the ratio is not one.
fn summarise(strategy: &str, rounds: &[Round]) {
    let (one, two) = (
        median_of(rounds, |r| r.rates[0]),
        median_of(rounds, |r| r.rates[1]),
    );
    let efficiency = two / (2.0 * one);
    let per_round: Vec<String> = rounds
        .iter()
        .map(|r| format!("{:.3}", r.rates[1] / (2.0 * r.rates[0])))
        .collect();
    let label = if strategy == "random" {
        "parallel efficiency"
    } else {
        "throughput ratio (other candidates at 2 jobs: not an efficiency)"
    };
    println!(
        "{strategy}: jobs 1 median {one:.1} eval/min, jobs 2 median {two:.1} eval/min; \
         {label} {efficiency:.3} (per round: {}); candidate seconds summed, median: \
         jobs 1 {:.2}, jobs 2 {:.2}",
        per_round.join(", "),
        median_of(rounds, |r| r.busy[0]),
        median_of(rounds, |r| r.busy[1]),
    );
    println!(
        "{strategy}: worker utilisation at 2 jobs {:.3}; scheduler efficiency at 2 jobs replayed \
         from the 1-job candidate times: lag 2 (old rule) {:.3}, lag 6 (current rule) {:.3}",
        median_of(rounds, |r| r.utilisation),
        median_of(rounds, |r| r.replayed[0]),
        median_of(rounds, |r| r.replayed[1]),
    );
    if strategy == "random" {
        println!(
            "{strategy}: load-independent estimate (utilisation at 2 jobs x CPU s at 1 job / \
             CPU s at 2 jobs): {:.3}",
            median_of(rounds, |r| r.utilisation * r.cpu[0] / r.cpu[1])
        );
    }
    println!(
        "result bench=search_{strategy} jobs1_eval_per_min={one:.1} jobs2_eval_per_min={two:.1} ratio={efficiency:.3}"
    );
}

fn main() {
    std::env::set_var("RAYON_NUM_THREADS", "1");
    let options = options();
    if !Path::new(DIGITS).is_file() {
        eprintln!("{DIGITS} not found: run from the repository root");
        std::process::exit(2);
    }
    println!(
        "# search throughput: {DIGITS}, {} evaluations, seed {}, default space and trainer, {} rounds",
        options.evaluations, options.seed, options.rounds
    );
    println!(
        "# cpu: {}; load average at start: {}",
        machine(),
        load_average()
    );
    println!(
        "{:<9} {:>4} {:>8} {:>10} {:>8} {:>9} {:>8} {:>11} {:>8}",
        "strategy",
        "jobs",
        "wall s",
        "eval/min",
        "cpu s",
        "prep s",
        "busy s",
        "utilisation",
        "tail s"
    );
    for strategy in &options.strategies {
        let rounds = measure(strategy, &options);
        summarise(strategy, &rounds);
    }
    println!("# load average at end: {}", load_average());
}
