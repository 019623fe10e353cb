//! Slews: published check values, round trips through `simulate`, errors and
//! the stations.csv columns.

mod common;
use common::plan_of;

use chordline::diag::Severity;
use chordline::export::stations::{StationExtras, write_stations_with};
use chordline::fit::{FitOptions, fit};
use chordline::geometry::{Alignment, Element, Pose};
use chordline::integrate::{IntegrateOptions, integrate};
use chordline::realign::{
    SlewError, SlewOptions, Slews, slews, slews_for_fit, summary_line, versine_change,
};
use chordline::simulate::{SimSetup, Simulated, simulate};
use chordline::survey::{Rail, Reading, Setup, Survey};
use chordline::units::{LengthUnit, VersineUnit};

fn survey_from(versines_mm: &[f64], spacing: f64, rail: Rail) -> Survey {
    let readings = versines_mm
        .iter()
        .enumerate()
        .map(|(i, v)| Reading {
            chainage: 100.0 + spacing * i as f64,
            versine: Some(v * 1e-3),
            rail,
            note: None,
            line: i + 2,
        })
        .collect();
    Survey {
        source: "test.csv".into(),
        chainage_unit: LengthUnit::Metre,
        versine_unit: VersineUnit::Millimetre,
        readings,
        has_side_column: false,
    }
}

const V_EX: [f64; 9] = [0.0, 2.0, 11.0, 19.0, 32.0, 18.0, 12.0, 1.0, 0.0];
const V_PROP: [f64; 9] = [0.0, 2.0, 10.0, 20.0, 31.0, 21.0, 10.0, 1.0, 0.0];
// METHODS.md C5.1: slews positive towards the curve centre.
const S_C51: [f64; 9] = [0.0, 0.0, 0.0, -2.0, -2.0, -4.0, 0.0, 0.0, 0.0];

#[test]
fn methods_c5_1_hallade_example_on_either_rail() {
    // A curve read on its outer rail: left-hand curve on the right rail,
    // right-hand curve on the left rail. Both must give the same slews
    // towards the centre (METHODS.md C5.1) and opposite left/right slews.
    for rail in [Rail::Right, Rail::Left] {
        let survey = survey_from(&V_EX, 10.0, rail);
        let design: Vec<f64> = V_PROP.iter().map(|v| v * 1e-3).collect();
        let (s, diags) = slews(
            &survey,
            &Setup::new(20.0, rail),
            &design,
            0.5e-3,
            &SlewOptions::default(),
        )
        .expect("slews");
        for i in 0..9 {
            // METHODS.md C5.1: s_0…s_8 = [0,0,0,−2,−2,−4,0,0,0] mm
            let t = s.towards_centre(i).unwrap_or(0.0) * 1e3;
            assert!((t - S_C51[i]).abs() < 1e-9, "{rail:?} s_{i} = {t}");
            let left = if rail == Rail::Right { 1.0 } else { -1.0 };
            assert!((s.slew[i] * 1e3 - left * S_C51[i]).abs() < 1e-9);
            // METHODS.md C5.1: re-applying the slews reproduces v_prop.
            let r = s.realised_versine[i].expect("reading") * 1e3;
            assert!((r - V_PROP[i]).abs() < 1e-9, "{rail:?} v_{i} = {r}");
        }
        // Σe = 0 and Σie = 0 already: the design needs no change.
        assert!(s.max_design_change() < 1e-12);
        assert!(s.held[0] && s.held[1] && s.held[7] && s.held[8] && !s.held[4]);
        assert!(
            diags
                .iter()
                .any(|d| d.message.contains("largest slew 4.0 mm"))
        );
    }
}

#[test]
fn checks_1_10_single_slew_changes_versines() {
    // CHECKS.md 1.10: a +10 mm slew outwards changes the versine by +10 mm at
    // the station and −5 mm at each neighbour. Left-hand curve on the right
    // rail: outwards is to the right, −10 mm in the left-positive convention.
    let mut s = vec![0.0; 7];
    s[3] = -0.010;
    let dv = versine_change(&s, 1, Rail::Right);
    let want = [0.0, 0.0, -5.0, 10.0, -5.0, 0.0, 0.0];
    for i in 0..7 {
        assert!((dv[i] * 1e3 - want[i]).abs() < 1e-12, "{i}: {}", dv[i]);
    }
    // Same on the left rail of a right-hand curve (outwards = left = +10 mm).
    s[3] = 0.010;
    let dv = versine_change(&s, 1, Rail::Left);
    assert!((dv[3] * 1e3 - 10.0).abs() < 1e-12 && (dv[4] * 1e3 + 5.0).abs() < 1e-12);
    // Readings every quarter chord: the neighbours are two readings away.
    let dv = versine_change(&s, 2, Rail::Left);
    assert!(dv[2].abs() < 1e-15 && dv[4].abs() < 1e-15);
    assert!((dv[1] * 1e3 + 5.0).abs() < 1e-12 && (dv[5] * 1e3 + 5.0).abs() < 1e-12);
}

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

fn sim(spacing: f64, noise: f64, irregularity: f64, seed: u64) -> Simulated {
    let mut s = SimSetup::classic(20.0, Rail::Left);
    s.spacing = spacing;
    s.noise_sd = noise;
    s.irregularity_rms = irregularity;
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

/// Displace the simulated track by `p` (positive left): add its versine change.
fn displaced(simd: &Simulated, p: &[f64], m: usize) -> Survey {
    let mut survey = simd.survey.clone();
    let dv = versine_change(p, m, Rail::Left);
    for (r, d) in survey.readings.iter_mut().zip(dv) {
        if let Some(v) = r.versine.as_mut() {
            *v += d;
        }
    }
    survey
}

fn truth_design(simd: &Simulated) -> Vec<f64> {
    simd.truth
        .iter()
        .map(|t| t.versine.unwrap_or(0.0))
        .collect()
}

fn check_consistent(survey: &Survey, design: &[f64], s: &Slews) {
    // (a) applying the slews to the measured versines gives the adjusted design.
    let dv = versine_change(&s.chord_slew, s.step, Rail::Left);
    for (i, r) in survey.readings.iter().enumerate() {
        match (r.versine, s.realised_versine[i]) {
            (Some(v), Some(rv)) => {
                assert!((v + dv[i] - rv).abs() < 1e-12);
                assert!((rv - design[i] - s.design_change[i]).abs() < 1e-12);
            }
            (None, None) => {}
            _ => panic!("realised versine missing or invented at {i}"),
        }
    }
    // (b) held readings do not move.
    for i in 0..s.slew.len() {
        if s.held[i] {
            assert_eq!(s.slew[i], 0.0, "held reading {i} moved");
            assert_eq!(s.chord_slew[i], 0.0, "held reading {i} moved");
            assert_eq!(s.sd[i], 0.0);
        }
    }
}

#[test]
fn known_displacement_is_recovered_exactly_without_noise() {
    for spacing in [10.0, 2.5] {
        let m = (10.0 / spacing) as usize;
        let simd = sim(spacing, 0.0, 0.0, 1);
        let p: Vec<f64> = simd
            .truth
            .iter()
            .map(|t| bump(t.chainage, 250.0, 420.0, 0.030))
            .collect();
        let survey = displaced(&simd, &p, m);
        let design = truth_design(&simd);
        let setup = Setup::new(20.0, Rail::Left);
        let (s, _) =
            slews(&survey, &setup, &design, 0.5e-3, &SlewOptions::default()).expect("slews");
        check_consistent(&survey, &design, &s);
        let err = |v: &[f64]| {
            v.iter()
                .zip(&p)
                .fold(0.0_f64, |e, (a, b)| e.max((a + b).abs()))
        };
        // The chord-relation slews bring the track back exactly: s = −p.
        let e = err(&s.chord_slew);
        assert!(e < 1e-9, "spacing {spacing}: max |s + p| = {e:e}");
        // Averaged over a half chord: within the averaging bias of this
        // 170 m bump (s''·a²/24 ≈ 0.1 mm at most).
        let e = err(&s.slew);
        assert!(e < 0.15e-3, "spacing {spacing}: max |s̄ + p| = {e:e}");
        assert!(s.max_design_change() < 1e-9);
    }
}

#[test]
fn known_displacement_recovered_within_reported_sd_with_noise() {
    // Reading noise 0.5 mm, every half chord, quarter chord, eighth chord.
    let mut sd_max = Vec::new();
    for spacing in [10.0, 5.0, 2.5] {
        let m = (10.0 / spacing) as usize;
        let (mut z2, mut count) = (0.0, 0usize);
        for seed in 1..=12 {
            let simd = sim(spacing, 0.5e-3, 0.0, seed);
            let p: Vec<f64> = simd
                .truth
                .iter()
                .map(|t| bump(t.chainage, 250.0, 420.0, 0.030))
                .collect();
            let survey = displaced(&simd, &p, m);
            let design = truth_design(&simd);
            let setup = Setup::new(20.0, Rail::Left);
            let (s, _) =
                slews(&survey, &setup, &design, 0.5e-3, &SlewOptions::default()).expect("slews");
            check_consistent(&survey, &design, &s);
            if seed == 1 {
                sd_max.push(s.sd.iter().fold(0.0, |a: f64, b| a.max(*b)));
            }
            for (i, pi) in p.iter().enumerate() {
                if !s.held[i] {
                    let z = (s.slew[i] + pi) / s.sd[i];
                    assert!(z.abs() < 5.0, "seed {seed} reading {i}: z = {z}");
                    z2 += z * z;
                    count += 1;
                }
            }
        }
        // The reported sd must describe the actual scatter (chi-square per
        // reading near 1; readings within a chain are correlated, so loose).
        let rms_z = (z2 / count as f64).sqrt();
        assert!(
            (0.6..1.5).contains(&rms_z),
            "spacing {spacing}: rms of (s + p)/sd = {rms_z}"
        );
    }
    // Averaging the interleaved chains cuts the sd by about √m.
    assert!(
        sd_max[1] < 0.8 * sd_max[0] && sd_max[2] < 0.6 * sd_max[0],
        "{sd_max:?}"
    );
}

#[test]
fn fixed_point_holds_and_design_changes_minimally() {
    let simd = sim(5.0, 0.0, 0.0, 1);
    let p: Vec<f64> = simd
        .truth
        .iter()
        .map(|t| bump(t.chainage, 250.0, 420.0, 0.030))
        .collect();
    let survey = displaced(&simd, &p, 2);
    let design = truth_design(&simd);
    let setup = Setup::new(20.0, Rail::Left);
    let opts = SlewOptions {
        fixed: vec![335.0],
        ..Default::default()
    };
    let (s, diags) = slews(&survey, &setup, &design, 0.5e-3, &opts).expect("slews");
    check_consistent(&survey, &design, &s);
    // One reading per chain held at the fixed point (335 m: indices 66, 67).
    let held: Vec<f64> = (0..s.held.len())
        .filter(|&i| s.held[i] && s.chainage[i] > 50.0 && s.chainage[i] < 700.0)
        .map(|i| s.chainage[i])
        .collect();
    assert_eq!(held, vec![330.0, 335.0]);
    // Holding the middle of a 30 mm displacement forces a design change.
    assert!(s.max_design_change() > 2e-5, "{}", s.max_design_change());
    assert!(
        diags
            .iter()
            .all(|d| d.severity != Severity::Warning || !d.message.contains("limit"))
    );
    let line = summary_line(&s, LengthUnit::Metre);
    assert!(line.contains("indicative"), "{line}");
}

#[test]
fn fitted_design_round_trip_with_irregular_track() {
    // 3 mm RMS lateral irregularity, 0.3 mm reading noise; the fitted design
    // is the target. Consistency must hold exactly whatever the data.
    let simd = sim(5.0, 0.3e-3, 3e-3, 7);
    let setup = Setup::new(20.0, Rail::Left);
    let (f, _) = fit(&plan_of(&simd.survey, &setup), &FitOptions::default()).expect("fit");
    let (s, _) = slews_for_fit(&simd.survey, &setup, &f, &SlewOptions::default()).expect("slews");
    assert_eq!(s.reading_sd, f.stats.reading_sd);
    check_consistent(&simd.survey, &f.design_versine, &s);
    // The fitted design has the surveyed total turn, so the closure needs
    // only a small change of the design versines.
    let dmax = s.max_design_change();
    assert!(dmax < 1.0e-3, "max design change {dmax:e}");
    // Slews undo the irregularity up to a smooth part fixed by the held
    // ends: their RMS is of the order of the irregularity, not metres.
    // The slews lie within their reported uncertainty of zero-mean scatter:
    // no slew exceeds 4 sd (the design itself is uncertain by many mm here,
    // which the sd from the fit's reading sd carries).
    let worst = (0..s.slew.len())
        .filter(|&i| !s.held[i])
        .map(|i| s.slew[i].abs() / s.sd[i])
        .fold(0.0, f64::max);
    assert!(worst < 4.0, "max |slew|/sd = {worst}");
    assert!(f.stats.reading_sd > 0.3e-3);
}

#[test]
fn stations_csv_gets_slew_columns() {
    let simd = sim(5.0, 0.0, 0.0, 1);
    let setup = Setup::new(20.0, Rail::Left);
    let (plan, _) =
        integrate(&simd.survey, &setup, &IntegrateOptions::default()).expect("integrate");
    let p: Vec<f64> = simd
        .truth
        .iter()
        .map(|t| bump(t.chainage, 250.0, 420.0, 0.030))
        .collect();
    let survey = displaced(&simd, &p, 2);
    let (s, _) = slews(
        &survey,
        &setup,
        &truth_design(&simd),
        0.5e-3,
        &SlewOptions::default(),
    )
    .expect("slews");
    let cols = s.at_stations();
    let extras = StationExtras {
        slews: Some(&cols),
        ..Default::default()
    };
    let mut buf = Vec::new();
    write_stations_with(&mut buf, &plan, LengthUnit::Metre, &extras).expect("write");
    let out = String::from_utf8(buf).expect("utf8");
    let mut rd = csv::Reader::from_reader(out.as_bytes());
    let h = rd.headers().expect("header").clone();
    assert_eq!(&h[h.len() - 2], "slew_mm");
    assert_eq!(&h[h.len() - 1], "slew_sd_mm");
    let rows: Vec<_> = rd.records().map(|r| r.expect("row")).collect();
    assert_eq!(rows.len(), s.slew.len());
    let mid = rows
        .iter()
        .find(|r| &r[0] == "335.000")
        .expect("row at 335 m");
    // −p at the bump's crest: −30 mm (slews move the track back), less the
    // half-chord averaging: −(30 + 2·½·29.745)/2 = −29.87 mm.
    assert_eq!(&mid[h.len() - 2], "-29.87");
}

#[test]
fn bad_inputs_are_refused_with_context() {
    let setup = Setup::new(20.0, Rail::Right);
    let mut v = vec![0.0; 12];
    v[5] = 3.0;
    let survey = survey_from(&v, 10.0, Rail::Right);
    let d = vec![0.0; 12];
    let o = SlewOptions::default();
    assert!(matches!(
        slews(&survey, &setup, &d[..11], 1e-3, &o),
        Err(SlewError::LengthMismatch { .. })
    ));
    assert!(matches!(
        slews(&survey, &setup, &d, 0.0, &o),
        Err(SlewError::ReadingSd(_))
    ));
    let o2 = SlewOptions {
        fixed: vec![5000.0],
        ..Default::default()
    };
    let e = slews(&survey, &setup, &d, 1e-3, &o2).expect_err("outside");
    assert!(e.to_string().contains("5000.000"), "{e}");
    let mut uneven = survey.clone();
    uneven.readings[6].chainage += 1.0;
    let e = slews(&uneven, &setup, &d, 1e-3, &o).expect_err("uneven");
    assert!(matches!(e, SlewError::Uneven { line: 8, .. }), "{e}");
    let e = slews(&survey, &Setup::new(15.0, Rail::Right), &d, 1e-3, &o).expect_err("spacing");
    assert!(matches!(e, SlewError::Spacing { .. }), "{e}");
    // A gap of three readings in the middle leaves a slew undetermined.
    let mut gappy = survey.clone();
    for r in &mut gappy.readings[4..7] {
        r.versine = None;
    }
    let e = slews(&gappy, &setup, &d, 1e-3, &o).expect_err("gap");
    assert!(matches!(e, SlewError::Undetermined { .. }), "{e}");
    // A one-reading gap is fine: the station keeps a slew, its equation is skipped.
    let mut one = survey.clone();
    one.readings[5].versine = None;
    let (s, _) = slews(&one, &setup, &d, 1e-3, &o).expect("one gap");
    assert!(s.realised_versine[5].is_none() && s.slew[5].is_finite());
    assert!(matches!(
        slews(
            &survey_from(&[1.0; 4], 10.0, Rail::Right),
            &setup,
            &[0.0; 4],
            1e-3,
            &o
        ),
        Err(SlewError::TooShort { .. })
    ));
}

#[test]
fn imperial_summary_and_columns_use_inches_and_feet() {
    let survey = survey_from(&V_EX, 10.0, Rail::Right);
    let design: Vec<f64> = V_PROP.iter().map(|v| v * 1e-3).collect();
    let opts = SlewOptions {
        max_slew: Some(0.004),
        ..Default::default()
    };
    let (s, _) = slews(
        &survey,
        &Setup::new(20.0, Rail::Right),
        &design,
        0.5e-3,
        &opts,
    )
    .expect("slews");
    let line = summary_line(&s, LengthUnit::Foot);
    // 4 mm = 0.157 in at 150 m = 492.1 ft; one reading beyond 3 mm = 0.118 in.
    assert!(line.contains("largest 0.157 in"), "{line}");
    assert!(line.contains("492.1 ft"), "{line}");
    assert!(line.contains("none beyond the 0.157 in limit"), "{line}");
    // stations.csv writes slews in the versine unit: 4 mm = 0.157 in.
    let cols = s.at_stations();
    assert!((cols[5].slew / 0.0254 + 0.157).abs() < 5e-4 && cols[5].sd > 0.0);
}

#[test]
fn random_surveys_never_panic() {
    // Small deterministic generator: odd spacings, gaps, fixed points anywhere.
    let mut state = 0x2545_f491_4f6c_dd1d_u64;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut solved = 0;
    for _ in 0..300 {
        let n = 1 + (next() * 60.0) as usize;
        let spacing = [2.5, 5.0, 10.0, 3.0][(next() * 4.0) as usize % 4];
        let mut v: Vec<f64> = (0..n).map(|_| (next() - 0.5) * 40.0).collect();
        if next() < 0.3 {
            v.reverse();
        }
        let mut survey = survey_from(&v, spacing, Rail::Left);
        for r in &mut survey.readings {
            if next() < 0.15 {
                r.versine = None;
            }
            if next() < 0.02 {
                r.chainage += next();
            }
        }
        let design: Vec<f64> = (0..n).map(|_| (next() - 0.5) * 0.04).collect();
        let opts = SlewOptions {
            fixed: (0..(next() * 3.0) as usize)
                .map(|_| 100.0 + next() * spacing * n as f64 * 1.2 - 5.0)
                .collect(),
            max_slew: (next() < 0.3).then_some(0.01),
            versine_tolerance: Some(1.0),
            ..Default::default()
        };
        if let Ok((s, _)) = slews(&survey, &Setup::new(20.0, Rail::Left), &design, 1e-3, &opts) {
            assert!(s.slew.iter().chain(&s.sd).all(|x| x.is_finite()));
            assert!(!summary_line(&s, LengthUnit::Metre).is_empty());
            solved += 1;
        }
    }
    // Not everything is refused: the generator also makes usable surveys.
    assert!(solved > 30, "{solved} solved");
}
