//! What the HTML report and the short summary say, through the binary: the
//! run record (header comments, command, date), joints and survey ends,
//! slews with their limit and fixed points, control points, cant and speed
//! advice with its caution, sections on long surveys, byte-determinism.

mod common;

use common::{chordline, run_demo_to, stderr};
use std::process::Command;

fn report(out: &std::path::Path) -> String {
    std::fs::read_to_string(out.join("report.html")).unwrap()
}

#[test]
fn the_report_records_how_it_was_made_and_is_byte_deterministic() {
    let dir = tempfile::tempdir().unwrap();
    let mut reports = Vec::new();
    for (i, threads) in ["1", "2"].iter().enumerate() {
        let out = dir.path().join(format!("out{i}"));
        let o = Command::new(env!("CARGO_BIN_EXE_chordline"))
            .env("SOURCE_DATE_EPOCH", "1767225600") // 2026-01-01 00:00:00 UTC
            .args(["run", "demo-data/eastvale-survey.csv", "--chord", "20m"])
            .args(["--rail", "left", "--threads", threads, "--quiet", "--out"])
            .arg(&out)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", stderr(&o));
        reports.push(report(&out));
    }
    assert_eq!(reports[0], reports[1], "same input, same report bytes");
    let h = &reports[0];
    // The survey file's header comments, the command without the options
    // that do not change results, the date from SOURCE_DATE_EPOCH.
    assert!(h.contains("Eastvale Branch (a fictional single-track line), Down direction"));
    assert!(h.contains(
        "<code class=\"cmd\">chordline run demo-data/eastvale-survey.csv --chord 20m --rail left</code>"
    ));
    assert!(h.contains("2026-01-01 00:00:00 UTC (SOURCE_DATE_EPOCH)"));
    // Joints with their intervals on the diagrams; survey ends are not joints.
    assert!(h.contains(">12480.1±1.9<"), "joint label");
    assert!(!h.contains(">12310.0±"), "the survey start is not a joint");
    assert!(h.contains("survey start: cut, not a joint"));
    assert!(!h.contains("± 0.0<"), "no zero-width interval is printed");
    // Radius and length on each arc.
    assert!(h.contains("3 arc R 618.9 m right"));
    assert!(h.contains("length 339.8 m"));
    // Self-contained.
    for bad in [
        "<script",
        "src=\"http",
        "href=\"http",
        "@import",
        "url(http",
        "NaN",
    ] {
        assert!(!h.contains(bad), "report contains {bad}");
    }
}

#[test]
fn slews_show_the_limit_the_fixed_point_and_the_clipped_band() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run_demo_to(&out, &["--fixed", "12500", "--max-slew", "50mm"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let h = report(&out);
    assert!(h.contains("slew limit ± 50 mm"));
    assert!(h.contains(">held 12500<"), "fixed-point marker");
    // The limit is a constraint of the realignment: no reading lies beyond it.
    assert!(
        !h.contains("beyond the limit ("),
        "no readings beyond the limit"
    );
    // The band reaches far beyond the slews: it is cut, and the caption says so.
    assert!(h.contains("and is cut at the plot edge"));
}

#[test]
fn control_points_and_advice_have_their_sections() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run_demo_to(
        &out,
        &[
            "--control",
            "demo-data/eastvale-control.csv",
            "--crs",
            "EPSG:25832",
            "--speed",
            "100km/h",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let h = report(&out);
    // A table row and a labelled mark on the plan for each of the 4 points.
    for id in ["CP1", "CP2", "CP3", "CP4"] {
        assert!(
            h.contains(&format!("<td class=\"k\">{id}</td>")),
            "{id} row"
        );
        assert!(
            h.contains(&format!("paint-order=\"stroke\">{id}</text>")),
            "{id} on the plan"
        );
    }
    assert!(h.contains("arrow: residual ×"));
    assert!(h.contains("Cant and speed advice (advisory only)"));
    assert!(h.contains("ADVISORY ONLY - not a design"));
    assert!(h.contains("<h3>Arcs</h3>") && h.contains("<h3>Transitions</h3>"));
}

#[test]
fn a_long_survey_is_shown_in_sections_and_summarised_short() {
    let dir = tempfile::tempdir().unwrap();
    let design = dir.path().join("route.json");
    std::fs::write(
        &design,
        chordline::simulate::design_json(&chordline::simulate::synthetic_route(7_000.0, 5)),
    )
    .unwrap();
    let survey = dir.path().join("route.csv");
    let o = chordline(&[
        "simulate",
        design.to_str().unwrap(),
        "--chord",
        "20m",
        "--noise",
        "1mm",
        "--seed",
        "5",
        "--out",
        survey.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = dir.path().join("out");
    let o = chordline(&[
        "run",
        survey.to_str().unwrap(),
        "--chord",
        "20m",
        "--rail",
        "left",
        "--summary",
        "short",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let h = report(&out);
    let sections = h.matches("<section class=\"part\"").count();
    assert!(
        (3..=4).contains(&sections),
        "{sections} sections for about 7 km"
    );
    assert!(h.contains("Overview of the whole survey"));
    // The short summary (on stdout): a handful of lines, no element table.
    let err = String::from_utf8_lossy(&o.stdout).into_owned();
    let summary: Vec<&str> = err
        .lines()
        .skip_while(|l| !l.starts_with("survey "))
        .collect();
    assert!(summary.len() <= 10, "{summary:?}");
    assert!(summary.iter().any(|l| l.starts_with("elements ")), "{err}");
    assert!(!err.contains("  #  element"), "no element table: {err}");
}
