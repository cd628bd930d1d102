//! libFuzzer target: `checks::idx_reader` on every input (see fuzz/README.md).
#![no_main]

use gemmule_fuzz::checks;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    checks::with_scratch(|scratch| {
        checks::idx_reader(scratch, data);
    });
});
