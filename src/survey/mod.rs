//! The survey: versine readings along one rail, and the set-up they were taken with.
//!
//! # Sign convention at the edge
//! In a survey file a versine is **positive when the rail bows away from the
//! wire**, i.e. on the outer rail of a curve (common practice). Inside the
//! library we use the *chord-side* versine of `METHODS` §0: positive when the
//! wire lies to the **left** of the rail (facing increasing chainage), which is
//! positive for a left-hand curve. [`Rail::chord_side`] is the one place that
//! converts between the two.

use crate::units::{LengthUnit, VersineUnit};

pub mod read;

/// A rail of the track, named facing increasing chainage.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
pub enum Rail {
    /// The left rail facing increasing chainage.
    Left,
    /// The right rail facing increasing chainage.
    Right,
}

impl Rail {
    /// Signed lateral offset of this rail's running edge from the track
    /// centreline, positive to the left, for a track gauge `gauge` (metres).
    pub fn offset_left(self, gauge: f64) -> f64 {
        match self {
            Rail::Left => 0.5 * gauge,
            Rail::Right => -0.5 * gauge,
        }
    }

    /// Convert a field versine (positive when the rail bows away from the wire)
    /// to the chord-side versine used inside the library (positive for a
    /// left-hand curve). The conversion is its own inverse.
    ///
    /// # Examples
    /// ```
    /// use chordline::survey::Rail;
    /// // 100 mm on the left rail: the left rail is the outer rail, a right-hand curve.
    /// assert_eq!(Rail::Left.chord_side(0.1), -0.1);
    /// assert_eq!(Rail::Right.chord_side(0.1), 0.1);
    /// ```
    pub fn chord_side(self, field_versine: f64) -> f64 {
        match self {
            Rail::Left => -field_versine,
            Rail::Right => field_versine,
        }
    }

    /// `"left"` or `"right"`.
    pub fn name(self) -> &'static str {
        match self {
            Rail::Left => "left",
            Rail::Right => "right",
        }
    }
}

/// How the stations (measuring marks) were set out along the rail.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
pub enum Marking {
    /// Marks taped at equal distances **along the rail** (arc length), with the
    /// wire stretched between the marks half a chord either side: the usual
    /// hand survey. The wire is then slightly shorter than the nominal chord.
    Taped,
    /// A wire (or a trolley or vehicle beam) of fixed straight length equal to
    /// the nominal chord, read at its middle.
    Wire,
}

/// One versine reading as it came from the file, converted to SI units.
#[derive(Debug, Clone, PartialEq)]
pub struct Reading {
    /// Chainage of the measuring point along the measured rail, metres.
    pub chainage: f64,
    /// Field versine in metres (positive when the rail bows away from the
    /// wire); `None` when the reading is missing (a gap, not a zero).
    pub versine: Option<f64>,
    /// The rail the reading was taken on.
    pub rail: Rail,
    /// Free text from the `note` column, if any (a boxed `str`: 8 bytes less per
    /// reading than a `String`, and most readings have none).
    pub note: Option<Box<str>>,
    /// 1-based line in the source file (0 when the survey was not read from a file).
    /// A missing station the reader put into a gap of the chainages (lines
    /// deleted from the file) carries the line of the reading after the gap.
    pub line: usize,
}

impl Reading {
    /// Chord-side versine (positive for a left-hand curve), metres.
    pub fn chord_side(&self) -> Option<f64> {
        self.versine.map(|v| self.rail.chord_side(v))
    }
}

/// A versine survey: readings in increasing chainage plus what the file said
/// about its units.
#[derive(Debug, Clone, PartialEq)]
pub struct Survey {
    /// Where the survey came from (a file path as given, or a description).
    pub source: String,
    /// Unit the chainages were written in (outputs follow it).
    pub chainage_unit: LengthUnit,
    /// Unit the versines were written in.
    pub versine_unit: VersineUnit,
    /// The readings, chainage strictly increasing.
    pub readings: Vec<Reading>,
    /// Whether the file had a `side` column (otherwise the rail came from the set-up).
    pub has_side_column: bool,
}

/// The two arms of a chord: from the rear end to the measuring point
/// (`behind`, towards decreasing chainage) and from the measuring point to
/// the front end (`ahead`), metres. A hand survey's chord is read at its
/// middle (`behind == ahead`); recording vehicles and some trolleys read at
/// another point of their beam.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Arms {
    /// Rear end to measuring point, metres (towards decreasing chainage).
    pub behind: f64,
    /// Measuring point to front end, metres (towards increasing chainage).
    pub ahead: f64,
}

impl Arms {
    /// The arms of a chord read at its middle: `half` either side.
    pub fn symmetric(half: f64) -> Self {
        Arms {
            behind: half,
            ahead: half,
        }
    }

    /// Whether the measuring point is the middle of the chord (bit-equal arms).
    pub fn is_symmetric(&self) -> bool {
        self.behind == self.ahead
    }

    /// The whole chord, `behind + ahead`, metres.
    pub fn chord(&self) -> f64 {
        self.behind + self.ahead
    }

    /// `behind · ahead` (m²): a circle of curvature `k` gives the small-angle
    /// versine `k · behind · ahead / 2` (the half chord squared when symmetric).
    pub fn product(&self) -> f64 {
        self.behind * self.ahead
    }

    /// The longest spacing (metres) that divides both arms, as a whole
    /// number of thousandths of `unit` (`None` when an arm is not a whole
    /// number of them, or too long to count in them): readings at this
    /// spacing, or a whole fraction of it, fall on both ends of the chord.
    pub fn common_spacing(&self, unit: LengthUnit) -> Option<f64> {
        let milli = 1e-3 * unit.metres();
        let count = |x: f64| {
            let t = x / milli;
            let n = t.round();
            ((t - n).abs() < 1e-6 && (1.0..1e12).contains(&n)).then_some(n as u64)
        };
        let (mut p, mut q) = (count(self.behind)?, count(self.ahead)?);
        while q != 0 {
            (p, q) = (q, p % q);
        }
        Some(p as f64 * milli)
    }

    /// The chord of the symmetric chord that reads the same versine on a
    /// circle (small-angle form): `2 √(behind · ahead)`, metres; the chord
    /// itself when symmetric.
    pub fn equivalent_chord(&self) -> f64 {
        if self.is_symmetric() {
            self.chord()
        } else {
            2.0 * self.product().sqrt()
        }
    }
}

/// What the survey file does not say: chord, gauge, station marking, noise.
#[derive(Debug, Clone, PartialEq)]
pub struct Setup {
    /// Nominal chord length, metres (the distance between the wire's ends).
    pub chord: f64,
    /// Arm behind the measuring point (towards decreasing chainage), metres,
    /// for a chord not read at its middle; `None` (the usual hand survey)
    /// for a chord read at its middle. The arm ahead is `chord − behind`.
    pub behind: Option<f64>,
    /// Track gauge between running edges, metres (standard gauge 1.435 m).
    pub gauge: f64,
    /// How the stations were marked.
    pub marking: Marking,
    /// The rail measured when the file has no `side` column.
    pub rail: Rail,
    /// Standard deviation of one reading, metres, if the user knows it.
    pub reading_sd: Option<f64>,
}

impl Setup {
    /// Standard gauge, 1435 mm between running edges (UIC / EN 13848-1 nominal, common practice).
    pub const STANDARD_GAUGE: f64 = 1.435;

    /// The narrowest and widest track gauges accepted from a user (metres):
    /// 381 mm (15 in, the narrowest minimum-gauge railways) to 1676 mm (the
    /// broad gauge of India, the widest in wide use), with room for
    /// tolerances. From memory; common practice, not a standard.
    pub const GAUGE_RANGE: (f64, f64) = (0.35, 1.75);

    /// A set-up with standard gauge, taped marks and no stated noise.
    pub fn new(chord: f64, rail: Rail) -> Self {
        Setup {
            chord,
            behind: None,
            gauge: Self::STANDARD_GAUGE,
            marking: Marking::Taped,
            rail,
            reading_sd: None,
        }
    }

    /// A set-up for a chord read `behind` metres from its rear end and
    /// `ahead` metres from its front end (standard gauge, taped marks).
    pub fn with_arms(behind: f64, ahead: f64, rail: Rail) -> Self {
        let mut s = Setup::new(behind + ahead, rail);
        s.behind = (behind != ahead).then_some(behind);
        s
    }

    /// Half the chord: the classic station spacing.
    pub fn half_chord(&self) -> f64 {
        0.5 * self.chord
    }

    /// The chord's two arms (both the half chord when it is read at its middle).
    pub fn arms(&self) -> Arms {
        arms_of(self.chord, self.behind)
    }

    /// Whether the chord is read at its middle.
    pub fn is_symmetric(&self) -> bool {
        self.arms().is_symmetric()
    }
}

/// The arms of a chord of length `chord` read `behind` from its rear end
/// (`None`: at its middle).
pub fn arms_of(chord: f64, behind: Option<f64>) -> Arms {
    match behind {
        Some(b) if b != 0.5 * chord => Arms {
            behind: b,
            ahead: chord - b,
        },
        _ => Arms::symmetric(0.5 * chord),
    }
}
