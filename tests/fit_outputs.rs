//! The element fit's outputs: elements.csv, the terminal table, placing the
//! design in the plan, per-station design values, bias, errors.

mod common;
use common::plan_of;

use chordline::export::elements::{header, write_elements_csv};
use chordline::fit::{FitError, FitOptions, fit};
use chordline::geometry::{Alignment, Element, Pose};
use chordline::integrate::{IntegrateOptions, integrate};
use chordline::report::summary_table;
use chordline::simulate::{SimSetup, simulate};
use chordline::survey::{Rail, Setup};
use chordline::units::{FOOT, LengthUnit, VersineUnit};

fn design() -> Alignment {
    let k = 1.0 / 450.0;
    Alignment::new(
        Pose {
            x: 1000.0,
            y: 2000.0,
            heading: 0.7,
        },
        0.0,
        vec![
            Element::straight(200.0),
            Element::transition(60.0, 0.0, k),
            Element::arc(300.0, 450.0),
            Element::transition(60.0, k, 0.0),
            Element::straight(200.0),
        ],
    )
}

fn sim(seed: u64, noise: f64) -> SimSetup {
    let mut s = SimSetup::classic(20.0, Rail::Right);
    s.noise_sd = noise;
    s.resolution = if noise > 0.0 { 0.001 } else { 0.0 };
    s.seed = seed;
    s
}

#[test]
fn elements_csv_rows_join_and_hold_no_nan() {
    let simd = simulate(&design(), &sim(3, 0.001)).expect("simulate");
    let (res, _) = fit(
        &plan_of(&simd.survey, &Setup::new(20.0, Rail::Right)),
        &FitOptions::default(),
    )
    .expect("fit");
    let mut buf = Vec::new();
    write_elements_csv(&res, LengthUnit::Metre, &mut buf).expect("write");
    let text = String::from_utf8(buf).expect("utf8");
    assert!(!text.to_lowercase().contains("nan"), "{text}");
    let mut rd = csv::Reader::from_reader(text.as_bytes());
    let h = rd.headers().expect("header").clone();
    for col in [
        "element",
        "kind",
        "start_chainage_m",
        "end_chainage_m",
        "length_m",
        "start_radius_m",
        "end_radius_m",
        "start_chainage_se_m",
        "radius_se_m",
        "length_se_m",
        "status",
    ] {
        if col == "radius_se_m" {
            assert!(h.iter().any(|c| c == "start_radius_se_m"));
            continue;
        }
        assert!(h.iter().any(|c| c == col), "missing column {col}");
    }
    let rows: Vec<csv::StringRecord> = rd.records().map(|r| r.expect("row")).collect();
    assert_eq!(rows.len(), 5);
    let col = |name: &str| h.iter().position(|c| c == name).expect("column");
    for w in rows.windows(2) {
        assert_eq!(w[0][col("end_chainage_m")], w[1][col("start_chainage_m")]);
    }
    assert_eq!(&rows[0][col("kind")], "straight");
    assert_eq!(&rows[0][col("start_radius_m")], "");
    assert_eq!(&rows[1][col("kind")], "transition");
    assert_eq!(&rows[1][col("start_radius_m")], "");
    let r: f64 = rows[2][col("start_radius_m")].parse().expect("radius");
    assert!((r - 450.0).abs() < 2.0, "{r}");
    assert_eq!(rows[2][col("start_radius_m")], rows[2][col("end_radius_m")]);
    let se: f64 = rows[2][col("start_radius_se_m")].parse().expect("se");
    assert!(se > 0.0 && se < 3.0, "{se}");
    // Fixed decimals.
    assert!(
        rows[2][col("length_m")]
            .split('.')
            .nth(1)
            .is_some_and(|d| d.len() == 3)
    );
    let table = summary_table(&res, LengthUnit::Metre);
    assert!(
        table.contains("transition") && table.contains("arc"),
        "{table}"
    );
    let kinds: Vec<&str> = table
        .lines()
        .filter_map(|l| l.split_whitespace().nth(1))
        .take(6)
        .collect();
    assert_eq!(
        kinds,
        [
            "element",
            "straight",
            "transition",
            "arc",
            "transition",
            "straight"
        ],
        "{table}"
    );
}

#[test]
fn imperial_headers_use_feet_and_inches() {
    let h = header(LengthUnit::Foot);
    assert!(h.contains(&"start_chainage_ft".to_string()));
    assert!(h.contains(&"length_se_ft".to_string()));
    assert!(h.contains(&"residual_rms_in".to_string()));
    assert!(!h.iter().any(|c| c.ends_with("_m")));
    // And the values are in feet.
    let mut s = sim(1, 0.0);
    s.chord = 62.0 * FOOT;
    s.spacing = 31.0 * FOOT;
    s.chainage_unit = LengthUnit::Foot;
    s.versine_unit = VersineUnit::Inch;
    let simd = simulate(&design(), &s).expect("simulate");
    let plan = plan_of(&simd.survey, &Setup::new(62.0 * FOOT, Rail::Right));
    let (res, _) = fit(&plan, &FitOptions::default()).expect("fit");
    let mut buf = Vec::new();
    write_elements_csv(&res, LengthUnit::Foot, &mut buf).expect("write");
    let text = String::from_utf8(buf).expect("utf8");
    let mut rd = csv::Reader::from_reader(text.as_bytes());
    let h = rd.headers().expect("h").clone();
    let rows: Vec<csv::StringRecord> = rd.records().map(|r| r.expect("row")).collect();
    let c = h.iter().position(|x| x == "start_radius_ft").expect("col");
    let r: f64 = rows[2][c].parse().expect("radius");
    assert!((r * FOOT - 450.0).abs() < 1.0, "{r} ft");
}

#[test]
fn placed_design_lies_on_the_track() {
    let al = design();
    let simd = simulate(&al, &sim(1, 0.0)).expect("simulate");
    let (res, _) = fit(
        &plan_of(&simd.survey, &Setup::new(20.0, Rail::Right)),
        &FitOptions::default(),
    )
    .expect("fit");
    let pts: Vec<(f64, f64, f64)> = simd
        .truth
        .iter()
        .map(|t| (t.chainage, t.centre.x, t.centre.y))
        .collect();
    let placed = res.place(&pts);
    let st = res.station_design(&placed);
    assert_eq!(st.len(), simd.survey.readings.len());
    let mut worst: f64 = 0.0;
    for (d, t) in st.iter().zip(&simd.truth) {
        worst = worst.max((d.x - t.centre.x).hypot(d.y - t.centre.y));
    }
    assert!(worst < 0.05, "placed design is {worst} m from the track");
    // Design versines reproduce the exact readings; gaps have no residual.
    for (d, r) in st.iter().zip(&simd.survey.readings) {
        match r.versine {
            Some(v) => {
                assert!(
                    (d.design_versine - v).abs() < 2e-4,
                    "{} vs {v}",
                    d.design_versine
                );
                assert!(d.residual.is_some());
            }
            None => assert!(d.residual.is_none()),
        }
    }
}

#[test]
fn reading_bias_is_estimated_and_reported() {
    let mut s = sim(4, 0.001);
    s.bias = 0.0015; // field sign: rail bows away from the wire
    let simd = simulate(&design(), &s).expect("simulate");
    let (res, diags) = fit(
        &plan_of(&simd.survey, &Setup::new(20.0, Rail::Right)),
        &FitOptions::default(),
    )
    .expect("fit");
    let (b, se) = res.stats.bias.expect("bias from the straights");
    // Right rail: chord side = field versine.
    assert!((b - 0.0015).abs() < 4.0 * se && se < 0.0006, "{b} ± {se}");
    assert!(
        diags.iter().any(|d| d.message.contains("reading offset")),
        "{diags:?}"
    );
    let opts = FitOptions {
        remove_bias: true,
        ..FitOptions::default()
    };
    let (res2, _) = fit(
        &plan_of(&simd.survey, &Setup::new(20.0, Rail::Right)),
        &opts,
    )
    .expect("fit");
    let r1 = res.elements[2].start_radius.expect("r").value;
    let r2 = res2.elements[2].start_radius.expect("r").value;
    assert!((r2 - 450.0).abs() < (r1 - 450.0).abs(), "{r1} {r2}");
}

#[test]
fn bad_input_is_an_error_not_a_panic() {
    let simd = simulate(&design(), &sim(1, 0.0)).expect("simulate");
    let mut few = simd.survey.clone();
    few.readings.truncate(5);
    assert!(matches!(
        fit(
            &plan_of(&few, &Setup::new(20.0, Rail::Right)),
            &FitOptions::default()
        ),
        Err(FitError::TooFewReadings { .. })
    ));
    // A chord of zero and unsorted chainages never reach the fit: the plan
    // refuses them (the fit trusts the plan's invariants).
    let bad_chord = Setup::new(0.0, Rail::Right);
    let opts = IntegrateOptions::default();
    assert!(integrate(&simd.survey, &bad_chord, &opts).is_err());
    // A non-finite versine in a plan is skipped, not fatal.
    let mut odd = plan_of(&simd.survey, &Setup::new(20.0, Rail::Right));
    odd.stations[20].versine = Some(f64::NAN);
    assert!(fit(&odd, &FitOptions::default()).is_ok());
}

#[test]
fn dense_readings_short_transition_is_flagged_or_found() {
    // A 12 m transition (shorter than the 20 m chord), read every 1 m.
    let k = 1.0 / 800.0;
    let al = Alignment::new(
        Pose::default(),
        0.0,
        vec![
            Element::straight(200.0),
            Element::transition(12.0, 0.0, k),
            Element::arc(200.0, 800.0),
            Element::transition(12.0, k, 0.0),
            Element::straight(200.0),
        ],
    );
    let mut s = sim(2, 0.001);
    s.spacing = 1.0;
    let simd = simulate(&al, &s).expect("simulate");
    let (res, _) = fit(
        &plan_of(&simd.survey, &Setup::new(20.0, Rail::Right)),
        &FitOptions::default(),
    )
    .expect("fit");
    // Either a short transition with an honest interval covering 12 m, or a
    // step whose note admits a transition of that size.
    let arc = res
        .elements
        .iter()
        .find(|e| e.kind == chordline::geometry::ElementKind::Arc)
        .expect("an arc");
    let r = arc.start_radius.expect("r").value;
    assert!((r - 800.0).abs() < 8.0, "{r}");
    let first_t = res
        .elements
        .iter()
        .find(|e| e.kind == chordline::geometry::ElementKind::Transition);
    match first_t {
        Some(t) => assert!(
            t.length.lo95 <= 12.5 && t.length.hi95 >= 11.5,
            "{:?}",
            t.length
        ),
        None => assert!(arc.note.contains("cannot be excluded"), "{}", arc.note),
    }
}

#[test]
fn pipeline_integrate_fit_place_write_stations() {
    use chordline::export::stations::write_stations;
    use chordline::integrate::{IntegrateOptions, integrate};
    let simd = simulate(&design(), &sim(6, 0.0005)).expect("simulate");
    let setup = Setup::new(20.0, Rail::Right);
    let (plan, _) = integrate(&simd.survey, &setup, &IntegrateOptions::default()).expect("plan");
    let (res, _) = fit(&plan_of(&simd.survey, &setup), &FitOptions::default()).expect("fit");
    let pts: Vec<(f64, f64, f64)> = plan
        .stations
        .iter()
        .map(|s| (s.chainage, s.x, s.y))
        .collect();
    let placed = res.place(&pts);
    let design = res.station_design(&placed);
    assert_eq!(design.len(), plan.stations.len());
    // The placed design follows the integrated centreline closely.
    let worst = design
        .iter()
        .zip(&plan.stations)
        .map(|(d, s)| (d.x - s.x).hypot(d.y - s.y))
        .fold(0.0f64, f64::max);
    assert!(worst < 0.5, "design is {worst} m from the integrated plan");
    let mut out = Vec::new();
    write_stations(&mut out, &plan, LengthUnit::Metre, Some(&design)).expect("write");
    let text = String::from_utf8(out).expect("utf8");
    assert!(
        text.lines()
            .next()
            .is_some_and(|h| h.contains("design_versine_mm"))
    );
}
