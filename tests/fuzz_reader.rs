//! Property tests of the survey reader: on any bytes it returns, never
//! panics or hangs, and whatever it returns is finite and ordered; valid
//! files always read, with the values written.
//!
//! `CHORDLINE_FUZZ_CASES=N` sets the number of cases per property (default
//! 256, a second or two); `.ci/run` can run a longer pass, e.g.
//! `CHORDLINE_FUZZ_CASES=20000 cargo test --release --test fuzz_reader`.

mod fuzz_support;

use std::sync::mpsc;
use std::time::Duration;

use chordline::diag::Diagnostic;
use chordline::survey::read::{ReadOptions, SurveyError, read_survey_bytes};
use chordline::survey::{Rail, Survey};
use fuzz_support::{GenSurvey, arbitrary_bytes, cases, near_valid_survey, valid_survey};
use proptest::prelude::*;

/// Longest a single small input may take before we call it a hang.
const HANG: Duration = Duration::from_secs(20);

/// Read on another thread, failing the test if it takes longer than [`HANG`]
/// (a panic in the reader fails it too).
fn read_guarded(
    bytes: Vec<u8>,
    opts: ReadOptions,
) -> Result<(Survey, Vec<Diagnostic>), SurveyError> {
    let (tx, rx) = mpsc::channel();
    let h = std::thread::spawn(move || {
        let r = read_survey_bytes("fuzz.csv", &bytes, &opts);
        let _ = tx.send(r);
    });
    match rx.recv_timeout(HANG) {
        Ok(r) => {
            let _ = h.join();
            r
        }
        Err(mpsc::RecvTimeoutError::Timeout) => panic!("the reader hung for {HANG:?}"),
        Err(mpsc::RecvTimeoutError::Disconnected) => {
            panic!("the reader panicked: {:?}", h.join().err())
        }
    }
}

/// What must hold for anything the reader returns.
fn well_formed(r: &Result<(Survey, Vec<Diagnostic>), SurveyError>) -> Result<(), TestCaseError> {
    match r {
        Ok((s, _)) => {
            prop_assert!(s.readings.len() >= 3);
            prop_assert!(s.readings.iter().any(|x| x.versine.is_some()));
            for w in s.readings.windows(2) {
                prop_assert!(w[0].chainage < w[1].chainage);
                // Stations put into a gap share the line after the gap;
                // those have no versine.
                prop_assert!(
                    w[0].line < w[1].line || (w[0].line == w[1].line && w[0].versine.is_none())
                );
            }
            for x in &s.readings {
                prop_assert!(x.chainage.is_finite(), "chainage {}", x.chainage);
                prop_assert!(
                    x.versine.is_none_or(f64::is_finite),
                    "versine {:?}",
                    x.versine
                );
                prop_assert!(x.line >= 1);
            }
        }
        Err(e) => {
            let msg = e.to_string();
            prop_assert!(msg.starts_with("fuzz.csv"), "{msg}");
            // Every message says what to do after what is wrong.
            prop_assert!(msg.contains(';'), "no advice in: {msg}");
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: cases(256), ..ProptestConfig::default() })]

    #[test]
    fn any_bytes(bytes in arbitrary_bytes(), left in any::<bool>()) {
        let opts = ReadOptions { rail: left.then_some(Rail::Left), ..ReadOptions::new(20.0) };
        well_formed(&read_guarded(bytes, opts))?;
    }

    #[test]
    fn near_valid_files(g in near_valid_survey(), rail in any::<bool>()) {
        let opts = ReadOptions { rail: rail.then_some(Rail::Right), ..ReadOptions::new(g.chord) };
        well_formed(&read_guarded(g.bytes, opts))?;
    }

    #[test]
    fn valid_files_read_with_their_values(g in valid_survey()) {
        let GenSurvey { bytes, chord, has_side, rows, versines } = g;
        let opts = ReadOptions { rail: (!has_side).then_some(Rail::Left), ..ReadOptions::new(chord) };
        let text = String::from_utf8_lossy(&bytes).into_owned();
        let r = read_guarded(bytes, opts);
        well_formed(&r)?;
        let (s, _) = r.map_err(|e| TestCaseError::fail(format!("{e}\n{text}")))?;
        prop_assert_eq!(s.readings.len(), rows);
        for (x, v) in s.readings.iter().zip(&versines) {
            match (x.versine, v) {
                (None, None) => {}
                (Some(a), Some(b)) => prop_assert!((a - b).abs() <= 1e-12 * (1.0 + b.abs()), "{a} vs {b}"),
                _ => prop_assert!(false, "line {}: {:?} vs {:?}", x.line, x.versine, v),
            }
        }
    }
}
