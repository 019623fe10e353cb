//! `chordline run` and `chordline demo` end to end: the output contract, exit
//! codes, never losing earlier results, determinism.

mod common;

use common::{check_contract, chordline, demo_survey, run_demo_to, stderr, stdout};

#[test]
fn run_on_the_demo_follows_the_output_contract() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run_demo_to(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let stations = std::fs::read_to_string(out.join("stations.csv")).unwrap();
    assert!(stations.starts_with(
        "chainage_m,versine_mm,curvature_1_per_km,bearing_deg,easting_m,northing_m,position_sd_m"
    ));
    // The team's output-contract checker (skips where ../shared is absent).
    check_contract(&out);
}

#[test]
fn an_existing_folder_is_kept_without_force_and_after_a_failed_run() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let out_s = out.to_str().unwrap();
    let survey = demo_survey();
    let survey_s = survey.to_str().unwrap();
    let ok = chordline(&[
        "run", survey_s, "--chord", "20m", "--rail", "left", "--out", out_s,
    ]);
    assert!(ok.status.success(), "{}", stderr(&ok));
    let before = std::fs::read(out.join("stations.csv")).unwrap();

    // Without --force: refused, exit 1, folder untouched.
    let again = chordline(&[
        "run", survey_s, "--chord", "20m", "--rail", "left", "--out", out_s,
    ]);
    assert_eq!(again.status.code(), Some(1), "{}", stderr(&again));
    assert!(stderr(&again).contains("--force"), "{}", stderr(&again));
    assert_eq!(std::fs::read(out.join("stations.csv")).unwrap(), before);

    // A failing run with --force (bad survey): exit 1, message names file and line, folder untouched.
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "chainage_m,versine_mm\n0,1\n10,x2\n20,3\n").unwrap();
    let fail = chordline(&[
        "run",
        bad.to_str().unwrap(),
        "--chord",
        "20m",
        "--rail",
        "left",
        "--out",
        out_s,
        "--force",
    ]);
    assert_eq!(fail.status.code(), Some(1), "{}", stderr(&fail));
    assert!(stderr(&fail).contains("bad.csv:3"), "{}", stderr(&fail));
    assert_eq!(std::fs::read(out.join("stations.csv")).unwrap(), before);
    // No staging folders left behind.
    let leftovers: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n != "out" && n != "bad.csv")
        .collect();
    assert!(leftovers.is_empty(), "left behind: {leftovers:?}");
}

#[test]
fn the_same_input_gives_byte_identical_outputs_with_any_number_of_threads() {
    // A vehicle-like survey long enough (> 20 000 readings) for the fit to
    // spread independent curves over threads.
    let dir = tempfile::tempdir().unwrap();
    let design = dir.path().join("route.json");
    std::fs::write(
        &design,
        chordline::simulate::design_json(&chordline::simulate::synthetic_route(6_000.0, 3)),
    )
    .unwrap();
    let survey = dir.path().join("route.csv");
    let o = chordline(&[
        "simulate",
        design.to_str().unwrap(),
        "--chord",
        "10m",
        "--spacing",
        "0.25m",
        "--noise",
        "0.3mm",
        "--resolution",
        "0.1mm",
        "--out",
        survey.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let mut outputs = Vec::new();
    for threads in ["1", "2", "1"] {
        let out = dir.path().join(format!("out{}", outputs.len()));
        let o = chordline(&[
            "run",
            survey.to_str().unwrap(),
            "--chord",
            "10m",
            "--rail",
            "left",
            "--threads",
            threads,
            "--out",
            out.to_str().unwrap(),
        ]);
        assert!(o.status.success(), "{}", stderr(&o));
        let mut files: Vec<_> = std::fs::read_dir(&out)
            .unwrap()
            .map(|e| e.unwrap().path())
            .collect();
        files.sort();
        outputs.push(
            files
                .iter()
                .map(|p| (p.file_name().unwrap().to_owned(), std::fs::read(p).unwrap()))
                .collect::<Vec<_>>(),
        );
    }
    assert!(outputs[0].len() >= 4, "expected the full set of outputs");
    assert_eq!(outputs[0], outputs[1], "1 thread vs 2 threads");
    assert_eq!(outputs[0], outputs[2], "two runs with 1 thread");
}

#[test]
fn usage_errors_exit_1_and_help_documents_exit_codes() {
    let o = chordline(&["run", "x.csv", "--chord", "-20m", "--out", "o"]);
    assert_eq!(o.status.code(), Some(1));
    let o = chordline(&["run", "x.csv", "--chord", "20", "--out", "o"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("no unit"), "{}", stderr(&o));
    let h = chordline(&["--help"]);
    assert!(h.status.success());
    let text = String::from_utf8_lossy(&h.stdout);
    assert!(
        text.contains("Exit status: 0 success; 1 input or usage error"),
        "{text}"
    );
}

#[test]
fn demo_says_where_it_wrote() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo");
    let o = chordline(&["demo", "--out", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stdout(&o).contains(&format!("in {}", out.display())),
        "{}",
        stdout(&o)
    );
    assert!(out.join("stations.csv").exists());
}

#[test]
fn the_report_is_one_self_contained_html_file() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run_demo_to(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>"));
    // Versines, curvature, residuals, plan and uncertainty diagrams.
    assert_eq!(html.matches("<svg").count(), 5, "diagrams");
    assert!(html.contains("Caution"));
    // Self-contained: no scripts, no outside resources.
    for bad in ["<script", "src=\"http", "href=\"http", "NaN"] {
        assert!(!html.contains(bad), "report contains {bad}");
    }
}

#[test]
fn batch_writes_one_folder_per_survey_and_reports_failures() {
    let dir = tempfile::tempdir().unwrap();
    let good = dir.path().join("good.csv");
    std::fs::copy(demo_survey(), &good).unwrap();
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "chainage_m,versine_mm\n0,1\n10,oops\n").unwrap();
    let out = dir.path().join("out");
    let o = chordline(&[
        "batch",
        good.to_str().unwrap(),
        bad.to_str().unwrap(),
        "--chord",
        "20m",
        "--rail",
        "left",
        "--jobs",
        "2",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(stderr(&o).contains("bad.csv:3"), "{}", stderr(&o));
    assert!(out.join("good/stations.csv").exists());
    assert!(!out.join("bad").exists());
    // The same survey alone gives the same bytes as in the batch.
    let single = dir.path().join("single");
    let s = chordline(&[
        "run",
        good.to_str().unwrap(),
        "--chord",
        "20m",
        "--rail",
        "left",
        "--out",
        single.to_str().unwrap(),
    ]);
    assert!(s.status.success(), "{}", stderr(&s));
    assert_eq!(
        std::fs::read(single.join("elements.csv")).unwrap(),
        std::fs::read(out.join("good/elements.csv")).unwrap()
    );
}

#[test]
fn slews_add_columns_and_keep_the_contract() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run_demo_to(&out, &["--fixed", "12500", "--max-slew", "50mm"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        (stdout(&o) + &stderr(&o)).contains("indicative"),
        "slews must carry their caution"
    );
    let stations = std::fs::read_to_string(out.join("stations.csv")).unwrap();
    let head = stations.lines().next().unwrap();
    assert!(head.ends_with(",slew_mm,slew_sd_mm"), "{head}");
    // Held at the fixed point: the slew there is zero.
    let row = stations
        .lines()
        .find(|l| l.starts_with("12500.000,"))
        .unwrap();
    let slew: f64 = row.rsplit(',').nth(1).unwrap().parse().unwrap();
    assert_eq!(slew, 0.0, "{row}");
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(html.contains("Slews onto the design (indicative)"));
    assert_eq!(html.matches("<svg").count(), 6, "five diagrams plus slews");
}

#[test]
fn run_dash_reads_standard_input_and_results_go_to_standard_output() {
    use std::io::Write;
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_chordline"))
        .args(["run", "-", "--chord", "20m", "--rail", "L", "--out"])
        .arg(&out)
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let survey = std::fs::read(demo_survey()).unwrap();
    child.stdin.take().unwrap().write_all(&survey).unwrap();
    let o = child.wait_with_output().unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    let results = stdout(&o);
    assert!(
        results.starts_with("survey   standard input: 116 readings"),
        "{results}"
    );
    assert!(results.contains("wrote    stations.csv"), "{results}");
    // Diagnostics stay on stderr.
    assert!(!results.contains("warning:"), "{results}");
    assert!(stderr(&o).contains("warning:"), "{}", stderr(&o));
    assert!(out.join("stations.csv").exists());
}

#[test]
fn simulate_writes_standard_output_and_never_half_of_two_files() {
    let dir = tempfile::tempdir().unwrap();
    let design =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/eastvale-design.json");
    let o = chordline(&["simulate", design.to_str().unwrap(), "-"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stdout(&o).contains("chainage_m,versine_mm"),
        "{}",
        stdout(&o)
    );
    // --truth naming an existing file: refused before the survey is written.
    let survey = dir.path().join("s.csv");
    let truth = dir.path().join("t.csv");
    std::fs::write(&truth, "keep").unwrap();
    let o = chordline(&[
        "simulate",
        design.to_str().unwrap(),
        survey.to_str().unwrap(),
        "--truth",
        truth.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(!survey.exists());
    assert_eq!(std::fs::read(&truth).unwrap(), b"keep");
}

/// The README's five-minute tour, run as written (in a scratch folder holding
/// a copy of demo-data), each command must succeed.
#[test]
fn the_readme_tour_runs_as_written() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let readme = std::fs::read_to_string(root.join("README.md")).unwrap();
    let start = readme
        .find("B=target/release/chordline\n")
        .expect("tour block");
    let block = &readme[start..];
    let block = &block[..block.find("```").expect("end of the tour block")];
    let commands: Vec<String> = block
        .replace("\\\n", " ")
        .lines()
        .map(str::trim)
        .filter(|l| l.starts_with("$B "))
        .map(str::to_string)
        .collect();
    assert!(commands.len() >= 7, "{commands:?}");
    let dir = tempfile::tempdir().unwrap();
    let copy = std::process::Command::new("cp")
        .arg("-r")
        .arg(root.join("demo-data"))
        .arg(dir.path())
        .status()
        .unwrap();
    assert!(copy.success());
    for c in &commands {
        let o = std::process::Command::new("sh")
            .arg("-c")
            .arg(c)
            .env("B", env!("CARGO_BIN_EXE_chordline"))
            .current_dir(dir.path())
            .output()
            .unwrap();
        assert!(o.status.success(), "{c}\n{}", stderr(&o));
    }
}

#[test]
fn every_help_shows_examples() {
    for cmd in [
        vec!["--help"],
        vec!["run", "--help"],
        vec!["check", "--help"],
        vec!["batch", "--help"],
        vec!["demo", "--help"],
        vec!["simulate", "--help"],
    ] {
        let o = chordline(&cmd);
        assert!(o.status.success(), "{cmd:?}");
        let text = stdout(&o);
        assert!(text.contains("Examples:\n  chordline "), "{cmd:?}: {text}");
        assert!(text.contains("Exit status"), "{cmd:?}: {text}");
    }
}

#[test]
fn check_reports_and_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let good = dir.path().join("good.csv");
    std::fs::copy(demo_survey(), &good).unwrap();
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "chainage_m,versine_mm\n0,1\n10,x2\n20,3\n").unwrap();
    let o = chordline(&[
        "check",
        good.to_str().unwrap(),
        "--chord",
        "20m",
        "--rail",
        "left",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(
        text.contains(": can be run\nreadings 116 from 12310 to 13470 m"),
        "{text}"
    );
    assert!(text.contains("spacing  10 m (every half chord)"), "{text}");
    assert!(text.contains("gaps     1 (1 missing readings"), "{text}");
    let o = chordline(&[
        "check",
        good.to_str().unwrap(),
        bad.to_str().unwrap(),
        "--chord",
        "20m",
        "--rail",
        "left",
    ]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stdout(&o).contains("refused  "), "{}", stdout(&o));
    assert!(stdout(&o).contains("bad.csv:3"), "{}", stdout(&o));
    let mut names: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    names.sort();
    assert_eq!(names, ["bad.csv", "good.csv"]);
}
