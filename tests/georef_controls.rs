//! Control-point files: reading, checks against the survey and each other,
//! conversion to local observations, judging residuals, leave-one-out.

use chordline::diag::Severity;
use chordline::georef::{
    ControlError, Crs, LonLat, Placement, leave_one_out, position_at, read_controls,
};
use chordline::integrate::{NoiseSource, Plan, PositionObs, PositionResidual, Station};
use chordline::survey::{Rail, Reading, Setup, Survey};
use chordline::units::{LengthUnit, VersineUnit};

fn survey(first: f64, last: f64, step: f64) -> Survey {
    let n = ((last - first) / step).round() as usize;
    Survey {
        source: "test".into(),
        chainage_unit: LengthUnit::Metre,
        versine_unit: VersineUnit::Millimetre,
        readings: (0..=n)
            .map(|i| Reading {
                chainage: first + i as f64 * step,
                versine: Some(0.0),
                rail: Rail::Left,
                note: None,
                line: i + 2,
            })
            .collect(),
        has_side_column: false,
    }
}

fn read(text: &str, crs: Option<&Crs>) -> Result<chordline::georef::ControlSet, ControlError> {
    read_controls(text.as_bytes(), "cp.csv", crs).map(|(s, _)| s)
}

#[test]
fn reads_lonlat_with_comments_defaults_and_ids() {
    let text = "# GNSS fixes\n\nid,chainage_m,lon_deg,lat_deg,sd_mm,note\nA,0,9.0,48.0,15,start\n# mid\n,400.5,9.003,48.002,,\n";
    let (set, diags) = read_controls(text.as_bytes(), "cp.csv", None).unwrap();
    assert!(diags.is_empty(), "{diags:?}");
    assert_eq!(set.points.len(), 2);
    assert_eq!(set.points[0].id, "A");
    assert!((set.points[0].sd - 0.015).abs() < 1e-15);
    assert_eq!(set.points[1].id, "CP6"); // default name from the line number
    assert_eq!(set.points[1].line, 6);
    assert_eq!(set.points[1].sd, chordline::georef::DEFAULT_SD);
    assert_eq!(
        set.points[1].lonlat,
        LonLat {
            lon: 9.003,
            lat: 48.002
        }
    );
}

#[test]
fn reads_grid_coordinates_and_feet_chainage() {
    // CHECKS.md 5.10 (pyproj): UTM 32N E 574 595.1125, N 5 316 784.0092 is (10°, 48°).
    let crs: Crs = "EPSG:32632".parse().unwrap();
    let text = "chainage_ft,easting_m,northing_m,sd_ft\n100,574595.1125,5316784.0092,0.1\n";
    let set = read(text, Some(&crs)).unwrap();
    let p = &set.points[0];
    assert!((p.chainage - 30.48).abs() < 1e-12);
    assert!((p.sd - 0.03048).abs() < 1e-15);
    assert!((p.lonlat.lon - 10.0).abs() < 2e-8 && (p.lonlat.lat - 48.0).abs() < 2e-8);
    assert_eq!(p.grid, Some((574595.1125, 5316784.0092)));
    // Without --crs: a clear error saying what to add.
    let e = read(text, None).unwrap_err();
    assert!(matches!(e, ControlError::NeedsCrs { .. }));
    assert!(e.to_string().contains("--crs EPSG:"), "{e}");
}

#[test]
fn bad_values_name_file_line_and_column() {
    let e = read(
        "id,chainage_m,lon_deg,lat_deg\nA,0,9,48\nB,10,9.1,95\n",
        None,
    )
    .unwrap_err();
    let msg = e.to_string();
    assert!(
        matches!(&e, ControlError::Value { line: 3, column, .. } if column == "lat_deg"),
        "{e:?}"
    );
    assert!(
        msg.starts_with("cp.csv:3, column lat_deg:") && msg.contains("95"),
        "{msg}"
    );

    let e = read("chainage_m,lon_deg,lat_deg\n0,9,abc\n", None).unwrap_err();
    assert!(e.to_string().contains("'abc' is not a number"), "{e}");
    let e = read("chainage_m,lon_deg,lat_deg,sd_m\n0,9,48,-1\n", None).unwrap_err();
    assert!(matches!(e, ControlError::Value { ref column, .. } if column == "sd_m"));
    let e = read("km,lon_deg,lat_deg\n0,9,48\n", None).unwrap_err();
    assert!(matches!(e, ControlError::Header { line: 1, .. }), "{e:?}");
    assert!(e.to_string().contains("chainage_m"));
    let e = read("chainage_m,lon_deg\n0,9\n", None).unwrap_err();
    assert!(e.to_string().contains("lon_deg and lat_deg"), "{e}");
    let e = read("# only a comment\nchainage_m,lon_deg,lat_deg\n", None).unwrap_err();
    assert!(matches!(e, ControlError::Empty { .. }));
    let e = read("chainage_m,lon_deg,lat_deg\n5,9,48\n5,9.001,48\n", None).unwrap_err();
    assert!(
        matches!(e, ControlError::Contradiction { line: 3, .. }),
        "{e:?}"
    );
    // Unknown EPSG through the parser the CLI uses.
    let e = "EPSG:99999".parse::<Crs>().unwrap_err().to_string();
    assert!(
        e.contains("EPSG:99999") && e.contains("checked against PROJ"),
        "{e}"
    );
}

#[test]
fn unknown_columns_are_noted_not_fatal() {
    let (_, d) = read_controls(
        "chainage_m,lon_deg,lat_deg,height_m\n0,9,48,300\n".as_bytes(),
        "cp.csv",
        None,
    )
    .unwrap();
    assert_eq!(d.len(), 1);
    assert_eq!(d[0].severity, Severity::Note);
    assert_eq!(
        d[0].location.as_ref().unwrap().column.as_deref(),
        Some("height_m")
    );
}

/// Write a control file whose points lie at given local positions.
fn file_at(pl: &Placement, pts: &[(&str, f64, f64, f64)]) -> String {
    let mut s = String::from("id,chainage_m,lon_deg,lat_deg,sd_m\n");
    for (id, ch, x, y) in pts {
        let (lon, lat) = pl.to_lonlat(*x, *y);
        s.push_str(&format!("{id},{ch},{lon:.12},{lat:.12},0.02\n"));
    }
    s
}

#[test]
fn observations_land_where_they_were_put() {
    let pl0 = Placement::new(LonLat::new(9.1234, 48.5678).unwrap(), 0.0).unwrap();
    // A straight heading 75° from north, points at 0, 500, 1000 m.
    let b = 75f64.to_radians();
    let pts: Vec<(&str, f64, f64, f64)> = [("A", 0.0), ("B", 500.0), ("C", 1000.0)]
        .iter()
        .map(|&(id, s)| (id, s + 20.0, s * b.sin(), s * b.cos()))
        .collect();
    let set = read(&file_at(&pl0, &pts), None).unwrap();
    let pl = set.placement(0.0).unwrap();
    let (obs, diags) = set.to_position_obs(&pl, &survey(0.0, 1100.0, 5.0)).unwrap();
    assert!(diags.is_empty(), "{diags:?}");
    assert_eq!(obs.len(), 3);
    // Origin at the first control point: A is at (0, 0); B and C keep their
    // distances and bearings from A (12 decimals of a degree ≈ 0.1 µm).
    assert!(obs[0].x.abs() < 1e-6 && obs[0].y.abs() < 1e-6);
    for (o, p) in obs.iter().zip(&pts) {
        assert!(
            (o.x - p.2).abs() < 1e-6 && (o.y - p.3).abs() < 1e-6,
            "{o:?}"
        );
        assert_eq!(o.chainage, p.1);
    }
    let g = set.start_guess(&obs, 0.0, None).unwrap();
    let b_deg = chordline::geometry::heading_to_bearing(g.heading);
    assert!((b_deg - 75.0).abs() < 1e-7, "{b_deg}"); // 12-decimal file rounding
    // Extrapolated 20 m back from A along the track.
    assert!((g.x + 20.0 * b.sin()).abs() < 1e-6 && (g.y + 20.0 * b.cos()).abs() < 1e-6);
}

#[test]
fn a_point_off_the_survey_is_an_error_naming_its_line() {
    let pl0 = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 0.0).unwrap();
    let set = read(
        &file_at(&pl0, &[("A", 0.0, 0.0, 0.0), ("B", 1500.0, 0.0, 1500.0)]),
        None,
    )
    .unwrap();
    let pl = set.placement(0.0).unwrap();
    let e = set
        .to_position_obs(&pl, &survey(0.0, 1000.0, 5.0))
        .unwrap_err();
    assert!(
        matches!(e, ControlError::OffSurvey { line: 3, .. }),
        "{e:?}"
    );
    let m = e.to_string();
    assert!(
        m.starts_with("cp.csv:3:") && m.contains("outside the survey"),
        "{m}"
    );
}

#[test]
fn contradictory_points_are_caught() {
    let pl0 = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 0.0).unwrap();
    let sv = survey(0.0, 1000.0, 5.0);
    // 300 m apart on the ground, 100 m in chainage: impossible → error naming line 3.
    let set = read(
        &file_at(&pl0, &[("A", 0.0, 0.0, 0.0), ("B", 100.0, 0.0, 300.0)]),
        None,
    )
    .unwrap();
    let e = set
        .to_position_obs(&set.placement(0.0).unwrap(), &sv)
        .unwrap_err();
    assert!(
        matches!(e, ControlError::Contradiction { line: 3, .. }),
        "{e:?}"
    );
    assert!(
        e.to_string().contains("'A' (line 2) and 'B' (line 3)"),
        "{e}"
    );
    // 100 m apart on the ground, 300 m in chainage: a radius of ~55 m would
    // be needed (sin φ/φ = 1/3 → φ = 2.279, R = 300/(2φ) = 65.8 m) → warning.
    let set = read(
        &file_at(&pl0, &[("A", 0.0, 0.0, 0.0), ("B", 300.0, 0.0, 100.0)]),
        None,
    )
    .unwrap();
    let (_, d) = set
        .to_position_obs(&set.placement(0.0).unwrap(), &sv)
        .unwrap();
    assert_eq!(d.len(), 1, "{d:?}");
    assert_eq!(d[0].severity, Severity::Warning);
    assert_eq!(d[0].location.as_ref().unwrap().line, 3);
    assert!(d[0].message.contains("radius of 66 m"), "{}", d[0].message);
    // A gentle curve (R = 1000 m, 300 m of arc) passes silently.
    let r: f64 = 1000.0;
    let th: f64 = 300.0 / r;
    let set = read(
        &file_at(
            &pl0,
            &[
                ("A", 0.0, 0.0, 0.0),
                ("B", 300.0, r * (1.0 - th.cos()), r * th.sin()),
            ],
        ),
        None,
    )
    .unwrap();
    let (_, d) = set
        .to_position_obs(&set.placement(0.0).unwrap(), &sv)
        .unwrap();
    assert!(d.is_empty(), "{d:?}");
    // One point and no bearing: say what to add.
    let set = read(&file_at(&pl0, &[("A", 10.0, 0.0, 0.0)]), None).unwrap();
    let (obs, _) = set
        .to_position_obs(&set.placement(0.0).unwrap(), &sv)
        .unwrap();
    let e = set.start_guess(&obs, 0.0, None).unwrap_err();
    assert!(e.to_string().contains("--start-bearing"), "{e}");
    assert!(set.start_guess(&obs, 0.0, Some(90.0)).is_ok());
}

fn station(ch: f64, x: f64, y: f64, heading: f64, sd: f64) -> Station {
    Station {
        chainage: ch,
        versine: None,
        rail: Rail::Left,
        line: 0,
        curvature: 0.0,
        heading,
        x,
        y,
        rail_x: x,
        rail_y: y,
        position_sd: sd,
        heading_sd: 0.0,
    }
}

#[test]
fn hermite_interpolation_is_exact_enough_on_an_arc() {
    // Stations every 5 m on an R = 300 m arc; the midpoint is within 0.1 mm.
    let r = 300.0;
    let st: Vec<Station> = (0..=40)
        .map(|i| {
            let s = i as f64 * 5.0;
            let t = s / r;
            station(s, r * t.sin(), r * (1.0 - t.cos()), t, 0.01)
        })
        .collect();
    for s in [2.5, 77.5, 131.0] {
        let (x, y, _) = position_at(&st, s).unwrap();
        let t = s / r;
        let d = (x - r * t.sin()).hypot(y - r * (1.0 - t.cos()));
        assert!(d < 1e-4, "{s}: {d}");
    }
    assert!(position_at(&st, 250.0).is_none());
    assert!(position_at(&st, 200.0).is_some());
}

/// A real (if tiny) solver for the leave-one-out test: a straight line fitted
/// by least squares to the observations, chainage as parameter.
fn fit_line(obs: &[PositionObs]) -> Result<Plan, String> {
    let n = obs.len() as f64;
    let mc = obs.iter().map(|o| o.chainage).sum::<f64>() / n;
    let mx = obs.iter().map(|o| o.x).sum::<f64>() / n;
    let my = obs.iter().map(|o| o.y).sum::<f64>() / n;
    let scc: f64 = obs.iter().map(|o| (o.chainage - mc).powi(2)).sum();
    if scc == 0.0 {
        return Err("degenerate".into());
    }
    let bx = obs
        .iter()
        .map(|o| (o.chainage - mc) * (o.x - mx))
        .sum::<f64>()
        / scc;
    let by = obs
        .iter()
        .map(|o| (o.chainage - mc) * (o.y - my))
        .sum::<f64>()
        / scc;
    let h = by.atan2(bx);
    let stations = (0..=200)
        .map(|i| {
            let c = i as f64 * 5.0;
            station(c, mx + bx * (c - mc), my + by * (c - mc), h, 0.01)
        })
        .collect();
    let position_residuals = obs
        .iter()
        .map(|o| {
            let (dx, dy) = (
                o.x - mx - bx * (o.chainage - mc),
                o.y - my - by * (o.chainage - mc),
            );
            PositionResidual {
                id: o.id.clone(),
                dx,
                dy,
                normalised: dx.hypot(dy) / o.sd,
            }
        })
        .collect();
    Ok(Plan {
        stations,
        reading_sd: 0.001,
        noise_source: NoiseSource::Stated,
        position_residuals,
        setup: Setup::new(20.0, Rail::Left),
        source: "test".into(),
        versine_unit: VersineUnit::Millimetre,
        resolution: None,
    })
}

#[test]
fn leave_one_out_and_residuals_flag_the_bad_point() {
    let pl0 = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 0.0).unwrap();
    // Four points on a northward straight; C is 0.5 m off to the east.
    let pts = [
        ("A", 0.0, 0.0, 0.0),
        ("B", 300.0, 0.0, 300.0),
        ("C", 600.0, 0.5, 600.0),
        ("D", 900.0, 0.0, 900.0),
    ];
    let set = read(&file_at(&pl0, &pts), None).unwrap();
    let pl = set.placement(0.0).unwrap();
    let (obs, _) = set.to_position_obs(&pl, &survey(0.0, 1000.0, 5.0)).unwrap();
    let loo = leave_one_out(&obs, fit_line).unwrap();
    assert_eq!(loo.len(), 4);
    let c = loo.iter().find(|l| l.id == "C").unwrap();
    // Predicted from A, B, D (exactly on x = 0): off by 0.5 m.
    assert!((c.discrepancy - 0.5).abs() < 1e-6, "{c:?}");
    assert!(c.statistic > 3.0);
    // Residuals as the integrator would report them: C stands out.
    let res: Vec<PositionResidual> = obs
        .iter()
        .map(|o| PositionResidual {
            id: o.id.clone(),
            dx: if o.id == "C" { 0.375 } else { -0.125 },
            dy: 0.0,
            normalised: if o.id == "C" { 4.2 } else { 1.4 },
        })
        .collect();
    let (checks, diags) = set.assess(&res, &[]);
    assert_eq!(checks.len(), 4);
    let flagged: Vec<_> = checks
        .iter()
        .filter(|c| c.flagged)
        .map(|c| c.id.as_str())
        .collect();
    assert_eq!(flagged, ["C"]);
    let w = diags.iter().find(|d| d.message.contains("'C'")).unwrap();
    assert_eq!(w.location.as_ref().unwrap().line, 4);
    assert!(w.to_string().starts_with("cp.csv:4: warning:"), "{w}");
    // Leave-one-out: the end points' predictions are pulled by C too, so
    // their statistics exceed 3 as well, but only without C do the others
    // agree: C alone is flagged, even with residuals that blame everyone.
    assert!(loo.iter().filter(|l| l.statistic > 3.0).count() > 1);
    let blame_all: Vec<PositionResidual> = res
        .iter()
        .map(|r| PositionResidual {
            normalised: 9.0,
            ..r.clone()
        })
        .collect();
    let (checks, diags) = set.assess(&blame_all, &loo);
    let flagged: Vec<_> = checks
        .iter()
        .filter(|c| c.flagged)
        .map(|c| c.id.as_str())
        .collect();
    assert_eq!(flagged, ["C"]);
    assert_eq!(diags.len(), 1);
    assert!(
        diags[0]
            .message
            .contains("without it the other points agree"),
        "{}",
        diags[0]
    );
    // No single culprit (all residuals large, leave-one-out not run): every
    // point is flagged and a summary says what to check.
    let (checks, diags) = set.assess(&blame_all, &[]);
    assert!(checks.iter().all(|c| c.flagged));
    assert!(
        diags
            .iter()
            .any(|d| d.message.contains("no single point explains it"))
    );
    // Fewer than three points: no leave-one-out.
    assert!(leave_one_out(&obs[..2], fit_line).unwrap().is_empty());
}

#[test]
fn checks_are_written_as_csv() {
    use chordline::export::controls::write_checks_csv;
    use chordline::georef::ControlCheck;
    let checks = vec![
        ControlCheck {
            id: "A,1".into(),
            line: 2,
            chainage: 10.0,
            dx: 0.00123,
            dy: -0.0005,
            normalised: 0.4,
            loo_discrepancy: None,
            loo_statistic: None,
            flagged: false,
        },
        ControlCheck {
            id: "B".into(),
            line: 3,
            chainage: 500.0,
            dx: f64::NAN,
            dy: f64::NAN,
            normalised: f64::NAN,
            loo_discrepancy: Some(0.5),
            loo_statistic: Some(12.25),
            flagged: true,
        },
    ];
    let mut out = Vec::new();
    write_checks_csv(&mut out, &checks).unwrap();
    let text = String::from_utf8(out).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert!(lines[0].starts_with("id,line,chainage_m,residual_east_m"));
    assert_eq!(lines[1], "\"A,1\",2,10.0000,0.0012,-0.0005,0.40,,,no");
    assert_eq!(lines[2], "B,3,500.0000,,,,0.5000,12.25,yes");
}

#[test]
fn the_point_whose_removal_reconciles_the_rest_is_singled_out() {
    use chordline::georef::LooResult;
    let pl0 = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 0.0).unwrap();
    let pts = [
        ("A", 0.0, 0.0, 0.0),
        ("B", 300.0, 0.0, 300.0),
        ("C", 600.0, 0.0, 600.0),
        ("D", 900.0, 0.0, 900.0),
    ];
    let set = read(&file_at(&pl0, &pts), None).unwrap();
    let res: Vec<PositionResidual> = ["A", "B", "C", "D"]
        .iter()
        .zip([5.8, 8.6, 9.1, 4.0])
        .map(|(id, n)| PositionResidual {
            id: id.to_string(),
            dx: 0.0,
            dy: 0.02,
            normalised: n,
        })
        .collect();
    // As observed on the demo survey with C shifted 0.3 m: C's own statistic
    // is below 3 (uncertain prediction), but only without C do the others agree.
    let loo = |rests: [f64; 4]| -> Vec<LooResult> {
        ["A", "B", "C", "D"]
            .iter()
            .zip([3.09, 7.88, 2.71, 1.74])
            .zip(rests)
            .map(|((id, s), r)| LooResult {
                id: id.to_string(),
                discrepancy: 0.3,
                statistic: s,
                rest_max_normalised: Some(r),
            })
            .collect()
    };
    let (checks, diags) = set.assess(&res, &loo([7.09, 3.10, 0.61, 8.22]));
    let flagged: Vec<_> = checks
        .iter()
        .filter(|c| c.flagged)
        .map(|c| c.id.as_str())
        .collect();
    assert_eq!(flagged, ["C"]);
    assert_eq!(diags.len(), 1);
    assert_eq!(diags[0].location.as_ref().unwrap().line, 4);
    // Two points either of which reconciles the rest: say so, blame no one in particular.
    let (_, diags) = set.assess(&res, &loo([7.09, 2.5, 0.61, 8.22]));
    let summary = diags.last().unwrap().message.clone();
    assert!(summary.contains("any one of 'B', 'C'"), "{summary}");
}
