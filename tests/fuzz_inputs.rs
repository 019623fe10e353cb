//! Property tests beyond the survey reader: option values typed on the
//! command line (through the binary), control-point files and design files.
//! Whatever they are given: no panic, no internal-error exit, a message that
//! names the option or the file, and a refused run writes nothing.
//!
//! `CHORDLINE_FUZZ_CASES=N` sets the number of cases per property (default
//! 64 here for the binary, 256 for the files).

mod fuzz_support;

use chordline::georef::read_controls;
use chordline::simulate::{Design, simulate};
use fuzz_support::cases;
use proptest::prelude::*;
use std::path::Path;
use std::process::Command;

/// A value as a user might type it: a number (any, including NaN, infinities
/// and negatives) with a unit or not, or arbitrary text.
fn typed_value() -> impl Strategy<Value = String> {
    let units = prop::sample::select(vec![
        "", "m", "mm", "cm", "km", "ft", "in", "yd", " m", "M", "mm/s", "µm", "m,", "e",
    ]);
    let number = prop_oneof![
        any::<f64>(),
        -100.0..5000.0f64,
        Just(f64::NAN),
        Just(f64::INFINITY),
        Just(0.0),
    ];
    prop_oneof![
        (number.clone(), units.clone()).prop_map(|(v, u)| format!("{v}{u}")),
        (number.clone(), units.clone()).prop_map(|(v, u)| format!("\u{2212}{}{u}", v.abs())),
        // Two arms of a chord not read at its middle (`--chord 4m+6.5m`).
        (number.clone(), units.clone(), number, units)
            .prop_map(|(v, u, w, t)| format!("{v}{u}+{w}{t}")),
        "\\PC{0,12}",
        "--[a-z]{1,8}",
    ]
}

fn small_survey(dir: &Path) -> std::path::PathBuf {
    let p = dir.join("s.csv");
    let mut s = String::from("chainage_m,versine_mm\n");
    for i in 0..40 {
        let v = if (10..30).contains(&i) { 40 } else { 0 };
        s.push_str(&format!("{},{v}\n", 1000 + 10 * i));
    }
    std::fs::write(&p, s).unwrap();
    p
}

proptest! {
    #![proptest_config(ProptestConfig { cases: cases(64), ..ProptestConfig::default() })]

    #[test]
    fn option_values_never_crash_and_refusals_write_nothing(
        option in prop::sample::select(vec![
            "--chord", "--gauge", "--reading-sd", "--fixed", "--height", "--max-slew",
            "--start-bearing", "--rail", "--marking", "--threads",
        ]),
        value in typed_value(),
    ) {
        let dir = tempfile::tempdir().unwrap();
        let survey = small_survey(dir.path());
        let out = dir.path().join("out");
        let mut args: Vec<String> = vec![
            "run".into(), survey.display().to_string(), "--no-fit".into(), "--out".into(),
            out.display().to_string(),
        ];
        if option != "--chord" {
            args.extend(["--chord".into(), "20m".into()]);
        }
        if option != "--rail" {
            args.extend(["--rail".into(), "left".into()]);
        }
        args.push(format!("{option}={value}"));
        let o = Command::new(env!("CARGO_BIN_EXE_chordline")).args(&args).output().unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        prop_assert!(matches!(o.status.code(), Some(0) | Some(1)), "{args:?}: {:?}\n{err}", o.status);
        if o.status.code() == Some(1) {
            prop_assert!(err.contains("error: "), "{args:?}\n{err}");
            prop_assert!(!out.exists(), "{args:?}: a refused run left {}", out.display());
        }
        let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .filter(|n| n.contains(".chordline-"))
            .collect();
        prop_assert!(left.is_empty(), "{args:?}: left {left:?}");
    }
}

/// A control file near the valid form: lines with random damage.
fn control_text() -> impl Strategy<Value = String> {
    let row = (
        prop::sample::select(vec!["CP1", "CP2", "CP1", "", "A;B"]),
        prop_oneof![1000.0..1400.0f64, any::<f64>()],
        prop_oneof![-180.0..180.0f64, any::<f64>()],
        prop_oneof![-90.0..90.0f64, any::<f64>()],
        prop::sample::select(vec![",", ";", "\t", ",,"]),
    )
        .prop_map(|(id, c, lo, la, d)| format!("{id}{d}{c}{d}{lo}{d}{la}"));
    (
        prop::sample::select(vec![
            "id,chainage_m,lon_deg,lat_deg",
            "id;chainage_m;lon_deg;lat_deg",
            "id,chainage_ft,lon_deg,lat_deg,sd_mm",
            "chainage_m,easting_m,northing_m",
            "",
        ]),
        prop::collection::vec(row, 0..6),
        "\\PC{0,20}",
    )
        .prop_map(|(h, rows, junk)| format!("{h}\n{}\n{junk}", rows.join("\n")))
}

/// A design file near the valid form.
fn design_text() -> impl Strategy<Value = String> {
    let el = (
        prop::sample::select(vec!["straight", "arc", "transition", "spiral"]),
        prop_oneof![1.0..500.0f64, any::<f64>(), Just(1e9)],
        prop_oneof![-2000.0..2000.0f64, Just(0.5), Just(0.0)],
        prop::sample::select(vec!["radius", "radus", "r_start", "r_end"]),
    )
        .prop_map(|(k, l, r, key)| {
            format!("{{\"kind\": \"{k}\", \"length\": {l}, \"{key}\": {r}}}")
        });
    (
        prop::collection::vec(el, 0..6),
        prop::sample::select(vec![
            "chord_m",
            "chord",
            "chord_behind_m",
            "spacing_m",
            "start_chainage_m",
            "noise_mm",
            "chord_ft",
            "spacing_ft",
            "start_chainage_ft",
            "gauge_in",
            "noise_in",
        ]),
        prop_oneof![0.001..100.0f64, any::<f64>(), Just(1e15)],
        prop::sample::select(vec![
            "",
            "\"units\": \"metric\", ",
            "\"units\": \"imperial\", ",
            "\"units\": \"feet\", ",
            "\"units\": 3, ",
        ]),
    )
        .prop_map(|(els, key, v, units)| {
            format!(
                "{{{units}\"{key}\": {v}, \"elements\": [{}]}}",
                els.join(", ")
            )
        })
        .prop_map(|s| s.replace("NaN", "null").replace("inf", "1e999"))
}

proptest! {
    #![proptest_config(ProptestConfig { cases: cases(256), ..ProptestConfig::default() })]

    #[test]
    fn control_files_never_panic_and_name_the_file(text in control_text()) {
        match read_controls(text.as_bytes(), "c.csv", None) {
            Ok((set, _)) => {
                for w in set.points.windows(2) {
                    prop_assert!(w[0].chainage < w[1].chainage);
                }
                for p in &set.points {
                    prop_assert!(p.chainage.is_finite() && p.lonlat.lon.is_finite() && p.lonlat.lat.is_finite());
                }
            }
            Err(e) => prop_assert!(e.to_string().starts_with("c.csv"), "{e}"),
        }
    }

    #[test]
    fn design_files_never_panic_and_are_checked(text in design_text()) {
        match Design::from_json("d.json", &text) {
            Ok(d) => {
                // One unit system per file: feet exactly when it says imperial.
                let imperial = text.contains("\"units\": \"imperial\"");
                prop_assert_eq!(d.setup.chainage_unit == chordline::units::LengthUnit::Foot, imperial, "{}", text);
                let foreign = if imperial { "_m\"" } else { "_ft\"" };
                prop_assert!(!text.contains(foreign), "{}", text);
                // Whatever the design, simulate refuses or measures finite readings.
                if let Ok(sim) = simulate(&d.alignment(), &d.setup) {
                    prop_assert!(sim.survey.readings.iter().all(|r| r.chainage.is_finite() && r.versine.is_none_or(f64::is_finite)));
                    prop_assert!(sim.survey.readings.windows(2).all(|w| w[0].chainage < w[1].chainage), "{text}");
                }
            }
            Err(e) => prop_assert!(e.to_string().starts_with("d.json"), "{e}"),
        }
    }
}
