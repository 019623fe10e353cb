//! Long surveys are shown in sections of a few kilometres after an overview,
//! so that every diagram keeps a readable scale (about 2.5 px per metre on a
//! 2 km section against 0.008 px per metre for 100 km in one strip).

use crate::units::LengthUnit;

/// A stretch of the survey shown on its own, chart units (the survey's
/// chainage unit).
#[derive(Debug, Clone, PartialEq)]
pub(super) struct Section {
    /// Start chainage.
    pub from: f64,
    /// End chainage.
    pub to: f64,
}

/// Section length in the chainage unit: 2 km, or 6000 ft (1.83 km).
fn section_length(unit: LengthUnit) -> f64 {
    match unit {
        LengthUnit::Metre => 2000.0,
        LengthUnit::Foot => 6000.0,
    }
}

/// The sections of a survey from `first` to `last` (chart units): none when
/// it is short enough to show whole (up to one and a half section lengths).
/// Boundaries fall on round chainages; a last piece shorter than a quarter
/// section joins the one before.
pub(super) fn sections(first: f64, last: f64, unit: LengthUnit) -> Vec<Section> {
    let len = section_length(unit);
    if !(first.is_finite() && last.is_finite()) || last - first <= 1.5 * len {
        return Vec::new();
    }
    let mut out: Vec<Section> = Vec::new();
    let mut from = first;
    let mut next = ((first / len).floor() + 1.0) * len;
    while from < last {
        let to = next.min(last);
        out.push(Section { from, to });
        from = to;
        next += len;
    }
    if out.len() >= 2
        && let Some(l) = out.last()
        && l.to - l.from < 0.25 * len
    {
        let l = out.pop().map_or(last, |l| l.to);
        if let Some(p) = out.last_mut() {
            p.to = l;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn short_surveys_are_shown_whole() {
        assert!(sections(12_310.0, 13_470.0, LengthUnit::Metre).is_empty());
        assert!(sections(0.0, 3000.0, LengthUnit::Metre).is_empty());
    }

    #[test]
    fn long_surveys_split_on_round_chainages() {
        let s = sections(500.0, 7_100.0, LengthUnit::Metre);
        let ends: Vec<(f64, f64)> = s.iter().map(|s| (s.from, s.to)).collect();
        assert_eq!(
            ends,
            [
                (500.0, 2000.0),
                (2000.0, 4000.0),
                (4000.0, 6000.0),
                (6000.0, 7100.0)
            ]
        );
        // A short tail joins the section before.
        let s = sections(0.0, 6_300.0, LengthUnit::Metre);
        assert_eq!(s.len(), 3);
        assert_eq!(s[2].to, 6_300.0);
        let s = sections(0.0, 100_000.0, LengthUnit::Metre);
        assert_eq!(s.len(), 50);
    }
}
