//! Quick single-thread timings of the convolutional ops (`gemmule::net::ops`)
//! and each of their kernels against the reference implementations: forward
//! and backward (of the output's sum) on a 64×16×8×8 input, median thread
//! CPU time of interleaved runs. Run with `cargo bench --bench ops_quick [-- filter]`.

use candle_core::{Device, Tensor, Var};
use gemmule::net::ops::{self, kernels, reference, BatchNorm2d};
use gemmule::Result;
use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// The command line's allocator (src/main.rs), so buffer costs match real runs.
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// Timed repetitions per implementation (after one warm-up run).
const RUNS: usize = 15;

/// An op under test: produces its output from captured inputs.
type Op<'a> = Box<dyn FnMut() -> Result<Tensor> + 'a>;

/// A trainable tensor of `shape` with U(−1, 1) values.
fn random_var(rng: &mut ChaCha8Rng, shape: &[usize]) -> Result<Var> {
    let count = shape.iter().product();
    let values: Vec<f32> = (0..count).map(|_| rng.gen_range(-1.0f32..1.0)).collect();
    Ok(Var::from_vec(values, shape, &Device::Cpu)?)
}

/// CPU time this thread has used, in µs. On a shared, overloaded machine
/// wall-clock medians swung ±50% between runs; thread CPU time leaves out
/// the time the thread waits for a core (everything here runs on one thread).
fn thread_cpu_micros() -> f64 {
    let mut now = libc::timespec {
        tv_sec: 0,
        tv_nsec: 0,
    };
    // SAFETY: `now` is a valid, writable timespec; CLOCK_THREAD_CPUTIME_ID is
    // supported on Linux (clock_gettime(2)).
    let status = unsafe { libc::clock_gettime(libc::CLOCK_THREAD_CPUTIME_ID, &mut now) };
    if status != 0 {
        return f64::NAN;
    }
    now.tv_sec as f64 * 1e6 + now.tv_nsec as f64 / 1e3
}

/// Thread-CPU µs of one forward pass and of one forward + backward through `op`.
fn time_once(op: &mut Op<'_>) -> Result<(f64, f64)> {
    let start = thread_cpu_micros();
    let output = op()?;
    let forward = thread_cpu_micros() - start;
    let grads = output.sum_all()?.backward()?;
    std::hint::black_box(&grads);
    let both = thread_cpu_micros() - start;
    drop(grads);
    Ok((forward, both))
}

fn median(mut samples: Vec<f64>) -> f64 {
    samples.sort_by(f64::total_cmp);
    samples[samples.len() / 2]
}

/// True when `name` is selected: no filter words on the command line
/// (`cargo bench --bench ops_quick -- "conv 3x3/im2col" pool`), or one of
/// them occurs in it.
fn selected(name: &str) -> bool {
    let filters: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with('-'))
        .collect();
    filters.is_empty() || filters.iter().any(|f| name.contains(f.as_str()))
}

/// Times every (label, op) of `candidates` selected by the command-line
/// filter (matched against "name/label"), RUNS times each, and prints each
/// one's median forward + backward and forward-only µs. The reference (first
/// candidate) runs in its own block: its large memory churn slows whatever
/// runs next about 2× here. The others are interleaved in a fresh random
/// order every repetition.
fn compare(name: &str, candidates: Vec<(&str, Op<'_>)>) -> Result<()> {
    let mut candidates: Vec<_> = candidates
        .into_iter()
        .filter(|(label, _)| selected(&format!("{name}/{label}")))
        .collect();
    if candidates.is_empty() {
        return Ok(());
    }
    let count = candidates.len();
    let mut times = vec![Vec::new(); count];
    let (reference, fast) = candidates.split_at_mut(1);
    time_once(&mut reference[0].1)?;
    for _ in 0..RUNS {
        times[0].push(time_once(&mut reference[0].1)?);
    }
    for (_, op) in fast.iter_mut() {
        time_once(op)?;
    }
    let mut order: Vec<usize> = (0..fast.len()).collect();
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    for _ in 0..RUNS {
        order.shuffle(&mut rng);
        for &index in &order {
            times[index + 1].push(time_once(&mut fast[index].1)?);
        }
    }
    println!("{name}");
    for ((label, _), samples) in candidates.iter().zip(times) {
        let forward = median(samples.iter().map(|t| t.0).collect());
        let both = median(samples.iter().map(|t| t.1).collect());
        println!("    {label:<24} fwd+bwd {both:>7.0} µs   fwd {forward:>6.0} µs");
    }
    Ok(())
}

/// (name, stride, padding, dilation, groups, kernel size) of the timed 16 → 16 convolutions.
const CONVS: [(&str, usize, usize, usize, usize, usize); 6] = [
    ("conv 3x3", 1, 1, 1, 1, 3),
    ("conv 3x3 stride 2", 2, 1, 1, 1, 3),
    ("conv 1x1", 1, 0, 1, 1, 1),
    ("depthwise 3x3", 1, 1, 1, 16, 3),
    ("depthwise 3x3 stride 2", 2, 1, 1, 16, 3),
    ("dilated 3x3 (d 2, pad 2)", 1, 2, 2, 1, 3),
];

/// The signature every convolution entry point shares.
type ConvFn = fn(&Tensor, &Tensor, usize, usize, usize, usize) -> Result<Tensor>;

fn time_convs(rng: &mut ChaCha8Rng, x: &Tensor) -> Result<()> {
    for (name, stride, padding, dilation, groups, k) in CONVS {
        let w = random_var(rng, &[16, 16 / groups, k, k])?;
        let w = w.as_tensor();
        let mut entries: Vec<(&str, ConvFn)> = vec![
            ("reference", reference::conv2d),
            ("ops::conv2d", ops::conv2d),
            ("im2col", kernels::conv2d_im2col),
        ];
        if groups == 16 {
            entries.push(("depthwise direct", kernels::depthwise_direct));
        }
        let candidates = entries
            .into_iter()
            .map(|(label, conv)| {
                let op: Op<'_> = Box::new(move || conv(x, w, stride, padding, dilation, groups));
                (label, op)
            })
            .collect();
        compare(name, candidates)?;
    }
    Ok(())
}

fn time_pools(x: &Tensor) -> Result<()> {
    for stride in [1, 2] {
        compare(
            &format!("max pool 3x3 stride {stride}"),
            vec![
                (
                    "reference",
                    Box::new(move || reference::max_pool3x3(x, stride)),
                ),
                ("ops", Box::new(move || ops::max_pool3x3(x, stride))),
            ],
        )?;
        compare(
            &format!("avg pool 3x3 stride {stride}"),
            vec![
                (
                    "reference",
                    Box::new(move || reference::avg_pool3x3(x, stride)),
                ),
                ("ops", Box::new(move || ops::avg_pool3x3(x, stride))),
            ],
        )?;
    }
    compare(
        "global avg pool",
        vec![
            ("reference", Box::new(|| reference::global_avg_pool(x))),
            ("ops", Box::new(|| ops::global_avg_pool(x))),
        ],
    )
}

fn time_batch_norm(rng: &mut ChaCha8Rng, x: &Tensor) -> Result<()> {
    let (gamma, beta) = (random_var(rng, &[16])?, random_var(rng, &[16])?);
    let (gamma, beta) = (gamma.as_tensor(), beta.as_tensor());
    let mut norm = BatchNorm2d::new(16)?;
    compare(
        "batch norm train",
        vec![
            (
                "reference",
                Box::new(|| reference::batch_norm(x, gamma, beta, None)),
            ),
            ("ops", Box::new(|| norm.forward(x, true))),
        ],
    )?;
    let mut norm = BatchNorm2d::new(16)?;
    let (mean, var) = norm.running_stats();
    compare(
        "batch norm eval",
        vec![
            (
                "reference",
                Box::new(|| reference::batch_norm(x, gamma, beta, Some((&mean, &var)))),
            ),
            ("ops", Box::new(|| norm.forward(x, false))),
        ],
    )
}

fn time_elementwise(rng: &mut ChaCha8Rng, x: &Tensor) -> Result<()> {
    compare(
        "relu",
        vec![
            ("reference", Box::new(|| reference::relu(x))),
            ("ops", Box::new(|| ops::relu(x))),
        ],
    )?;
    let bias = random_var(rng, &[16])?;
    let bias = bias.as_tensor();
    compare(
        "channel bias",
        vec![
            (
                "reference",
                Box::new(|| reference::add_channel_bias(x, bias)),
            ),
            ("ops", Box::new(|| ops::add_channel_bias(x, bias))),
        ],
    )
}

/// Image side: 8, or `OPS_QUICK_SIDE` from the environment (to see how the
/// kernels scale; the recorded numbers use 8).
fn image_side() -> usize {
    std::env::var("OPS_QUICK_SIDE")
        .ok()
        .and_then(|side| side.parse().ok())
        .unwrap_or(8)
}

fn run() -> Result<()> {
    let mut rng = ChaCha8Rng::seed_from_u64(1);
    let side = image_side();
    let x = random_var(&mut rng, &[64, 16, side, side])?;
    time_convs(&mut rng, x.as_tensor())?;
    time_pools(x.as_tensor())?;
    time_batch_norm(&mut rng, x.as_tensor())?;
    time_elementwise(&mut rng, x.as_tensor())
}

fn main() -> Result<()> {
    // One thread everywhere (see ../shared/notes/candle-cpu.md): candle's
    // matmul reads RAYON_NUM_THREADS, its conv runs on the current rayon pool.
    std::env::set_var("RAYON_NUM_THREADS", "1");
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .map_err(|e| gemmule::Error::internal(e.to_string()))?;
    pool.install(run)
}
