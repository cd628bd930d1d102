//! Fuzzing harness for gemmule's parsers: the checks every input goes
//! through ([`checks`]), used by the libFuzzer targets in `fuzz_targets/` and
//! by the stable-toolchain driver `src/bin/stress.rs`.

pub mod checks;

/// A check: runs one input, returns whether it was accepted all the way.
pub type Check = fn(&checks::Scratch, &[u8]) -> bool;

/// The fuzz targets by name, each with its check.
pub const TARGETS: [(&str, Check); 4] = [
    ("csv_loader", checks::csv_loader),
    ("genome_json", checks::genome_json),
    ("idx_reader", checks::idx_reader),
    ("journal_reader", checks::journal_reader),
];
