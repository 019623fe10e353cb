//! The phases of [`super::integrate`], in order: check the readings, decide
//! the reading noise, build the nominal plan (the exact polygon at the
//! half-chord spacing, or the regularised curvature otherwise), turn the
//! control points into observation rows, choose what the start may do, and
//! after the adjustment, the stations and the control residuals.

use super::adjust::{Adjusted, Ctrl, StartMode};
use super::{
    AtOpt, GapLog, IntegrateError, IntegrateOptions, InterpError, NoiseSource, PositionResidual,
    SIGMA_FLOOR, Station, curve_interp_error, dense, detect_resolution, estimate_noise, fill_gaps,
    gap_span, gaps_of, interp_error, loc, polygon,
};
use crate::diag::Diagnostic;
use crate::geometry::Pose;
use crate::survey::{Marking, Rail, Setup, Survey};

/// The survey as arrays, and the set-up: what every phase reads.
pub(super) struct Inputs<'a> {
    pub survey: &'a Survey,
    pub setup: &'a Setup,
    /// Chainage of each reading, metres.
    pub s: Vec<f64>,
    /// Chord-side versine of each reading (`None` in a gap), metres.
    pub vcs: Vec<Option<f64>>,
    /// Half chord, metres.
    pub a: f64,
    /// The chord's arms (both `a` for a chord read at its middle).
    pub arms: crate::survey::Arms,
}

impl<'a> Inputs<'a> {
    pub fn new(survey: &'a Survey, setup: &'a Setup) -> Self {
        let rd = &survey.readings;
        Inputs {
            survey,
            setup,
            s: rd.iter().map(|r| r.chainage).collect(),
            vcs: rd.iter().map(|r| r.chord_side()).collect(),
            a: setup.half_chord(),
            arms: setup.arms(),
        }
    }

    /// Steps between consecutive readings, metres (computed where needed
    /// rather than held: a long survey has millions).
    pub fn deltas(&self) -> impl Iterator<Item = f64> + '_ {
        self.s.windows(2).map(|w| w[1] - w[0])
    }

    /// Step from reading `i` to the next one (the last one repeats the step
    /// before it; a single reading takes the half chord).
    pub fn spacing_fwd(&self, i: usize) -> f64 {
        let (s, n) = (&self.s, self.s.len());
        if i + 1 < n {
            s[i + 1] - s[i]
        } else if n > 1 {
            s[n - 1] - s[n - 2]
        } else {
            self.a
        }
    }

    /// Signed offset from the measured rail to the centreline.
    pub fn g_of(&self, r: Rail) -> f64 {
        -r.offset_left(self.setup.gauge)
    }

    /// Whether the readings are every half chord (within 5 mm or 0.1 %) of
    /// a chord read at its middle.
    pub fn classic_spacing(&self) -> bool {
        if !self.arms.is_symmetric() {
            return false;
        }
        let tol = (5e-3_f64).max(1e-3 * self.a);
        self.deltas().all(|d| (d - self.a).abs() <= tol)
    }

    fn too_large(&self, i: usize) -> IntegrateError {
        let r = &self.survey.readings[i];
        IntegrateError::VersineTooLarge {
            file: self.survey.source.clone(),
            line: r.line,
            chainage: r.chainage,
            versine_mm: r.versine.unwrap_or(0.0) * 1e3,
            chord: self.setup.chord,
        }
    }
}

/// The plan before the control points: rail points, tangent headings, rail
/// curvature and turn variances, in the final frame.
pub(super) struct Nominal {
    pub rail_xy: Vec<(f64, f64)>,
    pub theta: Vec<f64>,
    pub k_rail: Vec<f64>,
    pub dvar: Vec<f64>,
}

impl Nominal {
    fn zeros(n: usize) -> Self {
        Nominal {
            rail_xy: vec![(0.0, 0.0); n],
            theta: vec![0.0; n],
            k_rail: vec![0.0; n],
            dvar: vec![0.0; n],
        }
    }
}

/// Refuse an empty survey, chainages that are not finite or do not
/// increase, and versines that are not finite.
pub(super) fn check_readings(survey: &Survey) -> Result<(), IntegrateError> {
    let rd = &survey.readings;
    let src = || survey.source.clone();
    if rd.is_empty() {
        return Err(IntegrateError::NoReadings { file: src() });
    }
    for (i, r) in rd.iter().enumerate() {
        if !r.chainage.is_finite() || r.versine.is_some_and(|v| !v.is_finite()) {
            return Err(IntegrateError::NotFinite {
                file: src(),
                line: r.line,
                chainage: r.chainage,
            });
        }
        if i > 0 && r.chainage <= rd[i - 1].chainage {
            return Err(IntegrateError::ChainageOrder {
                file: src(),
                line: r.line,
                chainage: r.chainage,
                previous: rd[i - 1].chainage,
            });
        }
    }
    Ok(())
}

/// The reading standard deviation and where it came from: stated, estimated
/// from the readings, or the rounding floor (never below it); and the
/// rounding step the readings show.
pub(super) fn reading_sigma(
    inp: &Inputs,
    diags: &mut Vec<Diagnostic>,
) -> (f64, NoiseSource, Option<f64>) {
    let (survey, setup, vcs) = (inp.survey, inp.setup, &inp.vcs);
    let rd = &survey.readings;
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
    let est = estimate_noise(vcs);
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
        "reading standard deviation {:.2} mm ({}){}",
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

    (sigma, source, resolution.filter(|_| !all_zero))
}

/// The exact polygon of the marks, run by run on one rail, with the gaps
/// bridged and their interpolation error added to the turn variances.
pub(super) fn classic_nominal(
    inp: &Inputs,
    start: Pose,
    sigma: f64,
    diags: &mut Vec<Diagnostic>,
) -> Result<Nominal, IntegrateError> {
    let (survey, setup, s, vcs, a) = (inp.survey, inp.setup, &inp.s, &inp.vcs, inp.a);
    let (rd, n) = (&survey.readings, survey.readings.len());
    let too_large = |i: usize| inp.too_large(i);
    let g_of = |r: Rail| inp.g_of(r);
    let mut nom = Nominal::zeros(n);
    let Nominal {
        rail_xy,
        theta,
        k_rail,
        dvar,
    } = &mut nom;
    let (vf, gaps) = fill_gaps(s, vcs);
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
        let spacing_fwd: Vec<f64> = (p..q).map(|i| inp.spacing_fwd(i)).collect();
        let geo = polygon::polygon_run(&vf[p..q], &spacing_fwd, a, setup.marking)
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
            .or_insert_with(|| interp_error(vcs, gp.len));
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
        gap_log.push(diags, survey, gp, InterpError::Versine(sd_i), extra.sqrt());
    }
    gap_log.finish(diags);
    diags.push(Diagnostic::note(format!(
        "readings every half chord: exact polygon of the marks ({} marking)",
        match setup.marking {
            Marking::Taped => "taped",
            Marking::Wire => "fixed-wire",
        }
    )));
    Ok(nom)
}

/// The regularised curvature estimate for readings closer than the half
/// chord (or irregular), integrated exactly, with its gaps.
pub(super) fn dense_nominal(
    inp: &Inputs,
    start: Pose,
    sigma: f64,
    diags: &mut Vec<Diagnostic>,
) -> Result<Nominal, IntegrateError> {
    let (survey, setup, s, vcs, arms) = (inp.survey, inp.setup, &inp.s, &inp.vcs, inp.arms);
    let a = dense::mean_arm(arms);
    let (rd, n) = (&survey.readings, survey.readings.len());
    let src = survey.source.clone();
    let too_large = |i: usize| inp.too_large(i);
    let g_of = |r: Rail| inp.g_of(r);
    if let Some(i) = (1..n).find(|&i| rd[i].rail != rd[0].rail) {
        return Err(IntegrateError::RailChangeInDenseSurvey {
            file: src,
            line: rd[i].line,
            chainage: rd[i].chainage,
        });
    }
    let vlin = dense::linearise(vcs, arms, setup.marking).map_err(too_large)?;
    let dmed = {
        let mut ds: Vec<f64> = inp.deltas().collect();
        crate::numeric::median_in_place(&mut ds).unwrap_or(a)
    };
    let h = dense::knot_spacing(arms, dmed);
    let (curve, p) = dense::fit(s, &vlin, arms, h, sigma)
        .ok_or_else(|| IntegrateError::CurvatureFit { file: src.clone() })?;
    // Freed before the plan's arrays are made: a long survey's peak memory.
    drop(vlin);
    // The integrated arrays become the nominal plan's in place (no copies).
    let (mut rail_xy, mut theta, k_rail) = dense::integrate_curve(&curve, s);
    let g = g_of(rd[0].rail);
    let (cx, cy, th0) = (start.x, start.y, start.heading);
    let (sn, cs) = th0.sin_cos();
    let (rx0, ry0) = (cx + g * sn, cy - g * cs);
    let q_unit = 4.0 * sigma * sigma * dmed / a.powi(4);
    for (xy, th) in rail_xy.iter_mut().zip(theta.iter_mut()) {
        let (x, y) = *xy;
        *xy = (rx0 + cs * x - sn * y, ry0 + sn * x + cs * y);
        *th += th0;
    }
    let mut dvar: Vec<f64> = (0..n)
        .map(|i| {
            if i == 0 {
                0.25 * q_unit * inp.spacing_fwd(0)
            } else {
                0.5 * q_unit * (inp.spacing_fwd(i - 1) + inp.spacing_fwd(i))
            }
        })
        .collect();
    let mut cache = std::collections::HashMap::new();
    let mut gap_log = GapLog::default();
    for gp in gaps_of(vcs) {
        // The kernels of the readings either side see the curvature up to
        // about a quarter chord into the gap; the rest is bridged.
        let len = gap_span(s, vcs, &gp);
        let key = (len / h).round() as u64;
        let sd_k = *cache
            .entry(key)
            .or_insert_with(|| curve_interp_error(&curve, len));
        let extra = (sd_k * (len - a).max(0.0)).powi(2);
        let mid = (gp.first + gp.last) / 2;
        dvar[mid] += extra;
        gap_log.push(
            diags,
            survey,
            &gp,
            InterpError::Curvature(sd_k),
            extra.sqrt(),
        );
    }
    gap_log.finish(diags);
    if arms.is_symmetric() {
        diags.push(Diagnostic::note(format!(
            "readings closer than the half chord (median spacing {:.3} m): regularised curvature estimate on knots every {:.3} m, penalty weight 10^{:.2} (discrepancy principle)",
            dmed, h, p
        )));
    } else {
        diags.push(Diagnostic::note(format!(
            "chord read {:.3} m from its rear end and {:.3} m from its front end (median spacing {:.3} m): regularised curvature estimate through the asymmetric chord's kernel on knots every {:.3} m, penalty weight 10^{:.2} (discrepancy principle)",
            arms.behind, arms.ahead, dmed, h, p
        )));
    }
    Ok(Nominal {
        rail_xy,
        theta,
        k_rail,
        dvar,
    })
}

/// The control points as observation rows of the adjustment, each between
/// two stations; refused when not finite, without a positive sd, or outside
/// the survey.
pub(super) fn control_rows(
    opts: &IntegrateOptions,
    s: &[f64],
) -> Result<Vec<Ctrl>, IntegrateError> {
    let n = s.len();
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
        ctrl.push(Ctrl {
            j,
            t,
            obs: (o.x, o.y),
            sd: o.sd,
        });
    }
    Ok(ctrl)
}

/// What the control points may move: nothing without them, the position
/// with one (or several at one spot), position and heading otherwise.
pub(super) fn start_mode(
    opts: &IntegrateOptions,
    ctrl: &[Ctrl],
    diags: &mut Vec<Diagnostic>,
) -> StartMode {
    if ctrl.is_empty() {
        StartMode::Fixed
    } else {
        let (lo, hi) = opts
            .position_obs
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), o| {
                (l.min(o.chainage), h.max(o.chainage))
            });
        if ctrl.len() >= 2 && hi - lo > 1.0 {
            StartMode::TranslateRotate
        } else {
            if ctrl.len() >= 2 {
                diags.push(Diagnostic::warning(
                    "the control points lie within 1 m of chainage of each other: they fix the position only; the heading comes from the start pose",
                ));
            }
            StartMode::Translate
        }
    }
}

/// One station per reading from the adjusted plan; the rail curvature takes
/// the adjustment's turn corrections when the start was free.
pub(super) fn build_stations(
    inp: &Inputs,
    k_rail: &[f64],
    adj: &Adjusted,
    mode: StartMode,
) -> Vec<Station> {
    let (s, rd) = (&inp.s, &inp.survey.readings);
    let n = rd.len();
    let mut stations = Vec::with_capacity(n);
    for i in 0..n {
        let th = adj.theta[i];
        let (sn, cs) = th.sin_cos();
        let (cx, cy) = adj.c[i];
        let g = inp.g_of(rd[i].rail);
        let mut kr = k_rail[i];
        if i > 0 && mode != StartMode::Fixed {
            let span = 0.5 * (inp.spacing_fwd(i - 1) + inp.spacing_fwd(i));
            kr += adj.turn[i] / span;
        }
        let denom = 1.0 - g * kr;
        let kc = if denom.abs() > 1e-9 { kr / denom } else { kr };
        stations.push(Station {
            chainage: s[i],
            versine: rd[i].versine,
            rail: rd[i].rail,
            line: rd[i].line,
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
    stations
}

/// The residuals of the control points, with a warning for each that
/// disagrees with the rest.
pub(super) fn control_residuals(
    opts: &IntegrateOptions,
    adj: &Adjusted,
    diags: &mut Vec<Diagnostic>,
) -> Vec<PositionResidual> {
    let mut position_residuals = Vec::with_capacity(opts.position_obs.len());
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
    position_residuals
}
