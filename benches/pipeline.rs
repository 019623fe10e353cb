//! Criterion benchmark of the element fit and of every stage together
//! (`pipeline::process`: integrate, fit, place, design values; no file I/O).
//!
//! ```sh
//! cargo bench --bench pipeline -- --warm-up-time 1 --measurement-time 5
//! ```
//! Cases: the bundled hand survey size (a 1.2 km simple route, 20 m chord
//! every 10 m) and a 20 km recording-vehicle survey (10 m chord read every
//! 0.25 m, 80 000 readings), both simulated exactly with 0.3 mm noise.

use chordline::fit::{FitOptions, fit};
use chordline::geometry::{Alignment, Pose};
use chordline::integrate::{IntegrateOptions, integrate};
use chordline::pipeline::{Options, process};
use chordline::simulate::{SimSetup, simulate, synthetic_route};
use chordline::survey::{Rail, Setup, Survey};
use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

fn survey(length: f64, chord: f64, spacing: f64) -> Survey {
    let design = Alignment::new(Pose::default(), 0.0, synthetic_route(length, 11));
    let mut s = SimSetup::classic(chord, Rail::Left);
    s.spacing = spacing;
    s.noise_sd = 0.3e-3;
    s.resolution = 0.1e-3;
    match simulate(&design, &s) {
        Ok(sim) => sim.survey,
        Err(e) => panic!("benchmark survey: {e}"),
    }
}

fn benches(c: &mut Criterion) {
    let hand = survey(1_200.0, 20.0, 10.0);
    let vehicle = survey(20_000.0, 10.0, 0.25);
    let mut g = c.benchmark_group("pipeline");
    g.sample_size(10);
    let hand_opts = Options::new(20.0, Rail::Left);
    g.bench_function("process, hand survey 1.2 km every 10 m", |b| {
        b.iter(|| process(black_box(hand.clone()), &hand_opts).map(|r| r.plan.stations.len()))
    });
    let setup = Setup::new(10.0, Rail::Left);
    let plan = match integrate(&vehicle, &setup, &IntegrateOptions::default()) {
        Ok((p, _)) => p,
        Err(e) => panic!("benchmark plan: {e}"),
    };
    g.bench_function("fit, vehicle survey 20 km every 0.25 m", |b| {
        b.iter(|| fit(black_box(&plan), &FitOptions::default()).map(|r| r.0.elements.len()))
    });
    let vehicle_opts = Options::new(10.0, Rail::Left);
    g.bench_function("process, vehicle survey 20 km every 0.25 m", |b| {
        b.iter(|| process(black_box(vehicle.clone()), &vehicle_opts).map(|r| r.plan.stations.len()))
    });
    g.finish();
}

criterion_group!(pipeline_benches, benches);
criterion_main!(pipeline_benches);
