//! Trainer benchmark suite B1–B4: MLP training speed on one thread, plus the
//! large-matmul rate of our GEMM path.
//!
//! Data: 4,000 seeded synthetic rows × 32 features, 5 classes (Gaussian blobs),
//! also written to `target/bench-data/bench_4000x32.csv` for the reference
//! scripts in `bench/reference/`. Every benchmark: 10 epochs, Adam lr 1e-3,
//! no validation, relu hidden layers, one warm-up run then `--runs` timed
//! runs (default 5). Prints median/min/max seconds per epoch, samples/s and
//! the forward/backward/optimizer split, and one `result …` line per
//! benchmark for `bench/compare.sh`.
//!
//! Run: `cargo bench --bench trainer -- [--runs N] [--only B1,B3]
//! [--engine fast|autograd|both] [--no-matmul]`.

mod support;

use std::path::Path;
use std::time::{Duration, Instant};

use gemmule::data::Dataset;
use gemmule::genome::{Activation, LayerGene, LayerGenome, Optimizer, TrainGenes};
use gemmule::net::Mlp;
use gemmule::train::{fit, matmul_row_major, AutogradLearner, FastMlpLearner, TrainSettings};
use mimalloc::MiMalloc;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use support::{
    load_average, machine, median, standard_normal, thread_cpu_seconds, write_dataset_csv,
};

/// The allocator the `gemmule` binary uses, so "autograd" numbers match the CLI.
#[global_allocator]
static GLOBAL: MiMalloc = MiMalloc;

const ROWS: usize = 4_000;
const FEATURES: usize = 32;
const CLASSES: usize = 5;
const EPOCHS: u32 = 10;
const DATA_SEED: u64 = 20_240_601;
const DATA_FILE: &str = "target/bench-data/bench_4000x32.csv";

/// One benchmark: hidden widths and batch size.
struct Bench {
    name: &'static str,
    hidden: &'static [u32],
    batch: u32,
}

const BENCHES: [Bench; 4] = [
    Bench {
        name: "B1",
        hidden: &[64, 64],
        batch: 64,
    },
    Bench {
        name: "B2",
        hidden: &[256, 256],
        batch: 64,
    },
    Bench {
        name: "B3",
        hidden: &[256, 256],
        batch: 256,
    },
    Bench {
        name: "B4",
        hidden: &[64, 64],
        batch: 8,
    },
];
// B5 (conv net) and B6 (reference cell genome) train on images: benches/cells.rs.

struct Options {
    runs: usize,
    only: Option<Vec<String>>,
    engines: Vec<&'static str>,
    matmul: bool,
}

fn options() -> Options {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let value = |flag: &str| {
        args.iter()
            .position(|a| a == flag)
            .and_then(|i| args.get(i + 1))
            .cloned()
    };
    let engines = match value("--engine").as_deref() {
        Some("fast") => vec!["fast"],
        Some("autograd") => vec!["autograd"],
        _ => vec!["fast", "autograd"],
    };
    Options {
        runs: value("--runs")
            .and_then(|v| v.parse().ok())
            .unwrap_or(5)
            .max(1),
        only: value("--only").map(|v| v.split(',').map(str::to_string).collect()),
        engines,
        matmul: !args.iter().any(|a| a == "--no-matmul"),
    }
}

/// Gaussian blobs: 5 class centres uniform in ±1.5 per feature, unit noise.
fn synthetic_data() -> Dataset {
    let mut rng = ChaCha8Rng::seed_from_u64(DATA_SEED);
    let centres: Vec<f32> = (0..CLASSES * FEATURES)
        .map(|_| rng.gen_range(-1.5..1.5))
        .collect();
    let mut x = Vec::with_capacity(ROWS * FEATURES);
    let mut y = Vec::with_capacity(ROWS);
    for _ in 0..ROWS {
        let class = rng.gen_range(0..CLASSES);
        for feature in 0..FEATURES {
            x.push(centres[class * FEATURES + feature] + standard_normal(&mut rng));
        }
        y.push(class as u32);
    }
    Dataset::new(x, y, FEATURES, CLASSES).expect("consistent synthetic data")
}

fn genome(bench: &Bench) -> LayerGenome {
    let layers = bench
        .hidden
        .iter()
        .map(|&width| LayerGene {
            width,
            activation: Activation::Relu,
            residual: false,
            dropout: 0.0,
        })
        .collect();
    LayerGenome {
        layers,
        training: TrainGenes {
            learning_rate: 1e-3,
            batch_size: bench.batch,
            weight_decay: 0.0,
            optimizer: Optimizer::Adam,
        },
    }
}

/// What one timed run measured.
struct RunTimes {
    wall_seconds: f64,
    cpu_seconds: f64,
    split: Option<[Duration; 3]>,
}

/// One run of `EPOCHS` epochs: wall and CPU seconds and, for the fast engine, the phase split.
fn run_once(bench: &Bench, engine: &str, data: &Dataset, seed: u64) -> RunTimes {
    let cpu_started = thread_cpu_seconds();
    let (wall_seconds, split) = train_once(bench, engine, data, seed);
    RunTimes {
        wall_seconds,
        cpu_seconds: thread_cpu_seconds() - cpu_started,
        split,
    }
}

fn train_once(
    bench: &Bench,
    engine: &str,
    data: &Dataset,
    seed: u64,
) -> (f64, Option<[Duration; 3]>) {
    let genome = genome(bench);
    let settings = TrainSettings::new(EPOCHS, 0, seed);
    let batch = bench.batch as usize;
    if engine == "fast" {
        let mut learner =
            FastMlpLearner::build(&genome, FEATURES, CLASSES, seed).expect("valid genome");
        learner.enable_timing();
        let started = Instant::now();
        fit(&mut learner, data, None, &settings, batch).expect("training runs");
        let seconds = started.elapsed().as_secs_f64();
        let split = learner
            .phase_times()
            .map(|t| [t.forward, t.backward, t.optimizer]);
        (seconds, split)
    } else {
        let mlp = Mlp::build(&genome, FEATURES, CLASSES, seed).expect("valid genome");
        let mut learner = AutogradLearner::new(mlp, &genome.training).expect("trainable");
        let started = Instant::now();
        fit(&mut learner, data, None, &settings, batch).expect("training runs");
        (started.elapsed().as_secs_f64(), None)
    }
}

/// GFLOP/s of an m×k by k×n f32 matmul through our GEMM path: median over
/// `runs` repetitions after a warm-up, by wall time and by thread CPU time.
fn matmul_rate((m, k, n): (usize, usize, usize), runs: usize) -> (f64, f64) {
    let mut rng = ChaCha8Rng::seed_from_u64(1);
    let a: Vec<f32> = (0..m * k).map(|_| rng.gen_range(-1.0..1.0)).collect();
    let b: Vec<f32> = (0..k * n).map(|_| rng.gen_range(-1.0..1.0)).collect();
    let mut c = vec![0.0f32; m * n];
    let flops = 2.0 * (m * k * n) as f64;
    let (mut wall_rates, mut cpu_rates) = (Vec::new(), Vec::new());
    for run in 0..=runs {
        let (cpu_started, started) = (thread_cpu_seconds(), Instant::now());
        matmul_row_major(&mut c, &a, &b, (m, k, n)).expect("sizes match");
        let (wall, cpu) = (
            started.elapsed().as_secs_f64(),
            thread_cpu_seconds() - cpu_started,
        );
        if run > 0 {
            wall_rates.push(flops / wall / 1e9);
            cpu_rates.push(flops / cpu / 1e9);
        }
    }
    std::hint::black_box(&c);
    (median(&wall_rates), median(&cpu_rates))
}

/// Warm-up, `runs` timed runs, one table row and one `result` line.
fn report(bench: &Bench, engine: &str, data: &Dataset, runs: usize) {
    run_once(bench, engine, data, 0);
    let mut per_epoch = Vec::new();
    let mut cpu_per_epoch = Vec::new();
    let mut split_total: Option<[Duration; 3]> = None;
    for run in 0..runs {
        let times = run_once(bench, engine, data, 1 + run as u64);
        per_epoch.push(times.wall_seconds / f64::from(EPOCHS));
        cpu_per_epoch.push(times.cpu_seconds / f64::from(EPOCHS));
        if let Some(split) = times.split {
            let total = split_total.get_or_insert([Duration::ZERO; 3]);
            for (total, part) in total.iter_mut().zip(split) {
                *total += part;
            }
        }
    }
    let min = per_epoch.iter().copied().fold(f64::INFINITY, f64::min);
    let max = per_epoch.iter().copied().fold(0.0, f64::max);
    let med = median(&per_epoch);
    let cpu = median(&cpu_per_epoch);
    let samples = ROWS as f64 / med;
    let phase = |i: usize| match split_total {
        Some(total) => {
            let epochs = f64::from(EPOCHS) * runs as f64;
            format!("{:.2}", total[i].as_secs_f64() * 1e3 / epochs)
        }
        None => "-".into(),
    };
    println!(
        "{:<4} {:<9} {:>11.5} {:>9.5} {:>9.5} {:>11.5} {:>10.0} {:>9} {:>9} {:>9}",
        bench.name,
        engine,
        med,
        min,
        max,
        cpu,
        samples,
        phase(0),
        phase(1),
        phase(2)
    );
    println!(
        "result bench={} impl=gemmule-{engine} median_s={med:.6} min_s={min:.6} max_s={max:.6} cpu_s={cpu:.6} samples_per_s={samples:.0}",
        bench.name
    );
}

fn main() {
    // Candle (the autograd engine) re-reads the CPU count per matmul unless this is set.
    std::env::set_var("RAYON_NUM_THREADS", "1");
    let options = options();
    let data = synthetic_data();
    if let Err(e) = write_dataset_csv(&data, Path::new(DATA_FILE), "f") {
        eprintln!("could not write {DATA_FILE}: {e}");
    }
    println!("# gemmule trainer benchmarks: {ROWS}x{FEATURES}, {CLASSES} classes, {EPOCHS} epochs, Adam lr 1e-3, 1 thread");
    println!(
        "# cpu: {}; load average at start: {}",
        machine(),
        load_average()
    );
    println!(
        "# data: {DATA_FILE}; {} timed runs after 1 warm-up",
        options.runs
    );
    println!(
        "{:<4} {:<9} {:>11} {:>9} {:>9} {:>11} {:>10} {:>9} {:>9} {:>9}",
        "name",
        "engine",
        "median s/ep",
        "min",
        "max",
        "cpu s/ep",
        "samples/s",
        "fwd ms/ep",
        "bwd ms/ep",
        "opt ms/ep"
    );
    for bench in &BENCHES {
        let selected = options
            .only
            .as_ref()
            .is_none_or(|only| only.iter().any(|n| n == bench.name));
        if selected {
            for engine in &options.engines {
                report(bench, engine, &data, options.runs);
            }
        }
    }
    println!("# B5 (conv net) and B6 (reference cell genome): cargo bench --bench cells");
    if options.matmul {
        let (wall, cpu) = matmul_rate((1024, 1024, 1024), 5);
        println!("matmul 1024^3 f32, our GEMM path (1 thread): {wall:.1} GFLOP/s by wall time, {cpu:.1} by CPU time");
        println!("result bench=matmul1024 impl=gemmule gflops={wall:.1} cpu_gflops={cpu:.1}");
        for shape in [(64, 256, 256), (256, 256, 256)] {
            let (wall, cpu) = matmul_rate(shape, 200);
            println!("matmul {shape:?} (an MLP step's shape): {wall:.1} GFLOP/s by wall time, {cpu:.1} by CPU time");
        }
    }
    println!("# load average at end: {}", load_average());
}
