//! Cross-check of `chordline simulate` against the team's independent
//! reference generator (`../shared/tools/reference-survey`, Python + numpy),
//! which states the trade's measuring conventions in code: marks taped along
//! the rail, versine = perpendicular distance from the mark to the wire.
//!
//! Skips (passing, with a message) when ../shared, python3 or numpy is absent.

#[path = "support/skip.rs"]
mod skip;
use std::path::{Path, PathBuf};
use std::process::Command;

fn reference_tool() -> Option<PathBuf> {
    let tool = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/tools/reference-survey");
    if !tool.exists() {
        skip::skipped(
            "simulate against the reference generator",
            &format!(
                "{} is absent (a user's clone has no ../shared)",
                tool.display()
            ),
        );
        return None;
    }
    let ok = Command::new("python3")
        .args(["-c", "import numpy"])
        .status()
        .map(|s| s.success())
        .unwrap_or(false);
    if !ok {
        skip::skipped(
            "simulate against the reference generator",
            "python3 with numpy is not available (pip install numpy)",
        );
        return None;
    }
    Some(tool)
}

fn read_pairs(path: &Path) -> Vec<(f64, f64)> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("chainage"))
        .filter_map(|l| {
            let mut it = l.split(',');
            let c = it.next()?.parse().ok()?;
            let v = it.next()?.parse().ok()?;
            Some((c, v))
        })
        .collect()
}

/// A design file in the reference generator's form: an imperial design
/// (every length in feet, small ones in inches) with its lengths in metres
/// under the metric keys; a metric design unchanged.
fn in_metres(text: &str) -> String {
    const FT: f64 = 0.3048;
    const IN: f64 = 0.0254;
    let mut v: serde_json::Value = serde_json::from_str(text).unwrap();
    if v["units"] != "imperial" {
        return text.to_string();
    }
    let o = v.as_object_mut().unwrap();
    for (ft, m, f) in [
        ("chord_ft", "chord_m", FT),
        ("spacing_ft", "spacing_m", FT),
        ("start_chainage_ft", "start_chainage_m", FT),
        ("gauge_in", "gauge_m", IN),
        ("noise_in", "noise_mm", IN * 1e3),
        ("bias_in", "bias_mm", IN * 1e3),
        ("resolution_in", "resolution_mm", IN * 1e3),
        ("irregularity_in", "irregularity_mm", IN * 1e3),
    ] {
        if let Some(x) = o.remove(ft) {
            o.insert(m.into(), (x.as_f64().unwrap() * f).into());
        }
    }
    for e in o["elements"].as_array_mut().unwrap() {
        for k in ["length", "radius", "r_start", "r_end"] {
            if let Some(x) = e.get(k).and_then(|x| x.as_f64()) {
                e[k] = (x * FT).into();
            }
        }
    }
    v.to_string()
}

fn compare(design: &str, tol: f64) {
    let Some(tool) = reference_tool() else { return };
    let dir = tempfile::tempdir().unwrap();
    let design = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/designs")
        .join(design);
    // The reference generator reads lengths in metres only ("units" there
    // sets the survey's units alone): give it the design converted.
    let reference_design = dir.path().join("reference-design.json");
    std::fs::write(
        &reference_design,
        in_metres(&std::fs::read_to_string(&design).unwrap()),
    )
    .unwrap();
    let theirs = dir.path().join("reference.csv");
    let ours = dir.path().join("ours.csv");
    let st = Command::new("python3")
        .arg(&tool)
        .arg(&reference_design)
        .arg(&theirs)
        .status()
        .unwrap();
    assert!(st.success(), "reference generator failed");
    let st = Command::new(env!("CARGO_BIN_EXE_chordline"))
        .arg("simulate")
        .arg(&design)
        .arg("--out")
        .arg(&ours)
        .status()
        .unwrap();
    assert!(st.success(), "chordline simulate failed");
    let (a, b) = (read_pairs(&theirs), read_pairs(&ours));
    assert!(a.len() > 20, "reference wrote only {} readings", a.len());
    // Both write only the readings that have a full chord on the design.
    assert_eq!(a.len(), b.len(), "number of readings differs");
    let mut worst: f64 = 0.0;
    for (x, y) in a.iter().zip(&b) {
        assert!((x.0 - y.0).abs() < 1e-3, "chainage {} vs {}", x.0, y.0);
        worst = worst.max((x.1 - y.1).abs());
    }
    assert!(
        worst <= tol,
        "worst versine difference {worst} exceeds {tol}"
    );
    eprintln!(
        "{}: {} readings, worst difference {worst:.2e}",
        design.display(),
        a.len()
    );
}

#[test]
fn simple_curve_on_the_outer_rail_matches_reference() {
    // Both print 0.0001 mm; allow one unit of the last place.
    compare("simple_curve.json", 1.5e-4);
}

#[test]
fn tight_reverse_curve_read_every_quarter_chord_matches_reference() {
    compare("reverse_tight.json", 1.5e-4);
}

#[test]
fn imperial_compound_curve_matches_reference() {
    // Inches to 6 (reference) and 5 (ours) decimals.
    compare("imperial_compound.json", 1.5e-5);
}
