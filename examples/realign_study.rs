//! Slews: accuracy and speed study (not a test).
//!
//! `cargo run --example realign_study` prints
//! 1. recovery of a known 30 mm displacement under 0.5 mm reading noise
//!    (Monte Carlo: RMS of (slew + displacement)/sd, largest sd);
//! 2. slews against a fitted design on a track with 3 mm RMS irregularity;
//! 3. the time for a 10 km survey read every 0.25 m;
//! 4. the time of the constrained solve (the Clarabel QP, used whenever a
//!    limit is given) on 2 km and 10 km read every metre, fixed points every
//!    200 m.

use chordline::fit::{FitOptions, fit};
use chordline::geometry::{Alignment, Element, Pose};
use chordline::integrate::{IntegrateOptions, integrate};
use chordline::realign::{SlewOptions, slews, summary_line, versine_change};
use chordline::simulate::{SimSetup, simulate, synthetic_route};
use chordline::survey::Survey;
use chordline::survey::{Rail, Setup};
use chordline::units::LengthUnit;
use std::time::Instant;

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

fn bump(ch: f64) -> f64 {
    if ch <= 250.0 || ch >= 420.0 {
        0.0
    } else {
        0.030 * (std::f64::consts::PI * (ch - 250.0) / 170.0).sin().powi(2)
    }
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let setup = Setup::new(20.0, Rail::Left);
    println!("1. known 30 mm displacement, reading noise 0.5 mm, 820 m, ends held, 200 seeds");
    for spacing in [10.0, 5.0, 1.0] {
        let m = (10.0 / spacing) as usize;
        let (mut z2, mut n, mut e2, mut sdmax) = (0.0, 0usize, 0.0, 0.0_f64);
        for seed in 1..=200 {
            let mut s = SimSetup::classic(20.0, Rail::Left);
            s.spacing = spacing;
            s.noise_sd = 0.5e-3;
            s.seed = seed;
            let simd = simulate(&design(), &s)?;
            let p: Vec<f64> = simd.truth.iter().map(|t| bump(t.chainage)).collect();
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
            let dv: Vec<f64> = simd
                .truth
                .iter()
                .map(|t| t.versine.unwrap_or(0.0))
                .collect();
            let (sl, _) = slews(&survey, &setup, &dv, 0.5e-3, &SlewOptions::default())?;
            for (i, pi) in p.iter().enumerate() {
                if !sl.held[i] {
                    let e = sl.slew[i] + pi;
                    z2 += (e / sl.sd[i]).powi(2);
                    e2 += e * e;
                    n += 1;
                    sdmax = sdmax.max(sl.sd[i]);
                }
            }
        }
        println!(
            "   spacing {spacing:4} m: RMS error {:.2} mm, RMS error/sd {:.3}, largest sd {:.1} mm",
            (e2 / n as f64).sqrt() * 1e3,
            (z2 / n as f64).sqrt(),
            sdmax * 1e3
        );
    }

    println!("2. fitted design, 3 mm RMS irregularity, 0.3 mm noise, spacing 5 m");
    for seed in [7, 8, 9] {
        let mut s = SimSetup::classic(20.0, Rail::Left);
        s.spacing = 5.0;
        s.noise_sd = 0.3e-3;
        s.irregularity_rms = 3e-3;
        s.seed = seed;
        let simd = simulate(&design(), &s)?;
        let (f, _) = fit(
            &integrate(&simd.survey, &setup, &IntegrateOptions::default())?.0,
            &FitOptions::default(),
        )?;
        let (sl, _) = slews(
            &simd.survey,
            &setup,
            &f.design_versine,
            f.stats.reading_sd,
            &SlewOptions::default(),
        )?;
        let tv: Vec<f64> = simd
            .truth
            .iter()
            .map(|t| t.versine.unwrap_or(0.0))
            .collect();
        let (st, _) = slews(&simd.survey, &setup, &tv, 0.3e-3, &SlewOptions::default())?;
        let irr_vs_truth = (0..st.slew.len())
            .map(|i| (st.slew[i] + simd.truth[i].irregularity).abs())
            .fold(0.0, f64::max);
        println!(
            "   seed {seed}: fit reading sd {:.2} mm; {}; design change {:.3} mm",
            f.stats.reading_sd * 1e3,
            summary_line(&sl, LengthUnit::Metre),
            sl.max_design_change() * 1e3
        );
        println!(
            "            against the true design: {}; max |slew + irregularity| {:.1} mm",
            summary_line(&st, LengthUnit::Metre),
            irr_vs_truth * 1e3
        );
    }

    println!("3. speed: 10 km route read every 0.25 m on a 20 m chord");
    let els = synthetic_route(10_000.0, 3);
    let al = Alignment::new(Pose::default(), 0.0, els);
    let mut s = SimSetup::classic(20.0, Rail::Left);
    s.spacing = 0.25;
    s.noise_sd = 0.3e-3;
    let simd = simulate(&al, &s)?;
    let tv: Vec<f64> = simd
        .truth
        .iter()
        .map(|t| t.versine.unwrap_or(0.0))
        .collect();
    let t0 = Instant::now();
    let (sl, _) = slews(&simd.survey, &setup, &tv, 0.3e-3, &SlewOptions::default())?;
    println!(
        "   {} readings: {:.3} s; {}",
        sl.slew.len(),
        t0.elapsed().as_secs_f64(),
        summary_line(&sl, LengthUnit::Metre)
    );
    println!(
        "4. constrained solve (QP): a 40 mm lateral wave, --max-slew 25 mm, fixed every 200 m, readings every 1 m"
    );
    for km in [2.0, 10.0] {
        let els = synthetic_route(km * 1000.0, 3);
        let al = Alignment::new(Pose::default(), 0.0, els);
        let mut s = SimSetup::classic(20.0, Rail::Left);
        s.spacing = 1.0;
        s.noise_sd = 0.3e-3;
        let simd = simulate(&al, &s)?;
        let tv: Vec<f64> = simd
            .truth
            .iter()
            .map(|t| t.versine.unwrap_or(0.0))
            .collect();
        let wave: Vec<f64> = simd
            .truth
            .iter()
            .map(|t| 0.040 * (t.chainage / 150.0).sin())
            .collect();
        let survey = Survey {
            readings: simd
                .survey
                .readings
                .iter()
                .zip(versine_change(&wave, 10, Rail::Left))
                .map(|(r, d)| {
                    let mut r = r.clone();
                    r.versine = r.versine.map(|v| v + d);
                    r
                })
                .collect(),
            ..simd.survey.clone()
        };
        let opts = SlewOptions {
            fixed: (1..(km as usize * 5)).map(|k| 200.0 * k as f64).collect(),
            max_slew: Some(0.025),
            versine_tolerance: Some(1e-3),
            ..Default::default()
        };
        let t0 = Instant::now();
        let res = slews(&survey, &setup, &tv, 0.3e-3, &opts);
        let dt = t0.elapsed().as_secs_f64();
        match res {
            Ok((sl, _)) => println!(
                "   {km} km, {} readings: {dt:.2} s; {}",
                sl.slew.len(),
                summary_line(&sl, LengthUnit::Metre)
            ),
            Err(e) => println!("   {km} km: {dt:.2} s; {e}"),
        }
    }
    Ok(())
}
