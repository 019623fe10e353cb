//! Tests of the output folder: nothing lost, nothing half-written.

use super::*;

fn write(out: &mut OutputDir, name: &str, text: &str) {
    let t = text.to_string();
    out.write_file(name, move |w| w.write_all(t.as_bytes()))
        .unwrap();
}

fn listing(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut v: Vec<_> = fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let e = e.unwrap();
            (
                e.file_name().to_string_lossy().into_owned(),
                fs::read(e.path()).unwrap(),
            )
        })
        .collect();
    v.sort();
    v
}

fn no_leftovers(parent: &Path) {
    let names: Vec<_> = fs::read_dir(parent)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains(".chordline-"))
        .collect();
    assert!(names.is_empty(), "left behind: {names:?}");
}

#[test]
fn an_empty_existing_folder_is_used_without_force() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("out");
    fs::create_dir(&target).unwrap();
    let mut out = OutputDir::create(&target, false).unwrap();
    write(&mut out, "stations.csv", "x\n");
    out.commit().unwrap();
    assert_eq!(
        listing(&target),
        [
            (MARKER.to_string(), MARKER_TEXT.as_bytes().to_vec()),
            ("stations.csv".to_string(), b"x\n".to_vec())
        ]
    );
    // Now it holds results: refused without force.
    assert!(matches!(
        OutputDir::create(&target, false),
        Err(OutputError::Exists { .. })
    ));
    no_leftovers(tmp.path());
}

#[test]
fn commit_creates_the_files() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("a/b/out");
    let mut out = OutputDir::create(&target, false).unwrap();
    write(&mut out, "stations.csv", "x\n1\n");
    write(&mut out, "elements.csv", "e\n");
    assert!(!target.exists());
    assert_eq!(out.files(), ["stations.csv", "elements.csv"]);
    assert_eq!(out.commit().unwrap(), target);
    assert_eq!(
        listing(&target),
        [
            (MARKER.to_string(), MARKER_TEXT.as_bytes().to_vec()),
            ("elements.csv".to_string(), b"e\n".to_vec()),
            ("stations.csv".to_string(), b"x\n1\n".to_vec())
        ]
    );
    no_leftovers(target.parent().unwrap());
}

#[test]
fn failure_mid_run_leaves_earlier_results_byte_identical() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("out");
    let mut first = OutputDir::create(&target, false).unwrap();
    write(&mut first, "stations.csv", "old results\n");
    first.commit().unwrap();
    let before = listing(&target);

    // A forced rerun that fails while writing its second file.
    let mut again = OutputDir::create(&target, true).unwrap();
    write(&mut again, "stations.csv", "new, half done\n");
    let e = again
        .write_file("elements.csv", |w| {
            w.write_all(b"partial")?;
            Err(io::Error::other("disk full"))
        })
        .unwrap_err();
    assert!(
        e.to_string()
            .starts_with("cannot write 'elements.csv' for the output folder"),
        "{e}"
    );
    drop(again);
    assert_eq!(listing(&target), before);
    no_leftovers(tmp.path());

    // A panic inside a writer unwinds through Drop just the same.
    let t2 = target.clone();
    let r = std::panic::catch_unwind(move || {
        let mut o = OutputDir::create(&t2, true).unwrap();
        let _ = o.write_file("stations.csv", |_| panic!("bug in a writer"));
    });
    assert!(r.is_err());
    assert_eq!(listing(&target), before);
    no_leftovers(tmp.path());
}

#[test]
fn existing_folder_needs_force() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("out");
    fs::create_dir(&target).unwrap();
    fs::write(target.join("keep.txt"), "mine").unwrap();
    let e = OutputDir::create(&target, false).unwrap_err();
    assert_eq!(
        e.to_string(),
        format!(
            "output folder '{}' already exists; pass --force to replace it, or choose another folder with --out",
            target.display()
        )
    );
    assert_eq!(fs::read(target.join("keep.txt")).unwrap(), b"mine");
    no_leftovers(tmp.path());
}

#[test]
fn force_replaces_the_folder() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("out");
    let mut first = OutputDir::create(&target, false).unwrap();
    write(&mut first, "stale.txt", "old");
    first.commit().unwrap();
    let mut out = OutputDir::create(&target, true).unwrap();
    write(&mut out, "stations.csv", "new\n");
    out.commit().unwrap();
    assert_eq!(
        listing(&target),
        [
            (MARKER.to_string(), MARKER_TEXT.as_bytes().to_vec()),
            ("stations.csv".to_string(), b"new\n".to_vec())
        ]
    );
    no_leftovers(tmp.path());
}

#[test]
fn force_never_replaces_a_folder_chordline_did_not_write() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("mine");
    fs::create_dir(&target).unwrap();
    fs::write(target.join("thesis.txt"), "years of work").unwrap();
    let e = OutputDir::create(&target, true).unwrap_err();
    assert!(matches!(e, OutputError::NotOurs { .. }), "{e}");
    assert!(
        e.to_string().contains("was not written by chordline"),
        "{e}"
    );
    assert_eq!(
        fs::read(target.join("thesis.txt")).unwrap(),
        b"years of work"
    );
    no_leftovers(tmp.path());
}

#[test]
fn a_symlinked_target_is_followed_and_the_link_kept() {
    let tmp = tempfile::tempdir().unwrap();
    let real = tmp.path().join("real");
    let mut first = OutputDir::create(&real, false).unwrap();
    write(&mut first, "stale.csv", "old");
    first.commit().unwrap();
    let link = tmp.path().join("link");
    #[cfg(unix)]
    std::os::unix::fs::symlink(&real, &link).unwrap();
    #[cfg(not(unix))]
    return;
    let mut out = OutputDir::create(&link, true).unwrap();
    write(&mut out, "stations.csv", "new\n");
    assert_eq!(out.commit().unwrap(), link);
    assert!(
        fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert!(!real.join("stale.csv").exists());
    assert_eq!(fs::read(real.join("stations.csv")).unwrap(), b"new\n");
    no_leftovers(tmp.path());
    // A link to nothing is named as such.
    let dangling = tmp.path().join("dangling");
    #[cfg(unix)]
    std::os::unix::fs::symlink(tmp.path().join("gone"), &dangling).unwrap();
    let e = OutputDir::create(&dangling, true).unwrap_err();
    assert!(matches!(e, OutputError::DanglingLink { .. }), "{e}");
}

#[test]
fn a_failed_run_leaves_no_new_parent_folders() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("new1/new2/R");
    let mut out = OutputDir::create(&target, false).unwrap();
    write(&mut out, "stations.csv", "x\n");
    assert!(tmp.path().join("new1/new2").is_dir());
    drop(out);
    assert!(!tmp.path().join("new1").exists());
}

#[test]
fn leftovers_of_killed_runs_are_tidied_and_named() {
    if !Path::new("/proc/self").exists() {
        eprintln!("SKIPPED: no /proc, so a dead process cannot be told from a live one");
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("out");
    // A process id that is not running: a child that has exited.
    let mut child = std::process::Command::new("true").spawn().unwrap();
    let dead = child.id();
    child.wait().unwrap();
    let partial = tmp.path().join(format!(".out.chordline-partial-{dead}-0"));
    fs::create_dir(&partial).unwrap();
    fs::write(partial.join("stations.csv"), "half").unwrap();
    // Killed between the renames of a forced commit: earlier results aside.
    let old = tmp.path().join(format!(".out.chordline-old-{dead}-1"));
    fs::create_dir(&old).unwrap();
    fs::write(old.join(MARKER), MARKER_TEXT).unwrap();
    fs::write(old.join("stations.csv"), "earlier").unwrap();
    let out = OutputDir::create(&target, false).unwrap();
    assert_eq!(out.notes().len(), 2, "{:?}", out.notes());
    assert!(
        out.notes()[0].contains("were put back"),
        "{:?}",
        out.notes()
    );
    assert!(
        out.notes()[1].contains("a half-written folder"),
        "{:?}",
        out.notes()
    );
    assert_eq!(fs::read(target.join("stations.csv")).unwrap(), b"earlier");
    drop(out);
    no_leftovers(tmp.path());
}

#[test]
fn concurrent_forced_commits_each_swap_whole() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("out");
    let ok: Vec<bool> = std::thread::scope(|s| {
        let hs: Vec<_> = (0..4)
            .map(|i| {
                let t = target.clone();
                s.spawn(move || {
                    let mut o = OutputDir::create(&t, true).unwrap();
                    write(&mut o, "stations.csv", &format!("run {i}\n"));
                    o.commit().is_ok()
                })
            })
            .collect();
        hs.into_iter().map(|h| h.join().unwrap()).collect()
    });
    assert!(ok.iter().all(|&b| b), "{ok:?}");
    let l = listing(&target);
    assert_eq!(l.len(), 2, "{l:?}");
    no_leftovers(tmp.path());
}

#[test]
fn target_appearing_during_the_run_is_not_overwritten() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("out");
    let mut out = OutputDir::create(&target, false).unwrap();
    write(&mut out, "stations.csv", "new\n");
    fs::create_dir(&target).unwrap();
    fs::write(target.join("theirs.txt"), "t").unwrap();
    assert!(matches!(out.commit(), Err(OutputError::Exists { .. })));
    assert_eq!(
        listing(&target),
        [("theirs.txt".to_string(), b"t".to_vec())]
    );
    no_leftovers(tmp.path());
}

#[test]
fn input_file_is_never_the_output() {
    let tmp = tempfile::tempdir().unwrap();
    let input = tmp.path().join("survey.csv");
    fs::write(&input, "chainage_m,versine_mm\n").unwrap();
    let e = OutputDir::create_for_inputs(&input, true, &[&input]).unwrap_err();
    assert!(matches!(e, OutputError::IsInput { .. }), "{e}");
    assert!(e.to_string().contains("is the input file itself"), "{e}");
    // A folder holding the input is not replaced, even with force.
    let e = OutputDir::create_for_inputs(tmp.path(), true, &[&input]).unwrap_err();
    assert!(matches!(e, OutputError::ContainsInput { .. }), "{e}");
    // Without inputs named, a file at the target is still refused.
    let e = OutputDir::create(&input, true).unwrap_err();
    assert!(matches!(e, OutputError::NotAFolder { .. }), "{e}");
    assert_eq!(fs::read(&input).unwrap(), b"chainage_m,versine_mm\n");
}

#[test]
fn names_must_be_plain() {
    let tmp = tempfile::tempdir().unwrap();
    let mut out = OutputDir::create(&tmp.path().join("out"), false).unwrap();
    for bad in ["", ".", "..", "a/b", "../x", "a\\b"] {
        assert!(
            matches!(
                out.write_file(bad, |_| Ok(())),
                Err(OutputError::BadName { .. })
            ),
            "{bad:?}"
        );
    }
    out.write_file("a.csv", |_| Ok(())).unwrap();
    let e = out.write_file("a.csv", |_| Ok(())).unwrap_err();
    assert!(matches!(e, OutputError::Duplicate { .. }) && e.is_internal());
    let e = OutputDir::create(tmp.path(), false).unwrap_err();
    assert!(!e.is_internal());
}

#[test]
fn a_writer_refusing_its_content_is_not_called_a_disk_problem() {
    let tmp = tempfile::tempdir().unwrap();
    let mut out = OutputDir::create(&tmp.path().join("out"), false).unwrap();
    let e = out
        .write_file("alignment.geojson", |_| {
            Err(io::Error::new(
                io::ErrorKind::InvalidData,
                "cannot write alignment.geojson: the track crosses the 180th meridian",
            ))
        })
        .unwrap_err();
    assert!(matches!(e, OutputError::Content { .. }), "{e}");
    assert!(!e.to_string().contains("disk"), "{e}");
}
