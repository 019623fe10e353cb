//! One file written beside its destination under a hidden temporary name and
//! renamed into place only by [`StagedFile::commit`](crate::export::staged_file::StagedFile::commit); dropped uncommitted,
//! the temporary file is removed. Staging every file of a command before
//! committing any means a failure leaves none of them half-written (the
//! single-file sibling of [`OutputDir`](crate::export::output_dir::OutputDir)).

use std::io::Write;
use std::path::{Path, PathBuf};

/// Why a staged file could not be written or put in place.
#[derive(Debug, thiserror::Error)]
pub enum StagedFileError {
    /// The destination is a folder.
    #[error("{} is a folder; name a file to write (e.g. {})", .path.display(), .path.join("survey.csv").display())]
    IsFolder {
        /// The destination.
        path: PathBuf,
    },
    /// The destination exists and replacing was not asked for.
    #[error("{} already exists; pass --force to replace it, or choose another name", .path.display())]
    Exists {
        /// The destination.
        path: PathBuf,
    },
    /// The destination has no file name (`..`, `/`).
    #[error("{} is not a file name", .path.display())]
    NotAFileName {
        /// The destination.
        path: PathBuf,
    },
    /// Writing the temporary file failed; nothing was replaced.
    #[error("could not write {} (nothing was replaced); check that its folder exists and the free disk space: {source}", .path.display())]
    Write {
        /// The destination.
        path: PathBuf,
        /// What the system said.
        source: std::io::Error,
    },
    /// Renaming the finished file into place failed.
    #[error("could not write {}: {source}", .path.display())]
    Commit {
        /// The destination.
        path: PathBuf,
        /// What the system said.
        source: std::io::Error,
    },
}

/// Refuse to write over a folder, or over an existing file without `force`.
///
/// # Errors
/// [`StagedFileError::IsFolder`] or [`StagedFileError::Exists`].
pub fn refuse_existing(path: &Path, force: bool) -> Result<(), StagedFileError> {
    if path.is_dir() {
        return Err(StagedFileError::IsFolder {
            path: path.to_path_buf(),
        });
    }
    if path.exists() && !force {
        return Err(StagedFileError::Exists {
            path: path.to_path_buf(),
        });
    }
    Ok(())
}

/// A file written under a temporary name, waiting to be put in place.
#[derive(Debug)]
pub struct StagedFile {
    tmp: PathBuf,
    path: PathBuf,
    done: bool,
}

impl StagedFile {
    /// Write `path`'s new content through `f` into the temporary file.
    /// Refuses to replace an existing file unless `force`, and a folder always.
    ///
    /// # Errors
    /// A [`StagedFileError`] naming the file; nothing is replaced.
    ///
    /// # Examples
    /// ```
    /// use chordline::export::staged_file::StagedFile;
    /// let dir = std::env::temp_dir().join(format!("staged-doc-{}", std::process::id()));
    /// std::fs::create_dir_all(&dir).unwrap();
    /// let path = dir.join("out.txt");
    /// let staged = StagedFile::write(&path, false, |w| w.write_all(b"hello\n")).unwrap();
    /// assert!(!path.exists(), "not in place before commit");
    /// staged.commit().unwrap();
    /// assert_eq!(std::fs::read_to_string(&path).unwrap(), "hello\n");
    /// assert!(StagedFile::write(&path, false, |_| Ok(())).is_err(), "exists: needs force");
    /// # std::fs::remove_dir_all(&dir).unwrap();
    /// ```
    pub fn write(
        path: &Path,
        force: bool,
        f: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
    ) -> Result<Self, StagedFileError> {
        refuse_existing(path, force)?;
        let dir = path
            .parent()
            .filter(|p| !p.as_os_str().is_empty())
            .unwrap_or(Path::new("."));
        let name = path
            .file_name()
            .ok_or_else(|| StagedFileError::NotAFileName {
                path: path.to_path_buf(),
            })?;
        static N: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
        let n = N.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        let tmp = dir.join(format!(
            ".{}.{}-{n}.tmp",
            name.to_string_lossy(),
            std::process::id()
        ));
        let staged = StagedFile {
            tmp,
            path: path.to_path_buf(),
            done: false,
        };
        let result = (|| -> std::io::Result<()> {
            let file = std::fs::File::create(&staged.tmp)?;
            let mut w = std::io::BufWriter::new(file);
            f(&mut w)?;
            let file = w.into_inner().map_err(|e| e.into_error())?;
            file.sync_all()
        })();
        result.map_err(|source| StagedFileError::Write {
            path: path.to_path_buf(),
            source,
        })?;
        Ok(staged)
    }

    /// Rename the finished file into place.
    ///
    /// # Errors
    /// [`StagedFileError::Commit`] when the rename fails.
    pub fn commit(mut self) -> Result<(), StagedFileError> {
        std::fs::rename(&self.tmp, &self.path).map_err(|source| StagedFileError::Commit {
            path: self.path.clone(),
            source,
        })?;
        self.done = true;
        Ok(())
    }
}

impl Drop for StagedFile {
    fn drop(&mut self) {
        if !self.done {
            let _ = std::fs::remove_file(&self.tmp);
        }
    }
}
