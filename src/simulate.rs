//! Exact surveys of a known design: the test bed for everything else, and a
//! way to plan a survey.
//!
//! A design (a list of straights, clothoid transitions and arcs) is placed in
//! the plan, the measured rail is laid half a gauge from its centreline, marks
//! are set out along that rail, and each versine is **measured geometrically**:
//! the perpendicular distance from the mark to the straight wire between the
//! marks at either end of the chord. Nothing here inverts or reuses the
//! integrator, so a round trip through [`crate::integrate`] is a real check.
//!
//! Measuring conventions (the same ones `../shared/tools/reference-survey`
//! states in code, which the tests compare against):
//! - [`Marking::Taped`]: marks at equal arc length along the rail; the wire
//!   runs between the marks half a chord (in arc length) either side.
//! - [`Marking::Wire`]: a rigid wire (or beam) of the nominal chord length
//!   whose ends rest on the rail and whose middle sits abreast of the mark; the
//!   versine is read perpendicular to the wire at its middle.
//! - The field versine is positive when the rail bows away from the wire.
//!
//! Optional imperfections, all seeded and reproducible: a lateral irregularity
//! of the track itself (a sum of sinusoids with wavelengths of 3–70 m, scaled
//! to a stated RMS), a constant reading bias, random reading noise, and
//! rounding of the readings to a resolution.

use crate::geometry::{Alignment, Element, Pose};
use crate::survey::{Marking, Rail, Reading, Survey};
use crate::units::{LengthUnit, VersineUnit};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use std::io::{self, Write};

mod design;
mod error;
pub use design::{Design, DesignError};
pub use error::{SimLength, SimulateError};

/// How the simulated survey is taken.
#[derive(Debug, Clone, PartialEq)]
pub struct SimSetup {
    /// Chord length, metres.
    pub chord: f64,
    /// Arm behind the measuring point (towards decreasing chainage), metres,
    /// for a chord not read at its middle (`None`: read at its middle); the
    /// arm ahead is `chord − behind`. See [`crate::survey::Setup::behind`].
    pub behind: Option<f64>,
    /// Distance between marks along the rail, metres (the half chord for a
    /// classic survey; it must divide the half chord).
    pub spacing: f64,
    /// The rail measured.
    pub rail: Rail,
    /// Track gauge between running edges, metres.
    pub gauge: f64,
    /// How the marks are set out and the wire is held.
    pub marking: Marking,
    /// Standard deviation of the random reading noise, metres.
    pub noise_sd: f64,
    /// Constant reading bias (handle or wire offset), metres.
    pub bias: f64,
    /// Readings are rounded to this step, metres (0: no rounding).
    pub resolution: f64,
    /// RMS of the lateral irregularity of the track, metres (0: perfect track).
    pub irregularity_rms: f64,
    /// Seed of the random numbers (noise and irregularity).
    pub seed: u64,
    /// Chainage of the first mark, metres.
    pub start_chainage: f64,
    /// Unit of chainages in the written survey.
    pub chainage_unit: LengthUnit,
    /// Unit of versines in the written survey.
    pub versine_unit: VersineUnit,
}

impl SimSetup {
    /// A classic metric hand survey: `chord` metres read every half chord on
    /// `rail`, taped marks, standard gauge, no noise, no rounding.
    pub fn classic(chord: f64, rail: Rail) -> Self {
        SimSetup {
            chord,
            behind: None,
            spacing: 0.5 * chord,
            rail,
            gauge: crate::survey::Setup::STANDARD_GAUGE,
            marking: Marking::Taped,
            noise_sd: 0.0,
            bias: 0.0,
            resolution: 0.0,
            irregularity_rms: 0.0,
            seed: 1,
            start_chainage: 0.0,
            chainage_unit: LengthUnit::Metre,
            versine_unit: VersineUnit::Millimetre,
        }
    }

    /// A survey with a chord of arms `behind` + `ahead` metres read every
    /// `spacing` metres (which must divide both arms), otherwise as [`SimSetup::classic`].
    pub fn with_arms(behind: f64, ahead: f64, spacing: f64, rail: Rail) -> Self {
        let mut s = SimSetup::classic(behind + ahead, rail);
        s.behind = (behind != ahead).then_some(behind);
        s.spacing = spacing;
        s
    }

    /// The chord's two arms.
    pub fn arms(&self) -> crate::survey::Arms {
        crate::survey::arms_of(self.chord, self.behind)
    }

    /// Number of mark spacings in the half chord, if the spacing divides it.
    pub fn steps_per_half_chord(&self) -> Option<usize> {
        let m = 0.5 * self.chord / self.spacing;
        let r = m.round();
        (r >= 1.0 && (m - r).abs() < 1e-9).then_some(r as usize)
    }

    /// Number of mark spacings in the arm behind and in the arm ahead, if
    /// the spacing divides both (the marks must fall on the chord's ends).
    pub fn steps_per_arm(&self) -> Option<(usize, usize)> {
        let arms = self.arms();
        if arms.is_symmetric() {
            return self.steps_per_half_chord().map(|m| (m, m));
        }
        let whole = |len: f64| {
            let m = len / self.spacing;
            let r = m.round();
            (r >= 1.0 && (m - r).abs() < 1e-9 * r.max(1.0)).then_some(r as usize)
        };
        Some((whole(arms.behind)?, whole(arms.ahead)?))
    }
}

/// The default mark spacing for a chord: the half chord when it is read at
/// its middle, else the longest spacing (to a thousandth of `unit`) that
/// divides both arms, so that marks fall on both ends of the chord.
pub fn default_spacing(arms: crate::survey::Arms, unit: LengthUnit) -> f64 {
    if arms.is_symmetric() {
        return 0.5 * arms.chord();
    }
    arms.common_spacing(unit).unwrap_or(0.5 * arms.chord())
}

/// The exact state of the track at one mark.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Truth {
    /// Survey chainage of the mark (along the rail), metres.
    pub chainage: f64,
    /// Distance along the design centreline abreast of the mark, metres.
    pub centre_s: f64,
    /// Design centreline pose abreast of the mark.
    pub centre: Pose,
    /// Design curvature of the centreline, 1/m.
    pub centre_curvature: f64,
    /// Running edge of the measured rail at the mark, as built (with
    /// irregularity), easting, metres.
    pub rail_x: f64,
    /// Same, northing, metres.
    pub rail_y: f64,
    /// Lateral irregularity at the mark, metres, positive to the left.
    pub irregularity: f64,
    /// The exact field versine before noise, bias and rounding, metres
    /// (`None` where the chord runs off the design).
    pub versine: Option<f64>,
}

/// A simulated survey and the truth behind it.
#[derive(Debug, Clone, PartialEq)]
pub struct Simulated {
    /// The readings as a surveyor would write them down.
    pub survey: Survey,
    /// The exact geometry at every mark.
    pub truth: Vec<Truth>,
}

impl Simulated {
    /// Only the marks that have a reading (the first and last half chord,
    /// where the wire would run off the design, are dropped), with their
    /// truth: station 0 of the returned survey is the first read mark.
    pub fn read_marks(&self) -> (Survey, Vec<Truth>) {
        let keep: Vec<usize> = (0..self.truth.len())
            .filter(|&i| self.truth[i].versine.is_some())
            .collect();
        let mut survey = self.survey.clone();
        survey.readings = keep
            .iter()
            .map(|&i| self.survey.readings[i].clone())
            .collect();
        (survey, keep.iter().map(|&i| self.truth[i]).collect())
    }
}

impl SimSetup {
    /// The set-up a surveyor would give for this simulated survey (chord,
    /// rail, gauge, marking), with the reading standard deviation `reading_sd`
    /// stated or not.
    pub fn survey_setup(&self, reading_sd: Option<f64>) -> crate::survey::Setup {
        let mut s = crate::survey::Setup::new(self.chord, self.rail);
        s.behind = self.behind;
        s.gauge = self.gauge;
        s.marking = self.marking;
        s.reading_sd = reading_sd;
        s
    }
}

/// Simulate a survey of `design` (the track centreline) taken with `setup`.
///
/// Marks run from the start of the design to its end along the measured
/// rail; marks within half a chord of either end have no reading, as in the
/// field where the wire would run off the surveyed length.
///
/// # Examples
/// ```
/// use chordline::geometry::{Alignment, Element, Pose};
/// use chordline::simulate::{simulate, SimSetup};
/// use chordline::survey::Rail;
/// // A right-hand 500 m curve measured on the left (outer) rail with a 20 m chord.
/// let design = Alignment::new(Pose::default(), 0.0, vec![Element::arc(300.0, -500.0)]);
/// let sim = simulate(&design, &SimSetup::classic(20.0, Rail::Left)).unwrap();
/// let v = sim.survey.readings[10].versine.unwrap();
/// // Outer rail radius 500.7175 m; taped marks: v = R(1 − cos(a/R)) (METHODS §1).
/// let r = 500.7175_f64;
/// assert!((v - r * (1.0 - (10.0 / r).cos())).abs() < 1e-9);
/// ```
///
/// # Errors
/// [`SimulateError`] when the set-up is inconsistent or the design too short.
pub fn simulate(design: &Alignment, setup: &SimSetup) -> Result<Simulated, SimulateError> {
    check_setup(setup)?;
    check_limits(design, setup)?;
    let long = |m: f64| SimLength::long(m, setup.chainage_unit);
    let arms = setup.arms();
    let (m1, m2) = steps_per_arm(setup)?;
    let d = setup.rail.offset_left(setup.gauge);
    let rail_len = design.offset_length(design.length(), d);
    if rail_len < setup.chord {
        return Err(SimulateError::TooShort {
            length: long(rail_len),
            chord: long(setup.chord),
        });
    }
    let n = (rail_len / setup.spacing + 1e-9).floor() as usize + 1;
    let irr = Irregularity::new(setup.irregularity_rms, setup.seed);

    // Rail point at rail arc length r (as built).
    let rail_point = |r: f64| -> (f64, f64, f64, Pose) {
        let s = design.centreline_distance(r, d);
        let p = design.pose_at(s);
        let y = irr.at(r);
        let (x, yy) = p.offset_left(d + y);
        (x, yy, s, p)
    };

    let mut truth = Vec::with_capacity(n);
    // Wire ends relative to the mark, carried from mark to mark as a start.
    let mut wire_hint = (-arms.behind, arms.ahead);
    let pts: Vec<(f64, f64, f64, Pose)> = (0..n)
        .map(|j| rail_point(j as f64 * setup.spacing))
        .collect();
    for (j, &(x, y, s, p)) in pts.iter().enumerate() {
        let r = j as f64 * setup.spacing;
        let versine = match setup.marking {
            Marking::Taped => (j >= m1 && j + m2 < n).then(|| {
                let (ax, ay, ..) = pts[j - m1];
                let (bx, by, ..) = pts[j + m2];
                field_versine((ax, ay), (x, y), (bx, by), setup.rail)
            }),
            Marking::Wire => {
                if r - arms.behind < -1e-9 || r + arms.ahead > rail_len + 1e-9 {
                    None
                } else {
                    wire_versine(&rail_point, r, (x, y), setup, rail_len, &mut wire_hint)?
                }
            }
        };
        truth.push(Truth {
            chainage: setup.start_chainage + r,
            centre_s: s,
            centre: p,
            centre_curvature: design.curvature_at(s),
            rail_x: x,
            rail_y: y,
            irregularity: irr.at(r),
            versine,
        });
    }

    // Readings: bias, noise, rounding.
    let mut rng = ChaCha8Rng::seed_from_u64(setup.seed);
    let normal =
        Normal::new(0.0, setup.noise_sd.max(0.0)).map_err(|_| SimulateError::BadImperfection {
            what: "noise",
            value: SimLength::small(setup.noise_sd, setup.chainage_unit),
        })?;
    let readings = truth
        .iter()
        .enumerate()
        .map(|(j, t)| {
            let versine = t.versine.map(|v| {
                let mut r = v + setup.bias;
                if setup.noise_sd > 0.0 {
                    r += normal.sample(&mut rng);
                }
                round_reading(r, setup.resolution, setup.versine_unit)
            });
            Reading {
                chainage: t.chainage,
                versine,
                rail: setup.rail,
                note: None,
                line: j + 2,
            }
        })
        .collect();
    Ok(Simulated {
        survey: Survey {
            source: "simulated survey".to_string(),
            chainage_unit: setup.chainage_unit,
            versine_unit: setup.versine_unit,
            readings,
            has_side_column: false,
        },
        truth,
    })
}

/// Marks per arm behind and ahead, or why the spacing does not fit the chord.
fn steps_per_arm(setup: &SimSetup) -> Result<(usize, usize), SimulateError> {
    let long = |m: f64| SimLength::long(m, setup.chainage_unit);
    let arms = setup.arms();
    setup.steps_per_arm().ok_or_else(|| {
        let half = 0.5 * setup.chord;
        if arms.is_symmetric() {
            SimulateError::SpacingDoesNotFit {
                spacing: long(setup.spacing),
                half: long(half),
                quarter: long(0.5 * half),
                tenth: long(0.1 * half),
            }
        } else {
            SimulateError::SpacingDoesNotFitArms {
                spacing: long(setup.spacing),
                behind: long(arms.behind),
                ahead: long(arms.ahead),
                works: match arms
                    .common_spacing(setup.chainage_unit)
                    .filter(|&w| w >= 0.1 - 1e-9)
                {
                    Some(w) => format!("use a spacing of {} or a whole fraction of it", long(w)),
                    None => "no spacing of 0.1 m or more divides both; check the arms".to_string(),
                },
            }
        }
    })
}

fn check_setup(s: &SimSetup) -> Result<(), SimulateError> {
    let u = s.chainage_unit;
    for (what, value, small) in [
        ("the chord", s.chord, false),
        ("the mark spacing", s.spacing, false),
        ("the gauge", s.gauge, true),
    ] {
        if !(value.is_finite() && value > 0.0) {
            let value = SimLength {
                metres: value,
                unit: u,
                small,
            };
            return Err(SimulateError::NotPositive { what, value });
        }
    }
    if let Some(b) = s.behind
        && !(b.is_finite() && b > 0.0 && b < s.chord)
    {
        return Err(SimulateError::NotPositive {
            what: "the arm ahead of or behind the measuring point",
            value: SimLength::long(
                if b.is_finite() && b > 0.0 {
                    s.chord - b
                } else {
                    b
                },
                u,
            ),
        });
    }
    let widest = crate::survey::Setup::GAUGE_RANGE.1;
    if s.gauge > widest {
        return Err(SimulateError::GaugeTooWide {
            value: SimLength::small(s.gauge, u),
            widest: SimLength::small(widest, u),
        });
    }
    for (what, value) in [
        ("the reading noise", s.noise_sd),
        ("the resolution", s.resolution),
        ("the irregularity", s.irregularity_rms),
    ] {
        if !(value.is_finite() && value >= 0.0) {
            let value = SimLength::small(value, u);
            return Err(SimulateError::BadImperfection { what, value });
        }
    }
    if !s.bias.is_finite() {
        return Err(SimulateError::BadImperfection {
            what: "the bias",
            value: SimLength::small(s.bias, u),
        });
    }
    Ok(())
}

/// The most marks one simulation writes (ten times the million readings of a
/// 250 km recording-vehicle route, about a gigabyte of truth in memory).
pub const MAX_MARKS: usize = 10_000_000;

/// The largest start chainage: beyond it, doubles lose the millimetres of
/// a chainage (a double has 15–16 significant digits).
pub const MAX_START_CHAINAGE: f64 = 1e9;

/// Refuse designs the simulation cannot measure honestly: too many marks,
/// curves too sharp for the chord on the offset rail, chainages too large to
/// keep marks apart.
fn check_limits(design: &Alignment, s: &SimSetup) -> Result<(), SimulateError> {
    let long = |m: f64| SimLength::long(m, s.chainage_unit);
    let length = design.length();
    let marks = length / s.spacing + 1.0;
    if marks.is_nan() || marks > MAX_MARKS as f64 {
        return Err(SimulateError::TooManyMarks {
            length: long(length),
            spacing: long(s.spacing),
            marks: marks.round(),
            max: MAX_MARKS,
        });
    }
    let offset = 0.5 * s.gauge;
    // The chord's half must fit inside the rail's circle with room to spare
    // (a wire of length c on a circle of radius R needs c < 2R).
    let min = 0.5 * s.chord + offset;
    for (i, e) in design.elements().iter().enumerate() {
        let k = e.k_start.abs().max(e.k_end.abs());
        if k > 0.0 && 1.0 / k < min {
            return Err(SimulateError::TooSharp {
                element: i + 1,
                radius: long(1.0 / k),
                chord: long(s.chord),
                offset: long(offset),
                min: long(min),
            });
        }
    }
    let first = design.start_chainage().abs().max(s.start_chainage.abs());
    let far = first + length;
    // Keep a millionth of the spacing resolvable at the far end.
    let ulp = far * f64::EPSILON;
    if far.is_nan() || far > MAX_START_CHAINAGE || ulp > 1e-6 * s.spacing {
        return Err(SimulateError::HugeChainage {
            key: match s.chainage_unit {
                LengthUnit::Metre => "start_chainage_m",
                LengthUnit::Foot => "start_chainage_ft",
            },
            value: s.chainage_unit.from_m(s.start_chainage),
            spacing: long(s.spacing),
            max: long(MAX_START_CHAINAGE),
        });
    }
    Ok(())
}

/// Round a reading (metres) to `resolution` metres, in the file's unit so that
/// e.g. 1/8 in steps stay exact. Rounds half away from zero.
fn round_reading(v: f64, resolution: f64, _unit: VersineUnit) -> f64 {
    if resolution > 0.0 {
        (v / resolution).round() * resolution
    } else {
        v
    }
}

/// Perpendicular distance of `p` from the wire `a`→`b`, as a field versine
/// (positive when the rail bows away from the wire) for a reading on `rail`.
pub fn field_versine(a: (f64, f64), p: (f64, f64), b: (f64, f64), rail: Rail) -> f64 {
    let (wx, wy) = (b.0 - a.0, b.1 - a.1);
    // Positive when p lies to the left of the wire a→b.
    let left = (wx * (p.1 - a.1) - wy * (p.0 - a.0)) / wx.hypot(wy);
    // On the left rail, bowing away from the wire is bowing to the left.
    match rail {
        Rail::Left => left,
        Rail::Right => -left,
    }
}

/// Versine read by a rigid wire of the chord length whose measuring point
/// (its middle, or `behind` from its rear end for an asymmetric chord) is
/// abreast of the mark at rail arc length `r`: both ends on the rail, the
/// perpendicular to the wire at the measuring point through the mark, the
/// versine read along it. `None` when an end of the wire would rest beyond
/// the surveyed length.
fn wire_versine(
    rail_point: &dyn Fn(f64) -> (f64, f64, f64, Pose),
    r: f64,
    p: (f64, f64),
    setup: &SimSetup,
    rail_len: f64,
    hint: &mut (f64, f64),
) -> Result<Option<f64>, SimulateError> {
    let c = setup.chord;
    let fail = || SimulateError::WireDoesNotFit {
        chord: SimLength::long(c, setup.chainage_unit),
        chainage: SimLength::long(setup.start_chainage + r, setup.chainage_unit),
    };
    // Unknowns: arc lengths of the two ends. Equations: |AB| = c, and the
    // perpendicular to AB through its measuring point passes through p.
    let arms = setup.arms();
    let frac = arms.behind / c;
    let f = |ra: f64, rb: f64| {
        let (ax, ay, ..) = rail_point(ra);
        let (bx, by, ..) = rail_point(rb);
        let (mx, my) = if arms.is_symmetric() {
            (0.5 * (ax + bx), 0.5 * (ay + by))
        } else {
            (ax + frac * (bx - ax), ay + frac * (by - ay))
        };
        let len = (bx - ax).hypot(by - ay);
        let along = ((p.0 - mx) * (bx - ax) + (p.1 - my) * (by - ay)) / len;
        (len - c, along, (ax, ay), (bx, by))
    };
    let (mut ra, mut rb) = (r + hint.0, r + hint.1);
    for _ in 0..60 {
        let (f1, f2, ..) = f(ra, rb);
        if f1.abs() < 1e-13 && f2.abs() < 1e-13 {
            break;
        }
        let h = 1e-6;
        let (g1a, g2a, ..) = f(ra + h, rb);
        let (g1b, g2b, ..) = f(ra, rb + h);
        let (j11, j21) = ((g1a - f1) / h, (g2a - f2) / h);
        let (j12, j22) = ((g1b - f1) / h, (g2b - f2) / h);
        let det = j11 * j22 - j12 * j21;
        if !det.is_finite() || det.abs() < 1e-300 {
            return Err(fail());
        }
        let (da, db) = ((f1 * j22 - f2 * j12) / det, (j11 * f2 - j21 * f1) / det);
        ra -= da;
        rb -= db;
        if da.abs() + db.abs() < 1e-11 {
            break;
        }
        if !(ra.is_finite() && rb.is_finite()) || rb <= ra {
            return Err(fail());
        }
    }
    let (f1, f2, a, b) = f(ra, rb);
    if f1.abs() > 1e-9 || f2.abs() > 1e-9 {
        return Err(fail());
    }
    *hint = (ra - r, rb - r);
    if ra < -1e-9 || rb > rail_len + 1e-9 {
        return Ok(None);
    }
    Ok(Some(field_versine(a, p, b, setup.rail)))
}

/// Lateral irregularity of the track: a sum of sinusoids with wavelengths
/// log-uniform in 3–70 m and amplitudes growing with wavelength, scaled to the
/// stated RMS over a long stretch. The band follows the EN 13848-1 D1/D2
/// alignment wavebands (from memory).
#[derive(Debug, Clone)]
struct Irregularity {
    waves: Vec<(f64, f64, f64)>, // (wavenumber rad/m, amplitude m, phase)
}

impl Irregularity {
    fn new(rms: f64, seed: u64) -> Self {
        if rms <= 0.0 {
            return Irregularity { waves: Vec::new() };
        }
        let mut rng = ChaCha8Rng::seed_from_u64(seed ^ 0x5eed_1e55_0ff5_e7ab);
        let mut waves: Vec<(f64, f64, f64)> = (0..200)
            .map(|_| {
                let lam = (rng.random_range(3f64.ln()..70f64.ln())).exp();
                // Rayleigh-distributed amplitude proportional to wavelength.
                let u: f64 = rng.random_range(f64::EPSILON..1.0);
                let amp = lam * (-2.0 * u.ln()).sqrt();
                let ph = rng.random_range(0.0..std::f64::consts::TAU);
                (std::f64::consts::TAU / lam, amp, ph)
            })
            .collect();
        // RMS of a sum of sinusoids with random phases: sqrt(sum a²/2).
        let ms: f64 = waves.iter().map(|w| 0.5 * w.1 * w.1).sum();
        let scale = rms / ms.sqrt();
        for w in &mut waves {
            w.1 *= scale;
        }
        Irregularity { waves }
    }
    fn at(&self, r: f64) -> f64 {
        self.waves
            .iter()
            .map(|&(k, a, ph)| a * (k * r + ph).sin())
            .sum()
    }
}

/// A synthetic route of about `length` metres for benchmarks and studies:
/// straights of 150–800 m alternating with curves (clothoid, arc, clothoid)
/// of random hand, radius 350–5000 m, transitions 30–150 m and arcs 60–600 m,
/// from a seeded generator (the same `seed` always gives the same route).
pub fn synthetic_route(length: f64, seed: u64) -> Vec<Element> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut out = Vec::new();
    let mut total = 0.0;
    while total < length {
        let st = rng.random_range(150.0..800.0);
        out.push(Element::straight(st));
        total += st;
        if total >= length {
            break;
        }
        let r: f64 = (rng.random_range(350f64.ln()..5000f64.ln())).exp();
        let k = if rng.random_bool(0.5) {
            1.0 / r
        } else {
            -1.0 / r
        };
        let l1 = rng.random_range(30.0..150.0);
        let l2 = rng.random_range(30.0..150.0);
        let la = rng.random_range(60.0..600.0);
        out.push(Element::transition(l1, 0.0, k));
        out.push(Element::arc(la, 1.0 / k));
        out.push(Element::transition(l2, k, 0.0));
        total += l1 + la + l2;
    }
    out.push(Element::straight(200.0));
    out
}

/// The design as JSON text in the format [`Design::from_json`] reads
/// (elements only; the set-up is left to the command line).
pub fn design_json(elements: &[Element]) -> String {
    let items: Vec<String> = elements
        .iter()
        .map(|e| match e.kind {
            crate::geometry::ElementKind::Straight => {
                format!("{{\"kind\": \"straight\", \"length\": {}}}", e.length)
            }
            crate::geometry::ElementKind::Arc => format!(
                "{{\"kind\": \"arc\", \"length\": {}, \"radius\": {}}}",
                e.length,
                1.0 / e.k_start
            ),
            crate::geometry::ElementKind::Transition => {
                let r = |k: f64| {
                    if k == 0.0 {
                        "null".to_string()
                    } else {
                        format!("{}", 1.0 / k)
                    }
                };
                format!(
                    "{{\"kind\": \"transition\", \"length\": {}, \"r_start\": {}, \"r_end\": {}}}",
                    e.length,
                    r(e.k_start),
                    r(e.k_end)
                )
            }
        })
        .collect();
    format!("{{\"elements\": [\n  {}\n]}}\n", items.join(",\n  "))
}

/// Write a survey in the project's survey-file format (see the README):
/// a comment header, then `chainage_<unit>,versine_<unit>`; gaps are empty cells;
/// marks at either end without a full chord are left out.
/// Versines are written with enough decimals for `resolution` (metres; 0 means
/// exact, written to 0.0001 mm or 0.00001 in).
///
/// # Errors
/// Only I/O errors of `w`.
pub fn write_survey_csv(
    mut w: impl Write,
    survey: &Survey,
    resolution: f64,
    comment: &str,
) -> io::Result<()> {
    for line in comment.lines() {
        writeln!(w, "# {line}")?;
    }
    let cu = survey.chainage_unit;
    let vu = survey.versine_unit;
    writeln!(w, "chainage_{},versine_{}", cu.suffix(), vu.suffix())?;
    // Decimals: enough to show the resolution step exactly, else fine.
    let res_in_unit = vu.from_m(resolution);
    let vdec = if resolution > 0.0 {
        decimals_for(res_in_unit)
    } else {
        match vu {
            VersineUnit::Millimetre => 4,
            VersineUnit::Inch => 5,
            VersineUnit::Metre | VersineUnit::Foot => 7,
        }
    };
    // Marks at either end without a full chord are not written (a surveyor
    // starts at the first mark that has one); gaps inside are empty cells.
    let first = survey.readings.iter().position(|r| r.versine.is_some());
    let last = survey.readings.iter().rposition(|r| r.versine.is_some());
    let (Some(first), Some(last)) = (first, last) else {
        return Ok(());
    };
    for r in &survey.readings[first..=last] {
        let c = cu.from_m(r.chainage);
        match r.versine {
            Some(v) => writeln!(
                w,
                "{c:.3},{}",
                no_minus_zero(format!("{:.*}", vdec, vu.from_m(v)))
            )?,
            None => writeln!(w, "{c:.3},")?,
        }
    }
    Ok(())
}

/// A formatted number without the sign of a zero ("-0.0000" → "0.0000"):
/// a reading that rounds to zero is zero, whichever side it came from.
fn no_minus_zero(t: String) -> String {
    match t.strip_prefix('-') {
        Some(rest) if rest.bytes().all(|b| b == b'0' || b == b'.') => rest.to_string(),
        _ => t,
    }
}

/// Smallest number of decimals that writes multiples of `step` exactly
/// (up to 6; 0.125 → 3, 1 → 0, 0.5 → 1).
fn decimals_for(step: f64) -> usize {
    for d in 0..=6 {
        let scaled = step * 10f64.powi(d as i32);
        if (scaled - scaled.round()).abs() < 1e-9 * scaled.abs().max(1.0) {
            return d;
        }
    }
    6
}

#[cfg(test)]
mod tests;
