//! How close the grids and the local frame are to PROJ, over every recorded
//! reference point (`tests/fixtures/georef/pyproj_points.csv` and
//! `pyproj_aeqd.csv`, pyproj 3.7.2 / PROJ 9.5.1), and the datum shift PROJ's
//! default uses for a few grids with the accuracy EPSG states for it.
//!
//! ```sh
//! cargo run --release --example georef_vs_proj
//! ```

use chordline::georef::{Crs, GridUnit, LonLat, Placement, supported_codes};
use std::collections::BTreeMap;

fn rows(file: &str) -> Vec<Vec<String>> {
    let p = format!(
        "{}/tests/fixtures/georef/{file}",
        env!("CARGO_MANIFEST_DIR")
    );
    std::fs::read_to_string(p)
        .expect("fixture")
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("code") && !l.starts_with("origin"))
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect()
}

fn main() {
    let mut crs: BTreeMap<u32, Crs> = BTreeMap::new();
    // (points, worst forward m, worst inverse m) per grid unit.
    let mut by_unit: BTreeMap<&str, (usize, f64, f64)> = BTreeMap::new();
    for r in rows("pyproj_points.csv") {
        let f = |i: usize| r[i].parse::<f64>().unwrap();
        let code: u32 = r[0].parse().unwrap();
        let c = crs
            .entry(code)
            .or_insert_with(|| Crs::from_epsg(code).unwrap());
        let m = c.unit().metres();
        let (e, n) = c.from_lonlat(f(1), f(2)).unwrap();
        let fwd = (e - f(3)).hypot(n - f(4)) * m;
        let (lon, lat) = c.to_lonlat(f(3), f(4)).unwrap();
        let (e2, n2) = c.from_lonlat(lon, lat).unwrap();
        let inv = (e2 - f(3)).hypot(n2 - f(4)) * m;
        let key = match c.unit() {
            GridUnit::Metre => "metre grids",
            GridUnit::UsSurveyFoot => "US survey foot grids",
            GridUnit::Foot => "international foot grids",
        };
        let w = by_unit.entry(key).or_default();
        *w = (w.0 + 1, w.1.max(fwd), w.2.max(inv));
    }
    println!(
        "{} supported grids, {} with reference points",
        supported_codes().len(),
        crs.len()
    );
    println!("| grids | points | worst forward vs PROJ | worst inverse (grid → lon/lat → grid) |");
    println!("|---|---|---|---|");
    for (k, (n, f, i)) in &by_unit {
        println!("| {k} | {n} | {:.4} mm | {:.4} mm |", f * 1e3, i * 1e3);
    }
    let mut worst: f64 = 0.0;
    for r in rows("pyproj_aeqd.csv") {
        let f = |i: usize| r[i].parse::<f64>().unwrap();
        let pl = Placement::new(LonLat::new(f(0), f(1)).unwrap(), f(2)).unwrap();
        let (lon, lat) = pl.to_lonlat(f(4), f(5));
        // Metres on the ground: 1° of latitude ≈ 111 km, of longitude × cos φ.
        let d = ((lon - f(6)) * f(7).to_radians().cos()).hypot(lat - f(7)) * 111_195.0;
        worst = worst.max(d);
    }
    println!(
        "local frame vs PROJ reading the alignment.xml WKT (15 points up to 47 km out): worst {:.6} mm",
        worst * 1e3
    );
    println!("| grid | at | datum shift (PROJ 9.5 default, no grid files) | stated accuracy |");
    println!("|---|---|---|---|");
    for (code, lon, lat) in [
        (32632, 9.0, 48.0),
        (25832, 9.0, 48.0),
        (27700, -1.55, 53.8),
        (31467, 9.2, 48.7),
        (2056, 7.44, 46.95),
        (5514, 14.42, 50.08),
        (5514, 17.1, 48.15),
        (2229, -118.2, 34.05),
        (6420, -121.5, 38.5),
        (2263, -73.9, 40.7),
    ] {
        let c = Crs::from_epsg(code).unwrap();
        let (t, acc) = c.transformation_at(lon, lat);
        let shift = t.split(" + ").next().unwrap_or(t);
        let shift = if acc == 0.0 {
            "none (on WGS 84)"
        } else {
            shift
        };
        println!(
            "| EPSG:{code} {} | {lon}, {lat} | {shift} | {acc} m |",
            c.name()
        );
    }
}
