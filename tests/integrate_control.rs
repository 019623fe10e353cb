//! Position observations (control points) in the joint adjustment, gaps,
//! changes of measured rail, and the classic drift check values.

use chordline::geometry::{Alignment, Element, Pose};
use chordline::integrate::{
    IntegrateError, IntegrateOptions, NoiseSource, Plan, PositionObs, drift_heading_sd,
    drift_lateral_sd, integrate,
};
use chordline::simulate::{SimSetup, Truth, simulate};
use chordline::survey::{Rail, Reading, Setup, Survey};
use chordline::units::{LengthUnit, VersineUnit};
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};

fn start() -> Pose {
    Pose {
        x: 500.0,
        y: -300.0,
        heading: 1.1,
    }
}

fn route() -> Alignment {
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

fn survey_of(design: &Alignment, sim: &SimSetup) -> (Survey, Vec<Truth>) {
    simulate(design, sim).expect("simulate").read_marks()
}

fn lateral(t: &Truth, x: f64, y: f64) -> f64 {
    let (sn, cs) = t.centre.heading.sin_cos();
    -(x - t.centre.x) * sn + (y - t.centre.y) * cs
}

fn controls(truth: &[Truth], idx: &[usize], sd: f64, seed: u64) -> Vec<PositionObs> {
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let nrm = Normal::new(0.0, sd).unwrap();
    idx.iter()
        .map(|&i| PositionObs {
            id: format!("CP{i}"),
            chainage: truth[i].chainage,
            x: truth[i].centre.x + nrm.sample(&mut rng),
            y: truth[i].centre.y + nrm.sample(&mut rng),
            sd,
        })
        .collect()
}

#[test]
fn three_control_points_hold_down_the_drift_and_the_sd_agrees() {
    // 2.2 km, 20 m chord every 10 m, 1 mm reading noise; control at start, middle
    // and end with 2 mm sd. The start pose given is wrong by 30 m and 0.2 rad:
    // with two or more control points it is estimated.
    let design = route();
    let (mut z_ctrl, mut worst_ctrl, mut worst_free) = (Vec::new(), 0.0_f64, 0.0_f64);
    for seed in 0..24u64 {
        let mut sim = SimSetup::classic(20.0, Rail::Left);
        sim.noise_sd = 1e-3;
        sim.seed = 500 + seed;
        let (survey, truth) = survey_of(&design, &sim);
        let n = truth.len();
        let mut setup = Setup::new(20.0, Rail::Left);
        setup.reading_sd = Some(1e-3);
        let free_opts = IntegrateOptions {
            start: truth[0].centre,
            position_obs: vec![],
        };
        let (free, _) = integrate(&survey, &setup, &free_opts).unwrap();
        let obs = controls(&truth, &[0, n / 2, n - 1], 2e-3, seed);
        let opts = IntegrateOptions {
            start: Pose {
                x: truth[0].centre.x + 30.0,
                y: truth[0].centre.y - 20.0,
                heading: truth[0].centre.heading + 0.2,
            },
            position_obs: obs,
        };
        let (plan, diags) = integrate(&survey, &setup, &opts).unwrap();
        assert_eq!(plan.position_residuals.len(), 3);
        for r in &plan.position_residuals {
            assert!(r.normalised < 4.0, "{r:?}");
        }
        let _ = diags;
        for i in [n / 4, 3 * n / 4] {
            let s = &plan.stations[i];
            let e = lateral(&truth[i], s.x, s.y);
            z_ctrl.push(e / s.position_sd);
            worst_ctrl = worst_ctrl.max(e.abs());
            let f = &free.stations[i];
            worst_free = worst_free.max(lateral(&truth[i], f.x, f.y).abs());
            // Between controls the reported sd is far below the free drift's.
            assert!(
                s.position_sd < 0.3 * f.position_sd,
                "{} vs {}",
                s.position_sd,
                f.position_sd
            );
        }
    }
    let r = (z_ctrl.iter().map(|z| z * z).sum::<f64>() / z_ctrl.len() as f64).sqrt();
    assert!((0.65..1.35).contains(&r), "normalised RMS with control {r}");
    assert!(
        worst_ctrl < 0.3 * worst_free,
        "{worst_ctrl} vs {worst_free}"
    );
}

#[test]
fn one_control_point_fixes_the_position_and_keeps_the_heading() {
    let design = route();
    let sim = SimSetup::classic(20.0, Rail::Left);
    let (survey, truth) = survey_of(&design, &sim);
    let n = truth.len();
    let obs = vec![PositionObs {
        id: "A".into(),
        chainage: truth[n / 3].chainage,
        x: truth[n / 3].centre.x,
        y: truth[n / 3].centre.y,
        sd: 1e-3,
    }];
    // Start position wrong by 100 m, heading right.
    let start = Pose {
        x: truth[0].centre.x + 100.0,
        ..truth[0].centre
    };
    let (plan, _) = integrate(
        &survey,
        &Setup::new(20.0, Rail::Left),
        &IntegrateOptions {
            start,
            position_obs: obs,
        },
    )
    .unwrap();
    for (t, s) in truth.iter().zip(&plan.stations) {
        assert!((s.x - t.centre.x).hypot(s.y - t.centre.y) < 1e-3);
    }
    // A single point cannot disagree with anything.
    assert!(plan.position_residuals[0].normalised < 1e-3);
}

#[test]
fn a_wrong_control_point_is_flagged() {
    let design = route();
    let mut sim = SimSetup::classic(20.0, Rail::Left);
    sim.noise_sd = 0.5e-3;
    let (survey, truth) = survey_of(&design, &sim);
    let n = truth.len();
    let mut obs = controls(&truth, &[0, n / 4, n / 2, 3 * n / 4, n - 1], 2e-3, 9);
    obs[2].x += 0.5; // half a metre off
    let mut setup = Setup::new(20.0, Rail::Left);
    setup.reading_sd = Some(0.5e-3);
    let (plan, diags) = integrate(
        &survey,
        &setup,
        &IntegrateOptions {
            start: truth[0].centre,
            position_obs: obs,
        },
    )
    .unwrap();
    let worst = plan
        .position_residuals
        .iter()
        .max_by(|a, b| a.normalised.total_cmp(&b.normalised))
        .unwrap();
    assert_eq!(worst.id, format!("CP{}", n / 2));
    assert!(worst.normalised > 3.0);
    assert!(diags.iter().any(|d| d.message.contains(&worst.id)));
}

#[test]
fn control_outside_the_survey_is_an_error() {
    let design = route();
    let (survey, truth) = survey_of(&design, &SimSetup::classic(20.0, Rail::Left));
    let obs = vec![PositionObs {
        id: "X".into(),
        chainage: -50.0,
        x: 0.0,
        y: 0.0,
        sd: 1e-3,
    }];
    let e = integrate(
        &survey,
        &Setup::new(20.0, Rail::Left),
        &IntegrateOptions {
            start: truth[0].centre,
            position_obs: obs,
        },
    );
    assert!(matches!(e, Err(IntegrateError::BadControl { .. })));
}

#[test]
fn gaps_are_bridged_not_zeroed_and_the_sd_grows() {
    let design = route();
    for spacing in [10.0, 1.0] {
        let mut sim = SimSetup::classic(20.0, Rail::Right);
        sim.spacing = spacing;
        let (mut survey, truth) = survey_of(&design, &sim);
        let opts = IntegrateOptions {
            start: truth[0].centre,
            position_obs: vec![],
        };
        let mut setup = Setup::new(20.0, Rail::Right);
        setup.reading_sd = Some(1e-3);
        let (full, _) = integrate(&survey, &setup, &opts).unwrap();
        // Knock out 30 m of readings in the middle of the first arc.
        let c0 = 520.0;
        for r in survey.readings.iter_mut() {
            if r.chainage > c0 && r.chainage < c0 + 30.0 {
                r.versine = None;
            }
        }
        let (gapped, diags) = integrate(&survey, &setup, &opts).unwrap();
        assert!(diags.iter().any(|d| d.message.contains("missing")));
        let n = truth.len();
        let t = &truth[n - 1];
        let s = &gapped.stations[n - 1];
        let err = (s.x - t.centre.x).hypot(s.y - t.centre.y);
        // Taking the gap as zero versine would lose ~0.04 rad of turn (tens of metres).
        assert!(err < 0.05, "d={spacing}: end error {err}");
        assert!(
            s.position_sd > full.stations[n - 1].position_sd,
            "d={spacing}"
        );
        let gi = gapped
            .stations
            .iter()
            .position(|s| s.chainage > c0 + 10.0)
            .unwrap();
        assert!(gapped.stations[gi].versine.is_none());
        assert!(
            (gapped.stations[gi].curvature - 1.0 / 800.0).abs() < 2e-5,
            "{}",
            gapped.stations[gi].curvature
        );
    }
}

#[test]
fn change_of_measured_rail_at_the_half_chord() {
    // Left rail for the first 100 m (a straight, where both rails have the same
    // chainage), then the right rail through the curve.
    let design = route();
    let (left, truth) = survey_of(&design, &SimSetup::classic(20.0, Rail::Left));
    let (right, truth_r) = survey_of(&design, &SimSetup::classic(20.0, Rail::Right));
    // The rails differ in length beyond the curves; keep the common stations.
    let m = left.readings.len().min(right.readings.len());
    let mut survey = left.clone();
    survey.readings.truncate(m);
    for (i, r) in survey.readings.iter_mut().enumerate() {
        if r.chainage >= 100.0 {
            *r = right.readings[i].clone();
        }
    }
    survey.has_side_column = true;
    let setup = Setup::new(20.0, Rail::Left);
    let (plan, diags) = integrate(
        &survey,
        &setup,
        &IntegrateOptions {
            start: truth[0].centre,
            position_obs: vec![],
        },
    )
    .unwrap();
    assert!(
        diags
            .iter()
            .any(|d| d.message.contains("changes to the right rail"))
    );
    for (i, s) in plan.stations.iter().enumerate() {
        let t = if s.chainage >= 100.0 {
            &truth_r[i]
        } else {
            &truth[i]
        };
        let e = (s.x - t.centre.x).hypot(s.y - t.centre.y);
        assert!(e < 1e-3, "station {i}: {e}");
        assert!((s.rail_x - t.rail_x).hypot(s.rail_y - t.rail_y) < 1e-3);
    }
    // Denser readings with a change of rail: refused with a clear error.
    let mut dense = survey.clone();
    let mut extra = Vec::new();
    for w in dense.readings.windows(2) {
        extra.push(w[0].clone());
        let mut mid = w[0].clone();
        mid.chainage = 0.5 * (w[0].chainage + w[1].chainage);
        mid.versine = None;
        extra.push(mid);
    }
    dense.readings = extra;
    let e = integrate(&dense, &setup, &IntegrateOptions::default());
    assert!(
        matches!(e, Err(IntegrateError::RailChangeInDenseSurvey { .. })),
        "{e:?}"
    );
}

fn straight_survey(n: usize, a: f64) -> Survey {
    Survey {
        source: "straight".into(),
        chainage_unit: LengthUnit::Metre,
        versine_unit: VersineUnit::Millimetre,
        readings: (0..n)
            .map(|i| Reading {
                chainage: a * i as f64,
                versine: Some(0.0),
                rail: Rail::Left,
                note: None,
                line: i + 2,
            })
            .collect(),
        has_side_column: false,
    }
}

#[test]
fn classic_drift_matches_methods_c4_1() {
    // METHODS C4.1: σ_v = 1 mm, a = 10 m, n = 100: σ_y = 1146.04 mm; σ_φ(99) = 1.98997 mrad.
    assert!((drift_lateral_sd(1e-3, 100) - 1.14604).abs() < 1e-5);
    assert!((drift_heading_sd(1e-3, 10.0, 99) - 1.98997e-3).abs() < 1e-8);
    // The plan fixes the tangent at station 0 (not the first side), which adds
    // half the first deflection: σ_y(n)² = (2σ_v)²(Σ_{k<n} k² + n²/4).
    let survey = straight_survey(101, 10.0);
    let mut setup = Setup::new(20.0, Rail::Left);
    setup.reading_sd = Some(1e-3);
    let (plan, _) = integrate(&survey, &setup, &IntegrateOptions::default()).unwrap();
    assert_eq!(plan.noise_source, NoiseSource::Stated);
    let n = 100usize;
    let sum_k2: f64 = (1..n).map(|k| (k * k) as f64).sum();
    let expect = 2e-3 * (sum_k2 + (n * n) as f64 / 4.0).sqrt();
    let got = plan.stations[n].position_sd;
    assert!((got - expect).abs() < 1e-9 * expect, "{got} vs {expect}");
    // C4.1 itself is the same sum without the n²/4 term: within 0.4 % here.
    assert!((got / drift_lateral_sd(1e-3, 100) - 1.0).abs() < 4e-3);
    // Heading after 99 stations: (2σ/a)² (1/4 + 98 + 1/4).
    let h = plan.stations[99].heading_sd;
    assert!((h - 2e-4 * 98.5f64.sqrt()).abs() < 1e-12, "{h}");
}

#[test]
fn rounded_readings_set_the_noise_floor() {
    // Readings of exactly 0 or 1 mm (rounded), no scatter to estimate: σ = 1 mm/√12.
    let mut survey = straight_survey(60, 10.0);
    for (i, r) in survey.readings.iter_mut().enumerate() {
        r.versine = Some(if i % 7 == 3 { 1e-3 } else { 0.0 });
    }
    let (plan, _) = integrate(
        &survey,
        &Setup::new(20.0, Rail::Left),
        &IntegrateOptions::default(),
    )
    .unwrap();
    // Third differences of an isolated 1 mm step give a MAD of zero here.
    assert!(plan.reading_sd >= 1e-3 / 12f64.sqrt() - 1e-15);
    // Stating less than the rounding allows is raised to the floor.
    let mut setup = Setup::new(20.0, Rail::Left);
    setup.reading_sd = Some(0.01e-3);
    let (plan, diags) = integrate(&survey, &setup, &IntegrateOptions::default()).unwrap();
    assert_eq!(plan.noise_source, NoiseSource::RoundingFloor);
    assert!((plan.reading_sd - 1e-3 / 12f64.sqrt()).abs() < 1e-15);
    assert!(
        diags
            .iter()
            .any(|d| d.message.contains("below what the rounding"))
    );
}

#[test]
fn input_errors_are_reported() {
    let mut survey = straight_survey(10, 10.0);
    let setup = Setup::new(20.0, Rail::Left);
    survey.readings[4].chainage = 30.0;
    assert!(matches!(
        integrate(&survey, &setup, &IntegrateOptions::default()),
        Err(IntegrateError::ChainageOrder { line: 6, .. })
    ));
    let mut survey = straight_survey(10, 10.0);
    survey.readings[3].versine = Some(9.0); // 9 m on a 20 m chord
    let e = integrate(&survey, &setup, &IntegrateOptions::default()).unwrap_err();
    assert!(
        matches!(e, IntegrateError::VersineTooLarge { line: 5, .. }),
        "{e}"
    );
    assert!(e.to_string().contains("versine unit"));
    let mut survey = straight_survey(10, 10.0);
    survey.readings.clear();
    assert!(matches!(
        integrate(&survey, &setup, &IntegrateOptions::default()),
        Err(IntegrateError::NoReadings { .. })
    ));
    let mut survey = straight_survey(10, 10.0);
    for r in survey.readings.iter_mut() {
        r.versine = None;
    }
    assert!(matches!(
        integrate(&survey, &setup, &IntegrateOptions::default()),
        Err(IntegrateError::NoValidReadings { .. })
    ));
}

#[test]
fn default_start_is_north_at_the_origin() {
    let (plan, _) = integrate(
        &straight_survey(5, 10.0),
        &Setup::new(20.0, Rail::Left),
        &IntegrateOptions::default(),
    )
    .unwrap();
    let s = &plan.stations[4];
    assert!(s.x.abs() < 1e-12 && (s.y - 40.0).abs() < 1e-12);
    assert!((chordline::geometry::heading_to_bearing(s.heading)).abs() < 1e-9);
    let _ = Plan::clone(&plan);
}

#[test]
fn tiny_and_irregular_surveys_do_not_fail() {
    let setup = Setup::new(20.0, Rail::Left);
    for n in [1usize, 2, 3] {
        let (plan, _) = integrate(
            &straight_survey(n, 10.0),
            &setup,
            &IntegrateOptions::default(),
        )
        .unwrap();
        assert_eq!(plan.stations.len(), n);
        assert!(
            plan.stations
                .iter()
                .all(|s| s.x.is_finite() && s.position_sd.is_finite())
        );
    }
    // Irregular spacing (not the half chord): the regularised estimate.
    let mut survey = straight_survey(40, 10.0);
    for (i, r) in survey.readings.iter_mut().enumerate() {
        r.chainage = 7.3 * i as f64 + if i % 3 == 0 { 1.1 } else { 0.0 };
        r.versine = Some(-0.05); // bows towards the wire on the left rail: left-hand curve, R ≈ 1000 m
    }
    let (plan, diags) = integrate(&survey, &setup, &IntegrateOptions::default()).unwrap();
    assert!(diags.iter().any(|d| d.message.contains("regularised")));
    let k = plan.stations[20].curvature;
    assert!((k * 1000.0 - 1.0).abs() < 0.01, "{k}");
}

#[test]
fn many_control_points_on_a_long_dense_survey() {
    // 2.2 km read every metre with 120 control points: the sd is evaluated on a
    // subset and interpolated (said in a note); values stay finite and honest.
    let design = route();
    let mut sim = SimSetup::classic(20.0, Rail::Left);
    sim.spacing = 1.0;
    sim.noise_sd = 1e-3;
    let (survey, truth) = survey_of(&design, &sim);
    let n = truth.len();
    let idx: Vec<usize> = (0..120).map(|i| i * (n - 1) / 119).collect();
    let obs = controls(&truth, &idx, 3e-3, 4);
    let mut setup = Setup::new(20.0, Rail::Left);
    setup.reading_sd = Some(1e-3);
    let (plan, diags) = integrate(
        &survey,
        &setup,
        &IntegrateOptions {
            start: truth[0].centre,
            position_obs: obs,
        },
    )
    .unwrap();
    assert!(
        diags
            .iter()
            .any(|d| d.message.contains("interpolated linearly"))
    );
    let mut z2 = 0.0;
    for (t, s) in truth.iter().zip(&plan.stations) {
        assert!(
            s.position_sd.is_finite() && s.position_sd > 0.0 && s.position_sd < 5e-3,
            "{}",
            s.position_sd
        );
        z2 += (lateral(t, s.x, s.y) / s.position_sd).powi(2);
    }
    let r = (z2 / n as f64).sqrt();
    assert!(r < 2.0, "normalised RMS {r}");
}

#[test]
fn many_dropouts_are_bridged_with_a_summary() {
    // Recording-vehicle style dropouts: every 7th reading missing at 1 m spacing.
    let design = route();
    let mut sim = SimSetup::classic(20.0, Rail::Left);
    sim.spacing = 1.0;
    let (mut survey, truth) = survey_of(&design, &sim);
    for (i, r) in survey.readings.iter_mut().enumerate() {
        if i % 7 == 3 {
            r.versine = None;
        }
    }
    let (plan, diags) = integrate(
        &survey,
        &Setup::new(20.0, Rail::Left),
        &IntegrateOptions {
            start: truth[0].centre,
            position_obs: vec![],
        },
    )
    .unwrap();
    let gap_msgs = diags
        .iter()
        .filter(|d| d.message.contains("missing reading") || d.message.contains("more gaps"))
        .count();
    assert_eq!(gap_msgs, 11);
    assert!(diags.iter().any(|d| d.message.contains("more gaps")));
    let (t, s) = (truth.last().unwrap(), plan.stations.last().unwrap());
    assert!((s.x - t.centre.x).hypot(s.y - t.centre.y) < 1e-3);
}
