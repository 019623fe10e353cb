//! Units at the edges of the program.
//!
//! Inside the library every length is in metres and every angle in radians. The
//! names in this module are the only place where feet, inches and millimetres
//! appear; input readers convert on the way in and exporters on the way out.

use std::fmt;
use std::str::FromStr;

/// One international foot in metres (exact by definition, 1959 agreement).
pub const FOOT: f64 = 0.3048;
/// One inch in metres (exact by definition).
pub const INCH: f64 = 0.0254;

/// Unit of chainages and other along-track and plan lengths in a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
pub enum LengthUnit {
    /// Metres (`_m` column suffix).
    Metre,
    /// International feet (`_ft` column suffix).
    Foot,
}

impl LengthUnit {
    /// Metres per unit.
    pub fn metres(self) -> f64 {
        match self {
            LengthUnit::Metre => 1.0,
            LengthUnit::Foot => FOOT,
        }
    }
    /// Column-name suffix without the underscore (`m` or `ft`).
    pub fn suffix(self) -> &'static str {
        match self {
            LengthUnit::Metre => "m",
            LengthUnit::Foot => "ft",
        }
    }
    /// Convert a value in this unit to metres.
    pub fn to_m(self, v: f64) -> f64 {
        v * self.metres()
    }
    /// Convert metres to this unit.
    pub fn from_m(self, v: f64) -> f64 {
        v / self.metres()
    }
    /// The versine unit that goes with this length unit in output files
    /// (millimetres for metric surveys, inches for imperial ones).
    pub fn versine_unit(self) -> VersineUnit {
        match self {
            LengthUnit::Metre => VersineUnit::Millimetre,
            LengthUnit::Foot => VersineUnit::Inch,
        }
    }
}

/// Unit of versine readings in a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
pub enum VersineUnit {
    /// Millimetres (`versine_mm`).
    Millimetre,
    /// Metres (`versine_m`).
    Metre,
    /// Inches (`versine_in`).
    Inch,
    /// Feet (`versine_ft`).
    Foot,
}

impl VersineUnit {
    /// Metres per unit.
    pub fn metres(self) -> f64 {
        match self {
            VersineUnit::Millimetre => 1e-3,
            VersineUnit::Metre => 1.0,
            VersineUnit::Inch => INCH,
            VersineUnit::Foot => FOOT,
        }
    }
    /// Column-name suffix without the underscore (`mm`, `m`, `in`, `ft`).
    pub fn suffix(self) -> &'static str {
        match self {
            VersineUnit::Millimetre => "mm",
            VersineUnit::Metre => "m",
            VersineUnit::Inch => "in",
            VersineUnit::Foot => "ft",
        }
    }
    /// Parse a column suffix (`mm`, `m`, `in`, `ft`).
    pub fn from_suffix(s: &str) -> Option<Self> {
        match s {
            "mm" => Some(VersineUnit::Millimetre),
            "m" => Some(VersineUnit::Metre),
            "in" => Some(VersineUnit::Inch),
            "ft" => Some(VersineUnit::Foot),
            _ => None,
        }
    }
    /// Convert a value in this unit to metres.
    pub fn to_m(self, v: f64) -> f64 {
        v * self.metres()
    }
    /// Convert metres to this unit.
    pub fn from_m(self, v: f64) -> f64 {
        v / self.metres()
    }
}

/// A length typed with its unit on the command line, such as `20m`, `62ft`,
/// `20 m` or `30.48m`. Stored in metres.
///
/// # Examples
/// ```
/// use chordline::units::Length;
/// let c: Length = "62ft".parse().unwrap();
/// assert!((c.metres() - 18.8976).abs() < 1e-12);
/// assert_eq!(c.unit(), chordline::units::LengthUnit::Foot);
/// assert!("20".parse::<Length>().is_err()); // a unit is required
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Length {
    metres: f64,
    unit: LengthUnit,
}

impl Length {
    /// A length from metres, remembered as metric.
    pub fn from_metres(metres: f64) -> Self {
        Length {
            metres,
            unit: LengthUnit::Metre,
        }
    }
    /// The value in metres.
    pub fn metres(&self) -> f64 {
        self.metres
    }
    /// The unit it was written in.
    pub fn unit(&self) -> LengthUnit {
        self.unit
    }
}

impl fmt::Display for Length {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}{}", self.unit.from_m(self.metres), self.unit.suffix())
    }
}

/// Why a length such as `--chord 20m` could not be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LengthParseError {
    /// No unit after the number.
    #[error("'{0}' has no unit: write it as e.g. 20m or 62ft")]
    NoUnit(String),
    /// A unit that is not read.
    #[error("'{0}' has an unknown unit: use m, mm, cm, km, ft or in (e.g. 20m, 62ft)")]
    UnknownUnit(String),
    /// Not a number before the unit.
    #[error("'{0}' is not a number followed by a unit (e.g. 20m, 62ft)")]
    NotANumber(String),
    /// Zero, negative, infinite or NaN.
    #[error("'{0}' must be a positive, finite length")]
    NotPositive(String),
    /// A typographic minus sign (U+2212), as word processors write it.
    #[error("'{0}' has a typographic minus sign (U+2212); type the minus as '-' (a hyphen)")]
    UnicodeMinus(String),
    /// A chord given as two arms, one of them wrong (the text, what is wrong).
    #[error(
        "'{0}': {1}; give the chord as one length read at its middle (e.g. 20m) or as its two arms BEHIND+AHEAD of the measuring point (e.g. 4m+6.5m)"
    )]
    Arms(String, String),
    /// The next option where a value was expected.
    #[error("'{0}' is an option, not a value: give the value (e.g. 20m) before the next option")]
    OptionNotValue(String),
}

/// A chord as a user gives it: one length read at its middle (`20m`,
/// `62ft`), or its two arms `BEHIND+AHEAD` (`4m+6.5m`, `13ft+21ft`): from the
/// rear end (towards decreasing chainage) to the measuring point, and from
/// the measuring point to the front end. Equal arms are the symmetric chord.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChordLength {
    total: Length,
    behind: Option<f64>,
}

/// The largest ratio of the longer arm to the shorter accepted in
/// [`ChordLength`]: a measuring point nearer one end reads almost nothing of
/// a curve (the versine is `a₁a₂/2R`). Recording vehicles read well inside
/// this (common practice, from memory).
pub const MAX_ARM_RATIO: f64 = 20.0;

impl ChordLength {
    /// A chord read at its middle.
    pub fn symmetric(total: Length) -> Self {
        ChordLength {
            total,
            behind: None,
        }
    }
    /// The whole chord, metres.
    pub fn metres(&self) -> f64 {
        self.total.metres()
    }
    /// The arm behind the measuring point, metres; `None` when the chord is
    /// read at its middle.
    pub fn behind(&self) -> Option<f64> {
        self.behind
    }
    /// The unit system the chord was given in (that of the first arm).
    pub fn unit(&self) -> LengthUnit {
        self.total.unit()
    }
}

impl FromStr for ChordLength {
    type Err = LengthParseError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let t = s.trim();
        let Some(plus) = t
            .char_indices()
            .skip(1)
            .find(|&(_, c)| c == '+')
            .map(|(i, _)| i)
        else {
            return Ok(ChordLength::symmetric(t.parse()?));
        };
        let (b, a) = (&t[..plus], &t[plus + 1..]);
        let arm = |x: &str, which: &str| -> Result<Length, LengthParseError> {
            x.parse::<Length>().map_err(|e| {
                LengthParseError::Arms(
                    s.to_string(),
                    format!("the arm {which} the measuring point: {e}"),
                )
            })
        };
        let behind = arm(b, "behind")?;
        let ahead = arm(a, "ahead of")?;
        let (lo, hi) = if behind.metres() <= ahead.metres() {
            (behind.metres(), ahead.metres())
        } else {
            (ahead.metres(), behind.metres())
        };
        if hi > MAX_ARM_RATIO * lo {
            return Err(LengthParseError::Arms(
                s.to_string(),
                format!(
                    "one arm is more than {MAX_ARM_RATIO} times the other, so the chord would read almost nothing of a curve; check the arms"
                ),
            ));
        }
        let total = behind.metres() + ahead.metres();
        Ok(ChordLength {
            total: Length {
                metres: total,
                unit: behind.unit(),
            },
            behind: (behind.metres() != ahead.metres()).then_some(behind.metres()),
        })
    }
}

/// A length unit as a user types it: its size in metres and the unit system
/// a survey in it would use (`mm`, `cm`, `m`, `km` metric; `in`, `ft`
/// imperial). `None` for an unknown unit.
pub fn length_unit_of(suffix: &str) -> Option<(f64, LengthUnit)> {
    Some(match suffix {
        "m" => (1.0, LengthUnit::Metre),
        "mm" => (1e-3, LengthUnit::Metre),
        "cm" => (1e-2, LengthUnit::Metre),
        "km" => (1e3, LengthUnit::Metre),
        "ft" => (FOOT, LengthUnit::Foot),
        "in" => (INCH, LengthUnit::Foot),
        _ => return None,
    })
}

/// Split `20m`, `20 m`, `-1.5mm` into the number text and the unit text
/// (the trailing letters); refuses a typographic minus and an option name.
///
/// # Errors
/// [`LengthParseError::UnicodeMinus`], [`LengthParseError::OptionNotValue`].
pub fn split_unit(s: &str) -> Result<(&str, &str), LengthParseError> {
    let t = s.trim();
    if t.contains('\u{2212}') {
        return Err(LengthParseError::UnicodeMinus(s.to_string()));
    }
    if t.starts_with("--") {
        return Err(LengthParseError::OptionNotValue(s.to_string()));
    }
    let split = t.trim_end_matches(|c: char| c.is_ascii_alphabetic()).len();
    let (num, unit) = t.split_at(split);
    Ok((num.trim(), unit))
}

impl FromStr for Length {
    type Err = LengthParseError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let (num, unit) = split_unit(s)?;
        if unit.is_empty() {
            return Err(LengthParseError::NoUnit(s.to_string()));
        }
        let Some((scale, unit)) = length_unit_of(unit) else {
            return Err(LengthParseError::UnknownUnit(s.to_string()));
        };
        let v: f64 = num
            .parse()
            .map_err(|_| LengthParseError::NotANumber(s.to_string()))?;
        if !(v.is_finite() && v > 0.0) {
            return Err(LengthParseError::NotPositive(s.to_string()));
        }
        Ok(Length {
            metres: v * scale,

            unit,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_chords_with_two_arms() {
        let c: ChordLength = "20m".parse().unwrap();
        assert_eq!((c.metres(), c.behind()), (20.0, None));
        let c: ChordLength = " 4m+6.5m ".parse().unwrap();
        assert_eq!((c.metres(), c.behind()), (10.5, Some(4.0)));
        let c: ChordLength = "13ft+21ft".parse().unwrap();
        assert!((c.metres() - 34.0 * FOOT).abs() < 1e-12);
        assert!((c.behind().unwrap() - 13.0 * FOOT).abs() < 1e-12);
        assert_eq!(c.unit(), LengthUnit::Foot);
        // Equal arms are the symmetric chord, the same as one length.
        let c: ChordLength = "10m+10m".parse().unwrap();
        assert_eq!(c, "20m".parse().unwrap());
        for bad in [
            "4m+0m", "4m+", "4m+-1m", "4+6m", "0.4m+10m", "4m+6m+1m", "-4m+6m",
        ] {
            assert!(bad.parse::<ChordLength>().is_err(), "{bad}");
        }
        assert!(matches!(
            "-20m".parse::<ChordLength>(),
            Err(LengthParseError::NotPositive(_))
        ));
    }

    #[test]
    fn parses_lengths_with_units() {
        let l: Length = "20m".parse().unwrap();
        assert_eq!(l.metres(), 20.0);
        let l: Length = " 20 m ".parse().unwrap();
        assert_eq!(l.metres(), 20.0);
        let l: Length = "62ft".parse().unwrap();
        assert!((l.metres() - 62.0 * 0.3048).abs() < 1e-12);
        assert!(matches!(
            "-20m".parse::<Length>(),
            Err(LengthParseError::NotPositive(_))
        ));
        assert!(matches!(
            "0m".parse::<Length>(),
            Err(LengthParseError::NotPositive(_))
        ));
        assert!(matches!(
            "20yd".parse::<Length>(),
            Err(LengthParseError::UnknownUnit(_))
        ));
        let l: Length = "20000mm".parse().unwrap();
        assert!((l.metres() - 20.0).abs() < 1e-12);
        assert_eq!(l.unit(), LengthUnit::Metre);
        let l: Length = "744in".parse().unwrap();
        assert_eq!(l.unit(), LengthUnit::Foot);
        assert!(matches!(
            "\u{2212}20m".parse::<Length>(),
            Err(LengthParseError::UnicodeMinus(_))
        ));
        assert!(matches!(
            "--rail".parse::<Length>(),
            Err(LengthParseError::OptionNotValue(_))
        ));
        assert!(matches!(
            "1.2.3m".parse::<Length>(),
            Err(LengthParseError::NotANumber(_))
        ));
    }
}
