//! Georeferencing against outside values: geodesics (CHECKS.md 5.5–5.8,
//! geographiclib 2.1), transverse Mercator grids (CHECKS.md 5.9–5.17, pyproj
//! 3.7.2 / PROJ 9.5.1).

use chordline::georef::{Crs, CrsError, LonLat, Placement};

fn placement(lon: f64, lat: f64) -> Placement {
    Placement::new(LonLat::new(lon, lat).unwrap(), 0.0).unwrap()
}

/// Local point at distance `s` and azimuth `azi_deg` from the origin.
fn polar(azi_deg: f64, s: f64) -> (f64, f64) {
    let a = azi_deg.to_radians();
    (s * a.sin(), s * a.cos())
}

#[test]
fn geodesic_direct_matches_checks_5_5_to_5_8() {
    // CHECKS.md 5.5: geographiclib 2.1 Direct(52, 0, 45, 1000).
    let pl = placement(0.0, 52.0);
    let (x, y) = polar(45.0, 1000.0);
    let (lon, lat) = pl.to_lonlat(x, y);
    assert!((lat - 52.006354571250).abs() < 1e-9, "{lat}");
    assert!((lon - 0.010297427959).abs() < 1e-9, "{lon}");
    // CHECKS.md 5.6: Direct(48, 9, 0, 10000).
    let (lon, lat) = placement(9.0, 48.0).to_lonlat(0.0, 10_000.0);
    assert!((lat - 48.089935176969).abs() < 1e-9 && (lon - 9.0).abs() < 1e-12);
    // CHECKS.md 5.7: Direct(51.5, -0.1, 90, 100); the "east" geodesic drifts south.
    let (lon, lat) = placement(-0.1, 51.5).to_lonlat(100.0, 0.0);
    assert!((lat - 51.499999991160).abs() < 1e-9, "{lat}");
    assert!((lon - -0.098559918549).abs() < 1e-9, "{lon}");
    // CHECKS.md 5.8: Direct(0, 0, 90, 1000).
    let (lon, _) = placement(0.0, 0.0).to_lonlat(1000.0, 0.0);
    assert!((lon - 0.008983153).abs() < 1e-9, "{lon}");
}

#[test]
fn inverse_gives_back_the_local_point_and_true_bearing() {
    // Inverse of CHECKS.md 5.5: the WGS 84 point maps back to 1000 m at 45°.
    let pl = placement(0.0, 52.0);
    let (x, y) = pl.to_local(0.010297427959, 52.006354571250);
    let (ex, ey) = polar(45.0, 1000.0);
    // 1e-9° of latitude is about 0.1 mm (CHECKS.md 5.1), the precision of the check value.
    assert!((x - ex).abs() < 2e-4 && (y - ey).abs() < 2e-4, "{x} {y}");
    // True bearing at the far end of the 5.5 geodesic is its forward azimuth
    // azi2 = 45.0081148355° (CHECKS.md 5.5): a pose along the local ray from the origin.
    let heading = std::f64::consts::FRAC_PI_2 - 45f64.to_radians();
    let b = pl.true_bearing(chordline::geometry::Pose {
        x: ex,
        y: ey,
        heading,
    });
    assert!((b - 45.0081148355).abs() < 2e-6, "{b}");
}

#[test]
fn height_scales_ground_to_ellipsoid() {
    // 1000 m of ground at 500 m above the ellipsoid is shorter on the ellipsoid
    // by R/(R+h); R = Gaussian mean radius at 48° (≈ 6 379 600 m, computed):
    // 1000·R/(R+500) = 999.9216 m.
    let lo = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 0.0).unwrap();
    let hi = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 500.0).unwrap();
    let (lon, lat) = hi.to_lonlat(0.0, 1000.0);
    let (_, y_on_ellipsoid) = lo.to_local(lon, lat);
    assert!(
        (y_on_ellipsoid - 999.92163).abs() < 2e-4,
        "{y_on_ellipsoid}"
    );
    assert!(Placement::new(LonLat::new(9.0, 48.0).unwrap(), f64::NAN).is_err());
}

fn utm(code: u32) -> Crs {
    Crs::from_epsg(code).unwrap()
}

#[test]
fn utm_32n_matches_checks_5_9_to_5_13() {
    // CHECKS.md 5.9–5.13: pyproj 3.7.2, EPSG:4326 → EPSG:32632, ±1 mm.
    let c = utm(32632);
    let cases = [
        (9.0, 48.0, 500000.0000, 5316300.2245),
        (10.0, 48.0, 574595.1125, 5316784.0092),
        (11.5, 53.5, 665815.9196, 5930802.5309),
        (6.0, 45.0, 263553.9739, 4987329.5047),
        (7.0, 0.0, 277404.5603, 0.0000),
    ];
    for (lon, lat, e, n) in cases {
        let (ge, gn) = c.from_lonlat(lon, lat).unwrap();
        assert!(
            (ge - e).abs() < 1e-3 && (gn - n).abs() < 1e-3,
            "{lon},{lat}: {ge} {gn}"
        );
        let (lo, la) = c.to_lonlat(e, n).unwrap();
        // 1 mm ≈ 1e-8° (CHECKS.md 5.1).
        assert!(
            (lo - lon).abs() < 2e-8 && (la - lat).abs() < 2e-8,
            "{lo} {la}"
        );
    }
    assert!(c.datum_note().is_none());
    // DEPENDENCIES.md §4: proj4rs vs pyproj at (13.4, 52.5), 4.4° off the central meridian.
    let (e, n) = c.from_lonlat(13.4, 52.5).unwrap();
    assert!((e - 798609.520908).abs() < 1e-3 && (n - 5825756.242142).abs() < 1e-3);
}

#[test]
fn etrs89_utm_agrees_with_wgs84_utm() {
    // ETRS89 / UTM 32N (GRS 80) and WGS 84 / UTM 32N differ only by the
    // ellipsoids' flattening at this level (no datum shift): a fraction of a
    // millimetre at CHECKS.md 5.10's point.
    let a = utm(25832).from_lonlat(10.0, 48.0).unwrap();
    let b = utm(32632).from_lonlat(10.0, 48.0).unwrap();
    assert!(
        (a.0 - b.0).abs() < 1e-3 && (a.1 - b.1).abs() < 1e-3,
        "{a:?} {b:?}"
    );
    assert!(utm(25832).datum_note().unwrap().contains("ETRS89"));
    // Southern hemisphere: false northing 10 000 km; round trip only (no outside value).
    let s = utm(32733);
    let (e, n) = s.from_lonlat(15.5, -33.9).unwrap();
    assert!(n > 6_000_000.0 && n < 10_000_000.0);
    let (lo, la) = s.to_lonlat(e, n).unwrap();
    assert!((lo - 15.5).abs() < 1e-9 && (la + 33.9).abs() < 1e-9);
}

#[test]
fn british_grid_matches_checks_5_16_and_5_17() {
    // CHECKS.md 5.17: pinned EPSG:1314 Helmert pipeline (pyproj), ±1 mm.
    let c = utm(27700);
    for (lon, lat, e, n) in [
        (-1.5491, 53.8008, 429_795.567, 433_927.318),
        (-3.1883, 55.9533, 325_897.218, 674_001.202),
        // CHECKS.md 5.16: pyproj default (EPSG:1314) for central London.
        (-0.1275, 51.5072, 530_050.135, 180_358.386),
    ] {
        let (ge, gn) = c.from_lonlat(lon, lat).unwrap();
        assert!(
            (ge - e).abs() < 1.5e-3 && (gn - n).abs() < 1.5e-3,
            "{lon},{lat}: {ge} {gn}"
        );
    }
    // The Helmert is metre-level true accuracy: the crate says so, with the
    // transformation and accuracy PROJ 9.5.1 reports (pyproj 3.7.2
    // Transformer.from_crs(4326, 27700).description / .accuracy: "Inverse of
    // OSGB36 to WGS 84 (6)", 2.0 m).
    let note = c.datum_note().unwrap();
    assert!(
        note.contains("OSGB36 to WGS 84 (6)") && note.contains("2 m"),
        "{note}"
    );
}

#[test]
fn british_grid_projection_matches_checks_5_14_and_5_15() {
    // The pure projection part (OSGB36 latitude/longitude → grid), with the
    // same definition the crate uses: CHECKS.md 5.14 (IOGP GN 7-2 example,
    // pyproj 577 274.9838, 69 740.4923) and 5.15 (OS worked example,
    // 651 409.9029, 313 177.2703), ±1 mm against the pyproj values.
    use proj4rs::Proj;
    use proj4rs::transform::transform;
    let c = utm(27700);
    let grid = Proj::from_proj_string(c.definition()).unwrap();
    let geo = Proj::from_proj_string(
        "+proj=longlat +ellps=airy +towgs84=446.448,-125.157,542.06,0.15,0.247,0.842,-20.489 +no_defs",
    )
    .unwrap();
    let dms = |d: f64, m: f64, s: f64| d + m / 60.0 + s / 3600.0;
    for (lon, lat, e, n) in [
        (0.5, 50.5, 577274.9838, 69740.4923),
        (
            dms(1.0, 43.0, 4.5177),
            dms(52.0, 39.0, 27.2531),
            651409.9029,
            313177.2703,
        ),
    ] {
        let mut p = (lon.to_radians(), lat.to_radians(), 0.0);
        transform(&geo, &grid, &mut p).unwrap();
        assert!((p.0 - e).abs() < 1e-3 && (p.1 - n).abs() < 1e-3, "{p:?}");
    }
}

#[test]
fn other_national_grids_build_and_round_trip() {
    // DHDN Gauss-Krüger zone 3 and Swiss LV95: no outside values recorded in
    // CHECKS.md, so only that they build, flag their datum shift and round trip.
    for (code, lon, lat) in [(31467, 9.2, 48.7), (2056, 7.44, 46.95), (2100, 23.7, 37.98)] {
        let c = match Crs::from_epsg(code) {
            Ok(c) => c,
            Err(e) => panic!("EPSG:{code}: {e}"),
        };
        let (e, n) = c.from_lonlat(lon, lat).unwrap();
        let (lo, la) = c.to_lonlat(e, n).unwrap();
        // The datum-shift inverse is approximate in proj4rs (≈5e-5 m for the
        // British grid, DEPENDENCIES.md §4); observed here: LV95 round-trips
        // to 1.0e-8° of latitude (≈1.1 mm), the Greek grid to 1.3e-8°
        // (≈1.4 mm), so allow 3e-8° (≈3 mm). Not survey accuracy either way:
        // the Helmert shifts themselves are metre-level.
        let tol = 3e-8;
        assert!(
            (lo - lon).abs() < tol && (la - lat).abs() < tol,
            "EPSG:{code}"
        );
        assert!(c.datum_note().is_some(), "EPSG:{code}");
    }
}

#[test]
fn unknown_codes_are_named_with_what_is_supported() {
    let e = "EPSG:12345".parse::<Crs>().unwrap_err();
    assert!(matches!(e, CrsError::Unknown(12345)));
    let msg = e.to_string();
    assert!(
        msg.contains("EPSG:12345") && msg.contains("326xx") && msg.contains("27700"),
        "{msg}"
    );
    let e = "epsg: 25832".parse::<Crs>().unwrap();
    assert_eq!(e.code(), 25832);
}

#[test]
fn local_frame_matches_proj_azimuthal_equidistant() {
    // tests/fixtures/georef/pyproj_aeqd.csv: PROJ 9.5.1 (pyproj 3.7.2) reading
    // the WKT that alignment.xml carries, local (x, y) → lon/lat; 1e-9° ≈ 0.1 mm.
    let p = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/georef/pyproj_aeqd.csv"
    );
    let text = std::fs::read_to_string(p).unwrap();
    let mut n = 0;
    for l in text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("origin"))
    {
        let v: Vec<f64> = l.split(',').map(|x| x.parse().unwrap()).collect();
        let pl = Placement::new(LonLat::new(v[0], v[1]).unwrap(), v[2]).unwrap();
        assert!((pl.ellipsoid_per_ground() - v[3]).abs() < 1e-15);
        let (lon, lat) = pl.to_lonlat(v[4], v[5]);
        assert!(
            (lon - v[6]).abs() < 1e-9 && (lat - v[7]).abs() < 1e-9,
            "{l}: {lon} {lat}"
        );
        n += 1;
    }
    assert_eq!(n, 15);
}
