//! Typing slips in a hand survey are found, described, left out of the fit
//! and bridged in the plan; `keep_outliers` keeps them. The survey is
//! simulated (invented geometry), the slips are put in by hand.

mod common;
use common::plan_of;

use chordline::fit::{FitOptions, Slip, fit};
use chordline::geometry::{Alignment, Element, Pose};
use chordline::simulate::{SimSetup, simulate};
use chordline::survey::{Rail, Setup, Survey};

fn survey() -> Survey {
    let k = 1.0 / 450.0;
    let design = Alignment::new(
        Pose::default(),
        0.0,
        vec![
            Element::straight(200.0),
            Element::transition(60.0, 0.0, k),
            Element::arc(300.0, 450.0),
            Element::transition(60.0, k, 0.0),
            Element::straight(200.0),
        ],
    );
    let mut sim = SimSetup::classic(20.0, Rail::Right);
    sim.noise_sd = 0.001;
    sim.resolution = 0.001;
    sim.seed = 4;
    simulate(&design, &sim).expect("simulate").survey
}

/// Index of the reading nearest chainage `c`.
fn at(sv: &Survey, c: f64) -> usize {
    (0..sv.readings.len())
        .min_by(|&a, &b| {
            (sv.readings[a].chainage - c)
                .abs()
                .total_cmp(&(sv.readings[b].chainage - c).abs())
        })
        .unwrap()
}

#[test]
fn slips_are_found_described_and_left_out() {
    let clean = survey();
    let setup = Setup::new(20.0, Rail::Right);
    let (ref_fit, _) = fit(&plan_of(&clean, &setup), &FitOptions::default()).expect("fit");
    assert!(ref_fit.outliers.is_empty(), "{:?}", ref_fit.outliers);
    let mut sv = clean.clone();
    // On the arc (about 111 mm): the sign lost; in the ramp: digits swapped
    // and a decimal point slipped.
    let (i_sign, i_swap, i_dec) = (at(&sv, 400.0), at(&sv, 250.0), at(&sv, 210.0));
    let read = |sv: &Survey, i: usize| (sv.readings[i].versine.unwrap() * 1e3).round();
    let v = read(&sv, i_sign);
    sv.readings[i_sign].versine = Some(-v * 1e-3);
    let v = read(&sv, i_swap);
    assert!((10.0..100.0).contains(&v.abs()), "{v}");
    let d = format!("{}", v.abs() as i64);
    let swapped: f64 = d.chars().rev().collect::<String>().parse().unwrap();
    assert!(swapped != v.abs());
    sv.readings[i_swap].versine = Some(v.signum() * swapped * 1e-3);
    let v = read(&sv, i_dec);
    assert!(v.abs() >= 2.0 && v.abs() < 20.0, "{v}");
    sv.readings[i_dec].versine = Some(v * 10.0 * 1e-3);

    let (res, diags) = fit(&plan_of(&sv, &setup), &FitOptions::default()).expect("fit");
    let found: Vec<(usize, Slip)> = res
        .outliers
        .iter()
        .map(|o| (o.index, o.looks_like))
        .collect();
    assert_eq!(
        found,
        vec![
            (i_dec, Slip::DecimalPoint),
            (i_swap, Slip::TransposedDigits),
            (i_sign, Slip::WrongSign)
        ]
    );
    assert!(
        res.outliers
            .iter()
            .all(|o| o.excluded && o.line == sv.readings[o.index].line)
    );
    assert_eq!(res.stats.n, ref_fit.stats.n - 3);
    // Each is a warning at its file line.
    let lines: Vec<usize> = diags
        .iter()
        .filter(|d| d.message.contains("looks like a blunder"))
        .filter_map(|d| d.location.as_ref().map(|l| l.line))
        .collect();
    assert_eq!(lines.len(), 3);
    // Same elements as on the clean readings, boundaries within 0.5 m.
    assert_eq!(res.elements.len(), ref_fit.elements.len());
    for (a, b) in res.elements.iter().zip(&ref_fit.elements) {
        assert_eq!(a.kind, b.kind);
        assert!((a.start_chainage.value - b.start_chainage.value).abs() < 0.5);
    }

    // Kept when asked: listed, not excluded.
    let keep = FitOptions {
        keep_outliers: true,
        ..FitOptions::default()
    };
    let (kept, _) = fit(&plan_of(&sv, &setup), &keep).expect("fit");
    assert_eq!(kept.stats.n, ref_fit.stats.n);
    assert!(kept.outliers.iter().all(|o| !o.excluded));
}

#[test]
fn the_plan_bridges_the_left_out_readings() {
    let mut sv = survey();
    let i = at(&sv, 400.0);
    let v = sv.readings[i].versine.unwrap();
    sv.readings[i].versine = Some(-v);
    let opts = chordline::pipeline::Options::new(20.0, Rail::Right);
    let clean = chordline::pipeline::process(survey(), &opts).expect("process");
    let mut keep = opts.clone();
    keep.fit = Some(FitOptions {
        keep_outliers: true,
        ..FitOptions::default()
    });
    let kept = chordline::pipeline::process(sv.clone(), &keep).expect("process");
    let r = chordline::pipeline::process(sv, &opts).expect("process");
    let f = r.fit.as_ref().expect("fit");
    assert_eq!(f.outliers.len(), 1);
    // The bridged plan ends where the clean one does (within its sd), unlike
    // the plan that keeps the blunder.
    let end = |p: &chordline::integrate::Plan| p.stations.last().cloned().unwrap();
    let (a, b, k) = (end(&clean.plan), end(&r.plan), end(&kept.plan));
    let dist =
        |p: &chordline::integrate::Station| ((a.x - p.x).powi(2) + (a.y - p.y).powi(2)).sqrt();
    assert!(
        dist(&b) < b.position_sd,
        "{} vs sd {}",
        dist(&b),
        b.position_sd
    );
    assert!(dist(&k) > 5.0 * dist(&b), "{} vs {}", dist(&k), dist(&b));
    // A single bridged reading on a smooth arc costs little certainty: the
    // bridged plan is about as certain as the clean one.
    assert!((b.position_sd / a.position_sd - 1.0).abs() < 0.05);
    // The station keeps the value read.
    assert_eq!(r.plan.stations[i].versine, Some(-v));
}
