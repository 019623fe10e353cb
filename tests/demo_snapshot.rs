//! Snapshot of the demo's output folders: every file's size and a 64-bit
//! FNV-1a hash of its bytes, compared with `tests/snapshots/demo.txt`.
//!
//! The outputs are byte-deterministic (fixed decimals, a time stamp from
//! `SOURCE_DATE_EPOCH`), so a change of any byte shows up here. When a change
//! is intended, refresh the snapshot and commit it with the change:
//!
//! ```sh
//! UPDATE_SNAPSHOTS=1 cargo test --release --test demo_snapshot
//! ```

use std::fmt::Write as _;
use std::path::Path;
use std::process::Command;

/// FNV-1a, 64 bit (Fowler, Noll, Vo; the published offset basis and prime).
fn fnv1a(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for &b in bytes {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h
}

/// Run `chordline` in the crate root (so that paths in the outputs are the
/// relative ones a user types) and list the output folder.
fn run_and_list(name: &str, args: &[&str], tmp: &Path, listing: &mut String) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let out = tmp.join(name);
    let o = Command::new(env!("CARGO_BIN_EXE_chordline"))
        .current_dir(root)
        .env("SOURCE_DATE_EPOCH", "1767225600")
        .args(args)
        .arg("--out")
        .arg(&out)
        .output()
        .expect("run chordline");
    assert!(
        o.status.success(),
        "{name}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let mut files: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    for f in files {
        let bytes = std::fs::read(&f).unwrap();
        let file = f.file_name().unwrap().to_string_lossy();
        if file.starts_with('.') {
            continue; // bookkeeping of the output folder, not a result
        }
        let _ = writeln!(
            listing,
            "{name}/{file} {} {:016x}",
            bytes.len(),
            fnv1a(&bytes)
        );
    }
}

#[test]
fn demo_outputs_are_unchanged() {
    let tmp = tempfile::tempdir().unwrap();
    let mut listing = String::new();
    let survey = "demo-data/eastvale-survey.csv";
    let base = [survey, "--chord", "20m", "--rail", "left"];
    run_and_list(
        "local",
        &["run", base[0], base[1], base[2], base[3], base[4]],
        tmp.path(),
        &mut listing,
    );
    let placed = [
        "run",
        survey,
        "--chord",
        "20m",
        "--rail",
        "left",
        "--control",
        "demo-data/eastvale-control.csv",
        "--crs",
        "EPSG:25832",
    ];
    run_and_list("placed", &placed, tmp.path(), &mut listing);
    let snap = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/snapshots/demo.txt");
    if std::env::var_os("UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&snap, &listing).unwrap();
        return;
    }
    let want = std::fs::read_to_string(&snap).unwrap_or_default();
    assert_eq!(
        want, listing,
        "the demo's outputs changed (left: tests/snapshots/demo.txt, right: now). If intended, refresh with UPDATE_SNAPSHOTS=1 cargo test --release --test demo_snapshot and commit the snapshot"
    );
}
