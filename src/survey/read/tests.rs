//! Unit tests of the reader on small inline files; the catalogue of bad
//! inputs is in `tests/bad_inputs.rs`.

use super::*;
use crate::units::{LengthUnit, VersineUnit};

fn opts() -> ReadOptions {
    ReadOptions {
        rail: Some(Rail::Left),
        ..ReadOptions::new(20.0)
    }
}

fn read(s: &str) -> Result<(Survey, Vec<Diagnostic>), SurveyError> {
    read_survey_bytes("t.csv", s.as_bytes(), &opts())
}

#[test]
fn reads_a_plain_survey() {
    let (s, d) = read("# c\nchainage_m,versine_mm\n0,0\n10,2.5\n\n20,5\n30,7.5\n").unwrap();
    assert!(d.is_empty(), "{d:?}");
    assert_eq!(s.readings.len(), 4);
    assert_eq!(s.readings[3].line, 7);
    assert_eq!(s.readings[3].versine, Some(7.5e-3));
    assert_eq!(s.chainage_unit, LengthUnit::Metre);
    assert_eq!(s.versine_unit, VersineUnit::Millimetre);
    assert!(!s.has_side_column);
}
