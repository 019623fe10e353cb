//! Bytes to lines and cells: encoding checks, comment and blank lines, the
//! field delimiter, quoted cells, and numbers with a decimal point or comma.
//!
//! We split lines ourselves rather than through the `csv` crate: its record
//! positions count the comment and blank lines skipped before a record as part
//! of it, so its line numbers would be off, and an unclosed quote there
//! silently swallows the rest of the file into one cell. Here a cell never
//! runs over a line break.

use std::borrow::Cow;

use super::error::SurveyErrorKind;

/// Spreadsheet error values that can land in an exported cell.
const SHEET_ERRORS: [&str; 8] = [
    "#N/A", "#REF!", "#DIV/0!", "#VALUE!", "#NAME?", "#NUM!", "#NULL!", "#SPILL!",
];

/// UTF-16 without a byte-order mark: in the first bytes, every second byte
/// is NUL and the others are not (ASCII text in UTF-16, little or big endian).
fn looks_utf16(bytes: &[u8]) -> bool {
    let head = &bytes[..bytes.len().min(256) & !1];
    if head.len() < 8 {
        return false;
    }
    let pairs = head.chunks_exact(2);
    let le = pairs.clone().all(|p| p[1] == 0 && p[0] != 0);
    let be = pairs.clone().all(|p| p[0] == 0 && p[1] != 0);
    le || be
}

/// Check the raw bytes and return the text without a byte-order mark.
/// Errors carry the 1-based line where that applies.
pub(crate) fn decode(bytes: &[u8]) -> Result<&str, (Option<usize>, SurveyErrorKind)> {
    if bytes.is_empty() {
        return Err((None, SurveyErrorKind::Empty));
    }
    if bytes.starts_with(b"PK\x03\x04") {
        return Err((None, SurveyErrorKind::Workbook));
    }
    if bytes.starts_with(&[0xFF, 0xFE]) || bytes.starts_with(&[0xFE, 0xFF]) || looks_utf16(bytes) {
        return Err((None, SurveyErrorKind::Utf16));
    }
    let body = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    if let Some(pos) = body.iter().position(|&b| b == 0) {
        return Err((Some(line_of(body, pos)), SurveyErrorKind::Binary));
    }
    match std::str::from_utf8(body) {
        Ok(s) => Ok(s),
        Err(e) => {
            let pos = e.valid_up_to();
            let byte = body.get(pos).copied().unwrap_or(0);
            let guess = if (0x80..=0xFF).contains(&byte) {
                " (the file looks like Latin-1 or Windows-1252 text)"
            } else {
                ""
            };
            Err((
                Some(line_of(body, pos)),
                SurveyErrorKind::NotUtf8 { byte, guess },
            ))
        }
    }
}

/// 1-based line holding byte `pos`.
fn line_of(body: &[u8], pos: usize) -> usize {
    1 + body[..pos.min(body.len())]
        .iter()
        .filter(|&&b| b == b'\n')
        .count()
}

/// What a line is.
pub(crate) enum LineKind {
    /// Whitespace only.
    Blank,
    /// Starts with `#` (after leading blanks).
    Comment,
    /// Anything else.
    Content,
}

/// Classify one line (without its line break). A line whose first cell is a
/// spreadsheet error value such as `#N/A` is an error, not a comment.
pub(crate) fn classify(line: &str) -> Result<LineKind, SurveyErrorKind> {
    let t = line.trim_start();
    if t.trim_end().is_empty() {
        return Ok(LineKind::Blank);
    }
    if t.starts_with('#') {
        for e in SHEET_ERRORS {
            if let Some(rest) = t.strip_prefix(e) {
                let rest = rest.trim_start();
                if rest.is_empty() || rest.starts_with([',', ';', '\t']) {
                    return Err(SurveyErrorKind::SpreadsheetError {
                        text: e.to_string(),
                    });
                }
            }
        }
        return Ok(LineKind::Comment);
    }
    Ok(LineKind::Content)
}

/// Iterate over `(1-based line number, line without its line break)`; the
/// last item tells whether the text ended with a line break.
pub(crate) fn lines(text: &str) -> impl Iterator<Item = (usize, &str)> {
    let body = text.strip_suffix('\n').unwrap_or(text);
    body.split('\n')
        .enumerate()
        .map(|(i, l)| (i + 1, l.strip_suffix('\r').unwrap_or(l)))
}

/// Pick the field delimiter from the header line: the one of `,` `;` TAB
/// that splits it into the most fields (comma wins ties).
pub(crate) fn detect_delimiter(header: &str) -> char {
    let mut best = ',';
    let mut best_n = header.matches(',').count();
    for d in [';', '\t'] {
        let n = header.matches(d).count();
        if n > best_n {
            best = d;
            best_n = n;
        }
    }
    best
}

/// The delimiter named by a spreadsheet's first line `sep=;` (also `sep=,`
/// and `sep=<TAB>`), if `line` is one.
pub(crate) fn sep_directive(line: &str) -> Option<char> {
    let rest = line
        .trim_start()
        .get(..4)
        .filter(|p| p.eq_ignore_ascii_case("sep="))
        .and_then(|_| line.trim_start().get(4..))?;
    let rest = rest.trim_end_matches([' ', '\r']);
    match rest {
        "," => Some(','),
        ";" => Some(';'),
        "\t" => Some('\t'),
        _ => None,
    }
}

/// Split one line into trimmed cells. A cell may be quoted with `"`, with
/// `""` for a literal quote; the quote must close on the same line.
pub(crate) fn split_into<'a>(
    line: &'a str,
    delim: char,
    out: &mut Vec<Cow<'a, str>>,
) -> Result<(), SurveyErrorKind> {
    out.clear();
    let mut rest = line;
    loop {
        let t = rest.trim_start_matches([' ', '\t'].as_slice());
        // A tab is a delimiter in tab-separated files, not leading blank.
        let t = if delim == '\t' {
            rest.trim_start_matches(' ')
        } else {
            t
        };
        if let Some(q) = t.strip_prefix('"') {
            // Quoted cell.
            let mut cell = String::new();
            let mut chars = q.char_indices();
            let mut end = None;
            while let Some((i, c)) = chars.next() {
                if c == '"' {
                    if q[i + 1..].starts_with('"') {
                        cell.push('"');
                        chars.next();
                    } else {
                        end = Some(i + 1);
                        break;
                    }
                } else {
                    cell.push(c);
                }
            }
            let Some(end) = end else {
                return Err(SurveyErrorKind::UnclosedQuote);
            };
            let after = &q[end..];
            match after.find(delim) {
                Some(p) => {
                    // Text between the closing quote and the delimiter is kept.
                    cell.push_str(after[..p].trim_end());
                    out.push(Cow::Owned(cell.trim().to_string()));
                    rest = &after[p + delim.len_utf8()..];
                }
                None => {
                    cell.push_str(after.trim_end());
                    out.push(Cow::Owned(cell.trim().to_string()));
                    return Ok(());
                }
            }
        } else {
            match t.find(delim) {
                Some(p) => {
                    out.push(Cow::Borrowed(t[..p].trim()));
                    rest = &t[p + delim.len_utf8()..];
                }
                None => {
                    out.push(Cow::Borrowed(t.trim()));
                    return Ok(());
                }
            }
        }
    }
}

/// Why a cell is not a number.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum NumProblem {
    /// NaN or infinity, or out of range.
    NotFinite,
    /// A number followed by a unit, e.g. `12.5mm`.
    HasUnit(String),
    /// A spreadsheet error value such as `#DIV/0!`.
    SheetError,
    /// Both `.` and `,`, or several `,` (thousands separators?).
    Separators,
    /// A decimal comma in a comma-separated file (only possible in quotes).
    DecimalCommaInCommaFile,
    /// `12+345.6` style.
    StationPlus,
    /// Anything else.
    Garbage,
}

/// Parse a number. In files whose delimiter is not the comma, one comma is
/// read as the decimal separator (`12,5`). Returns the value and the number
/// of digits after the decimal separator.
pub(crate) fn parse_number(s: &str, decimal_comma: bool) -> Result<(f64, u32), NumProblem> {
    let owned;
    let mut t = s;
    if s.contains(',') {
        if !decimal_comma {
            return Err(if s.matches(',').count() == 1 && !s.contains('.') {
                NumProblem::DecimalCommaInCommaFile
            } else {
                NumProblem::Separators
            });
        }
        if s.contains('.') || s.matches(',').count() > 1 {
            return Err(NumProblem::Separators);
        }
        owned = s.replace(',', ".");
        t = &owned;
    }
    // Only plain decimal notation: digits, one point, sign, exponent. This
    // refuses Rust's own spellings of "inf" and "NaN" here and reports them
    // as not finite below.
    let plain = !t.is_empty()
        && t.bytes()
            .all(|b| b.is_ascii_digit() || matches!(b, b'.' | b'+' | b'-' | b'e' | b'E'))
        && t.bytes().any(|b| b.is_ascii_digit());
    if plain && let Ok(v) = t.parse::<f64>() {
        if !v.is_finite() {
            return Err(NumProblem::NotFinite);
        }
        let decimals = t
            .split(['e', 'E'])
            .next()
            .and_then(|m| m.split_once('.'))
            .map_or(0, |(_, f)| f.len() as u32);
        return Ok((v, decimals));
    }
    let lower = t.to_ascii_lowercase();
    let bare = lower.trim_start_matches(['+', '-']);
    if matches!(bare, "nan" | "inf" | "infinity" | "∞") {
        return Err(NumProblem::NotFinite);
    }
    if t.starts_with('#') {
        return Err(NumProblem::SheetError);
    }
    // A number followed by letters or a quote mark: a unit written in the cell.
    let num_end = t
        .find(|c: char| !(c.is_ascii_digit() || matches!(c, '.' | '+' | '-')))
        .unwrap_or(t.len());
    if num_end > 0 && t[..num_end].parse::<f64>().is_ok() {
        let unit = t[num_end..].trim();
        if !unit.is_empty()
            && unit.len() <= 6
            && unit
                .chars()
                .all(|c| c.is_alphabetic() || matches!(c, '"' | '\'' | '′' | '″'))
        {
            return Err(NumProblem::HasUnit(unit.to_string()));
        }
    }
    // Digit groups separated by spaces (`1 234,5`, also no-break and thin
    // spaces, as some locales write thousands).
    if t.contains([' ', '\u{a0}', '\u{202f}']) {
        let joined: String = t.chars().filter(|c| !c.is_whitespace()).collect();
        if parse_number(&joined, decimal_comma).is_ok() {
            return Err(NumProblem::Separators);
        }
    }
    if let Some((a, b)) = t.split_once('+')
        && !a.is_empty()
        && a.bytes().all(|c| c.is_ascii_digit())
        && b.parse::<f64>().is_ok()
    {
        return Err(NumProblem::StationPlus);
    }
    Err(NumProblem::Garbage)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn split(line: &str, d: char) -> Vec<String> {
        let mut v = Vec::new();
        split_into(line, d, &mut v).unwrap();
        v.into_iter().map(|c| c.into_owned()).collect()
    }

    #[test]
    fn splits_cells_with_quotes_and_blanks() {
        assert_eq!(split("0, 12.5 ,note", ','), ["0", "12.5", "note"]);
        assert_eq!(split("0,,", ','), ["0", "", ""]);
        assert_eq!(split("0,1,\"a, \"\"b\"\"\"", ','), ["0", "1", "a, \"b\""]);
        assert_eq!(split("0\t\t1", '\t'), ["0", "", "1"]);
        assert_eq!(split("0;12,5", ';'), ["0", "12,5"]);
        let mut v = Vec::new();
        assert!(split_into("0,\"open", ',', &mut v).is_err());
    }

    #[test]
    fn parses_numbers() {
        assert_eq!(parse_number("12.5", false), Ok((12.5, 1)));
        assert_eq!(parse_number("12,5", true), Ok((12.5, 1)));
        assert_eq!(parse_number("-0.0125", false), Ok((-0.0125, 4)));
        assert_eq!(parse_number("1e3", false), Ok((1000.0, 0)));
        assert_eq!(parse_number("NaN", false), Err(NumProblem::NotFinite));
        assert_eq!(parse_number("-inf", false), Err(NumProblem::NotFinite));
        assert_eq!(parse_number("1e400", false), Err(NumProblem::NotFinite));
        assert_eq!(
            parse_number("12.5mm", false),
            Err(NumProblem::HasUnit("mm".into()))
        );
        assert_eq!(parse_number("#DIV/0!", false), Err(NumProblem::SheetError));
        assert_eq!(parse_number("1.234,5", true), Err(NumProblem::Separators));
        assert_eq!(parse_number("1 234,5", true), Err(NumProblem::Separators));
        assert_eq!(
            parse_number("1\u{202f}234", false),
            Err(NumProblem::Separators)
        );
        assert_eq!(
            parse_number("12,5", false),
            Err(NumProblem::DecimalCommaInCommaFile)
        );
        assert_eq!(
            parse_number("12+345.6", false),
            Err(NumProblem::StationPlus)
        );
        assert_eq!(parse_number("l2.5", false), Err(NumProblem::Garbage));
        assert_eq!(parse_number("-", false), Err(NumProblem::Garbage));
        assert_eq!(parse_number(".", false), Err(NumProblem::Garbage));
    }

    #[test]
    fn decodes_and_locates_bad_bytes() {
        assert_eq!(decode(b"\xEF\xBB\xBFa,b\n").ok(), Some("a,b\n"));
        let e = decode(b"a\nb\n\xE9\n").unwrap_err();
        assert_eq!(e.0, Some(3));
        assert!(matches!(decode(b""), Err((None, SurveyErrorKind::Empty))));
    }

    #[test]
    fn finds_lines_and_delimiters() {
        let v: Vec<_> = lines("a\r\nb\n\nc").collect();
        assert_eq!(v, [(1, "a"), (2, "b"), (3, ""), (4, "c")]);
        assert_eq!(detect_delimiter("chainage_m;versine_mm"), ';');
        assert_eq!(detect_delimiter("chainage_m\tversine_mm"), '\t');
        assert_eq!(detect_delimiter("chainage_m,versine_mm"), ',');
        assert_eq!(sep_directive("sep=;"), Some(';'));
        assert_eq!(sep_directive("SEP=\t"), Some('\t'));
        assert_eq!(sep_directive("sep=x"), None);
        assert_eq!(sep_directive("chainage_m,versine_mm"), None);
    }
}
