//! Chords not read at their middle (recording vehicles, some trolleys): arms
//! `a₁` behind and `a₂` ahead of the measuring point.
//!
//! - the circle relation against its published small-angle form and against
//!   the exact geometry of points on a circle;
//! - `simulate` (measuring geometrically on the offset rail) against the
//!   chord relations;
//! - round trips simulate → integrate → fit without noise: plan to the
//!   truth below a millimetre, element joints at the true chainages (not
//!   shifted by the asymmetry), radii right;
//! - the chord's response to a sinusoidal alignment against its transfer
//!   function (derived in docs/METHOD.md, see the test for what was found
//!   published).

mod common;
use common::plan_of;

use chordline::chord::{curvature_from_versine_arms, versine_from_curvature_arms};
use chordline::fit::{FitOptions, FitResult, fit};
use chordline::geometry::{Alignment, Element, ElementKind, Pose};
use chordline::integrate::{IntegrateOptions, Plan, integrate};
use chordline::simulate::{SimSetup, Truth, simulate};
use chordline::survey::{Arms, Marking, Rail};
use std::f64::consts::{PI, TAU};

use ElementKind::{Arc as A, Straight as S, Transition as T};

fn arms(behind: f64, ahead: f64) -> Arms {
    Arms { behind, ahead }
}

fn wrap(a: f64) -> f64 {
    (a + PI).rem_euclid(TAU) - PI
}

fn start() -> Pose {
    Pose {
        x: 500.0,
        y: -300.0,
        heading: 1.1,
    }
}

fn reverse_curve() -> Vec<Element> {
    vec![
        Element::straight(100.0),
        Element::transition(60.0, 0.0, 1.0 / 450.0),
        Element::arc(200.0, 450.0),
        Element::transition(80.0, 1.0 / 450.0, -1.0 / 600.0),
        Element::arc(150.0, -600.0),
        Element::transition(60.0, -1.0 / 600.0, 0.0),
        Element::straight(100.0),
    ]
}

#[test]
fn circle_relation_matches_its_published_form_and_the_exact_geometry() {
    // Published small-angle form: h = a·b/(2R) for a point at distances a and
    // b from the chord ends (Trackopedia, "Versine measurement",
    // trackopedia.info, section "Formulae (pure circular curve)").
    for (a1, a2) in [(4.0, 6.5), (6.5, 4.0), (1.5, 8.5), (5.0, 15.0)] {
        for r in [5000.0, 1200.0, 300.0] {
            for m in [Marking::Taped, Marking::Wire] {
                let v = versine_from_curvature_arms(1.0 / r, arms(a1, a2), m);
                let small = a1 * a2 / (2.0 * r);
                // The exact forms differ from it at the next order, (a/R)²·h.
                let next = small * (a1 * a1 + a2 * a2) / (r * r);
                assert!(
                    (v - small).abs() <= next,
                    "{a1}+{a2} R={r} {m:?}: {v} vs {small}"
                );
                let k = curvature_from_versine_arms(v, arms(a1, a2), m).unwrap();
                assert!((k * r - 1.0).abs() < 1e-12, "{a1}+{a2} R={r} {m:?}: {k}");
                let k = curvature_from_versine_arms(-v, arms(a1, a2), m).unwrap();
                assert!((k * r + 1.0).abs() < 1e-12);
            }
            // Exact geometry, computed here from points on the circle (centre
            // at the origin, measuring point at angle 0).
            let p = |ang: f64| (r * ang.cos(), r * ang.sin());
            let dist = |a: (f64, f64), b: (f64, f64), q: (f64, f64)| {
                let (wx, wy) = (b.0 - a.0, b.1 - a.1);
                ((wx * (q.1 - a.1) - wy * (q.0 - a.0)) / wx.hypot(wy)).abs()
            };
            // Taped: the marks at arc lengths a₁ behind and a₂ ahead.
            let taped = dist(p(-a1 / r), p(a2 / r), p(0.0));
            let v = versine_from_curvature_arms(1.0 / r, arms(a1, a2), Marking::Taped);
            assert!((v - taped).abs() < 1e-12, "taped {v} vs {taped}");
            // Wire: a straight chord of length a₁ + a₂ with its ends on the
            // circle, read perpendicular to it a₁ from its rear end.
            let c = a1 + a2;
            let half = (0.5 * c / r).asin();
            let t = 0.5 * (a1 - a2); // reading point from the wire's middle
            let d = (r * r - 0.25 * c * c).sqrt(); // centre to wire
            let wire = (r * r - t * t).sqrt() - d;
            let v = versine_from_curvature_arms(1.0 / r, arms(a1, a2), Marking::Wire);
            assert!((v - wire).abs() < 1e-12, "wire {v} vs {wire}");
            assert!(half > 0.0);
        }
    }
    // The symmetric chord is the special case, bit for bit.
    for m in [Marking::Taped, Marking::Wire] {
        let k = 1.0 / 333.0;
        assert_eq!(
            versine_from_curvature_arms(k, Arms::symmetric(10.0), m),
            chordline::chord::versine_from_curvature(k, 10.0, m)
        );
    }
}

#[test]
fn simulated_versines_on_a_circle_follow_the_chord_relations() {
    let r = 400.0;
    let design = Alignment::new(start(), 0.0, vec![Element::arc(300.0, r)]);
    for (a1, a2) in [(4.0, 6.5), (6.5, 4.0)] {
        for rail in [Rail::Left, Rail::Right] {
            for m in [Marking::Taped, Marking::Wire] {
                let mut sim = SimSetup::with_arms(a1, a2, 0.5, rail);
                sim.marking = m;
                let (survey, _) = simulate(&design, &sim).unwrap().read_marks();
                // The measured rail's radius: the centreline's ± half the gauge.
                let rr = r - rail.offset_left(sim.gauge);
                let expect = versine_from_curvature_arms(1.0 / rr, arms(a1, a2), m);
                for rd in &survey.readings {
                    let v = rail.chord_side(rd.versine.unwrap());
                    assert!(
                        (v - expect).abs() < 1e-9,
                        "{a1}+{a2} {rail:?} {m:?} at {}: {v} vs {expect}",
                        rd.chainage
                    );
                }
                // Readings start a₁ into the rail and stop a₂ before its end.
                // (A wire's rear end lies a little more than a₁ of rail behind
                // the mark, so a wire's first reading may be one mark later.)
                let first = survey.readings[0].chainage;
                assert!(
                    first >= a1 - 1e-9 && first <= a1 + sim.spacing + 1e-9,
                    "first reading at {first}"
                );
            }
        }
    }
}

fn round_trip(els: &[Element], sim: &SimSetup) -> (Vec<Truth>, Plan) {
    let design = Alignment::new(start(), 0.0, els.to_vec());
    let (survey, truth) = simulate(&design, sim).unwrap().read_marks();
    let opts = IntegrateOptions {
        start: truth[0].centre,
        position_obs: vec![],
    };
    let (plan, _) = integrate(&survey, &sim.survey_setup(None), &opts).unwrap();
    (truth, plan)
}

#[test]
fn plan_is_sub_millimetre_without_noise() {
    // As for symmetric chords (tests/integrate_roundtrip.rs): the reverse curve
    // with transitions, both rails and markings, arms either way round.
    for (a1, a2, spacing) in [(4.0, 6.5, 0.5), (6.5, 4.0, 0.5), (5.0, 15.0, 2.5)] {
        for rail in [Rail::Left, Rail::Right] {
            for m in [Marking::Taped, Marking::Wire] {
                let mut sim = SimSetup::with_arms(a1, a2, spacing, rail);
                sim.marking = m;
                let (truth, plan) = round_trip(&reverse_curve(), &sim);
                assert_eq!(plan.stations.len(), truth.len());
                let (mut ec, mut er, mut eh, mut ek) = (0.0_f64, 0.0_f64, 0.0_f64, 0.0_f64);
                for (t, s) in truth.iter().zip(&plan.stations) {
                    ec = ec.max((s.x - t.centre.x).hypot(s.y - t.centre.y));
                    er = er.max((s.rail_x - t.rail_x).hypot(s.rail_y - t.rail_y));
                    eh = eh.max(wrap(s.heading - t.centre.heading).abs());
                    ek = ek.max((s.curvature - t.centre_curvature).abs());
                }
                let case = format!("{a1}+{a2} every {spacing} {rail:?} {m:?}");
                eprintln!(
                    "{case}: E/N {ec:.2e} m, rail {er:.2e} m, heading {eh:.2e} rad, curvature {ek:.2e} 1/m"
                );
                assert!(ec < 1e-3 && er < 1e-3, "{case}: E/N {ec} rail {er}");
                assert!(eh < 1e-5, "{case}: heading {eh}");
                // Curvature at a curvature step of the design is smoothed over
                // a knot; elsewhere it follows the design closely.
                assert!(ek < 2e-5, "{case}: curvature {ek}");
            }
        }
    }
}

fn simple() -> Vec<Element> {
    vec![
        Element::straight(200.0),
        Element::transition(60.0, 0.0, 1.0 / 450.0),
        Element::arc(300.0, 450.0),
        Element::transition(60.0, 1.0 / 450.0, 0.0),
        Element::straight(200.0),
    ]
}

fn fitted(els: &[Element], sim: &SimSetup, sd: Option<f64>) -> (FitResult, Vec<f64>) {
    let al = Alignment::new(Pose::default(), 0.0, els.to_vec());
    let simd = simulate(&al, sim).unwrap();
    let (res, _) = fit(
        &plan_of(&simd.survey, &sim.survey_setup(sd)),
        &FitOptions::default(),
    )
    .unwrap();
    let d = sim.rail.offset_left(sim.gauge);
    let mut joints = Vec::new();
    let mut s = 0.0;
    for e in &els[..els.len() - 1] {
        s += e.length;
        joints.push(sim.start_chainage + al.offset_length(s, d));
    }
    (res, joints)
}

#[test]
fn element_joints_are_not_shifted_by_the_asymmetry() {
    // A shift of (a₂ − a₁)/2 = 1.25 m or (a₂ − a₁)/3 = 0.83 m would show at
    // every joint. Exact readings with the reading sd stated as 0.1 mm (a
    // recording vehicle's resolution): the asymmetric chords' joints, radius
    // and lengths against the truth with the bounds of the symmetric
    // noise-free case (tests/fit_accuracy.rs: 5 cm, 5 cm, 10 cm) and against
    // the symmetric 10 m chord read at the same marks (within 5 mm).
    let control = |m: Marking| {
        let mut sim = SimSetup::with_arms(5.0, 5.0, 0.5, Rail::Right);
        sim.marking = m;
        fitted(&simple(), &sim, Some(0.1e-3)).0
    };
    for m in [Marking::Taped, Marking::Wire] {
        let sym = control(m);
        for (a1, a2) in [(4.0, 6.5), (6.5, 4.0), (2.0, 8.0)] {
            let mut sim = SimSetup::with_arms(a1, a2, 0.5, Rail::Right);
            sim.marking = m;
            let (r, joints) = fitted(&simple(), &sim, Some(0.1e-3));
            let kinds: Vec<ElementKind> = r.elements.iter().map(|e| e.kind).collect();
            assert_eq!(kinds, [S, T, A, T, S], "{a1}+{a2} {m:?}");
            for ((e, j), c) in r
                .elements
                .iter()
                .skip(1)
                .zip(&joints)
                .zip(sym.elements.iter().skip(1))
            {
                let off = e.start_chainage.value - j;
                assert!(off.abs() < 0.05, "{a1}+{a2} {m:?}: joint off by {off} m");
                let vs = e.start_chainage.value - c.start_chainage.value;
                assert!(
                    vs.abs() < 5e-3,
                    "{a1}+{a2} {m:?}: joint {vs} m from the symmetric chord's"
                );
            }
            let rad = r.elements[2].start_radius.expect("arc radius").value;
            assert!((rad - 450.0).abs() < 0.05, "{a1}+{a2} {m:?}: radius {rad}");
            for i in [1, 3] {
                let l = r.elements[i].length.value;
                assert!((l - 60.0).abs() < 0.1, "{a1}+{a2} {m:?}: transition {l}");
            }
        }
    }
}

/// A straight track with a lateral sinusoid `y = amp·sin(2πx/λ)`, built of
/// clothoids whose curvature follows `y''` (piecewise linear in steps of
/// λ/200), `len` metres long.
fn sinusoid(amp: f64, lambda: f64, len: f64) -> Alignment {
    let w = TAU / lambda;
    let n = (len / (lambda / 200.0)).ceil() as usize;
    let h = len / n as f64;
    let k = |x: f64| -amp * w * w * (w * x).sin();
    let els = (0..n)
        .map(|i| Element::transition(h, k(i as f64 * h), k((i + 1) as f64 * h)))
        .collect();
    let heading = (amp * w).atan();
    Alignment::new(
        Pose {
            x: 0.0,
            y: 0.0,
            heading,
        },
        0.0,
        els,
    )
}

#[test]
fn response_to_a_sinusoid_is_the_transfer_function() {
    // H(λ) = 1 − [a₂·e^{−i2πa₁/λ} + a₁·e^{i2πa₂/λ}]/(a₁ + a₂) for the versine
    // v(x) = y(x) − [a₂·y(x − a₁) + a₁·y(x + a₂)]/(a₁ + a₂) (docs/METHOD.md,
    // "Asymmetric chords"): a sinusoid y = A sin(ωx) reads A|H| sin(ωx + arg H).
    // DERIVED, not checked against a published statement of this formula: the
    // literature search found the asymmetric chord's nonlinear phase response
    // discussed (e.g. "Experimental and numerical investigations of asymmetric
    // chord-reference system regarding track geometry measurement", 2021,
    // abstract only) but not the formula's text. Its symmetric case,
    // 1 − cos(πc/λ) with no phase, is the classic mid-chord response.
    let amp = 0.5e-3;
    for (a1, a2) in [(4.0, 6.5), (6.5, 4.0)] {
        let c = a1 + a2;
        for lambda in [3.3, 7.0, 10.5, 17.0, 31.0, 60.0] {
            let w = TAU / lambda;
            let h_re = 1.0 - (a2 * (w * a1).cos() + a1 * (w * a2).cos()) / c;
            let h_im = -(-a2 * (w * a1).sin() + a1 * (w * a2).sin()) / c;
            let (mag, phase) = (h_re.hypot(h_im), h_im.atan2(h_re));
            for m in [Marking::Taped, Marking::Wire] {
                let mut sim = SimSetup::with_arms(a1, a2, 0.5, Rail::Right);
                sim.marking = m;
                let al = sinusoid(amp, lambda, 240.0);
                let (survey, truth) = simulate(&al, &sim).unwrap().read_marks();
                // v_task = −(chord-side versine); on the right rail the field
                // versine is the chord-side one. Least squares for
                // v = p sin(ωx) + q cos(ωx), x the centreline distance.
                let (mut ss, mut sc, mut cc, mut vs, mut vc) = (0.0, 0.0, 0.0, 0.0, 0.0);
                for (rd, t) in survey.readings.iter().zip(&truth) {
                    let v = -rd.versine.unwrap();
                    let (sn, cs) = (w * t.centre.x).sin_cos();
                    ss += sn * sn;
                    sc += sn * cs;
                    cc += cs * cs;
                    vs += v * sn;
                    vc += v * cs;
                }
                let det = ss * cc - sc * sc;
                let p = (vs * cc - vc * sc) / det;
                let q = (vc * ss - vs * sc) / det;
                let (got_mag, got_phase) = (p.hypot(q) / amp, q.atan2(p));
                let case = format!("{a1}+{a2} λ={lambda} {m:?}");
                eprintln!(
                    "{case}: |H| {got_mag:.5} (formula {mag:.5}), phase {got_phase:.5} (formula {phase:.5})"
                );
                assert!(
                    (got_mag - mag).abs() < 2e-3 * mag.max(0.05),
                    "{case}: |H| {got_mag} vs {mag}"
                );
                assert!(
                    wrap(got_phase - phase).abs() < 2e-3,
                    "{case}: phase {got_phase} vs {phase}"
                );
            }
        }
    }
}

/// The design of the element test as a design file, with the chord keys `extra`.
fn design_file(dir: &std::path::Path, name: &str, extra: &str) -> std::path::PathBuf {
    let p = dir.join(name);
    let text = format!(
        r#"{{ {extra} "rail": "right", "marking": "wire", "start_chainage_m": 1000,
  "elements": [
    {{"kind": "straight", "length": 200}},
    {{"kind": "transition", "length": 60}},
    {{"kind": "arc", "length": 300, "radius": 450}},
    {{"kind": "transition", "length": 60}},
    {{"kind": "straight", "length": 200}}
  ] }}"#
    );
    std::fs::write(&p, text).unwrap();
    p
}

/// `simulate` then `run` through the binary; the elements.csv rows as fields.
fn cli_round_trip(dir: &std::path::Path, tag: &str, keys: &str, chord: &str) -> Vec<Vec<String>> {
    let design = design_file(dir, &format!("{tag}.json"), keys);
    let survey = dir.join(format!("{tag}.csv"));
    let out = dir.join(format!("{tag}-out"));
    let o = common::chordline(&[
        "simulate",
        design.to_str().unwrap(),
        survey.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", common::stderr(&o));
    let o = common::chordline(&[
        "run",
        survey.to_str().unwrap(),
        "--chord",
        chord,
        "--marking",
        "wire",
        "--rail",
        "right",
        "--reading-sd",
        "0.1mm",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", common::stderr(&o));
    if tag == "asym" {
        let text = std::fs::read_to_string(&survey).unwrap();
        assert!(
            text.contains(
                "# chord 10.5 m (4 m behind the measuring point, 6.5 m ahead), marks every 0.5 m"
            ),
            "{text:.300}"
        );
        assert!(
            common::stdout(&o)
                .contains("set-up   10.500 m chord read 4 m behind and 6.500 m ahead"),
            "{}",
            common::stdout(&o)
        );
    }
    std::fs::read_to_string(out.join("elements.csv"))
        .unwrap()
        .lines()
        .skip(1)
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect()
}

#[test]
fn simulate_and_run_take_the_arms_from_the_design_file_and_the_option() {
    let dir = tempfile::tempdir().unwrap();
    let asym = cli_round_trip(
        dir.path(),
        "asym",
        r#""chord_m": 10.5, "chord_behind_m": 4,"#,
        "4m+6.5m",
    );
    let sym = cli_round_trip(
        dir.path(),
        "sym",
        r#""chord_m": 10, "spacing_m": 0.5,"#,
        "10m",
    );
    let kinds: Vec<&str> = asym.iter().map(|r| r[1].as_str()).collect();
    assert_eq!(
        kinds,
        ["straight", "transition", "arc", "transition", "straight"]
    );
    for (a, s) in asym.iter().zip(&sym).skip(1) {
        let (ja, js): (f64, f64) = (a[2].parse().unwrap(), s[2].parse().unwrap());
        assert!(
            (ja - js).abs() < 5e-3,
            "joint {ja} (4 m + 6.5 m) vs {js} (10 m)"
        );
    }
    let r: f64 = asym[2][5].parse().unwrap();
    assert!((r - 450.0).abs() < 0.05, "radius {r}");
}

#[test]
fn noisy_vehicle_surveys_put_the_joints_where_they_are() {
    // A recording vehicle's readings: 0.2 mm noise, rounded to 0.1 mm, every
    // 0.5 m, reading sd estimated from the readings. A shift of the joints by
    // the asymmetry, (a₂ − a₁)/2 = 1.25 m or (a₂ − a₁)/3 = 0.83 m, would show
    // in the mean signed error over the seeds and joints.
    for (a1, a2) in [(4.0, 6.5), (6.5, 4.0)] {
        let (mut sum, mut n, mut worst) = (0.0, 0, 0.0_f64);
        for seed in 1..=4 {
            let mut sim = SimSetup::with_arms(a1, a2, 0.5, Rail::Left);
            sim.marking = Marking::Wire;
            sim.noise_sd = 0.2e-3;
            sim.resolution = 0.1e-3;
            sim.seed = seed;
            let (r, joints) = fitted(&simple(), &sim, None);
            let kinds: Vec<ElementKind> = r.elements.iter().map(|e| e.kind).collect();
            assert_eq!(kinds, [S, T, A, T, S], "{a1}+{a2} seed {seed}");
            for (e, j) in r.elements.iter().skip(1).zip(&joints) {
                let off = e.start_chainage.value - j;
                sum += off;
                n += 1;
                worst = worst.max(off.abs());
            }
            let rad = r.elements[2].start_radius.expect("arc radius").value;
            assert!(
                (rad - 450.0).abs() < 1.0,
                "{a1}+{a2} seed {seed}: radius {rad}"
            );
        }
        let mean = sum / n as f64;
        eprintln!("{a1}+{a2}: joints mean signed error {mean:.3} m, worst {worst:.3} m");
        assert!(
            mean.abs() < 0.1,
            "{a1}+{a2}: joints shifted by {mean} m on average"
        );
        assert!(worst < 0.5, "{a1}+{a2}: a joint off by {worst} m");
    }
}
