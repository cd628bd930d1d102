//! Conv and cell training benchmarks B5 and B6 on one thread.
//!
//! Data: 2,000 seeded synthetic 8×8×1 images, 10 classes (one random
//! template per class plus Gaussian noise), also written to
//! `target/bench-data/bench_images_2000x8x8.csv` (64 pixel columns in
//! row-major order, then the label) for `bench/reference/pytorch_bench.py`.
//! Both benchmarks: 10 epochs, Adam lr 1e-3, batch 64, no validation, one
//! warm-up run then `--runs` timed runs (default 5), trained by the library's
//! `AutogradLearner` and epoch loop (`fit`), the same path cell genomes take.
//!
//! - B5: conv 3×3 (1 → 8 channels, padding 1, bias) → ReLU → conv 3×3
//!   (8 → 16, padding 1, bias) → ReLU → global average pool → linear 16 → 10,
//!   built from `gemmule::net::ops`.
//! - B6: the reference image cell genome (`reference_image_cell_genome`,
//!   F = 8, N = 1, R = 2, B = 2) as an `ImageCellNet`, with the benchmark's
//!   Adam lr 1e-3 and batch 64 in place of the genome's own 0.01 and 32.
//!
//! Prints median/min/max seconds per epoch, thread CPU seconds per epoch,
//! samples/s and the forward/backward/optimizer split, and one `result …`
//! line per benchmark for `bench/compare.sh`.
//!
//! Run: `cargo bench --bench cells -- [--runs N] [--only B5,B6]`.

mod support;

use std::path::Path;
use std::time::Duration;

use candle_core::{Device, Tensor, Var};
use gemmule::data::image::ImageShape;
use gemmule::data::Dataset;
use gemmule::genome::{reference_image_cell_genome, Optimizer, TrainGenes};
use gemmule::net::ops::{add_channel_bias, conv2d, global_avg_pool, relu};
use gemmule::net::{seeded_rng, ImageCellNet};
use gemmule::train::{fit, AutogradLearner, AutogradNetwork, PhaseTimes, TrainSettings};
use mimalloc::MiMalloc;
use rand::{Rng, RngCore, SeedableRng};
use rand_chacha::ChaCha8Rng;
use support::{load_average, machine, median, min_max, standard_normal, timed, write_dataset_csv};

/// The allocator the `gemmule` binary uses, so buffer costs match the CLI.
#[global_allocator]
static GLOBAL: MiMalloc = MiMalloc;

const IMAGES: usize = 2_000;
const SIDE: usize = 8;
const PIXELS: usize = SIDE * SIDE;
const CLASSES: usize = 10;
const EPOCHS: u32 = 10;
const BATCH: usize = 64;
const LEARNING_RATE: f64 = 1e-3;
const DATA_SEED: u64 = 20_240_602;
const DATA_FILE: &str = "target/bench-data/bench_images_2000x8x8.csv";

/// The benchmark's optimiser: Adam, lr 1e-3, batch 64, no weight decay.
fn bench_genes() -> TrainGenes {
    TrainGenes {
        learning_rate: LEARNING_RATE,
        batch_size: BATCH as u32,
        weight_decay: 0.0,
        optimizer: Optimizer::Adam,
    }
}

/// One template per class, U(−1, 1) per pixel; each image is its class's
/// template plus N(0, 0.8²) noise per pixel.
fn synthetic_images() -> Dataset {
    let mut rng = ChaCha8Rng::seed_from_u64(DATA_SEED);
    let templates: Vec<f32> = (0..CLASSES * PIXELS)
        .map(|_| rng.gen_range(-1.0..1.0))
        .collect();
    let mut x = Vec::with_capacity(IMAGES * PIXELS);
    let mut y = Vec::with_capacity(IMAGES);
    for _ in 0..IMAGES {
        let class = rng.gen_range(0..CLASSES);
        for pixel in 0..PIXELS {
            x.push(templates[class * PIXELS + pixel] + 0.8 * standard_normal(&mut rng));
        }
        y.push(class as u32);
    }
    Dataset::new(x, y, PIXELS, CLASSES).expect("consistent synthetic images")
}

/// B5: two 3×3 convs with bias and ReLU, global average pool, linear head.
struct ConvNet {
    /// conv1 weight (8, 1, 3, 3), conv1 bias (8), conv2 weight (16, 8, 3, 3),
    /// conv2 bias (16), head weight (16, 10), head bias (10).
    vars: Vec<Var>,
}

impl ConvNet {
    /// He uniform conv weights, Glorot uniform head, zero biases, from `seed`.
    fn build(seed: u64) -> Self {
        let mut rng = seeded_rng(seed, 0);
        let mut uniform = |shape: &[usize], bound: f64| {
            let count: usize = shape.iter().product();
            let values: Vec<f32> = (0..count)
                .map(|_| rng.gen_range(-bound..bound) as f32)
                .collect();
            Var::from_vec(values, shape, &Device::Cpu).expect("shape matches")
        };
        let zeros = |n: usize| Var::zeros(n, candle_core::DType::F32, &Device::Cpu).expect("zeros");
        let vars = vec![
            uniform(&[8, 1, 3, 3], (6.0f64 / 9.0).sqrt()),
            zeros(8),
            uniform(&[16, 8, 3, 3], (6.0f64 / 72.0).sqrt()),
            zeros(16),
            uniform(&[16, CLASSES], (6.0f64 / (16 + CLASSES) as f64).sqrt()),
            zeros(CLASSES),
        ];
        ConvNet { vars }
    }

    /// relu(conv 3×3, padding 1, of `x` + bias).
    fn conv_relu(x: &Tensor, weight: &Var, bias: &Var) -> gemmule::Result<Tensor> {
        let z = conv2d(x, weight.as_tensor(), 1, 1, 1, 1)?;
        relu(&add_channel_bias(&z, bias.as_tensor())?)
    }
}

impl AutogradNetwork for ConvNet {
    fn n_inputs(&self) -> usize {
        PIXELS
    }

    fn n_classes(&self) -> usize {
        CLASSES
    }

    fn forward(&self, x: &Tensor, _train: bool, _rng: &mut dyn RngCore) -> gemmule::Result<Tensor> {
        let v = &self.vars;
        let images = x.reshape((x.dim(0)?, 1, SIDE, SIDE))?;
        let h = Self::conv_relu(&images, &v[0], &v[1])?;
        let h = Self::conv_relu(&h, &v[2], &v[3])?;
        let pooled = global_avg_pool(&h)?;
        Ok(pooled
            .matmul(v[4].as_tensor())?
            .broadcast_add(v[5].as_tensor())?)
    }

    fn variables(&self) -> gemmule::Result<Vec<Var>> {
        Ok(self.vars.clone())
    }

    fn weight_decay_flags(&self) -> Vec<bool> {
        vec![true, false, true, false, true, false]
    }
}

/// What one timed run measured.
struct RunTimes {
    wall_seconds: f64,
    cpu_seconds: f64,
    split: PhaseTimes,
}

/// Trains a fresh network of benchmark `name` for `EPOCHS` epochs.
fn run_once(name: &str, data: &Dataset, seed: u64) -> RunTimes {
    let settings = TrainSettings::new(EPOCHS, 0, seed);
    let genes = bench_genes();
    let (split, wall_seconds, cpu_seconds) = timed(|| {
        if name == "B5" {
            let network = ConvNet::build(seed);
            train_timed(AutogradLearner::new(network, &genes), data, &settings)
        } else {
            let shape = ImageShape::new(SIDE, SIDE, 1).expect("8x8x1");
            let mut genome = reference_image_cell_genome();
            genome.training = genes.clone();
            let network = ImageCellNet::build(&genome, shape, CLASSES, seed).expect("builds");
            train_timed(AutogradLearner::new(network, &genes), data, &settings)
        }
    });
    RunTimes {
        wall_seconds,
        cpu_seconds,
        split,
    }
}

/// Trains `learner` with the shared epoch loop and returns its phase split.
fn train_timed<N: AutogradNetwork>(
    learner: gemmule::Result<AutogradLearner<N>>,
    data: &Dataset,
    settings: &TrainSettings,
) -> PhaseTimes {
    let mut learner = learner.expect("a trainable network");
    learner.enable_timing();
    fit(&mut learner, data, None, settings, BATCH).expect("training runs");
    learner.phase_times().unwrap_or_default()
}

/// Warm-up, `runs` timed runs, one table row and one `result` line.
fn report(name: &str, data: &Dataset, runs: usize) {
    run_once(name, data, 0);
    let mut per_epoch = Vec::new();
    let mut cpu_per_epoch = Vec::new();
    let mut split = [Duration::ZERO; 3];
    for run in 0..runs {
        let times = run_once(name, data, 1 + run as u64);
        per_epoch.push(times.wall_seconds / f64::from(EPOCHS));
        cpu_per_epoch.push(times.cpu_seconds / f64::from(EPOCHS));
        split[0] += times.split.forward;
        split[1] += times.split.backward;
        split[2] += times.split.optimizer;
    }
    let (min, max) = min_max(&per_epoch);
    let med = median(&per_epoch);
    let cpu = median(&cpu_per_epoch);
    let samples = IMAGES as f64 / med;
    let epochs = f64::from(EPOCHS) * runs as f64;
    let phase = |i: usize| split[i].as_secs_f64() * 1e3 / epochs;
    println!(
        "{name:<4} {:<9} {med:>11.5} {min:>9.5} {max:>9.5} {cpu:>11.5} {samples:>10.0} {:>9.2} {:>9.2} {:>9.2}",
        "gemmule",
        phase(0),
        phase(1),
        phase(2)
    );
    println!(
        "result bench={name} impl=gemmule median_s={med:.6} min_s={min:.6} max_s={max:.6} cpu_s={cpu:.6} samples_per_s={samples:.0}"
    );
}

struct Options {
    runs: usize,
    only: Option<Vec<String>>,
}

fn options() -> Options {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let value = |flag: &str| {
        args.iter()
            .position(|a| a == flag)
            .and_then(|i| args.get(i + 1))
            .cloned()
    };
    Options {
        runs: value("--runs")
            .and_then(|v| v.parse().ok())
            .unwrap_or(5)
            .max(1),
        only: value("--only").map(|v| v.split(',').map(str::to_string).collect()),
    }
}

fn main() {
    // Candle re-reads the CPU count per matmul unless this is set; one thread as in the CLI.
    std::env::set_var("RAYON_NUM_THREADS", "1");
    let options = options();
    let data = synthetic_images();
    if let Err(e) = write_dataset_csv(&data, Path::new(DATA_FILE), "p") {
        eprintln!("could not write {DATA_FILE}: {e}");
    }
    println!("# gemmule conv/cell benchmarks: {IMAGES} images 8x8x1, {CLASSES} classes, {EPOCHS} epochs, Adam lr 1e-3, batch {BATCH}, 1 thread");
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
        "impl",
        "median s/ep",
        "min",
        "max",
        "cpu s/ep",
        "samples/s",
        "fwd ms/ep",
        "bwd ms/ep",
        "opt ms/ep"
    );
    for name in ["B5", "B6"] {
        let selected = options
            .only
            .as_ref()
            .is_none_or(|only| only.iter().any(|n| n == name));
        if selected {
            report(name, &data, options.runs);
        }
    }
    println!("# load average at end: {}", load_average());
}
