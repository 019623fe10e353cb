//! Never losing work: an output folder that appears whole or not at all.
//!
//! [`OutputDir`] stages every output file in a hidden folder next to the
//! target (so on the same filesystem), and only [`OutputDir::commit`] moves it
//! into place, after every file was written, flushed and synced. Until then an
//! earlier output folder of the same name is untouched; if the run fails (the
//! `OutputDir` is dropped without `commit`, including on a panic), the
//! staging folder is removed, and so are the folders above the target that
//! the run created; nothing else changes. An existing output folder is
//! replaced only with `force`, only when chordline wrote it (it holds the
//! [`MARKER`] file; an empty folder is used as it is), and never when it is,
//! or holds, one of the run's input files or the working folder. A symlink
//! at the target is followed: the folder it points to is replaced, the link
//! stays.
//!
//! If the process is killed outright (a signal that does not unwind), a
//! hidden `.NAME.chordline-partial-PID-N` folder may be left beside the
//! target, and a kill in the instant between the two renames of a forced
//! commit leaves the earlier results in `.NAME.chordline-old-PID-N`. The next
//! run writing the same target removes the first, puts the second back (or
//! removes it when newer results are in place), and says so in
//! [`OutputDir::notes`]; where it cannot tell that the process is gone (no
//! `/proc`), it names them instead. Runs writing one target at the same time
//! commit one after the other (a lock on the folder above the target), so each
//! swap is whole and the last one wins.
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
    /// `--force` on a folder that holds files but no [`MARKER`]: it was not
    /// written by chordline, and replacing it could delete the user's files.
    #[error(
        "the folder '{}' was not written by chordline (it has no {MARKER} file), so --force does not replace it: it may hold your own files; choose a new folder with --out, or empty the folder yourself",
        .path.display()
    )]
    NotOurs {
        /// The target folder.
        path: PathBuf,
    },
    /// The target is a symlink to nothing.
    #[error(
        "'{}' is a symbolic link to something that does not exist; remove the link or choose another folder with --out",
        .path.display()
    )]
    DanglingLink {
        /// The target path.
        path: PathBuf,
    },
    /// The target is, or holds, the current working folder.
    #[error(
        "the output folder '{}' holds the folder you are working in; choose a new folder below it with --out (e.g. --out results)",
        .path.display()
    )]
    HoldsWorkingFolder {
        /// The target folder.
        path: PathBuf,
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
    /// A writer refused its content (e.g. GeoJSON of a track across the
    /// 180th meridian): not a disk problem.
    #[error("{source}; no output folder was written (earlier results were left as they were)")]
    Content {
        /// The file name.
        name: String,
        /// The target folder.
        path: PathBuf,
        /// The writer's error (kind `InvalidData` or `InvalidInput`).
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

/// The file chordline puts in every output folder it writes. `--force`
/// replaces only a folder that holds it (or an empty one): a folder without it
/// was not written by chordline and may hold the user's own files.
pub const MARKER: &str = ".chordline-output";

/// What the marker file says to a person who opens it.
const MARKER_TEXT: &str = "This folder was written by chordline. `chordline run ... --force` may replace it whole;\nkeep your own files elsewhere.\n";

/// An output folder being written. See the [module docs](self).
#[derive(Debug)]
pub struct OutputDir {
    /// The folder as the user named it (for messages).
    target: PathBuf,
    /// Where the folder really goes: `target`, or the folder a symlink at
    /// `target` points to.
    real: PathBuf,
    staging: PathBuf,
    force: bool,
    inputs: Vec<PathBuf>,
    files: Vec<String>,
    /// Folders above the target that this run created (deepest last);
    /// removed again if the run fails.
    made_parents: Vec<PathBuf>,
    notes: Vec<String>,
    committed: bool,
}

static COUNTER: AtomicU64 = AtomicU64::new(0);

/// The name of `target` as a staging prefix: `.NAME.`.
fn prefix_of(target: &Path) -> String {
    let name = target
        .file_name()
        .map_or_else(|| "out".into(), |n| n.to_string_lossy().into_owned());
    format!(".{name}.")
}

/// A hidden sibling of `target` whose name starts with `.name.kind-`.
fn sibling(target: &Path, kind: &str) -> PathBuf {
    let parent = parent_of(target);
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    parent.join(format!(
        "{}{kind}-{}-{n}",
        prefix_of(target),
        std::process::id()
    ))
}

fn parent_of(target: &Path) -> PathBuf {
    match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Create `dir` and any missing folders above it; return those created,
/// outermost first.
fn create_parents(dir: &Path) -> io::Result<Vec<PathBuf>> {
    let mut missing = Vec::new();
    let mut p = Some(dir);
    while let Some(d) = p {
        if d.as_os_str().is_empty() || fs::symlink_metadata(d).is_ok() {
            break;
        }
        missing.push(d.to_path_buf());
        p = d.parent();
    }
    missing.reverse();
    let mut made = Vec::new();
    for d in missing {
        match fs::create_dir(&d) {
            Ok(()) => made.push(d),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {}
            Err(e) => {
                remove_made(&made);
                return Err(e);
            }
        }
    }
    Ok(made)
}

/// Remove the folders in `made` (outermost first) if they are still empty.
fn remove_made(made: &[PathBuf]) {
    for d in made.iter().rev() {
        let _ = fs::remove_dir(d);
    }
}

/// An exclusive lock on the folder that holds the target, so that two runs
/// writing the same target one after the other swap their folders whole.
/// `None` where the platform cannot lock a folder (the renames stay safe for
/// one run at a time).
fn lock_parent(parent: &Path) -> Option<File> {
    let f = File::open(parent).ok()?;
    f.lock().ok()?;
    Some(f)
}

/// Whether the process `pid` is still running: `Some(false)` only where
/// that can be told (Linux's /proc), `None` elsewhere.
fn process_alive(pid: u32) -> Option<bool> {
    let proc = Path::new("/proc");
    if !proc.join("self").exists() {
        return None;
    }
    Some(proc.join(pid.to_string()).exists())
}

/// The process id in a staging name `.NAME.KIND-PID-N`.
fn pid_in(name: &str, prefix: &str, kind: &str) -> Option<u32> {
    let rest = name.strip_prefix(prefix)?.strip_prefix(kind)?;
    let rest = rest.strip_prefix('-')?;
    let (pid, n) = rest.split_once('-')?;
    n.parse::<u64>().ok()?;
    pid.parse().ok()
}

impl OutputDir {
    /// Start writing the output folder `target`.
    ///
    /// Creates the folders above `target` if missing (and removes them again
    /// if the run fails), and a hidden staging folder beside `target`.
    /// Nothing at `target` changes until [`commit`](Self::commit). Staging
    /// folders that an earlier run killed outright left beside `target` are
    /// removed, or named in [`notes`](Self::notes).
    ///
    /// # Errors
    /// [`OutputError::Exists`] if `target` exists and `force` is false,
    /// [`OutputError::NotAFolder`] if it is a file, [`OutputError::NotOurs`]
    /// if it holds files but was not written by chordline,
    /// [`OutputError::Stage`] if the staging folder cannot be made.
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
        let real = check_target(target, force, &inputs)?;
        let parent = parent_of(&real);
        let staging = sibling(&real, "chordline-partial");
        let stage_err = |source| OutputError::Stage {
            path: target.to_path_buf(),
            source,
        };
        // Twice: a failed run of a batch may remove a parent folder it made
        // just as another run finds it there.
        let mut made_parents = create_parents(&parent).map_err(stage_err)?;
        if let Err(first) = fs::create_dir(&staging) {
            remove_made(&made_parents);
            if first.kind() != io::ErrorKind::NotFound {
                return Err(stage_err(first));
            }
            made_parents = create_parents(&parent).map_err(stage_err)?;
            if let Err(source) = fs::create_dir(&staging) {
                remove_made(&made_parents);
                return Err(stage_err(source));
            }
        }
        let mut dir = OutputDir {
            target: target.to_path_buf(),
            real,
            staging,
            force,
            inputs,
            files: Vec::new(),
            made_parents,
            notes: Vec::new(),
            committed: false,
        };
        let marker = dir.staging.join(MARKER);
        fs::write(&marker, MARKER_TEXT).map_err(|source| OutputError::Stage {
            path: dir.target.clone(),
            source,
        })?;
        dir.clean_leftovers();
        Ok(dir)
    }

    /// The folder the results will be in after the commit.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Names of the files written so far (not counting the [`MARKER`]).
    pub fn files(&self) -> &[String] {
        &self.files
    }

    /// What was found beside the target and tidied up (folders left by runs
    /// that were killed outright), one sentence each, for the user.
    pub fn notes(&self) -> &[String] {
        &self.notes
    }

    /// Remove staging folders of runs that were killed outright (their
    /// process is gone), restore earlier results a killed forced run had
    /// moved aside, and name what cannot be told apart.
    fn clean_leftovers(&mut self) {
        let parent = parent_of(&self.real);
        let _lock = lock_parent(&parent);
        let prefix = prefix_of(&self.real);
        let Ok(entries) = fs::read_dir(&parent) else {
            return;
        };
        let mut names: Vec<String> = entries
            .filter_map(|e| e.ok())
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .filter(|n| n.starts_with(&prefix))
            .collect();
        names.sort();
        let me = std::process::id();
        for name in names {
            let path = parent.join(&name);
            let (kind, pid) = match (
                pid_in(&name, &prefix, "chordline-partial"),
                pid_in(&name, &prefix, "chordline-old"),
            ) {
                (Some(p), _) => ("partial", p),
                (_, Some(p)) => ("old", p),
                _ => continue,
            };
            if pid == me {
                continue;
            }
            match process_alive(pid) {
                Some(false) => self.tidy(kind, &path),
                Some(true) => {}
                None => self.notes.push(format!(
                    "'{}' was left by an earlier run of chordline that may have been stopped; if no other run is writing '{}', delete it",
                    path.display(),
                    self.target.display()
                )),
            }
        }
    }

    /// Tidy one leftover of a dead process.
    fn tidy(&mut self, kind: &str, path: &Path) {
        if kind == "old" && fs::symlink_metadata(&self.real).is_err() {
            // Killed between its two renames: the earlier results were moved
            // aside and nothing took their place. Put them back.
            if fs::rename(path, &self.real).is_ok() {
                self.notes.push(format!(
                    "an earlier run was stopped while replacing '{}'; the results it had moved aside were put back",
                    self.target.display()
                ));
            }
            return;
        }
        if fs::remove_dir_all(path).is_ok() {
            let what = if kind == "old" {
                "superseded results"
            } else {
                "a half-written folder"
            };
            self.notes.push(format!(
                "removed '{}', {what} left by an earlier run that was stopped",
                path.display()
            ));
        }
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
            && name != MARKER
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
        let werr = |source: io::Error| {
            if matches!(
                source.kind(),
                io::ErrorKind::InvalidData | io::ErrorKind::InvalidInput
            ) {
                OutputError::Content {
                    name: name.to_string(),
                    path: self.target.clone(),
                    source,
                }
            } else {
                OutputError::Write {
                    name: name.to_string(),
                    path: self.target.clone(),
                    source,
                }
            }
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
    /// one is moved back. Runs writing the same target commit one at a time
    /// (a lock on the folder above it, where the platform has one).
    ///
    /// # Errors
    /// [`OutputError::Exists`], [`OutputError::IsInput`],
    /// [`OutputError::ContainsInput`], [`OutputError::NotOurs`] (checked
    /// again), or [`OutputError::Commit`] if a rename fails. In every case the
    /// earlier folder, if any, is left in place.
    pub fn commit(mut self) -> Result<PathBuf, OutputError> {
        let parent = parent_of(&self.real);
        let _lock = lock_parent(&parent);
        check_target(&self.target, self.force, &self.inputs)?;
        let cerr = |source| OutputError::Commit {
            path: self.target.clone(),
            source,
        };
        // Sync the staging folder's entries (not possible on every platform).
        if let Ok(d) = File::open(&self.staging) {
            let _ = d.sync_all();
        }
        let old = if fs::symlink_metadata(&self.real).is_ok() {
            let old = sibling(&self.real, "chordline-old");
            fs::rename(&self.real, &old).map_err(cerr)?;
            Some(old)
        } else {
            None
        };
        if let Err(e) = fs::rename(&self.staging, &self.real) {
            if let Some(old) = &old {
                let _ = fs::rename(old, &self.real);
            }
            return Err(cerr(e));
        }
        self.committed = true;
        if let Some(old) = old {
            // The new results are in place; failing to delete the old copy
            // loses nothing, so it is not an error.
            let _ = fs::remove_dir_all(old);
        }
        if let Ok(d) = File::open(&parent) {
            let _ = d.sync_all();
        }
        Ok(self.target.clone())
    }
}

impl Drop for OutputDir {
    fn drop(&mut self) {
        if !self.committed {
            let _ = fs::remove_dir_all(&self.staging);
            remove_made(&self.made_parents);
        }
    }
}

/// Refuse a target that exists (without force), is a file, is an input or
/// holds one, holds the working folder, or holds files chordline did not
/// write. Returns where the folder really goes (through a symlink at
/// `target`, the folder it points to).
fn check_target(target: &Path, force: bool, inputs: &[PathBuf]) -> Result<PathBuf, OutputError> {
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
    let meta = match fs::symlink_metadata(target) {
        Err(_) => return Ok(target.to_path_buf()),
        Ok(m) => m,
    };
    if meta.file_type().is_symlink() && canon_target.is_none() {
        return Err(OutputError::DanglingLink {
            path: target.to_path_buf(),
        });
    }
    if !target.is_dir() {
        return Err(OutputError::NotAFolder {
            path: target.to_path_buf(),
        });
    }
    let real = canon_target.unwrap_or_else(|| target.to_path_buf());
    if let Ok(cwd) = std::env::current_dir().and_then(fs::canonicalize)
        && cwd.starts_with(&real)
    {
        return Err(OutputError::HoldsWorkingFolder {
            path: target.to_path_buf(),
        });
    }
    // An existing but empty folder holds nothing to lose (scripts often
    // make the folder first): it is used without --force.
    if is_empty_dir(&real) {
        return Ok(real);
    }
    if !force {
        return Err(OutputError::Exists {
            path: target.to_path_buf(),
        });
    }
    if fs::symlink_metadata(real.join(MARKER)).is_err() {
        return Err(OutputError::NotOurs {
            path: target.to_path_buf(),
        });
    }
    Ok(real)
}

/// Whether `p` is a folder with nothing in it.
fn is_empty_dir(p: &Path) -> bool {
    fs::read_dir(p).is_ok_and(|mut d| d.next().is_none())
}

#[cfg(test)]
mod tests;
