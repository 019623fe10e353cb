//! Helpers shared by the tests that run the `chordline` binary.
//! Use from a test crate with `mod common;`.

#![allow(dead_code, reason = "each test crate uses a different part")]

use std::path::{Path, PathBuf};

/// Visible skips (see `tests/support/skip.rs`).
#[path = "../support/skip.rs"]
pub mod skip;
use std::process::{Command, Output};

/// Run the built binary with `args`.
pub fn chordline(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_chordline"))
        .args(args)
        .output()
        .expect("run chordline")
}

/// The bundled demo survey.
pub fn demo_survey() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/eastvale-survey.csv")
}

/// `chordline run` on the demo survey (20 m chord, left rail) into `out`, plus `extra` options.
pub fn run_demo_to(out: &Path, extra: &[&str]) -> Output {
    let survey = demo_survey();
    let mut args = vec![
        "run",
        survey.to_str().unwrap(),
        "--chord",
        "20m",
        "--rail",
        "left",
        "--out",
        out.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    chordline(&args)
}

/// What the run wrote to stderr.
pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// What the run wrote to stdout (the results: summary, where it wrote).
pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// Run the team's output-contract checker (`../shared/tools/check-outputs`,
/// Python standard library) on `dir` and assert that it passes. Returns
/// `false`, after saying why, where the checker is absent (a user's clone has
/// no `../shared`).
pub fn check_contract(dir: &Path) -> bool {
    let checker = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/tools/check-outputs");
    if !checker.exists() {
        skip::skipped(
            "output contract checker",
            &format!(
                "{} is absent (no ../shared in this clone)",
                checker.display()
            ),
        );
        return false;
    }
    let c = Command::new("python3")
        .arg(&checker)
        .arg(dir)
        .output()
        .expect("run python3");
    assert!(
        c.status.success(),
        "check-outputs: {}{}",
        String::from_utf8_lossy(&c.stdout),
        String::from_utf8_lossy(&c.stderr)
    );
    true
}

/// The integrated plan of `survey` (no control points, default start): what
/// the element fit takes.
pub fn plan_of(
    survey: &chordline::survey::Survey,
    setup: &chordline::survey::Setup,
) -> chordline::integrate::Plan {
    let opts = chordline::integrate::IntegrateOptions::default();
    chordline::integrate::integrate(survey, setup, &opts)
        .expect("integrate")
        .0
}

/// The rows of a CSV table the program wrote (comment lines skipped), each
/// as column name → number (NaN where the cell is not a number).
pub fn csv_rows(p: &Path) -> Vec<std::collections::HashMap<String, f64>> {
    let text = std::fs::read_to_string(p).unwrap();
    let body: String = text
        .lines()
        .filter(|l| !l.starts_with('#'))
        .map(|l| format!("{l}\n"))
        .collect();
    let mut rd = csv::Reader::from_reader(body.as_bytes());
    let h: Vec<String> = rd.headers().unwrap().iter().map(str::to_string).collect();
    rd.records()
        .map(|r| {
            let r = r.unwrap();
            h.iter()
                .cloned()
                .zip(r.iter().map(|v| v.parse().unwrap_or(f64::NAN)))
                .collect()
        })
        .collect()
}
