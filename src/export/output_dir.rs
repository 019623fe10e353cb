//! Never losing work: an output folder that appears whole or not at all.
//!
//! [`OutputDir`] stages every output file in a hidden folder next to the
//! target (so on the same filesystem), and only [`OutputDir::commit`] moves it
//! into place, after every file was written, flushed and synced. Until then an
//! earlier output folder of the same name is untouched; if the run fails (the
//! `OutputDir` is dropped without `commit`, including on a panic), the
//! staging folder is removed and nothing else changes. An existing output
//! folder is replaced only with `force`, and never when it is, or holds, one
//! of the run's input files.
//!
//! If the process is killed outright (a signal that does not unwind), a
//! hidden `.NAME.chordline-partial-*` folder may be left beside the target;
//! it holds nothing of value and can be deleted. A kill in the instant between
//! the two renames of a forced commit leaves the earlier results in
//! `.NAME.chordline-old-*` beside the target.
//!
//! # Examples
//! ```
//! use chordline::export::output_dir::OutputDir;
//! # fn main() -> Result<(), Box<dyn std::error::Error>> {
//! let tmp = tempfile::tempdir()?;
//! let target = tmp.path().join("out");
//! let mut out = OutputDir::create(&target, false)?;
//! out.write_file("stations.csv", |w| writeln!(w, "chainage_m,versine_mm"))?;
//! assert!(!target.exists()); // nothing visible before the commit
//! let done = out.commit()?;
//! assert_eq!(std::fs::read_to_string(done.join("stations.csv"))?, "chainage_m,versine_mm\n");
//! # Ok(()) }
//! ```

use std::fs::{self, File};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// Why the output folder could not be prepared, written or put in place.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum OutputError {
    /// The target exists and `force` was not given.
    #[error(
        "output folder '{}' already exists; pass --force to replace it, or choose another folder with --out",
        .path.display()
    )]
    Exists {
        /// The target folder.
        path: PathBuf,
    },
    /// The target exists and is a file, not a folder.
    #[error(
        "'{}' exists and is a file, not a folder; choose another folder with --out",
        .path.display()
    )]
    NotAFolder {
        /// The target path.
        path: PathBuf,
    },
    /// The target is one of the input files.
    #[error(
        "the output folder '{}' is the input file itself; choose another folder with --out (e.g. '{}')",
        .path.display(), .suggestion.display()
    )]
    IsInput {
        /// The target path.
        path: PathBuf,
        /// A folder name that would do.
        suggestion: PathBuf,
    },
    /// The target folder holds an input file, which replacing it would delete.
    #[error(
        "the output folder '{}' holds the input file '{}', which replacing the folder would delete; choose another folder with --out",
        .path.display(), .input.display()
    )]
    ContainsInput {
        /// The target folder.
        path: PathBuf,
        /// The input file inside it.
        input: PathBuf,
    },
    /// A file name that is empty, has a path separator or is `.`/`..`.
    #[error(
        "'{name}' is not a plain file name (internal error: output files are named by the program)"
    )]
    BadName {
        /// The name given.
        name: String,
    },
    /// The same file written twice.
    #[error("'{name}' was written twice (internal error: each output file is written once)")]
    Duplicate {
        /// The name given.
        name: String,
    },
    /// Creating the folder next to the target failed.
    #[error(
        "cannot create a working folder next to '{}': {source}; check that the folder above it exists and may be written to",
        .path.display()
    )]
    Stage {
        /// The target folder.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: io::Error,
    },
    /// Writing one output file failed.
    #[error(
        "cannot write '{name}' for the output folder '{}': {source}; check the free disk space (earlier results were left as they were)",
        .path.display()
    )]
    Write {
        /// The file name.
        name: String,
        /// The target folder.
        path: PathBuf,
        /// The error.
        #[source]
        source: io::Error,
    },
    /// Moving the finished folder into place failed.
    #[error(
        "cannot move the finished results into '{}': {source}; earlier results were left as they were",
        .path.display()
    )]
    Commit {
        /// The target folder.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: io::Error,
    },
}

impl OutputError {
    /// Whether this is a bug in the program (a bad or repeated file name)
    /// rather than a problem with the user's folders or disk. A CLI would exit
    /// with its internal-error code for these and its input/usage code for
    /// the rest.
    pub fn is_internal(&self) -> bool {
        matches!(
            self,
            OutputError::BadName { .. } | OutputError::Duplicate { .. }
        )
    }
}

/// An output folder being written. See the [module docs](self).
#[derive(Debug)]
pub struct OutputDir {
    target: PathBuf,
    staging: PathBuf,
    force: bool,
    inputs: Vec<PathBuf>,
    files: Vec<String>,
    committed: bool,
}

static COUNTER: AtomicU64 = AtomicU64::new(0);

/// A hidden sibling of `target` whose name starts with `.name.kind-`.
fn sibling(target: &Path, kind: &str) -> PathBuf {
    let parent = parent_of(target);
    let name = target
        .file_name()
        .map_or_else(|| "out".into(), |n| n.to_string_lossy().into_owned());
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    parent.join(format!(".{name}.{kind}-{}-{n}", std::process::id()))
}

fn parent_of(target: &Path) -> PathBuf {
    match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

impl OutputDir {
    /// Start writing the output folder `target`.
    ///
    /// Creates the folder above `target` if missing, and a hidden staging
    /// folder beside `target`. Nothing at `target` changes until
    /// [`commit`](Self::commit).
    ///
    /// # Errors
    /// [`OutputError::Exists`] if `target` exists and `force` is false,
    /// [`OutputError::NotAFolder`] if it is a file, [`OutputError::Stage`] if
    /// the staging folder cannot be made.
    pub fn create(target: &Path, force: bool) -> Result<Self, OutputError> {
        Self::create_for_inputs(target, force, &[])
    }

    /// As [`create`](Self::create), and also refuse a `target` that is one
    /// of `inputs` or holds one of them (replacing it would delete an input).
    ///
    /// # Errors
    /// Those of [`create`](Self::create), and [`OutputError::IsInput`] or
    /// [`OutputError::ContainsInput`].
    pub fn create_for_inputs(
        target: &Path,
        force: bool,
        inputs: &[&Path],
    ) -> Result<Self, OutputError> {
        let inputs: Vec<PathBuf> = inputs.iter().map(|p| p.to_path_buf()).collect();
        check_target(target, force, &inputs)?;
        let parent = parent_of(target);
        fs::create_dir_all(&parent).map_err(|source| OutputError::Stage {
            path: target.to_path_buf(),
            source,
        })?;
        let staging = sibling(target, "chordline-partial");
        fs::create_dir(&staging).map_err(|source| OutputError::Stage {
            path: target.to_path_buf(),
            source,
        })?;
        Ok(OutputDir {
            target: target.to_path_buf(),
            staging,
            force,
            inputs,
            files: Vec::new(),
            committed: false,
        })
    }

    /// The folder the results will be in after the commit.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Names of the files written so far.
    pub fn files(&self) -> &[String] {
        &self.files
    }

    /// Write one output file `name` (a plain file name) through `f`, which
    /// gets a buffered writer. The file is flushed and synced before this
    /// returns.
    ///
    /// # Errors
    /// [`OutputError::Write`] if creating, writing (an error returned by `f`)
    /// or syncing fails; [`OutputError::BadName`] or
    /// [`OutputError::Duplicate`] for a name that is not a plain file name or
    /// was written before.
    pub fn write_file(
        &mut self,
        name: &str,
        f: impl FnOnce(&mut dyn Write) -> io::Result<()>,
    ) -> Result<(), OutputError> {
        let plain = !name.is_empty()
            && name != "."
            && name != ".."
            && !name.contains(['/', '\\'])
            && Path::new(name).file_name().is_some_and(|n| n == name);
        if !plain {
            return Err(OutputError::BadName {
                name: name.to_string(),
            });
        }
        if self.files.iter().any(|n| n == name) {
            return Err(OutputError::Duplicate {
                name: name.to_string(),
            });
        }
        let werr = |source| OutputError::Write {
            name: name.to_string(),
            path: self.target.clone(),
            source,
        };
        let path = self.staging.join(name);
        let file = File::create(&path).map_err(werr)?;
        let mut w = BufWriter::new(file);
        f(&mut w).map_err(werr)?;
        let file = w.into_inner().map_err(|e| werr(e.into_error()))?;
        file.sync_all().map_err(werr)?;
        self.files.push(name.to_string());
        Ok(())
    }

    /// Put the finished folder in place and return its path.
    ///
    /// Without `force` this fails if the target appeared meanwhile. With
    /// `force` an existing target is first moved aside, then the new folder
    /// is moved in, then the old one deleted; if the move in fails, the old
    /// one is moved back.
    ///
    /// # Errors
    /// [`OutputError::Exists`], [`OutputError::IsInput`],
    /// [`OutputError::ContainsInput`] (checked again), or
    /// [`OutputError::Commit`] if a rename fails. In every case the earlier
    /// folder, if any, is left in place.
    pub fn commit(mut self) -> Result<PathBuf, OutputError> {
        check_target(&self.target, self.force, &self.inputs)?;
        let cerr = |source| OutputError::Commit {
            path: self.target.clone(),
            source,
        };
        // Sync the staging folder's entries (not possible on every platform).
        if let Ok(d) = File::open(&self.staging) {
            let _ = d.sync_all();
        }
        let old = if self.target.exists() {
            let old = sibling(&self.target, "chordline-old");
            fs::rename(&self.target, &old).map_err(cerr)?;
            Some(old)
        } else {
            None
        };
        if let Err(e) = fs::rename(&self.staging, &self.target) {
            if let Some(old) = &old {
                let _ = fs::rename(old, &self.target);
            }
            return Err(cerr(e));
        }
        self.committed = true;
        if let Some(old) = old {
            // The new results are in place; failing to delete the old copy
            // loses nothing, so it is not an error.
            let _ = fs::remove_dir_all(old);
        }
        if let Ok(d) = File::open(parent_of(&self.target)) {
            let _ = d.sync_all();
        }
        Ok(self.target.clone())
    }
}

impl Drop for OutputDir {
    fn drop(&mut self) {
        if !self.committed {
            let _ = fs::remove_dir_all(&self.staging);
        }
    }
}

/// Refuse a target that exists (without force), is a file, is an input or
/// holds one.
fn check_target(target: &Path, force: bool, inputs: &[PathBuf]) -> Result<(), OutputError> {
    let canon_target = fs::canonicalize(target).ok();
    for input in inputs {
        let same_text = input == target;
        let canon_input = fs::canonicalize(input).ok();
        if same_text || (canon_input.is_some() && canon_input == canon_target) {
            let mut suggestion = target.as_os_str().to_owned();
            suggestion.push("-results");
            return Err(OutputError::IsInput {
                path: target.to_path_buf(),
                suggestion: PathBuf::from(suggestion),
            });
        }
        if let (Some(t), Some(i)) = (&canon_target, &canon_input)
            && i.starts_with(t)
        {
            return Err(OutputError::ContainsInput {
                path: target.to_path_buf(),
                input: input.clone(),
            });
        }
    }
    match fs::symlink_metadata(target) {
        Ok(m) if !(m.is_dir() || m.file_type().is_symlink() && target.is_dir()) => {
            Err(OutputError::NotAFolder {
                path: target.to_path_buf(),
            })
        }
        // An existing but empty folder holds nothing to lose (scripts often
        // make the folder first): it is used without --force.
        Ok(_) if !force && !is_empty_dir(target) => Err(OutputError::Exists {
            path: target.to_path_buf(),
        }),
        _ => Ok(()),
    }
}

/// Whether `p` is a folder with nothing in it.
fn is_empty_dir(p: &Path) -> bool {
    fs::read_dir(p).is_ok_and(|mut d| d.next().is_none())
}

#[cfg(test)]
mod tests {
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
            [("stations.csv".to_string(), b"x\n".to_vec())]
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
        fs::create_dir(&target).unwrap();
        fs::write(target.join("stale.txt"), "old").unwrap();
        let mut out = OutputDir::create(&target, true).unwrap();
        write(&mut out, "stations.csv", "new\n");
        out.commit().unwrap();
        assert_eq!(
            listing(&target),
            [("stations.csv".to_string(), b"new\n".to_vec())]
        );
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
}
