//! The option rules of `prepare` and what it hands to the integrator.

use chordline::georef::{ControlFile, Crs, GeorefArgs, LonLat, StartPoint, prepare};
use chordline::survey::{Rail, Reading, Survey};
use chordline::units::{LengthUnit, VersineUnit};

fn survey() -> Survey {
    Survey {
        source: "t".into(),
        chainage_unit: LengthUnit::Metre,
        versine_unit: VersineUnit::Millimetre,
        readings: (0..=100)
            .map(|i| Reading {
                chainage: 100.0 + 10.0 * i as f64,
                versine: Some(0.0),
                rail: Rail::Left,
                note: None,
                line: i + 2,
            })
            .collect(),
        has_side_column: false,
    }
}

fn args() -> GeorefArgs {
    GeorefArgs::default()
}

fn lonlat(lon: f64, lat: f64) -> StartPoint {
    StartPoint::LonLat(LonLat::new(lon, lat).unwrap())
}

fn grid(code: &str) -> Crs {
    code.parse().unwrap()
}

#[test]
fn no_placement_means_none() {
    let (g, d) = prepare(&args(), &survey()).unwrap();
    assert!(g.is_none() && d.is_empty());
    // A bearing alone only orients the local frame.
    let a = GeorefArgs {
        start_bearing: Some(10.0),
        ..args()
    };
    assert!(prepare(&a, &survey()).unwrap().0.is_none());
}

#[test]
fn start_point_and_bearing() {
    let a = GeorefArgs {
        start: Some(lonlat(9.1234, 48.5678)),
        start_bearing: Some(75.0),
        ..args()
    };
    let g = prepare(&a, &survey()).unwrap().0.unwrap();
    assert_eq!(g.placement.origin().lon, 9.1234);
    assert!(g.position_obs.is_empty());
    assert!((chordline::geometry::heading_to_bearing(g.start.heading) - 75.0).abs() < 1e-12);
    assert_eq!((g.start.x, g.start.y), (0.0, 0.0));
}

#[test]
fn grid_start_goes_through_the_crs() {
    // CHECKS.md 5.10 (pyproj): UTM 32N E 574 595.1125, N 5 316 784.0092 = (10°, 48°).
    let a = GeorefArgs {
        start: Some(StartPoint::Grid {
            easting: 574595.1125,
            northing: 5316784.0092,
        }),
        start_bearing: Some(0.0),
        crs: Some(grid("EPSG:32632")),
        ..args()
    };
    let g = prepare(&a, &survey()).unwrap().0.unwrap();
    let o = g.placement.origin();
    assert!(
        (o.lon - 10.0).abs() < 2e-8 && (o.lat - 48.0).abs() < 2e-8,
        "{o:?}"
    );
    // The grid image of the local origin is the start point itself.
    let (e, n) = g.grid(0.0, 0.0).unwrap().unwrap();
    assert!((e - 574595.1125).abs() < 1e-3 && (n - 5316784.0092).abs() < 1e-3);
    assert_eq!(g.crs.unwrap().code(), 32632);
}

#[test]
fn option_rules_give_clear_errors() {
    let cases: [(GeorefArgs, &str); 4] = [
        (
            GeorefArgs {
                start: Some(lonlat(9.0, 48.0)),
                ..args()
            },
            "--start-bearing",
        ),
        (
            GeorefArgs {
                crs: Some(grid("EPSG:25832")),
                ..args()
            },
            "--crs names the grid",
        ),
        (
            GeorefArgs {
                start: Some(StartPoint::Grid {
                    easting: 500000.0,
                    northing: 5300000.0,
                }),
                start_bearing: Some(10.0),
                ..args()
            },
            "--start-grid needs --crs",
        ),
        (
            GeorefArgs {
                start: Some(lonlat(9.0, 48.0)),
                start_bearing: Some(10.0),
                control: Some(ControlFile::from_text(
                    "cp.csv",
                    "id,chainage_m,lon_deg,lat_deg\nA,200,9,48\n",
                )),
                ..args()
            },
            "not both",
        ),
    ];
    for (a, want) in cases {
        let e = prepare(&a, &survey()).unwrap_err().to_string();
        assert!(e.contains(want), "{e} (wanted {want})");
    }
    // The typed values refuse what no place or grid can be, naming it.
    let e = "9.1234,95".parse::<LonLat>().unwrap_err().to_string();
    assert!(e.contains("latitude 95"), "{e}");
    let e = "EPSG:4242".parse::<Crs>().unwrap_err().to_string();
    assert!(e.contains("EPSG:4242"), "{e}");
}

#[test]
fn control_file_end_to_end_to_observations() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("cp.csv");
    // ETRS89 / UTM 32N grid points, 600 m apart due grid north.
    std::fs::write(
        &path,
        "# test\nid,chainage_m,easting_m,northing_m,sd_m\nA,200,500000.0,5316300.0,0.01\nB,800,500000.0,5316900.0,0.01\n",
    )
    .unwrap();
    let a = GeorefArgs {
        control: Some(ControlFile::read(&path).unwrap()),
        crs: Some(grid("EPSG:25832")),
        ..args()
    };
    let (g, d) = prepare(&a, &survey()).unwrap();
    // Only the note on ETRS89 being taken as WGS 84.
    assert_eq!(d.len(), 1, "{d:?}");
    assert_eq!(d[0].severity, chordline::diag::Severity::Note);
    assert!(d[0].message.contains("ETRS89"));
    let g = g.unwrap();
    assert_eq!(g.position_obs.len(), 2);
    assert_eq!(g.position_obs[0].sd, 0.01);
    // 600 m of grid at k ≈ 0.9996 on the central meridian (UTM definition) is
    // 600/0.9996 = 600.24 m on the ground.
    let b = &g.position_obs[1];
    assert!(
        (b.y - 600.0 / 0.9996).abs() < 0.01 && b.x.abs() < 1e-6,
        "{b:?}"
    );
    // Start guess: 100 m back from A (first reading at chainage 100).
    assert!((g.start.y + 100.0).abs() < 1e-6);
    // A point off the survey names its line through `prepare` too.
    std::fs::write(
        &path,
        "id,chainage_m,easting_m,northing_m\nA,200,500000.0,5316300.0\nB,5000,500000.0,5321100.0\n",
    )
    .unwrap();
    let a = GeorefArgs {
        control: Some(ControlFile::read(&path).unwrap()),
        ..a
    };
    let e = prepare(&a, &survey()).unwrap_err().to_string();
    assert!(
        e.contains("cp.csv:3") && e.contains("outside the survey"),
        "{e}"
    );
    // Missing file: named when read.
    let e = ControlFile::read(&dir.path().join("nope.csv"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("nope.csv"), "{e}");
}
