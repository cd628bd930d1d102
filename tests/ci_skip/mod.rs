//! Skipping a test that cannot run here: outside CI it prints
//! "skipped: why" and returns; in CI (`CI` set, as `.ci/run` runs), where
//! every test is meant to run, a skip is a failure instead, so a missing
//! install step cannot pass unnoticed.

/// Reports that the calling test cannot run here, for `why` (see the module docs).
pub fn skip(why: &str) {
    assert!(
        std::env::var_os("CI").is_none(),
        "skipped in CI, where this test must run: {why}"
    );
    eprintln!("skipped: {why}");
}
