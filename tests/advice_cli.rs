//! `chordline run ... --speed` end to end: advice.csv (one row per arc and
//! transition, caution in its header), the output contract still holds, and
//! no advice file unless asked for.

mod common;

use common::{check_contract, run_demo_to, stderr, stdout};
use std::path::Path;

/// Data rows (not `#` comments) of a CSV file, header first.
fn csv_rows(path: &Path) -> Vec<Vec<String>> {
    let text = std::fs::read_to_string(path).unwrap();
    text.lines()
        .filter(|l| !l.starts_with('#') && !l.is_empty())
        .map(split_csv)
        .collect()
}

fn split_csv(line: &str) -> Vec<String> {
    let (mut out, mut cur, mut q) = (Vec::new(), String::new(), false);
    for c in line.chars() {
        match c {
            '"' => q = !q,
            ',' if !q => out.push(std::mem::take(&mut cur)),
            _ => cur.push(c),
        }
    }
    out.push(cur);
    out
}

#[test]
fn speed_writes_advice_with_one_row_per_arc_and_transition() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = run_demo_to(&out, &["--speed", "100km/h"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let err = stdout(&o);
    assert!(err.contains("ADVISORY ONLY"), "{err}");
    assert!(err.contains("competent engineer"), "{err}");
    let text = std::fs::read_to_string(out.join("advice.csv")).expect("advice.csv written");
    // The caution heads the file.
    assert!(text.starts_with("# ADVISORY ONLY"), "{text}");
    for words in [
        "competent engineer",
        "vehicle approvals",
        "depend on the limit profile",
        "does not know the applied cant",
        "from memory - verify",
    ] {
        assert!(text.contains(words), "advice.csv lacks '{words}'");
    }
    let advice = csv_rows(&out.join("advice.csv"));
    let elements = csv_rows(&out.join("elements.csv"));
    let col = |rows: &[Vec<String>], name: &str| rows[0].iter().position(|h| h == name).unwrap();
    let (ak, ek) = (col(&advice, "kind"), col(&elements, "kind"));
    let curved: Vec<(String, String)> = elements[1..]
        .iter()
        .filter(|r| r[ek] != "straight")
        .map(|r| (r[0].clone(), r[ek].clone()))
        .collect();
    let rows: Vec<(String, String)> = advice[1..]
        .iter()
        .map(|r| (r[0].clone(), r[ak].clone()))
        .collect();
    assert!(!curved.is_empty());
    assert_eq!(rows, curved, "one advice row per arc and transition");
    // Every arc has an equilibrium cant at 100 km/h and speeds in 5 km/h steps.
    let (eq, vmax) = (
        col(&advice, "equilibrium_cant_mm"),
        col(&advice, "max_speed_cant_limit_kmh"),
    );
    for r in advice[1..].iter().filter(|r| r[ak] == "arc") {
        let e: f64 = r[eq].parse().unwrap();
        assert!(e > 0.0);
        let v: f64 = r[vmax].parse().unwrap();
        assert_eq!(v % 5.0, 0.0, "{v}");
    }
    // The team's output-contract checker (skips where ../shared is absent).
    check_contract(&out);
}

#[test]
fn mph_picks_the_fra_profile_and_no_speed_means_no_advice() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("mph");
    let o = run_demo_to(&out, &["--speed", "60mph", "--applied-cant", "4in"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = std::fs::read_to_string(out.join("advice.csv")).unwrap();
    assert!(text.contains("profile us-fra"), "{text}");
    assert!(text.contains("max_speed_mph") && text.contains("equilibrium_cant_in"));
    // Without --speed or --applied-cant: no advice file.
    let out2 = dir.path().join("plain");
    let o = run_demo_to(&out2, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(!out2.join("advice.csv").exists());
    // A limit without a speed or cant is refused, as is an unknown profile.
    let o = run_demo_to(&dir.path().join("x"), &["--cant-limit", "150mm"]);
    assert!(!o.status.success());
    assert!(stderr(&o).contains("--speed"), "{}", stderr(&o));
    let o = run_demo_to(
        &dir.path().join("y"),
        &["--speed", "100km/h", "--limits", "mars"],
    );
    assert!(!o.status.success());
    assert!(stderr(&o).contains("uk, us-fra"), "{}", stderr(&o));
    // Overrides are named as the user's in the file.
    let out3 = dir.path().join("over");
    let o = run_demo_to(
        &out3,
        &["--applied-cant", "100mm", "--deficiency-limit", "90mm"],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = std::fs::read_to_string(out3.join("advice.csv")).unwrap();
    assert!(
        text.contains("max cant deficiency 90.0 mm (set by the user)"),
        "{text}"
    );
}
