//! Versines → curvature, heading and plan coordinates, with standard deviations.
//!
//! Entry point: [`integrate`]. Two estimators, chosen from the station spacing:
//!
//! - **Classic spacing** (readings every half chord `a`, within 5 mm or 0.1 %):
//!   the exact polygon of the marks (METHODS §2). Each reading gives the
//!   deflection `δ = asin(v/a_{i−1}) + asin(v/a_i)` with the true chord sides
//!   `a_i = 2 sin(κ̄Δ/2)/κ̄` of the taped arc spacing `Δ`; a fixed-wire reading is
//!   first turned into the versine its circle gives on the polygon of marks
//!   (`κ = 2v/(a² + v²)`, `v_polygon = (1 − cos κΔ)/κ`). Exact on circles, and
//!   exact for any polygon of marks read with taped marks.
//! - **Denser or irregular readings**: a regularised least-squares estimate of
//!   the curvature (triangle-kernel forward model, second-difference penalty
//!   chosen by the discrepancy principle, banded Givens QR, O(n)), integrated
//!   exactly as clothoid pieces (see the `dense` module notes).
//!
//! The measured rail is half a gauge from the centreline: centreline points
//! are offset from the rail along the normal, and the centreline curvature is
//! `k_c = k_r/(1 − g k_r)` with `g` the signed offset from rail to centreline
//! (METHODS §1). The measured rail may change between readings at the classic
//! spacing; for denser readings a change of rail is refused with an error.
//!
//! Noise: the reading standard deviation is stated by the user or estimated
//! from the readings (robust third differences), never below the rounding
//! floor `resolution/√12`. It is propagated to the heading and lateral position
//! of every station; position observations (control points) enter a joint
//! least-squares adjustment with the turns (the `adjust` module notes).
//!
//! ## Reference
//! METHODS.md §§1–4 (shared project notes, with their sources).

use crate::diag::{Diagnostic, Location};
use crate::geometry::Pose;
use crate::survey::{Setup, Survey};
use crate::units::VersineUnit;

mod adjust;
mod banded;
mod dense;
mod noise;
mod phases;
mod polygon;

pub use crate::chord::{
    curvature_from_versine, degree_of_curve, radius_from_degree_of_curve, radius_from_versine,
    radius_from_versine_approx, versine_from_curvature, versine_from_radius,
};
pub use noise::{detect_resolution, estimate_noise, trimmed_sigma};

/// A known position of the track centreline at a chainage, in the local plan
/// frame (metres), used as an observation together with the versines.
#[derive(Debug, Clone, PartialEq)]
pub struct PositionObs {
    /// Name of the point (from the control file), for reports.
    pub id: String,
    /// Survey chainage (along the measured rail) of the point, metres.
    pub chainage: f64,
    /// Easting in the local frame, metres.
    pub x: f64,
    /// Northing in the local frame, metres.
    pub y: f64,
    /// Standard deviation of each coordinate, metres.
    pub sd: f64,
}

/// Residual of a position observation after the adjustment.
#[derive(Debug, Clone, PartialEq)]
pub struct PositionResidual {
    /// Name of the point.
    pub id: String,
    /// Observed minus adjusted, easting, metres.
    pub dx: f64,
    /// Observed minus adjusted, northing, metres.
    pub dy: f64,
    /// Normalised residual: |r| divided by its standard deviation (a value
    /// above about 3 flags a point that disagrees with the rest).
    pub normalised: f64,
}

/// Options of the integration.
#[derive(Debug, Clone, PartialEq)]
pub struct IntegrateOptions {
    /// Pose of the track centreline at the first station in the local frame
    /// (default: origin, heading north). Ignored for position when control
    /// observations fix the plan, but still used as the starting guess.
    pub start: Pose,
    /// Known centreline positions, used as observations.
    pub position_obs: Vec<PositionObs>,
}

impl Default for IntegrateOptions {
    fn default() -> Self {
        IntegrateOptions {
            start: Pose {
                x: 0.0,
                y: 0.0,
                heading: std::f64::consts::FRAC_PI_2,
            },
            position_obs: Vec::new(),
        }
    }
}

/// The reconstructed plan at one station (one row of `stations.csv`).
#[derive(Debug, Clone, PartialEq)]
pub struct Station {
    /// Survey chainage along the measured rail, metres.
    pub chainage: f64,
    /// Field versine as read (positive: rail bows away from the wire), metres; `None` in a gap.
    pub versine: Option<f64>,
    /// The rail the reading was taken on.
    pub rail: crate::survey::Rail,
    /// 1-based line of the reading in the survey file (0 when not read from a file).
    pub line: usize,
    /// Curvature of the track centreline, 1/m, positive curving left.
    pub curvature: f64,
    /// Heading of the centreline, radians CCW from east (local frame).
    pub heading: f64,
    /// Centreline easting abreast of the station, local frame, metres.
    pub x: f64,
    /// Centreline northing abreast of the station, local frame, metres.
    pub y: f64,
    /// Running edge of the measured rail, easting, metres.
    pub rail_x: f64,
    /// Running edge of the measured rail, northing, metres.
    pub rail_y: f64,
    /// Standard deviation of position (lateral, the dominant part), metres.
    pub position_sd: f64,
    /// Standard deviation of heading, radians.
    pub heading_sd: f64,
}

/// How the reading standard deviation was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoiseSource {
    /// Stated by the user.
    Stated,
    /// Estimated from the readings themselves.
    Estimated,
    /// The floor implied by the rounding of the readings (resolution/√12).
    RoundingFloor,
}

/// Result of the integration.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// One entry per survey reading (including gaps), in chainage order.
    pub stations: Vec<Station>,
    /// Standard deviation of one reading used for the propagation, metres.
    pub reading_sd: f64,
    /// Where `reading_sd` came from.
    pub noise_source: NoiseSource,
    /// Residuals of the position observations, in the order given.
    pub position_residuals: Vec<PositionResidual>,
    /// The set-up the plan was integrated with; what the later stages use.
    pub setup: Setup,
    /// Where the survey came from (a file path as given), for messages.
    pub source: String,
    /// Unit the versines were written in (messages of later stages follow it).
    pub versine_unit: VersineUnit,
    /// The rounding step of the readings (m), when the readings show one.
    pub resolution: Option<f64>,
}

/// Why the integration could not run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum IntegrateError {
    /// The survey has no readings at all.
    #[error("{file}: the survey has no readings; check the file has data rows")]
    NoReadings {
        /// Where the survey came from.
        file: String,
    },
    /// Every reading is missing.
    #[error("{file}: every versine is missing; at least one reading is needed")]
    NoValidReadings {
        /// Where the survey came from.
        file: String,
    },
    /// A set-up value is unusable.
    #[error("{what} must be {need} (got {value})")]
    BadSetup {
        /// Which value.
        what: &'static str,
        /// What it must be.
        need: &'static str,
        /// The value given.
        value: f64,
    },
    /// Chainages not strictly increasing, or not finite.
    #[error(
        "{file}:{line}: chainage {chainage} m does not increase from the previous reading ({previous} m); sort the readings and remove duplicates"
    )]
    ChainageOrder {
        /// Where the survey came from.
        file: String,
        /// 1-based line of the reading.
        line: usize,
        /// Its chainage, metres.
        chainage: f64,
        /// The previous chainage, metres.
        previous: f64,
    },
    /// A chainage or versine is NaN or infinite.
    #[error("{file}:{line}: the reading at chainage {chainage} m is not a finite number")]
    NotFinite {
        /// Where the survey came from.
        file: String,
        /// 1-based line of the reading.
        line: usize,
        /// Its chainage (may be NaN), metres.
        chainage: f64,
    },
    /// A versine too large for the chord: no circle gives it.
    #[error(
        "{file}:{line}: versine {versine_mm:.1} mm at chainage {chainage} m is too large for a {chord} m chord; check the versine unit (mm/in) and the chord length"
    )]
    VersineTooLarge {
        /// Where the survey came from.
        file: String,
        /// 1-based line.
        line: usize,
        /// Chainage, metres.
        chainage: f64,
        /// The versine, millimetres.
        versine_mm: f64,
        /// The chord, metres.
        chord: f64,
    },
    /// The measured rail changes in a survey read more densely than every half chord.
    #[error(
        "{file}:{line}: the measured rail changes at chainage {chainage} m; a change of rail is only supported for readings every half chord. Split the survey at this chainage and run the parts separately (use control points or a start pose to join them)"
    )]
    RailChangeInDenseSurvey {
        /// Where the survey came from.
        file: String,
        /// 1-based line.
        line: usize,
        /// Chainage of the first reading on the new rail, metres.
        chainage: f64,
    },
    /// A control point is unusable.
    #[error("control point '{id}': {why}")]
    BadControl {
        /// Its name.
        id: String,
        /// What is wrong and what to do.
        why: String,
    },
    /// The regularised curvature estimate could not be solved.
    #[error(
        "{file}: the curvature could not be estimated from the readings (the least-squares problem is singular); check that the chord length matches the survey"
    )]
    CurvatureFit {
        /// Where the survey came from.
        file: String,
    },
    /// The adjustment with the control points could not be solved.
    #[error(
        "the control points could not be combined with the versines (the adjustment is singular); check for duplicated points with zero standard deviation"
    )]
    Singular,
}

/// Lateral standard deviation after `n` stations at spacing `a` when the start
/// position and the first side are fixed and each reading has standard
/// deviation `sigma_v`: `σ_y(n) = 2σ_v √((n−1)n(2n−1)/6)` (METHODS §4).
///
/// # Examples
/// ```
/// // METHODS C4.1: σ_v = 1 mm, a = 10 m, n = 100 → 1146.04 mm.
/// let s = chordline::integrate::drift_lateral_sd(1e-3, 100);
/// assert!((s - 1.14604).abs() < 1e-5);
/// ```
pub fn drift_lateral_sd(sigma_v: f64, n: usize) -> f64 {
    let n = n as f64;
    2.0 * sigma_v * ((n - 1.0) * n * (2.0 * n - 1.0) / 6.0).sqrt()
}

/// Heading standard deviation after `m` deflections at spacing `a`:
/// `σ_φ = (2σ_v/a)√m` (METHODS §4; C4.1: σ_v = 1 mm, a = 10 m, m = 99 → 1.98997 mrad).
pub fn drift_heading_sd(sigma_v: f64, a: f64, m: usize) -> f64 {
    2.0 * sigma_v / a * (m as f64).sqrt()
}

/// Numerical floor of the reading standard deviation used for the estimate
/// (1 µm): exact simulated readings would otherwise give a zero weight scale.
const SIGMA_FLOOR: f64 = 1e-7;

fn loc(survey: &Survey, line: usize) -> Option<Location> {
    (line > 0).then(|| Location {
        file: survey.source.clone(),
        line,
        column: None,
    })
}

/// Reconstruct the plan of the track centreline from a versine survey.
///
/// One [`Station`] per reading, gaps included (their geometry bridged by
/// interpolation, with inflated standard deviations), in chainage order. The
/// first station's centreline pose is `opts.start` unless position
/// observations move it (one observation: the position is free, the heading
/// kept; two or more at different chainages: position and heading free).
///
/// # Examples
/// ```
/// use chordline::integrate::{integrate, IntegrateOptions};
/// use chordline::survey::{Rail, Reading, Setup, Survey};
/// use chordline::units::{LengthUnit, VersineUnit};
/// // A 20 m chord read every 10 m on the right rail of a left-hand curve:
/// // 50 mm everywhere is R ≈ 1000 m.
/// let readings = (0..40)
///     .map(|i| Reading { chainage: 10.0 * i as f64, versine: Some(0.050), rail: Rail::Right, note: None, line: i + 2 })
///     .collect();
/// let survey = Survey { source: "example".into(), chainage_unit: LengthUnit::Metre,
///     versine_unit: VersineUnit::Millimetre, readings, has_side_column: false };
/// let (plan, _diags) = integrate(&survey, &Setup::new(20.0, Rail::Right), &IntegrateOptions::default()).unwrap();
/// let r_centre = 1.0 / plan.stations[20].curvature;
/// assert!((r_centre - (1000.0 - 0.7175)).abs() < 1.0);
/// ```
///
/// # Errors
/// [`IntegrateError`] for an empty survey, chainages out of order, versines
/// too large for the chord, a change of rail in a dense survey, or unusable
/// control points.
pub fn integrate(
    survey: &Survey,
    setup: &Setup,
    opts: &IntegrateOptions,
) -> Result<(Plan, Vec<Diagnostic>), IntegrateError> {
    let mut diags = Vec::new();
    check_setup(setup, opts)?;
    phases::check_readings(survey)?;
    let mut inp = phases::Inputs::new(survey, setup);
    if inp.vcs.iter().all(Option::is_none) {
        return Err(IntegrateError::NoValidReadings {
            file: survey.source.clone(),
        });
    }
    let (sigma, source, resolution) = phases::reading_sigma(&inp, &mut diags);
    let nominal = if inp.classic_spacing() {
        phases::classic_nominal(&inp, opts.start, sigma, &mut diags)?
    } else {
        phases::dense_nominal(&inp, opts.start, sigma, &mut diags)?
    };
    // The versines are read from the survey from here on: free their copy.
    inp.vcs = Vec::new();
    let phases::Nominal {
        rail_xy,
        mut theta,
        k_rail,
        dvar,
    } = nominal;
    let n = rail_xy.len();

    // Centreline, in place of the rail points (a long survey's memory).
    let mut centre = rail_xy;
    for ((p, th), r) in centre.iter_mut().zip(&theta).zip(&survey.readings) {
        let (sn, cs) = th.sin_cos();
        let g = inp.g_of(r.rail);
        *p = (p.0 - g * sn, p.1 + g * cs);
    }

    // Control points, then the joint adjustment.
    let ctrl = phases::control_rows(opts, &inp.s)?;
    let mode = phases::start_mode(opts, &ctrl, &mut diags);
    // Bring the nominal plan close to the control first (rigid fit), so that
    // the linearised adjustment only sees small corrections.
    if mode != adjust::StartMode::Fixed {
        rigid_prefit(
            &mut centre,
            &mut theta,
            &ctrl,
            mode == adjust::StartMode::TranslateRotate,
        );
    }
    let adj = adjust::adjust(centre, theta, dvar, &ctrl, mode).ok_or(IntegrateError::Singular)?;
    if adj.stride > 1 {
        diags.push(Diagnostic::note(format!(
            "with {} control points on {} stations, standard deviations were computed exactly at every {}th station, at the control points and between them, and interpolated linearly elsewhere",
            ctrl.len(),
            n,
            adj.stride
        )));
    }

    let stations = phases::build_stations(&inp, &k_rail, &adj, mode);
    let position_residuals = phases::control_residuals(opts, &adj, &mut diags);
    Ok((
        Plan {
            stations,
            reading_sd: sigma,
            noise_source: source,
            position_residuals,
            setup: setup.clone(),
            source: survey.source.clone(),
            versine_unit: survey.versine_unit,
            resolution,
        },
        diags,
    ))
}

trait AtOpt {
    fn at_opt(self, l: Option<Location>) -> Self;
}
impl AtOpt for Diagnostic {
    fn at_opt(self, l: Option<Location>) -> Self {
        match l {
            Some(l) => self.at(l),
            None => self,
        }
    }
}

fn check_setup(setup: &Setup, opts: &IntegrateOptions) -> Result<(), IntegrateError> {
    if !(setup.chord.is_finite() && setup.chord > 0.0) {
        return Err(IntegrateError::BadSetup {
            what: "the chord",
            need: "a positive, finite length in metres",
            value: setup.chord,
        });
    }
    if let Some(b) = setup.behind
        && !(b.is_finite() && b > 0.0 && b < setup.chord)
    {
        return Err(IntegrateError::BadSetup {
            what: "the arm behind the measuring point",
            need: "a positive length in metres, shorter than the chord",
            value: b,
        });
    }
    if !(setup.gauge.is_finite() && setup.gauge >= 0.0 && setup.gauge < 0.5 * setup.chord.max(4.0))
    {
        return Err(IntegrateError::BadSetup {
            what: "the gauge",
            need: "a finite length in metres, not negative (standard gauge 1.435 m)",
            value: setup.gauge,
        });
    }
    if let Some(sd) = setup.reading_sd
        && !(sd.is_finite() && sd >= 0.0)
    {
        return Err(IntegrateError::BadSetup {
            what: "the reading standard deviation",
            need: "a finite number of metres, not negative",
            value: sd,
        });
    }
    for (what, v) in [
        ("the start easting", opts.start.x),
        ("the start northing", opts.start.y),
        ("the start heading", opts.start.heading),
    ] {
        if !v.is_finite() {
            return Err(IntegrateError::BadSetup {
                what,
                need: "a finite number",
                value: v,
            });
        }
    }
    Ok(())
}

/// A run of missing readings (inclusive indices).
#[derive(Debug, Clone, Copy)]
struct Gap {
    first: usize,
    last: usize,
    len: usize,
}

fn gaps_of(v: &[Option<f64>]) -> Vec<Gap> {
    let mut out = Vec::new();
    let mut i = 0;
    while i < v.len() {
        if v[i].is_none() {
            let f = i;
            while i < v.len() && v[i].is_none() {
                i += 1;
            }
            out.push(Gap {
                first: f,
                last: i - 1,
                len: i - f,
            });
        } else {
            i += 1;
        }
    }
    out
}

/// Chainage span of a gap between the valid readings around it (or the survey end).
fn gap_span(s: &[f64], v: &[Option<f64>], g: &Gap) -> f64 {
    let lo = if g.first > 0 { s[g.first - 1] } else { s[0] };
    let hi = if g.last + 1 < v.len() {
        s[g.last + 1]
    } else {
        s[v.len() - 1]
    };
    (hi - lo).max(0.0)
}

/// Fill gaps by linear interpolation in chainage between the valid readings
/// either side (constant beyond the ends).
fn fill_gaps(s: &[f64], v: &[Option<f64>]) -> (Vec<f64>, Vec<Gap>) {
    let gaps = gaps_of(v);
    let mut out: Vec<f64> = v.iter().map(|x| x.unwrap_or(0.0)).collect();
    for g in &gaps {
        let left = (g.first > 0).then(|| (s[g.first - 1], out[g.first - 1]));
        let right = (g.last + 1 < v.len()).then(|| (s[g.last + 1], out[g.last + 1]));
        for i in g.first..=g.last {
            out[i] = match (left, right) {
                (Some((s0, v0)), Some((s1, v1))) => v0 + (v1 - v0) * (s[i] - s0) / (s1 - s0),
                (Some((_, v0)), None) => v0,
                (None, Some((_, v1))) => v1,
                (None, None) => 0.0,
            };
        }
    }
    (out, gaps)
}

/// RMS error of linear interpolation of the readings across `len` missing
/// stations, measured on the survey itself (windows with every reading
/// present). Falls back to the RMS of the readings when no window exists.
fn interp_error(v: &[Option<f64>], len: usize) -> f64 {
    let w = len + 2;
    let (mut ss, mut cnt) = (0.0, 0usize);
    let step = (v.len() / 20_000).max(1);
    let mut j = 0;
    while j + w <= v.len() {
        if v[j..j + w].iter().all(|x| x.is_some()) {
            let (a, b) = (v[j].unwrap_or(0.0), v[j + w - 1].unwrap_or(0.0));
            for t in 1..w - 1 {
                let pred = a + (b - a) * t as f64 / (w - 1) as f64;
                ss += (v[j + t].unwrap_or(0.0) - pred).powi(2);
                cnt += 1;
            }
        }
        j += step;
    }
    if cnt > 0 {
        (ss / cnt as f64).sqrt()
    } else {
        let vals: Vec<f64> = v.iter().flatten().copied().collect();
        (vals.iter().map(|x| x * x).sum::<f64>() / vals.len().max(1) as f64).sqrt()
    }
}

/// RMS error of interpolating the estimated curvature linearly across a span
/// of length `len`, measured on the estimate itself.
fn curve_interp_error(curve: &dense::KnotCurve, len: f64) -> f64 {
    let nk = curve.k.len();
    let half = ((0.5 * len / curve.h).round() as usize).max(1);
    if nk < 2 * half + 1 {
        let m = curve.k.iter().map(|k| k * k).sum::<f64>() / nk.max(1) as f64;
        return m.sqrt();
    }
    let step = (nk / 20_000).max(1);
    let (mut ss, mut cnt) = (0.0, 0usize);
    let mut j = half;
    while j + half < nk {
        let e = curve.k[j] - 0.5 * (curve.k[j - half] + curve.k[j + half]);
        ss += e * e;
        cnt += 1;
        j += step;
    }
    (ss / cnt.max(1) as f64).sqrt()
}

/// Gap warnings: one per gap for the first ten, then a summary.
#[derive(Default)]
struct GapLog {
    count: usize,
    readings: usize,
    worst_heading_sd: f64,
}

/// The interpolation error a gap's bridge is judged by: of the versines
/// (metres) at the half-chord spacing, of the curvature (1/m) otherwise.
#[derive(Debug, Clone, Copy)]
enum InterpError {
    Versine(f64),
    Curvature(f64),
}

impl InterpError {
    fn text(self) -> String {
        match self {
            InterpError::Versine(v) => format!("{:.2} mm of versine", v * 1e3),
            InterpError::Curvature(k) => format!("{:.4} 1/km of curvature", k * 1e3),
        }
    }
}

impl GapLog {
    const SHOWN: usize = 10;

    fn push(
        &mut self,
        diags: &mut Vec<Diagnostic>,
        survey: &Survey,
        g: &Gap,
        interp: InterpError,
        heading_sd: f64,
    ) {
        self.count += 1;
        if self.count > Self::SHOWN {
            self.readings += g.len;
            self.worst_heading_sd = self.worst_heading_sd.max(heading_sd);
            return;
        }
        let rd = &survey.readings;
        let d = Diagnostic::warning(format!(
            "{} missing reading{} from chainage {:.3} to {:.3} m: bridged by interpolation (not taken as zero); heading uncertainty increased by {:.3} mrad there (interpolation error {} measured on the rest of the survey)",
            g.len,
            if g.len == 1 { "" } else { "s" },
            rd[g.first].chainage,
            rd[g.last].chainage,
            heading_sd * 1e3,
            interp.text()
        ))
        .at_opt(loc(survey, rd[g.first].line));
        diags.push(d);
    }

    fn finish(self, diags: &mut Vec<Diagnostic>) {
        if self.count > Self::SHOWN {
            diags.push(Diagnostic::warning(format!(
                "{} more gaps ({} missing readings) bridged the same way; the largest added heading uncertainty among them is {:.3} mrad",
                self.count - Self::SHOWN,
                self.readings,
                self.worst_heading_sd * 1e3
            )));
        }
    }
}

/// Rigid (rotation about the start, then translation) weighted least-squares
/// fit of the plan to the control points; translation only when `rotate` is false.
fn rigid_prefit(c: &mut [(f64, f64)], theta: &mut [f64], ctrl: &[adjust::Ctrl], rotate: bool) {
    let pts: Vec<(f64, f64)> = ctrl
        .iter()
        .map(|q| {
            if q.j + 1 < c.len() {
                (
                    c[q.j].0 + q.t * (c[q.j + 1].0 - c[q.j].0),
                    c[q.j].1 + q.t * (c[q.j + 1].1 - c[q.j].1),
                )
            } else {
                c[q.j]
            }
        })
        .collect();
    let wsum: f64 = ctrl.iter().map(|q| 1.0 / (q.sd * q.sd)).sum();
    let mean = |f: &dyn Fn(usize) -> (f64, f64)| {
        let (mut x, mut y) = (0.0, 0.0);
        for (i, q) in ctrl.iter().enumerate() {
            let w = 1.0 / (q.sd * q.sd);
            let p = f(i);
            x += w * p.0;
            y += w * p.1;
        }
        (x / wsum, y / wsum)
    };
    let pm = mean(&|i| pts[i]);
    let om = mean(&|i| ctrl[i].obs);
    let mut ang = 0.0;
    if rotate {
        let (mut sxy, mut sdot) = (0.0, 0.0);
        for (i, q) in ctrl.iter().enumerate() {
            let w = 1.0 / (q.sd * q.sd);
            let p = (pts[i].0 - pm.0, pts[i].1 - pm.1);
            let o = (q.obs.0 - om.0, q.obs.1 - om.1);
            sxy += w * (p.0 * o.1 - p.1 * o.0);
            sdot += w * (p.0 * o.0 + p.1 * o.1);
        }
        ang = sxy.atan2(sdot);
    }
    let (sn, cs) = ang.sin_cos();
    for p in c.iter_mut() {
        let (x, y) = (p.0 - pm.0, p.1 - pm.1);
        *p = (om.0 + cs * x - sn * y, om.1 + sn * x + cs * y);
    }
    for t in theta.iter_mut() {
        *t += ang;
    }
}
