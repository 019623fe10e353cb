//! Where the time of a run goes, stage by stage, on one survey file:
//!
//! ```sh
//! cargo run --release --example stage_times -- SURVEY.csv CHORD_M [wire|taped]
//! ```
//!
//! Prints the wall time of reading, of the stages in memory (`pipeline::process`:
//! integration, fit, placing, slews, advice) and of the whole run with every output
//! written (`pipeline::run`), each the median of three. The rail is the left one
//! unless the file has a `side` column. Used for the speed figures in the README.

use chordline::pipeline::{Options, process, run};
use chordline::{Marking, Rail, ReadOptions, read_survey_file};
use std::path::Path;
use std::time::Instant;

fn median3(mut f: impl FnMut() -> f64) -> f64 {
    let mut t = [f(), f(), f()];
    t.sort_by(f64::total_cmp);
    t[1]
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let usage = "usage: stage_times SURVEY.csv CHORD_M [wire|taped]";
    let (Some(path), Some(chord)) = (args.get(1), args.get(2).and_then(|c| c.parse::<f64>().ok()))
    else {
        eprintln!("{usage}");
        std::process::exit(1);
    };
    let marking = match args.get(3).map(String::as_str) {
        Some("wire") => Marking::Wire,
        Some("taped") | None => Marking::Taped,
        Some(other) => {
            eprintln!("marking must be wire or taped, not {other}\n{usage}");
            std::process::exit(1);
        }
    };
    let path = Path::new(path);
    let mut opts = Options::new(chord, Rail::Left);
    opts.setup.marking = marking;
    let ropts = ReadOptions {
        rail: Some(Rail::Left),
        chord,
        behind: None,
        marking,
    };
    let read = || read_survey_file(path, &ropts).unwrap_or_else(|e| panic!("{e}"));
    let n = read().0.readings.len();
    let t_read = median3(|| {
        let t = Instant::now();
        let _ = read();
        t.elapsed().as_secs_f64()
    });
    let t_process = median3(|| {
        let survey = read().0;
        let t = Instant::now();
        let _ = process(survey, &opts).unwrap_or_else(|e| panic!("{e}"));
        t.elapsed().as_secs_f64()
    });
    let out = std::env::temp_dir().join(format!("chordline-stage-times-{}", std::process::id()));
    let t_run = median3(|| {
        let t = Instant::now();
        let _ = run(path, &opts, &out, true).unwrap_or_else(|e| panic!("{e}"));
        t.elapsed().as_secs_f64()
    });
    let _ = std::fs::remove_dir_all(&out);
    println!("{n} readings");
    println!("read        {t_read:8.3} s");
    println!("stages      {t_process:8.3} s  (integrate, fit, place, slews, advice; in memory)");
    println!(
        "writing     {:8.3} s  (whole run minus the two above)",
        (t_run - t_read - t_process).max(0.0)
    );
    println!("whole run   {t_run:8.3} s");
}
