//! The realignment end to end through the binary: `slews.csv`, limits that
//! hold (exit 0), limits that cannot (exit 1, the binding constraint named,
//! nothing written), the imperial twin of the sheet.

mod common;

use chordline::geometry::{Alignment, Element, Pose};
use chordline::simulate::{SimSetup, simulate, write_survey_csv};
use chordline::survey::Rail;
use chordline::units::{FOOT, LengthUnit, VersineUnit};
use common::{check_contract, chordline, run_demo_to, stderr};

/// The data rows of a slews.csv as (header, rows), comment lines skipped.
fn sheet(path: &std::path::Path) -> (Vec<String>, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(path).expect("slews.csv");
    assert!(
        text.starts_with("# Slews are indicative only"),
        "the sheet carries the caution first"
    );
    let mut lines = text.lines().filter(|l| !l.starts_with('#'));
    let head: Vec<String> = lines
        .next()
        .expect("header")
        .split(',')
        .map(String::from)
        .collect();
    let rows = lines
        .map(|l| l.split(',').map(String::from).collect())
        .collect();
    (head, rows)
}

fn col(head: &[String], name: &str) -> usize {
    head.iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column {name} in {head:?}"))
}

#[test]
fn limits_that_a_design_can_meet_hold_on_the_sheet() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run_demo_to(
        &out,
        &[
            "--section",
            "12900,13400",
            "--fixed",
            "13000,13150,13300",
            "--max-slew",
            "10mm",
            "--limit",
            "13180,13240,right,2mm",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stderr(&o).contains("indicative"));
    let (head, rows) = sheet(&out.join("slews.csv"));
    for name in [
        "chainage_m",
        "slew_mm",
        "direction",
        "slew_sd_mm",
        "versine_mm",
        "design_versine_mm",
        "versine_after_mm",
        "limit_left_mm",
        "limit_right_mm",
        "mark",
    ] {
        col(&head, name);
    }
    let (c, s, m) = (
        col(&head, "chainage_m"),
        col(&head, "slew_mm"),
        col(&head, "mark"),
    );
    assert_eq!(rows.first().unwrap()[c], "12900.000");
    assert_eq!(rows.last().unwrap()[c], "13400.000");
    let mut fixed = 0;
    for r in &rows {
        let ch: f64 = r[c].parse().unwrap();
        if r[s].is_empty() {
            assert!(r[m].contains("not-shown"), "{r:?}");
            continue;
        }
        let slew: f64 = r[s].parse().unwrap();
        assert!(slew.abs() <= 10.0, "{r:?}");
        if (13180.0..=13240.0).contains(&ch) {
            assert!(slew >= -2.0, "{r:?}");
        }
        if r[m].contains("fixed") {
            assert!(slew.abs() <= 0.5, "{r:?}");
            fixed += 1;
        }
        let words = &r[col(&head, "direction")];
        assert!(
            (slew > 0.0) == words.starts_with("left") || slew == 0.0,
            "{r:?}"
        );
    }
    assert_eq!(fixed, 3);
    // stations.csv keeps its slew columns.
    let stations = std::fs::read_to_string(out.join("stations.csv")).unwrap();
    assert!(
        stations
            .lines()
            .next()
            .unwrap()
            .ends_with(",slew_mm,slew_sd_mm")
    );
    check_contract(&out);
}

#[test]
fn a_limit_no_design_meets_exits_1_and_names_it() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run_demo_to(
        &out,
        &[
            "--section",
            "12900,13400",
            "--fixed",
            "13000,13150,13300",
            "--max-slew",
            "1mm",
            "--versine-tolerance",
            "0.5mm",
        ],
    );
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let e = stderr(&o);
    assert!(
        e.contains("largest slew of 1.0 mm binds at chainage"),
        "{e}"
    );
    assert!(e.contains("would have to give by"), "{e}");
    assert!(!out.exists(), "nothing written");
}

#[test]
fn bad_realignment_options_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    for (args, want) in [
        (vec!["--section", "13400,12900"], "--section"),
        (
            vec!["--limit", "12900,13000,up,2mm"],
            "left, right, in, out",
        ),
        (
            vec!["--limit", "12900,13000,left"],
            "FROM,TO,DIRECTION,LARGEST",
        ),
        (
            vec!["--section", "20000,21000"],
            "not a stretch of the survey",
        ),
        (vec!["--limit", "12300,12400,in,0mm"], "straight"),
    ] {
        let out = dir.path().join("x");
        let o = run_demo_to(&out, &args);
        assert_ne!(o.status.code(), Some(0), "{args:?}");
        assert!(stderr(&o).contains(want), "{args:?}: {}", stderr(&o));
        assert!(!out.exists());
    }
}

#[test]
fn imperial_survey_gets_an_imperial_sheet() {
    // A 62 ft string read every 31 ft on a 2° curve between straights.
    let r = 5729.651 * FOOT / 2.0;
    let al = Alignment::new(
        Pose::default(),
        0.0,
        vec![
            Element::straight(120.0),
            Element::transition(60.0, 0.0, 1.0 / r),
            Element::arc(200.0, r),
            Element::transition(60.0, 1.0 / r, 0.0),
            Element::straight(120.0),
        ],
    );
    let mut s = SimSetup::classic(62.0 * FOOT, Rail::Right);
    s.spacing = 31.0 * FOOT;
    s.noise_sd = 0.05 * 0.0254;
    s.irregularity_rms = 2e-3;
    s.seed = 11;
    let mut simd = simulate(&al, &s).expect("simulate");
    simd.survey.chainage_unit = LengthUnit::Foot;
    simd.survey.versine_unit = VersineUnit::Inch;
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("imperial.csv");
    let mut f = std::fs::File::create(&path).unwrap();
    write_survey_csv(&mut f, &simd.survey, 0.0, "simulated 2 degree curve").unwrap();
    let out = dir.path().join("out");
    let o = chordline(&[
        "run",
        path.to_str().unwrap(),
        "--chord",
        "62ft",
        "--rail",
        "right",
        "--max-slew",
        "1in",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let (head, rows) = sheet(&out.join("slews.csv"));
    for name in [
        "chainage_ft",
        "slew_in",
        "slew_sd_in",
        "versine_in",
        "design_versine_in",
        "versine_after_in",
        "limit_left_in",
    ] {
        col(&head, name);
    }
    let s = col(&head, "slew_in");
    let m = col(&head, "mark");
    for r in rows.iter().filter(|r| !r[s].is_empty() && r[m].is_empty()) {
        assert!(r[s].parse::<f64>().unwrap().abs() <= 1.0, "{r:?}");
        assert_eq!(r[col(&head, "limit_left_in")], "1.000");
    }
}

#[test]
fn optimised_design_is_written_beside_the_fitted_one() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run_demo_to(
        &out,
        &[
            "--design",
            "optimised",
            "--radius-step",
            "5m",
            "--section",
            "12900,13400",
            "--fixed",
            "13000,13300",
            "--max-slew",
            "20mm",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = std::fs::read_to_string(out.join("design-elements.csv")).unwrap();
    assert!(text.contains("# Design: optimised"), "{text}");
    assert!(text.contains("indicative"));
    let arcs: Vec<&str> = text.lines().filter(|l| l.contains(",arc,")).collect();
    assert_eq!(arcs.len(), 2, "{text}");
    for a in arcs {
        let r: f64 = a.split(',').nth(4).unwrap().parse().unwrap();
        assert_eq!(r % 5.0, 0.0, "{a}");
    }
    // The fitted elements.csv is still there, unchanged in form.
    assert!(out.join("elements.csv").exists());
    check_contract(&out);
    // The design passed back in is used (and refused when broken).
    let mine = dir.path().join("mine.csv");
    std::fs::write(&mine, "element,kind,start_chainage_m\n1,arc,x\n").unwrap();
    let o = run_demo_to(
        &dir.path().join("o2"),
        &["--design", mine.to_str().unwrap()],
    );
    assert_eq!(o.status.code(), Some(1));
    assert!(
        stderr(&o).contains("no column 'end_chainage_m'"),
        "{}",
        stderr(&o)
    );
}

/// The README "Realignment" example: the fitted design cannot meet the
/// platform limit (exit 1, named); the optimised design meets every limit.
#[test]
fn readme_realignment_example() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let args = [
        "--reading-sd",
        "0.5mm",
        "--section",
        "12980,13400",
        "--fixed",
        "13040,13180,13340",
        "--limit",
        "13120,13240,out,0mm",
        "--max-slew",
        "15mm",
    ];
    let o = run_demo_to(&out, &args);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("the limit of 0.0 mm out from 13120.000 to 13240.000 m binds"),
        "{}",
        stderr(&o)
    );
    let mut opt = args.to_vec();
    opt.extend(["--design", "optimised"]);
    let o = run_demo_to(&out, &opt);
    assert!(o.status.success(), "{}", stderr(&o));
    let (head, rows) = sheet(&out.join("slews.csv"));
    let (c, s, m) = (
        col(&head, "chainage_m"),
        col(&head, "slew_mm"),
        col(&head, "mark"),
    );
    let mut shown = 0;
    for r in &rows {
        let ch: f64 = r[c].parse().unwrap();
        let Ok(slew) = r[s].parse::<f64>() else {
            continue;
        };
        shown += 1;
        assert!(slew.abs() <= 15.0, "{r:?}");
        // Outwards on this left-hand curve is to the right.
        if (13120.0..=13240.0).contains(&ch) {
            assert!(slew >= 0.0, "{r:?}");
        }
        if r[m].contains("fixed") {
            assert!(slew.abs() <= 0.5, "{r:?}");
        }
    }
    assert!(shown > 30, "{shown}");
    check_contract(&out);
}
