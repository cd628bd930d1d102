//! libFuzzer target: `checks::genome_json` on every input (see fuzz/README.md).
#![no_main]

use gemmule_fuzz::checks;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    checks::with_scratch(|scratch| {
        checks::genome_json(scratch, data);
    });
});
