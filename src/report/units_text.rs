//! Messages in the survey's units. The numerical stages write their
//! diagnostics in SI words (metres, millimetres, 1/km); for a survey in feet
//! this turns every such figure into feet, inches or 1/1000 ft before the
//! messages reach the terminal or the report, so an imperial run shows no
//! metric figure.

use crate::diag::Diagnostic;
use crate::units::LengthUnit;

/// A metric unit word in a message and what it becomes in a feet survey.
struct Conv {
    /// The word after the number (" mm", " m", ...), with its space.
    metric: &'static str,
    /// Its replacement.
    imperial: &'static str,
    /// Imperial value per metric value.
    factor: f64,
    /// Decimals to add to those of the metric figure (a foot is about a
    /// third of a metre: one decimal fewer keeps the figure from claiming
    /// digits the rounded metres do not have).
    more_decimals: i32,
}

/// Longest words first, so that " mm" is not read as " m".
const CONVS: [Conv; 4] = [
    Conv {
        metric: " mm",
        imperial: " in",
        factor: 1.0 / 25.4,
        more_decimals: 1,
    },
    Conv {
        metric: " 1/km",
        imperial: " 1/1000 ft",
        factor: 0.3048,
        more_decimals: 1,
    },
    Conv {
        metric: " km",
        imperial: " mi",
        factor: 1.0 / 1.609_344,
        more_decimals: 0,
    },
    Conv {
        metric: " m",
        imperial: " ft",
        factor: 1.0 / 0.3048,
        more_decimals: -1,
    },
];

/// Every diagnostic (message and hint) in the survey's units: unchanged for
/// a metric survey.
pub fn localise_diagnostics(diags: &mut [Diagnostic], unit: LengthUnit) {
    if unit == LengthUnit::Metre {
        return;
    }
    for d in diags {
        d.message = in_feet(&d.message);
        if let Some(h) = &d.hint {
            d.hint = Some(in_feet(h));
        }
    }
}

/// `text` with each metric figure ("12.5 mm", "12310.000 m", "0.42 1/km",
/// "(1.2, -3.4) mm", "from 10 to 20 m") written in feet, inches or 1/1000 ft,
/// to about the precision of the metric figure. Other text is left as it is.
///
/// # Examples
/// ```
/// use chordline::report::in_feet;
/// assert_eq!(in_feet("reading sd 1.529 mm at chainage 304.800 m"),
///            "reading sd 0.0602 in at chainage 1000.00 ft");
/// ```
pub fn in_feet(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 16);
    let mut i = 0;
    // Figures waiting for their unit: their place in `out` and their text.
    let mut pending: Vec<(usize, usize, String)> = Vec::new();
    while i < text.len() {
        let Some((end, num)) = number_at(text, i) else {
            let c = text[i..].chars().next().map_or(1, char::len_utf8);
            out.push_str(&text[i..i + c]);
            i += c;
            continue;
        };
        let start = out.len();
        out.push_str(num);
        pending.push((start, out.len(), num.to_string()));
        i = end;
        if let Some(j) = joiner(text, i) {
            // "10 to 20 m", "(1.2, -3.4) mm": the unit comes after the last.
            out.push_str(&text[i..i + j]);
            i += j;
            continue;
        }
        // A unit word right after the figure, or after a closing parenthesis.
        let after = if text[i..].starts_with(')') { i + 1 } else { i };
        if let Some(conv) = CONVS.iter().find(|c| {
            text[after..].starts_with(c.metric)
                && text[after + c.metric.len()..]
                    .chars()
                    .next()
                    .is_none_or(|n| {
                        // "km/h" and "m/s" are speeds, not lengths.
                        let speed = n == '/' && matches!(c.metric, " km" | " m");
                        !(n.is_alphanumeric() || speed)
                    })
        }) {
            // Rewrite the waiting figures from the last one back.
            for (s, e, n) in pending.drain(..).rev() {
                out.replace_range(s..e, &convert(&n, conv));
            }
            out.push_str(&text[i..after]);
            out.push_str(conv.imperial);
            i = after + conv.metric.len();
        }
        pending.clear();
    }
    out
}

/// The length of the text at byte `i`, right after a figure, that makes it
/// share the unit of the next figure: " to ", " and ", a dash, or ", "
/// inside parentheses.
fn joiner(text: &str, i: usize) -> Option<usize> {
    let rest = &text[i..];
    let len = [" to ", " and ", " - ", " – ", "–", " .. "]
        .iter()
        .find(|j| rest.starts_with(**j))
        .map(|j| j.len())
        .or_else(|| {
            let open = text[..i].rfind('(');
            let close = text[..i].rfind(')');
            (rest.starts_with(", ") && open.is_some() && close.is_none_or(|c| Some(c) < open))
                .then_some(2)
        })?;
    number_at(text, i + len).map(|_| len)
}

/// A figure starting at byte `i` (not inside a word or another number):
/// its end and its text.
fn number_at(text: &str, i: usize) -> Option<(usize, &str)> {
    let b = text.as_bytes();
    if i >= b.len() {
        return None;
    }
    if i > 0 {
        let p = b[i - 1];
        if p.is_ascii_alphanumeric() || matches!(p, b'.' | b'_' | b'/' | b'^' | b'-' | b':') {
            return None;
        }
    }
    let mut j = i;
    if b[j] == b'-' {
        j += 1;
    }
    let digits = j;
    while j < b.len() && b[j].is_ascii_digit() {
        j += 1;
    }
    if j == digits {
        return None;
    }
    if j + 1 < b.len() && b[j] == b'.' && b[j + 1].is_ascii_digit() {
        j += 1;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
    }
    // "1e-3" and the like are not lengths written in a message.
    if j < b.len() && (b[j].is_ascii_alphabetic() || b[j] == b'_') {
        return None;
    }
    Some((j, &text[i..j]))
}

/// One figure converted, with at least its decimals (plus `more_decimals`).
fn convert(num: &str, conv: &Conv) -> String {
    let Ok(v) = num.parse::<f64>() else {
        return num.to_string();
    };
    let dp = num.split('.').nth(1).map_or(0, str::len) as i32 + conv.more_decimals;
    let dp = if conv.metric == " mm" {
        dp.max(2)
    } else {
        dp.max(0)
    } as usize;
    let t = format!("{:.*}", dp, v * conv.factor);
    match t.strip_prefix('-') {
        Some(rest) if rest.bytes().all(|c| c == b'0' || c == b'.') => rest.to_string(),
        _ => t,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn figures_of_the_core_messages_turn_to_feet_and_inches() {
        for (metric, feet) in [
            (
                "reading standard deviation 1.529 mm (estimated from third differences of the readings); readings rounded to 1.5875 mm",
                "reading standard deviation 0.0602 in (estimated from third differences of the readings); readings rounded to 0.06250 in",
            ),
            (
                "control point 'CP1' at chainage 304.800 m disagrees: residual (25.4, -50.8) mm, 3.1 standard deviations",
                "control point 'CP1' at chainage 1000.00 ft disagrees: residual (1.00, -2.00) in, 3.1 standard deviations",
            ),
            (
                "the misfit is largest from 30.48 m to 60.96 m (RMS 2.54 mm there)",
                "the misfit is largest from 100.0 ft to 200.0 ft (RMS 0.100 in there)",
            ),
            (
                "3 slews between chainage 304.800 and 609.600 m are not shown",
                "3 slews between chainage 1000.00 and 2000.00 ft are not shown",
            ),
            (
                "interpolation error 1.00 1/km of curvature",
                "interpolation error 0.305 1/1000 ft of curvature",
            ),
            // Already imperial, degrees, counts, scientific notation, words: untouched.
            (
                "a 62 ft chord, 2.90 deg, p = 1.0e-3, 65 readings, 3 mmHg, EPSG:25832 m, 12 to 15 readings",
                "a 62 ft chord, 2.90 deg, p = 1.0e-3, 65 readings, 3 mmHg, EPSG:25832 m, 12 to 15 readings",
            ),
            ("(sd, at chainage 3.048 m)", "(sd, at chainage 10.00 ft)"),
            ("from 9.4 m to 28.3 m", "from 31 ft to 93 ft"),
            ("at 100 km/h, 3 m/s", "at 100 km/h, 3 m/s"),
            ("straights under 100 m", "straights under 328 ft"),
            ("a step of 1.000 mm/√12", "a step of 0.0394 in/√12"),
            ("-0.0001 mm", "0.00000 in"),
        ] {
            assert_eq!(in_feet(metric), feet);
        }
    }

    #[test]
    fn metric_surveys_keep_their_messages() {
        let mut d = vec![Diagnostic::note("sd 1.529 mm").hint("give 1 mm")];
        localise_diagnostics(&mut d, LengthUnit::Metre);
        assert_eq!(d[0].message, "sd 1.529 mm");
        localise_diagnostics(&mut d, LengthUnit::Foot);
        assert_eq!(d[0].message, "sd 0.0602 in");
        assert_eq!(d[0].hint.as_deref(), Some("give 0.04 in"));
    }
}
