//! Why a survey file could not be read: [`SurveyError`] says where (file,
//! line, column) and [`SurveyErrorKind`] says what is wrong and what to do.

use std::fmt;

/// A column of the survey file, by its header name and 1-based field number.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ColumnRef {
    /// The column name as written in the header (or the expected name when
    /// the header lacks the field).
    pub name: String,
    /// 1-based field number on the line.
    pub field: usize,
}

/// A survey file that cannot be used, with the place in the file.
///
/// `Display` gives one line meant for the user, e.g.
/// `survey.csv:14, column versine_mm (field 2): 'l2.5' is not a number; write
/// the versine in millimetres, e.g. 12.5, or leave the cell empty for a
/// missing reading`. Every message ends with what to do about it.
#[derive(Debug)]
pub struct SurveyError {
    /// The file as the user named it.
    pub file: String,
    /// 1-based line, when the problem is on one line.
    pub line: Option<usize>,
    /// The column, when the problem is in one cell or column.
    pub column: Option<ColumnRef>,
    /// What is wrong (boxed to keep `Result`s small).
    pub kind: Box<SurveyErrorKind>,
}

impl SurveyError {
    pub(crate) fn file(file: &str, kind: SurveyErrorKind) -> Self {
        SurveyError {
            file: file.to_string(),
            line: None,
            column: None,
            kind: Box::new(kind),
        }
    }
    pub(crate) fn line(file: &str, line: usize, kind: SurveyErrorKind) -> Self {
        SurveyError {
            file: file.to_string(),
            line: Some(line),
            column: None,
            kind: Box::new(kind),
        }
    }
    pub(crate) fn cell(
        file: &str,
        line: usize,
        name: &str,
        field: usize,
        kind: SurveyErrorKind,
    ) -> Self {
        SurveyError {
            file: file.to_string(),
            line: Some(line),
            column: Some(ColumnRef {
                name: name.to_string(),
                field,
            }),
            kind: Box::new(kind),
        }
    }
}

impl fmt::Display for SurveyError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(l) = self.line {
            write!(f, ":{l}")?;
        }
        if let Some(c) = &self.column {
            write!(f, ", column {} (field {})", c.name, c.field)?;
        }
        write!(f, ": {}", self.kind)
    }
}

impl std::error::Error for SurveyError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        std::error::Error::source(&self.kind)
    }
}

/// What is wrong with a survey file. Each message says what to do.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum SurveyErrorKind {
    /// The file could not be opened or read. (The operating system's error
    /// is in the message, so it is not also a `source`: printed with its
    /// chain it would appear twice.)
    #[error("cannot read the file: {error}; check the path and that you may read it")]
    Io {
        /// The operating system's error.
        error: std::io::Error,
    },
    /// A symbolic link to something that does not exist.
    #[error(
        "this is a symbolic link to '{target}', which does not exist; point the link at the survey file, or give the survey file's own path"
    )]
    DanglingLink {
        /// Where the link points.
        target: String,
    },
    /// Readings closer than any chord survey reads.
    #[error("{what}; {todo}")]
    SpacingTooSmall {
        /// What was found.
        what: String,
        /// What to do.
        todo: String,
    },
    /// A gap in the chainages too long to bridge.
    #[error("{what}; {todo}")]
    GapTooLong {
        /// What was found.
        what: String,
        /// What to do.
        todo: String,
    },
    /// A chord longer than any chord survey uses.
    #[error(
        "the chord length {chord} m is longer than any chord a survey uses (at most {max} m); give the chord the readings were taken with, e.g. --chord 20m or --chord 62ft"
    )]
    ChordTooLong {
        /// The chord as given, metres.
        chord: f64,
        /// The longest accepted, metres.
        max: f64,
    },
    /// A chainage too large to tell neighbouring readings apart.
    #[error(
        "chainage '{text}' is too large to be a chainage (at most {max} in this column): numbers this large lose the digits that tell readings apart; check the value, or subtract a constant from every chainage"
    )]
    ChainageTooLarge {
        /// The cell as written.
        text: String,
        /// The largest accepted, in the column's unit.
        max: String,
    },
    /// A folder where a survey file was expected.
    #[error(
        "this is a folder, not a survey file; give the path of a CSV file in it (e.g. {example})"
    )]
    IsFolder {
        /// An example path.
        example: String,
    },
    /// The arm behind the measuring point does not lie inside the chord.
    #[error(
        "the arm behind the measuring point, {behind} m, does not lie inside the chord of {chord} m; give the chord's two arms as BEHIND+AHEAD, e.g. --chord 4m+6.5m"
    )]
    ArmOutsideChord {
        /// The arm behind, metres.
        behind: f64,
        /// The chord, metres.
        chord: f64,
    },
    /// The chord given is zero, negative or not a number.
    #[error(
        "the chord length {chord} m is not a positive length; give the chord the readings were taken with, e.g. --chord 20m or --chord 62ft"
    )]
    ChordNotPositive {
        /// The chord as given, metres.
        chord: f64,
    },
    /// Zero bytes.
    #[error(
        "the file is empty; a survey file needs a header line such as chainage_m,versine_mm and then one line per reading"
    )]
    Empty,
    /// Only comments and blank lines.
    #[error(
        "the file has only comments and blank lines; add a header line such as chainage_m,versine_mm and then one line per reading"
    )]
    NoHeader,
    /// A spreadsheet workbook (zip container) rather than CSV text.
    #[error(
        "this is a spreadsheet workbook (.xlsx or .ods), not CSV text; open it in the spreadsheet and use Save As, CSV UTF-8"
    )]
    Workbook,
    /// UTF-16 text (byte-order mark FF FE or FE FF).
    #[error(
        "the file is UTF-16 text; re-save it as UTF-8 (in a spreadsheet: Save As, CSV UTF-8; in a text editor: encoding UTF-8)"
    )]
    Utf16,
    /// A byte sequence that is not UTF-8.
    #[error(
        "byte 0x{byte:02X} is not UTF-8 text{guess}; re-save the file as UTF-8 (in a spreadsheet: Save As, CSV UTF-8; in a text editor: encoding UTF-8)"
    )]
    NotUtf8 {
        /// The first offending byte.
        byte: u8,
        /// A guess at the encoding, e.g. " (it looks like Latin-1 or Windows-1252)".
        guess: &'static str,
    },
    /// A NUL byte: binary data.
    #[error("the line holds a NUL byte, so this is not a text file; export the survey as CSV text")]
    Binary,
    /// The first non-comment line is numbers, not column names.
    #[error(
        "the first line '{text}' looks like data, not a header; add a header line naming the columns, such as chainage_m,versine_mm"
    )]
    HeaderLooksLikeData {
        /// The line as written.
        text: String,
    },
    /// No chainage or no versine column in the header.
    #[error("no {what} column (the header has: {found}); name one column {expected}")]
    MissingColumn {
        /// `chainage` or `versine`.
        what: &'static str,
        /// The header names found.
        found: String,
        /// The names that would be recognised.
        expected: &'static str,
    },
    /// A chainage or versine column without a unit suffix.
    #[error("column '{name}' has no unit; rename it {expected}")]
    NoUnit {
        /// The header name as written.
        name: String,
        /// The names that would be recognised.
        expected: &'static str,
    },
    /// A chainage or versine column with a unit we do not read.
    #[error(
        "column '{name}' has the unit '{unit}', which is not read; rename it {expected} (converting the values if needed)"
    )]
    UnknownUnit {
        /// The header name as written.
        name: String,
        /// The unit part.
        unit: String,
        /// The names that would be recognised.
        expected: &'static str,
    },
    /// Two columns for the same quantity.
    #[error("a second {what} column (the first is field {first}); keep only one")]
    DuplicateColumn {
        /// `chainage`, `versine`, `side` or `note`.
        what: &'static str,
        /// 1-based field of the first one.
        first: usize,
    },
    /// A quote opened in a cell and not closed on the same line.
    #[error(
        "a quote (\") opens a cell but is not closed on this line; close it, or remove the quote mark (cells may not run over several lines)"
    )]
    UnclosedQuote,
    /// A cell that is not a number.
    #[error("'{text}' is not a number; {todo}")]
    NotANumber {
        /// The cell as written.
        text: String,
        /// What to write instead.
        todo: String,
    },
    /// NaN, infinity or a number too large to be a length.
    #[error("'{text}' is not a finite number; {todo}")]
    NotFinite {
        /// The cell as written.
        text: String,
        /// What to write instead.
        todo: String,
    },
    /// A chainage cell left empty.
    #[error(
        "the chainage is empty; every line needs a chainage (delete the line if it holds no reading)"
    )]
    EmptyChainage,
    /// A side cell that is not L or R.
    #[error(
        "side '{text}' is neither L nor R; write L or R (or left/right) for the rail the reading was taken on, facing increasing chainage{extra}"
    )]
    BadSide {
        /// The cell as written.
        text: String,
        /// A further remark for inner/outer.
        extra: &'static str,
    },
    /// A line with more fields than the header.
    #[error("the line has {found} fields but the header has {expected}; {todo}")]
    TooManyFields {
        /// Fields on the line.
        found: usize,
        /// Fields in the header.
        expected: usize,
        /// What to do.
        todo: String,
    },
    /// A line that lacks a required field.
    #[error(
        "the line has {found} field(s) but the header has {expected}, so the {what} is missing; {todo}"
    )]
    MissingField {
        /// Fields on the line.
        found: usize,
        /// Fields in the header.
        expected: usize,
        /// `chainage`, `versine` or `side`.
        what: &'static str,
        /// What to do.
        todo: String,
    },
    /// The last line is short and the file ends without a line break.
    #[error(
        "the last line has {found} of {expected} fields and the file ends in the middle of it: the file may have been cut off; restore the whole file from its source, or delete the incomplete last line"
    )]
    Truncated {
        /// Fields on the line.
        found: usize,
        /// Fields in the header.
        expected: usize,
    },
    /// Chainage lower than the line before.
    #[error("chainage {value} goes back from {previous} on line {previous_line}; {todo}")]
    Backwards {
        /// This chainage as written.
        value: String,
        /// The previous chainage as written.
        previous: String,
        /// Line of the previous reading.
        previous_line: usize,
        /// What to do.
        todo: String,
    },
    /// The same chainage twice.
    #[error(
        "chainage {value} repeats line {previous_line}; keep one reading per chainage (delete the duplicate line, or correct the chainage if it is a typing error)"
    )]
    Repeated {
        /// The chainage as written.
        value: String,
        /// Line of the first one.
        previous_line: usize,
    },
    /// A header and no readings.
    #[error(
        "the file has a header but no readings; add one line per reading under the header, e.g. 0,12.5"
    )]
    HeaderOnly,
    /// Too few readings to compute anything.
    #[error(
        "the survey has only {count} reading(s); at least 3 are needed to work out an alignment (a reading every half chord or closer)"
    )]
    TooFewReadings {
        /// How many readings.
        count: usize,
    },
    /// Every versine cell is empty.
    #[error(
        "every versine cell is empty ({count} lines), so there is nothing to compute; fill in the versine column (an empty cell means a missing reading)"
    )]
    AllMissing {
        /// Number of lines.
        count: usize,
    },
    /// No side column and no `--rail`.
    #[error(
        "the file has no side column, so the rail measured is unknown; say which rail the versines were read on with --rail left or --rail right (facing increasing chainage), or add a side column with L or R"
    )]
    NoRail,
    /// `--rail` says one rail, the side column another.
    #[error(
        "--rail {given} contradicts the side column, which says '{text}' here; the side column names the rail of each reading, so leave out --rail, or correct the side column"
    )]
    RailContradicts {
        /// `left` or `right`, from `--rail`.
        given: &'static str,
        /// The side cell as written.
        text: String,
    },
    /// A side cell left empty.
    #[error(
        "the side is empty; write L or R for the rail this reading was taken on (facing increasing chainage)"
    )]
    EmptySide,
    /// The reading spacing does not fit the chord.
    #[error("{what}; {todo}")]
    SpacingMisfit {
        /// What was found.
        what: String,
        /// What to do.
        todo: String,
    },
    /// A jump in chainage that is not a whole number of spacings.
    #[error("{what}: the readings after it are off the chord pattern; {todo}")]
    SpacingBreak {
        /// The jump, with chainages, lines and spacing.
        what: String,
        /// What to do.
        todo: String,
    },
    /// Versines too large for any railway in the column's unit.
    #[error("{what}; {todo}")]
    UnitImplausible {
        /// What was found.
        what: String,
        /// What to do.
        todo: String,
    },
    /// One versine too large for any railway curve.
    #[error("{what}; {todo}")]
    VersineImpossible {
        /// What was found.
        what: String,
        /// What to do.
        todo: String,
    },
    /// A line with a spreadsheet error value in the chainage cell, which
    /// would otherwise be taken for a comment.
    #[error(
        "the line starts with '{text}', a spreadsheet error value in the chainage cell (lines starting with # are otherwise comments, so this reading would be lost); fix the cell in the spreadsheet and export again, or delete the line"
    )]
    SpreadsheetError {
        /// The error value, e.g. `#N/A`.
        text: String,
    },
}
