//! Slews: how far the track must move sideways to lie on a smooth design,
//! computed from versine differences by the chord relation, with the limits
//! of the site as constraints.
//!
//! **Caution.** Slews are indicative, for planning only. Before any track is
//! moved they must be checked by a competent engineer against clearances,
//! structure gauges, fixed points (bridges, platforms, switches and
//! crossings), cant and local standards. A slew computed from versines
//! accumulates reading noise over the distance between held points: read the
//! standard deviation beside every slew.
//!
//! # Method
//! With readings every `d` along the rail and a half chord `a = m·d`, a
//! sideways move `s_i` of the track at reading `i` changes the chord-side
//! versine there by `−s_i + (s_{i−m} + s_{i+m})/2` (METHODS §5, CHECKS 1.10;
//! "Hallade realignment" is common practice; the generalisation to `m > 1`
//! follows because the chord ends sit `m` readings away). Moving the track
//! onto the design means, at every reading with a versine,
//!
//! `v_i + Δv_i(s) = D_i + δ_i`
//!
//! where `v` is the measured and `D` the design versine and `δ` the smallest
//! change to the design needed so that the slews can be exactly zero where the
//! track is held: the first and last chord length of the work section (two
//! readings of each interleaved chain, so the track joins the undisturbed
//! track beyond in position and direction) and the `m` readings nearest each
//! fixed point (one per chain, half a chord in all). The slews minimise
//! `Σ δ²`. For readings every half chord and held ends this is exactly
//! Hallade's closure `Σe = 0`, `Σ i·e = 0`; each fixed point adds one
//! condition per chain.
//!
//! **Limits are constraints.** A largest slew, one-sided limits over
//! chainage ranges ([`RangeLimit`]: "no more than 20 mm towards the wall",
//! "outwards only" along a platform) and fixed points held within a
//! tolerance make the problem a quadratic programme: minimise `Σ δ²` subject
//! to the bounds on the reported slews and `|δ_i| ≤ τ` (the versine after
//! slewing within `τ` of the design; by default three reading standard
//! deviations, a choice made here so that the design is changed by no more
//! than the readings can tell apart). It is solved by the interior-point
//! solver Clarabel (Goulart & Chen, "Clarabel: An interior-point solver for
//! conic programs with quadratic objectives", 2024; crate `clarabel`). Without
//! limits the same problem has only equalities and is solved exactly by
//! banded least squares ([`chord`]). When no slews meet the constraints the
//! smallest relaxation that would is computed (the constraints made elastic,
//! the total relaxation minimised), and [`SlewError::Infeasible`] names the
//! constraint that binds, where and by how much.
//!
//! The chord relation links only readings `m` apart, so with `m > 1` the
//! readings form `m` interleaved chains with independent noise. The reported
//! [`Slews::slew`] averages the chains over a half chord, which is the exact
//! solution for half-chord-averaged versine differences and cuts the noise by
//! about `√m`; [`Slews::chord_slew`] keeps the unaveraged solution, which
//! reproduces the adjusted design versines exactly. Limits apply to the
//! reported (averaged) slews.
//!
//! Standard deviations come from the reading noise alone, with the design
//! taken as exact, for the problem without limits (active limits can only
//! narrow the spread). They grow like `L^1.5` with the distance `L` between
//! held points: a few hundred metres of versines fix slews only to
//! centimetres. A slew whose sd exceeds the limit it is compared with is not
//! shown ([`Slews::shown`]): the data cannot say whether it meets the limit.
//! A design from the element fit is fitted to the versines, not to
//! positions: its own small parameter errors (a radius 0.05 % off on a 300 m
//! arc moves the middle of the arc by about 15 mm) show up as slews too, and
//! are not in the sd.
//!
//! # Onto the placed design
//! Onto the fitted design the pipeline calls [`slews_onto_placed`]: the
//! same held readings and limits, met by placing the design itself
//! ([`crate::place::place_design_held`]), and the slews are the signed
//! perpendicular distances from the measured centreline to it, so that the
//! design of the slews is the one written with coordinates. The ends are then
//! held in position only; the sd is that of the banded solve. Where the element
//! chain cannot meet the limits the pipeline falls back to [`slews_for_fit`].
//!
//! # Sign convention
//! A slew is **positive to the left** facing increasing chainage. In a curve,
//! [`Slews::towards_centre`] gives the same move as positive towards the
//! curve centre (the convention of METHODS §5), negative away from it.
//!
//! ## Reference
//! Hallade's method as described in METHODS.md §5 (US Army correspondence
//! course on railway track maintenance, §§3.20–3.28; TM 5-628). Banded
//! Givens least squares: Lawson & Hanson, "Solving Least Squares Problems",
//! 1974, ch. 27 (from memory). Selected inverse of a banded R: Björck,
//! "Numerical Methods for Least Squares Problems", 1996, §6.7 (from memory).

pub mod chord;
mod design;
mod limits;
mod placed;
mod solve;
mod text;

pub use chord::versine_change;
pub use design::{
    DesignChoice, DesignElement, DesignOutcome, Objective, design_versines, elements_of_fit,
    parse_elements_csv,
};
pub use limits::parse_toward;
pub use placed::slews_onto_placed;
pub use solve::slews;
pub use text::{CAUTION, direction_words, summary_line};

use crate::diag::Diagnostic;
use crate::survey::{Setup, Survey};

/// Which way a [`RangeLimit`] restricts the move.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Toward {
    /// To the left, facing increasing chainage.
    Left,
    /// To the right, facing increasing chainage.
    Right,
    /// Towards the curve centre (inwards).
    In,
    /// Away from the curve centre (outwards).
    Out,
}

impl Toward {
    /// The word used in messages and files.
    pub fn word(self) -> &'static str {
        match self {
            Toward::Left => "left",
            Toward::Right => "right",
            Toward::In => "in",
            Toward::Out => "out",
        }
    }
}

/// A one-sided limit over a chainage range: between `from` and `to` the
/// track may move at most `max` towards `toward` (`max = 0`: not at all,
/// e.g. "outwards only" along a platform is `toward: In, max: 0`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RangeLimit {
    /// First survey chainage of the range, metres.
    pub from: f64,
    /// Last survey chainage of the range, metres.
    pub to: f64,
    /// The direction limited.
    pub toward: Toward,
    /// Largest move in that direction, metres (0 or more).
    pub max: f64,
}

/// What the realignment must respect.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SlewOptions {
    /// Survey chainages (metres) where the track must not move: bridges,
    /// platforms, switches and crossings, level crossings. Each holds the
    /// nearest reading of every interleaved chain (the `m` readings nearest,
    /// half a chord in all; the nearest reading when readings are a half
    /// chord apart). The first and last chord length of the work section are
    /// always held.
    pub fixed: Vec<f64>,
    /// How far a fixed point may move, metres (0: not at all).
    pub fixed_tolerance: f64,
    /// Largest slew either way (metres), a constraint. `None`: no limit.
    pub max_slew: Option<f64>,
    /// One-sided limits over chainage ranges, constraints.
    pub ranges: Vec<RangeLimit>,
    /// The work section: first and last survey chainage, metres. `None`: the
    /// whole survey.
    pub section: Option<(f64, f64)>,
    /// Largest change of a design versine allowed to hold the held points
    /// and meet the limits, metres. `None`: three reading standard deviations.
    pub versine_tolerance: Option<f64>,
    /// The design to move the track onto (used by [`slews_for_fit`]).
    pub design: DesignChoice,
}

impl SlewOptions {
    /// Whether any inequality constraint is asked for.
    pub fn has_limits(&self) -> bool {
        self.max_slew.is_some() || !self.ranges.is_empty() || self.fixed_tolerance > 0.0
    }

    /// The same options with the chainages (fixed points, section, range
    /// limits) given in a unit of `to_m` metres converted to metres.
    pub fn in_metres(&self, to_m: f64) -> SlewOptions {
        let mut o = self.clone();
        o.fixed.iter_mut().for_each(|c| *c *= to_m);
        o.section = o.section.map(|(a, b)| (a * to_m, b * to_m));
        for r in &mut o.ranges {
            (r.from, r.to) = (r.from * to_m, r.to * to_m);
        }
        o
    }
}

/// The slew at one station (lateral move onto the design).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StationSlew {
    /// Slew, metres, positive to the left facing increasing chainage.
    pub slew: f64,
    /// Its standard deviation, metres.
    pub sd: f64,
}

/// Slews at every reading of the work section (gaps included), SI units.
#[derive(Debug, Clone, PartialEq)]
pub struct Slews {
    /// Survey chainage of each reading, metres.
    pub chainage: Vec<f64>,
    /// Slew (sideways move to bring the track onto the adjusted design),
    /// metres, positive to the left facing increasing chainage: `chord_slew`
    /// averaged over a half chord (one reading of each interleaved chain)
    /// when readings are closer than a half chord, `chord_slew` itself when
    /// they are a half chord apart. 0 where the track is held.
    pub slew: Vec<f64>,
    /// Standard deviation of each `slew` from the reading noise, metres
    /// (0 where the track is held).
    pub sd: Vec<f64>,
    /// The slews that make every realised versine equal to the adjusted
    /// design exactly (the chord relation solved reading by reading), metres,
    /// positive left. With `m` readings per half chord the relation links
    /// only readings `m` apart, so these carry `m` independent noise
    /// patterns; `slew` averages them.
    pub chord_slew: Vec<f64>,
    /// Whether the reading is held (section end or fixed point).
    pub held: Vec<bool>,
    /// Whether the reading is one of a fixed point's (held, or bounded by
    /// the tolerance).
    pub at_fixed: Vec<bool>,
    /// Measured versine (field convention), metres; `None` in a gap.
    pub measured_versine: Vec<Option<f64>>,
    /// Design versine (field convention), metres.
    pub design_versine: Vec<f64>,
    /// Design versine realised by `chord_slew` (field convention, like
    /// the readings), metres: the measured versine plus the change the slews
    /// make (track beyond the section taken as unmoved). `None` in a gap.
    pub realised_versine: Vec<Option<f64>>,
    /// Change made to the design versine so that the held points can be held
    /// and the limits met (realised − design), metres; 0 where there is no
    /// reading.
    pub design_change: Vec<f64>,
    /// Field sign of each reading's rail (+1 right, −1 left) times the
    /// chord-side sign of the design: +1 where the design curves left, −1
    /// right, 0 on a straight. Used by [`Slews::towards_centre`].
    pub(crate) curve_side: Vec<i8>,
    /// Largest slew allowed to the left at each reading, metres (`None`: no
    /// limit that way). From `max_slew`, the range limits and fixed-point
    /// tolerances; for drawing the limits.
    pub upper: Vec<Option<f64>>,
    /// Largest slew allowed to the right at each reading, as a negative
    /// number, metres (`None`: no limit that way).
    pub lower: Vec<Option<f64>>,
    /// Whether the slew is shown: false where its sd exceeds the limit it is
    /// compared with (the smaller non-zero bound at the reading).
    pub shown: Vec<bool>,
    /// Readings per half chord.
    pub step: usize,
    /// The slew limit, metres.
    pub max_slew: Option<f64>,
    /// The fixed points (survey chainages, metres) and their tolerance.
    pub fixed: Vec<f64>,
    /// How far a fixed point may move, metres.
    pub fixed_tolerance: f64,
    /// The one-sided range limits.
    pub ranges: Vec<RangeLimit>,
    /// Largest design versine change allowed, metres.
    pub versine_tolerance: f64,
    /// Standard deviation of one reading used for `sd`, metres.
    pub reading_sd: f64,
    /// Index of the first reading of the section in the survey.
    pub first: usize,
    /// Readings in the whole survey.
    pub survey_len: usize,
    /// The design used when it is not the fitted one (from [`slews_for_fit`]).
    pub design: Option<DesignOutcome>,
    /// Whether these are the slews onto the placed design
    /// ([`slews_onto_placed`]: the sideways distances to the design written
    /// with coordinates, the ends held in position) rather than the
    /// versine-space solve of [`slews()`] (ends held in position and
    /// direction).
    pub onto_placed: bool,
}

impl Slews {
    /// The slew at reading `i` as a move towards the curve centre (positive)
    /// or away from it (negative), metres; `None` on a straight (design radius
    /// over 1000 km) or out of range.
    pub fn towards_centre(&self, i: usize) -> Option<f64> {
        match self.curve_side.get(i)? {
            0 => None,
            &c => Some(f64::from(c) * self.slew[i]),
        }
    }

    /// Which side the curve centre lies at reading `i`: +1 left, −1 right,
    /// 0 on a straight.
    pub fn curve_side(&self, i: usize) -> i8 {
        self.curve_side.get(i).copied().unwrap_or(0)
    }

    /// Index and value of the largest shown slew in magnitude (`None` for
    /// none).
    pub fn max_abs(&self) -> Option<(usize, f64)> {
        self.slew
            .iter()
            .copied()
            .enumerate()
            .filter(|(i, _)| self.shown[*i])
            .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
    }

    /// Largest change made to a design versine to hold the held points, metres.
    pub fn max_design_change(&self) -> f64 {
        self.design_change.iter().fold(0.0, |m, d| m.max(d.abs()))
    }

    /// The slew columns of `stations.csv` (`slew_mm`, `slew_sd_mm`; imperial
    /// `slew_in`, `slew_sd_in`), one per survey reading, for
    /// [`crate::export::stations::StationExtras::slews`]. Outside the work
    /// section the track is not moved: slew and sd 0.
    pub fn at_stations(&self) -> Vec<StationSlew> {
        let none = StationSlew { slew: 0.0, sd: 0.0 };
        let mut out = vec![none; self.survey_len];
        for (k, (&slew, &sd)) in self.slew.iter().zip(&self.sd).enumerate() {
            out[self.first + k] = StationSlew { slew, sd };
        }
        out
    }

    /// Indices of the readings whose slew is beyond its bounds by more than
    /// 1 µm (none when the constraints were met).
    pub fn exceeding(&self) -> Vec<usize> {
        (0..self.slew.len())
            .filter(|&i| {
                let s = self.slew[i];
                self.upper[i].is_some_and(|u| s > u + 1e-6)
                    || self.lower[i].is_some_and(|l| s < l - 1e-6)
            })
            .collect()
    }

    /// Indices of the readings whose slew is not shown (sd beyond the limit).
    pub fn hidden(&self) -> Vec<usize> {
        (0..self.shown.len()).filter(|&i| !self.shown[i]).collect()
    }
}

/// Which constraint a [`SlewError::Infeasible`] names.
#[derive(Debug, Clone, PartialEq)]
pub enum Binding {
    /// The largest slew (`--max-slew`).
    MaxSlew(f64),
    /// A one-sided range limit.
    Range(RangeLimit),
    /// A fixed point's tolerance.
    Fixed(f64),
    /// The largest change of the design versines.
    VersineTolerance(f64),
}

impl std::fmt::Display for Binding {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Binding::MaxSlew(l) => write!(f, "largest slew of {:.1} mm", l * 1e3),
            Binding::Range(r) => write!(
                f,
                "limit of {:.1} mm {} from {:.3} to {:.3} m",
                r.max * 1e3,
                r.toward.word(),
                r.from,
                r.to
            ),
            Binding::Fixed(c) => write!(f, "fixed point at {c:.3} m"),
            Binding::VersineTolerance(t) => write!(
                f,
                "largest change of the design versines of {:.2} mm",
                t * 1e3
            ),
        }
    }
}

/// Why slews could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SlewError {
    /// The design versines do not match the readings one for one.
    #[error(
        "{file}: {design} design versines for {readings} readings; pass the fit's design_versine for this survey"
    )]
    LengthMismatch {
        /// The survey.
        file: String,
        /// Number of design versines given.
        design: usize,
        /// Number of readings.
        readings: usize,
    },
    /// Readings are not evenly spaced.
    #[error(
        "{file}:{line}: readings are {found:.4} m apart here but {expected:.4} m at the start; slews need evenly spaced readings (split the survey at the change)"
    )]
    Uneven {
        /// The survey.
        file: String,
        /// Line of the reading where the spacing changes.
        line: usize,
        /// Spacing found there, metres.
        found: f64,
        /// Spacing at the start, metres.
        expected: f64,
    },
    /// Slews were asked for on a chord not read at its middle.
    #[error(
        "{file}: slews are worked out for a chord read at its middle, and this chord is read {behind:.3} m from its rear end and {ahead:.3} m from its front end; leave out --slews, --fixed, --max-slew, --limit and --design for this survey, or give a survey taken with a symmetric chord"
    )]
    AsymmetricChord {
        /// The survey.
        file: String,
        /// Arm behind the measuring point, metres.
        behind: f64,
        /// Arm ahead of the measuring point, metres.
        ahead: f64,
    },
    /// The half chord is not a whole number of reading spacings.
    #[error(
        "{file}: the half chord {half_chord:.4} m is not a whole number of reading spacings ({spacing:.4} m); check --chord"
    )]
    Spacing {
        /// The survey.
        file: String,
        /// Half chord, metres.
        half_chord: f64,
        /// Reading spacing, metres.
        spacing: f64,
    },
    /// Too few readings to hold both ends and still move anything.
    #[error(
        "{file}: {readings} readings in the work section; slews need at least {needed} (two chord lengths held at the ends plus one)"
    )]
    TooShort {
        /// The survey.
        file: String,
        /// Readings in the section.
        readings: usize,
        /// Readings needed.
        needed: usize,
    },
    /// A fixed point lies outside the work section.
    #[error(
        "{file}: fixed point at chainage {chainage:.3} m lies outside the work section ({first:.3} to {last:.3} m); give survey chainages inside it"
    )]
    FixedOutside {
        /// The survey.
        file: String,
        /// The fixed chainage, metres.
        chainage: f64,
        /// First chainage of the section, metres.
        first: f64,
        /// Last chainage of the section, metres.
        last: f64,
    },
    /// The work section or a limit is unusable.
    #[error("{file}: {what}")]
    Option {
        /// The survey.
        file: String,
        /// What is wrong and what to do.
        what: String,
    },
    /// A value is not a finite number.
    #[error("{file}: {what} at chainage {chainage:.3} m is not a finite number")]
    NotFinite {
        /// The survey.
        file: String,
        /// Which value.
        what: &'static str,
        /// Where, metres.
        chainage: f64,
    },
    /// The reading standard deviation is not positive and finite.
    #[error("reading standard deviation {0} m is not a positive finite number")]
    ReadingSd(f64),
    /// Too many readings are missing for the slews to be determined.
    #[error(
        "{file}: slews near chainage {chainage:.3} m are not determined by the readings (a gap longer than a chord); add a fixed point there or split the survey at the gap"
    )]
    Undetermined {
        /// The survey.
        file: String,
        /// Chainage of an undetermined slew, metres.
        chainage: f64,
    },
    /// No slews meet the constraints.
    #[error(
        "{file}: no slews onto this design meet the constraints: the {binding} binds at chainage {chainage:.3} m (over {from:.3} to {to:.3} m) and would have to give by {excess_mm:.1} mm there{also}. Relax that constraint, add or move fixed points, shorten the work section (--section), or let the design change (--design optimised)",
        excess_mm = excess * 1e3
    )]
    Infeasible {
        /// The survey.
        file: String,
        /// The constraint that binds most.
        binding: Binding,
        /// Where it binds most, metres.
        chainage: f64,
        /// Start of the stretch where it binds, metres.
        from: f64,
        /// End of that stretch, metres.
        to: f64,
        /// How much it would have to be relaxed there, metres.
        excess: f64,
        /// Other constraints that bind, as text (empty or "; also ...").
        also: String,
    },
    /// The solver failed (not an input fault).
    #[error(
        "{file}: the slew solver stopped without a solution ({status}); this is a fault of chordline, please report it"
    )]
    Solver {
        /// The survey.
        file: String,
        /// The solver's status.
        status: String,
    },
}

impl SlewError {
    /// Whether the error comes from what the user asked for (a constraint, a
    /// fixed point, the section) rather than from the shape of the data: such
    /// errors end the run (exit 1); the others leave the slews out with a
    /// warning.
    pub fn is_request(&self) -> bool {
        matches!(
            self,
            SlewError::Infeasible { .. }
                | SlewError::AsymmetricChord { .. }
                | SlewError::FixedOutside { .. }
                | SlewError::Option { .. }
        )
    }
}

/// [`slews`] against an element fit: the design of `opts.design` (the fit's
/// own by default), and the reading
/// standard deviation stated in `setup` or else the fit's estimate (which
/// counts short-wave track irregularity as noise, so the sd is then on the
/// cautious side).
///
/// # Errors
/// As [`slews`].
pub fn slews_for_fit(
    survey: &Survey,
    setup: &Setup,
    fit: &crate::fit::FitResult,
    opts: &SlewOptions,
) -> Result<(Slews, Vec<Diagnostic>), SlewError> {
    let sd = setup.reading_sd.unwrap_or(fit.stats.reading_sd);
    let (design, outcome) = design_versines(survey, setup, fit, &opts.design, opts, sd)?;
    let (mut s, mut d) = slews(survey, setup, &design, sd, opts)?;
    if let Some(o) = &outcome {
        d.push(Diagnostic::note(format!(
            "slews onto {} ({} elements; the fitted design has {})",
            o.how,
            o.elements.len(),
            o.fitted.len()
        )));
    }
    s.design = outcome;
    Ok((s, d))
}
