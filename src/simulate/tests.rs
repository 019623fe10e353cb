//! Unit tests of the simulation and of design files.

use super::*;
use approx::assert_relative_eq;

fn simple_curve() -> Alignment {
    Alignment::new(
        Pose::default(),
        0.0,
        vec![
            Element::straight(200.0),
            Element::transition(60.0, 0.0, -1.0 / 450.0),
            Element::arc(300.0, -450.0),
            Element::transition(60.0, -1.0 / 450.0, 0.0),
            Element::straight(200.0),
        ],
    )
}

#[test]
fn circle_versines_match_closed_forms() {
    // METHODS.md §1 / CHECKS.md 1.4: on a circle of rail radius R, taped marks
    // give v = R(1 − cos(a/R)); a straight wire of length c gives R − √(R² − c²/4).
    let rc = 150.0;
    let design = Alignment::new(Pose::default(), 0.0, vec![Element::arc(400.0, rc)]);
    for (rail, rr) in [(Rail::Left, rc - 0.7175), (Rail::Right, rc + 0.7175)] {
        let mut s = SimSetup::classic(20.0, rail);
        let sim = simulate(&design, &s).unwrap();
        let v = sim.survey.readings[5].versine.unwrap();
        // Left-hand curve: the right rail is the outer rail (positive).
        let expect = rr * (1.0 - (10.0 / rr).cos());
        let sign = if rail == Rail::Right { 1.0 } else { -1.0 };
        assert_relative_eq!(v, sign * expect, epsilon = 1e-9);
        s.marking = Marking::Wire;
        let sim = simulate(&design, &s).unwrap();
        let v = sim.survey.readings[5].versine.unwrap();
        let expect = rr - (rr * rr - 100.0).sqrt();
        assert_relative_eq!(v, sign * expect, epsilon = 1e-9);
    }
}

#[test]
fn checks_table_worked_values_on_the_centreline_radius() {
    // CHECKS.md 1.4 (computed): R = 500 m, c = 20 m: wire 100.0100 mm,
    // marks along the arc 99.9967 mm. Gauge 0 puts the rail on the centreline.
    let design = Alignment::new(Pose::default(), 0.0, vec![Element::arc(200.0, -500.0)]);
    let mut s = SimSetup::classic(20.0, Rail::Left);
    s.gauge = 1e-12;
    let v = simulate(&design, &s).unwrap().survey.readings[8]
        .versine
        .unwrap();
    assert!((v * 1e3 - 99.9967).abs() < 1e-4, "{}", v * 1e3);
    s.marking = Marking::Wire;
    let v = simulate(&design, &s).unwrap().survey.readings[8]
        .versine
        .unwrap();
    assert!((v * 1e3 - 100.0100).abs() < 1e-4, "{}", v * 1e3);
}

#[test]
fn clothoid_versines_follow_the_kernel_signature() {
    // CHECKS.md 1.11 (computed): along a clothoid R = 450, L = 60, c = 20 m,
    // away from its ends v = c²s/(8RL): s = 30 m → 55.5556 mm (exact geometry
    // within 0.003 mm; we measure the centreline with a tiny gauge).
    let design = Alignment::new(
        Pose::default(),
        0.0,
        vec![
            Element::straight(100.0),
            Element::transition(60.0, 0.0, 1.0 / 450.0),
            Element::arc(100.0, 450.0),
        ],
    );
    let mut s = SimSetup::classic(20.0, Rail::Right);
    s.gauge = 1e-12;
    s.spacing = 5.0;
    let sim = simulate(&design, &s).unwrap();
    let at = |c: f64| {
        sim.survey
            .readings
            .iter()
            .find(|r| (r.chainage - c).abs() < 1e-9)
            .and_then(|r| r.versine)
            .unwrap()
            * 1e3
    };
    assert!((at(130.0) - 55.5556).abs() < 0.003, "{}", at(130.0));
    // CHECKS.md 1.12: v(TS) = a³/(12RL) = 3.0864 mm, v(SC) ≈ 108.0206 mm (exact geometry).
    assert!((at(100.0) - 3.0864).abs() < 0.005, "{}", at(100.0));
    assert!((at(160.0) - 108.0206).abs() < 0.005, "{}", at(160.0));
}

#[test]
fn noise_rounding_and_seed_are_reproducible() {
    let mut s = SimSetup::classic(20.0, Rail::Left);
    s.noise_sd = 1e-3;
    s.resolution = 1e-3;
    s.irregularity_rms = 1.5e-3;
    s.seed = 7;
    let a = simulate(&simple_curve(), &s).unwrap();
    let b = simulate(&simple_curve(), &s).unwrap();
    assert_eq!(a, b);
    for r in &a.survey.readings {
        if let Some(v) = r.versine {
            let mm = v * 1e3;
            assert!((mm - mm.round()).abs() < 1e-9, "not rounded: {mm}");
        }
    }
    s.seed = 8;
    let c = simulate(&simple_curve(), &s).unwrap();
    assert_ne!(a.survey, c.survey);
}

#[test]
fn irregularity_has_the_stated_rms() {
    let irr = Irregularity::new(1.5e-3, 3);
    let n = 200_000;
    let ms: f64 = (0..n).map(|i| irr.at(i as f64 * 0.1).powi(2)).sum::<f64>() / n as f64;
    assert!((ms.sqrt() - 1.5e-3).abs() < 0.25e-3, "rms {}", ms.sqrt());
}

#[test]
fn bad_setups_are_refused() {
    let mut s = SimSetup::classic(20.0, Rail::Left);
    s.spacing = 3.0;
    assert!(matches!(
        simulate(&simple_curve(), &s),
        Err(SimulateError::SpacingDoesNotFit { .. })
    ));
    let short = Alignment::new(Pose::default(), 0.0, vec![Element::straight(5.0)]);
    assert!(matches!(
        simulate(&short, &SimSetup::classic(20.0, Rail::Left)),
        Err(SimulateError::TooShort { .. })
    ));
    let mut s = SimSetup::classic(20.0, Rail::Left);
    s.noise_sd = f64::NAN;
    assert!(simulate(&simple_curve(), &s).is_err());
}

#[test]
fn design_json_builds_transitions_from_neighbours() {
    let text = r#"{"chord_m": 20, "rail": "right", "elements": [
        {"kind": "straight", "length": 100},
        {"kind": "transition", "length": 60},
        {"kind": "arc", "length": 100, "radius": -450},
        {"kind": "transition", "length": 40, "r_end": 900}
    ]}"#;
    let d = Design::from_json("d.json", text).unwrap();
    assert_eq!(d.setup.rail, Rail::Right);
    assert_relative_eq!(d.elements[1].k_end, -1.0 / 450.0);
    assert_relative_eq!(d.elements[3].k_start, -1.0 / 450.0);
    assert_relative_eq!(d.elements[3].k_end, 1.0 / 900.0);
    let e = Design::from_json(
        "d.json",
        "{\"elements\": [{\"kind\": \"arc\", \"length\": 5}]}",
    )
    .unwrap_err();
    assert!(e.to_string().contains("element 1"), "{e}");
    let e = Design::from_json("d.json", "{\n \"elements\": [,]}").unwrap_err();
    assert!(e.to_string().starts_with("d.json: line 2"), "{e}");
}

#[test]
fn synthetic_route_round_trips_through_json() {
    let els = synthetic_route(20_000.0, 5);
    assert!(els.iter().map(|e| e.length).sum::<f64>() >= 20_000.0);
    let d = Design::from_json("route", &design_json(&els)).unwrap();
    assert_eq!(d.elements.len(), els.len());
    for (a, b) in d.elements.iter().zip(&els) {
        assert_eq!(a.kind, b.kind);
        assert_relative_eq!(a.k_end, b.k_end, epsilon = 1e-15);
    }
    assert_eq!(synthetic_route(5000.0, 9), synthetic_route(5000.0, 9));
}

#[test]
fn decimals_cover_common_resolutions() {
    assert_eq!(decimals_for(1.0), 0);
    assert_eq!(decimals_for(0.5), 1);
    assert_eq!(decimals_for(0.125), 3);
    assert_eq!(decimals_for(0.1), 1);
}

#[test]
fn an_imperial_design_reads_every_length_in_feet_and_inches() {
    // The same design written in feet/inches and in metres/millimetres
    // (1 ft = 0.3048 m, 1 in = 25.4 mm exactly, by the 1959 definition).
    let feet = r#"{"units": "imperial", "chord_ft": 62, "spacing_ft": 15.5, "gauge_in": 56.5,
        "noise_in": 0.04, "bias_in": 0.01, "resolution_in": 0.125, "irregularity_in": 0.06,
        "start_chainage_ft": 1000,
        "elements": [{"kind": "straight", "length": 100},
                     {"kind": "transition", "length": 50, "r_end": -1000},
                     {"kind": "arc", "length": 200, "radius": -1000},
                     {"kind": "transition", "length": 50}, {"kind": "straight", "length": 100}]}"#;
    let metres = r#"{"chord_m": 18.8976, "spacing_m": 4.7244, "gauge_m": 1.4351,
        "noise_mm": 1.016, "bias_mm": 0.254, "resolution_mm": 3.175, "irregularity_mm": 1.524,
        "start_chainage_m": 304.8,
        "elements": [{"kind": "straight", "length": 30.48},
                     {"kind": "transition", "length": 15.24, "r_end": -304.8},
                     {"kind": "arc", "length": 60.96, "radius": -304.8},
                     {"kind": "transition", "length": 15.24}, {"kind": "straight", "length": 30.48}]}"#;
    let a = Design::from_json("feet.json", feet).unwrap();
    let b = Design::from_json("metres.json", metres).unwrap();
    assert_eq!(a.setup.chainage_unit, LengthUnit::Foot);
    assert_eq!(a.setup.versine_unit, VersineUnit::Inch);
    assert_eq!(b.setup.chainage_unit, LengthUnit::Metre);
    for (x, y, what) in [
        (a.setup.chord, b.setup.chord, "chord"),
        (a.setup.spacing, b.setup.spacing, "spacing"),
        (a.setup.gauge, b.setup.gauge, "gauge"),
        (a.setup.noise_sd, b.setup.noise_sd, "noise"),
        (a.setup.bias, b.setup.bias, "bias"),
        (a.setup.resolution, b.setup.resolution, "resolution"),
        (
            a.setup.irregularity_rms,
            b.setup.irregularity_rms,
            "irregularity",
        ),
        (
            a.setup.start_chainage,
            b.setup.start_chainage,
            "start chainage",
        ),
    ] {
        assert_relative_eq!(x, y, max_relative = 1e-12);
        assert!(x > 0.0, "{what}");
    }
    assert_eq!(a.elements.len(), b.elements.len());
    for (x, y) in a.elements.iter().zip(&b.elements) {
        assert_eq!(x.kind, y.kind);
        assert_relative_eq!(x.length, y.length, max_relative = 1e-12);
        assert_relative_eq!(x.k_start, y.k_start, max_relative = 1e-12);
        assert_relative_eq!(x.k_end, y.k_end, max_relative = 1e-12);
    }
    assert_relative_eq!(a.elements[2].k_start, -1.0 / 304.8, max_relative = 1e-12);
}

#[test]
fn a_design_never_mixes_its_units() {
    let els = r#""elements": [{"kind": "straight", "length": 100}]"#;
    for (text, key) in [
        (
            format!(r#"{{"units": "imperial", "chord_m": 20, {els}}}"#),
            "chord_m",
        ),
        (
            format!(r#"{{"units": "imperial", "noise_mm": 1, {els}}}"#),
            "noise_mm",
        ),
        (format!(r#"{{"chord_ft": 62, {els}}}"#), "chord_ft"),
        (
            format!(r#"{{"units": "metric", "gauge_in": 56.5, {els}}}"#),
            "gauge_in",
        ),
        (format!(r#"{{"units": "feet", {els}}}"#), "units"),
        (format!(r#"{{"units": 1, {els}}}"#), "units"),
    ] {
        match Design::from_json("d.json", &text) {
            Err(DesignError::Bad { place, .. }) => assert_eq!(place, key, "{text}"),
            other => panic!("{text}: {other:?}"),
        }
    }
    // Feet in the element messages of an imperial file.
    let e = Design::from_json(
        "d.json",
        r#"{"units": "imperial", "elements": [{"kind": "arc", "length": 10}]}"#,
    )
    .unwrap_err();
    assert!(e.to_string().contains("\"radius\" in feet"), "{e}");
}

#[test]
fn simulate_errors_of_an_imperial_set_up_are_in_feet() {
    let mut s = SimSetup::classic(62.0 * crate::units::FOOT, Rail::Left);
    s.chainage_unit = LengthUnit::Foot;
    s.versine_unit = VersineUnit::Inch;
    s.spacing = 20.0 * crate::units::FOOT;
    let design = Alignment::new(Pose::default(), 0.0, vec![Element::straight(300.0)]);
    let e = simulate(&design, &s).unwrap_err().to_string();
    assert_eq!(
        e,
        "the mark spacing 20 ft does not divide the half chord 31 ft; use e.g. 31 ft, 15.5 ft or 3.1 ft"
    );
    s.spacing = 31.0 * crate::units::FOOT;
    s.noise_sd = -0.0254;
    let e = simulate(&design, &s).unwrap_err().to_string();
    assert_eq!(
        e,
        "the reading noise must be a finite length not below zero (got -1 in)"
    );
}

/// A gauge no track has is refused by name in a design file (a gauge of
/// 10⁵⁵ in once gave non-finite readings) and by `simulate` itself.
#[test]
fn gauges_wider_than_any_track_are_refused() {
    let text = r#"{"units": "imperial", "gauge_in": 4.4e55,
        "elements": [{"kind": "transition", "length": 203.6, "radius": 0}]}"#;
    match Design::from_json("d.json", text) {
        Err(DesignError::Bad { place, msg, .. }) => {
            assert_eq!(place, "gauge_in");
            assert!(msg.contains("not a track gauge"), "{msg}");
        }
        other => panic!("{other:?}"),
    }
    let ok = r#"{"gauge_m": 1.0, "elements": [{"kind": "straight", "length": 100}]}"#;
    assert!(Design::from_json("d.json", ok).is_ok());
    let design = Alignment::new(Pose::default(), 0.0, vec![Element::straight(100.0)]);
    let mut setup = SimSetup::classic(20.0, Rail::Left);
    setup.gauge = 2.5;
    assert!(matches!(
        simulate(&design, &setup),
        Err(SimulateError::GaugeTooWide { .. })
    ));
}
