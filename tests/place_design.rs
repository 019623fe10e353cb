//! The fitted design placed in the plan: through the control points within
//! their uncertainty (the demo's invented control file, demo-data/
//! eastvale-control.csv, in the grid), on the measured centreline along a long
//! simulated survey, and at the distance from it that the slews give.

mod common;

use chordline::geometry::{Alignment, Pose};
use chordline::pipeline::{Options, process};
use chordline::simulate::{SimSetup, simulate, synthetic_route};
use chordline::survey::{Marking, Rail};
use common::{csv_rows as rows, run_demo_to, stderr};
use std::path::Path;

/// The placed demo's design (grid coordinates in stations.csv) against each
/// control point of the file (grid coordinates as given): within two standard
/// deviations, where the rigid placement of the versine-only design missed
/// them by 69–188 mm.
#[test]
fn the_placed_demo_design_passes_its_control_points() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("placed");
    let ctl = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/eastvale-control.csv");
    let c = ctl.display().to_string();
    let o = run_demo_to(&out, &["--control", &c, "--crs", "EPSG:25832", "--slews"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let st = rows(&out.join("stations.csv"));
    let controls = rows(&ctl);
    assert_eq!(controls.len(), 4);
    for cp in &controls {
        let s = st
            .iter()
            .find(|s| (s["chainage_m"] - cp["chainage_m"]).abs() < 1e-6)
            .expect("a station at the control point");
        let d = (s["design_easting_m"] - cp["easting_m"])
            .hypot(s["design_northing_m"] - cp["northing_m"]);
        assert!(
            d <= 2.0 * cp["sd_m"],
            "control at {}: design {:.1} mm away, sd {:.1} mm",
            cp["chainage_m"],
            d * 1e3,
            cp["sd_m"] * 1e3
        );
    }
    // The design-to-measured distance at every station against the slews
    // (slew positive left = the design lies left of the track): the same to
    // well under a millimetre, as the slews are the distances to the placed
    // design (before they were a versine-space solve and up to 94 mm apart;
    // tests/slews_placed.rs checks the same against the curve of the
    // design).
    for w in st.windows(3) {
        let (a, s, b) = (&w[0], &w[1], &w[2]);
        let (tx, ty) = (
            b["design_easting_m"] - a["design_easting_m"],
            b["design_northing_m"] - a["design_northing_m"],
        );
        let t = tx.hypot(ty);
        let (nx, ny) = (-ty / t, tx / t);
        let design_left_of_track = (s["design_easting_m"] - s["easting_m"]) * nx
            + (s["design_northing_m"] - s["northing_m"]) * ny;
        let slew = s["slew_mm"] * 1e-3;
        assert!(
            (design_left_of_track - slew).abs() < 0.001,
            "at {}: design {:.2} mm left of the track, slew {:.2} mm",
            s["chainage_m"],
            design_left_of_track * 1e3,
            slew * 1e3
        );
    }
}

/// Tolerance of the long-survey check (m): the design may leave the measured
/// centreline by what the residuals integrate to over one element (on long
/// straights the measured centreline wanders by centimetres from the reading
/// noise alone; 0.15 m is a stated bound, measured 0.08 m at 30 km and 0.12 m
/// at 100 km with the bench's survey, `benches/whole_process.sh`).
const LONG_TOLERANCE: f64 = 0.15;

/// A 25 km recording-vehicle survey (10 m beam, a reading every 0.5 m, 0.3 mm
/// noise): the design never leaves the measured centreline by more than
/// [`LONG_TOLERANCE`], from the first station to the last (a rigid placement
/// of the versine-only design was 1.3 m off on 30 km).
#[test]
fn on_a_long_survey_the_design_follows_the_measured_centreline() {
    let route = Alignment::new(Pose::default(), 0.0, synthetic_route(25_000.0, 11));
    let mut ss = SimSetup::classic(10.0, Rail::Left);
    ss.spacing = 0.5;
    ss.marking = Marking::Wire;
    ss.noise_sd = 0.0003;
    ss.resolution = 0.0001;
    ss.seed = 11;
    let sim = simulate(&route, &ss).unwrap();
    let mut opts = Options::new(10.0, Rail::Left);
    opts.setup.marking = Marking::Wire;
    let res = process(sim.survey, &opts).unwrap();
    let (_, at, _) = res.design.as_ref().expect("a fitted design");
    assert_eq!(at.len(), res.plan.stations.len());
    let mut worst = (0.0f64, 0.0);
    for (&(x, y), s) in at.iter().zip(&res.plan.stations) {
        let off = (x - s.x).hypot(y - s.y);
        if off > worst.0 {
            worst = (off, s.chainage);
        }
    }
    assert!(
        worst.0 <= LONG_TOLERANCE,
        "the design is {:.3} m from the measured centreline at {:.1} m",
        worst.0,
        worst.1
    );
    let first = (at[0].0 - res.plan.stations[0].x).hypot(at[0].1 - res.plan.stations[0].y);
    assert!(first <= 0.05, "{first:.3} m at the first station");
}
