//! Surveys written by `simulate::write_survey_csv` and the demo survey read
//! back by the survey reader: every value comes back, and exact or plainly
//! noisy surveys raise no warnings (no false outliers at element joins, no
//! false unit or spacing complaints).

#[path = "support/skip.rs"]
mod skip;
use std::path::Path;

use chordline::geometry::{Alignment, Pose};
use chordline::simulate::{SimSetup, simulate, synthetic_route, write_survey_csv};
use chordline::survey::read::{ReadOptions, read_survey_bytes, read_survey_file};
use chordline::survey::{Marking, Rail};
use chordline::units::{LengthUnit, VersineUnit};

fn roundtrip(setup: &SimSetup, route_m: f64, seed: u64) -> Vec<String> {
    let design = Alignment::new(
        Pose::default(),
        setup.start_chainage,
        synthetic_route(route_m, seed),
    );
    let sim = simulate(&design, setup).expect("simulate");
    let mut bytes = Vec::new();
    write_survey_csv(&mut bytes, &sim.survey, setup.resolution, "round trip").expect("write");
    let opts = ReadOptions {
        rail: Some(setup.rail),
        chord: setup.chord,
        behind: None,
        marking: setup.marking,
    };
    let (read, diags) =
        read_survey_bytes("sim.csv", &bytes, &opts).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(read.chainage_unit, setup.chainage_unit);
    assert_eq!(read.versine_unit, setup.versine_unit);
    // The written survey leaves out the marks without a full chord at the ends.
    let first = sim
        .survey
        .readings
        .iter()
        .position(|r| r.versine.is_some())
        .unwrap();
    let written = &sim.survey.readings[first..first + read.readings.len()];
    let vstep = if setup.resolution > 0.0 {
        setup.resolution
    } else {
        1e-7
    };
    for (a, b) in read.readings.iter().zip(written) {
        // Chainages are written to 3 decimals of their unit.
        assert!(
            (a.chainage - b.chainage).abs() <= 0.0005 * setup.chainage_unit.metres() + 1e-9,
            "line {}: chainage {} vs {}",
            a.line,
            a.chainage,
            b.chainage
        );
        match (a.versine, b.versine) {
            (Some(x), Some(y)) => assert!((x - y).abs() <= vstep, "line {}: {x} vs {y}", a.line),
            (None, None) => {}
            _ => panic!("line {}: {:?} vs {:?}", a.line, a.versine, b.versine),
        }
        assert_eq!(a.rail, setup.rail);
    }
    diags.iter().map(|d| d.to_string()).collect()
}

#[test]
fn exact_hand_survey_reads_back_quietly() {
    let setup = SimSetup::classic(20.0, Rail::Left);
    let d = roundtrip(&setup, 4000.0, 7);
    assert!(d.is_empty(), "{d:#?}");
}

#[test]
fn noisy_rounded_hand_survey_reads_back_quietly() {
    let setup = SimSetup {
        noise_sd: 1e-3,
        resolution: 1e-3,
        seed: 3,
        start_chainage: 12_000.0,
        ..SimSetup::classic(20.0, Rail::Right)
    };
    let d = roundtrip(&setup, 4000.0, 11);
    assert!(d.is_empty(), "{d:#?}");
}

#[test]
fn dense_recording_survey_reads_back_quietly() {
    let setup = SimSetup {
        spacing: 0.25,
        marking: Marking::Wire,
        noise_sd: 0.3e-3,
        resolution: 0.1e-3,
        irregularity_rms: 0.5e-3,
        ..SimSetup::classic(20.0, Rail::Left)
    };
    let d = roundtrip(&setup, 3000.0, 5);
    assert!(d.is_empty(), "{d:#?}");
}

#[test]
fn imperial_survey_reads_back_quietly() {
    let setup = SimSetup {
        chainage_unit: LengthUnit::Foot,
        versine_unit: VersineUnit::Inch,
        resolution: 0.0254 / 16.0,
        start_chainage: 1000.0 * 0.3048,
        ..SimSetup::classic(62.0 * 0.3048, Rail::Right)
    };
    let d = roundtrip(&setup, 3000.0, 2);
    assert!(d.is_empty(), "{d:#?}");
}

#[test]
fn demo_survey_reads() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/eastvale-survey.csv");
    if !path.exists() {
        skip::skipped(
            "survey_read_roundtrip",
            &format!("{} is not there", path.display()),
        );
        return;
    }
    let opts = ReadOptions {
        rail: Some(Rail::Left),
        ..ReadOptions::new(20.0)
    };
    let (s, d) = read_survey_file(&path, &opts).unwrap_or_else(|e| panic!("{e}"));
    assert!(s.readings.len() > 100);
    for x in &d {
        println!("{x}");
    }
}
