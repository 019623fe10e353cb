//! How fast the survey reader is on a large file.
//!
//! `cargo run --release --example survey_read_speed [LINES]` writes a survey
//! of LINES readings (default 1,000,000, every 0.25 m, 20 m chord) to a
//! temporary file, reads it with `read_survey_file` three times and prints the
//! best time.

use std::time::Instant;

use chordline::survey::Rail;
use chordline::survey::read::{ReadOptions, read_survey_file};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let n: usize = match std::env::args().nth(1) {
        Some(s) => s.parse()?,
        None => 1_000_000,
    };
    let mut s = String::with_capacity(n * 24);
    s.push_str("chainage_m,versine_mm,side,note\n");
    for i in 0..n {
        let v = 40.0 * (i as f64 * 0.001).sin();
        s.push_str(&format!("{:.2},{v:.1},L,\n", i as f64 * 0.25));
    }
    let dir = std::env::temp_dir().join(format!("chordline-speed-{}", std::process::id()));
    std::fs::create_dir_all(&dir)?;
    let path = dir.join("big.csv");
    std::fs::write(&path, &s)?;
    let opts = ReadOptions {
        rail: None,
        ..ReadOptions::new(20.0)
    };
    let mut best = f64::INFINITY;
    for _ in 0..3 {
        let t = Instant::now();
        let (survey, diags) = read_survey_file(&path, &opts)?;
        let dt = t.elapsed().as_secs_f64();
        best = best.min(dt);
        assert_eq!(survey.readings.len(), n);
        assert!(survey.readings.iter().all(|r| r.rail == Rail::Left));
        assert!(diags.is_empty(), "{}", diags[0]);
    }
    std::fs::remove_dir_all(&dir)?;
    println!(
        "{n} lines, {:.1} MB: best of 3 reads {:.3} s ({:.1} M lines/s)",
        s.len() as f64 / 1e6,
        best,
        n as f64 / best / 1e6
    );
    Ok(())
}
