//! alignment.ifc (IFC 4.3, `IFC4X3_ADD2`) read by an outside reader.
//!
//! The reader is IfcOpenShell 0.9.0.post1 (PyPI `ifcopenshell`, with `pytest`
//! for its EXPRESS rule runner) on Python 3.11, driven by `tests/ifc_check.py`:
//! schema and EXPRESS rules (`ifcopenshell.validate`), and its geometry
//! kernel's evaluation of the alignment's `IfcCompositeCurve`
//! (`ifcopenshell.geom`: `map_shape` + `function_item_evaluator`) against the
//! design points of `stations.csv` (1 mm) and the element ends (0.1 mm). The
//! tests that need it print `SKIPPED: …` when python3 or ifcopenshell is
//! missing (`.ci/run` installs both). The others check the text itself.
//!
//! Numbers measured (`cargo test --release --test ifc_export -- --nocapture`
//! prints the reader's JSON for every case).

mod common;

use std::path::Path;
use std::process::Command;

use chordline::export::geojson::ElementProps;
use chordline::export::ifc::{IfcError, IfcOptions, build_ifc};
use chordline::export::landxml::{LandXmlFrame, LandXmlOptions, build_landxml};
use chordline::geometry::{Alignment, Element, ElementKind, Pose};
use chordline::georef::{Crs, LonLat, Placement};
use chordline::units::LengthUnit;

/// Versions the check was written against (tests/ifc_check.py prints the installed one).
const READER: &str = "IfcOpenShell 0.9.0.post1 (Python 3.11)";

fn alignment() -> Alignment {
    Alignment::new(
        Pose {
            x: 1234.5,
            y: -678.25,
            heading: 0.7,
        },
        0.0,
        vec![
            Element::straight(100.0),
            Element::transition(60.0, 0.0, 1.0 / 450.0),
            Element::arc(150.0, 450.0),
            // Reverse curve through one clothoid (its curvature changes sign).
            Element::transition(80.0, 1.0 / 450.0, -1.0 / 600.0),
            Element::arc(100.0, -600.0),
            Element::transition(50.0, -1.0 / 600.0, 0.0),
            Element::straight(40.0),
            // Line straight into an arc: tangent but not curvature continuous.
            Element::arc(70.0, 900.0),
        ],
    )
}

fn props(al: &Alignment, offset: f64) -> Vec<ElementProps> {
    (0..al.elements().len())
        .map(|i| {
            let s0 = al.element_start(i) + offset;
            ElementProps {
                start_chainage: s0,
                end_chainage: s0 + al.elements()[i].length,
                ..Default::default()
            }
        })
        .collect()
}

fn opts(unit: LengthUnit) -> IfcOptions {
    IfcOptions {
        name: "test-line".into(),
        unit,
        created: std::time::UNIX_EPOCH + std::time::Duration::from_secs(1_796_167_924),
    }
}

/// Whether python3 with ifcopenshell (and pytest) is there; says so if not.
fn reader_present() -> bool {
    let ok = Command::new("python3")
        .args(["-c", "import ifcopenshell, ifcopenshell.geom, pytest"])
        .output()
        .is_ok_and(|o| o.status.success());
    if !ok {
        common::skip::skipped(
            "IFC read back by IfcOpenShell",
            &format!(
                "python3 with ifcopenshell and pytest is not installed (want {READER}; `pip install ifcopenshell==0.9.0.post1 pytest`)"
            ),
        );
    }
    ok
}

/// Run tests/ifc_check.py on `dir`; its JSON result, and whether it passed.
fn read_with_ifcopenshell(dir: &Path, flags: &[&str]) -> (serde_json::Value, bool) {
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/ifc_check.py");
    let mut c = Command::new("python3");
    c.arg(&script).arg(dir).args(flags);
    let out = c.output().expect("run python3");
    let stdout = String::from_utf8_lossy(&out.stdout);
    let line = stdout.lines().last().unwrap_or_default();
    let v: serde_json::Value = serde_json::from_str(line).unwrap_or_else(|e| {
        panic!(
            "ifc_check.py printed no result ({e}): {stdout}{}",
            String::from_utf8_lossy(&out.stderr)
        )
    });
    eprintln!("{}: {line}", dir.display());
    (v, out.status.success())
}

fn assert_reader_passes(dir: &Path, flags: &[&str]) -> serde_json::Value {
    let (v, ok) = read_with_ifcopenshell(dir, flags);
    assert!(ok, "IfcOpenShell check failed: {}", v["failures"]);
    assert_eq!(v["validation_issues"], 0);
    v
}

/// A folder as the reader expects it, from an alignment written by the
/// library: alignment.ifc, alignment.xml, elements.csv (element, kind,
/// length), stations.csv (design points every 2.5 m from the exact geometry).
fn write_folder(dir: &Path, al: &Alignment, frame: LandXmlFrame, unit: LengthUnit) {
    let pr = props(al, 5000.0);
    let o = opts(unit);
    std::fs::write(
        dir.join("alignment.ifc"),
        build_ifc(al, &pr, frame, &o).expect("ifc"),
    )
    .unwrap();
    let lo = LandXmlOptions {
        name: o.name.clone(),
        unit,
        created: o.created,
    };
    std::fs::write(
        dir.join("alignment.xml"),
        build_landxml(al, &pr, frame, &lo).expect("landxml"),
    )
    .unwrap();
    let u = unit.suffix();
    let mut el = format!("element,kind,length_{u}\n");
    for (i, e) in al.elements().iter().enumerate() {
        let kind = match e.kind {
            ElementKind::Straight => "straight",
            ElementKind::Transition => "transition",
            ElementKind::Arc => "arc",
        };
        el += &format!("{},{kind},{:.3}\n", i + 1, unit.from_m(e.length));
    }
    std::fs::write(dir.join("elements.csv"), el).unwrap();
    let mut st = format!("design_easting_{u},design_northing_{u}\n");
    let n = (al.length() / 2.5).floor() as usize;
    for i in 0..=n {
        let p = al.pose_at((i as f64 * 2.5).min(al.length()));
        // In a grid: the exact grid image of the design point.
        let (x, y) = match frame {
            LandXmlFrame::Local { .. } => (p.x, p.y),
            LandXmlFrame::Grid { placement, crs } => {
                let (lon, lat) = placement.to_lonlat(p.x, p.y);
                crs.from_lonlat(lon, lat).unwrap()
            }
        };
        st += &format!("{:.6},{:.6}\n", unit.from_m(x), unit.from_m(y));
    }
    std::fs::write(dir.join("stations.csv"), st).unwrap();
}

#[test]
fn library_alignment_in_metres_reads_back_exactly() {
    if !reader_present() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let al = alignment();
    write_folder(
        dir.path(),
        &al,
        LandXmlFrame::Local { placement: None },
        LengthUnit::Metre,
    );
    let v = assert_reader_passes(dir.path(), &[]);
    assert_eq!(v["segments"], 9);
    assert!((v["curve_length_m"].as_f64().unwrap() - al.length()).abs() < 1e-9);
    assert_eq!(v["station"], 5000.0);
}

#[test]
fn library_alignment_on_a_grid_far_from_the_central_meridian() {
    if !reader_present() {
        return;
    }
    // 11.9°E is about 216 km east of the UTM zone 32 central meridian (9°E):
    // grid scale and convergence change along the line.
    let place = Placement::new(LonLat::new(11.9, 48.1).unwrap(), 250.0).unwrap();
    let crs = Crs::from_epsg(25832).unwrap();
    for unit in [LengthUnit::Metre, LengthUnit::Foot] {
        let dir = tempfile::tempdir().unwrap();
        let frame = LandXmlFrame::Grid {
            placement: &place,
            crs: &crs,
        };
        write_folder(dir.path(), &alignment(), frame, unit);
        let v = assert_reader_passes(dir.path(), &["--grid"]);
        assert_eq!(v["crs"], "EPSG:25832");
    }
}

#[test]
fn demo_run_reads_back() {
    if !reader_present() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = common::run_demo_to(&out, &[]);
    assert!(o.status.success(), "{}", common::stderr(&o));
    let v = assert_reader_passes(&out, &[]);
    assert!(v["design_points"].as_u64().unwrap() > 100);
}

#[test]
fn demo_run_on_a_grid_reads_back() {
    if !reader_present() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let extra = [
        "--start-lonlat",
        "11.9,48.1",
        "--start-bearing",
        "30",
        "--crs",
        "EPSG:25832",
    ];
    let o = common::run_demo_to(&out, &extra);
    assert!(o.status.success(), "{}", common::stderr(&o));
    // stations.csv holds local design coordinates: the grid curve's points
    // are checked on the library alignment above.
    let v = assert_reader_passes(&out, &["--grid", "--skip-points"]);
    assert_eq!(v["crs"], "EPSG:25832");
}

#[test]
fn imperial_survey_reads_back() {
    if !reader_present() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let design = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/designs/imperial_compound.json");
    let survey = dir.path().join("survey.csv");
    let o = common::chordline(&[
        "simulate",
        design.to_str().unwrap(),
        "--out",
        survey.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", common::stderr(&o));
    let out = dir.path().join("out");
    let o = common::chordline(&[
        "run",
        survey.to_str().unwrap(),
        "--chord",
        "62ft",
        "--rail",
        "left",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", common::stderr(&o));
    let text = std::fs::read_to_string(out.join("alignment.ifc")).unwrap();
    assert!(text.contains("IFCCONVERSIONBASEDUNIT(#2,.LENGTHUNIT.,'FOOT',#3);"));
    let v = assert_reader_passes(&out, &[]);
    // The first station is 31 ft (imperial_compound.json: marks every 31 ft).
    assert_eq!(v["station"], 31.0);
}

#[test]
fn the_reader_check_fails_on_a_wrong_file() {
    if !reader_present() {
        return;
    }
    // Make a right-hand arc run counter-clockwise: the file stays valid
    // EXPRESS, so only the geometric comparison can catch it.
    let dir = tempfile::tempdir().unwrap();
    let al = alignment();
    write_folder(
        dir.path(),
        &al,
        LandXmlFrame::Local { placement: None },
        LengthUnit::Metre,
    );
    let p = dir.path().join("alignment.ifc");
    let text = std::fs::read_to_string(&p).unwrap();
    let wrong = text.replacen("IFCLENGTHMEASURE(-100.)", "IFCLENGTHMEASURE(100.)", 1);
    assert_ne!(text, wrong, "the -600 m arc is written with length -100.");
    std::fs::write(&p, wrong).unwrap();
    let (v, ok) = read_with_ifcopenshell(dir.path(), &[]);
    assert!(!ok, "a wrong arc passed: {v}");
    assert_eq!(v["validation_issues"], 0);
    assert!(v["max_design_point_offset_m"].as_f64().unwrap() > 1.0);
}

// ---- checks of the text itself (no outside reader needed) ----

fn build(al: &Alignment) -> String {
    build_ifc(
        al,
        &props(al, 0.0),
        LandXmlFrame::Local { placement: None },
        &opts(LengthUnit::Metre),
    )
    .unwrap()
}

fn count(text: &str, what: &str) -> usize {
    text.matches(what).count()
}

#[test]
fn structure_follows_the_standard() {
    let al = alignment();
    let t = build(&al);
    assert!(t.starts_with("ISO-10303-21;\nHEADER;\n"));
    assert!(t.contains("FILE_SCHEMA(('IFC4X3_ADD2'));"));
    assert!(t.ends_with("ENDSEC;\nEND-ISO-10303-21;\n"));
    let n = al.elements().len();
    // One layout segment per element plus the zero-length one (IFC 4.3
    // concept template "Alignment Layout - Horizontal").
    assert_eq!(count(&t, "=IFCALIGNMENTHORIZONTALSEGMENT("), n + 1);
    assert_eq!(count(&t, "=IFCALIGNMENTSEGMENT("), n + 1);
    assert_eq!(count(&t, "=IFCCURVESEGMENT("), n + 1);
    assert_eq!(count(&t, ".DISCONTINUOUS."), 1);
    assert_eq!(count(&t, ".CLOTHOID.);"), 3);
    assert_eq!(count(&t, ".CIRCULARARC.);"), 3);
    assert_eq!(count(&t, ".LINE.);"), 3);
    // Tangent only: the straight-to-arc joint and the final arc's end (the
    // zero-length segment is a line).
    assert_eq!(count(&t, "IFCCURVESEGMENT(.CONTSAMEGRADIENT.,"), 2);
    // Signed radii: positive to the left, 0 for a straight end.
    assert!(t.contains(",450.,450.,150.,$,.CIRCULARARC.);"));
    assert!(t.contains(",-600.,-600.,100.,$,.CIRCULARARC.);"));
    assert!(t.contains(",0.,450.,60.,$,.CLOTHOID.);"));
    assert!(t.contains(",450.,-600.,80.,$,.CLOTHOID.);"));
    // The reverse clothoid is one segment starting before its inflection
    // point: t0 = k0 / c = (1/450) / ((-1/600 - 1/450) / 80) = -320/7 m.
    let t0 = -320.0 / 7.0;
    assert!(t.contains(&format!("IFCLENGTHMEASURE({t0}),IFCLENGTHMEASURE(80.)")));
    assert!(t.contains("Pset_Stationing"));
    assert!(t.contains("IFCLENGTHMEASURE(0.),$,$,$,"));
}

#[test]
fn joints_are_written_at_full_precision() {
    let al = alignment();
    let t = build(&al);
    for i in 0..al.elements().len() {
        let p = al.element_pose(i);
        let want = format!("IFCCARTESIANPOINT(({:?},{:?}));", p.x, p.y);
        assert!(t.contains(&want), "joint {i}: {want}");
    }
}

#[test]
fn output_is_deterministic_and_identifiers_differ_between_alignments() {
    let al = alignment();
    assert_eq!(build(&al), build(&al));
    let guids = |t: &str| -> Vec<String> {
        t.lines()
            .filter(|l| l.starts_with('#'))
            .filter_map(|l| l.split_once("('").and_then(|(_, r)| r.get(..23)))
            .filter(|g| g.ends_with('\'') && !g[..22].contains('\''))
            .map(|g| g[..22].to_string())
            .collect()
    };
    let a = guids(&build(&al));
    // Project, site, alignment, horizontal, 9 segments, referent, pset, 5 relationships.
    assert_eq!(a.len(), 21, "{a:?}");
    let mut uniq = a.clone();
    uniq.sort();
    uniq.dedup();
    assert_eq!(uniq.len(), a.len(), "GlobalIds repeat within a file");
    let mut els = al.elements().to_vec();
    els[0].length += 0.001;
    let other = Alignment::new(al.start(), 0.0, els);
    let b = guids(&build(&other));
    assert!(
        a.iter().all(|g| !b.contains(g)),
        "GlobalIds shared between alignments"
    );
}

#[test]
fn bad_inputs_are_refused_before_writing() {
    let al = alignment();
    let frame = LandXmlFrame::Local { placement: None };
    let o = opts(LengthUnit::Metre);
    let e = build_ifc(&al, &props(&al, 0.0)[1..], frame, &o).unwrap_err();
    assert!(
        matches!(
            e,
            IfcError::Mismatch {
                props: 7,
                elements: 8
            }
        ),
        "{e}"
    );
    let empty = Alignment::new(al.start(), 0.0, vec![]);
    assert!(matches!(
        build_ifc(&empty, &[], frame, &o),
        Err(IfcError::Empty)
    ));
    let mut pr = props(&al, 0.0);
    pr[2].start_chainage = f64::NAN;
    let e = build_ifc(&al, &pr, frame, &o).unwrap_err();
    assert!(e.to_string().contains("start chainage of element 3"), "{e}");
    let mut buf = Vec::new();
    let r = chordline::export::ifc::write_ifc(&mut buf, &al, &pr, frame, &o);
    assert!(r.is_err() && buf.is_empty());
}

fn element_strategy() -> impl proptest::strategy::Strategy<Value = Element> {
    use proptest::prelude::*;
    let k = prop_oneof![Just(0.0), (-1.0 / 80.0..1.0 / 80.0)];
    (0usize..3, 0.5f64..800.0, k.clone(), k).prop_map(|(kind, len, k0, k1)| match kind {
        0 => Element::straight(len),
        1 if k0 != 0.0 => Element::arc(len, 1.0 / k0),
        _ => Element::transition(len, k0, k1),
    })
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(200))]
    /// Any chain of elements, anywhere, in either unit: a file with one
    /// layout and one curve segment per element plus the end, one
    /// discontinuity, and only finite numbers (or a typed error, never a panic).
    #[test]
    fn any_alignment_gives_a_well_formed_file(
        els in proptest::collection::vec(element_strategy(), 1..12),
        x in -1e6f64..1e6,
        y in -1e6f64..1e6,
        heading in -7.0f64..7.0,
        feet in proptest::bool::ANY,
        chainage in -1e5f64..1e5,
    ) {
        let al = Alignment::new(Pose { x, y, heading }, 0.0, els);
        let unit = if feet { LengthUnit::Foot } else { LengthUnit::Metre };
        let t = build_ifc(&al, &props(&al, chainage), LandXmlFrame::Local { placement: None }, &opts(unit)).unwrap();
        let n = al.elements().len();
        proptest::prop_assert_eq!(count(&t, "=IFCALIGNMENTHORIZONTALSEGMENT("), n + 1);
        proptest::prop_assert_eq!(count(&t, "=IFCCURVESEGMENT("), n + 1);
        proptest::prop_assert_eq!(count(&t, ".DISCONTINUOUS."), 1);
        // Outside string literals (GlobalIds may spell anything).
        let numbers: String = t.split('\'').step_by(2).collect::<String>().to_ascii_lowercase();
        proptest::prop_assert!(!numbers.contains("nan") && !numbers.contains("inf"));
    }
}
