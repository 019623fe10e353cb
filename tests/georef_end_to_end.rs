//! End to end: a simulated survey of the (invented) Eastvale design, placed on
//! the Earth by a start point or by control points, integrated, and compared
//! with the design mapped through an independent placement.

mod common;
use common::plan_of;

use common::skip;
use std::path::Path;

use chordline::geometry::heading_to_bearing;
use chordline::georef::{
    ControlFile, GeorefArgs, LonLat, Placement, StartPoint, leave_one_out, prepare,
};
use chordline::integrate::{IntegrateOptions, Plan, integrate};
use chordline::simulate::{Design, Simulated, simulate};
use chordline::survey::Setup;
use geographiclib_rs::{Geodesic, InverseGeodesic};

fn eastvale() -> Option<(Design, Simulated)> {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/eastvale-design.json");
    let text = std::fs::read_to_string(&p).ok()?;
    let mut d = Design::from_json("eastvale-design.json", &text).unwrap();
    // Exact readings: what is left is the method, not the noise.
    d.setup.noise_sd = 0.0;
    d.setup.resolution = 0.0;
    d.setup.irregularity_rms = 0.0;
    let sim = simulate(&d.alignment(), &d.setup).unwrap();
    Some((d, sim))
}

fn setup(d: &Design) -> Setup {
    let mut s = Setup::new(d.setup.chord, d.setup.rail);
    s.gauge = d.setup.gauge;
    s.marking = d.setup.marking;
    s
}

/// The design's own placement: design frame = local frame of this placement.
fn truth_placement() -> Placement {
    Placement::new(LonLat::new(9.1234, 48.5678).unwrap(), 0.0).unwrap()
}

/// Largest geodesic distance between the integrated and the true centreline.
fn worst(plan: &Plan, pl: &Placement, sim: &Simulated) -> f64 {
    let g = Geodesic::wgs84();
    let tp = truth_placement();
    let mut w: f64 = 0.0;
    for (st, t) in plan.stations.iter().zip(&sim.truth) {
        let (lon, lat) = pl.to_lonlat(st.x, st.y);
        let (tlon, tlat) = tp.to_lonlat(t.centre.x, t.centre.y);
        let d: f64 = g.inverse(lat, lon, tlat, tlon);
        w = w.max(d);
    }
    w
}

#[test]
fn start_point_and_bearing_place_the_survey() {
    let Some((d, sim)) = eastvale() else {
        skip::skipped(
            "georef_end_to_end",
            "demo-data/eastvale-design.json is absent",
        );
        return;
    };
    let t0 = sim.truth[0].centre;
    let (lon, lat) = truth_placement().to_lonlat(t0.x, t0.y);
    let args = GeorefArgs {
        start: Some(StartPoint::LonLat(LonLat::new(lon, lat).unwrap())),
        start_bearing: Some(heading_to_bearing(t0.heading)),
        ..Default::default()
    };
    let g = prepare(&args, &sim.survey).unwrap().0.unwrap();
    let opts = IntegrateOptions {
        start: g.start,
        position_obs: g.position_obs.clone(),
    };
    let (plan, _) = integrate(&sim.survey, &setup(&d), &opts).unwrap();
    let w = worst(&plan, &g.placement, &sim);
    eprintln!("start point: worst {:.2} mm", w * 1e3);
    assert!(w < 0.005, "{w}");
}

fn control_file(sim: &Simulated, picks: &[usize], shift: Option<(usize, f64)>) -> String {
    let tp = truth_placement();
    let mut s = String::from(
        "# invented control points for the Eastvale demo design\nid,chainage_m,lon_deg,lat_deg,sd_m\n",
    );
    for (k, &i) in picks.iter().enumerate() {
        let t = &sim.truth[i];
        let mut p = t.centre;
        if let Some((which, by)) = shift
            && which == k
        {
            p = chordline::geometry::Pose { x: p.x + by, ..p };
        }
        let (lon, lat) = tp.to_lonlat(p.x, p.y);
        s.push_str(&format!(
            "P{k},{:.4},{lon:.10},{lat:.10},0.005\n",
            t.chainage
        ));
    }
    s
}

#[test]
fn control_points_place_the_survey_and_catch_a_bad_one() {
    let Some((d, sim)) = eastvale() else {
        skip::skipped(
            "georef_end_to_end",
            "demo-data/eastvale-design.json is absent",
        );
        return;
    };
    let n = sim.truth.len();
    let picks = [2, n / 3, 2 * n / 3, n - 3];
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("cp.csv");
    std::fs::write(&path, control_file(&sim, &picks, None)).unwrap();
    let args = GeorefArgs {
        control: Some(ControlFile::read(&path).unwrap()),
        ..Default::default()
    };
    let g = prepare(&args, &sim.survey).unwrap().0.unwrap();
    let st = setup(&d);
    let solve = |obs: &[chordline::integrate::PositionObs]| {
        let o = IntegrateOptions {
            start: g.start,
            position_obs: obs.to_vec(),
        };
        integrate(&sim.survey, &st, &o).map(|(p, _)| p)
    };
    let plan = solve(&g.position_obs).unwrap();
    let w = worst(&plan, &g.placement, &sim);
    eprintln!("control points: worst {:.2} mm", w * 1e3);
    assert!(w < 0.005, "{w}");
    let loo = leave_one_out(&g.position_obs, solve).unwrap();
    let (checks, diags) = g.assess(&plan.position_residuals, &loo);
    assert!(checks.iter().all(|c| !c.flagged), "{checks:?}");
    assert!(diags.is_empty(), "{diags:?}");

    // Third point (line 5 of the file) 0.3 m east of the track.
    std::fs::write(&path, control_file(&sim, &picks, Some((2, 0.3)))).unwrap();
    let args = GeorefArgs {
        control: Some(ControlFile::read(&path).unwrap()),
        ..Default::default()
    };
    let g = prepare(&args, &sim.survey).unwrap().0.unwrap();
    let solve = |obs: &[chordline::integrate::PositionObs]| {
        let o = IntegrateOptions {
            start: g.start,
            position_obs: obs.to_vec(),
        };
        integrate(&sim.survey, &st, &o).map(|(p, _)| p)
    };
    let plan = solve(&g.position_obs).unwrap();
    let loo = leave_one_out(&g.position_obs, solve).unwrap();
    let (checks, diags) = g.assess(&plan.position_residuals, &loo);
    let bad = checks.iter().find(|c| c.id == "P2").unwrap();
    assert!(bad.flagged);
    // Only the blunder is flagged, with one warning naming its line.
    assert_eq!(checks.iter().filter(|c| c.flagged).count(), 1);
    assert_eq!(diags.len(), 1, "{diags:?}");
    let l = bad.loo_discrepancy.unwrap();
    assert!((l - 0.3).abs() < 0.01, "{l}");
    assert!(
        diags
            .iter()
            .any(|d| d.location.as_ref().is_some_and(|l| l.line == 5)),
        "{diags:?}"
    );
}

#[test]
fn noisy_survey_with_good_control_points_raises_no_flags() {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/eastvale-design.json");
    let Ok(text) = std::fs::read_to_string(&p) else {
        skip::skipped(
            "georef_end_to_end",
            "demo-data/eastvale-design.json is absent",
        );
        return;
    };
    // The demo's own noise: 0.8 mm readings, 1 mm rounding, 1 mm RMS irregularity.
    let d = Design::from_json("eastvale-design.json", &text).unwrap();
    let sim = simulate(&d.alignment(), &d.setup).unwrap();
    let n = sim.truth.len();
    let picks = [2, n / 3, 2 * n / 3, n - 3];
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("cp.csv");
    std::fs::write(&path, control_file(&sim, &picks, None)).unwrap();
    let args = GeorefArgs {
        control: Some(ControlFile::read(&path).unwrap()),
        ..Default::default()
    };
    let g = prepare(&args, &sim.survey).unwrap().0.unwrap();
    let st = setup(&d);
    let solve = |obs: &[chordline::integrate::PositionObs]| {
        let o = IntegrateOptions {
            start: g.start,
            position_obs: obs.to_vec(),
        };
        integrate(&sim.survey, &st, &o).map(|(p, _)| p)
    };
    let plan = solve(&g.position_obs).unwrap();
    let w = worst(&plan, &g.placement, &sim);
    let loo = leave_one_out(&g.position_obs, solve).unwrap();
    let (checks, diags) = g.assess(&plan.position_residuals, &loo);
    eprintln!("noisy, control points: worst {:.1} mm", w * 1e3);
    // Good points, realistic noise: no point is flagged.
    assert!(checks.iter().all(|c| !c.flagged), "{checks:?}");
    assert!(diags.is_empty(), "{diags:?}");
    // The placement is as good as the integration (tens of mm with this
    // noise near the ends of the survey), far from a placement blunder.
    assert!(w < 0.1, "{w}");
}

#[test]
fn fitted_design_goes_onto_the_map_and_into_the_grid() {
    use chordline::export::geojson::{ElementProps, GeoJsonInput, build_layers};
    use chordline::export::landxml::{LandXmlFrame, LandXmlOptions, build_landxml};
    use chordline::fit::{FitOptions, fit};
    let Some((d, _)) = eastvale() else {
        skip::skipped(
            "georef_end_to_end",
            "demo-data/eastvale-design.json is absent",
        );
        return;
    };
    // Control points in ETRS89 / UTM 32N.
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/eastvale-design.json");
    let dd = Design::from_json("x", &std::fs::read_to_string(p).unwrap()).unwrap();
    // Exact readings, so that what is left is the chain of methods: the
    // stations land within 0.1 mm (tests above); the fitted joints within
    // about 13 mm (observed 12.5 mm: the fit's own joint placement).
    let mut su = dd.setup.clone();
    su.noise_sd = 0.0;
    su.irregularity_rms = 0.0;
    su.resolution = 0.0;
    let sim = simulate(&dd.alignment(), &su).unwrap();
    let n = sim.truth.len();
    let crs: chordline::georef::Crs = "EPSG:25832".parse().unwrap();
    let tp = truth_placement();
    let mut text = String::from("id,chainage_m,easting_m,northing_m,sd_m\n");
    for (k, i) in [2, n / 3, 2 * n / 3, n - 3].into_iter().enumerate() {
        let t = &sim.truth[i];
        let (lon, lat) = tp.to_lonlat(t.centre.x, t.centre.y);
        let (e, nn) = crs.from_lonlat(lon, lat).unwrap();
        text.push_str(&format!("C{k},{:.4},{e:.4},{nn:.4},0.01\n", t.chainage));
    }
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("cp.csv");
    std::fs::write(&path, text).unwrap();
    let args = GeorefArgs {
        control: Some(ControlFile::read(&path).unwrap()),
        crs: Some("EPSG:25832".parse().unwrap()),
        ..Default::default()
    };
    let g = prepare(&args, &sim.survey).unwrap().0.unwrap();
    let st = setup(&d);
    let o = IntegrateOptions {
        start: g.start,
        position_obs: g.position_obs.clone(),
    };
    let (plan, _) = integrate(&sim.survey, &st, &o).unwrap();
    let (f, _) = fit(&plan_of(&sim.survey, &st), &FitOptions::default()).unwrap();
    let pts: Vec<(f64, f64, f64)> = plan
        .stations
        .iter()
        .map(|s| (s.chainage, s.x, s.y))
        .collect();
    let placed = f.place(&pts);
    let props: Vec<ElementProps> = f.elements.iter().map(ElementProps::from_fitted).collect();
    let (checks, _) = g.assess(&plan.position_residuals, &[]);

    let layers = build_layers(&GeoJsonInput {
        placement: &g.placement,
        stations: &plan.stations,
        design: Some((&placed, &props)),
        controls: Some((g.controls.as_ref().unwrap(), &checks)),
    })
    .unwrap();
    let doc = &layers
        .iter()
        .find(|l| l.file == "joints.geojson")
        .unwrap()
        .doc;
    // Every joint lies on the true centreline (the design, in the frame of
    // the independent truth placement) to within a few centimetres.
    let design = dd.alignment();
    let dist_to_design = |x: f64, y: f64| {
        let d = |s: f64| {
            let q = design.pose_at(s);
            (q.x - x).hypot(q.y - y)
        };
        let mut best = (0.0, f64::INFINITY);
        let mut s = 0.0;
        while s <= design.length() {
            let v = d(s);
            if v < best.1 {
                best = (s, v);
            }
            s += 0.5;
        }
        // Golden-section refinement around the best sample.
        let (mut lo, mut hi) = (best.0 - 0.5, best.0 + 0.5);
        for _ in 0..60 {
            let m1 = lo + 0.382 * (hi - lo);
            let m2 = lo + 0.618 * (hi - lo);
            if d(m1) < d(m2) {
                hi = m2;
            } else {
                lo = m1;
            }
        }
        d(0.5 * (lo + hi))
    };
    let mut joints = 0;
    let mut worst_joint: f64 = 0.0;
    for f in doc["features"].as_array().unwrap() {
        joints += 1;
        let c = f["geometry"]["coordinates"].as_array().unwrap();
        let (x, y) = tp.to_local(c[0].as_f64().unwrap(), c[1].as_f64().unwrap());
        worst_joint = worst_joint.max(dist_to_design(x, y));
    }
    eprintln!(
        "joints: worst {:.1} mm off the true centreline",
        worst_joint * 1e3
    );
    assert!(worst_joint < 0.02, "{worst_joint}");
    assert_eq!(joints, f.elements.len() - 1);

    // LandXML in the grid validates and starts where the GeoJSON starts.
    let xml = build_landxml(
        &placed,
        &props,
        LandXmlFrame::Grid {
            placement: &g.placement,
            crs: g.crs.as_ref().unwrap(),
        },
        &LandXmlOptions::default(),
    )
    .unwrap();
    let xsd = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/standards/LandXML-1.2.xsd");
    let lint = std::process::Command::new("xmllint")
        .arg("--version")
        .output();
    if xsd.exists() && lint.is_ok_and(|o| o.status.success()) {
        let px = dir.path().join("alignment.xml");
        std::fs::write(&px, &xml).unwrap();
        let o = std::process::Command::new("xmllint")
            .arg("--noout")
            .arg("--schema")
            .arg(&xsd)
            .arg(&px)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    } else {
        skip::skipped(
            "LandXML schema validation (georef_end_to_end)",
            "xmllint or ../shared/standards/LandXML-1.2.xsd is absent",
        );
    }
    let p0 = placed.element_pose(0);
    let (e0, n0) = g.grid(p0.x, p0.y).unwrap().unwrap();
    assert!(xml.contains(&format!("<Start>{n0:.5} {e0:.5}</Start>")));
}
