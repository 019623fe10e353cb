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
mod source;
mod text;

pub use error::{ColumnRef, SurveyError, SurveyErrorKind};
pub use source::{STDIN_NAME, read_survey_input, read_survey_source};

use header::Columns;
pub(crate) use numbers::versine_word;
use numbers::{Quantity, number_error};
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
    /// How the stations were marked (changes the advice in some messages).
    pub marking: Marking,
}

impl ReadOptions {
    /// Options for a chord of `chord` metres, taped marks, rail from the file.
    pub fn new(chord: f64) -> Self {
        ReadOptions {
            rail: None,
            chord,
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
        let name = self.name;
        let total_lines = self.text.trim_end_matches('\n').matches('\n').count() + 1;
        let ends_with_newline = self.text.ends_with('\n');
        let mut lines = text::lines(self.text);

        // Header: the first line that is neither blank nor a comment (nor a
        // spreadsheet's `sep=;` line, which names the delimiter).
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
        let Some((header_line, header_text)) = header else {
            return Err(SurveyError::file(name, SurveyErrorKind::NoHeader));
        };
        let delim = sep_line.unwrap_or_else(|| text::detect_delimiter(header_text));
        let decimal_comma = delim != ',';
        let mut cells: Vec<Cow<'_, str>> = Vec::new();
        text::split_into(header_text, delim, &mut cells)
            .map_err(|k| SurveyError::line(name, header_line, k))?;
        let cols = header::parse_header(&cells).map_err(|(field, kind)| match field {
            Some(i) => SurveyError::cell(name, header_line, &cells[i], i + 1, kind),
            None => SurveyError::line(name, header_line, kind),
        })?;
        // Unnamed columns (often trailing empty cells of a spreadsheet) get a
        // warning only when a line has something in them.
        let mut unnamed: Vec<usize> = Vec::new();
        let mut unused = 0usize;
        for &i in &cols.unknown {
            if cols.names[i].is_empty() {
                unnamed.push(i);
                continue;
            }
            unused += 1;
            if unused > checks::MAX_LISTED {
                continue;
            }
            let col = crate::diag::quote_capped(&cols.names[i]);
            let what = format!("column '{col}' (field {}) is not used", i + 1);
            let d = Diagnostic::warning(what)
                .at(self.loc(header_line, Some(&col)))
                .hint("the columns read are chainage_m|chainage_ft, versine_mm|versine_m|versine_in|versine_ft, side and note");
            self.diags.push(d);
        }
        if unused > checks::MAX_LISTED {
            self.diags.push(
                Diagnostic::warning(format!(
                    "{} more columns are not used (not listed)",
                    unused - checks::MAX_LISTED
                ))
                .at(self.loc(header_line, None)),
            );
        }
        if cols.side.is_none() && self.opts.rail.is_none() {
            return Err(SurveyError::file(name, SurveyErrorKind::NoRail));
        }

        let mut readings: Vec<Reading> = Vec::new();
        let mut stats = RowStats::default();
        // Previous reading: chainage text, line.
        let mut prev: Option<(Cow<'_, str>, usize)> = None;
        let mut prev_prev_chainage: Option<f64> = None;
        let required_max = cols.chainage.max(cols.versine).max(cols.side.unwrap_or(0));
        let ncols = cols.names.len();

        for (no, line) in lines {
            match text::classify(line).map_err(|k| SurveyError::line(name, no, k))? {
                LineKind::Blank | LineKind::Comment => continue,
                LineKind::Content => {}
            }
            let is_last = no == total_lines;
            if let Err(k) = text::split_into(line, delim, &mut cells) {
                // A file cut inside a quoted note ends in an open quote.
                let kind = if is_last && !ends_with_newline {
                    SurveyErrorKind::Truncated {
                        found: line[..line.rfind('"').unwrap_or(0)].matches(delim).count() + 1,
                        expected: ncols,
                    }
                } else {
                    k
                };
                return Err(SurveyError::line(name, no, kind));
            }
            if cells.iter().all(|c| c.is_empty()) {
                // Padding rows that spreadsheets write (",,,").
                continue;
            }
            if cells.len() < ncols && is_last && !ends_with_newline {
                if cells.len() <= required_max {
                    return Err(SurveyError::line(
                        name,
                        no,
                        SurveyErrorKind::Truncated {
                            found: cells.len(),
                            expected: ncols,
                        },
                    ));
                }
                self.diags.push(
                    Diagnostic::warning(format!(
                        "the last line has {} of {} fields and the file ends in the middle of it: the file may have been cut off",
                        cells.len(),
                        ncols
                    ))
                    .at(self.loc(no, None))
                    .hint("compare the end of the file with its source"),
                );
            }
            if cells.len() <= required_max {
                let missing = [
                    (cols.chainage, "chainage"),
                    (cols.versine, "versine"),
                    (cols.side.unwrap_or(0), "side"),
                ]
                .into_iter()
                .filter(|(i, _)| *i >= cells.len())
                .min_by_key(|(i, _)| *i)
                .map_or("versine", |(_, w)| w);
                let other = [',', ';', '\t']
                    .into_iter()
                    .find(|&d| d != delim && line.contains(d));
                let todo = match other {
                    Some(d) => format!(
                        "this line seems to separate fields with {} while the header uses {}; use one delimiter throughout",
                        delim_name(d),
                        delim_name(delim)
                    ),
                    None if missing == "versine" => format!(
                        "if the reading is missing, keep its field and leave it empty (e.g. '{}{}')",
                        cells.first().map_or("", |c| c.as_ref()),
                        delim
                    ),
                    None => "complete the line or delete it".to_string(),
                };
                return Err(SurveyError::line(
                    name,
                    no,
                    SurveyErrorKind::MissingField {
                        found: cells.len(),
                        expected: ncols,
                        what: missing,
                        todo,
                    },
                ));
            }
            if cells.len() > ncols && cells[ncols..].iter().any(|c| !c.is_empty()) {
                let todo = if delim == ',' {
                    "if you wrote decimal commas (12,5), write decimal points (12.5) or separate the fields with semicolons; put a note that contains commas in quotes (\"near bridge, left\")".to_string()
                } else {
                    format!(
                        "put a note that contains the {} in quotes, or delete the extra cells",
                        delim_name(delim)
                    )
                };
                return Err(SurveyError::line(
                    name,
                    no,
                    SurveyErrorKind::TooManyFields {
                        found: cells.len(),
                        expected: ncols,
                        todo,
                    },
                ));
            }

            if !unnamed.is_empty() {
                let filled = unnamed
                    .iter()
                    .position(|&i| cells.get(i).is_some_and(|c| !c.is_empty()));
                if let Some(k) = filled {
                    let i = unnamed.swap_remove(k);
                    self.diags.push(
                        Diagnostic::warning(format!(
                            "field {} has values but no name in the header; they are not used",
                            i + 1
                        ))
                        .at(self.loc(no, None))
                        .hint("name the column in the header if it matters, e.g. side or note, or delete it"),
                    );
                }
            }

            // Chainage.
            let ch_text = &cells[cols.chainage];
            if ch_text.is_empty() {
                return Err(self.cell_err(
                    &cols,
                    no,
                    cols.chainage,
                    SurveyErrorKind::EmptyChainage,
                ));
            }
            let chainage_file = match text::parse_number(ch_text, decimal_comma) {
                Ok((v, _)) => v,
                Err(p) => {
                    let kind =
                        number_error(p, ch_text, Quantity::Chainage(cols.chainage_unit), delim);
                    return Err(self.cell_err(&cols, no, cols.chainage, kind));
                }
            };
            let chainage = cols.chainage_unit.to_m(chainage_file);
            if chainage.abs() > MAX_CHAINAGE {
                let max = fmt_num(cols.chainage_unit.from_m(MAX_CHAINAGE).round());
                let text = crate::diag::quote_capped(ch_text);
                let kind = SurveyErrorKind::ChainageTooLarge { text, max };
                return Err(self.cell_err(&cols, no, cols.chainage, kind));
            }
            if decimal_comma && looks_like_thousands(ch_text) {
                stats.thousands_like += 1;
            }
            if readings.len() == 1 {
                stats.second_chainage = ch_text.to_string();
            }
            if let (Some((prev_text, prev_line)), Some(last)) = (&prev, readings.last()) {
                if chainage == last.chainage {
                    return Err(self.cell_err(
                        &cols,
                        no,
                        cols.chainage,
                        SurveyErrorKind::Repeated {
                            value: ch_text.to_string(),
                            previous_line: *prev_line,
                        },
                    ));
                }
                if chainage < last.chainage {
                    let todo = if readings.len() == 1 {
                        "readings must be in increasing chainage; if the survey ran the other way, sort the lines into increasing chainage (and check the side column, which names rails facing increasing chainage)".to_string()
                    } else if prev_prev_chainage.is_some_and(|pp| {
                        chainage > pp && last.chainage - pp > 3.0 * (chainage - pp)
                    }) {
                        format!(
                            "readings must be in increasing chainage; the chainage on line {prev_line} ({prev_text}) looks like the typing error"
                        )
                    } else {
                        "readings must be in increasing chainage; sort the lines by chainage, or correct a typing error".to_string()
                    };
                    return Err(self.cell_err(
                        &cols,
                        no,
                        cols.chainage,
                        SurveyErrorKind::Backwards {
                            value: ch_text.to_string(),
                            previous: prev_text.to_string(),
                            previous_line: *prev_line,
                            todo,
                        },
                    ));
                }
            }

            // Versine.
            let v_text = &cells[cols.versine];
            let versine = if v_text.is_empty() {
                if stats.missing == 0 {
                    stats.first_missing_line = no;
                }
                stats.missing += 1;
                None
            } else {
                match text::parse_number(v_text, decimal_comma) {
                    Ok((v, decimals)) => {
                        if v != 0.0 {
                            stats.nonzero += 1;
                            if decimals >= FINE_DECIMALS {
                                stats.fine_decimals += 1;
                            }
                        }
                        Some(cols.versine_unit.to_m(v))
                    }
                    Err(p) => {
                        let kind =
                            number_error(p, v_text, Quantity::Versine(cols.versine_unit), delim);
                        return Err(self.cell_err(&cols, no, cols.versine, kind));
                    }
                }
            };

            // Rail.
            let rail = match cols.side {
                None => self.opts.rail.unwrap_or(Rail::Left),
                Some(i) => {
                    let s = cells.get(i).map_or("", |c| c.as_ref());
                    let rail = parse_side(s).map_err(|k| self.cell_err(&cols, no, i, k))?;
                    if let Some(given) = self.opts.rail
                        && given != rail
                    {
                        return Err(self.cell_err(
                            &cols,
                            no,
                            i,
                            SurveyErrorKind::RailContradicts {
                                given: given.name(),
                                text: crate::diag::quote_capped(s),
                            },
                        ));
                    }
                    if let Some(last) = readings.last()
                        && last.rail != rail
                    {
                        self.diags.push(
                            Diagnostic::note(format!(
                                "the readings change from the {} rail to the {} rail here",
                                last.rail.name(),
                                rail.name()
                            ))
                            .at(self.loc(no, Some(&cols.names[i]))),
                        );
                    }
                    rail
                }
            };
            let note = cols
                .note
                .and_then(|i| cells.get(i))
                .filter(|c| !c.is_empty())
                .map(|c| c.to_string());

            prev_prev_chainage = readings.last().map(|r| r.chainage);
            readings.push(Reading {
                chainage,
                versine,
                rail,
                note,
                line: no,
            });
            prev = Some((cells[cols.chainage].clone(), no));
        }

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
        if decimal_comma && stats.thousands_like == readings.len() {
            self.diags.push(
                Diagnostic::warning(format!(
                    "every chainage has three digits after a point, like {} on line {}, in a {}-separated file where '.' may separate thousands; they are read with '.' as the decimal point ({} {})",
                    stats.second_chainage,
                    readings[1].line,
                    if delim == ';' { "semicolon" } else { "tab" },
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

        let ctx = checks::Context {
            file: name,
            cols: &cols,
            chord: self.opts.chord,
            marking: self.opts.marking,
            thousands_like: decimal_comma && stats.thousands_like == readings.len(),
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
                source: name.to_string(),
                chainage_unit: cols.chainage_unit,
                versine_unit: cols.versine_unit,
                readings,
                has_side_column: cols.side.is_some(),
            },
            self.diags,
        ))
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
