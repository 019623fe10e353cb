//! Design files: the JSON that `chordline simulate` reads (elements and,
//! optionally, the survey set-up), with unknown keys refused.

use super::SimSetup;
use crate::geometry::{Alignment, Element, Pose};
use crate::survey::{Marking, Rail};
use crate::units::{LengthUnit, VersineUnit};
use serde::de::IgnoredAny;

/// Why a design file could not be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DesignError {
    /// Not valid JSON.
    #[error(
        "{file}: line {line}, column {column}: not valid JSON ({msg}); check brackets, commas and quotes"
    )]
    Json {
        /// File name.
        file: String,
        /// 1-based line.
        line: usize,
        /// 1-based column.
        column: usize,
        /// The parser's message.
        msg: String,
    },
    /// A key the design format does not have (often a misspelling).
    #[error("{file}: line {line}, column {column}: {msg}")]
    UnknownKey {
        /// File name.
        file: String,
        /// 1-based line.
        line: usize,
        /// 1-based column.
        column: usize,
        /// What is wrong and what to do.
        msg: String,
    },
    /// A value is missing or of the wrong kind.
    #[error("{file}: {place}: {msg}")]
    Bad {
        /// File name.
        file: String,
        /// Where in the design (e.g. "element 3").
        place: String,
        /// What is wrong and what to do.
        msg: String,
    },
}

/// A design read from a JSON file: the elements and, optionally, the survey
/// set-up. All lengths in metres.
///
/// The file is an object with an `elements` array; each element has `kind`
/// (`straight`, `transition`, `arc`) and `length`; an arc has a signed
/// `radius` (positive curving left); a transition joins its neighbours'
/// curvatures unless it gives `r_start`/`r_end` (null for a straight end).
/// Optional set-up keys: `chord_m`, `spacing_m`, `rail` (`left`/`right`),
/// `gauge_m`, `noise_mm`, `bias_mm`, `resolution_mm`, `irregularity_mm`,
/// `seed`, `units` (`metric`/`imperial`), `marking` (`taped`/`wire`),
/// `start_chainage_m`. These are the keys of the team's reference generator,
/// so one design file drives both.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// The centreline elements.
    pub elements: Vec<Element>,
    /// The set-up, with defaults (20 m chord, half-chord spacing, left rail,
    /// standard gauge, taped, no noise) for keys the file leaves out.
    pub setup: SimSetup,
}

/// The keys a design file may have (values are read by [`Design::from_json`]):
/// a derived type with `deny_unknown_fields`, so that a misspelt key
/// (`radus`, `chord`) is refused with its line and column instead of being
/// ignored.
#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(dead_code, reason = "only the names of the keys are checked here")]
struct DesignKeys {
    elements: Option<Vec<serde_json::Value>>,
    chord_m: Option<IgnoredAny>,
    spacing_m: Option<IgnoredAny>,
    rail: Option<IgnoredAny>,
    gauge_m: Option<IgnoredAny>,
    noise_mm: Option<IgnoredAny>,
    bias_mm: Option<IgnoredAny>,
    resolution_mm: Option<IgnoredAny>,
    irregularity_mm: Option<IgnoredAny>,
    seed: Option<IgnoredAny>,
    units: Option<IgnoredAny>,
    marking: Option<IgnoredAny>,
    start_chainage_m: Option<IgnoredAny>,
    /// Free text for the reader of the file.
    description: Option<IgnoredAny>,
}

/// The keys an element may have.
#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(dead_code, reason = "only the names of the keys are checked here")]
struct ElementKeys {
    kind: Option<IgnoredAny>,
    length: Option<IgnoredAny>,
    radius: Option<IgnoredAny>,
    r_start: Option<IgnoredAny>,
    r_end: Option<IgnoredAny>,
}

/// Refuse unknown keys, at the top level (with line and column) and in each
/// element. Errors of other kinds are left to the reading that follows.
fn check_design_keys(file: &str, text: &str) -> Result<(), DesignError> {
    let unknown = |e: &serde_json::Error| e.to_string().starts_with("unknown field");
    let hint = "check the spelling, or remove the key (the keys are listed in the README, section Design files)";
    let keys: DesignKeys = match serde_json::from_str(text) {
        Ok(k) => k,
        Err(e) if unknown(&e) => {
            let msg = e.to_string();
            let msg = msg
                .split(" at line ")
                .next()
                .unwrap_or(&msg)
                .replace('`', "\"");
            return Err(DesignError::UnknownKey {
                file: file.to_string(),
                line: e.line(),
                column: e.column(),
                msg: format!("{msg}; {hint}"),
            });
        }
        Err(_) => return Ok(()),
    };
    for (i, el) in keys.elements.iter().flatten().enumerate() {
        if let Err(e) = serde_json::from_value::<ElementKeys>(el.clone())
            && unknown(&e)
        {
            let msg = e.to_string().replace('`', "\"");
            return Err(DesignError::Bad {
                file: file.to_string(),
                place: format!("element {}", i + 1),
                msg: format!("{msg}; {hint}"),
            });
        }
    }
    Ok(())
}

impl Design {
    /// The design centreline placed at the origin heading north.
    pub fn alignment(&self) -> Alignment {
        Alignment::new(
            Pose {
                x: 0.0,
                y: 0.0,
                heading: std::f64::consts::FRAC_PI_2,
            },
            self.setup.start_chainage,
            self.elements.clone(),
        )
    }

    /// Parse a design from JSON text; `file` names it in messages.
    ///
    /// # Errors
    /// [`DesignError`] naming the line and column of a JSON error, or the
    /// element and key that is missing or wrong.
    pub fn from_json(file: &str, text: &str) -> Result<Design, DesignError> {
        check_design_keys(file, text)?;
        let v: serde_json::Value = serde_json::from_str(text).map_err(|e| DesignError::Json {
            file: file.to_string(),
            line: e.line(),
            column: e.column(),
            msg: e.to_string(),
        })?;
        let bad = |place: &str, msg: String| DesignError::Bad {
            file: file.to_string(),
            place: place.to_string(),
            msg,
        };
        let obj = v.as_object().ok_or_else(|| {
            bad(
                "top level",
                "expected an object with an \"elements\" array".into(),
            )
        })?;
        let num = |key: &str, default: f64| -> Result<f64, DesignError> {
            match obj.get(key) {
                None | Some(serde_json::Value::Null) => Ok(default),
                Some(x) => x
                    .as_f64()
                    .filter(|f| f.is_finite())
                    .ok_or_else(|| bad(key, format!("expected a number, found {x}"))),
            }
        };
        let chord = num("chord_m", 20.0)?;
        let imperial = match obj.get("units").and_then(|u| u.as_str()) {
            None | Some("metric") => false,
            Some("imperial") => true,
            Some(other) => {
                return Err(bad(
                    "units",
                    format!("'{other}' is not a unit system; use \"metric\" or \"imperial\""),
                ));
            }
        };
        let rail = match obj.get("rail").and_then(|u| u.as_str()) {
            None | Some("left") => Rail::Left,
            Some("right") => Rail::Right,
            Some(other) => {
                return Err(bad(
                    "rail",
                    format!("'{other}' is not a rail; use \"left\" or \"right\""),
                ));
            }
        };
        let marking = match obj.get("marking").and_then(|u| u.as_str()) {
            None | Some("taped") => Marking::Taped,
            Some("wire") => Marking::Wire,
            Some(other) => {
                return Err(bad(
                    "marking",
                    format!("'{other}' is not a marking; use \"taped\" or \"wire\""),
                ));
            }
        };
        let setup = SimSetup {
            chord,
            spacing: num("spacing_m", 0.5 * chord)?,
            rail,
            gauge: num("gauge_m", crate::survey::Setup::STANDARD_GAUGE)?,
            marking,
            noise_sd: num("noise_mm", 0.0)? * 1e-3,
            bias: num("bias_mm", 0.0)? * 1e-3,
            resolution: num("resolution_mm", 0.0)? * 1e-3,
            irregularity_rms: num("irregularity_mm", 0.0)? * 1e-3,
            seed: num("seed", 1.0)?.max(0.0) as u64,
            start_chainage: num("start_chainage_m", 0.0)?,
            chainage_unit: if imperial {
                LengthUnit::Foot
            } else {
                LengthUnit::Metre
            },
            versine_unit: if imperial {
                VersineUnit::Inch
            } else {
                VersineUnit::Millimetre
            },
        };
        let els = obj
            .get("elements")
            .and_then(|e| e.as_array())
            .ok_or_else(|| {
                bad(
                    "top level",
                    "no \"elements\" array; list the straights, transitions and arcs in order"
                        .into(),
                )
            })?;
        if els.is_empty() {
            return Err(bad(
                "elements",
                "the list is empty; give at least one element".into(),
            ));
        }
        // First pass: kinds, lengths, arc curvatures.
        struct Raw {
            kind: String,
            length: f64,
            k: Option<(f64, f64)>,
            k_start: Option<f64>,
            k_end: Option<f64>,
        }
        let mut raw = Vec::with_capacity(els.len());
        for (i, e) in els.iter().enumerate() {
            let place = format!("element {}", i + 1);
            let kind = e.get("kind").and_then(|k| k.as_str()).ok_or_else(|| {
                bad(
                    &place,
                    "no \"kind\"; use \"straight\", \"transition\" or \"arc\"".into(),
                )
            })?;
            let length = e
                .get("length")
                .and_then(|l| l.as_f64())
                .filter(|l| l.is_finite() && *l > 0.0)
                .ok_or_else(|| {
                    bad(
                        &place,
                        "\"length\" must be a positive number of metres".into(),
                    )
                })?;
            let radius_key = |key: &str| -> Result<Option<Option<f64>>, DesignError> {
                match e.get(key) {
                    None => Ok(None),
                    Some(serde_json::Value::Null) => Ok(Some(None)),
                    Some(x) => {
                        let r = x.as_f64().filter(|r| r.is_finite() && *r != 0.0).ok_or_else(|| {
                            bad(&place, format!("\"{key}\" must be a non-zero signed radius in metres (positive curving left), or null for a straight end"))
                        })?;
                        Ok(Some(Some(r)))
                    }
                }
            };
            let (k, ks, ke) = match kind {
                "straight" => (Some((0.0, 0.0)), None, None),
                "arc" => {
                    let r = radius_key("radius")?.flatten().ok_or_else(|| {
                        bad(
                            &place,
                            "an arc needs a signed \"radius\" in metres (positive curving left)"
                                .into(),
                        )
                    })?;
                    (Some((1.0 / r, 1.0 / r)), None, None)
                }
                "transition" => (
                    None,
                    radius_key("r_start")?.map(|r| r.map_or(0.0, |r| 1.0 / r)),
                    radius_key("r_end")?.map(|r| r.map_or(0.0, |r| 1.0 / r)),
                ),
                other => {
                    return Err(bad(
                        &place,
                        format!(
                            "kind '{other}' is not known; use \"straight\", \"transition\" or \"arc\""
                        ),
                    ));
                }
            };
            raw.push(Raw {
                kind: kind.to_string(),
                length,
                k,
                k_start: ks,
                k_end: ke,
            });
        }
        let mut elements = Vec::with_capacity(raw.len());
        for i in 0..raw.len() {
            let r = &raw[i];
            let e = match r.kind.as_str() {
                "straight" => Element::straight(r.length),
                "arc" => {
                    let (k, _) = r.k.unwrap_or((0.0, 0.0));
                    Element::arc(r.length, 1.0 / k)
                }
                _ => {
                    let prev = if i > 0 {
                        raw[i - 1].k.map(|k| k.1)
                    } else {
                        Some(0.0)
                    };
                    let next = raw.get(i + 1).map_or(Some(0.0), |n| n.k.map(|k| k.0));
                    let k0 = r.k_start.or(prev).unwrap_or(0.0);
                    let k1 = r.k_end.or(next).unwrap_or(0.0);
                    Element::transition(r.length, k0, k1)
                }
            };
            elements.push(e);
        }
        Ok(Design { elements, setup })
    }
}
