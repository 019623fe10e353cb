//! Visible skips for tests that need something outside the repository
//! (`../shared`, python3, GDAL, xmllint, Chromium).
//!
//! The test harness captures `println!`/`eprintln!` of passing tests, so a
//! skip said that way is invisible in a plain `cargo test`. [`skipped`]
//! writes to the process's standard error directly, which the harness does
//! not capture: every skip shows up in a plain run, with its reason.
//!
//! Include it with `#[path = "support/skip.rs"] mod skip;`.

use std::io::Write as _;

/// Say, on the real standard error, that `check` was skipped and why.
pub fn skipped(check: &str, why: &str) {
    let line = format!("SKIPPED {check}: {why}\n");
    // Ignore a failed write: a skip notice must never fail the test.
    let _ = std::io::stderr().lock().write_all(line.as_bytes());
}
