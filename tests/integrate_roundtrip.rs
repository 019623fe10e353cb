//! Round trips: simulate a design (exact geometry, `chordline::simulate`),
//! integrate the readings, compare with the exact centreline and rail.

use chordline::geometry::{Alignment, Element, Pose};
use chordline::integrate::{IntegrateOptions, Plan, integrate};
use chordline::simulate::{SimSetup, Simulated, simulate};
use chordline::survey::{Marking, Rail, Setup};
use chordline::units::{FOOT, LengthUnit, VersineUnit};

fn run(design: &Alignment, sim: &SimSetup, sd: Option<f64>) -> (Simulated, Plan) {
    let simd = simulate(design, sim).expect("simulate");
    let mut setup = Setup::new(sim.chord, sim.rail);
    setup.gauge = sim.gauge;
    setup.marking = sim.marking;
    setup.reading_sd = sd;
    let opts = IntegrateOptions {
        start: simd.truth[0].centre,
        position_obs: vec![],
    };
    let (plan, d) = integrate(&simd.survey, &setup, &opts).expect("integrate");
    for x in &d {
        if x.message.contains("regularised") || x.message.contains("standard deviation") {
            eprintln!("{x}");
        }
    }
    (simd, plan)
}

/// Largest centreline and rail position error, and largest heading error.
fn errors(sim: &Simulated, plan: &Plan) -> (f64, f64, f64) {
    let (mut ec, mut er, mut eh) = (0.0_f64, 0.0_f64, 0.0_f64);
    for (t, s) in sim.truth.iter().zip(&plan.stations) {
        ec = ec.max((s.x - t.centre.x).hypot(s.y - t.centre.y));
        er = er.max((s.rail_x - t.rail_x).hypot(s.rail_y - t.rail_y));
        let dh = (s.heading - t.centre.heading + std::f64::consts::PI)
            .rem_euclid(std::f64::consts::TAU)
            - std::f64::consts::PI;
        eh = eh.max(dh.abs());
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
fn explore() {
    for (name, design) in [("reverse", reverse_curve())] {
        for (rail, marking) in [(Rail::Left, Marking::Taped), (Rail::Right, Marking::Wire)] {
            for spacing in [10.0, 5.0, 2.0, 1.0, 0.25] {
                let mut sim = SimSetup::classic(20.0, rail);
                sim.marking = marking;
                sim.spacing = spacing;
                let (s, p) = run(&design, &sim, None);
                let (ec, er, eh) = errors(&s, &p);
                eprintln!(
                    "{name} {rail:?} {marking:?} d={spacing}: centre {:.4} mm rail {:.4} mm heading {:.4} mrad sd_end {:.4} mm",
                    ec * 1e3,
                    er * 1e3,
                    eh * 1e3,
                    p.stations.last().unwrap().position_sd * 1e3
                );
            }
        }
    }
    let _ = (LengthUnit::Foot, VersineUnit::Inch, FOOT);
}
