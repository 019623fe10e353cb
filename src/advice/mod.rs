//! Cant (superelevation) and speed advice for the fitted curves — **advisory
//! only**.
//!
//! For each fitted circular arc: the equilibrium cant at a given line speed
//! and the highest speed for a given applied cant with the permitted cant
//! deficiency. For each transition: the shortest length the usual rules ask
//! for at that speed, compared with the fitted length. Every figure is
//! computed with the **smaller** radius of the arc's 95 % interval
//! (a tighter curve needs more cant and allows less speed) and speeds are
//! rounded **down** to steps of 5 km/h or 5 mph.
//!
//! The limits come from a [`Profile`] (data, not constants in code), each
//! value labelled with where it comes from; every one can be replaced by the
//! user. The tool does not know the applied cant, the vehicles, or local
//! conditions: cant and speed must be set by a competent engineer under the
//! railway's own standards and vehicle approvals ([`CAUTION`]).
//!
//! # Formulas
//! * Equilibrium cant `E_eq = G·v²/(g·R)` (rail-head centres `G`); the `uk`
//!   profile uses `E_eq[mm] = 11.82·V[km/h]²/R[m]`.
//! * `us-fra`: `V_max = √((Ea + Eu)/(0.0007·D))` (inches, mph, `D` the degree
//!   of curve by the 100 ft chord definition, `R = 50/sin(D/2)` ft).
//! * Highest speed: `V = √((E + I_lim)/(E_eq per unit V²))`.
//! * Transition length: the largest of `ΔE·v/r_E`, `ΔI·v/r_I` (rates in time)
//!   and `ΔE/g_c` (cant gradient).
//!
//! ## Reference
//! * 49 CFR §213.57 and Part 213 Appendix A (US FRA: maximum speed, 3 in
//!   unbalance for every vehicle, 7 in maximum elevation for Classes 3–5).
//! * P. Plowman, "Cant and Transition Design" (UK: 150 mm cant, 110 mm
//!   deficiency on CWR, 90 mm on jointed track).
//! * Network Rail NR/L2/TRK/2049 Track Design Handbook B.1.1 (definition of
//!   cant at rail-head centres).
//!
//! ```
//! use chordline::advice::{Profile, equilibrium_cant, max_speed};
//! let uk = Profile::named("uk").unwrap();
//! // 11.82 × 120² / 1000 = 170.21 mm
//! let e = equilibrium_cant(&uk, 120.0 / 3.6, 1000.0).unwrap();
//! assert!((e * 1000.0 - 170.21).abs() < 0.01);
//! // 150 mm applied + 110 mm deficiency on R = 1000 m: 148.31 km/h
//! let v = max_speed(&uk, 0.150, 0.110, 1000.0).unwrap();
//! assert!((v * 3.6 - 148.31).abs() < 0.01);
//! ```

use crate::fit::{Estimate, FitResult, FittedElement};
use crate::geometry::ElementKind;
use crate::units::{FOOT, INCH};
use std::fmt::Write as _;

/// The caution carried by every advice output (file header, terminal, README).
pub const CAUTION: &[&str] = &[
    "ADVISORY ONLY - not a design, not an authority to run trains.",
    "Cant and speed must be set by a competent engineer under the railway's own standards and vehicle approvals.",
    "The values depend on the limit profile chosen; check every limit against the standard that applies.",
    "The tool does not know the applied cant, the vehicle types, the track condition or other local conditions.",
    "Radii are taken at the tighter end of their 95 % interval and speeds are rounded down, but the survey may still be wrong.",
];

/// A mile per hour in metres per second.
pub const MPH: f64 = 0.44704;
/// A kilometre per hour in metres per second.
pub const KMH: f64 = 1.0 / 3.6;

/// How a profile turns speed and radius into equilibrium cant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CantRule {
    /// `E_eq = k·v²/R` in SI (metres, m/s); `k = G/g`.
    Constant {
        /// `G/g` in s² (metres of cant per (m/s)² per 1/m of curvature).
        k: f64,
    },
    /// `E[in] = 0.0007·D·V[mph]²` with `D` the degree of curve, 100 ft chord
    /// definition (49 CFR §213.57).
    FraDegreeOfCurve,
}

/// Units the advice is shown in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AdviceUnits {
    /// Cant in mm, speed in km/h (steps of 5 km/h).
    Metric,
    /// Cant in inches, speed in mph (steps of 5 mph).
    Imperial,
}

impl AdviceUnits {
    /// Metres per unit of cant.
    pub fn cant_scale(self) -> f64 {
        match self {
            AdviceUnits::Metric => 1e-3,
            AdviceUnits::Imperial => INCH,
        }
    }
    /// Metres per second per unit of speed.
    pub fn speed_scale(self) -> f64 {
        match self {
            AdviceUnits::Metric => KMH,
            AdviceUnits::Imperial => MPH,
        }
    }
    /// Suffix of cant columns: `mm` or `in`.
    pub fn cant_suffix(self) -> &'static str {
        match self {
            AdviceUnits::Metric => "mm",
            AdviceUnits::Imperial => "in",
        }
    }
    /// Suffix of speed columns: `kmh` or `mph`.
    pub fn speed_suffix(self) -> &'static str {
        match self {
            AdviceUnits::Metric => "kmh",
            AdviceUnits::Imperial => "mph",
        }
    }
    /// Decimals of a cant shown to people (and one more in files).
    pub fn cant_decimals(self) -> usize {
        match self {
            AdviceUnits::Metric => 0,
            AdviceUnits::Imperial => 2,
        }
    }
    /// Speed unit as shown to people: `km/h` or `mph`.
    pub fn speed_label(self) -> &'static str {
        match self {
            AdviceUnits::Metric => "km/h",
            AdviceUnits::Imperial => "mph",
        }
    }
}

/// One limit and where its value comes from.
#[derive(Debug, Clone, PartialEq)]
pub struct Limit {
    /// Value, SI (m for cant and deficiency, m/s for rates, m/m for a gradient).
    pub value: f64,
    /// Source and confidence, e.g. "published: 49 CFR §213.57(a)" or
    /// "from memory - verify: ...", or "set by the user".
    pub basis: String,
}

impl Limit {
    fn new(value: f64, basis: &str) -> Self {
        Limit {
            value,
            basis: basis.to_string(),
        }
    }
    /// A limit given on the command line.
    pub fn user(value: f64) -> Self {
        Limit::new(value, "set by the user")
    }
}

/// A set of limits of one authority. Every field may be replaced by the user.
#[derive(Debug, Clone, PartialEq)]
pub struct Profile {
    /// Short name (`uk`, `us-fra`).
    pub name: String,
    /// What it stands for.
    pub title: String,
    /// Equilibrium-cant rule.
    pub rule: CantRule,
    /// Where the rule comes from.
    pub rule_basis: String,
    /// Units of the advice.
    pub units: AdviceUnits,
    /// Largest applied cant (m).
    pub max_cant: Limit,
    /// Largest cant deficiency (unbalance) permitted (m).
    pub max_deficiency: Limit,
    /// Largest rate of change of cant in time (m/s), for transitions.
    pub cant_rate: Option<Limit>,
    /// Largest rate of change of deficiency in time (m/s), for transitions.
    pub deficiency_rate: Option<Limit>,
    /// Largest cant gradient along the track (m per m), for transitions.
    pub cant_gradient: Option<Limit>,
}

/// Names of the built-in profiles.
pub const PROFILE_NAMES: &[&str] = &["uk", "us-fra"];

impl Profile {
    /// A built-in profile by name (`uk`, `us-fra`); `None` for any other.
    ///
    /// No European (EN 13803 / TSI) profile is built in: the values known to
    /// this project are from memory, not read in the standard. Use `uk` with
    /// every limit set on the command line instead.
    pub fn named(name: &str) -> Option<Profile> {
        match name {
            "uk" => Some(Profile {
                name: "uk".into(),
                title: "UK practice (Network Rail), 1435 mm gauge".into(),
                // E[mm] = 11.82 V[km/h]²/R[m]  =>  k = 11.82e-3 · 3.6² s².
                rule: CantRule::Constant {
                    k: 11.82e-3 * 3.6 * 3.6,
                },
                rule_basis: "common practice (UK): E = 11.82 V^2/R (mm, km/h, m)".into(),
                units: AdviceUnits::Metric,
                max_cant: Limit::new(
                    0.150,
                    "published: P. Plowman, Cant and Transition Design (150 mm; 110 mm through platforms)",
                ),
                max_deficiency: Limit::new(
                    0.110,
                    "published: P. Plowman, Cant and Transition Design (110 mm on CWR; 90 mm on jointed track)",
                ),
                cant_rate: Some(Limit::new(
                    0.035,
                    "from memory - verify against NR/L2/TRK/2102: 35 mm/s normal (55 mm/s maximum)",
                )),
                deficiency_rate: Some(Limit::new(
                    0.035,
                    "from memory - verify against NR/L2/TRK/2102: 35 mm/s normal (55 mm/s maximum)",
                )),
                cant_gradient: Some(Limit::new(
                    1.0 / 400.0,
                    "from memory - verify against NR/L2/TRK/2102: 1 in 400",
                )),
            }),
            "us-fra" => Some(Profile {
                name: "us-fra".into(),
                title: "US FRA track safety standards, Classes 3-5 (49 CFR 213.57)".into(),
                rule: CantRule::FraDegreeOfCurve,
                rule_basis: "published: 49 CFR 213.57, Vmax = sqrt((Ea+Eu)/(0.0007 D)), D by the 100 ft chord".into(),
                units: AdviceUnits::Imperial,
                max_cant: Limit::new(
                    7.0 * INCH,
                    "published: 49 CFR 213.57(a), 7 in for Classes 3-5 (8 in for Classes 1-2)",
                ),
                max_deficiency: Limit::new(
                    3.0 * INCH,
                    "published: 49 CFR 213.57(c), 3 in for every vehicle (more only with FRA approval of the vehicle type)",
                ),
                cant_rate: None,
                deficiency_rate: None,
                cant_gradient: None,
            }),
            _ => None,
        }
    }
}

/// Equilibrium cant (m) at speed `v` (m/s) on a curve of radius `radius` (m,
/// either sign; its size is used). `None` when the radius is too small for
/// the rule (the FRA degree of curve needs R > 50 ft) or not finite.
pub fn equilibrium_cant(p: &Profile, v: f64, radius: f64) -> Option<f64> {
    Some(cant_per_v2(p, radius)? * v * v)
}

/// Equilibrium cant per (m/s)² on `radius` (m).
fn cant_per_v2(p: &Profile, radius: f64) -> Option<f64> {
    let r = radius.abs();
    if !(r.is_finite() && r > 0.0) {
        return None;
    }
    match p.rule {
        CantRule::Constant { k } => Some(k / r),
        CantRule::FraDegreeOfCurve => {
            let half = 50.0 / (r / FOOT);
            if half >= 1.0 {
                return None;
            }
            let d_deg = 2.0 * half.asin().to_degrees();
            Some(0.0007 * d_deg / (MPH * MPH) * INCH)
        }
    }
}

/// Highest speed (m/s, not rounded) on `radius` (m) with applied cant `cant`
/// (m) and permitted deficiency `deficiency` (m). `None` where the rule
/// cannot be evaluated.
pub fn max_speed(p: &Profile, cant: f64, deficiency: f64, radius: f64) -> Option<f64> {
    let c = cant_per_v2(p, radius)?;
    let total = (cant + deficiency).max(0.0);
    Some((total / c).sqrt())
}

pub use crate::chord::degree_of_curve;

/// `v` (m/s) rounded down to a whole step of 5 km/h or 5 mph, in m/s.
pub fn round_down_speed(units: AdviceUnits, v: f64) -> f64 {
    let s = units.speed_scale();
    let steps = (v / s / 5.0 + 1e-9).floor().max(0.0);
    steps * 5.0 * s
}

/// Advised highest speed (m/s, rounded down) on `radius` (m) by applied cant
/// (m): no cant, then steps of 25 mm (1 in for an imperial profile), then the
/// profile's largest cant. Empty where the rule cannot be evaluated.
pub fn speed_table(p: &Profile, radius: f64) -> Vec<(f64, f64)> {
    let step = match p.units {
        AdviceUnits::Metric => 0.025,
        AdviceUnits::Imperial => INCH,
    };
    let emax = p.max_cant.value;
    let mut cants: Vec<f64> = (0..)
        .map(|i| f64::from(i) * step)
        .take_while(|c| *c < emax - 1e-9 && *c <= 1.0)
        .collect();
    cants.push(emax);
    cants
        .into_iter()
        .filter_map(|c| {
            max_speed(p, c, p.max_deficiency.value, radius)
                .map(|v| (c, round_down_speed(p.units, v)))
        })
        .collect()
}

/// The shortest transition the rules of `p` allow (m) for a change of cant
/// `d_cant` (m) and of deficiency `d_def` (m) run at `v` (m/s), with the rule
/// that governs. `None` when the profile has no rule.
pub fn required_transition(
    p: &Profile,
    d_cant: f64,
    d_def: f64,
    v: f64,
) -> Option<(f64, &'static str)> {
    let mut best: Option<(f64, &'static str)> = None;
    let mut take = |l: f64, name: &'static str| {
        if l.is_finite() && best.is_none_or(|(b, _)| l > b) {
            best = Some((l, name));
        }
    };
    if let Some(r) = &p.cant_rate {
        take(d_cant.abs() * v / r.value, "rate of change of cant");
    }
    if let Some(r) = &p.deficiency_rate {
        take(d_def.abs() * v / r.value, "rate of change of deficiency");
    }
    if let Some(g) = &p.cant_gradient {
        take(d_cant.abs() / g.value, "cant gradient");
    }
    best
}

/// What to advise on: the profile (with the user's overrides applied) and the
/// line speed and/or applied cant. At least one of `speed`, `applied_cant`
/// should be given; with neither, only the limits are evaluated.
#[derive(Debug, Clone, PartialEq)]
pub struct AdviceOptions {
    /// The limits.
    pub profile: Profile,
    /// Line speed (m/s).
    pub speed: Option<f64>,
    /// Applied cant in every arc (m).
    pub applied_cant: Option<f64>,
}

/// Advice on one arc or transition. Cants and deficiencies are sizes (m,
/// not signed); speeds are m/s, already rounded down where said.
#[derive(Debug, Clone, PartialEq)]
pub struct AdviceRow {
    /// Number of the element in `elements.csv` (1-based).
    pub element: usize,
    /// Arc or transition.
    pub kind: ElementKind,
    /// Start survey chainage (m).
    pub start_chainage: f64,
    /// End survey chainage (m).
    pub end_chainage: f64,
    /// Fitted centreline length.
    pub length: Estimate,
    /// Arc: the fitted radius (signed, m). Transition: the radius at its
    /// tighter end.
    pub radius: Option<Estimate>,
    /// The radius the advice uses: the smaller size in the 95 % interval (m);
    /// `None` when the interval reaches a straight (not determined).
    pub radius_used: Option<f64>,
    /// Speed the cant figures are for (m/s): the line speed, or for a
    /// transition without one the advised maximum of its curve.
    pub speed: Option<f64>,
    /// Equilibrium cant at `speed` (m).
    pub equilibrium_cant: Option<f64>,
    /// Arc: least applied cant that keeps the deficiency within the limit at
    /// `speed` (m).
    pub min_applied_cant: Option<f64>,
    /// Applied cant used (m): the user's, capped at the profile's limit.
    pub applied_cant: Option<f64>,
    /// Arc: deficiency at `speed` with the applied cant (m).
    pub deficiency: Option<f64>,
    /// Arc: advised highest speed with the applied cant (m/s, rounded down).
    pub max_speed: Option<f64>,
    /// Arc: advised highest speed with no cant (m/s, rounded down).
    pub max_speed_no_cant: Option<f64>,
    /// Arc: advised highest speed with the profile's largest cant (m/s,
    /// rounded down).
    pub max_speed_cant_limit: Option<f64>,
    /// Arc: advised highest speed (m/s, rounded down) by applied cant (m),
    /// from no cant to the profile's largest in steps of 25 mm (1 in).
    pub speed_table: Vec<(f64, f64)>,
    /// Transition: change of cant along it (m).
    pub cant_change: Option<f64>,
    /// Transition: change of deficiency along it (m).
    pub deficiency_change: Option<f64>,
    /// Transition: shortest length the rules allow (m) and the rule.
    pub required_length: Option<(f64, &'static str)>,
    /// Short warnings, `;`-joined in the outputs (empty: nothing to flag).
    pub flags: Vec<String>,
}

/// Advice for a whole fit.
#[derive(Debug, Clone, PartialEq)]
pub struct Advice {
    /// The options used.
    pub options: AdviceOptions,
    /// One row per arc and transition, in chainage order.
    pub rows: Vec<AdviceRow>,
}

/// Smaller radius size within the 95 % interval; `None` when the interval
/// reaches or crosses a straight.
fn tight_radius(r: &Estimate) -> Option<f64> {
    let (lo, hi) = (r.lo95, r.hi95);
    if !(lo.is_finite() && hi.is_finite() && r.value.is_finite()) || lo * hi <= 0.0 {
        return None;
    }
    Some(lo.abs().min(hi.abs()))
}

fn empty_row(i: usize, e: &FittedElement) -> AdviceRow {
    let mut flags = Vec::new();
    if e.status == crate::fit::ElementStatus::Indeterminate {
        flags.push("not resolved by the chord: read the intervals, not the values".to_string());
    }
    AdviceRow {
        element: i + 1,
        kind: e.kind,
        start_chainage: e.start_chainage.value,
        end_chainage: e.end_chainage.value,
        length: e.length,
        radius: None,
        radius_used: None,
        speed: None,
        equilibrium_cant: None,
        min_applied_cant: None,
        applied_cant: None,
        deficiency: None,
        max_speed: None,
        max_speed_no_cant: None,
        max_speed_cant_limit: None,
        speed_table: Vec::new(),
        cant_change: None,
        deficiency_change: None,
        required_length: None,
        flags,
    }
}

fn arc_row(i: usize, e: &FittedElement, o: &AdviceOptions) -> AdviceRow {
    let p = &o.profile;
    let u = p.units;
    let mut row = empty_row(i, e);
    row.radius = e.start_radius;
    let Some(r) = e.start_radius.as_ref().and_then(tight_radius) else {
        row.flags
            .push("radius not determined (its 95 % interval reaches a straight): no advice".into());
        return row;
    };
    row.radius_used = Some(r);
    let (emax, imax) = (p.max_cant.value, p.max_deficiency.value);
    let applied = o.applied_cant.map(|a| {
        if a > emax {
            row.flags.push(format!(
                "applied cant above the profile's {:.0} {} limit: capped",
                emax / u.cant_scale(),
                u.cant_suffix()
            ));
        }
        a.min(emax)
    });
    row.applied_cant = applied;
    let down = |v: Option<f64>| v.map(|v| round_down_speed(u, v));
    row.max_speed_no_cant = down(max_speed(p, 0.0, imax, r));
    row.max_speed_cant_limit = down(max_speed(p, emax, imax, r));
    if let Some(a) = applied {
        row.max_speed = down(max_speed(p, a, imax, r));
    }
    row.speed_table = speed_table(p, r);
    if let Some(v) = o.speed {
        row.speed = Some(v);
        let eq = equilibrium_cant(p, v, r);
        row.equilibrium_cant = eq;
        if let Some(eq) = eq {
            let need = (eq - imax).max(0.0);
            row.min_applied_cant = Some(need);
            if need > emax {
                row.flags.push(
                    "line speed above what the profile's cant and deficiency limits allow".into(),
                );
            }
            if let Some(a) = applied {
                let d = eq - a;
                row.deficiency = Some(d.max(0.0));
                if d > imax + 1e-12 {
                    row.flags.push(
                        "deficiency at line speed above the limit: speed above the advised maximum"
                            .into(),
                    );
                }
            }
        }
    }
    if row.equilibrium_cant.is_none() && row.max_speed_no_cant.is_none() {
        row.flags
            .push("radius too small for the profile's rule".into());
    }
    row
}

/// Cant and deficiency (signed by the sense of the curve) at a transition end
/// of radius `r` (`None`: straight), at speed `v`.
fn end_state(
    r: Option<&Estimate>,
    v: f64,
    o: &AdviceOptions,
) -> Result<(f64, f64, f64, Option<f64>), ()> {
    let p = &o.profile;
    let Some(r) = r else {
        return Ok((0.0, 0.0, 0.0, None));
    };
    let tight = tight_radius(r).ok_or(())?;
    let sign = r.value.signum();
    let eq = equilibrium_cant(p, v, tight).ok_or(())?;
    let (emax, imax) = (p.max_cant.value, p.max_deficiency.value);
    let (cant, def) = match o.applied_cant {
        Some(a) => {
            let a = a.min(emax);
            (a, (eq - a).max(0.0))
        }
        // Applied cant unknown: the worst case of each over the permitted
        // split of the equilibrium cant.
        None => (eq.min(emax), eq.min(imax)),
    };
    Ok((sign * cant, sign * def, eq, Some(tight)))
}

fn transition_row(i: usize, e: &FittedElement, o: &AdviceOptions) -> AdviceRow {
    let p = &o.profile;
    let u = p.units;
    let mut row = empty_row(i, e);
    // The tighter end (for display).
    row.radius = match (&e.start_radius, &e.end_radius) {
        (Some(a), Some(b)) => Some(if a.value.abs() <= b.value.abs() {
            *a
        } else {
            *b
        }),
        (a, b) => a.or(*b),
    };
    let ends = [e.start_radius.as_ref(), e.end_radius.as_ref()];
    let v = match o.speed {
        Some(v) => Some(v),
        None => {
            // The advised maximum of its curve(s) with the applied cant.
            let a = o.applied_cant.unwrap_or(0.0).min(p.max_cant.value);
            ends.iter()
                .flatten()
                .filter_map(|r| tight_radius(r))
                .filter_map(|r| max_speed(p, a, p.max_deficiency.value, r))
                .map(|v| round_down_speed(u, v))
                .reduce(f64::min)
        }
    };
    let Some(v) = v else {
        row.flags
            .push("no speed to check it at (radius not determined)".into());
        return row;
    };
    row.speed = Some(v);
    let (Ok(s0), Ok(s1)) = (end_state(ends[0], v, o), end_state(ends[1], v, o)) else {
        row.flags.push(
            "radius at an end not determined (its 95 % interval reaches a straight): no check"
                .into(),
        );
        return row;
    };
    row.radius_used = match (s0.3, s1.3) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    };
    row.equilibrium_cant = Some(s0.2.max(s1.2));
    let (dc, dd) = ((s0.0 - s1.0).abs(), (s0.1 - s1.1).abs());
    row.cant_change = Some(dc);
    row.deficiency_change = Some(dd);
    row.required_length = required_transition(p, dc, dd, v);
    match row.required_length {
        None => row.flags.push(
            "the profile has no transition rule: give --cant-rate, --deficiency-rate or --cant-gradient".into(),
        ),
        Some(_) if e.starts_at_survey_end || e.ends_at_survey_end => row.flags.push(
            "cut by the survey end: its full length is not known, compare it yourself".into(),
        ),
        Some((req, _)) => {
            if e.length.value < req {
                row.flags
                    .push("fitted transition shorter than the rules ask for".into());
            } else if e.length.lo95 < req {
                row.flags.push(
                    "fitted transition may be shorter than the rules ask for (95 % interval)"
                        .into(),
                );
            }
        }
    }
    if o.applied_cant.is_none() {
        row.flags.push(
            "applied cant not given: cant and deficiency changes are the worst case of the permitted split".into(),
        );
    }
    row
}

/// Advice on every arc and transition of a fit.
///
/// Chainages in the rows are survey chainages in metres. Never fails: an
/// element that cannot be advised on gets a row with a flag saying why.
pub fn advise(fit: &FitResult, o: &AdviceOptions) -> Advice {
    advise_elements(&fit.elements, o)
}

/// [`advise`] on an element list (in chainage order, as in a [`FitResult`]).
pub fn advise_elements(elements: &[FittedElement], o: &AdviceOptions) -> Advice {
    let rows = elements
        .iter()
        .enumerate()
        .filter_map(|(i, e)| match e.kind {
            ElementKind::Arc => Some(arc_row(i, e, o)),
            ElementKind::Transition => Some(transition_row(i, e, o)),
            ElementKind::Straight => None,
        })
        .collect();
    Advice {
        options: o.clone(),
        rows,
    }
}

/// Parse a speed with its unit: `120km/h`, `75mph`, `33m/s` → m/s.
///
/// # Errors
/// A message saying what is wrong and how to write it.
pub fn parse_speed(s: &str) -> Result<f64, String> {
    let t = s.trim();
    let split = t
        .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == '+' || c == '-'))
        .unwrap_or(t.len());
    let (num, unit) = t.split_at(split);
    let scale = match unit.trim().to_ascii_lowercase().as_str() {
        "km/h" | "kmh" | "kph" => KMH,
        "mph" => MPH,
        "m/s" => 1.0,
        "" => return Err(format!("'{s}' has no unit: write e.g. 120km/h or 75mph")),
        _ => return Err(format!("'{s}' has an unknown unit: use km/h, mph or m/s")),
    };
    let v: f64 = num
        .trim()
        .parse()
        .map_err(|_| format!("'{s}' is not a speed with a unit (e.g. 120km/h)"))?;
    if !(v.is_finite() && v > 0.0) {
        return Err(format!("'{s}' must be a finite speed above zero"));
    }
    Ok(v * scale)
}

/// Parse a cant gradient: `1:400`, `1in400` or `2.5mm/m` → m per m.
///
/// # Errors
/// A message saying how to write it.
pub fn parse_gradient(s: &str) -> Result<f64, String> {
    let t = s.trim().to_ascii_lowercase().replace(' ', "");
    let v = if let Some(n) = t.strip_prefix("1:").or_else(|| t.strip_prefix("1in")) {
        n.parse::<f64>().ok().filter(|n| *n > 0.0).map(|n| 1.0 / n)
    } else if let Some(n) = t.strip_suffix("mm/m") {
        n.parse::<f64>().ok().map(|n| n * 1e-3)
    } else {
        None
    };
    match v {
        Some(v) if v.is_finite() && v > 0.0 => Ok(v),
        _ => Err(format!(
            "'{s}' is not a cant gradient: write 1:400, 1in400 or 2.5mm/m"
        )),
    }
}

/// Parse a rate of change in time: `35mm/s` or `1.4in/s` → m/s.
///
/// # Errors
/// A message saying how to write it.
pub fn parse_rate(s: &str) -> Result<f64, String> {
    let t = s.trim().to_ascii_lowercase().replace(' ', "");
    let v = if let Some(n) = t.strip_suffix("mm/s") {
        n.parse::<f64>().ok().map(|n| n * 1e-3)
    } else if let Some(n) = t.strip_suffix("in/s") {
        n.parse::<f64>().ok().map(|n| n * INCH)
    } else {
        None
    };
    match v {
        Some(v) if v.is_finite() && v > 0.0 => Ok(v),
        _ => Err(format!("'{s}' is not a rate: write e.g. 35mm/s or 1.4in/s")),
    }
}

/// The limits of a profile as text lines, each with its source.
pub fn limit_lines(p: &Profile) -> Vec<String> {
    let u = p.units;
    let c = |x: f64| format!("{:.1} {}", x / u.cant_scale(), u.cant_suffix());
    let mut out = vec![
        format!("profile {}: {}", p.name, p.title),
        format!("equilibrium cant: {}", p.rule_basis),
        format!(
            "max applied cant {} ({})",
            c(p.max_cant.value),
            p.max_cant.basis
        ),
        format!(
            "max cant deficiency {} ({})",
            c(p.max_deficiency.value),
            p.max_deficiency.basis
        ),
    ];
    let mut push = |name: &str, l: &Option<Limit>, f: &dyn Fn(f64) -> String| {
        let mut s = String::new();
        match l {
            Some(l) => {
                let _ = write!(s, "{name} {} ({})", f(l.value), l.basis);
            }
            None => {
                let _ = write!(s, "{name}: none in this profile");
            }
        }
        out.push(s);
    };
    let rate = |x: f64| format!("{:.1} {}/s", x / u.cant_scale(), u.cant_suffix());
    push("max rate of change of cant", &p.cant_rate, &rate);
    push(
        "max rate of change of deficiency",
        &p.deficiency_rate,
        &rate,
    );
    push("max cant gradient", &p.cant_gradient, &|x: f64| {
        format!("1 in {:.0}", 1.0 / x)
    });
    out
}

/// The statement lines of an advice (without any prefix): the caution, every
/// limit with its source, and what was asked for. `advice.csv` writes them
/// as `# ` comments, the terminal block indented.
pub fn header_lines(a: &Advice) -> Vec<String> {
    let o = &a.options;
    let u = o.profile.units;
    let mut v: Vec<String> = CAUTION.iter().map(|s| s.to_string()).collect();
    v.extend(limit_lines(&o.profile));
    v.push(match o.speed {
        Some(s) => format!("line speed {:.0} {}", s / u.speed_scale(), u.speed_label()),
        None => "line speed not given".into(),
    });
    v.push(match o.applied_cant {
        Some(c) => format!(
            "applied cant {:.1} {} in every arc (as given; capped at the limit)",
            c / u.cant_scale(),
            u.cant_suffix()
        ),
        None => "applied cant not given".into(),
    });
    v
}
