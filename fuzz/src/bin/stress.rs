//! A fuzz driver for the stable toolchain (no libFuzzer, no coverage
//! feedback): seeded random and mutated inputs, starting from the seed files
//! in `fuzz/seeds/TARGET/` and any corpus in `fuzz/corpus/TARGET/`, each run
//! through the target's check under `catch_unwind`. A panicking input is
//! saved to `fuzz/artifacts/TARGET/crash-…` (the same place libFuzzer uses).
//!
//! Usage: `cargo run --release --no-default-features --features stress --bin stress -- TARGET SECONDS [SEED]`

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use gemmule_fuzz::checks::Scratch;
use gemmule_fuzz::TARGETS;

/// SplitMix64: a small seeded generator, enough to pick mutations.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

/// Bytes that matter to the parsers (delimiters, quotes, digits, JSON punctuation).
const INTERESTING: &[u8] =
    b",;\t\"\n\r 0123456789.-+eE{}[]:\\nul?NAaxf\x00\xff\xef\xbb\xbf\x08\x03\x01";

fn read_all(folder: &Path) -> Vec<Vec<u8>> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(folder)
        .map(|entries| entries.flatten().map(|e| e.path()).collect())
        .unwrap_or_default();
    files.sort();
    files
        .iter()
        .filter_map(|path| std::fs::read(path).ok())
        .collect()
}

/// One input: a random byte string, or a seed with a few random edits.
fn next_input(rng: &mut Rng, pool: &[Vec<u8>]) -> Vec<u8> {
    if pool.is_empty() || rng.below(8) == 0 {
        let len = rng.below(256);
        return (0..len)
            .map(|_| INTERESTING[rng.below(INTERESTING.len())])
            .collect();
    }
    let mut input = pool[rng.below(pool.len())].clone();
    for _ in 0..1 + rng.below(8) {
        let at = rng.below(input.len() + 1);
        let byte = if rng.below(2) == 0 {
            INTERESTING[rng.below(INTERESTING.len())]
        } else {
            rng.next() as u8
        };
        match rng.below(6) {
            0 => input.insert(at, byte),
            1 if at < input.len() => {
                input.remove(at);
            }
            2 if at < input.len() => input[at] = byte,
            3 => input.truncate(at),
            4 if !input.is_empty() => {
                // Copy a slice of the input to another place (repeats lines, fields).
                let from = rng.below(input.len());
                let len = rng.below(64).min(input.len() - from);
                let piece = input[from..from + len].to_vec();
                let at = at.min(input.len());
                input.splice(at..at, piece);
            }
            _ => {
                let other = &pool[rng.below(pool.len())];
                let from = rng.below(other.len() + 1);
                input.truncate(at);
                input.extend_from_slice(&other[from..]);
            }
        }
    }
    input
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let usage = "usage: stress TARGET SECONDS [SEED]; targets: csv_loader, genome_json, idx_reader, journal_reader";
    let Some((name, check)) = args
        .get(1)
        .and_then(|wanted| TARGETS.iter().find(|(name, _)| name == wanted))
    else {
        eprintln!("{usage}");
        std::process::exit(2);
    };
    let seconds: u64 = args.get(2).and_then(|s| s.parse().ok()).unwrap_or(60);
    let seed: u64 = args.get(3).and_then(|s| s.parse().ok()).unwrap_or(1);
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut pool = read_all(&root.join("seeds").join(name));
    pool.extend(read_all(&root.join("corpus").join(name)));
    let artifacts = root.join("artifacts").join(name);
    std::panic::set_hook(Box::new(|_| {}));
    let scratch = Scratch::new();
    let mut rng = Rng(seed);
    let deadline = Instant::now() + Duration::from_secs(seconds);
    let (mut runs, mut crashes, mut accepted) = (0u64, 0u64, 0u64);
    while Instant::now() < deadline {
        let input = next_input(&mut rng, &pool);
        runs += 1;
        let outcome = catch_unwind(AssertUnwindSafe(|| check(&scratch, &input)));
        if matches!(outcome, Ok(true)) {
            accepted += 1;
        }
        if let Err(panic) = outcome {
            crashes += 1;
            let text = panic
                .downcast_ref::<String>()
                .cloned()
                .or_else(|| panic.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_default();
            let _ = std::fs::create_dir_all(&artifacts);
            let file = artifacts.join(format!("crash-{seed}-{runs}"));
            let _ = std::fs::write(&file, &input);
            eprintln!("crash: {} ({text})", file.display());
        }
    }
    println!(
        "{name}: {runs} inputs in {seconds} s (seed {seed}), {accepted} accepted, {crashes} crashes"
    );
}
