//! Peak resident memory of a search on a 20,000-row table.
//!
//! Writes a seeded synthetic table (20,000 rows: 32 numeric features, one
//! categorical feature with 6 levels, 5 classes; Gaussian blobs, and the
//! level drawn with a class-dependent bias) to a temporary folder, runs a
//! short search on it through the library's `SearchJob` (default space,
//! aging evolution, 3 epochs per candidate so it stays short), and prints
//! the process's peak resident set (VmHWM in /proc/self/status) before and
//! after the search. The target is at most 200 MB for the whole process.
//!
//! Run: `cargo bench --bench search_memory -- [--evaluations 12] [--jobs 2]
//! [--epochs 3] [--rows 20000]`.

mod support;

use std::fmt::Write as _;
use std::path::Path;
use std::sync::atomic::AtomicBool;
use std::time::Instant;

use gemmule::evaluate::TrainerSettings;
use gemmule::search::QuietObserver;
use gemmule::workflow::{DataSource, SearchJob};
use mimalloc::MiMalloc;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use support::{load_average, machine};

/// The allocator the `gemmule` binary uses, so the peak matches the CLI's.
#[global_allocator]
static GLOBAL: MiMalloc = MiMalloc;

const FEATURES: usize = 32;
const CLASSES: usize = 5;
const LEVELS: [&str; 6] = ["amber", "blue", "cyan", "dune", "ember", "fern"];
const DATA_SEED: u64 = 20_240_603;
/// The target of the performance issue, in MB (10^6 bytes).
const TARGET_MB: f64 = 200.0;

struct Options {
    rows: usize,
    evaluations: u64,
    jobs: usize,
    epochs: u32,
}

fn options() -> Options {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let value = |flag: &str| {
        args.iter()
            .position(|a| a == flag)
            .and_then(|i| args.get(i + 1))
            .and_then(|v| v.parse::<u64>().ok())
    };
    Options {
        rows: value("--rows").unwrap_or(20_000).max(100) as usize,
        evaluations: value("--evaluations").unwrap_or(12).max(1),
        jobs: value("--jobs").unwrap_or(2).max(1) as usize,
        epochs: value("--epochs").unwrap_or(3).max(1) as u32,
    }
}

/// Writes the synthetic table as CSV: f0..f31, colour, label (class0..class4).
fn write_table(path: &Path, rows: usize) -> std::io::Result<()> {
    let mut rng = ChaCha8Rng::seed_from_u64(DATA_SEED);
    let centres: Vec<f32> = (0..CLASSES * FEATURES)
        .map(|_| rng.gen_range(-1.0..1.0))
        .collect();
    let mut text = String::with_capacity(rows * (FEATURES * 11 + 20));
    for f in 0..FEATURES {
        let _ = write!(text, "f{f},");
    }
    text.push_str("colour,label\n");
    for _ in 0..rows {
        let class = rng.gen_range(0..CLASSES);
        for f in 0..FEATURES {
            let noise: f32 = rng.gen_range(-1.7..1.7);
            let _ = write!(text, "{:.4},", centres[class * FEATURES + f] + noise);
        }
        // The class's own level half the time, otherwise any level.
        let level = if rng.gen_bool(0.5) {
            class
        } else {
            rng.gen_range(0..LEVELS.len())
        };
        let _ = writeln!(text, "{},class{class}", LEVELS[level]);
    }
    std::fs::write(path, text)
}

/// VmHWM (peak resident set) of this process in MB, from /proc/self/status.
fn peak_resident_mb() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kilobytes: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kilobytes * 1024.0 / 1e6)
}

fn show(mb: Option<f64>) -> String {
    mb.map_or_else(|| "unknown".into(), |mb| format!("{mb:.1} MB"))
}

fn main() {
    std::env::set_var("RAYON_NUM_THREADS", "1");
    let options = options();
    println!(
        "# search memory: {} rows x ({FEATURES} numeric + 1 categorical), {CLASSES} classes; {} evaluations, {} jobs, {} epochs",
        options.rows, options.evaluations, options.jobs, options.epochs
    );
    println!(
        "# cpu: {}; load average at start: {}",
        machine(),
        load_average()
    );
    let folder = tempfile::tempdir().expect("a temporary folder");
    let data = folder.path().join("synthetic.csv");
    write_table(&data, options.rows).expect("the table is written");
    let bytes = std::fs::metadata(&data).map_or(0, |m| m.len());
    let before = peak_resident_mb();
    println!(
        "table: {} ({:.1} MB); peak resident before the search: {}",
        data.display(),
        bytes as f64 / 1e6,
        show(before)
    );
    let trainer = TrainerSettings {
        max_epochs: options.epochs,
        ..TrainerSettings::default()
    };
    let job = SearchJob::new(DataSource::new(&data))
        .evaluations(options.evaluations)
        .seed(1)
        .jobs(options.jobs)
        .trainer(trainer)
        // One validation split, as the figures in docs/performance.md were
        // measured (k-fold scoring trains every candidate once per fold).
        .folds(gemmule::workflow::FoldChoice::Off);
    let started = Instant::now();
    let outcome = job
        .run(
            &folder.path().join("run"),
            &mut QuietObserver,
            &AtomicBool::new(false),
        )
        .expect("the search runs");
    let seconds = started.elapsed().as_secs_f64();
    let after = peak_resident_mb();
    println!(
        "search: {} evaluations in {seconds:.1} s; peak resident (VmHWM) of the whole process: {}",
        outcome.new_evaluations,
        show(after)
    );
    let verdict = match after {
        Some(mb) if mb <= TARGET_MB => "within",
        Some(_) => "OVER",
        None => "unknown against",
    };
    println!("{verdict} the {TARGET_MB:.0} MB target");
    println!(
        "result bench=search_memory rows={} peak_mb={:.1} before_search_mb={:.1}",
        options.rows,
        after.unwrap_or(f64::NAN),
        before.unwrap_or(f64::NAN)
    );
    println!("# load average at end: {}", load_average());
}
