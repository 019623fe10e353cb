//! Accuracy study of the integrator against exact simulated surveys.
//!
//! ```sh
//! cargo run --release --example integrate_accuracy
//! ```
//! Prints, for several designs, chords, spacings, markings and rails: the
//! largest centreline position and heading errors without noise; with 1 mm
//! reading noise over 40 seeds, the RMS lateral error at the last station, the
//! mean reported sd there and the RMS of the normalised errors (≈ 1 when the
//! reported standard deviations are right); and the same with three control
//! points (2 mm) on a 2.2 km route.

use chordline::geometry::{Alignment, Element, Pose};
use chordline::integrate::{IntegrateOptions, Plan, PositionObs, integrate};
use chordline::simulate::{SimSetup, Truth, simulate};
use chordline::survey::{Marking, Rail, Setup, Survey};
use chordline::units::{FOOT, LengthUnit, VersineUnit};
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};

fn survey_of(design: &Alignment, sim: &SimSetup) -> (Survey, Vec<Truth>) {
    simulate(design, sim).expect("simulate").read_marks()
}

fn setup_of(sim: &SimSetup, sd: Option<f64>) -> Setup {
    sim.survey_setup(sd)
}

fn max_errors(truth: &[Truth], plan: &Plan) -> (f64, f64) {
    let (mut ep, mut eh) = (0.0_f64, 0.0_f64);
    for (t, s) in truth.iter().zip(&plan.stations) {
        ep = ep.max((s.x - t.centre.x).hypot(s.y - t.centre.y));
        let d = (s.heading - t.centre.heading + std::f64::consts::PI)
            .rem_euclid(std::f64::consts::TAU)
            - std::f64::consts::PI;
        eh = eh.max(d.abs());
    }
    (ep, eh)
}

fn lateral(t: &Truth, s: &chordline::integrate::Station) -> f64 {
    let (sn, cs) = t.centre.heading.sin_cos();
    -(s.x - t.centre.x) * sn + (s.y - t.centre.y) * cs
}

fn designs() -> Vec<(&'static str, Alignment)> {
    let p = Pose {
        x: 0.0,
        y: 0.0,
        heading: 0.7,
    };
    let ft = FOOT;
    vec![
        (
            "circle R=300",
            Alignment::new(p, 0.0, vec![Element::arc(600.0, 300.0)]),
        ),
        (
            "reverse curve 450/600 with clothoids",
            Alignment::new(
                p,
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
            ),
        ),
        (
            "tight R=150 with 40 m clothoids",
            Alignment::new(
                p,
                0.0,
                vec![
                    Element::straight(40.0),
                    Element::transition(40.0, 0.0, -1.0 / 150.0),
                    Element::arc(150.0, -150.0),
                    Element::transition(40.0, -1.0 / 150.0, 0.0),
                    Element::straight(40.0),
                ],
            ),
        ),
        (
            "90° curve R=400",
            Alignment::new(
                p,
                0.0,
                vec![
                    Element::straight(100.0),
                    Element::transition(60.0, 0.0, 1.0 / 400.0),
                    Element::arc(400.0 * std::f64::consts::FRAC_PI_2 - 60.0, 400.0),
                    Element::transition(60.0, 1.0 / 400.0, 0.0),
                    Element::straight(100.0),
                ],
            ),
        ),
        (
            "imperial 5° curve (62 ft chord)",
            Alignment::new(
                p,
                0.0,
                vec![
                    Element::straight(300.0 * ft),
                    Element::transition(250.0 * ft, 0.0, -1.0 / (1146.279 * ft)),
                    Element::arc(600.0 * ft, -1146.279 * ft),
                    Element::transition(250.0 * ft, -1.0 / (1146.279 * ft), 0.0),
                    Element::straight(300.0 * ft),
                ],
            ),
        ),
    ]
}

fn main() {
    println!("## Noise-free round trips (largest error over all stations)");
    println!("| design | chord | spacing | marking | rail | centreline position | heading |");
    println!("|---|---|---|---|---|---|---|");
    for (name, design) in designs() {
        let imperial = name.starts_with("imperial");
        let (chords, spacings): (Vec<f64>, Vec<f64>) = if imperial {
            (vec![62.0 * FOOT], vec![31.0 * FOOT, 15.5 * FOOT])
        } else {
            (vec![20.0, 10.0], vec![10.0, 5.0, 1.0, 0.25])
        };
        for &chord in &chords {
            for &sp in &spacings {
                if sp > 0.5 * chord + 1e-9 {
                    continue;
                }
                for (marking, rail) in [(Marking::Taped, Rail::Left), (Marking::Wire, Rail::Right)]
                {
                    let mut sim = SimSetup::classic(chord, rail);
                    sim.spacing = sp;
                    sim.marking = marking;
                    if imperial {
                        sim.chainage_unit = LengthUnit::Foot;
                        sim.versine_unit = VersineUnit::Inch;
                    }
                    let (survey, truth) = survey_of(&design, &sim);
                    let opts = IntegrateOptions {
                        start: truth[0].centre,
                        position_obs: vec![],
                    };
                    let (plan, _) =
                        integrate(&survey, &setup_of(&sim, None), &opts).expect("integrate");
                    let (ep, eh) = max_errors(&truth, &plan);
                    println!(
                        "| {name} | {chord:.4} m | {sp:.4} m | {marking:?} | {rail:?} | {:.4} mm | {:.4} mrad |",
                        ep * 1e3,
                        eh * 1e3
                    );
                }
            }
        }
    }

    let route = Alignment::new(
        Pose {
            x: 0.0,
            y: 0.0,
            heading: 0.2,
        },
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
    );
    println!();
    println!("## 1 mm reading noise, 2.2 km route, 40 seeds: last station (start pose fixed)");
    println!(
        "| chord / spacing | sd | RMS lateral error | mean reported sd | RMS normalised error |"
    );
    println!("|---|---|---|---|---|");
    for (chord, sp) in [(20.0, 10.0), (20.0, 5.0), (20.0, 1.0), (10.0, 0.25)] {
        for stated in [true, false] {
            let (mut e2, mut sd, mut z2, mut n) = (0.0, 0.0, 0.0, 0.0);
            for seed in 0..40u64 {
                let mut sim = SimSetup::classic(chord, Rail::Left);
                sim.spacing = sp;
                sim.noise_sd = 1e-3;
                sim.seed = 1000 + seed;
                let (survey, truth) = survey_of(&route, &sim);
                let opts = IntegrateOptions {
                    start: truth[0].centre,
                    position_obs: vec![],
                };
                let (plan, _) = integrate(&survey, &setup_of(&sim, stated.then_some(1e-3)), &opts)
                    .expect("integrate");
                let (t, s) = (truth.last().unwrap(), plan.stations.last().unwrap());
                let e = lateral(t, s);
                e2 += e * e;
                sd += s.position_sd;
                z2 += (e / s.position_sd).powi(2);
                n += 1.0;
            }
            println!(
                "| {chord} m / {sp} m | {} | {:.1} mm | {:.1} mm | {:.2} |",
                if stated { "stated 1 mm" } else { "estimated" },
                (e2 / n).sqrt() * 1e3,
                sd / n * 1e3,
                (z2 / n).sqrt()
            );
        }
    }

    println!();
    println!("## Same, with control points (2 mm sd) at start, middle and end; quarter points");
    println!(
        "| chord / spacing | RMS lateral error | mean reported sd | RMS normalised error | free-drift RMS there |"
    );
    println!("|---|---|---|---|---|");
    for (chord, sp) in [(20.0, 10.0), (20.0, 1.0)] {
        let (mut e2, mut sd, mut z2, mut f2, mut n) = (0.0, 0.0, 0.0, 0.0, 0.0);
        for seed in 0..40u64 {
            let mut sim = SimSetup::classic(chord, Rail::Left);
            sim.spacing = sp;
            sim.noise_sd = 1e-3;
            sim.seed = 2000 + seed;
            let (survey, truth) = survey_of(&route, &sim);
            let m = truth.len();
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
            let nrm = Normal::new(0.0, 2e-3).unwrap();
            let obs: Vec<PositionObs> = [0, m / 2, m - 1]
                .iter()
                .map(|&i| PositionObs {
                    id: format!("P{i}"),
                    chainage: truth[i].chainage,
                    x: truth[i].centre.x + nrm.sample(&mut rng),
                    y: truth[i].centre.y + nrm.sample(&mut rng),
                    sd: 2e-3,
                })
                .collect();
            let setup = setup_of(&sim, Some(1e-3));
            let (free, _) = integrate(
                &survey,
                &setup,
                &IntegrateOptions {
                    start: truth[0].centre,
                    position_obs: vec![],
                },
            )
            .expect("integrate");
            let (plan, _) = integrate(
                &survey,
                &setup,
                &IntegrateOptions {
                    start: truth[0].centre,
                    position_obs: obs,
                },
            )
            .expect("integrate");
            for i in [m / 4, 3 * m / 4] {
                let e = lateral(&truth[i], &plan.stations[i]);
                e2 += e * e;
                sd += plan.stations[i].position_sd;
                z2 += (e / plan.stations[i].position_sd).powi(2);
                f2 += lateral(&truth[i], &free.stations[i]).powi(2);
                n += 1.0;
            }
        }
        println!(
            "| {chord} m / {sp} m | {:.1} mm | {:.1} mm | {:.2} | {:.1} mm |",
            (e2 / n).sqrt() * 1e3,
            sd / n * 1e3,
            (z2 / n).sqrt(),
            (f2 / n).sqrt() * 1e3
        );
    }
}
