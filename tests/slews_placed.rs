//! One design for the slews and the coordinates: at every station the slew
//! is the signed sideways distance from the measured centreline to the design
//! that is placed and written (to well under a millimetre), the design still
//! passes the control points within their uncertainty, and the slew limits
//! hold. On the placed demo (through the binary, from the written files) and
//! on simulated surveys with control points (through the library).

mod common;

use chordline::geometry::{Alignment, Pose};
use chordline::georef::{ControlFile, LonLat, Placement};
use chordline::pipeline::{Options, process};
use chordline::realign::SlewOptions;
use chordline::simulate::{SimSetup, simulate, synthetic_route};
use chordline::survey::{Marking, Rail};
use common::{csv_rows as rows, run_demo_to, stderr};
use std::path::Path;

/// How far the slew may be from the distance to the written design (m).
const AGREE: f64 = 0.001;

/// Signed distance from `q` to the curve through the design points `a`,
/// `p`, `b` (in order along the track), positive when the curve lies to the
/// left of `q`: the circle through the three points (a straight line when
/// they are in line), which follows the design to micrometres over a few
/// stations.
fn distance_to_curve(a: (f64, f64), p: (f64, f64), b: (f64, f64), q: (f64, f64)) -> f64 {
    let (tx, ty) = (b.0 - a.0, b.1 - a.1);
    let t = tx.hypot(ty);
    let (ax, ay) = (p.0 - a.0, p.1 - a.1);
    let (bx, by) = (b.0 - a.0, b.1 - a.1);
    let det = 2.0 * (ax * by - ay * bx);
    let foot = if det.abs() < 1e-9 * t * t {
        // A line: the foot of the perpendicular.
        let s = ((q.0 - a.0) * tx + (q.1 - a.1) * ty) / (t * t);
        (a.0 + s * tx, a.1 + s * ty)
    } else {
        let (a2, b2) = (ax * ax + ay * ay, bx * bx + by * by);
        let cx = a.0 + (by * a2 - ay * b2) / det;
        let cy = a.1 + (ax * b2 - bx * a2) / det;
        let r = (a.0 - cx).hypot(a.1 - cy);
        let d = (q.0 - cx).hypot(q.1 - cy);
        (cx + r * (q.0 - cx) / d, cy + r * (q.1 - cy) / d)
    };
    let (dx, dy) = (foot.0 - q.0, foot.1 - q.1);
    let side = (tx * dy - ty * dx).signum();
    side * dx.hypot(dy)
}

/// Every station of a run's `stations.csv`: |slew − distance to the written
/// design| within [`AGREE`]; returns the largest |slew| (mm).
fn slews_agree_with_the_design(out: &Path) -> f64 {
    let st = rows(&out.join("stations.csv"));
    assert!(st.len() > 10);
    let n = st.len();
    let pt = |i: usize, e: &str, no: &str| (st[i][e], st[i][no]);
    let mut largest = 0.0f64;
    for (i, row) in st.iter().enumerate() {
        let k = i.clamp(1, n - 2);
        let d = distance_to_curve(
            pt(k - 1, "design_easting_m", "design_northing_m"),
            pt(k, "design_easting_m", "design_northing_m"),
            pt(k + 1, "design_easting_m", "design_northing_m"),
            (row["easting_m"], row["northing_m"]),
        );
        let slew = row["slew_mm"] * 1e-3;
        assert!(
            (slew - d).abs() < AGREE,
            "at {}: slew {:.2} mm, the written design {:.2} mm left of the measured centreline",
            row["chainage_m"],
            slew * 1e3,
            d * 1e3
        );
        largest = largest.max(slew.abs() * 1e3);
    }
    largest
}

fn demo_control() -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-data/eastvale-control.csv")
        .display()
        .to_string()
}

/// The placed demo (control points, UTM grid): the slews are the distances
/// to the written design (before: up to 460 mm apart, within the slews' sd
/// only), and the sheet says so.
#[test]
fn on_the_placed_demo_the_slews_are_the_distances_to_the_written_design() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("placed");
    let c = demo_control();
    let o = run_demo_to(&out, &["--control", &c, "--crs", "EPSG:25832", "--slews"]);
    assert!(o.status.success(), "{}", stderr(&o));
    slews_agree_with_the_design(&out);
    let sheet = std::fs::read_to_string(out.join("slews.csv")).unwrap();
    assert!(sheet.contains("sideways distances from the measured centreline to the placed design"));
    assert!(sheet.contains("indicative"));
}

/// With a largest slew the placed design can meet (15 mm; 21.5 mm without
/// it), the design is bent to it: every slew within it, still the distance
/// to the written design, and the ends held.
#[test]
fn a_slew_limit_bends_the_written_design() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("placed");
    let c = demo_control();
    let args = [
        "--control",
        &c,
        "--crs",
        "EPSG:25832",
        "--slews",
        "--max-slew",
        "15mm",
    ];
    let o = run_demo_to(&out, &args);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        !stderr(&o).contains("cannot meet the slew limits"),
        "{}",
        stderr(&o)
    );
    let largest = slews_agree_with_the_design(&out);
    // 0.005: the two decimals of slew_mm.
    assert!(largest <= 15.005, "{largest} mm");
    assert!(largest >= 14.9, "the limit binds: {largest} mm");
    let st = rows(&out.join("stations.csv"));
    for s in [&st[0], &st[st.len() - 1]] {
        assert!(s["slew_mm"].abs() <= 0.05, "held end: {s:?}");
    }
}

/// A simulated survey with four control points (sd 10 mm, given as
/// longitude/latitude, each a few millimetres off the truth).
fn simulated_with_controls(seed: u64, max_slew: Option<f64>) -> chordline::pipeline::Results {
    simulated_marked(seed, max_slew, Marking::Taped)
}

/// [`simulated_with_controls`] with the marks taped or a rigid wire.
fn simulated_marked(
    seed: u64,
    max_slew: Option<f64>,
    marking: Marking,
) -> chordline::pipeline::Results {
    let route = Alignment::new(Pose::default(), 0.0, synthetic_route(2500.0, seed));
    let mut ss = SimSetup::classic(20.0, Rail::Left);
    ss.spacing = 5.0;
    ss.noise_sd = 0.0005;
    ss.resolution = 0.0001;
    ss.seed = seed;
    ss.marking = marking;
    let sim = simulate(&route, &ss).unwrap();
    let pl = Placement::new(LonLat::new(9.1, 48.6).unwrap(), 0.0).unwrap();
    let n = sim.truth.len();
    let mut text = String::from("id,chainage_m,lon_deg,lat_deg,sd_m\n");
    for (k, j) in [0, n / 3, 2 * n / 3, n - 1].into_iter().enumerate() {
        let t = &sim.truth[j];
        // Off by up to 5 mm, a different way at each point.
        let off = 0.005 * [0.3, -0.8, 1.0, -0.4][k];
        let (lon, lat) = pl.to_lonlat(t.centre.x + off, t.centre.y - 0.5 * off);
        text.push_str(&format!("C{k},{},{lon:.12},{lat:.12},0.01\n", t.chainage));
    }
    let mut opts = Options::new(20.0, Rail::Left);
    opts.setup.marking = marking;
    opts.setup.reading_sd = Some(0.0005);
    opts.georef.control = Some(ControlFile::from_text("controls.csv", &text));
    opts.slew = Some(SlewOptions {
        max_slew,
        ..SlewOptions::default()
    });
    process(sim.survey, &opts).unwrap()
}

/// Signed distance from `(x, y)` to `al` (positive: `al` lies to the left),
/// the foot found from `u` by stepping along the tangent.
fn distance_to(al: &Alignment, mut u: f64, x: f64, y: f64) -> f64 {
    let mut p = al.pose_at(u);
    for _ in 0..50 {
        let along = (x - p.x) * p.heading.cos() + (y - p.y) * p.heading.sin();
        u += along;
        p = al.pose_at(u);
        if along.abs() < 1e-11 {
            break;
        }
    }
    (p.x - x) * -p.heading.sin() + (p.y - y) * p.heading.cos()
}

/// The library's results: every slew against the distance to the design it
/// returns (the one the writers draw), every control point against the
/// design, every slew against the limit; returns the largest |slew| (m).
fn check_simulated(res: &chordline::pipeline::Results, max_slew: Option<f64>) -> f64 {
    let s = res.slews.as_ref().expect("slews");
    assert!(
        s.onto_placed,
        "the slews are onto the placed design: {:?}",
        res.diagnostics
            .iter()
            .filter(|d| d.message.contains("cannot meet"))
            .map(|d| &d.message)
            .collect::<Vec<_>>()
    );
    let (al, at) = design_rows(res);
    let st = &res.plan.stations;
    let mut largest = 0.0f64;
    for (k, &slew) in s.slew.iter().enumerate() {
        let i = s.first + k;
        let u = st[i].chainage - st[0].chainage;
        let d = distance_to(al, u, st[i].x, st[i].y);
        assert!(
            (slew - d).abs() < AGREE,
            "at {}: slew {:.3} mm, design {:.3} mm left",
            st[i].chainage,
            slew * 1e3,
            d * 1e3
        );
        if let Some(m) = max_slew {
            assert!(slew.abs() <= m + 1e-6, "{} m at {}", slew, st[i].chainage);
        }
        largest = largest.max(slew.abs());
    }
    let ends = [s.slew[0], s.slew[s.slew.len() - 1]];
    assert!(ends.iter().all(|e| e.abs() < 1e-6), "held ends: {ends:?}");
    let g = res.georef.as_ref().unwrap();
    let obs = res.plan.position_residuals.len();
    assert_eq!(obs, 4);
    for c in &g.controls.as_ref().unwrap().points {
        let (x, y) = g.placement.to_local(c.lonlat.lon, c.lonlat.lat);
        let j = at
            .iter()
            .position(|d| (d.chainage - c.chainage).abs() < 1e-6)
            .unwrap();
        let miss = (at[j].x - x).hypot(at[j].y - y);
        // Three sd: on these 2.5 km routes with straights of up to 800 m the
        // design placed without slews already passes a control 17.7 mm
        // (1.8 sd) off; a binding limit bends it a little further (24.5 mm).
        assert!(
            miss <= 3.0 * c.sd,
            "control at {}: {:.1} mm",
            c.chainage,
            miss * 1e3
        );
    }
    largest
}

#[test]
fn on_simulated_surveys_with_controls_the_slews_are_the_distances_to_the_design() {
    for seed in [3, 8] {
        let res = simulated_with_controls(seed, None);
        let largest = check_simulated(&res, None);
        // A limit of 85 % of the largest slew binds and holds. (Tighter
        // limits can ask more than an element chain can give: at 75 % the
        // survey of seed 8 would need a straight cut by the survey end to
        // follow the measured centreline's wander, and the slews fall back to
        // versine space with a warning.)
        let limit = 0.85 * largest;
        let res = simulated_with_controls(seed, Some(limit));
        let l2 = check_simulated(&res, Some(limit));
        assert!(
            l2 >= limit - 1e-4,
            "seed {seed}: the limit binds ({l2} of {limit})"
        );
    }
}

/// The design versines written are those of the written design measured as
/// the survey measured the track: the placed chain read by the independent
/// simulator (taped marks every 5 m along the surveyed rail, or a rigid
/// wire, the 20 m chord, no noise) agrees with the design versine of every station to 0.05 mm
/// (the marks of the placed design sit within millimetres of the surveyed
/// ones; a versine changes by under 0.01 mm per millimetre along these
/// curves).
/// The placed design and its rows per station, as `stations.csv` gets them.
fn design_rows(
    res: &chordline::results::Results,
) -> (&Alignment, Vec<chordline::fit::StationDesign>) {
    let (al, xy, _) = res.design.as_ref().expect("a design");
    let rows = (0..xy.len())
        .map(|i| res.station_design(i).unwrap())
        .collect();
    (al, rows)
}

#[test]
fn the_design_versines_are_those_of_the_written_design() {
    for (seed, marking) in [(3, Marking::Taped), (8, Marking::Taped), (3, Marking::Wire)] {
        let res = simulated_marked(seed, None, marking);
        let (al, at) = design_rows(&res);
        let mut ss = SimSetup::classic(20.0, Rail::Left);
        ss.marking = marking;
        ss.spacing = 5.0;
        ss.noise_sd = 0.0;
        ss.resolution = 0.0;
        // The design starts at the first reading with a versine.
        ss.start_chainage = al.start_chainage();
        let k0 = at
            .iter()
            .position(|d| (d.chainage - al.start_chainage()).abs() < 1e-6)
            .unwrap();
        let read = simulate(al, &ss).unwrap();
        let mut compared = 0;
        let mut worst = 0.0f64;
        for (t, d) in read.truth.iter().zip(&at[k0..]) {
            let Some(v) = t.versine else { continue };
            assert!(
                (v - d.design_versine).abs() < 5e-5,
                "seed {seed} at {}: the placed chain reads {:.3} mm, stations.csv has {:.3} mm",
                d.chainage,
                v * 1e3,
                d.design_versine * 1e3
            );
            worst = worst.max((v - d.design_versine).abs());
            compared += 1;
        }
        eprintln!(
            "{marking:?} seed {seed}: design versines within {:.4} mm of the placed chain read by the simulator",
            worst * 1e3
        );
        assert!(compared + 10 > at.len(), "{compared} of {}", at.len());
        assert!(compared > 500);
    }
}
