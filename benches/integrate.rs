//! Criterion benchmark of the integrator.
//!
//! ```sh
//! cargo bench --bench integrate -- --warm-up-time 1 --measurement-time 5
//! ```
//! Cases: a classic hand survey (20 m chord every 10 m, 10⁴ stations), a
//! recording-vehicle survey (10 m chord every 0.25 m) with 10⁵ and 10⁶
//! readings, and the 10⁵ case with three control points.

use chordline::integrate::{IntegrateOptions, PositionObs, integrate, versine_from_curvature};
use chordline::survey::{Marking, Rail, Reading, Setup, Survey};
use chordline::units::{LengthUnit, VersineUnit};
use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

fn curvature(s: f64) -> f64 {
    let u = s.rem_euclid(2000.0);
    let k = if (s / 2000.0).floor() as i64 % 2 == 0 {
        1.0 / 900.0
    } else {
        -1.0 / 900.0
    };
    match u {
        u if u < 500.0 => 0.0,
        u if u < 600.0 => k * (u - 500.0) / 100.0,
        u if u < 1400.0 => k,
        u if u < 1500.0 => k * (1500.0 - u) / 100.0,
        _ => 0.0,
    }
}

/// Readings every `d` metres on a chord of `2a`, with a small deterministic
/// wobble standing in for noise.
fn survey(n: usize, d: f64, a: f64) -> Survey {
    let readings = (0..n)
        .map(|i| {
            let s = i as f64 * d;
            let v = versine_from_curvature(curvature(s), a, Marking::Taped)
                + 0.4e-3 * ((i as f64 * 12.9898).sin() * 43758.5453).fract();
            Reading {
                chainage: s,
                versine: Some(v),
                rail: Rail::Right,
                note: None,
                line: i + 2,
            }
        })
        .collect();
    Survey {
        source: "bench".into(),
        chainage_unit: LengthUnit::Metre,
        versine_unit: VersineUnit::Millimetre,
        readings,
        has_side_column: false,
    }
}

fn bench(c: &mut Criterion) {
    let mut g = c.benchmark_group("integrate");
    g.sample_size(10);
    let classic = survey(10_000, 10.0, 10.0);
    let setup20 = Setup::new(20.0, Rail::Right);
    g.bench_function("classic 20 m chord, 1e4 stations", |b| {
        b.iter(|| integrate(black_box(&classic), &setup20, &IntegrateOptions::default()).unwrap())
    });
    let setup10 = Setup::new(10.0, Rail::Right);
    let dense = survey(100_000, 0.25, 5.0);
    g.bench_function("10 m chord every 0.25 m, 1e5 readings", |b| {
        b.iter(|| integrate(black_box(&dense), &setup10, &IntegrateOptions::default()).unwrap())
    });
    // Control points: the free plan itself at three chainages (the bench measures the cost).
    let (free, _) = integrate(&dense, &setup10, &IntegrateOptions::default()).unwrap();
    let obs: Vec<PositionObs> = [0usize, 50_000, 99_999]
        .iter()
        .map(|&i| PositionObs {
            id: format!("P{i}"),
            chainage: free.stations[i].chainage,
            x: free.stations[i].x,
            y: free.stations[i].y,
            sd: 0.005,
        })
        .collect();
    let opts = IntegrateOptions {
        position_obs: obs,
        ..IntegrateOptions::default()
    };
    g.bench_function(
        "10 m chord every 0.25 m, 1e5 readings, 3 control points",
        |b| b.iter(|| integrate(black_box(&dense), &setup10, &opts).unwrap()),
    );
    let big = survey(1_000_000, 0.25, 5.0);
    g.bench_function("10 m chord every 0.25 m, 1e6 readings", |b| {
        b.iter(|| integrate(black_box(&big), &setup10, &IntegrateOptions::default()).unwrap())
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
