//! Helpers the bench binaries share: clocks, medians and a description of
//! the machine and its load, printed beside every number.

// Each bench binary compiles this module and uses a different subset of it.
#![allow(dead_code)]

use gemmule::data::Dataset;
use rand::Rng;
use std::path::Path;
use std::time::Instant;

/// CPU seconds this thread has run: unlike wall time, not inflated while
/// other processes hold the core (cache sharing still costs something).
pub fn thread_cpu_seconds() -> f64 {
    clock_seconds(libc::CLOCK_THREAD_CPUTIME_ID)
}

/// CPU seconds all threads of this process have run (user + system).
pub fn process_cpu_seconds() -> f64 {
    clock_seconds(libc::CLOCK_PROCESS_CPUTIME_ID)
}

fn clock_seconds(clock: libc::clockid_t) -> f64 {
    let mut time = libc::timespec {
        tv_sec: 0,
        tv_nsec: 0,
    };
    // SAFETY: `time` is a valid, writable timespec for the call's duration;
    // both clocks used here exist on Linux (clock_gettime(2)).
    let status = unsafe { libc::clock_gettime(clock, &mut time) };
    if status != 0 {
        return f64::NAN;
    }
    time.tv_sec as f64 + time.tv_nsec as f64 * 1e-9
}

/// Wall and thread-CPU seconds `work` took, with its result.
pub fn timed<T>(work: impl FnOnce() -> T) -> (T, f64, f64) {
    let (cpu_started, started) = (thread_cpu_seconds(), Instant::now());
    let value = work();
    let wall = started.elapsed().as_secs_f64();
    (value, wall, thread_cpu_seconds() - cpu_started)
}

/// The middle value (the upper middle one for an even count); NaN when empty.
pub fn median(values: &[f64]) -> f64 {
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    sorted.get(sorted.len() / 2).copied().unwrap_or(f64::NAN)
}

/// Smallest and largest value.
pub fn min_max(values: &[f64]) -> (f64, f64) {
    values
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| {
            (lo.min(v), hi.max(v))
        })
}

/// The 1-, 5- and 15-minute load averages from /proc/loadavg.
pub fn load_average() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .map(|s| s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .unwrap_or_else(|_| "unknown".into())
}

/// The CPU model name from /proc/cpuinfo and the logical CPU count.
pub fn machine() -> String {
    let model = std::fs::read_to_string("/proc/cpuinfo")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("model name"))
                .and_then(|l| l.split(':').nth(1))
                .map(|m| m.trim().to_string())
        })
        .unwrap_or_else(|| "unknown".into());
    let cpus = std::thread::available_parallelism().map_or(0, |n| n.get());
    format!("{model} ({cpus} logical cpus)")
}

/// A standard normal draw by the Box–Muller transform (seeded synthetic data).
pub fn standard_normal<R: Rng>(rng: &mut R) -> f32 {
    let u1: f64 = rng.gen_range(f64::EPSILON..1.0);
    let u2: f64 = rng.gen();
    ((-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()) as f32
}

/// Writes `data` as CSV for the reference scripts: columns `{prefix}0`,
/// `{prefix}1`, … and `label` (the class index).
pub fn write_dataset_csv(data: &Dataset, path: &Path, prefix: &str) -> std::io::Result<()> {
    if let Some(folder) = path.parent() {
        std::fs::create_dir_all(folder)?;
    }
    let mut text = String::with_capacity(data.len() * data.n_features * 10);
    let header: Vec<String> = (0..data.n_features)
        .map(|column| format!("{prefix}{column}"))
        .collect();
    text.push_str(&header.join(","));
    text.push_str(",label\n");
    for row in 0..data.len() {
        for value in data.row(row) {
            text.push_str(&format!("{value},"));
        }
        text.push_str(&format!("{}\n", data.y[row]));
    }
    std::fs::write(path, text)
}
