//! Whole-process speed run of the integrator on a recording-vehicle-sized
//! survey: a 10 m chord read every 0.25 m over 250 km (10⁶ readings), with a
//! repeating pattern of straights, transitions and curves and 0.5 mm noise.
//!
//! ```sh
//! cargo run --release --example integrate_speed -- 1000000
//! ```
//! Prints the time to build the readings, to integrate, and to write
//! `stations.csv` to a file in the temporary directory.

use chordline::export::stations::write_stations;
use chordline::integrate::{IntegrateOptions, integrate, versine_from_curvature};
use chordline::survey::{Marking, Rail, Reading, Setup, Survey};
use chordline::units::{LengthUnit, VersineUnit};
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};
use std::time::Instant;

/// Curvature of a repeating 2 km pattern: straight, clothoid, arc, clothoid.
fn curvature(s: f64) -> f64 {
    let u = s.rem_euclid(2000.0);
    let sign = if (s / 2000.0).floor() as i64 % 2 == 0 {
        1.0
    } else {
        -1.0
    };
    let k = sign / 900.0;
    if u < 500.0 {
        0.0
    } else if u < 600.0 {
        k * (u - 500.0) / 100.0
    } else if u < 1400.0 {
        k
    } else if u < 1500.0 {
        k * (1500.0 - u) / 100.0
    } else {
        0.0
    }
}

fn main() {
    let n: usize = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(1_000_000);
    let d = 0.25;
    let a = 5.0;
    let t0 = Instant::now();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
    let noise = Normal::new(0.0, 0.5e-3).unwrap();
    let readings: Vec<Reading> = (0..n)
        .map(|i| {
            let s = i as f64 * d;
            // Triangle-weighted mean curvature (5-point rule), then the exact circle versine.
            let k = (0..=8)
                .map(|j| {
                    let u = -a + j as f64 * a / 4.0;
                    let w = if j == 0 || j == 8 { 0.5 } else { 1.0 } * (a - u.abs());
                    w * curvature(s + u)
                })
                .sum::<f64>()
                * (a / 4.0)
                / (a * a);
            let v = versine_from_curvature(k, a, Marking::Wire) + noise.sample(&mut rng);
            Reading {
                chainage: s,
                versine: Some(-v),
                rail: Rail::Left,
                note: None,
                line: i + 2,
            }
        })
        .collect();
    let survey = Survey {
        source: "speed run".into(),
        chainage_unit: LengthUnit::Metre,
        versine_unit: VersineUnit::Millimetre,
        readings,
        has_side_column: false,
    };
    let t_build = t0.elapsed();
    let mut setup = Setup::new(2.0 * a, Rail::Left);
    setup.marking = Marking::Wire;
    let t1 = Instant::now();
    let (plan, diags) =
        integrate(&survey, &setup, &IntegrateOptions::default()).expect("integrate");
    let t_int = t1.elapsed();
    let t2 = Instant::now();
    let path = std::env::temp_dir().join("chordline_speed_stations.csv");
    let f = std::fs::File::create(&path).expect("create");
    write_stations(f, &plan, LengthUnit::Metre, None).expect("write");
    let t_write = t2.elapsed();
    let last = plan.stations.last().expect("stations");
    println!("{n} readings ({:.1} km)", n as f64 * d / 1000.0);
    println!("build readings: {:.3} s", t_build.as_secs_f64());
    println!("integrate:      {:.3} s", t_int.as_secs_f64());
    println!(
        "write csv:      {:.3} s ({})",
        t_write.as_secs_f64(),
        path.display()
    );
    println!(
        "reading sd {:.3} mm, end position sd {:.3} m, {} diagnostics",
        plan.reading_sd * 1e3,
        last.position_sd,
        diags.len()
    );
    for dg in diags.iter().take(4) {
        println!("  {dg}");
    }
}
