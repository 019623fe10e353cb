//! Diagnostics: warnings and notes that do not stop a run, with where they
//! point in the input. Stages return `(T, Vec<Diagnostic>)` so that one
//! awkward row does not hide the rest.

use std::fmt;

/// How serious a diagnostic is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
pub enum Severity {
    /// Worth knowing; nothing is wrong.
    Note,
    /// The result may be affected; read the message.
    Warning,
}

/// A place in an input file: path, 1-based line and, where known, the column.
#[derive(Debug, Clone, PartialEq, Eq, Hash, serde::Serialize)]
pub struct Location {
    /// The file as the user named it.
    pub file: String,
    /// 1-based line number.
    pub line: usize,
    /// Column name (from the header) or 1-based field number, if known.
    pub column: Option<String>,
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}", self.file, self.line)?;
        if let Some(c) = &self.column {
            write!(f, ", column {c}")?;
        }
        Ok(())
    }
}

/// A warning or note from any stage.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Diagnostic {
    /// How serious it is.
    pub severity: Severity,
    /// Where in the input it points, if anywhere.
    pub location: Option<Location>,
    /// What was found, in a sentence.
    pub message: String,
    /// What the user can do about it, if anything.
    pub hint: Option<String>,
}

impl Diagnostic {
    /// A warning with no location.
    pub fn warning(message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Warning,
            location: None,
            message: message.into(),
            hint: None,
        }
    }
    /// A note with no location.
    pub fn note(message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Note,
            location: None,
            message: message.into(),
            hint: None,
        }
    }
    /// Attach a location.
    pub fn at(mut self, location: Location) -> Self {
        self.location = Some(location);
        self
    }
    /// Attach a hint.
    pub fn hint(mut self, hint: impl Into<String>) -> Self {
        self.hint = Some(hint.into());
        self
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let sev = match self.severity {
            Severity::Note => "note",
            Severity::Warning => "warning",
        };
        if let Some(l) = &self.location {
            write!(f, "{l}: ")?;
        }
        write!(f, "{sev}: {}", self.message)?;
        if let Some(h) = &self.hint {
            write!(f, " ({h})")?;
        }
        Ok(())
    }
}

/// Text from an input file as a message quotes it: whole when short, else its
/// start and its length, so that a 10 MB cell does not make a 10 MB message.
pub fn quote_capped(text: &str) -> String {
    const MAX: usize = 60;
    const KEEP: usize = 40;
    let n = text.chars().count();
    if n <= MAX {
        return text.to_string();
    }
    let head: String = text.chars().take(KEEP).collect();
    format!("{head}… ({n} characters)")
}
