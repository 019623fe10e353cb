//! The design of the engineer's choice: an optimised design moves the track
//! less than the fitted one and recovers a known smooth error; the
//! engineer's elements passed back in are used as given.

mod common;
use common::plan_of;

use chordline::fit::{FitOptions, fit};
use chordline::geometry::{Alignment, Element, ElementKind, Pose};
use chordline::realign::{
    DesignChoice, Objective, SlewOptions, Slews, elements_of_fit, slews_for_fit, versine_change,
};
use chordline::simulate::{SimSetup, simulate};
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

/// The survey of the track on the design (`.0`), and of the same track
/// displaced by a smooth error `p` (`.1`, positive left, metres): a 12 mm
/// bump over 300–400 m, in the arc.
fn surveyed(seed: u64) -> (Survey, Survey, Vec<f64>) {
    let mut s = SimSetup::classic(20.0, Rail::Left);
    s.spacing = 5.0;
    s.noise_sd = 0.2e-3;
    s.seed = seed;
    let simd = simulate(&design(), &s).expect("simulate");
    let p: Vec<f64> = simd
        .truth
        .iter()
        .map(|t| {
            let (x0, x1) = (300.0, 400.0);
            if t.chainage <= x0 || t.chainage >= x1 {
                0.0
            } else {
                0.012
                    * (std::f64::consts::PI * (t.chainage - x0) / (x1 - x0))
                        .sin()
                        .powi(2)
            }
        })
        .collect();
    let mut survey = simd.survey.clone();
    for (r, d) in survey
        .readings
        .iter_mut()
        .zip(versine_change(&p, 2, Rail::Left))
    {
        if let Some(v) = r.versine.as_mut() {
            *v += d;
        }
    }
    (simd.survey, survey, p)
}

fn sum_sq(s: &Slews) -> f64 {
    s.slew.iter().map(|x| x * x).sum()
}

fn largest(s: &Slews) -> f64 {
    s.slew.iter().fold(0.0, |a: f64, b| a.max(b.abs()))
}

#[test]
fn optimised_design_moves_the_track_less_and_recovers_the_error() {
    let setup = Setup::new(20.0, Rail::Left);
    // The design's structure comes from the track before the error (a fit
    // of the displaced track may follow the bump with a short compound arc,
    // which the optimiser then uses to absorb it).
    let (clean, survey, p) = surveyed(21);
    let (f, _) = fit(&plan_of(&clean, &setup), &FitOptions::default()).expect("fit");
    let base = SlewOptions {
        fixed: vec![250.0, 450.0],
        max_slew: Some(0.015),
        ..Default::default()
    };
    let (fitted, _) = slews_for_fit(&survey, &setup, &f, &base).expect("fitted");
    let opt = SlewOptions {
        design: DesignChoice::Optimised {
            objective: Objective::SumOfSquares,
            radius_step: None,
        },
        ..base.clone()
    };
    let (o, _) = slews_for_fit(&survey, &setup, &f, &opt).expect("optimised");
    assert!(o.design.is_some());
    assert!(
        sum_sq(&o) <= sum_sq(&fitted) * 1.0001,
        "{} vs {}",
        sum_sq(&o),
        sum_sq(&fitted)
    );
    assert!(largest(&o) <= 0.015);
    // The slews undo the known bump, s ≈ −p, up to the part of it that a
    // change of radius or boundaries can take up (which the least-squares
    // optimum uses): within a quarter of its 12 mm amplitude everywhere.
    let miss = |s: &Slews| {
        s.slew
            .iter()
            .zip(&p)
            .fold(0.0, |a: f64, (s, p)| a.max((s + p).abs()))
    };
    let err = miss(&o);
    eprintln!(
        "fitted Σs² {:.3e}, optimised {:.3e}; largest {:.2} / {:.2} mm; max |s + p| {:.2} mm",
        sum_sq(&fitted),
        sum_sq(&o),
        largest(&fitted) * 1e3,
        largest(&o) * 1e3,
        err * 1e3
    );
    eprintln!("fitted design: max |s + p| {:.2} mm", miss(&fitted) * 1e3);
    assert!(err < 3e-3, "max |s + p| = {:.2} mm", err * 1e3);
    // The largest-slew objective gives a largest slew no bigger.
    let mx = SlewOptions {
        design: DesignChoice::Optimised {
            objective: Objective::Largest,
            radius_step: Some(5.0),
        },
        ..base
    };
    let (l, _) = slews_for_fit(&survey, &setup, &f, &mx).expect("largest");
    let d = l.design.as_ref().expect("design");
    for e in d.elements.iter().filter(|e| e.kind == ElementKind::Arc) {
        let r = e.radius.expect("radius");
        assert!((r / 5.0 - (r / 5.0).round()).abs() < 1e-9, "radius {r}");
    }
    assert!(largest(&l) <= 0.015);
}

#[test]
fn engineers_elements_are_used_as_given() {
    let setup = Setup::new(20.0, Rail::Left);
    let (_, survey, _) = surveyed(22);
    let (f, _) = fit(&plan_of(&survey, &setup), &FitOptions::default()).expect("fit");
    let mut els = elements_of_fit(&f);
    // The fitted design passed back unchanged gives the fitted slews.
    let same = SlewOptions {
        design: DesignChoice::Elements(els.clone()),
        ..Default::default()
    };
    let (a, _) = slews_for_fit(&survey, &setup, &f, &same).expect("same");
    let (b, _) = slews_for_fit(&survey, &setup, &f, &SlewOptions::default()).expect("fitted");
    let d = a
        .slew
        .iter()
        .zip(&b.slew)
        .fold(0.0, |m: f64, (x, y)| m.max((x - y).abs()));
    assert!(
        d < 0.2e-3,
        "rebuilt fitted design differs by {:.3} mm",
        d * 1e3
    );
    // A radius 1 % larger moves the middle of the 300 m arc by about
    // L²/8·Δk = 300²/8 · (1/450 − 1/454.5) ≈ 0.25 m less the closure: the
    // slews change by centimetres, not micrometres.
    for e in els.iter_mut().filter(|e| e.kind == ElementKind::Arc) {
        e.radius = e.radius.map(|r| r * 1.01);
    }
    let bigger = SlewOptions {
        design: DesignChoice::Elements(els),
        versine_tolerance: Some(0.05),
        ..Default::default()
    };
    let (c, _) = slews_for_fit(&survey, &setup, &f, &bigger).expect("bigger");
    let d = c
        .slew
        .iter()
        .zip(&b.slew)
        .fold(0.0, |m: f64, (x, y)| m.max((x - y).abs()));
    assert!(
        d > 0.01,
        "changed radius moved the slews by {:.1} mm",
        d * 1e3
    );
}
