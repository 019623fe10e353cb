//! Coverage-guided fuzzing of the survey reader: any bytes, read with a few
//! set-ups chosen by the first byte. Must never panic; whatever is returned
//! must be finite and in increasing chainage.
#![no_main]

use chordline::survey::Rail;
use chordline::survey::read::{ReadOptions, read_survey_bytes};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let (sel, bytes) = match data.split_first() {
        Some((s, rest)) => (*s, rest),
        None => (0, data),
    };
    let chord = [20.0, 10.0, 18.8976, 5.0][(sel & 3) as usize];
    let rail = match (sel >> 2) & 3 {
        0 => None,
        1 => Some(Rail::Left),
        _ => Some(Rail::Right),
    };
    let opts = ReadOptions { rail, ..ReadOptions::new(chord) };
    if let Ok((survey, _)) = read_survey_bytes("fuzz.csv", bytes, &opts) {
        assert!(survey.readings.len() >= 3);
        for w in survey.readings.windows(2) {
            assert!(w[0].chainage < w[1].chainage);
        }
        for r in &survey.readings {
            assert!(r.chainage.is_finite());
            assert!(r.versine.is_none_or(f64::is_finite));
        }
    }
});
