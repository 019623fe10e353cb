//! Design files: the JSON that `chordline simulate` reads (elements and,
//! optionally, the survey set-up), with unknown keys refused.

use super::SimSetup;
use crate::geometry::{Alignment, Element, Pose};
use crate::survey::{Marking, Rail};
use crate::units::{FOOT, INCH, LengthUnit};
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
/// set-up. Metres inside, whatever the file's units.
///
/// The file is an object with an `elements` array; each element has `kind`
/// (`straight`, `transition`, `arc`) and `length`; an arc has a signed
/// `radius` (positive curving left); a transition joins its neighbours'
/// curvatures unless it gives `r_start`/`r_end` (null for a straight end).
/// Optional set-up keys: `chord_m`, `spacing_m`, `rail` (`left`/`right`),
/// `gauge_m`, `noise_mm`, `bias_mm`, `resolution_mm`, `irregularity_mm`,
/// `seed`, `units` (`metric`/`imperial`), `marking` (`taped`/`wire`),
/// `start_chainage_m`. These are the keys of the team's reference generator,
/// so one metric design file drives both.
///
/// With `"units": "imperial"` the survey is written in feet and inches and
/// every length of the file is in feet: element lengths and radii,
/// `chord_ft`, `spacing_ft`, `start_chainage_ft`; the small ones in inches:
/// `gauge_in`, `noise_in`, `bias_in`, `resolution_in`, `irregularity_in`.
/// A key of the other system (`chord_m` in an imperial file, `chord_ft` in a
/// metric one) is refused.
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
    chord_ft: Option<IgnoredAny>,
    spacing_ft: Option<IgnoredAny>,
    gauge_in: Option<IgnoredAny>,
    noise_in: Option<IgnoredAny>,
    bias_in: Option<IgnoredAny>,
    resolution_in: Option<IgnoredAny>,
    irregularity_in: Option<IgnoredAny>,
    start_chainage_ft: Option<IgnoredAny>,
    chord_behind_m: Option<IgnoredAny>,
    chord_behind_ft: Option<IgnoredAny>,
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
    /// With `"units": "imperial"` every length is in feet (element lengths and
    /// radii, `chord_ft`, `spacing_ft`, `start_chainage_ft`) and the small
    /// ones in inches (`gauge_in`, `noise_in`, ...); a key of the other
    /// system is refused, so that a file never mixes them.
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
        let r = Reader { file };
        let obj = v.as_object().ok_or_else(|| {
            r.bad(
                "top level",
                "expected an object with an \"elements\" array".into(),
            )
        })?;
        let units = r.units(obj)?;
        let setup = r.setup(obj, units)?;
        let raw = r.elements(obj, units)?;
        Ok(Design {
            elements: join_transitions(&raw),
            setup,
        })
    }
}

/// The unit system of a design file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Units {
    /// Metres, small lengths in millimetres.
    Metric,
    /// Feet, small lengths in inches.
    Imperial,
}

impl Units {
    /// The unit of lengths (element lengths, radii, chord, chainages).
    fn long(self) -> LengthUnit {
        match self {
            Units::Metric => LengthUnit::Metre,
            Units::Imperial => LengthUnit::Foot,
        }
    }
    /// Its name in a sentence.
    fn word(self) -> &'static str {
        match self {
            Units::Metric => "metres",
            Units::Imperial => "feet",
        }
    }
    /// The value of `"units"` that selects this system.
    fn name(self) -> &'static str {
        match self {
            Units::Metric => "metric",
            Units::Imperial => "imperial",
        }
    }
}

/// A set-up length: its key in a metric and in an imperial file, and the
/// metres in one unit of each.
struct LengthKey {
    metric: &'static str,
    imperial: &'static str,
    metric_m: f64,
    imperial_m: f64,
}

const fn key(
    metric: &'static str,
    imperial: &'static str,
    metric_m: f64,
    imperial_m: f64,
) -> LengthKey {
    LengthKey {
        metric,
        imperial,
        metric_m,
        imperial_m,
    }
}

/// Every set-up length of a design file, in the order [`Reader::setup`]
/// reads them: long ones in metres or feet, small ones in millimetres or
/// inches (the gauge in metres, or in inches as the trade writes 4 ft 8½ in).
const LENGTH_KEYS: [LengthKey; 9] = [
    key("chord_m", "chord_ft", 1.0, FOOT),
    key("spacing_m", "spacing_ft", 1.0, FOOT),
    key("gauge_m", "gauge_in", 1.0, INCH),
    key("noise_mm", "noise_in", 1e-3, INCH),
    key("bias_mm", "bias_in", 1e-3, INCH),
    key("resolution_mm", "resolution_in", 1e-3, INCH),
    key("irregularity_mm", "irregularity_in", 1e-3, INCH),
    key("start_chainage_m", "start_chainage_ft", 1.0, FOOT),
    key("chord_behind_m", "chord_behind_ft", 1.0, FOOT),
];

impl LengthKey {
    /// The key in a file of `units`.
    fn name(&self, units: Units) -> &'static str {
        match units {
            Units::Metric => self.metric,
            Units::Imperial => self.imperial,
        }
    }
    /// Metres per unit of the key's value.
    fn metres(&self, units: Units) -> f64 {
        match units {
            Units::Metric => self.metric_m,
            Units::Imperial => self.imperial_m,
        }
    }
}

/// One element as read, before transitions take their neighbours' curvatures.
struct Raw {
    kind: String,
    length: f64,
    k: Option<(f64, f64)>,
    k_start: Option<f64>,
    k_end: Option<f64>,
}

/// Reads the parts of one design file, naming it in messages.
struct Reader<'a> {
    file: &'a str,
}

type Obj = serde_json::Map<String, serde_json::Value>;

impl Reader<'_> {
    fn bad(&self, place: &str, msg: String) -> DesignError {
        DesignError::Bad {
            file: self.file.to_string(),
            place: place.to_string(),
            msg,
        }
    }

    /// The unit system, refusing an unknown one and keys of the other system.
    fn units(&self, obj: &Obj) -> Result<Units, DesignError> {
        let units = match obj.get("units") {
            None | Some(serde_json::Value::Null) => Units::Metric,
            Some(serde_json::Value::String(s)) if s == "metric" => Units::Metric,
            Some(serde_json::Value::String(s)) if s == "imperial" => Units::Imperial,
            Some(other) => {
                let shown = match other.as_str() {
                    Some(s) => format!("'{}'", crate::diag::quote_capped(s)),
                    None => crate::diag::quote_capped(&other.to_string()),
                };
                return Err(self.bad(
                    "units",
                    format!("{shown} is not a unit system; use \"metric\" (metres and millimetres) or \"imperial\" (feet and inches)"),
                ));
            }
        };
        let other = match units {
            Units::Metric => Units::Imperial,
            Units::Imperial => Units::Metric,
        };
        for k in &LENGTH_KEYS {
            let (wrong, right) = (k.name(other), k.name(units));
            if obj.contains_key(wrong) {
                let stated = match units {
                    Units::Metric if obj.contains_key("units") => "says \"units\": \"metric\"",
                    Units::Metric => "gives no \"units\", so it is metric",
                    Units::Imperial => "says \"units\": \"imperial\"",
                };
                return Err(self.bad(
                    wrong,
                    format!(
                        "\"{wrong}\" is in {}, but the file {stated}: every length of a design is in the units it states (element lengths and radii in {}); write \"{right}\", or set \"units\": \"{}\" and give every length in {}",
                        other.word(),
                        units.word(),
                        other.name(),
                        other.word(),
                    ) + match units {
                        Units::Imperial => "; a design in metres can still give a survey in feet: leave out \"units\" and pass --chord in feet (e.g. --chord 62ft)",
                        Units::Metric => "",
                    },
                ));
            }
        }
        Ok(units)
    }

    /// A finite number under `key`, or `default` when absent or null.
    fn num(&self, obj: &Obj, key: &str, default: f64) -> Result<f64, DesignError> {
        match obj.get(key) {
            None | Some(serde_json::Value::Null) => Ok(default),
            Some(x) => x.as_f64().filter(|f| f.is_finite()).ok_or_else(|| {
                self.bad(
                    key,
                    format!(
                        "expected a number, found {}",
                        crate::diag::quote_capped(&x.to_string())
                    ),
                )
            }),
        }
    }

    /// One of the words `allowed` (the first is the default) under `key`.
    fn word<'o>(
        &self,
        obj: &'o Obj,
        key: &str,
        allowed: [&'o str; 2],
        what: &str,
    ) -> Result<&'o str, DesignError> {
        match obj.get(key) {
            None | Some(serde_json::Value::Null) => Ok(allowed[0]),
            Some(serde_json::Value::String(s)) if allowed.contains(&s.as_str()) => Ok(s),
            Some(other) => {
                let shown = match other.as_str() {
                    Some(s) => format!("'{}'", crate::diag::quote_capped(s)),
                    None => crate::diag::quote_capped(&other.to_string()),
                };
                Err(self.bad(
                    key,
                    format!(
                        "{shown} is not a {what}; use \"{}\" or \"{}\"",
                        allowed[0], allowed[1]
                    ),
                ))
            }
        }
    }

    /// The survey set-up, metres inside, with the defaults of [`SimSetup`].
    fn setup(&self, obj: &Obj, units: Units) -> Result<SimSetup, DesignError> {
        let len = |i: usize, default_m: f64| -> Result<f64, DesignError> {
            let k = &LENGTH_KEYS[i];
            let f = k.metres(units);
            Ok(self.num(obj, k.name(units), default_m / f)? * f)
        };
        let chord = len(0, 20.0)?;
        let behind = self.behind(obj, units, chord)?;
        let arms = crate::survey::arms_of(chord, behind);
        let rail = match self.word(obj, "rail", ["left", "right"], "rail")? {
            "left" => Rail::Left,
            _ => Rail::Right,
        };
        let marking = match self.word(obj, "marking", ["taped", "wire"], "marking")? {
            "taped" => Marking::Taped,
            _ => Marking::Wire,
        };
        Ok(SimSetup {
            chord,
            behind,
            spacing: len(1, super::default_spacing(arms, units.long()))?,
            rail,
            gauge: self.gauge(len(2, crate::survey::Setup::STANDARD_GAUGE)?, units)?,
            marking,
            noise_sd: len(3, 0.0)?,
            bias: len(4, 0.0)?,
            resolution: len(5, 0.0)?,
            irregularity_rms: len(6, 0.0)?,
            seed: self.num(obj, "seed", 1.0)?.max(0.0) as u64,
            start_chainage: len(7, 0.0)?,
            chainage_unit: units.long(),
            versine_unit: units.long().versine_unit(),
        })
    }

    /// The arm behind the measuring point (`chord_behind_m`/`_ft`), if the
    /// file gives one: it must lie strictly inside the chord.
    fn behind(&self, obj: &Obj, units: Units, chord: f64) -> Result<Option<f64>, DesignError> {
        let k = &LENGTH_KEYS[8];
        let name = k.name(units);
        if obj.get(name).is_none_or(|v| v.is_null()) {
            return Ok(None);
        }
        let f = k.metres(units);
        let b = self.num(obj, name, 0.0)? * f;
        if !(b > 0.0 && b < chord) {
            return Err(self.bad(
                name,
                format!(
                    "the arm behind the measuring point must be longer than zero and shorter than the chord ({} {}); e.g. 4 with a chord of 10.5 reads 4 behind and 6.5 ahead",
                    (chord / f * 1e4).round() / 1e4,
                    match units {
                        Units::Metric => "m",
                        Units::Imperial => "ft",
                    }
                ),
            ));
        }
        Ok(Some(b))
    }

    /// The gauge (metres) if it is one of real track, else the error naming
    /// the key.
    fn gauge(&self, gauge: f64, units: Units) -> Result<f64, DesignError> {
        let (narrowest, widest) = crate::survey::Setup::GAUGE_RANGE;
        if (narrowest..=widest).contains(&gauge) {
            return Ok(gauge);
        }
        Err(self.bad(
            LENGTH_KEYS[2].name(units),
            "is not a track gauge: gauges run from about 381 mm (15 in) to 1676 mm (5 ft 6 in); give the distance between the running edges of the rails, e.g. 1.435 m or 56.5 in (standard gauge)".into(),
        ))
    }

    /// The elements as read: kinds, lengths and arc curvatures (1/m).
    fn elements(&self, obj: &Obj, units: Units) -> Result<Vec<Raw>, DesignError> {
        let els = obj
            .get("elements")
            .and_then(|e| e.as_array())
            .ok_or_else(|| {
                self.bad(
                    "top level",
                    "no \"elements\" array; list the straights, transitions and arcs in order"
                        .into(),
                )
            })?;
        if els.is_empty() {
            return Err(self.bad(
                "elements",
                "the list is empty; give at least one element".into(),
            ));
        }
        els.iter()
            .enumerate()
            .map(|(i, e)| self.element(&format!("element {}", i + 1), e, units))
            .collect()
    }

    /// One element: its kind, its length and the radii it gives.
    fn element(
        &self,
        place: &str,
        e: &serde_json::Value,
        units: Units,
    ) -> Result<Raw, DesignError> {
        let kind = e.get("kind").and_then(|k| k.as_str()).ok_or_else(|| {
            self.bad(
                place,
                "no \"kind\"; use \"straight\", \"transition\" or \"arc\"".into(),
            )
        })?;
        let to_m = units.long().metres();
        let length = e
            .get("length")
            .and_then(|l| l.as_f64())
            .filter(|l| l.is_finite() && *l > 0.0)
            .ok_or_else(|| {
                self.bad(
                    place,
                    format!("\"length\" must be a positive number of {}", units.word()),
                )
            })?
            * to_m;
        // The curvature (1/m) a radius key gives: absent, null (straight end) or a radius.
        let radius_key = |key: &str| -> Result<Option<f64>, DesignError> {
            match e.get(key) {
                None => Ok(None),
                Some(serde_json::Value::Null) => Ok(Some(0.0)),
                Some(x) => {
                    let r = x.as_f64().filter(|r| r.is_finite() && *r != 0.0).ok_or_else(|| {
                        self.bad(place, format!("\"{key}\" must be a non-zero signed radius in {} (positive curving left), or null for a straight end", units.word()))
                    })?;
                    Ok(Some(1.0 / (r * to_m)))
                }
            }
        };
        let (k, k_start, k_end) = match kind {
            "straight" => (Some((0.0, 0.0)), None, None),
            "arc" => {
                let k = radius_key("radius")?.filter(|k| *k != 0.0).ok_or_else(|| {
                    self.bad(
                        place,
                        format!(
                            "an arc needs a signed \"radius\" in {} (positive curving left)",
                            units.word()
                        ),
                    )
                })?;
                (Some((k, k)), None, None)
            }
            "transition" => (None, radius_key("r_start")?, radius_key("r_end")?),
            other => {
                return Err(self.bad(
                    place,
                    format!(
                        "kind '{}' is not known; use \"straight\", \"transition\" or \"arc\"",
                        crate::diag::quote_capped(other)
                    ),
                ));
            }
        };
        Ok(Raw {
            kind: kind.to_string(),
            length,
            k,
            k_start,
            k_end,
        })
    }
}

/// The elements, each transition taking the curvature of its neighbours at
/// the ends it does not give (a straight at either end of the design).
fn join_transitions(raw: &[Raw]) -> Vec<Element> {
    (0..raw.len())
        .map(|i| {
            let r = &raw[i];
            match r.kind.as_str() {
                "straight" => Element::straight(r.length),
                "arc" => Element::arc(r.length, 1.0 / r.k.map_or(0.0, |k| k.0)),
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
            }
        })
        .collect()
}
