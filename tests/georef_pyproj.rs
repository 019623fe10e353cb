//! Every supported grid against PROJ: the points recorded in
//! `tests/fixtures/georef/pyproj_points.csv` by
//! `tests/fixtures/georef/make_grids.py` (pyproj 3.7.2 / PROJ 9.5.1 / EPSG
//! v11.022, network off: PROJ's default transformation without grid files).

use chordline::georef::{Crs, supported_codes};
use std::collections::BTreeMap;

struct Point {
    code: u32,
    lon: f64,
    lat: f64,
    e: f64,
    n: f64,
}

fn points() -> Vec<Point> {
    let p = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/georef/pyproj_points.csv"
    );
    let text = std::fs::read_to_string(p).expect("the fixture is part of the repository");
    text.lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("code"))
        .map(|l| {
            let v: Vec<&str> = l.split(',').collect();
            let f = |i: usize| v[i].parse::<f64>().unwrap();
            Point {
                code: v[0].parse().unwrap(),
                lon: f(1),
                lat: f(2),
                e: f(3),
                n: f(4),
            }
        })
        .collect()
}

/// Worst forward difference (metres) and worst round-trip error of the
/// inverse (metres, via the forward) per code.
fn errors() -> BTreeMap<u32, (f64, f64)> {
    let mut worst: BTreeMap<u32, (f64, f64)> = BTreeMap::new();
    let mut crs: BTreeMap<u32, Crs> = BTreeMap::new();
    for p in points() {
        let c = crs
            .entry(p.code)
            .or_insert_with(|| Crs::from_epsg(p.code).unwrap());
        let m = c.unit().metres();
        let (e, n) = c.from_lonlat(p.lon, p.lat).unwrap();
        let fwd = (e - p.e).hypot(n - p.n) * m;
        let (lon, lat) = c.to_lonlat(p.e, p.n).unwrap();
        let (e2, n2) = c.from_lonlat(lon, lat).unwrap();
        let inv = (e2 - p.e).hypot(n2 - p.n) * m;
        let w = worst.entry(p.code).or_default();
        w.0 = w.0.max(fwd);
        w.1 = w.1.max(inv);
    }
    worst
}

#[test]
fn every_supported_grid_agrees_with_proj_at_the_recorded_points() {
    let worst = errors();
    let codes = supported_codes();
    let missing: Vec<_> = codes.iter().filter(|c| !worst.contains_key(c)).collect();
    assert!(missing.is_empty(), "grids without PROJ points: {missing:?}");
    let (mut f, mut i) = ((0, 0.0), (0, 0.0));
    for (&c, &(fw, iw)) in &worst {
        if fw > f.1 {
            f = (c, fw);
        }
        if iw > i.1 {
            i = (c, iw);
        }
    }
    eprintln!(
        "{} grids: worst forward difference from PROJ {:.3} mm (EPSG:{}), worst inverse {:.3} mm (EPSG:{})",
        worst.len(),
        f.1 * 1e3,
        f.0,
        i.1 * 1e3,
        i.0
    );
    let bad: Vec<String> = worst
        .iter()
        .filter(|(_, (fw, iw))| *fw > 1e-3 || *iw > 1e-3)
        .map(|(c, (fw, iw))| format!("EPSG:{c} {:.3}/{:.3} mm", fw * 1e3, iw * 1e3))
        .collect();
    assert!(
        bad.is_empty(),
        "{} grids off by more than 1 mm: {bad:?}",
        bad.len()
    );
}

#[test]
fn a_feet_grid_and_datum_shifted_grids_are_among_them() {
    // The fixture carries a US-survey-foot grid (EPSG:2229), an
    // international-foot grid (EPSG:6499), and Helmert-shifted grids
    // (EPSG:5514 with its regional shifts, EPSG:27700).
    let pts = points();
    for code in [2229, 2263, 6420, 6499, 5514, 27700, 31467, 32632, 25832] {
        assert!(pts.iter().any(|p| p.code == code), "EPSG:{code}");
    }
    // EPSG:5514 at Prague: PROJ's default there is S-JTSK to WGS 84 (5), 1 m
    // (the older single shift of the definition, S-JTSK to WGS 84 (3), is
    // 9.9 m away; both values printed by pyproj 3.7.2, see make_grids.py).
    let c = Crs::from_epsg(5514).unwrap();
    let (t, acc) = c.transformation_at(14.42, 50.08);
    assert!(
        t.contains("S-JTSK to WGS 84 (5)") && acc == 1.0,
        "{t} {acc}"
    );
    let (e, n) = c.from_lonlat(14.42, 50.08).unwrap();
    // pyproj 3.7.2 Transformer.from_crs(4326, 5514, always_xy=True).transform(14.42, 50.08)
    assert!(
        (e - -743011.7234885613).abs() < 1e-3 && (n - -1043823.1813883964).abs() < 1e-3,
        "{e} {n}"
    );
}
