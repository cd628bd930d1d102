//! Random inputs for every parser that reads user files: the CSV reader (and
//! data preparation), layer and cell genome JSON, the IDX reader and the run
//! journal reader. 2,000 inputs each, from a fixed seed: every input must give
//! a value or a typed bad-input / I/O error, never a panic or an internal
//! error, and accepted values must keep the parser's promises.
//!
//! The checks are the fuzz targets' checks (`fuzz/src/checks.rs`, included
//! below), so this file is the quick, deterministic CI version of `fuzz/`.
//! Inputs are seed files with random edits plus short random byte strings
//! (common practice for property tests of parsers, no outside source).
//! Regression inputs found by fuzzing are at the end.

#[path = "../fuzz/src/checks.rs"]
#[allow(dead_code)]
mod checks;

use proptest::prelude::*;
use proptest::test_runner::{Config, RngSeed, TestRunner};

use checks::{csv_loader, genome_json, idx_reader, journal_reader, with_scratch};

/// A parser check: runs one input, returns whether it was accepted all the way.
type Check = fn(&checks::Scratch, &[u8]) -> bool;

/// Inputs per parser.
const CASES: u32 = 2_000;

/// Bytes that steer the parsers (delimiters, quotes, line ends, digits, JSON).
const ALPHABET: &[u8] = b",;\t\"\n\r 0123456789.-+eE{}[]:nulaxNA?\x00\xff\xef\xbb\xbf\x01\x03\x08";

/// One random edit of an input: where, which kind, which byte.
#[derive(Debug, Clone)]
struct Edit {
    at: usize,
    kind: u8,
    byte: u8,
}

fn edit_strategy() -> impl Strategy<Value = Edit> {
    (
        any::<usize>(),
        0u8..5,
        prop_oneof![prop::sample::select(ALPHABET), any::<u8>()],
    )
        .prop_map(|(at, kind, byte)| Edit { at, kind, byte })
}

/// Applies the edits to a copy of `seed`.
fn edited(seed: &[u8], edits: &[Edit]) -> Vec<u8> {
    let mut bytes = seed.to_vec();
    for edit in edits {
        let at = edit.at % (bytes.len() + 1);
        match edit.kind {
            0 => bytes.insert(at, edit.byte),
            1 if at < bytes.len() => {
                bytes.remove(at);
            }
            2 if at < bytes.len() => bytes[at] = edit.byte,
            3 => bytes.truncate(at),
            _ => {
                // Repeat a piece (a line, a field, a record).
                let end = (at + 1 + usize::from(edit.byte) % 48).min(bytes.len());
                let piece = bytes[at..end].to_vec();
                bytes.splice(at..at, piece);
            }
        }
    }
    bytes
}

/// Seed files with 0–8 random edits, or random bytes from the alphabet.
fn inputs(seeds: Vec<Vec<u8>>) -> impl Strategy<Value = Vec<u8>> {
    let mutated = (
        prop::sample::select(seeds),
        prop::collection::vec(edit_strategy(), 0..8),
    )
        .prop_map(|(seed, edits)| edited(&seed, &edits));
    let random = prop::collection::vec(
        prop_oneof![prop::sample::select(ALPHABET), any::<u8>()],
        0..200,
    );
    prop_oneof![4 => mutated, 1 => random]
}

/// The fuzz seed files of `target` (fuzz/seeds/TARGET/*).
fn seeds(target: &str) -> Vec<Vec<u8>> {
    let folder = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fuzz/seeds")
        .join(target);
    let mut paths: Vec<_> = std::fs::read_dir(&folder)
        .expect("fuzz seed folder")
        .flatten()
        .map(|e| e.path())
        .collect();
    paths.sort();
    let files: Vec<Vec<u8>> = paths
        .iter()
        .map(|p| std::fs::read(p).expect("seed"))
        .collect();
    assert!(!files.is_empty(), "no seeds in {}", folder.display());
    files
}

/// Runs `check` on `CASES` inputs from a fixed seed; a failure names the
/// shrunk input. At least `min_accepted` inputs must get through the parser,
/// so the checks of accepted values run too (the edits keep many inputs valid).
fn run(target: &str, seed: u64, min_accepted: u32, check: Check) {
    let config = Config {
        cases: CASES,
        failure_persistence: None,
        rng_seed: RngSeed::Fixed(seed),
        ..Config::default()
    };
    let mut runner = TestRunner::new(config);
    let accepted = std::cell::Cell::new(0u32);
    let result = runner.run(&inputs(seeds(target)), |input| {
        if with_scratch(|scratch| check(scratch, &input)) {
            accepted.set(accepted.get() + 1);
        }
        Ok(())
    });
    if let Err(failure) = result {
        panic!("{target}: {failure}");
    }
    assert!(
        accepted.get() >= min_accepted,
        "{target}: only {} of {CASES} inputs were accepted",
        accepted.get()
    );
}

#[test]
fn csv_reader_never_panics() {
    run("csv_loader", 11, 100, csv_loader);
}

#[test]
fn genome_json_never_panics() {
    run("genome_json", 12, 100, genome_json);
}

#[test]
fn idx_reader_never_panics() {
    run("idx_reader", 13, 100, idx_reader);
}

#[test]
fn journal_reader_never_panics() {
    run("journal_reader", 14, 100, journal_reader);
}

/// Inputs that once broke a parser (found by the fuzz targets; see fuzz/README.md).
#[test]
fn fuzz_regressions() {
    let huge_age = format!(
        "{}{}{}",
        "\x04age,cosourl,ize,label\n20,red,0.0,yes\n21,blue,1.5,no\n22,N-,3.0,yes\n\
         23,red,4.5,no\n24,blue,,yes\n25,NA,7.5,no\n26,red,9.0,yes\n27",
        "8".repeat(74),
        ",blue,10.5,no\n28,NA,12.,yes\n33,blue,19.5,no\n"
    );
    let cases: [(Check, &[u8]); 2] = [
        // csv_loader (libFuzzer): a lone CR ended a record without starting a
        // new line number, so two rows shared line 2. Lone CRs are line ends now.
        (csv_loader, b"\x00a,b\n1,2\r3,4\n"),
        // csv_loader (libFuzzer): an age of 2.8e86 in the validation split was
        // standardised with the training mean and deviation into an infinite
        // f32 feature. Such a cell is now refused, naming its line and column.
        (csv_loader, huge_age.as_bytes()),
    ];
    for (check, input) in cases {
        with_scratch(|scratch| check(scratch, input));
    }
}
