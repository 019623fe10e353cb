//! Where the survey bytes come from: a file (with messages for a dangling
//! link or a folder) or standard input (`-`).

use std::io::Read;
use std::path::Path;

use super::{ReadOptions, SurveyError, SurveyErrorKind, read_survey_bytes};
use crate::diag::Diagnostic;
use crate::survey::Survey;

/// How standard input is named in messages.
pub const STDIN_NAME: &str = "standard input";

/// The bytes of the file at `path`, with a message that says what to do
/// when it cannot be read.
pub(super) fn read_bytes(path: &Path) -> Result<Vec<u8>, SurveyError> {
    let name = path.display().to_string();
    let fail = |kind| SurveyError::file(&name, kind);
    if let Ok(m) = std::fs::symlink_metadata(path)
        && m.file_type().is_symlink()
        && std::fs::metadata(path).is_err()
    {
        let target =
            std::fs::read_link(path).map_or_else(|_| "?".into(), |t| t.display().to_string());
        return Err(fail(SurveyErrorKind::DanglingLink { target }));
    }
    if path.is_dir() {
        let example = path.join("survey.csv").display().to_string();
        return Err(fail(SurveyErrorKind::IsFolder { example }));
    }
    std::fs::read(path).map_err(|error| fail(SurveyErrorKind::Io { error }))
}

/// The name for messages and the bytes of the survey at `path`: a file, or
/// standard input when `path` is `-` (named "standard input").
///
/// # Errors
/// [`SurveyError`] when the file or standard input cannot be read.
pub fn read_survey_source(path: &Path) -> Result<(String, Vec<u8>), SurveyError> {
    if path != Path::new("-") {
        return Ok((path.display().to_string(), read_bytes(path)?));
    }
    let mut bytes = Vec::new();
    std::io::stdin()
        .lock()
        .read_to_end(&mut bytes)
        .map_err(|error| SurveyError::file(STDIN_NAME, SurveyErrorKind::Io { error }))?;
    Ok((STDIN_NAME.to_string(), bytes))
}

/// Read a survey from the file at `path`, or from standard input when `path`
/// is `-` (named "standard input" in messages).
///
/// # Errors
/// As [`super::read_survey_file`].
pub fn read_survey_input(
    path: &Path,
    opts: &ReadOptions,
) -> Result<(Survey, Vec<Diagnostic>), SurveyError> {
    let (name, bytes) = read_survey_source(path)?;
    read_survey_bytes(&name, &bytes, opts)
}
