//! Round trips: simulate a design (exact geometry, `chordline::simulate`,
//! itself cross-checked against `shared/tools/reference-survey`), integrate
//! the readings, compare with the exact centreline and rail.

use chordline::geometry::{Alignment, Element, Pose};
use chordline::integrate::{IntegrateOptions, Plan, integrate};
use chordline::simulate::{SimSetup, Truth, simulate};
use chordline::survey::{Marking, Rail, Setup, Survey};
use chordline::units::{FOOT, INCH, LengthUnit, VersineUnit};
use std::f64::consts::{FRAC_PI_2, PI, TAU};

fn survey_of(design: &Alignment, sim: &SimSetup) -> (Survey, Vec<Truth>) {
    simulate(design, sim).expect("simulate").read_marks()
}

fn setup_of(sim: &SimSetup, sd: Option<f64>) -> Setup {
    sim.survey_setup(sd)
}

fn run(design: &Alignment, sim: &SimSetup, sd: Option<f64>) -> (Vec<Truth>, Plan) {
    let (survey, truth) = survey_of(design, sim);
    let opts = IntegrateOptions {
        start: truth[0].centre,
        position_obs: vec![],
    };
    let (plan, _d) = integrate(&survey, &setup_of(sim, sd), &opts).expect("integrate");
    assert_eq!(plan.stations.len(), truth.len());
    (truth, plan)
}

fn wrap(a: f64) -> f64 {
    (a + PI).rem_euclid(TAU) - PI
}

/// Largest centreline and rail position error, and largest heading error.
fn errors(truth: &[Truth], plan: &Plan) -> (f64, f64, f64) {
    let (mut ec, mut er, mut eh) = (0.0_f64, 0.0_f64, 0.0_f64);
    for (t, s) in truth.iter().zip(&plan.stations) {
        ec = ec.max((s.x - t.centre.x).hypot(s.y - t.centre.y));
        er = er.max((s.rail_x - t.rail_x).hypot(s.rail_y - t.rail_y));
        eh = eh.max(wrap(s.heading - t.centre.heading).abs());
    }
    (ec, er, eh)
}

fn start() -> Pose {
    Pose {
        x: 1000.0,
        y: 2000.0,
        heading: 0.3,
    }
}

fn reverse_curve() -> Alignment {
    Alignment::new(
        start(),
        0.0,
        vec![
            Element::straight(100.0),
            Element::transition(60.0, 0.0, 1.0 / 450.0),
            Element::arc(200.0, 450.0),
            Element::transition(80.0, 1.0 / 450.0, -1.0 / 600.0),
            Element::arc(150.0, -600.0),
            Element::transition(60.0, -1.0 / 600.0, 0.0),
            Element::straight(100.0),
        ],
    )
}

#[test]
fn circle_is_exact_at_the_half_chord_for_both_markings_and_rails() {
    // METHODS C2.1: the exact polygon rebuilds a circle to rounding level.
    let design = Alignment::new(start(), 0.0, vec![Element::arc(400.0, -300.0)]);
    for rail in [Rail::Left, Rail::Right] {
        for marking in [Marking::Taped, Marking::Wire] {
            let mut sim = SimSetup::classic(20.0, rail);
            sim.marking = marking;
            let (truth, plan) = run(&design, &sim, None);
            let (ec, er, eh) = errors(&truth, &plan);
            assert!(
                ec < 1e-7 && er < 1e-7 && eh < 1e-9,
                "{rail:?} {marking:?}: {ec} {er} {eh}"
            );
            for s in &plan.stations {
                assert!((s.curvature + 1.0 / 300.0).abs() < 1e-10, "{}", s.curvature);
            }
        }
    }
}

#[test]
fn reverse_curve_with_transitions_is_sub_millimetre_at_every_spacing() {
    // Noise-free: classic polygon and the regularised estimate for denser readings.
    let design = reverse_curve();
    for (rail, marking) in [(Rail::Left, Marking::Taped), (Rail::Right, Marking::Wire)] {
        for spacing in [10.0, 5.0, 2.0, 1.0, 0.25] {
            let mut sim = SimSetup::classic(20.0, rail);
            sim.marking = marking;
            sim.spacing = spacing;
            let (truth, plan) = run(&design, &sim, None);
            let (ec, er, eh) = errors(&truth, &plan);
            // Measured: ≤ 0.26 mm centre, ≤ 0.26 mrad heading (at element joints, classic).
            assert!(
                ec < 0.5e-3 && er < 0.5e-3,
                "{rail:?} {marking:?} d={spacing}: {ec} {er}"
            );
            assert!(
                eh < 0.5e-3,
                "{rail:?} {marking:?} d={spacing}: heading {eh}"
            );
        }
    }
}

#[test]
fn imperial_62ft_chord_at_31ft_stations() {
    // North American string lining: 62 ft chord, 31 ft stations (METHODS §5, TM 5-628).
    let ft = FOOT;
    let r = 1146.279 * ft; // 5° curve, chord definition (CHECKS.md 1.16)
    let design = Alignment::new(
        start(),
        0.0,
        vec![
            Element::straight(300.0 * ft),
            Element::transition(250.0 * ft, 0.0, -1.0 / r),
            Element::arc(600.0 * ft, -r),
            Element::transition(250.0 * ft, -1.0 / r, 0.0),
            Element::straight(300.0 * ft),
        ],
    );
    let mut sim = SimSetup::classic(62.0 * ft, Rail::Left);
    sim.chainage_unit = LengthUnit::Foot;
    sim.versine_unit = VersineUnit::Inch;
    let (truth, plan) = run(&design, &sim, None);
    let (ec, er, eh) = errors(&truth, &plan);
    assert!(ec < 0.5e-3 && er < 0.5e-3 && eh < 0.5e-3, "{ec} {er} {eh}");
    // Mid-curve the centreline curvature is 1/R.
    let mid = &plan.stations[plan.stations.len() / 2];
    assert!(
        (mid.curvature * r + 1.0).abs() < 1e-6,
        "{}",
        mid.curvature * r
    );
    // Rounded to 1/8 in, the rounding floor is (1/8 in)/√12.
    sim.resolution = 0.125 * INCH;
    let (_, plan) = run(&design, &sim, None);
    assert!(plan.reading_sd >= 0.125 * INCH / 12f64.sqrt() - 1e-12);
}

#[test]
fn ninety_degree_curve_closes() {
    // Total turn 90°: transitions 60 m into and out of R = 400 m.
    let r = 400.0;
    let lt = 60.0;
    let arc = r * (FRAC_PI_2 - lt / r);
    let design = Alignment::new(
        start(),
        0.0,
        vec![
            Element::straight(100.0),
            Element::transition(lt, 0.0, 1.0 / r),
            Element::arc(arc, r),
            Element::transition(lt, 1.0 / r, 0.0),
            Element::straight(100.0),
        ],
    );
    for spacing in [10.0, 1.0] {
        let mut sim = SimSetup::classic(20.0, Rail::Right);
        sim.spacing = spacing;
        let (truth, plan) = run(&design, &sim, None);
        let last = plan.stations.last().unwrap();
        let t = truth.last().unwrap();
        // End heading is exactly 90° from the start heading on the final straight.
        assert!(
            (wrap(last.heading - start().heading) - FRAC_PI_2).abs() < 2e-5,
            "d={spacing}: {}",
            last.heading
        );
        assert!((last.x - t.centre.x).hypot(last.y - t.centre.y) < 0.5e-3);
    }
}

#[test]
fn tight_curve_needs_the_half_gauge_offset() {
    // R = 150 m centreline, measured on the outer rail: the rail runs at 150.7175 m.
    let design = Alignment::new(
        start(),
        0.0,
        vec![
            Element::straight(40.0),
            Element::transition(40.0, 0.0, -1.0 / 150.0),
            Element::arc(150.0, -150.0),
            Element::transition(40.0, -1.0 / 150.0, 0.0),
            Element::straight(40.0),
        ],
    );
    let sim = SimSetup::classic(20.0, Rail::Left);
    let (survey, truth) = survey_of(&design, &sim);
    let opts = IntegrateOptions {
        start: truth[0].centre,
        position_obs: vec![],
    };
    let (plan, _) = integrate(&survey, &setup_of(&sim, None), &opts).unwrap();
    let (ec, er, _) = errors(&truth, &plan);
    assert!(ec < 0.5e-3 && er < 0.5e-3, "{ec} {er}");
    let mid = plan.stations.len() / 2;
    assert!((plan.stations[mid].curvature * 150.0 + 1.0).abs() < 1e-6);
    // Ignoring the gauge (centreline = rail) gets the radius wrong by the half gauge.
    let mut no_gauge = setup_of(&sim, None);
    no_gauge.gauge = 0.0;
    let (bad, _) = integrate(&survey, &no_gauge, &opts).unwrap();
    let r_bad = -1.0 / bad.stations[mid].curvature;
    assert!((r_bad - 150.7175).abs() < 1e-3, "{r_bad}");
}

/// Lateral error of each station against the truth, over its reported sd.
fn normalised_lateral(truth: &[Truth], plan: &Plan, every: usize) -> Vec<f64> {
    let mut out = Vec::new();
    for (i, (t, s)) in truth.iter().zip(&plan.stations).enumerate() {
        if i == 0 || i % every != 0 || s.position_sd <= 0.0 {
            continue;
        }
        let (sn, cs) = t.centre.heading.sin_cos();
        let lat = -(s.x - t.centre.x) * sn + (s.y - t.centre.y) * cs;
        out.push(lat / s.position_sd);
    }
    out
}

fn rms(v: &[f64]) -> f64 {
    (v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64).sqrt()
}

fn long_route() -> Alignment {
    Alignment::new(
        start(),
        0.0,
        vec![
            Element::straight(200.0),
            Element::transition(80.0, 0.0, 1.0 / 800.0),
            Element::arc(500.0, 800.0),
            Element::transition(80.0, 1.0 / 800.0, 0.0),
            Element::straight(300.0),
            Element::transition(80.0, 0.0, -1.0 / 1200.0),
            Element::arc(500.0, -1200.0),
            Element::transition(80.0, -1.0 / 1200.0, 0.0),
            Element::straight(200.0),
        ],
    )
}

#[test]
fn noisy_errors_match_the_reported_standard_deviation() {
    // 1 mm reading noise, 40 seeds (classic) / 16 seeds (1 m readings), 2.2 km:
    // the normalised lateral errors at the end and in the middle must have RMS ≈ 1.
    let design = long_route();
    for (spacing, seeds, stated) in [(10.0, 40u64, true), (10.0, 40, false), (1.0, 16, true)] {
        let mut ends = Vec::new();
        for seed in 0..seeds {
            let mut sim = SimSetup::classic(20.0, Rail::Left);
            sim.spacing = spacing;
            sim.noise_sd = 1e-3;
            sim.seed = 100 + seed;
            let (truth, plan) = run(&design, &sim, stated.then_some(1e-3));
            let z = normalised_lateral(&truth, &plan, 1);
            let n = z.len();
            ends.push(z[n - 1]);
            ends.push(z[n / 2]);
            if !stated {
                assert!(
                    (plan.reading_sd - 1e-3).abs() < 0.25e-3,
                    "estimated {}",
                    plan.reading_sd
                );
            }
        }
        let r = rms(&ends);
        // Chi-square with ~2·seeds values: RMS within ±35 % at the 1 % level.
        assert!(
            (0.65..1.35).contains(&r),
            "d={spacing} stated={stated}: normalised RMS {r}"
        );
    }
}
