//! The option rules of `prepare` and what it hands to the integrator.

use chordline::georef::{GeorefArgs, GeorefError, prepare};
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

#[test]
fn no_placement_means_none() {
    let (g, d) = prepare(&args(), &survey()).unwrap();
    assert!(g.is_none() && d.is_empty());
    // A bearing alone only orients the local frame.
    let a = GeorefArgs {
        start_bearing: Some("10".into()),
        ..args()
    };
    assert!(prepare(&a, &survey()).unwrap().0.is_none());
}

#[test]
fn start_point_and_bearing() {
    let a = GeorefArgs {
        start_lonlat: Some("9.1234,48.5678".into()),
        start_bearing: Some("75".into()),
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
        start_grid: Some("574595.1125,5316784.0092".into()),
        start_bearing: Some("0".into()),
        crs: Some("EPSG:32632".into()),
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
    let cases: [(GeorefArgs, &str); 5] = [
        (
            GeorefArgs {
                start_lonlat: Some("9,48".into()),
                ..args()
            },
            "--start-bearing",
        ),
        (
            GeorefArgs {
                crs: Some("EPSG:25832".into()),
                ..args()
            },
            "--crs names the grid",
        ),
        (
            GeorefArgs {
                start_grid: Some("500000,5300000".into()),
                start_bearing: Some("10".into()),
                ..args()
            },
            "--start-grid needs --crs",
        ),
        (
            GeorefArgs {
                start_lonlat: Some("9,48".into()),
                start_bearing: Some("10".into()),
                control: Some("cp.csv".into()),
                ..args()
            },
            "not both",
        ),
        (
            GeorefArgs {
                start_lonlat: Some("9.1234,95".into()),
                start_bearing: Some("10".into()),
                ..args()
            },
            "latitude 95",
        ),
    ];
    for (a, want) in cases {
        let e = prepare(&a, &survey()).unwrap_err().to_string();
        assert!(e.contains(want), "{e} (wanted {want})");
    }
    let e = prepare(
        &GeorefArgs {
            crs: Some("EPSG:4242".into()),
            ..args()
        },
        &survey(),
    )
    .unwrap_err();
    assert!(matches!(e, GeorefError::Crs(_)));
    assert!(e.to_string().contains("EPSG:4242"), "{e}");
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
        control: Some(path.clone()),
        crs: Some("EPSG:25832".into()),
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
    let e = prepare(&a, &survey()).unwrap_err().to_string();
    assert!(
        e.contains("cp.csv:3") && e.contains("outside the survey"),
        "{e}"
    );
    // Missing file: named.
    let a = GeorefArgs {
        control: Some(dir.path().join("nope.csv")),
        ..args()
    };
    let e = prepare(&a, &survey()).unwrap_err().to_string();
    assert!(e.contains("nope.csv"), "{e}");
}
