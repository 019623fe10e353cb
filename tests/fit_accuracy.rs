//! Seeded accuracy checks of the element fit on simulated surveys (a few
//! cases, loose enough to be robust, tight enough to fail). The full study is
//! `cargo run --release --example fit_accuracy`.

mod common;
use common::plan_of;

use chordline::fit::{ElementStatus, FitOptions, FitResult, fit};
use chordline::geometry::{Alignment, Element, ElementKind, Pose};
use chordline::simulate::{SimSetup, simulate};
use chordline::survey::{Rail, Setup};
use chordline::units::{FOOT, INCH, LengthUnit, VersineUnit};

use ElementKind::{Arc as A, Straight as S, Transition as T};

fn tr(l: f64, r0: f64, r1: f64) -> Element {
    let k = |r: f64| if r == 0.0 { 0.0 } else { 1.0 / r };
    Element::transition(l, k(r0), k(r1))
}

fn simple() -> Vec<Element> {
    vec![
        Element::straight(200.0),
        tr(60.0, 0.0, 450.0),
        Element::arc(300.0, 450.0),
        tr(60.0, 450.0, 0.0),
        Element::straight(200.0),
    ]
}

fn noisy(chord: f64, spacing: f64, rail: Rail, seed: u64) -> SimSetup {
    let mut s = SimSetup::classic(chord, rail);
    s.spacing = spacing;
    s.noise_sd = 0.001;
    s.resolution = 0.001;
    s.seed = seed;
    s
}

/// Simulate and fit; returns the fit and the true joints in survey chainage.
fn run(els: &[Element], sim: &SimSetup) -> (FitResult, Vec<f64>) {
    let al = Alignment::new(Pose::default(), 0.0, els.to_vec());
    let simd = simulate(&al, sim).expect("simulate");
    let mut setup = Setup::new(sim.chord, sim.rail);
    setup.marking = sim.marking;
    let (res, _) = fit(&plan_of(&simd.survey, &setup), &FitOptions::default()).expect("fit");
    let d = sim.rail.offset_left(sim.gauge);
    let mut joints = Vec::new();
    let mut s = 0.0;
    for e in &els[..els.len() - 1] {
        s += e.length;
        joints.push(sim.start_chainage + al.offset_length(s, d));
    }
    (res, joints)
}

fn kinds(r: &FitResult) -> Vec<ElementKind> {
    r.elements.iter().map(|e| e.kind).collect()
}

fn boundary_errors(r: &FitResult, joints: &[f64]) -> Vec<f64> {
    r.elements
        .iter()
        .skip(1)
        .zip(joints)
        .map(|(e, j)| e.start_chainage.value - j)
        .collect()
}

#[test]
fn noise_free_simple_curve_is_recovered_to_centimetres() {
    let (r, joints) = run(&simple(), &SimSetup::classic(20.0, Rail::Right));
    assert_eq!(kinds(&r), [S, T, A, T, S]);
    for e in boundary_errors(&r, &joints) {
        assert!(e.abs() < 0.05, "boundary off by {e} m");
    }
    let rad = r.elements[2].start_radius.expect("arc radius").value;
    assert!((rad - 450.0).abs() < 0.05, "radius {rad}");
    let l = r.elements[1].length.value;
    assert!((l - 60.0).abs() < 0.1, "transition length {l}");
}

#[test]
fn simple_curve_with_noise_meets_the_targets() {
    let mut all = Vec::new();
    let mut z = Vec::new();
    for seed in 1..=4 {
        let (r, joints) = run(&simple(), &noisy(20.0, 10.0, Rail::Right, seed));
        assert_eq!(kinds(&r), [S, T, A, T, S], "seed {seed}");
        let errs = boundary_errors(&r, &joints);
        for (e, el) in errs.iter().zip(r.elements.iter().skip(1)) {
            assert!(e.abs() < 2.5, "seed {seed}: boundary off by {e} m");
            z.push(e / el.start_chainage.se);
        }
        all.extend(errs);
        let rad = r.elements[2].start_radius.expect("radius");
        assert!(
            (rad.value - 450.0).abs() / 450.0 < 0.005,
            "seed {seed}: radius {rad:?}"
        );
        assert!(rad.se > 0.05 && rad.se < 3.0, "radius se {}", rad.se);
    }
    let rms = (all.iter().map(|e| e * e).sum::<f64>() / all.len() as f64).sqrt();
    assert!(rms < 0.9, "boundary RMS {rms} m");
    // Reported standard errors explain the scatter (loosely, 16 joints).
    let zr = (z.iter().map(|e| e * e).sum::<f64>() / z.len() as f64).sqrt();
    assert!(zr > 0.4 && zr < 2.2, "RMS of error/SE = {zr}");
}

#[test]
fn irregular_track_makes_no_extra_elements() {
    for seed in 1..=2 {
        let mut sim = noisy(20.0, 10.0, Rail::Right, seed);
        sim.irregularity_rms = 0.0015;
        let (r, joints) = run(&simple(), &sim);
        assert_eq!(kinds(&r), [S, T, A, T, S], "seed {seed}");
        for e in boundary_errors(&r, &joints) {
            assert!(e.abs() < 4.0, "seed {seed}: boundary off by {e} m");
        }
    }
}

#[test]
fn straight_track_stays_one_straight() {
    let els = vec![Element::straight(800.0)];
    for seed in 1..=3 {
        let mut sim = noisy(20.0, 2.5, Rail::Left, seed);
        sim.irregularity_rms = 0.002;
        let (r, _) = run(&els, &sim);
        assert_eq!(kinds(&r), [S], "seed {seed}: {:?}", r.elements);
    }
}

#[test]
fn curve_without_transitions_is_a_step() {
    let els = vec![
        Element::straight(200.0),
        Element::arc(250.0, -600.0),
        Element::straight(200.0),
    ];
    let (r, joints) = run(&els, &noisy(20.0, 10.0, Rail::Left, 3));
    assert_eq!(kinds(&r), [S, A, S]);
    for e in boundary_errors(&r, &joints) {
        assert!(e.abs() < 1.0, "boundary off by {e} m");
    }
    assert!(
        r.elements[1].note.contains("no transition"),
        "{}",
        r.elements[1].note
    );
    let rad = r.elements[1].start_radius.expect("radius").value;
    assert!((rad + 600.0).abs() < 3.0, "radius {rad}");
}

#[test]
fn reverse_curve_without_straight_between() {
    let els = vec![
        Element::straight(150.0),
        tr(60.0, 0.0, 600.0),
        Element::arc(200.0, 600.0),
        tr(60.0, 600.0, 0.0),
        tr(60.0, 0.0, -500.0),
        Element::arc(200.0, -500.0),
        tr(60.0, -500.0, 0.0),
        Element::straight(150.0),
    ];
    for seed in 1..=3 {
        let (r, joints) = run(&els, &noisy(20.0, 10.0, Rail::Left, seed));
        let k = kinds(&r);
        // Two transitions meeting at the inflection, or (when the data cannot
        // tell the two rates apart) one transition through zero curvature.
        let (r1, r2) = if k == [S, T, A, T, T, A, T, S] {
            for e in boundary_errors(&r, &joints) {
                assert!(e.abs() < 3.0, "seed {seed}: boundary off by {e} m");
            }
            (&r.elements[2], &r.elements[5])
        } else {
            assert_eq!(k, [S, T, A, T, A, T, S], "seed {seed}");
            assert!(
                r.elements[3].note.contains("inflection"),
                "{}",
                r.elements[3].note
            );
            let (t0, t1) = (
                r.elements[3].start_chainage.value,
                r.elements[3].end_chainage.value,
            );
            assert!(
                (t0 - joints[2]).abs() < 3.0 && (t1 - joints[4]).abs() < 3.0,
                "{t0} {t1}"
            );
            (&r.elements[2], &r.elements[4])
        };
        let r1 = r1.start_radius.expect("radius").value;
        let r2 = r2.start_radius.expect("radius").value;
        assert!(
            (r1 - 600.0).abs() < 6.0 && (r2 + 500.0).abs() < 5.0,
            "{r1} {r2}"
        );
    }
}

#[test]
fn tight_curve_radius_is_of_the_centreline() {
    let els = vec![
        Element::straight(150.0),
        tr(40.0, 0.0, -180.0),
        Element::arc(150.0, -180.0),
        tr(40.0, -180.0, 0.0),
        Element::straight(150.0),
    ];
    // Left rail on a right-hand curve: the outer rail, radius 180.7175 m.
    let (r, joints) = run(&els, &noisy(20.0, 10.0, Rail::Left, 5));
    assert_eq!(kinds(&r), [S, T, A, T, S]);
    let rad = r.elements[2].start_radius.expect("radius").value;
    assert!((rad + 180.0).abs() < 0.5, "radius {rad}");
    for e in boundary_errors(&r, &joints) {
        assert!(e.abs() < 1.5, "boundary off by {e} m");
    }
    // The centreline arc is shorter than the outer rail's.
    let lr = r.elements[2].end_chainage.value - r.elements[2].start_chainage.value;
    assert!(
        r.elements[2].length.value < lr,
        "{} vs {lr}",
        r.elements[2].length.value
    );
}

#[test]
fn imperial_survey() {
    let els = vec![
        Element::straight(180.0),
        tr(60.0, 0.0, -350.0),
        Element::arc(250.0, -350.0),
        tr(60.0, -350.0, 0.0),
        Element::straight(180.0),
    ];
    let mut sim = noisy(62.0 * FOOT, 31.0 * FOOT, Rail::Left, 7);
    sim.chainage_unit = LengthUnit::Foot;
    sim.versine_unit = VersineUnit::Inch;
    sim.resolution = INCH / 8.0;
    let (r, joints) = run(&els, &sim);
    assert_eq!(kinds(&r), [S, T, A, T, S]);
    for e in boundary_errors(&r, &joints) {
        assert!(e.abs() < 2.5, "boundary off by {e} m");
    }
    let rad = r.elements[2].start_radius.expect("radius").value;
    assert!((rad + 350.0).abs() < 2.0, "radius {rad}");
    assert!(
        r.elements
            .iter()
            .all(|e| e.status == ElementStatus::Determined)
    );
}

#[test]
fn survey_starting_inside_a_curve() {
    let els = vec![
        Element::arc(200.0, 500.0),
        tr(60.0, 500.0, 0.0),
        Element::straight(300.0),
    ];
    let (r, joints) = run(&els, &noisy(20.0, 5.0, Rail::Right, 2));
    assert_eq!(kinds(&r), [A, T, S]);
    assert!(r.elements[0].starts_at_survey_end);
    for e in boundary_errors(&r, &joints) {
        assert!(e.abs() < 1.5, "boundary off by {e} m");
    }
    let rad = r.elements[0].start_radius.expect("radius");
    assert!(
        (rad.value - 500.0).abs() < 4.0 * rad.se && rad.se < 1.5,
        "radius {rad:?}"
    );
}

#[test]
fn broken_back_curve_is_flagged() {
    let els = vec![
        Element::straight(150.0),
        tr(50.0, 0.0, 600.0),
        Element::arc(150.0, 600.0),
        tr(50.0, 600.0, 0.0),
        Element::straight(60.0),
        tr(50.0, 0.0, 700.0),
        Element::arc(150.0, 700.0),
        tr(50.0, 700.0, 0.0),
        Element::straight(150.0),
    ];
    let (r, _) = run(&els, &noisy(20.0, 5.0, Rail::Right, 4));
    assert_eq!(kinds(&r), [S, T, A, T, S, T, A, T, S]);
    assert!(
        r.elements[4].note.contains("broken-back"),
        "{}",
        r.elements[4].note
    );
    assert!(!r.elements[0].note.contains("broken-back"));
}

#[test]
fn long_dense_survey_uses_every_curve() {
    // 5.4 km read every 0.25 m (over 20 000 readings: the curves are fitted
    // on several threads); three curves, all found.
    let mut els = vec![Element::straight(400.0)];
    for r in [600.0, -900.0, 1500.0] {
        els.push(tr(60.0, 0.0, r));
        els.push(Element::arc(250.0, r));
        els.push(tr(60.0, r, 0.0));
        els.push(Element::straight(1400.0));
    }
    let mut sim = noisy(20.0, 0.25, Rail::Right, 11);
    sim.noise_sd = 0.0005;
    sim.resolution = 0.0001;
    let (r, joints) = run(&els, &sim);
    assert_eq!(r.elements.len(), els.len(), "{:?}", kinds(&r));
    for e in boundary_errors(&r, &joints) {
        assert!(e.abs() < 1.0, "boundary off by {e} m");
    }
    assert!(r.stats.groups >= 3);
}
