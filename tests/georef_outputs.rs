//! Placed outputs in the grid: `stations.csv` and `elements.csv` with
//! `--crs`, feet grids, and the area-of-use refusals with their hints.
//! Grid values are checked against the grids as checked against PROJ
//! (`tests/georef_pyproj.rs`, pyproj 3.7.2 / PROJ 9.5.1) and against the
//! demo's control points (invented, demo-data/eastvale-control.csv).

mod common;

use chordline::georef::Crs;
use common::{check_contract, run_demo_to, stderr};
use std::collections::HashMap;
use std::path::Path;

fn control() -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-data/eastvale-control.csv")
        .display()
        .to_string()
}

/// A CSV file as header → column of strings.
fn table(p: &Path) -> (Vec<String>, Vec<HashMap<String, String>>) {
    let mut rd = csv::Reader::from_path(p).unwrap();
    let h: Vec<String> = rd.headers().unwrap().iter().map(str::to_string).collect();
    let rows = rd
        .records()
        .map(|r| {
            let r = r.unwrap();
            h.iter()
                .cloned()
                .zip(r.iter().map(str::to_string))
                .collect()
        })
        .collect();
    (h, rows)
}

fn f(r: &HashMap<String, String>, k: &str) -> f64 {
    r.get(k)
        .unwrap_or_else(|| panic!("no column {k}"))
        .parse()
        .unwrap_or_else(|_| panic!("{k} = {:?}", r[k]))
}

#[test]
fn placed_stations_and_elements_are_in_the_grid() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("placed");
    let c = control();
    let o = run_demo_to(&out, &["--control", &c, "--crs", "EPSG:25832"]);
    assert!(o.status.success(), "{}", stderr(&o));
    check_contract(&out);
    let (h, st) = table(&out.join("stations.csv"));
    for col in [
        "easting_m",
        "northing_m",
        "local_easting_m",
        "local_northing_m",
        "design_easting_m",
    ] {
        assert!(h.iter().any(|x| x == col), "{col} in {h:?}");
    }
    // The first control point CP1 (chainage 12310, 509103.610, 5379429.311,
    // sd 10 mm) is the first station: the plan passes it within its sd.
    let s0 = &st[0];
    assert_eq!(f(s0, "chainage_m"), 12310.0);
    let d = (f(s0, "easting_m") - 509103.610).hypot(f(s0, "northing_m") - 5379429.311);
    assert!(d < 0.02, "{d}");
    assert!(f(s0, "local_easting_m").hypot(f(s0, "local_northing_m")) < 0.02);
    // Grid and longitude/latitude columns describe the same points (the
    // grid as checked against PROJ): 1e-8° ≈ 1 mm (CHECKS.md 5.1) plus the
    // 4-decimal rounding.
    let crs = Crs::from_epsg(25832).unwrap();
    for r in &st {
        let (lon, lat) = crs
            .to_lonlat(f(r, "easting_m"), f(r, "northing_m"))
            .unwrap();
        assert!((lon - f(r, "longitude_deg")).abs() < 2e-8, "{lon}");
        assert!((lat - f(r, "latitude_deg")).abs() < 2e-8, "{lat}");
    }

    let (h, el) = table(&out.join("elements.csv"));
    assert!(h.iter().any(|x| x == "clothoid_a_m"), "{h:?}");
    for w in el.windows(2) {
        // Consecutive elements join in position and bearing.
        let gap = (f(&w[0], "end_easting_m") - f(&w[1], "start_easting_m"))
            .hypot(f(&w[0], "end_northing_m") - f(&w[1], "start_northing_m"));
        assert!(gap < 2e-4, "{gap}");
        assert!((f(&w[0], "end_bearing_deg") - f(&w[1], "start_bearing_deg")).abs() < 2e-6);
    }
    for e in &el {
        match e["kind"].as_str() {
            // A straight's ends are its length apart, times the UTM scale
            // k = 0.9996 (1 + x²/2R²) ≈ 0.9996 near the central meridian
            // (x ≈ 9 km; Snyder, "Map Projections: A Working Manual", 1987, eq. 8-11).
            "straight" => {
                let chord = (f(e, "end_easting_m") - f(e, "start_easting_m"))
                    .hypot(f(e, "end_northing_m") - f(e, "start_northing_m"));
                // The placed length: the one the coordinates are drawn with.
                let len = f(e, "placed_length_m");
                let k = chord / len;
                // Tolerance: the written rounding (length 0.5 mm, ends 0.05 mm each)
                // and x²/2R² ≈ 1e-6.
                assert!((k - 0.9996).abs() < 1.5e-6 + 7e-4 / len, "{k}");
            }
            // A transition from or to a straight: A² = R·L (clothoid definition).
            "transition" => {
                let rad = ["placed_start_radius_m", "placed_end_radius_m"]
                    .iter()
                    .find_map(|k| e[*k].parse::<f64>().ok())
                    .unwrap()
                    .abs();
                let a = f(e, "clothoid_a_m");
                let rl = rad * f(e, "placed_length_m");
                assert!((a * a - rl).abs() / rl < 1e-4, "{a} {rad}");
            }
            _ => assert!(e["clothoid_a_m"].is_empty()),
        }
    }
}

#[test]
fn a_feet_grid_gives_outputs_in_feet() {
    // A point of NAD83 / California zone 5 (ftUS) from the pyproj fixture
    // area; the start is put there and comes back in US survey feet.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("ft");
    let o = run_demo_to(
        &out,
        &[
            "--start-grid",
            "6431308.4,1836394.8",
            "--start-bearing",
            "30",
            "--crs",
            "EPSG:2229",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stderr(&o).contains("good to 4 m"), "{}", stderr(&o));
    let (h, st) = table(&out.join("stations.csv"));
    assert!(h.iter().any(|x| x == "easting_usft") && h.iter().any(|x| x == "local_easting_m"));
    assert_eq!(f(&st[0], "easting_usft"), 6431308.4);
    assert_eq!(f(&st[0], "northing_usft"), 1836394.8);
    // 1 km of track is 3280.8 US survey feet (1200/3937 m; NIST SP 811),
    // times the grid's scale (Lambert conformal, within 1e-4 of 1 here).
    let last = st.last().unwrap();
    let ground = f(last, "local_easting_m").hypot(f(last, "local_northing_m"));
    let grid = (f(last, "easting_usft") - 6431308.4).hypot(f(last, "northing_usft") - 1836394.8);
    let k = grid * 1200.0 / 3937.0 / ground;
    assert!((k - 1.0).abs() < 1e-4, "{k}");
    let (h, _) = table(&out.join("elements.csv"));
    assert!(h.iter().any(|x| x == "start_easting_usft"), "{h:?}");
}

fn refused(extra: &[&str]) -> String {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("o");
    let o = run_demo_to(&out, extra);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(!out.exists(), "nothing is written");
    stderr(&o)
}

#[test]
fn points_outside_the_grid_are_refused_naming_the_likely_mistake() {
    let c = control();
    // UTM 32N figures named as Gauss-Krüger zone 3 or Swiss LV95.
    for code in ["EPSG:31467", "EPSG:2056"] {
        let e = refused(&["--control", &c, "--crs", code]);
        assert!(
            e.contains("outside the area of use") && e.contains("UTM zone 32N"),
            "{e}"
        );
        assert!(
            e.contains("eastvale-control.csv:4") && e.contains("--allow-outside-area"),
            "{e}"
        );
    }
    // Easting and northing swapped.
    let e = refused(&[
        "--start-grid",
        "5379429.311,509103.610",
        "--start-bearing",
        "0",
        "--crs",
        "EPSG:25832",
    ]);
    assert!(e.contains("swapped"), "{e}");
    // Longitude and latitude swapped.
    let e = refused(&[
        "--start-lonlat",
        "48.5679,9.1234",
        "--start-bearing",
        "0",
        "--crs",
        "EPSG:25832",
    ]);
    assert!(e.contains("longitude and latitude look swapped"), "{e}");
    // A local site grid.
    let e = refused(&[
        "--start-grid",
        "1234.5,2345.6",
        "--start-bearing",
        "0",
        "--crs",
        "EPSG:25832",
    ]);
    assert!(e.contains("local site grid"), "{e}");
    // Metres given for a feet grid (the fixture point of EPSG:2229 in metres).
    let (e_ft, n_ft) = (6431308.4 * 1200.0 / 3937.0, 1836394.8 * 1200.0 / 3937.0);
    let at = format!("{e_ft:.3},{n_ft:.3}");
    let e = refused(&[
        "--start-grid",
        &at,
        "--start-bearing",
        "0",
        "--crs",
        "EPSG:2229",
    ]);
    assert!(e.contains("look like metres"), "{e}");
    // The survey runs out of the area: 1.2 km east from 0.01° inside the
    // east edge of UTM zone 32N (12°E, EPSG area 6..12, margin 0.05°).
    let e = refused(&[
        "--start-lonlat",
        "12.045,48.0",
        "--start-bearing",
        "90",
        "--crs",
        "EPSG:32632",
    ]);
    assert!(
        e.contains("the station at chainage") && e.contains("UTM zone 33N"),
        "{e}"
    );
    // The override.
    let dir = tempfile::tempdir().unwrap();
    let o = run_demo_to(
        &dir.path().join("o"),
        &[
            "--control",
            &c,
            "--crs",
            "EPSG:31467",
            "--allow-outside-area",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
}

#[test]
fn world_and_web_mercator_are_refused() {
    for code in ["EPSG:3395", "EPSG:3857"] {
        let e = refused(&[
            "--start-lonlat",
            "9.1,48.5",
            "--start-bearing",
            "0",
            "--crs",
            code,
        ]);
        assert!(e.contains("Mercator") && e.contains("UTM"), "{e}");
    }
}
