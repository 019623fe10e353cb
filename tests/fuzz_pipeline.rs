//! Whole-pipeline fuzz: valid and near-valid generated surveys go through
//! reading, integration (and every later stage `pipeline::process` runs) and
//! the writers. No panic, no hang, and no NaN or infinite number in any output.
//!
//! `CHORDLINE_FUZZ_CASES=N` sets the number of cases (default small, so that
//! `cargo test` stays fast; `.ci/run` runs a longer bounded pass).

#[path = "fuzz_support/mod.rs"]
mod fuzz_support;

use chordline::export::stations::write_stations;
use chordline::pipeline::{Options, process};
use chordline::survey::Rail;
use chordline::survey::read::{ReadOptions, read_survey_bytes};
use fuzz_support::{GenSurvey, cases, near_valid_survey, valid_survey};
use proptest::prelude::*;

fn through_pipeline(g: &GenSurvey, must_read: bool) -> Result<(), TestCaseError> {
    let ropts = ReadOptions {
        rail: (!g.has_side).then_some(Rail::Left),
        ..ReadOptions::new(g.chord)
    };
    let survey = match read_survey_bytes("fuzz.csv", &g.bytes, &ropts) {
        Ok((s, _)) => s,
        Err(e) => {
            prop_assert!(!must_read, "a valid survey was refused: {e}");
            return Ok(());
        }
    };
    let opts = Options::new(g.chord, Rail::Left);
    let Ok(r) = process(survey, &opts) else {
        // A clear refusal is fine; a panic or a bad number is not.
        return Ok(());
    };
    prop_assert!(r.plan.reading_sd.is_finite() && r.plan.reading_sd > 0.0);
    for s in &r.plan.stations {
        for v in [
            s.chainage,
            s.curvature,
            s.heading,
            s.x,
            s.y,
            s.rail_x,
            s.rail_y,
            s.position_sd,
            s.heading_sd,
        ] {
            prop_assert!(v.is_finite(), "non-finite value at chainage {}", s.chainage);
        }
    }
    let mut out = Vec::new();
    write_stations(&mut out, &r.plan, r.survey.chainage_unit, None)
        .map_err(|e| TestCaseError::fail(format!("stations.csv: {e}")))?;
    let text = String::from_utf8(out).unwrap();
    let lower = text.to_ascii_lowercase();
    prop_assert!(
        !lower.contains("nan") && !lower.contains("inf"),
        "non-finite text written"
    );
    let _ = chordline::report::summary(&r);
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: cases(6), ..ProptestConfig::default() })]

    #[test]
    fn valid_surveys_go_through_every_stage(g in valid_survey()) {
        through_pipeline(&g, true)?;
    }

    #[test]
    fn near_valid_surveys_never_panic_the_pipeline(g in near_valid_survey()) {
        through_pipeline(&g, false)?;
    }
}
