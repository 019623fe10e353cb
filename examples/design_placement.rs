//! How far the placed design is from the measured centreline on a long
//! recording-vehicle survey (the survey of `benches/whole_process.sh`: 10 m
//! beam, a reading every 0.25 m, 0.3 mm noise, 0.1 mm resolution), against the
//! rigid placement of the versine-only design:
//! `cargo run --release --example design_placement -- LENGTH_KM SEED`.

use chordline::geometry::{Alignment, Pose};
use chordline::pipeline::{Options, process};
use chordline::simulate::{SimSetup, simulate, synthetic_route};
use chordline::survey::{Marking, Rail};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let km: f64 = args.get(1).map_or(Ok(30.0), |s| s.parse())?;
    let seed: u64 = args.get(2).map_or(Ok(1), |s| s.parse())?;
    let route = Alignment::new(Pose::default(), 0.0, synthetic_route(km * 1000.0, seed));
    let mut ss = SimSetup::classic(10.0, Rail::Left);
    ss.spacing = 0.25;
    ss.marking = Marking::Wire;
    ss.noise_sd = 0.0003;
    ss.resolution = 0.0001;
    ss.seed = seed;
    let sim = simulate(&route, &ss)?;
    let mut opts = Options::new(10.0, Rail::Left);
    opts.setup.marking = Marking::Wire;
    let t = std::time::Instant::now();
    let res = process(sim.survey, &opts)?;
    let secs = t.elapsed().as_secs_f64();
    let (Some((_, at, _)), Some(fit)) = (&res.design, &res.fit) else {
        return Err("no fitted design".into());
    };
    let st = &res.plan.stations;
    let dist = |x: f64, y: f64, i: usize| (x - st[i].x).hypot(y - st[i].y);
    let placed: Vec<f64> = at
        .iter()
        .enumerate()
        .map(|(i, &(x, y))| dist(x, y, i))
        .collect();
    let pts: Vec<(f64, f64, f64)> = st.iter().map(|s| (s.chainage, s.x, s.y)).collect();
    let rigid = fit.place(&pts);
    let rigid_d: Vec<f64> = st
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let p = rigid.pose_at(fit.centre_distance(s.chainage));
            dist(p.x, p.y, i)
        })
        .collect();
    let max = |v: &[f64]| v.iter().copied().fold(0.0f64, f64::max);
    let rms = |v: &[f64]| (v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64).sqrt();
    println!(
        "{km} km, seed {seed}: {} readings, {} elements, whole process {secs:.2} s",
        st.len(),
        fit.elements.len()
    );
    println!(
        "placed design to measured centreline: first station {:.4} m, largest {:.4} m, RMS {:.4} m",
        placed[0],
        max(&placed),
        rms(&placed)
    );
    println!(
        "rigidly placed versine-only design:   first station {:.4} m, largest {:.4} m, RMS {:.4} m",
        rigid_d[0],
        max(&rigid_d),
        rms(&rigid_d)
    );
    Ok(())
}
