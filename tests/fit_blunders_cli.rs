//! `chordline run` on the demo survey with typing slips put in by hand:
//! outliers.csv lists them with their file lines, the output contract still
//! holds, and `--keep-outliers` keeps them in the fit.

mod common;

use common::{check_contract, chordline, demo_survey, stderr};

/// The demo survey with three slips: 83 → 38 (digits swapped, line 48),
/// 79 → −79 (sign, line 58), 80 → 8 (decimal point, line 44).
fn slipped(dir: &std::path::Path) -> std::path::PathBuf {
    let text = std::fs::read_to_string(demo_survey()).unwrap();
    let text = text
        .replace("\n12740,83,", "\n12740,38,")
        .replace("\n12840,79,", "\n12840,-79,")
        .replace("\n12700,80,", "\n12700,8,");
    let p = dir.join("slipped.csv");
    std::fs::write(&p, text).unwrap();
    p
}

fn run(survey: &std::path::Path, out: &std::path::Path, extra: &[&str]) -> std::process::Output {
    let mut args = vec![
        "run",
        survey.to_str().unwrap(),
        "--chord",
        "20m",
        "--rail",
        "left",
        "--out",
        out.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    chordline(&args)
}

#[test]
fn slips_are_listed_and_kept_only_when_asked() {
    let tmp = tempfile::tempdir().unwrap();
    let survey = slipped(tmp.path());
    let out = tmp.path().join("out");
    let o = run(&survey, &out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let err = stderr(&o);
    assert!(err.contains("slipped.csv:48: warning: the reading at chainage 12740.000 m looks like a blunder (transposed digits)"), "{err}");
    let csv = std::fs::read_to_string(out.join("outliers.csv")).expect("outliers.csv");
    let rows: Vec<&str> = csv.lines().collect();
    assert_eq!(
        rows[0],
        "line,chainage_m,read_mm,expected_mm,robust_sd,looks_like,left_out"
    );
    let described: Vec<(String, String, String)> = rows[1..]
        .iter()
        .map(|r| {
            let c: Vec<&str> = r.split(',').collect();
            (c[0].to_string(), c[5].to_string(), c[6].to_string())
        })
        .collect();
    let want = |l: &str, what: &str, out: &str| (l.to_string(), what.to_string(), out.to_string());
    assert_eq!(
        described,
        vec![
            want("44", "slipped decimal point", "yes"),
            want("48", "transposed digits", "yes"),
            want("58", "wrong sign", "yes"),
        ]
    );
    check_contract(&out);

    let kept = tmp.path().join("kept");
    let o = run(&survey, &kept, &["--keep-outliers"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let csv = std::fs::read_to_string(kept.join("outliers.csv")).expect("outliers.csv");
    assert!(csv.lines().skip(1).all(|r| r.ends_with(",no")), "{csv}");

    // The clean demo writes no outliers.csv.
    let clean = tmp.path().join("clean");
    let o = run(&demo_survey(), &clean, &[]);
    assert!(o.status.success());
    assert!(!clean.join("outliers.csv").exists());
}
