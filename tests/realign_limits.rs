//! Slew limits as constraints: limits that a design can meet are met, fixed
//! points are held, one-sided limits hold one way only, and limits no slews
//! meet are refused naming the constraint, where and by how much.

use chordline::geometry::{Alignment, Element, Pose};
use chordline::realign::{
    Binding, RangeLimit, SlewError, SlewOptions, Slews, Toward, slews, versine_change,
};
use chordline::simulate::{SimSetup, Simulated, simulate};
use chordline::survey::{Rail, Setup, Survey};

fn design() -> Alignment {
    let k = 1.0 / 450.0;
    Alignment::new(
        Pose::default(),
        0.0,
        vec![
            Element::straight(200.0),
            Element::transition(60.0, 0.0, -k),
            Element::arc(300.0, -450.0),
            Element::transition(60.0, -k, 0.0),
            Element::straight(200.0),
        ],
    )
}

fn sim(spacing: f64, noise: f64, seed: u64) -> Simulated {
    let mut s = SimSetup::classic(20.0, Rail::Left);
    s.spacing = spacing;
    s.noise_sd = noise;
    s.seed = seed;
    simulate(&design(), &s).expect("simulate")
}

/// A smooth known lateral displacement (positive left), zero outside [x0, x1].
fn bump(ch: f64, x0: f64, x1: f64, amp: f64) -> f64 {
    if ch <= x0 || ch >= x1 {
        0.0
    } else {
        amp * (std::f64::consts::PI * (ch - x0) / (x1 - x0)).sin().powi(2)
    }
}

/// The simulated track displaced by a 30 mm bump to the left over 250–420 m,
/// and its true design versines.
fn displaced(spacing: f64, noise: f64, seed: u64) -> (Survey, Vec<f64>) {
    let simd = sim(spacing, noise, seed);
    let m = (10.0 / spacing) as usize;
    let p: Vec<f64> = simd
        .truth
        .iter()
        .map(|t| bump(t.chainage, 250.0, 420.0, 0.030))
        .collect();
    let mut survey = simd.survey.clone();
    for (r, d) in survey
        .readings
        .iter_mut()
        .zip(versine_change(&p, m, Rail::Left))
    {
        if let Some(v) = r.versine.as_mut() {
            *v += d;
        }
    }
    let design = simd
        .truth
        .iter()
        .map(|t| t.versine.unwrap_or(0.0))
        .collect();
    (survey, design)
}

fn setup() -> Setup {
    Setup::new(20.0, Rail::Left)
}

fn worst(s: &Slews) -> f64 {
    s.slew.iter().fold(0.0, |a: f64, b| a.max(b.abs()))
}

#[test]
fn a_limit_a_design_can_meet_is_met_and_fixed_points_hold() {
    for spacing in [10.0, 5.0] {
        let (survey, design) = displaced(spacing, 0.3e-3, 3);
        let free = slews(&survey, &setup(), &design, 0.3e-3, &SlewOptions::default())
            .expect("free")
            .0;
        assert!(
            worst(&free) > 0.028,
            "the bump needs ~30 mm: {}",
            worst(&free)
        );
        let opts = SlewOptions {
            fixed: vec![300.0],
            max_slew: Some(0.020),
            ..Default::default()
        };
        let (s, _) = slews(&survey, &setup(), &design, 0.3e-3, &opts).expect("feasible");
        // Every slew within the limit (the sheet prints 2 decimals of a mm).
        assert!(worst(&s) <= 0.020, "spacing {spacing}: {}", worst(&s));
        assert!(s.exceeding().is_empty());
        // The fixed point is held to 0.5 mm (here exactly).
        let at = s.at_fixed.iter().position(|&f| f).expect("fixed reading");
        assert!(s.slew[at].abs() <= 0.5e-3, "{}", s.slew[at]);
        // The limit binds: some slew sits at it.
        assert!(worst(&s) > 0.0199, "{}", worst(&s));
        // The design changed by no more than allowed (3 reading sd).
        assert!(s.max_design_change() <= 3.0 * 0.3e-3 + 1e-9);
        // Consistency: re-applying the chord slews gives the realised versines.
        let dv = versine_change(&s.chord_slew, s.step, Rail::Left);
        for (i, r) in survey.readings.iter().enumerate() {
            if let (Some(v), Some(rv)) = (r.versine, s.realised_versine[i]) {
                assert!((v + dv[i] - rv).abs() < 1e-12);
                assert!((rv - design[i] - s.design_change[i]).abs() < 1e-12);
            }
        }
    }
}

#[test]
fn an_inactive_limit_gives_the_unconstrained_solution() {
    // The QP (Clarabel) and the banded least squares solve the same problem
    // when no bound is active: the same slews to well under a micrometre.
    let (survey, design) = displaced(5.0, 0.3e-3, 4);
    let free = slews(&survey, &setup(), &design, 0.3e-3, &SlewOptions::default())
        .expect("free")
        .0;
    let opts = SlewOptions {
        max_slew: Some(0.2),
        ..Default::default()
    };
    let (s, _) = slews(&survey, &setup(), &design, 0.3e-3, &opts).expect("limited");
    let d = s
        .slew
        .iter()
        .zip(&free.slew)
        .fold(0.0, |a: f64, (x, y)| a.max((x - y).abs()));
    assert!(d < 1e-7, "max difference {d:e} m");
}

#[test]
fn a_limit_no_slews_meet_names_the_binding_constraint() {
    let (survey, design) = displaced(5.0, 0.3e-3, 5);
    let opts = SlewOptions {
        max_slew: Some(0.005),
        versine_tolerance: Some(0.2e-3),
        ..Default::default()
    };
    let e = slews(&survey, &setup(), &design, 0.3e-3, &opts).expect_err("infeasible");
    let SlewError::Infeasible {
        binding,
        chainage,
        excess,
        from,
        to,
        ..
    } = &e
    else {
        panic!("{e}");
    };
    assert_eq!(*binding, Binding::MaxSlew(0.005), "{e}");
    // It binds over the bump (250–420 m), by several mm.
    assert!((250.0..=420.0).contains(chainage), "{e}");
    assert!(*from >= 200.0 && *to <= 470.0, "{e}");
    assert!(*excess > 0.003 && *excess < 0.030, "{e}");
    let msg = e.to_string();
    assert!(msg.contains("largest slew of 5.0 mm binds"), "{msg}");
    assert!(e.is_request());
}

#[test]
fn one_sided_range_limits_hold_one_way_only() {
    // The track sits up to 30 mm left of the design, so slews go right
    // (negative). A wall on the right from 300 to 370 m allows at most 10 mm
    // to the right; elsewhere the track may move as far as it needs.
    let (survey, design) = displaced(5.0, 0.3e-3, 6);
    let wall = RangeLimit {
        from: 300.0,
        to: 370.0,
        toward: Toward::Right,
        max: 0.010,
    };
    let opts = SlewOptions {
        ranges: vec![wall],
        ..Default::default()
    };
    let (s, _) = slews(&survey, &setup(), &design, 0.3e-3, &opts).expect("feasible");
    for i in 0..s.slew.len() {
        if (300.0..=370.0).contains(&s.chainage[i]) {
            assert!(s.slew[i] >= -0.010, "{} at {}", s.slew[i], s.chainage[i]);
            assert_eq!(s.lower[i], Some(-0.010));
            assert_eq!(s.upper[i], None);
        }
    }
    // "Out" on this right-hand curve is to the left: a limit of 0 mm out
    // leaves the right-going slews free.
    let out = RangeLimit {
        toward: Toward::Out,
        max: 0.0,
        ..wall
    };
    let opts = SlewOptions {
        ranges: vec![out],
        ..Default::default()
    };
    let (s2, _) = slews(&survey, &setup(), &design, 0.3e-3, &opts).expect("feasible");
    for i in 0..s2.slew.len() {
        if (300.0..=370.0).contains(&s2.chainage[i]) {
            assert!(s2.slew[i] <= 1e-9, "{} at {}", s2.slew[i], s2.chainage[i]);
            assert_eq!(s2.upper[i], Some(0.0));
            assert!(s2.towards_centre(i).is_some_and(|t| t >= -1e-9));
        }
    }
}

#[test]
fn fixed_point_tolerance_is_respected() {
    let (survey, design) = displaced(5.0, 0.3e-3, 7);
    let opts = SlewOptions {
        fixed: vec![335.0],
        fixed_tolerance: 0.002,
        ..Default::default()
    };
    let (s, _) = slews(&survey, &setup(), &design, 0.3e-3, &opts).expect("feasible");
    let fixed: Vec<usize> = (0..s.slew.len()).filter(|&i| s.at_fixed[i]).collect();
    assert_eq!(fixed.len(), 2, "one reading per chain");
    for &i in &fixed {
        assert!(s.slew[i].abs() <= 0.002, "{}", s.slew[i]);
    }
    // The tolerance is used: the bump wants ~30 mm here.
    let used = fixed.iter().map(|&i| s.slew[i].abs()).fold(0.0, f64::max);
    assert!(used > 0.0019, "{used}");
}

#[test]
fn work_section_holds_its_own_ends() {
    let (survey, design) = displaced(5.0, 0.3e-3, 8);
    let opts = SlewOptions {
        section: Some((150.0, 600.0)),
        ..Default::default()
    };
    let (s, _) = slews(&survey, &setup(), &design, 0.3e-3, &opts).expect("section");
    assert_eq!(s.chainage.first(), Some(&150.0));
    assert_eq!(s.chainage.last(), Some(&600.0));
    assert!(s.held[0] && s.held[3] && !s.held[4]);
    assert_eq!(s.at_stations().len(), survey.readings.len());
    assert_eq!(s.first, 30);
    let bad = SlewOptions {
        section: Some((900.0, 1200.0)),
        ..Default::default()
    };
    let e = slews(&survey, &setup(), &design, 0.3e-3, &bad).expect_err("outside");
    assert!(e.to_string().contains("--section"), "{e}");
}

#[test]
fn slews_whose_sd_exceeds_their_limit_are_not_shown() {
    // 1 mm reading noise every 10 m over 820 m held at the ends: the sd in
    // the middle reaches several centimetres, beyond a 20 mm limit.
    let (survey, design) = displaced(10.0, 1e-3, 9);
    let opts = SlewOptions {
        max_slew: Some(0.020),
        versine_tolerance: Some(5e-3),
        ..Default::default()
    };
    let (s, diags) = slews(&survey, &setup(), &design, 1e-3, &opts).expect("feasible");
    let hidden = s.hidden();
    assert!(!hidden.is_empty());
    for i in 0..s.slew.len() {
        assert_eq!(s.shown[i], s.sd[i] <= 0.020, "{i}");
    }
    let w = diags
        .iter()
        .find(|d| d.message.contains("not shown"))
        .expect("warning");
    let hint = w.hint.as_deref().unwrap_or("");
    assert!(
        hint.contains("fixed points") && hint.contains("--section"),
        "{hint}"
    );
    // Fixed points every 200 m bring every sd within the limit.
    let opts = SlewOptions {
        fixed: vec![200.0, 400.0, 600.0],
        ..opts
    };
    let (s, _) = slews(&survey, &setup(), &design, 1e-3, &opts).expect("feasible");
    assert!(s.hidden().is_empty(), "{:?}", s.hidden());
}

/// The optimiser against a general-purpose solver: scipy's SLSQP on the same
/// objective and constraints, stated independently in
/// `tests/fixtures/realign/make_qp_cases.py` (values recorded in
/// `qp_cases.json` with the scipy and numpy versions).
#[test]
fn constrained_slews_match_scipy_slsqp() {
    use chordline::survey::Reading;
    use chordline::units::{LengthUnit, VersineUnit};
    let text = include_str!("fixtures/realign/qp_cases.json");
    let all: serde_json::Value = serde_json::from_str(text).expect("json");
    assert!(all["scipy"].as_str().is_some_and(|v| v.starts_with('1')));
    let nums = |v: &serde_json::Value| -> Vec<f64> {
        v.as_array()
            .expect("array")
            .iter()
            .map(|x| x.as_f64().expect("number"))
            .collect()
    };
    for case in all["cases"].as_array().expect("cases") {
        let name = case["name"].as_str().unwrap();
        let d = case["spacing_m"].as_f64().unwrap();
        let versine = nums(&case["versine"]);
        let design = nums(&case["design"]);
        let readings = versine
            .iter()
            .enumerate()
            .map(|(i, v)| Reading {
                chainage: d * i as f64,
                versine: Some(*v),
                rail: Rail::Right,
                note: None,
                line: i + 2,
            })
            .collect();
        let survey = Survey {
            source: name.into(),
            chainage_unit: LengthUnit::Metre,
            versine_unit: VersineUnit::Millimetre,
            readings,
            has_side_column: false,
        };
        let ranges = case["ranges"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| RangeLimit {
                from: d * r[0].as_f64().unwrap(),
                to: d * r[1].as_f64().unwrap(),
                toward: chordline::realign::parse_toward(r[2].as_str().unwrap()).unwrap(),
                max: r[3].as_f64().unwrap(),
            })
            .collect();
        let opts = SlewOptions {
            fixed: nums(&case["fixed_index"]).iter().map(|j| d * j).collect(),
            fixed_tolerance: case["fixed_tolerance"].as_f64().unwrap(),
            max_slew: case["max_slew"].as_f64(),
            ranges,
            versine_tolerance: case["tau"].as_f64(),
            ..Default::default()
        };
        let setup = Setup::new(case["chord_m"].as_f64().unwrap(), Rail::Right);
        let (s, _) = slews(&survey, &setup, &design, 0.5e-3, &opts).expect(name);
        let want = nums(&case["expected_slew"]);
        let diff = s
            .slew
            .iter()
            .zip(&want)
            .fold(0.0, |a: f64, (x, y)| a.max((x - y).abs()));
        // Within 0.005 mm: the 1 µm safety margin on the bounds plus the
        // solvers' tolerances.
        assert!(
            diff < 5e-6,
            "{name}: max |slew − SLSQP| = {:.4} mm",
            diff * 1e3
        );
        let m = s.step;
        let inner = &s.design_change[m..s.design_change.len() - m];
        let obj: f64 = 0.5 * inner.iter().map(|x| x * x).sum::<f64>();
        let want_obj = case["expected_objective"].as_f64().unwrap();
        assert!(
            (obj - want_obj).abs() <= 1e-3 * want_obj + 1e-12,
            "{name}: objective {obj:e} vs {want_obj:e}"
        );
        eprintln!("{name}: max |slew − SLSQP| = {:.5} mm", diff * 1e3);
    }
}
