//! Reading survey files: CSV of our own design, one reading per line.
//!
//! # The format
//! ```text
//! # Hand survey, Up line, 20 m chord, stations every 10 m on the left rail
//! chainage_m,versine_mm,side,note
//! 0,0.0,L,
//! 10,1.5,L,tangent point?
//! 20,,L,reading missed
//! 30,12.5,L,
//! ```
//! - Fields are separated by commas, semicolons or tabs: the delimiter is
//!   detected from the header line. In semicolon- or tab-separated files a
//!   decimal comma is accepted (`12,5`), as spreadsheets in much of Europe
//!   write it.
//! - Lines starting with `#` are comments; blank lines are skipped; a
//!   byte-order mark and CRLF line ends are accepted.
//! - Units live in the column names: `chainage_m` or `chainage_ft`;
//!   `versine_mm`, `versine_m`, `versine_in` or `versine_ft`
//!   (`Chainage (m)` and `versine [mm]` are read too, case does not matter).
//! - `side` (optional): `L`/`R` or `left`/`right`, the rail the reading was
//!   taken on facing increasing chainage. Without it the rail comes from
//!   [`ReadOptions::rail`] (`--rail`).
//! - `note` (optional): free text. Other columns are ignored with a warning.
//! - An empty versine cell is a missing reading (a gap), not a zero.
//! - Versines are field versines: positive when the rail bows away from the
//!   wire (the outer rail of a curve).
//!
//! # Checks
//! Errors ([`SurveyError`]) stop the run and name the file, line and column,
//! and say what to do. Warnings ([`Diagnostic`]) do not stop it: irregular
//! spacing within tolerance, gaps, isolated outliers, unused columns,
//! versines whose size suggests another unit.

use std::borrow::Cow;
use std::path::Path;

use super::{Marking, Rail, Reading, Survey};
use crate::diag::{Diagnostic, Location};

mod checks;
mod error;
mod header;
mod numbers;
mod rows;
mod source;
mod text;

pub use error::{ColumnRef, SurveyError, SurveyErrorKind};
pub use source::{STDIN_NAME, read_survey_input, read_survey_source};

use header::Columns;
pub(crate) use numbers::versine_word;
use text::LineKind;

/// What the reader needs to know that the file does not say.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReadOptions {
    /// The rail measured (`--rail`), used when the file has no `side` column.
    /// When it has one, a `--rail` that disagrees with it is an error.
    pub rail: Option<Rail>,
    /// Nominal chord length, metres: used to check the reading spacing and
    /// the plausibility of the versines.
    pub chord: f64,
    /// Arm behind the measuring point, metres, for a chord not read at its
    /// middle ([`crate::survey::Setup::behind`]); the readings must then fall
    /// on both ends of the chord.
    pub behind: Option<f64>,
    /// How the stations were marked (changes the advice in some messages).
    pub marking: Marking,
}

impl ReadOptions {
    /// Options for a chord of `chord` metres, taped marks, rail from the file.
    pub fn new(chord: f64) -> Self {
        ReadOptions {
            rail: None,
            chord,
            behind: None,
            marking: Marking::Taped,
        }
    }
}

/// Longest chord accepted, metres: hand chords are 10–30 m, long-chord
/// measurements a few hundred metres at most (common practice, from memory).
pub const MAX_CHORD: f64 = 1000.0;

/// Largest chainage accepted, metres (a million kilometres): beyond about
/// 1e9 m a double keeps too few decimals to tell readings apart.
pub const MAX_CHAINAGE: f64 = 1e9;

/// Read a survey file.
///
/// The path is used as written in messages. See the [module docs](self) for
/// the format.
///
/// # Errors
/// A [`SurveyError`] naming the file (and line and column where one applies)
/// when the file cannot be read or does not make a usable survey.
pub fn read_survey_file(
    path: &Path,
    opts: &ReadOptions,
) -> Result<(Survey, Vec<Diagnostic>), SurveyError> {
    let name = path.display().to_string();
    let bytes = source::read_bytes(path)?;
    read_survey_bytes(&name, &bytes, opts)
}

/// Read a survey from bytes; `name` stands for the file in messages.
///
/// Never panics, whatever the bytes.
///
/// # Examples
/// ```
/// use chordline::survey::read::{read_survey_bytes, ReadOptions};
/// use chordline::survey::Rail;
/// let csv = b"chainage_m,versine_mm\n0,0\n10,2.5\n20,5\n30,\n40,10\n";
/// let opts = ReadOptions { rail: Some(Rail::Left), ..ReadOptions::new(20.0) };
/// let (survey, warnings) = read_survey_bytes("s.csv", csv, &opts).unwrap();
/// assert_eq!(survey.readings.len(), 5);
/// assert_eq!(survey.readings[1].versine, Some(0.0025)); // metres inside
/// assert_eq!(survey.readings[3].versine, None); // an empty cell is a gap
/// assert_eq!(survey.readings[4].line, 6);
/// # let _ = warnings;
///
/// let err = read_survey_bytes("s.csv", b"chainage_m,versine_mm\n0,l2.5\n", &opts).unwrap_err();
/// assert!(err.to_string().starts_with("s.csv:2, column versine_mm (field 2): 'l2.5' is not a number"));
/// ```
///
/// # Errors
/// See [`read_survey_file`].
pub fn read_survey_bytes(
    name: &str,
    bytes: &[u8],
    opts: &ReadOptions,
) -> Result<(Survey, Vec<Diagnostic>), SurveyError> {
    if !(opts.chord.is_finite() && opts.chord > 0.0) {
        return Err(SurveyError::file(
            name,
            SurveyErrorKind::ChordNotPositive { chord: opts.chord },
        ));
    }
    if let Some(b) = opts.behind
        && !(b.is_finite() && b > 0.0 && b < opts.chord)
    {
        return Err(SurveyError::file(
            name,
            SurveyErrorKind::ArmOutsideChord {
                behind: b,
                chord: opts.chord,
            },
        ));
    }
    if opts.chord > MAX_CHORD {
        return Err(SurveyError::file(
            name,
            SurveyErrorKind::ChordTooLong {
                chord: opts.chord,
                max: MAX_CHORD,
            },
        ));
    }
    let text = text::decode(bytes).map_err(|(line, kind)| match line {
        Some(l) => SurveyError::line(name, l, kind),
        None => SurveyError::file(name, kind),
    })?;
    if text.trim().is_empty() {
        return Err(SurveyError::file(name, SurveyErrorKind::Empty));
    }
    // Old Mac line ends (CR alone), as "CSV (Macintosh)" exports still write.
    if !text.contains('\n') && text.contains('\r') {
        let unix = text.replace('\r', "\n");
        return Reader::new(name, &unix, opts).run();
    }
    Reader::new(name, text, opts).run()
}

/// Digits after the decimal separator from which a millimetre reading is
/// finer than a tape or gauge reads (common practice: hand readings are
/// taken to 0.5 or 1 mm, recording vehicles report 0.1 mm or so).
const FINE_DECIMALS: u32 = 3;

/// The header line and what it decided.
struct Head {
    /// Its line number.
    line: usize,
    delim: char,
    /// Lines in the file, and whether the last one ends with a newline (a
    /// file cut off mid-line does not).
    total_lines: usize,
    ends_with_newline: bool,
    cols: Columns,
}

impl Head {
    /// Semicolon- and tab-separated files may write decimal commas.
    fn decimal_comma(&self) -> bool {
        self.delim != ','
    }
}

struct Reader<'a> {
    name: &'a str,
    text: &'a str,
    opts: &'a ReadOptions,
    diags: Vec<Diagnostic>,
}

/// Running figures gathered while reading rows.
#[derive(Default)]
struct RowStats {
    missing: usize,
    first_missing_line: usize,
    fine_decimals: usize,
    nonzero: usize,
    /// Chainages written like `1.010` (1–3 digits, a point, 3 digits).
    thousands_like: usize,
    /// The second chainage as written (the first may be a round number).
    second_chainage: String,
}

/// `1.010`, `12.345`: what a thousands separator would look like.
fn looks_like_thousands(s: &str) -> bool {
    match s.split_once('.') {
        Some((a, b)) => {
            (1..=3).contains(&a.len())
                && b.len() == 3
                && a.bytes().all(|c| c.is_ascii_digit())
                && b.bytes().all(|c| c.is_ascii_digit())
        }
        None => false,
    }
}

impl<'a> Reader<'a> {
    fn new(name: &'a str, text: &'a str, opts: &'a ReadOptions) -> Self {
        Reader {
            name,
            text,
            opts,
            diags: Vec::new(),
        }
    }

    fn loc(&self, line: usize, column: Option<&str>) -> Location {
        Location {
            file: self.name.to_string(),
            line,
            column: column.map(str::to_string),
        }
    }

    fn run(mut self) -> Result<(Survey, Vec<Diagnostic>), SurveyError> {
        let mut lines = text::lines(self.text);
        let head = self.header(&mut lines)?;
        self.note_unused_columns(&head);
        if head.cols.side.is_none() && self.opts.rail.is_none() {
            return Err(SurveyError::file(self.name, SurveyErrorKind::NoRail));
        }
        let (readings, stats) = self.rows(&head, lines)?;
        self.check_rows(&head, &readings, &stats)?;
        let cols = &head.cols;
        let ctx = checks::Context {
            file: self.name,
            cols,
            chord: self.opts.chord,
            arms: crate::survey::arms_of(self.opts.chord, self.opts.behind),
            marking: self.opts.marking,
            thousands_like: head.decimal_comma() && stats.thousands_like == readings.len(),
        };
        let (regular, s_nom) = checks::spacing(&ctx, &readings, &mut self.diags)?;
        let (readings, regular) = checks::fill_gaps(readings, regular, s_nom);
        checks::units(
            &ctx,
            &readings,
            stats.fine_decimals,
            stats.nonzero,
            &mut self.diags,
        )?;
        checks::outliers(&ctx, &readings, &regular, &mut self.diags);
        Ok((
            Survey {
                source: self.name.to_string(),
                chainage_unit: cols.chainage_unit,
                versine_unit: cols.versine_unit,
                readings,
                has_side_column: cols.side.is_some(),
            },
            self.diags,
        ))
    }

    /// The header: the first line that is neither blank nor a comment (nor
    /// a spreadsheet's `sep=;` line, which names the delimiter).
    fn header<'t>(
        &self,
        lines: &mut impl Iterator<Item = (usize, &'t str)>,
    ) -> Result<Head, SurveyError> {
        let name = self.name;
        let mut header = None;
        let mut sep_line = None;
        for (no, line) in lines.by_ref() {
            match text::classify(line).map_err(|k| SurveyError::line(name, no, k))? {
                LineKind::Content => {
                    if sep_line.is_none()
                        && let Some(d) = text::sep_directive(line)
                    {
                        sep_line = Some(d);
                        continue;
                    }
                    header = Some((no, line));
                    break;
                }
                LineKind::Blank | LineKind::Comment => {}
            }
        }
        let Some((line, header_text)) = header else {
            return Err(SurveyError::file(name, SurveyErrorKind::NoHeader));
        };
        let delim = sep_line.unwrap_or_else(|| text::detect_delimiter(header_text));
        let mut cells: Vec<Cow<'_, str>> = Vec::new();
        text::split_into(header_text, delim, &mut cells)
            .map_err(|k| SurveyError::line(name, line, k))?;
        let cols = header::parse_header(&cells).map_err(|(field, kind)| match field {
            Some(i) => SurveyError::cell(name, line, &cells[i], i + 1, kind),
            None => SurveyError::line(name, line, kind),
        })?;
        Ok(Head {
            line,
            delim,
            total_lines: self.text.trim_end_matches('\n').matches('\n').count() + 1,
            ends_with_newline: self.text.ends_with('\n'),
            cols,
        })
    }

    /// A warning per unused named column (capped, with a count).
    fn note_unused_columns(&mut self, head: &Head) {
        let cols = &head.cols;
        let mut unused = 0usize;
        for &i in cols.unknown.iter().filter(|&&i| !cols.names[i].is_empty()) {
            unused += 1;
            if unused > checks::MAX_LISTED {
                continue;
            }
            let col = crate::diag::quote_capped(&cols.names[i]);
            let what = format!("column '{col}' (field {}) is not used", i + 1);
            let d = Diagnostic::warning(what)
                .at(self.loc(head.line, Some(&col)))
                .hint("the columns read are chainage_m|chainage_ft, versine_mm|versine_m|versine_in|versine_ft, side and note");
            self.diags.push(d);
        }
        if unused > checks::MAX_LISTED {
            self.diags.push(
                Diagnostic::warning(format!(
                    "{} more columns are not used (not listed)",
                    unused - checks::MAX_LISTED
                ))
                .at(self.loc(head.line, None)),
            );
        }
    }

    /// What the rows as a whole must be: some readings, at least three, not
    /// every versine missing; notes on thousands-like chainages and gaps.
    fn check_rows(
        &mut self,
        head: &Head,
        readings: &[Reading],
        stats: &RowStats,
    ) -> Result<(), SurveyError> {
        let (name, cols, header_line) = (self.name, &head.cols, head.line);
        if readings.is_empty() {
            return Err(SurveyError::line(
                name,
                header_line,
                SurveyErrorKind::HeaderOnly,
            ));
        }
        if readings.len() < 3 {
            let line = readings.last().map_or(header_line, |r| r.line);
            return Err(SurveyError::line(
                name,
                line,
                SurveyErrorKind::TooFewReadings {
                    count: readings.len(),
                },
            ));
        }
        if stats.missing == readings.len() {
            return Err(SurveyError {
                file: name.to_string(),
                line: None,
                column: Some(ColumnRef {
                    name: cols.names[cols.versine].clone(),
                    field: cols.versine + 1,
                }),
                kind: Box::new(SurveyErrorKind::AllMissing {
                    count: readings.len(),
                }),
            });
        }
        if head.decimal_comma() && stats.thousands_like == readings.len() {
            self.diags.push(
                Diagnostic::warning(format!(
                    "every chainage has three digits after a point, like {} on line {}, in a {}-separated file where '.' may separate thousands; they are read with '.' as the decimal point ({} {})",
                    stats.second_chainage,
                    readings[1].line,
                    if head.delim == ';' { "semicolon" } else { "tab" },
                    fmt_num(cols.chainage_unit.from_m(readings[1].chainage)),
                    cols.chainage_unit.suffix()
                ))
                .at(self.loc(readings[1].line, Some(&cols.names[cols.chainage])))
                .hint("if the '.' separates thousands, write the chainages without it, e.g. 1010 rather than 1.010"),
            );
        }
        if stats.missing > 0 {
            self.diags.push(
                Diagnostic::note(format!(
                    "{} of {} versine cells are empty (missing readings, first on line {}); the alignment is bridged across them, less certainly",
                    stats.missing,
                    readings.len(),
                    stats.first_missing_line
                ))
                .at(self.loc(stats.first_missing_line, Some(&cols.names[cols.versine]))),
            );
        }

        Ok(())
    }

    fn cell_err(
        &self,
        cols: &Columns,
        line: usize,
        i: usize,
        kind: SurveyErrorKind,
    ) -> SurveyError {
        SurveyError::cell(self.name, line, cols.name(i), i + 1, kind)
    }
}

fn delim_name(d: char) -> &'static str {
    match d {
        ',' => "commas",
        ';' => "semicolons",
        '\t' => "tabs",
        _ => "another character",
    }
}

fn parse_side(s: &str) -> Result<Rail, SurveyErrorKind> {
    // The common cases without allocating.
    match s.as_bytes() {
        [b'L' | b'l'] => return Ok(Rail::Left),
        [b'R' | b'r'] => return Ok(Rail::Right),
        _ => {}
    }
    match s.to_ascii_lowercase().as_str() {
        "l" | "left" => Ok(Rail::Left),
        "r" | "right" => Ok(Rail::Right),
        "" => Err(SurveyErrorKind::EmptySide),
        other => Err(SurveyErrorKind::BadSide {
            text: crate::diag::quote_capped(s),
            extra: if matches!(
                other,
                "inner" | "outer" | "in" | "out" | "i" | "o" | "high" | "low"
            ) {
                " (inner and outer, high and low depend on the curve, so they do not name a rail)"
            } else {
                ""
            },
        }),
    }
}

/// Which column a number came from, for the advice.
/// A number for a message: integers without decimals, others to at most six.
pub(crate) fn fmt_num(v: f64) -> String {
    if !v.is_finite() {
        return format!("{v}");
    }
    let s = format!("{v:.6}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

#[cfg(test)]
mod tests;
