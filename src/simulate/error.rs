//! Why a simulation could not be set up, with its lengths in the units of
//! the survey it would write (metres and millimetres, or feet and inches).

use crate::units::LengthUnit;
use std::fmt;

/// A length in a [`SimulateError`]: metres inside, shown in the survey's
/// unit (`unit`), in millimetres or inches when `small`. A precision
/// (`{:.3}`) fixes the decimals; without one, four decimals or four
/// significant digits, whichever shows more, trailing zeros dropped.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SimLength {
    /// The length, metres.
    pub metres: f64,
    /// The survey's unit of lengths.
    pub unit: LengthUnit,
    /// Shown in the small unit (mm or in).
    pub small: bool,
}

impl SimLength {
    /// A long length (metres or feet).
    pub fn long(metres: f64, unit: LengthUnit) -> Self {
        SimLength {
            metres,
            unit,
            small: false,
        }
    }
    /// A small length (millimetres or inches).
    pub fn small(metres: f64, unit: LengthUnit) -> Self {
        SimLength {
            metres,
            unit,
            small: true,
        }
    }
}

impl fmt::Display for SimLength {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let (v, suffix) = if self.small {
            let vu = self.unit.versine_unit();
            (vu.from_m(self.metres), vu.suffix())
        } else {
            (self.unit.from_m(self.metres), self.unit.suffix())
        };
        let text = match f.precision() {
            Some(p) => format!("{v:.p$}"),
            None if !v.is_finite() || v == 0.0 => format!("{v}"),
            None => {
                let d = (3 - v.abs().log10().floor() as i64).clamp(4, 15) as usize;
                let t = format!("{v:.d$}");
                t.trim_end_matches('0').trim_end_matches('.').to_string()
            }
        };
        write!(f, "{text} {suffix}")
    }
}

/// Why a simulation could not be set up.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SimulateError {
    /// Chord, spacing or gauge not positive and finite.
    #[error("{what} must be a positive, finite length (got {value})")]
    NotPositive {
        /// Which quantity.
        what: &'static str,
        /// The value given.
        value: SimLength,
    },
    /// A gauge wider than any real track's.
    #[error(
        "the gauge {value} is wider than any track's (at most {widest}); give the distance between the running edges of the rails"
    )]
    GaugeTooWide {
        /// The value given.
        value: SimLength,
        /// The widest gauge simulated.
        widest: SimLength,
    },
    /// The spacing does not divide the half chord.
    #[error(
        "the mark spacing {spacing} does not divide the half chord {half}; use e.g. {half}, {quarter} or {tenth}"
    )]
    SpacingDoesNotFit {
        /// Spacing given.
        spacing: SimLength,
        /// Half chord.
        half: SimLength,
        /// Half of the half chord, for the message.
        quarter: SimLength,
        /// A tenth of the half chord, for the message.
        tenth: SimLength,
    },
    /// The mark spacing does not divide both arms of an asymmetric chord.
    #[error(
        "the mark spacing {spacing} does not divide both arms of the chord ({behind} behind the measuring point, {ahead} ahead): the marks must fall on the chord's ends; {works}"
    )]
    SpacingDoesNotFitArms {
        /// Spacing given.
        spacing: SimLength,
        /// Arm behind.
        behind: SimLength,
        /// Arm ahead.
        ahead: SimLength,
        /// What would work, as a sentence.
        works: String,
    },
    /// The design is too short for a single chord.
    #[error(
        "the design is {length:.3} long along the rail, shorter than one chord ({chord}): add elements or shorten the chord"
    )]
    TooShort {
        /// Rail length of the design.
        length: SimLength,
        /// Chord.
        chord: SimLength,
    },
    /// Noise, bias, resolution or irregularity not finite or negative.
    #[error("{what} must be a finite length not below zero (got {value})")]
    BadImperfection {
        /// Which quantity.
        what: &'static str,
        /// The value given.
        value: SimLength,
    },
    /// The design and spacing would give more marks than simulate writes.
    #[error(
        "the design is {length:.0} long along the rail with a mark every {spacing}, {marks} marks: more than the {max} that simulate writes; shorten the design or widen --spacing"
    )]
    TooManyMarks {
        /// Rail length.
        length: SimLength,
        /// Mark spacing.
        spacing: SimLength,
        /// Marks it would take.
        marks: f64,
        /// The most allowed.
        max: usize,
    },
    /// A curve sharper than the chord and the rail offset can be laid on.
    #[error(
        "element {element} has a radius of {radius}, too sharp for a chord of {chord} read {offset} from the centreline: the chord would not fit on the rail; give radii of at least {min}"
    )]
    TooSharp {
        /// 1-based element number.
        element: usize,
        /// The sharpest radius in it.
        radius: SimLength,
        /// Chord.
        chord: SimLength,
        /// Rail offset from the centreline.
        offset: SimLength,
        /// The smallest radius allowed.
        min: SimLength,
    },
    /// A start chainage so large that marks a spacing apart would share a chainage.
    #[error(
        "{key} {value} is too large: at that size marks {spacing} apart cannot be told apart in a chainage; give a start chainage of at most {max:.0}"
    )]
    HugeChainage {
        /// The design key of the start chainage (`start_chainage_m` or `_ft`).
        key: &'static str,
        /// The value given, in the design's unit, without the unit.
        value: f64,
        /// Mark spacing.
        spacing: SimLength,
        /// The largest allowed.
        max: SimLength,
    },
    /// A fixed-length wire could not be placed (curve too sharp for the chord).
    #[error(
        "a {chord} wire cannot rest on the rail at chainage {chainage:.3}: the curve is too sharp for this chord"
    )]
    WireDoesNotFit {
        /// Chord.
        chord: SimLength,
        /// Chainage of the mark.
        chainage: SimLength,
    },
}
