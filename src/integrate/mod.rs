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
use crate::survey::{Marking, Rail, Setup, Survey};

mod adjust;
mod banded;
mod dense;
mod noise;
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
    let src = survey.source.clone();
    check_setup(setup, opts)?;
    let rd = &survey.readings;
    let n = rd.len();
    if n == 0 {
        return Err(IntegrateError::NoReadings { file: src });
    }
    for (i, r) in rd.iter().enumerate() {
        if !r.chainage.is_finite() || r.versine.is_some_and(|v| !v.is_finite()) {
            return Err(IntegrateError::NotFinite {
                file: src,
                line: r.line,
                chainage: r.chainage,
            });
        }
        if i > 0 && r.chainage <= rd[i - 1].chainage {
            return Err(IntegrateError::ChainageOrder {
                file: src,
                line: r.line,
                chainage: r.chainage,
                previous: rd[i - 1].chainage,
            });
        }
    }
    let s: Vec<f64> = rd.iter().map(|r| r.chainage).collect();
    let vcs: Vec<Option<f64>> = rd.iter().map(|r| r.chord_side()).collect();
    let nvalid = vcs.iter().filter(|v| v.is_some()).count();
    if nvalid == 0 {
        return Err(IntegrateError::NoValidReadings { file: src });
    }
    let a = setup.half_chord();

    // Reading standard deviation.
    let vals: Vec<f64> = rd.iter().filter_map(|r| r.versine).collect();
    let all_zero = !vals.is_empty() && vals.iter().all(|v| *v == 0.0);
    let resolution = if all_zero {
        // Nothing shows the rounding, and nothing can be estimated: take the
        // coarsest usual reading step of the unit (1 mm, 1/8 in, 0.01 ft),
        // so that the sd is not that of exact readings.
        let step = match survey.versine_unit {
            crate::units::VersineUnit::Inch => 0.125 * crate::units::INCH,
            crate::units::VersineUnit::Foot => 0.01 * crate::units::FOOT,
            _ => 1e-3,
        };
        diags.push(
            Diagnostic::warning(format!(
                "every versine is zero, so neither the rounding of the readings nor their noise shows; the reading standard deviation is taken as a reading step of {:.3} mm over √12",
                step * 1e3
            ))
            .hint("state the reading standard deviation with --reading-sd (e.g. 1mm for a hand survey)"),
        );
        Some(step)
    } else {
        detect_resolution(&vals, survey.versine_unit)
    };
    let floor = resolution.map_or(0.0, |q| q / 12f64.sqrt());
    let est = estimate_noise(&vcs);
    let (mut sigma, source) = match (setup.reading_sd, est) {
        (Some(sd), _) if sd >= floor => (sd, NoiseSource::Stated),
        (Some(sd), _) => {
            diags.push(Diagnostic::warning(format!(
                "the stated reading standard deviation {:.3} mm is below what the rounding of the readings allows ({:.3} mm = resolution {:.3} mm/√12); using {:.3} mm",
                sd * 1e3, floor * 1e3, floor * 12f64.sqrt() * 1e3, floor * 1e3
            )));
            (floor, NoiseSource::RoundingFloor)
        }
        (None, Some(e)) if e >= floor => (e, NoiseSource::Estimated),
        (None, Some(_)) => (floor, NoiseSource::RoundingFloor),
        (None, None) if floor > 0.0 => {
            diags.push(Diagnostic::warning(
                "too few consecutive readings to estimate the reading noise; using the rounding floor only",
            ).hint("state the reading standard deviation (e.g. 1 mm for a hand survey)"));
            (floor, NoiseSource::RoundingFloor)
        }
        (None, None) => {
            diags.push(Diagnostic::warning(
                "too few consecutive readings to estimate the reading noise; assuming 1 mm (typical of a hand survey)",
            ).hint("state the reading standard deviation"));
            (1e-3, NoiseSource::Estimated)
        }
    };
    if sigma < SIGMA_FLOOR {
        sigma = SIGMA_FLOOR;
    }
    diags.push(Diagnostic::note(format!(
        "reading standard deviation {:.3} mm ({}){}",
        sigma * 1e3,
        match source {
            NoiseSource::Stated => "stated",
            NoiseSource::Estimated => "estimated from third differences of the readings",
            NoiseSource::RoundingFloor => "rounding floor",
        },
        resolution.map_or(String::new(), |q| format!(
            "; readings rounded to {:.4} mm",
            q * 1e3
        ))
    )));

    // Classic spacing?
    let deltas: Vec<f64> = s.windows(2).map(|w| w[1] - w[0]).collect();
    let tol = (5e-3_f64).max(1e-3 * a);
    let classic = deltas.iter().all(|d| (d - a).abs() <= tol);
    let g_of = |r: Rail| -r.offset_left(setup.gauge);
    let spacing_fwd: Vec<f64> = (0..n)
        .map(|i| {
            if i + 1 < n {
                deltas[i]
            } else if n > 1 {
                deltas[n - 2]
            } else {
                a
            }
        })
        .collect();

    let too_large = |i: usize| IntegrateError::VersineTooLarge {
        file: survey.source.clone(),
        line: rd[i].line,
        chainage: rd[i].chainage,
        versine_mm: rd[i].versine.unwrap_or(0.0) * 1e3,
        chord: setup.chord,
    };

    // Nominal plan in the final frame: rail points, tangent headings, rail curvature, turn variances.
    let mut rail_xy = vec![(0.0, 0.0); n];
    let mut theta = vec![0.0; n];
    let mut k_rail = vec![0.0; n];
    let mut dvar = vec![0.0; n];
    let start = opts.start;

    if classic {
        let (vf, gaps) = fill_gaps(&s, &vcs);
        // Runs on one rail.
        let mut runs = Vec::new();
        let mut b = 0;
        for i in 1..=n {
            if i == n || rd[i].rail != rd[b].rail {
                runs.push((b, i));
                b = i;
            }
        }
        let mut pose = (start.x, start.y, start.heading);
        for (ri, &(p, q)) in runs.iter().enumerate() {
            let geo = polygon::polygon_run(&vf[p..q], &spacing_fwd[p..q], a, setup.marking)
                .map_err(|i| too_large(p + i))?;
            let g = g_of(rd[p].rail);
            let (cx, cy, th0) = pose;
            let (sn, cs) = th0.sin_cos();
            let (rx0, ry0) = (cx + g * sn, cy - g * cs); // centre − g·n(θ)
            let place = |(x, y): (f64, f64)| (rx0 + cs * x - sn * y, ry0 + sn * x + cs * y);
            for i in 0..q - p {
                rail_xy[p + i] = place(geo.rail[i]);
                theta[p + i] = th0 + geo.theta[i];
                k_rail[p + i] = geo.k_rail[i];
                let gain = geo.gain[i];
                dvar[p + i] = if p + i == 0 {
                    (0.5 * sigma * gain).powi(2)
                } else {
                    (sigma * gain).powi(2)
                };
            }
            if ri > 0 {
                // The tangent at a change of rail is carried over from the previous run.
                dvar[p] += 0.25 * dvar[p - 1];
                diags.push(
                    Diagnostic::note(format!(
                        "the measured rail changes to the {} rail at chainage {:.3} m; the plan is carried across on the centreline",
                        rd[p].rail.name(),
                        rd[p].chainage
                    ))
                    .at_opt(loc(survey, rd[p].line)),
                );
            }
            let ((nx, ny), nth) = geo.next;
            let (wx, wy) = place((nx, ny));
            let th = th0 + nth;
            let (s2, c2) = th.sin_cos();
            pose = (wx - g * s2, wy + g * c2, th);
        }
        // Inflate for gaps: interpolation error of the versines at the gap's length, fully correlated.
        let mut cache = std::collections::HashMap::new();
        let mut gap_log = GapLog::default();
        for gp in &gaps {
            let sd_i = *cache
                .entry(gp.len)
                .or_insert_with(|| interp_error(&vcs, gp.len));
            // A missing deflection at either end of the survey only turns the
            // end tangent by half of it.
            let mut g_eff = gp.len as f64;
            if gp.first == 0 {
                g_eff -= 0.5;
            }
            if gp.last + 1 == n {
                g_eff -= 0.5;
            }
            let extra = (g_eff.max(0.5) * 2.0 * sd_i / a).powi(2);
            let mid = (gp.first + gp.last) / 2;
            dvar[mid] += extra;
            gap_log.push(
                &mut diags,
                survey,
                gp,
                InterpError::Versine(sd_i),
                extra.sqrt(),
            );
        }
        gap_log.finish(&mut diags);
        diags.push(Diagnostic::note(format!(
            "readings every half chord: exact polygon of the marks ({} marking)",
            match setup.marking {
                Marking::Taped => "taped",
                Marking::Wire => "fixed-wire",
            }
        )));
    } else {
        if let Some(i) = (1..n).find(|&i| rd[i].rail != rd[0].rail) {
            return Err(IntegrateError::RailChangeInDenseSurvey {
                file: src,
                line: rd[i].line,
                chainage: rd[i].chainage,
            });
        }
        let vlin = dense::linearise(&vcs, a, setup.marking).map_err(too_large)?;
        let mut ds = deltas.clone();
        let dmed = if ds.is_empty() {
            a
        } else {
            let m = ds.len() / 2;
            *ds.select_nth_unstable_by(m, |x, y| x.total_cmp(y)).1
        };
        let h = dense::knot_spacing(a, dmed);
        let (curve, p) = dense::fit(&s, &vlin, a, h, sigma)
            .ok_or_else(|| IntegrateError::CurvatureFit { file: src.clone() })?;
        let (pos, th, ks) = dense::integrate_curve(&curve, &s);
        let g = g_of(rd[0].rail);
        let (cx, cy, th0) = (start.x, start.y, start.heading);
        let (sn, cs) = th0.sin_cos();
        let (rx0, ry0) = (cx + g * sn, cy - g * cs);
        let q_unit = 4.0 * sigma * sigma * dmed / a.powi(4);
        for i in 0..n {
            let (x, y) = pos[i];
            rail_xy[i] = (rx0 + cs * x - sn * y, ry0 + sn * x + cs * y);
            theta[i] = th0 + th[i];
            k_rail[i] = ks[i];
            dvar[i] = if i == 0 {
                0.25 * q_unit * spacing_fwd[0]
            } else {
                0.5 * q_unit * (spacing_fwd[i - 1] + spacing_fwd[i])
            };
        }
        let mut cache = std::collections::HashMap::new();
        let mut gap_log = GapLog::default();
        for gp in gaps_of(&vcs) {
            // The kernels of the readings either side see the curvature up to
            // about a quarter chord into the gap; the rest is bridged.
            let len = gap_span(&s, &vcs, &gp);
            let key = (len / h).round() as u64;
            let sd_k = *cache
                .entry(key)
                .or_insert_with(|| curve_interp_error(&curve, len));
            let extra = (sd_k * (len - a).max(0.0)).powi(2);
            let mid = (gp.first + gp.last) / 2;
            dvar[mid] += extra;
            gap_log.push(
                &mut diags,
                survey,
                &gp,
                InterpError::Curvature(sd_k),
                extra.sqrt(),
            );
        }
        gap_log.finish(&mut diags);
        diags.push(Diagnostic::note(format!(
            "readings closer than the half chord (median spacing {:.3} m): regularised curvature estimate on knots every {:.3} m, penalty weight 10^{:.2} (discrepancy principle)",
            dmed, h, p
        )));
    }

    // Centreline.
    let goff: Vec<f64> = rd.iter().map(|r| g_of(r.rail)).collect();
    let mut centre: Vec<(f64, f64)> = (0..n)
        .map(|i| {
            let (sn, cs) = theta[i].sin_cos();
            (rail_xy[i].0 - goff[i] * sn, rail_xy[i].1 + goff[i] * cs)
        })
        .collect();

    // Control points.
    let mut ctrl = Vec::with_capacity(opts.position_obs.len());
    for o in &opts.position_obs {
        if !(o.x.is_finite() && o.y.is_finite() && o.chainage.is_finite()) {
            return Err(IntegrateError::BadControl {
                id: o.id.clone(),
                why: "its chainage or coordinates are not finite numbers".into(),
            });
        }
        if !(o.sd.is_finite() && o.sd > 0.0) {
            return Err(IntegrateError::BadControl {
                id: o.id.clone(),
                why: format!(
                    "its standard deviation must be positive (got {} m); give a realistic value such as 0.005 m",
                    o.sd
                ),
            });
        }
        let tol_c = 1e-6;
        if o.chainage < s[0] - tol_c || o.chainage > s[n - 1] + tol_c {
            return Err(IntegrateError::BadControl {
                id: o.id.clone(),
                why: format!(
                    "chainage {:.3} m lies outside the survey ({:.3} to {:.3} m); remove it or extend the survey",
                    o.chainage,
                    s[0],
                    s[n - 1]
                ),
            });
        }
        let j = s
            .partition_point(|&x| x <= o.chainage)
            .saturating_sub(1)
            .min(n - 1);
        let t = if j + 1 < n {
            ((o.chainage - s[j]) / (s[j + 1] - s[j])).clamp(0.0, 1.0)
        } else {
            0.0
        };
        ctrl.push(adjust::Ctrl {
            j,
            t,
            obs: (o.x, o.y),
            sd: o.sd,
        });
    }
    let mode = if ctrl.is_empty() {
        adjust::StartMode::Fixed
    } else {
        let (lo, hi) = opts
            .position_obs
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), o| {
                (l.min(o.chainage), h.max(o.chainage))
            });
        if ctrl.len() >= 2 && hi - lo > 1.0 {
            adjust::StartMode::TranslateRotate
        } else {
            if ctrl.len() >= 2 {
                diags.push(Diagnostic::warning(
                    "the control points lie within 1 m of chainage of each other: they fix the position only; the heading comes from the start pose",
                ));
            }
            adjust::StartMode::Translate
        }
    };
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
    let adj =
        adjust::adjust(&centre, &theta, &dvar, &ctrl, mode).ok_or(IntegrateError::Singular)?;
    if adj.stride > 1 {
        diags.push(Diagnostic::note(format!(
            "with {} control points on {} stations, standard deviations were computed exactly at every {}th station, at the control points and between them, and interpolated linearly elsewhere",
            ctrl.len(),
            n,
            adj.stride
        )));
    }

    // Stations.
    let mut stations = Vec::with_capacity(n);
    for i in 0..n {
        let th = adj.theta[i];
        let (sn, cs) = th.sin_cos();
        let (cx, cy) = adj.c[i];
        let g = goff[i];
        let mut kr = k_rail[i];
        if i > 0 && mode != adjust::StartMode::Fixed {
            let span = 0.5 * (spacing_fwd[i - 1] + spacing_fwd[i]);
            kr += adj.turn[i] / span;
        }
        let denom = 1.0 - g * kr;
        let kc = if denom.abs() > 1e-9 { kr / denom } else { kr };
        stations.push(Station {
            chainage: s[i],
            versine: rd[i].versine,
            rail: rd[i].rail,
            curvature: kc,
            heading: th,
            x: cx,
            y: cy,
            rail_x: cx + g * sn,
            rail_y: cy - g * cs,
            position_sd: adj.lateral_var[i].sqrt(),
            heading_sd: adj.heading_var[i].sqrt(),
        });
    }
    let mut position_residuals = Vec::with_capacity(ctrl.len());
    for (o, r) in opts.position_obs.iter().zip(&adj.residuals) {
        if r.2 > 3.0 {
            diags.push(
                Diagnostic::warning(format!(
                    "control point '{}' at chainage {:.3} m disagrees with the survey and the other points: residual ({:.1}, {:.1}) mm, {:.1} standard deviations",
                    o.id, o.chainage, r.0 * 1e3, r.1 * 1e3, r.2
                ))
                .hint("check its coordinates and chainage, or give it a larger standard deviation"),
            );
        }
        position_residuals.push(PositionResidual {
            id: o.id.clone(),
            dx: r.0,
            dy: r.1,
            normalised: r.2,
        });
    }
    Ok((
        Plan {
            stations,
            reading_sd: sigma,
            noise_source: source,
            position_residuals,
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
