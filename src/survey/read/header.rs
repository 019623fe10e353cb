//! The header line: which field holds what, and in which unit.

use std::borrow::Cow;

use super::error::SurveyErrorKind;
use crate::units::{LengthUnit, VersineUnit};

pub(crate) const CHAINAGE_NAMES: &str = "chainage_m or chainage_ft";
pub(crate) const VERSINE_NAMES: &str = "versine_mm, versine_m, versine_in or versine_ft";

/// Where each column is (0-based field indices) and the units.
#[derive(Debug, Clone)]
pub(crate) struct Columns {
    pub names: Vec<String>,
    pub chainage: usize,
    pub chainage_unit: LengthUnit,
    pub versine: usize,
    pub versine_unit: VersineUnit,
    pub side: Option<usize>,
    pub note: Option<usize>,
    /// Columns not used, 0-based.
    pub unknown: Vec<usize>,
}

impl Columns {
    /// Header name of field `i` (0-based), or a description if the header
    /// has no such field.
    pub fn name(&self, i: usize) -> &str {
        self.names
            .get(i)
            .map_or("(beyond the header)", |s| s.as_str())
    }
}

/// Split a header name into its base word and unit part:
/// `chainage_m`, `Chainage (m)`, `chainage [m]`, `chainage m`, `chainage-m`
/// all give `("chainage", Some("m"))`; `chainage` gives `("chainage", None)`.
fn base_and_unit(name: &str) -> Option<(&'static str, Option<String>)> {
    let lower = name.trim().to_lowercase();
    for base in ["chainage", "versine"] {
        if let Some(rest) = lower.strip_prefix(base) {
            let unit: String = rest
                .trim_start_matches(['_', ' ', '-', '(', '['])
                .trim_end_matches([')', ']', ' '])
                .to_string();
            // "chainages" or "versines_mm": tolerate a plural.
            let unit = unit
                .strip_prefix('s')
                .map(|u| u.trim_start_matches(['_', ' ', '-', '(', '[']).to_string())
                .filter(|_| rest.starts_with('s'))
                .unwrap_or(unit);
            return Some((base, if unit.is_empty() { None } else { Some(unit) }));
        }
    }
    None
}

/// Read the header cells.
///
/// A header error and the 0-based field it concerns.
type HeaderError = (Option<usize>, SurveyErrorKind);

/// The unit of column `i` (`name`, unit suffix `unit`) read by `parse`;
/// a missing or unknown unit is an error naming the accepted names.
fn column_unit<U>(
    i: usize,
    name: &str,
    unit: Option<&str>,
    expected: &'static str,
    parse: impl Fn(&str) -> Option<U>,
) -> Result<U, HeaderError> {
    let Some(unit) = unit else {
        return Err((
            Some(i),
            SurveyErrorKind::NoUnit {
                name: name.to_string(),
                expected,
            },
        ));
    };
    parse(unit).ok_or_else(|| {
        (
            Some(i),
            SurveyErrorKind::UnknownUnit {
                name: name.to_string(),
                unit: unit.to_string(),
                expected,
            },
        )
    })
}

/// Record column `i` with unit `u` as the `what` column, refusing a second one.
fn claim<U>(
    slot: &mut Option<(usize, U)>,
    i: usize,
    u: U,
    what: &'static str,
) -> Result<(), HeaderError> {
    if let Some((first, _)) = slot {
        return Err((
            Some(i),
            SurveyErrorKind::DuplicateColumn {
                what,
                first: *first + 1,
            },
        ));
    }
    *slot = Some((i, u));
    Ok(())
}

/// Errors carry the 0-based field they concern, if any.
pub(crate) fn parse_header(
    cells: &[Cow<'_, str>],
) -> Result<Columns, (Option<usize>, SurveyErrorKind)> {
    let names: Vec<String> = cells.iter().map(|c| c.to_string()).collect();
    // A header of numbers is data without a header.
    if let Some(first) = cells.first()
        && super::text::parse_number(first, true).is_ok()
    {
        return Err((
            None,
            SurveyErrorKind::HeaderLooksLikeData {
                text: crate::diag::quote_capped(&cells.join(",")),
            },
        ));
    }
    let mut chainage: Option<(usize, LengthUnit)> = None;
    let mut versine: Option<(usize, VersineUnit)> = None;
    let mut side = None;
    let mut note = None;
    let mut unknown = Vec::new();
    for (i, name) in names.iter().enumerate() {
        let lower = name.trim().to_lowercase();
        if let Some((base, unit)) = base_and_unit(name) {
            if base == "chainage" {
                let u = column_unit(i, name, unit.as_deref(), CHAINAGE_NAMES, |u| match u {
                    "m" => Some(LengthUnit::Metre),
                    "ft" => Some(LengthUnit::Foot),
                    _ => None,
                })?;
                claim(&mut chainage, i, u, "chainage")?;
            } else {
                let u = column_unit(
                    i,
                    name,
                    unit.as_deref(),
                    VERSINE_NAMES,
                    VersineUnit::from_suffix,
                )?;
                claim(&mut versine, i, u, "versine")?;
            }
        } else if lower == "side" {
            if let Some(first) = side {
                return Err((
                    Some(i),
                    SurveyErrorKind::DuplicateColumn {
                        what: "side",
                        first: first + 1,
                    },
                ));
            }
            side = Some(i);
        } else if lower == "note" || lower == "notes" {
            if let Some(first) = note {
                return Err((
                    Some(i),
                    SurveyErrorKind::DuplicateColumn {
                        what: "note",
                        first: first + 1,
                    },
                ));
            }
            note = Some(i);
        } else {
            unknown.push(i);
        }
    }
    let found = || {
        if names.iter().all(|n| n.is_empty()) {
            "nothing".to_string()
        } else {
            names.join(", ")
        }
    };
    let Some((chainage, chainage_unit)) = chainage else {
        return Err((
            None,
            SurveyErrorKind::MissingColumn {
                what: "chainage",
                found: found(),
                expected: CHAINAGE_NAMES,
            },
        ));
    };
    let Some((versine, versine_unit)) = versine else {
        return Err((
            None,
            SurveyErrorKind::MissingColumn {
                what: "versine",
                found: found(),
                expected: VERSINE_NAMES,
            },
        ));
    };
    Ok(Columns {
        names,
        chainage,
        chainage_unit,
        versine,
        versine_unit,
        side,
        note,
        unknown,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn recognises_names_and_units() {
        assert_eq!(
            base_and_unit("chainage_m"),
            Some(("chainage", Some("m".into())))
        );
        assert_eq!(
            base_and_unit("Chainage (ft)"),
            Some(("chainage", Some("ft".into())))
        );
        assert_eq!(
            base_and_unit("VERSINE [mm]"),
            Some(("versine", Some("mm".into())))
        );
        assert_eq!(
            base_and_unit("versines_mm"),
            Some(("versine", Some("mm".into())))
        );
        assert_eq!(base_and_unit("versine"), Some(("versine", None)));
        assert_eq!(base_and_unit("note"), None);
    }
}
