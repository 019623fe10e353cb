//! The data rows of a survey file, one reading each: the shape of the line
//! (fields missing, extra, cut off), then the chainage (a number, in range,
//! increasing), the versine (a number or empty) and the rail.

use std::borrow::Cow;

use super::numbers::{Quantity, number_error};
use super::text::{self, LineKind};
use super::{
    FINE_DECIMALS, Head, MAX_CHAINAGE, Reader, RowStats, SurveyError, SurveyErrorKind, delim_name,
    fmt_num, looks_like_thousands, parse_side,
};
use crate::diag::Diagnostic;
use crate::survey::{Rail, Reading};

/// The chainage of the reading before, as written, and its line.
type Previous<'t> = Option<(Cow<'t, str>, usize)>;

impl Reader<'_> {
    /// Every reading after the header, with the running figures the checks
    /// of the whole survey need.
    pub(super) fn rows<'t>(
        &mut self,
        head: &Head,
        lines: impl Iterator<Item = (usize, &'t str)>,
    ) -> Result<(Vec<Reading>, RowStats), SurveyError> {
        let cols = &head.cols;
        // Unnamed columns (often trailing empty cells of a spreadsheet) get a
        // warning only when a line has something in them.
        let mut unnamed: Vec<usize> = (cols.unknown.iter().copied())
            .filter(|&i| cols.names[i].is_empty())
            .collect();
        let mut readings: Vec<Reading> = Vec::new();
        let mut stats = RowStats::default();
        let mut cells: Vec<Cow<'t, str>> = Vec::new();
        let mut prev: Previous<'t> = None;
        let mut prev_prev_chainage: Option<f64> = None;
        for (no, line) in lines {
            match text::classify(line).map_err(|k| SurveyError::line(self.name, no, k))? {
                LineKind::Blank | LineKind::Comment => continue,
                LineKind::Content => {}
            }
            if !self.split_row(head, no, line, &mut cells)? {
                continue;
            }
            self.note_unnamed_filled(&mut unnamed, &cells, no);
            let ch_text = &cells[cols.chainage];
            let chainage = self.chainage_of(head, no, ch_text, &mut stats, readings.len())?;
            let order = Order {
                readings: &readings,
                prev: &prev,
                prev_prev_chainage,
            };
            self.check_order(head, no, ch_text, chainage, &order)?;
            let versine = self.versine_of(head, no, &cells[cols.versine], &mut stats)?;
            let rail = self.rail_of(head, no, &cells, readings.last())?;
            let note = (cols.note)
                .and_then(|i| cells.get(i))
                .filter(|c| !c.is_empty())
                .map(|c| Box::from(c.as_ref()));
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
        Ok((readings, stats))
    }

    /// Split line `no` into `cells` and check its number of fields; `false`
    /// for a padding row of empty cells, which is skipped.
    fn split_row<'t>(
        &mut self,
        head: &Head,
        no: usize,
        line: &'t str,
        cells: &mut Vec<Cow<'t, str>>,
    ) -> Result<bool, SurveyError> {
        let (name, delim, cols) = (self.name, head.delim, &head.cols);
        let ncols = cols.names.len();
        let required_max = cols.chainage.max(cols.versine).max(cols.side.unwrap_or(0));
        let cut_off = no == head.total_lines && !head.ends_with_newline;
        if let Err(k) = text::split_into(line, delim, cells) {
            // A file cut inside a quoted note ends in an open quote.
            let kind = if cut_off {
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
            return Ok(false);
        }
        if cells.len() < ncols && cut_off {
            if cells.len() <= required_max {
                let kind = SurveyErrorKind::Truncated {
                    found: cells.len(),
                    expected: ncols,
                };
                return Err(SurveyError::line(name, no, kind));
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
            return Err(missing_field(name, head, no, line, cells));
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
            let kind = SurveyErrorKind::TooManyFields {
                found: cells.len(),
                expected: ncols,
                todo,
            };
            return Err(SurveyError::line(name, no, kind));
        }
        Ok(true)
    }

    /// A warning the first time an unnamed column has a value.
    fn note_unnamed_filled(&mut self, unnamed: &mut Vec<usize>, cells: &[Cow<str>], no: usize) {
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
                .hint(
                    "name the column in the header if it matters, e.g. side or note, or delete it",
                ),
            );
        }
    }

    /// The chainage of line `no` in metres: present, a number, in range.
    fn chainage_of(
        &self,
        head: &Head,
        no: usize,
        ch_text: &str,
        stats: &mut RowStats,
        read_so_far: usize,
    ) -> Result<f64, SurveyError> {
        let cols = &head.cols;
        if ch_text.is_empty() {
            return Err(self.cell_err(cols, no, cols.chainage, SurveyErrorKind::EmptyChainage));
        }
        let chainage_file = match text::parse_number(ch_text, head.decimal_comma()) {
            Ok((v, _)) => v,
            Err(p) => {
                let kind = number_error(
                    p,
                    ch_text,
                    Quantity::Chainage(cols.chainage_unit),
                    head.delim,
                );
                return Err(self.cell_err(cols, no, cols.chainage, kind));
            }
        };
        let chainage = cols.chainage_unit.to_m(chainage_file);
        if chainage.abs() > MAX_CHAINAGE {
            let max = fmt_num(cols.chainage_unit.from_m(MAX_CHAINAGE).round());
            let text = crate::diag::quote_capped(ch_text);
            let kind = SurveyErrorKind::ChainageTooLarge { text, max };
            return Err(self.cell_err(cols, no, cols.chainage, kind));
        }
        if head.decimal_comma() && looks_like_thousands(ch_text) {
            stats.thousands_like += 1;
        }
        if read_so_far == 1 {
            stats.second_chainage = ch_text.to_string();
        }
        Ok(chainage)
    }

    /// Refuse a chainage that repeats or goes back, naming the likely typing
    /// error where one stands out.
    fn check_order(
        &self,
        head: &Head,
        no: usize,
        ch_text: &str,
        chainage: f64,
        order: &Order,
    ) -> Result<(), SurveyError> {
        let cols = &head.cols;
        let (Some((prev_text, prev_line)), Some(last)) = (order.prev, order.readings.last()) else {
            return Ok(());
        };
        if chainage == last.chainage {
            let kind = SurveyErrorKind::Repeated {
                value: ch_text.to_string(),
                previous_line: *prev_line,
            };
            return Err(self.cell_err(cols, no, cols.chainage, kind));
        }
        if chainage < last.chainage {
            let todo = if order.readings.len() == 1 {
                "readings must be in increasing chainage; if the survey ran the other way, sort the lines into increasing chainage (and check the side column, which names rails facing increasing chainage)".to_string()
            } else if order
                .prev_prev_chainage
                .is_some_and(|pp| chainage > pp && last.chainage - pp > 3.0 * (chainage - pp))
            {
                format!(
                    "readings must be in increasing chainage; the chainage on line {prev_line} ({prev_text}) looks like the typing error"
                )
            } else {
                "readings must be in increasing chainage; sort the lines by chainage, or correct a typing error".to_string()
            };
            let kind = SurveyErrorKind::Backwards {
                value: ch_text.to_string(),
                previous: prev_text.to_string(),
                previous_line: *prev_line,
                todo,
            };
            return Err(self.cell_err(cols, no, cols.chainage, kind));
        }
        Ok(())
    }

    /// The versine of line `no` in metres, `None` for an empty cell (a gap).
    fn versine_of(
        &self,
        head: &Head,
        no: usize,
        v_text: &str,
        stats: &mut RowStats,
    ) -> Result<Option<f64>, SurveyError> {
        let cols = &head.cols;
        if v_text.is_empty() {
            if stats.missing == 0 {
                stats.first_missing_line = no;
            }
            stats.missing += 1;
            return Ok(None);
        }
        match text::parse_number(v_text, head.decimal_comma()) {
            Ok((v, decimals)) => {
                if v != 0.0 {
                    stats.nonzero += 1;
                    if decimals >= FINE_DECIMALS {
                        stats.fine_decimals += 1;
                    }
                }
                Ok(Some(cols.versine_unit.to_m(v)))
            }
            Err(p) => {
                let kind =
                    number_error(p, v_text, Quantity::Versine(cols.versine_unit), head.delim);
                Err(self.cell_err(cols, no, cols.versine, kind))
            }
        }
    }

    /// The rail of line `no`: the `side` cell, or the set-up's rail without
    /// one; a note where the readings change rail.
    fn rail_of(
        &mut self,
        head: &Head,
        no: usize,
        cells: &[Cow<str>],
        last: Option<&Reading>,
    ) -> Result<Rail, SurveyError> {
        let cols = &head.cols;
        let Some(i) = cols.side else {
            return Ok(self.opts.rail.unwrap_or(Rail::Left));
        };
        let s = cells.get(i).map_or("", |c| c.as_ref());
        let rail = parse_side(s).map_err(|k| self.cell_err(cols, no, i, k))?;
        if let Some(given) = self.opts.rail
            && given != rail
        {
            let kind = SurveyErrorKind::RailContradicts {
                given: given.name(),
                text: crate::diag::quote_capped(s),
            };
            return Err(self.cell_err(cols, no, i, kind));
        }
        if let Some(last) = last
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
        Ok(rail)
    }
}

/// What the order check compares a new chainage with.
struct Order<'r, 't> {
    readings: &'r [Reading],
    prev: &'r Previous<'t>,
    prev_prev_chainage: Option<f64>,
}

/// The error for a line with too few fields, naming the first one missing
/// and what to do (another delimiter, an empty versine cell).
fn missing_field(
    name: &str,
    head: &Head,
    no: usize,
    line: &str,
    cells: &[Cow<str>],
) -> SurveyError {
    let (cols, delim) = (&head.cols, head.delim);
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
    let kind = SurveyErrorKind::MissingField {
        found: cells.len(),
        expected: cols.names.len(),
        what: missing,
        todo,
    };
    SurveyError::line(name, no, kind)
}
