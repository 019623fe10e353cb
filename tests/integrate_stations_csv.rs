//! The `stations.csv` writer: column contract, units, fixed decimals, gaps,
//! design columns, refusal of non-finite values, and the shared contract checker.

#[path = "support/skip.rs"]
mod skip;
use chordline::export::stations::write_stations;
use chordline::fit::StationDesign;
use chordline::geometry::{Alignment, Element, Pose};
use chordline::integrate::{IntegrateOptions, Plan, integrate};
use chordline::simulate::{SimSetup, simulate};
use chordline::survey::{Rail, Setup};
use chordline::units::{FOOT, LengthUnit, VersineUnit};
use std::path::Path;

fn plan(imperial: bool) -> Plan {
    let (chord, unit) = if imperial {
        (62.0 * FOOT, LengthUnit::Foot)
    } else {
        (20.0, LengthUnit::Metre)
    };
    let design = Alignment::new(
        Pose::default(),
        0.0,
        vec![
            Element::straight(100.0),
            Element::transition(60.0, 0.0, 1.0 / 500.0),
            Element::arc(150.0, 500.0),
        ],
    );
    let mut sim = SimSetup::classic(chord, Rail::Right);
    sim.chainage_unit = unit;
    sim.versine_unit = unit.versine_unit();
    sim.noise_sd = 0.5e-3;
    let s = simulate(&design, &sim).unwrap();
    let mut setup = Setup::new(chord, Rail::Right);
    setup.reading_sd = Some(1e-3);
    integrate(&s.survey, &setup, &IntegrateOptions::default())
        .unwrap()
        .0
}

fn text(p: &Plan, unit: LengthUnit, design: Option<&[StationDesign]>) -> String {
    let mut out = Vec::new();
    write_stations(&mut out, p, unit, design).unwrap();
    String::from_utf8(out).unwrap()
}

#[test]
fn metric_columns_in_contract_order_with_gaps_empty() {
    let p = plan(false);
    let t = text(&p, LengthUnit::Metre, None);
    let mut lines = t.lines();
    assert_eq!(
        lines.next().unwrap(),
        "chainage_m,versine_mm,curvature_1_per_km,bearing_deg,easting_m,northing_m,position_sd_m,heading_sd_deg,side,rail_easting_m,rail_northing_m"
    );
    // The simulator leaves the first half chord unread: an empty versine cell.
    let first: Vec<&str> = lines.next().unwrap().split(',').collect();
    assert_eq!(first[0], "0.000");
    assert_eq!(first[1], "");
    assert_eq!(first[3], "0.000000"); // default start: north
    assert_eq!(first[8], "right");
    let row: Vec<&str> = t.lines().nth(5).unwrap().split(',').collect();
    assert_eq!(row.len(), 11);
    assert_eq!(row[1].split('.').nth(1).unwrap().len(), 2); // versine: 2 dp in mm
    assert_eq!(row[4].split('.').nth(1).unwrap().len(), 4); // coordinates: 4 dp
    assert!(!t.contains("NaN") && !t.contains("inf") && !t.contains("-0.0000,"));
    // Byte-stable.
    assert_eq!(t, text(&p, LengthUnit::Metre, None));
}

#[test]
fn imperial_columns_and_degree_of_curve() {
    let p = plan(true);
    let t = text(&p, LengthUnit::Foot, None);
    let head = t.lines().next().unwrap();
    assert_eq!(
        head,
        "chainage_ft,versine_in,curvature_1_per_km,bearing_deg,easting_ft,northing_ft,position_sd_ft,heading_sd_deg,side,rail_easting_ft,rail_northing_ft,degree_of_curve,curvature_deg_per_100ft"
    );
    let last: Vec<&str> = t.lines().last().unwrap().split(',').collect();
    // On the 500 m arc: D = 2 asin(50 ft / R) = 1.7466° (chord definition, CHECKS.md 1.16 formula).
    let d: f64 = last[11].parse().unwrap();
    // Noisy readings: compare with the station's own curvature, and loosely with the design.
    let k = p.stations.last().unwrap().curvature;
    let expect = 2.0 * (50.0 * FOOT * k).asin().to_degrees();
    assert!((d - expect).abs() < 1e-4, "{d} vs {expect}");
    let design = 2.0 * (50.0 * FOOT / 500.0_f64).asin().to_degrees();
    assert!((d - design).abs() < 0.02 * design, "{d} vs {design}");
    // The turn per 100 ft (arc definition): 100 ft × k in degrees, a little
    // below the chord definition 2 asin(50 ft × k) (asin x > x).
    let per_100ft: f64 = last[12].parse().unwrap();
    assert!(
        (per_100ft - (100.0 * FOOT * k).to_degrees()).abs() < 1e-6,
        "{per_100ft}"
    );
    assert!(
        per_100ft.abs() < d.abs(),
        "arc definition below chord definition"
    );
    assert!((per_100ft - d).abs() < 1e-3 * d.abs());
    let kkm: f64 = last[2].parse().unwrap();
    assert!((per_100ft - (100.0 * FOOT * kkm * 1e-3).to_degrees()).abs() < 1e-5);
    let mid: Vec<&str> = t.lines().nth(10).unwrap().split(',').collect();
    assert_eq!(mid[1].split('.').nth(1).unwrap().len(), 3); // inches: 3 dp
    assert_eq!(mid.len(), 13);
    let _ = VersineUnit::Inch;
}

#[test]
fn design_columns_follow_and_bad_values_are_refused() {
    let p = plan(false);
    let d: Vec<StationDesign> = p
        .stations
        .iter()
        .map(|s| StationDesign {
            chainage: s.chainage,
            design_versine: 0.01,
            residual: Some(-0.0005),
            x: s.x + 0.001,
            y: s.y,
        })
        .collect();
    let t = text(&p, LengthUnit::Metre, Some(&d));
    assert!(
        t.lines()
            .next()
            .unwrap()
            .ends_with(",design_versine_mm,residual_mm,design_easting_m,design_northing_m")
    );
    let row: Vec<&str> = t.lines().nth(3).unwrap().split(',').collect();
    assert_eq!(row[11], "10.00");
    assert_eq!(row[12], "-0.50");
    let mut out = Vec::new();
    assert!(write_stations(&mut out, &p, LengthUnit::Metre, Some(&d[1..])).is_err());
    let mut bad = p.clone();
    bad.stations[2].x = f64::NAN;
    let e = write_stations(&mut Vec::new(), &bad, LengthUnit::Metre, None).unwrap_err();
    assert!(e.to_string().contains("easting"), "{e}");
}

#[test]
fn passes_the_shared_output_contract_checker() {
    let shared = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared");
    let tool = shared.join("tools/check-outputs");
    if !tool.exists() {
        skip::skipped(
            "stations.csv contract",
            &format!("{} not found", tool.display()),
        );
        return;
    }
    for imperial in [false, true] {
        let dir = tempfile::tempdir().unwrap();
        let p = plan(imperial);
        let unit = if imperial {
            LengthUnit::Foot
        } else {
            LengthUnit::Metre
        };
        std::fs::write(dir.path().join("stations.csv"), text(&p, unit, None)).unwrap();
        let out = match std::process::Command::new("python3")
            .arg(&tool)
            .arg(dir.path())
            .output()
        {
            Ok(o) => o,
            Err(e) => {
                skip::skipped(
                    "stations.csv contract",
                    &format!("python3 not runnable ({e})"),
                );
                return;
            }
        };
        // The checker also wants elements.csv, which this stage does not write:
        // only problems about stations.csv count here.
        let said = String::from_utf8_lossy(&out.stdout);
        for line in said.lines() {
            assert!(!line.starts_with("stations.csv"), "{line}");
        }
    }
}
