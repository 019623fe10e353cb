//! Element fitting: straights, clothoid transitions and arcs by least squares
//! in versine (chord) space.
//!
//! # Method
//! 1. **Noise** (`noise.rs`). The reading noise is one figure: stated, or the
//!    plan's robust estimate (median of third differences). The penalties
//!    start from it and from the element-scale noise on the long straights of
//!    a coarse first partition, then iterate to a fixed point on the robust
//!    spread of the residuals about the fitted design and the element-scale
//!    noise on what the fit finds straight, clear of its joints (differences
//!    are inflated where joints lie close together). Track irregularity makes
//!    the element-scale noise larger than the reading noise; the larger value
//!    sets every penalty, so irregularities never become elements. A constant
//!    reading bias is estimated on the straights.
//! 2. **Blunders** (`outliers.rs`): readings no smooth geometry explains are
//!    screened out before the search, confirmed against the fitted design,
//!    described (wrong sign, slipped decimal point, swapped digits) and left
//!    out of the fit unless [`FitOptions::keep_outliers`] is set.
//! 3. **Initial partition** (`segment.rs`): a typed penalised optimal partition
//!    of the curvature estimate `k̂ = 2v/a²` into straights, arcs and ramps.
//! 4. **Chord-space fit** (`lm.rs`): the partition becomes a continuous
//!    piecewise-linear curvature diagram whose versines are predicted exactly as
//!    the chord measures them (`model.rs`); Levenberg–Marquardt refines every
//!    boundary and arc curvature, curve by curve (curves separated by straights
//!    longer than two chords are independent).
//! 5. **Element count** (`search.rs`, `grow.rs`). Bottom-up moves (drop a short plateau, hold an arc at
//!    zero, merge two equal plateaus) are accepted while the Bayesian
//!    information criterion `RSS/σ² + p ln n` falls; then growth moves
//!    (an arc, a straight, a break or a plateau inserted where a one-chord
//!    scan of the residuals finds a run the noise does not explain; a short
//!    transition or a step exchanged for a short straight or arc) alternate
//!    with the simplification until neither lowers the criterion.
//! 6. **Uncertainty** (`covariance.rs`, `stats.rs`, `elements.rs`): covariance `(JᵀJ)⁻¹JᵀΓJ(JᵀJ)⁻¹` with the
//!    pooled residual autocovariance `Γ`, Student-t 95 % intervals, a profile
//!    bound for transitions the chord cannot resolve.
//!
//! Boundaries are in survey chainage (along the measured rail); radii and
//! lengths are of the track centreline: with `d` the offset of the measured
//! rail to the left of the centreline, `k_c = k_r/(1 + d k_r)` (so
//! `R_c = R_r + d`) and `ds_c = (1 + d k_r) ds_r` (METHODS §1).
//!
//! ## Reference
//! SEGMENTATION.md (this project's design study); METHODS.md §§1, 2, 6;
//! Schwarz, "Estimating the dimension of a model", Ann. Stat. 6(2), 1978 (BIC).

mod covariance;
mod elements;
mod envelope;
mod grow;
mod known;
pub(crate) mod lm;
pub(crate) mod model;
mod noise;
mod outliers;
mod passes;
mod result;
mod search;
pub(crate) mod segment;
pub(crate) mod stats;

pub use known::KnownSequence;
pub use outliers::{Outlier, Slip};
pub use result::{ElementStatus, Estimate, FitResult, FitStats, FittedElement, StationDesign};

use crate::diag::Diagnostic;
use crate::integrate::Plan;
use crate::survey::Rail;
use passes::{Searched, Settings, describe_outliers, note_outliers, search_robust};

/// Options of the element fit. `Default` suits a 20 m-chord hand survey and
/// a recording-vehicle survey alike.
#[derive(Debug, Clone, PartialEq)]
pub struct FitOptions {
    /// Shortest straight the initial partition proposes (m). Default 10 m.
    pub min_straight: f64,
    /// Shortest arc the initial partition proposes (m). Default 5 m.
    pub min_arc: f64,
    /// Shortest ramp in the initial partition (m); `None`: one chord (shorter
    /// transitions are recovered by the chord-space fit).
    pub min_ramp: Option<f64>,
    /// Longest transition the initial partition proposes (m). Default 400 m.
    pub max_ramp: f64,
    /// Multiplier on the BIC penalty `ln n` per parameter (1 = BIC).
    pub penalty: f64,
    /// Standard deviation of one reading (m), overriding the set-up's and the
    /// estimate; used for the chi-square test and as a floor of the noise.
    pub reading_sd: Option<f64>,
    /// Subtract the reading bias estimated on the straights before fitting.
    pub remove_bias: bool,
    /// Bin width of the initial partition (m); `None`: a quarter chord (or
    /// the reading spacing if larger).
    pub bin: Option<f64>,
    /// Iteration cap of each Levenberg–Marquardt fit.
    pub max_iterations: usize,
    /// Threads for fitting independent curves of long surveys (`None`: the
    /// current rayon pool, by default one thread per processor; `Some(n)`: a
    /// pool of `n` for this fit unless the current one has `n`). The result
    /// does not depend on it.
    pub threads: Option<usize>,
    /// Keep readings that look like blunders in the fit (they are still
    /// listed). Default: they are left out.
    pub keep_outliers: bool,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            min_straight: 10.0,
            min_arc: 5.0,
            min_ramp: None,
            max_ramp: 400.0,
            penalty: 1.0,
            reading_sd: None,
            remove_bias: false,
            bin: None,
            max_iterations: 60,
            threads: None,
            keep_outliers: false,
        }
    }
}

/// Why the fit could not run.
#[derive(Debug, thiserror::Error, PartialEq)]
pub enum FitError {
    /// Too few readings.
    #[error(
        "only {found} versine readings in {source_name}; the element fit needs at least {needed} (add readings or skip the fit)"
    )]
    TooFewReadings {
        /// Where the survey came from.
        source_name: String,
        /// Readings with a value.
        found: usize,
        /// Minimum needed.
        needed: usize,
    },
    /// A set-up value is unusable.
    #[error("invalid set-up for the element fit: {what} = {value} (give a positive, finite value)")]
    BadSetup {
        /// Which value.
        what: &'static str,
        /// The value given.
        value: f64,
    },
}

/// Fewest readings the fit needs.
const NEEDED: usize = 8;
/// Floor of the noise (m): 0.01 mm, far below any real reading, keeps
/// noise-free input sane.
const NOISE_FLOOR: f64 = 1e-5;
/// Lags of the noise autocovariance for the sandwich covariance, in chords
/// (irregularity is correlated over about a chord; SEGMENTATION §7).
const GAMMA_CHORDS: f64 = 3.0;
/// Straight readings needed, in multiples of the lags, to take the noise
/// autocovariance from the straights rather than from the residuals.
const GAMMA_STRAIGHT_FACTOR: usize = 4;
/// The difference-based reading noise is taken as inflated by close joints
/// when the residuals about the design scatter this many times less.
const DIFF_INFLATION: f64 = 1.5;
/// A chi-square upper-tail probability below this is a loud warning.
const CHI2_ALARM: f64 = 1e-3;
/// A reading bias this many standard errors from zero is warned about.
const BIAS_Z: f64 = 3.0;
/// Element-scale noise above this multiple of the reading noise gets a note.
const IRREGULAR_RATIO: f64 = 2.0;

/// The readings the fit uses, and the set-up in the fit's terms.
struct Input {
    /// Chainage of every usable reading (m), increasing.
    s: Vec<f64>,
    /// Its chord-side versine (m).
    v: Vec<f64>,
    /// Its index in the survey's readings.
    index: Vec<usize>,
    chord: f64,
    /// Half chord (m; the mean arm `√(a₁a₂)` for a chord not read at its
    /// middle): the length scale of the curvature estimates.
    a: f64,
    /// The chord's arms: the forward model.
    arms: crate::survey::Arms,
    eps: f64,
    /// Offset of the measured rail left of the centreline (m).
    d_off: f64,
    /// Median reading spacing (m).
    spacing: f64,
}

/// The fit's readings from the plan's stations, and the set-up in the fit's
/// terms. The plan is already validated (chainages finite and strictly
/// increasing, chord positive, gauge finite): nothing is checked again.
fn prepare(plan: &Plan, diags: &mut Vec<Diagnostic>) -> Result<Input, FitError> {
    let setup = &plan.setup;
    let (mut s, mut v, mut index) = (Vec::new(), Vec::new(), Vec::new());
    let mut n_left = 0usize;
    for (i, st) in plan.stations.iter().enumerate() {
        if let Some(x) = st.versine.map(|v| st.rail.chord_side(v))
            && x.is_finite()
        {
            s.push(st.chainage);
            v.push(x);
            index.push(i);
            n_left += usize::from(st.rail == Rail::Left);
        }
    }
    if s.len() < NEEDED {
        return Err(FitError::TooFewReadings {
            source_name: plan.source.clone(),
            found: s.len(),
            needed: NEEDED,
        });
    }
    let n = s.len();
    let rail = if n_left * 2 >= n {
        Rail::Left
    } else {
        Rail::Right
    };
    if n_left != 0 && n_left != n {
        diags.push(Diagnostic::warning(
            "readings were taken on both rails; the element fit uses one rail chainage and converts radii with the rail most readings were on",
        ));
    }
    let mut gaps: Vec<f64> = s.windows(2).map(|w| w[1] - w[0]).collect();
    let spacing = crate::numeric::median_in_place(&mut gaps).unwrap_or(setup.chord);
    Ok(Input {
        spacing,
        s,
        v,
        index,
        chord: setup.chord,
        a: if setup.is_symmetric() {
            0.5 * setup.chord
        } else {
            setup.arms().product().sqrt()
        },
        arms: setup.arms(),
        eps: model::marking_epsilon(setup.marking),
        d_off: rail.offset_left(setup.gauge),
    })
}

/// Fit straights, transitions and arcs to a versine survey.
///
/// Returns the fitted elements with standard errors and intervals, the design
/// centreline, the design versine and residual at every reading, the readings
/// set aside as blunders, whole-fit statistics, and diagnostics (bias, noise,
/// blunders, indeterminate elements).
///
/// # Errors
/// [`FitError::TooFewReadings`] with fewer than 8 readings.
///
/// # Examples
/// ```
/// use chordline::fit::{fit, FitOptions};
/// use chordline::integrate::{integrate, IntegrateOptions};
/// use chordline::geometry::{Alignment, Element, ElementKind, Pose};
/// use chordline::simulate::{simulate, SimSetup};
/// use chordline::survey::{Rail, Setup};
/// // Straight, 60 m transition, 450 m left-hand arc, transition, straight,
/// // read with a 20 m chord every 10 m on the right (outer) rail.
/// let k = 1.0 / 450.0;
/// let design = Alignment::new(Pose::default(), 0.0, vec![
///     Element::straight(200.0), Element::transition(60.0, 0.0, k),
///     Element::arc(300.0, 450.0), Element::transition(60.0, k, 0.0),
///     Element::straight(200.0)]);
/// let sim = simulate(&design, &SimSetup::classic(20.0, Rail::Right)).unwrap();
/// let setup = Setup::new(20.0, Rail::Right);
/// let (plan, _) = integrate(&sim.survey, &setup, &IntegrateOptions::default()).unwrap();
/// let (res, _diags) = fit(&plan, &FitOptions::default()).unwrap();
/// let kinds: Vec<_> = res.elements.iter().map(|e| e.kind).collect();
/// assert_eq!(kinds, [ElementKind::Straight, ElementKind::Transition, ElementKind::Arc,
///                    ElementKind::Transition, ElementKind::Straight]);
/// let r = res.elements[2].start_radius.unwrap().value;
/// assert!((r - 450.0).abs() < 0.05, "{r}");
/// assert!(res.outliers.is_empty());
/// ```
pub fn fit(plan: &Plan, opts: &FitOptions) -> Result<(FitResult, Vec<Diagnostic>), FitError> {
    on_threads(opts.threads, || fit_here(plan, opts))
}

/// Run `f` on a rayon pool of `threads` threads: the current pool when it has
/// that many, or when `threads` is `None` or 1 (one thread runs everything
/// in order without a pool).
fn on_threads<T: Send>(threads: Option<usize>, f: impl FnOnce() -> T + Send) -> T {
    match threads {
        Some(n) if n > 1 && n != rayon::current_num_threads() => {
            match rayon::ThreadPoolBuilder::new().num_threads(n).build() {
                Ok(pool) => pool.install(f),
                Err(_) => f(),
            }
        }
        _ => f(),
    }
}

fn fit_here(plan: &Plan, opts: &FitOptions) -> Result<(FitResult, Vec<Diagnostic>), FitError> {
    let mut diags = Vec::new();
    let input = prepare(plan, &mut diags)?;
    let st = settings(plan, opts, &input);
    let (sr, excluded, flagged) = search_robust(&st);
    let listed = if opts.keep_outliers {
        &flagged
    } else {
        &excluded
    };
    let outliers = describe_outliers(plan, &st, &sr, listed);
    note_outliers(plan, &outliers, &mut diags);
    Ok((finish(plan, &st, sr, outliers, &mut diags), diags))
}

fn settings<'a>(plan: &Plan, opts: &'a FitOptions, input: &'a Input) -> Settings<'a> {
    let step = plan.resolution;
    Settings {
        input,
        opts,
        sigma_read: plan.reading_sd.max(NOISE_FLOOR),
        stated: opts.reading_sd.or(plan.setup.reading_sd),
        floor: step.map_or(0.0, |q| q / 12f64.sqrt()),
        step,
        threads: opts
            .threads
            .unwrap_or_else(rayon::current_num_threads)
            .max(1),
    }
}

/// Fit a known element sequence: the same chord-space Levenberg–Marquardt
/// fit, told the kinds and started from `seq`, with no search and no
/// simplification, on every reading. The reference a search is measured
/// against (same readings, same model, the topology given); also useful when
/// the design drawing is known and only its as-built values are wanted.
///
/// # Errors
/// As [`fit`], and [`FitError::BadSetup`] for a sequence that does not fit
/// together (see [`KnownSequence`]).
pub fn fit_known(
    plan: &Plan,
    opts: &FitOptions,
    seq: &KnownSequence,
) -> Result<(FitResult, Vec<Diagnostic>), FitError> {
    on_threads(opts.threads, || fit_known_here(plan, opts, seq))
}

fn fit_known_here(
    plan: &Plan,
    opts: &FitOptions,
    seq: &KnownSequence,
) -> Result<(FitResult, Vec<Diagnostic>), FitError> {
    let mut diags = Vec::new();
    let input = prepare(plan, &mut diags)?;
    let chain = known::chain_of(seq, input.d_off).ok_or(FitError::BadSetup {
        what: "known element sequence (kinds, joints and curvatures must agree)",
        value: seq.kinds.len() as f64,
    })?;
    let st = settings(plan, opts, &input);
    let sr = st.fit_chain(chain);
    Ok((finish(plan, &st, sr, Vec::new(), &mut diags), diags))
}

/// Residuals, covariance, elements and statistics of the final search.
fn finish(
    plan: &Plan,
    st: &Settings,
    sr: Searched,
    outliers: Vec<Outlier>,
    diags: &mut Vec<Diagnostic>,
) -> FitResult {
    let inp = st.input;
    let (s, v, chain) = (&sr.s, &sr.v, &sr.chain);
    let n = s.len();
    let resid: Vec<f64> = s
        .iter()
        .zip(v)
        .map(|(&x, &o)| o - chain.versine_arms(x, inp.arms, inp.eps))
        .collect();
    let rss: f64 = resid.iter().map(|r| r * r).sum();
    let h_max = ((GAMMA_CHORDS * inp.chord / inp.spacing).round() as usize).clamp(1, 800);
    let gamma_res = stats::autocovariance(&[&resid], h_max);
    let lag1 = if gamma_res[0] > 0.0 && gamma_res.len() > 1 {
        gamma_res[1] / gamma_res[0]
    } else {
        0.0
    };
    // The noise autocovariance for the sandwich: from the straights, where
    // the truth is known to be zero, when there is enough of them (fit
    // residuals are biased towards negative correlation by the fit itself);
    // otherwise from the residuals.
    let straight_runs: Vec<Vec<f64>> = sr
        .straights
        .runs
        .iter()
        .map(|&(i, j)| {
            let m = v[i..j].iter().sum::<f64>() / (j - i) as f64;
            v[i..j].iter().map(|x| x - m).collect()
        })
        .collect();
    let gamma = if sr.straights.n >= (GAMMA_STRAIGHT_FACTOR * h_max).max(50) {
        let sl: Vec<&[f64]> = straight_runs.iter().map(|r| r.as_slice()).collect();
        stats::autocovariance(&sl, h_max)
    } else {
        gamma_res
    };
    let p_guess: usize = sr.fits.iter().map(|g| search::n_params(&g.chain)).sum();
    let s2_ols = rss / (n as f64 - p_guess as f64).max(1.0);
    let problem = st.problem(s, v, sr.sigma_pen);
    let cov = covariance::Covariance::of_groups(&sr.fits, &problem, &gamma, s2_ols, st.threads);
    let dof = (n as f64 - cov.p_free as f64).max(1.0);
    let cx = elements::Context {
        chain,
        fits: &sr.fits,
        problem: &problem,
        cov: &cov,
        resid: &resid,
        d_off: inp.d_off,
        t: stats::t95(dof),
    };
    let ex = elements::extract(&cx, diags);
    // The reading noise of the design-free third differences (not used
    // against a stated figure).
    let clean = noise::clean_sigma(s, v, chain, inp.a).filter(|_| st.stated.is_none());
    noise_diags(st, &sr, clean, diags);
    let stats_out = fit_stats(st, &sr, &resid, rss, (dof, cov.p_free), lag1, clean, diags);
    let (chainages, design_versine, residual) = per_reading(plan, st, &sr);
    FitResult {
        elements: ex.elements,
        design: ex.design,
        stats: stats_out,
        start_chainage: ex.start,
        chainages,
        design_versine,
        residual,
        outliers,
        centre_knots: result::centre_knots(chain, ex.start, inp.d_off),
        chain: sr.chain,
        rail_offset: inp.d_off,
    }
}

/// Notes on the noise: no straights, irregular track, a reading bias,
/// reading noise from differences inflated by close joints.
fn noise_diags(
    st: &Settings,
    sr: &Searched,
    clean: Option<(f64, f64)>,
    diags: &mut Vec<Diagnostic>,
) {
    let sigma0 = st.stated.unwrap_or(st.sigma_read).max(st.sigma_read);
    if sr.straights.scales.is_empty() {
        diags.push(Diagnostic::note(
            "no long straight in the survey: the element-scale noise could not be measured, the spread of the residuals sets the penalties",
        ).hint("irregular track may then show as extra short elements; state --reading-sd or survey some straight track"));
    } else if sr.straights.sigma_eff > IRREGULAR_RATIO * sigma0 {
        diags.push(Diagnostic::note(format!(
            "the readings on the straights scatter {:.1} times more at element scale than reading noise alone (track irregularity); penalties use {:.2} mm",
            sr.straights.sigma_eff / sigma0,
            sr.sigma_pen * 1e3
        )));
    }
    if st.stated.is_none() && sr.sigma_res * DIFF_INFLATION < st.sigma_read {
        diags.push(Diagnostic::note(format!(
            "the readings scatter about the fitted design by {:.2} mm, less than the reading noise of {:.2} mm estimated from differences: joints close together inflate that estimate; the fit uses {:.2} mm{}",
            sr.sigma_res * 1e3,
            st.sigma_read * 1e3,
            sr.sigma_res * 1e3,
            match clean {
                Some((c, _)) => format!(
                    ", its chi-square test {:.2} mm from the differences clear of the fitted joints",
                    c * 1e3
                ),
                None => ", and so does its chi-square test".to_string(),
            }
        )));
    }
    if let Some((b, se)) = sr.bias
        && !sr.bias_removed
        && (b / se).abs() > BIAS_Z
    {
        let a = st.input.a;
        diags.push(
            Diagnostic::warning(format!(
                "the straights read a mean versine of {:.2} mm (standard error {:.2} mm): a constant reading offset, as from a handle or wire offset, would make a false curve of radius {:.0} m",
                b * 1e3,
                se * 1e3,
                (a * a / (2.0 * b)).abs()
            ))
            .hint("check the gauge or wire offset; the fit can subtract it (remove_bias)"),
        );
    }
}

/// The reading standard deviation the chi-square test uses: stated, else the
/// reading noise, unless the residuals show that figure inflated.
fn test_sd(st: &Settings, sr: &Searched) -> f64 {
    match st.stated {
        Some(x) => x,
        None if sr.sigma_res * DIFF_INFLATION < st.sigma_read => sr.sigma_res,
        None => st.sigma_read,
    }
}

/// The stretch of about one chord where the residuals are largest: (start,
/// end chainage, RMS there).
fn worst_window(s: &[f64], resid: &[f64], w: usize) -> (f64, f64, f64) {
    let n = resid.len();
    let w = w.clamp(1, n);
    let mut acc: f64 = resid[..w].iter().map(|r| r * r).sum();
    let (mut best, mut at) = (acc, 0);
    for i in w..n {
        acc += resid[i] * resid[i] - resid[i - w] * resid[i - w];
        if acc > best {
            best = acc;
            at = i + 1 - w;
        }
    }
    (s[at], s[at + w - 1], (best.max(0.0) / w as f64).sqrt())
}

#[allow(clippy::too_many_arguments)]
fn fit_stats(
    st: &Settings,
    sr: &Searched,
    resid: &[f64],
    rss: f64,
    (dof, p_free): (f64, usize),
    lag1: f64,
    clean: Option<(f64, f64)>,
    diags: &mut Vec<Diagnostic>,
) -> FitStats {
    let s = &sr.s;
    let n = s.len();
    let (mut rmax, mut rmax_s) = (0.0, s[0]);
    for (r, &x) in resid.iter().zip(s) {
        if r.abs() > rmax {
            rmax = r.abs();
            rmax_s = x;
        }
    }
    // Against a stated figure, a chi-square test; against the noise of the
    // design-free third differences, the same allowing for that estimate's
    // own scatter (a variance ratio).
    let chi2_sd = clean.map_or_else(|| test_sd(st, sr), |c| c.0.max(NOISE_FLOOR));
    let reading_sd = st.stated.unwrap_or(chi2_sd.max(sr.sigma_res));
    let chi2_stat = rss / (chi2_sd * chi2_sd);
    let chi2_p = match clean {
        Some((_, nu)) => stats::f_upper(chi2_stat / dof, dof, nu),
        None => stats::chi2_upper(chi2_stat, dof),
    };
    if chi2_p < CHI2_ALARM {
        let w = (st.input.chord / st.input.spacing).round().max(3.0) as usize;
        let (lo, hi, rms) = worst_window(s, resid, w);
        diags.push(
            Diagnostic::warning(format!(
                "the fitted design does not explain the readings: residual RMS {:.2} mm against {} reading noise of {:.2} mm (chi-square p = {:.1e}); the misfit is largest from {:.1} m to {:.1} m (RMS {:.2} mm there)",
                (rss / n as f64).sqrt() * 1e3,
                if st.stated.is_some() { "the stated" } else { "the estimated" },
                chi2_sd * 1e3,
                chi2_p,
                lo,
                hi,
                rms * 1e3
            ))
            .hint("look there for an element the fit missed, track irregularity or a run of misread values; the elements there are less certain than their intervals say"),
        );
    }
    let worst = sr
        .fits
        .iter()
        .map(|g| g.termination)
        .max_by_key(|t| match t {
            lm::Termination::Converged => 0,
            lm::Termination::NoImprovingStep => 1,
            lm::Termination::IterationLimit => 2,
        })
        .unwrap_or(lm::Termination::Converged);
    if worst == lm::Termination::IterationLimit {
        diags.push(
            Diagnostic::warning(format!(
                "the element fit stopped at its iteration limit ({}) in at least one curve; boundaries there may be less accurate than their intervals say",
                st.opts.max_iterations
            ))
            .hint("raise max_iterations, or check the survey for a gap or a blunder in that curve"),
        );
    }
    let ln_n = (n as f64).ln() * st.opts.penalty;
    FitStats {
        n,
        p: p_free,
        rss,
        residual_rms: (rss / n as f64).sqrt(),
        residual_max: (rmax, rmax_s),
        sigma_white: st.sigma_read,
        sigma_residual: sr.sigma_res,
        sigma_scales: sr.straights.scales.clone(),
        sigma_penalty: sr.sigma_pen,
        reading_sd,
        chi2_sd,
        reading_sd_stated: st.stated.is_some(),
        chi2: (chi2_stat, dof, chi2_p),
        bias: sr.bias,
        bias_removed: sr.bias_removed,
        lag1,
        bic: rss / (sr.sigma_pen * sr.sigma_pen) + p_free as f64 * ln_n,
        groups: sr.fits.len(),
        converged: worst == lm::Termination::Converged,
        termination: worst,
    }
}

/// Chainage, design versine (field convention) and residual at every
/// reading of the survey, gaps included.
fn per_reading(
    plan: &Plan,
    st: &Settings,
    sr: &Searched,
) -> (Vec<f64>, Vec<f64>, Vec<Option<f64>>) {
    let inp = st.input;
    let shift = if sr.bias_removed {
        sr.bias.map_or(0.0, |b| b.0)
    } else {
        0.0
    };
    let n = plan.stations.len();
    let mut chainages = Vec::with_capacity(n);
    let mut design_versine = Vec::with_capacity(n);
    let mut residual = Vec::with_capacity(n);
    for r in &plan.stations {
        let dv = sr.chain.versine_arms(r.chainage, inp.arms, inp.eps) + shift;
        chainages.push(r.chainage);
        design_versine.push(r.rail.chord_side(dv));
        residual.push(
            r.versine
                .map(|v| r.rail.chord_side(v))
                .filter(|o| o.is_finite())
                .map(|o| r.rail.chord_side(o - dv)),
        );
    }
    (chainages, design_versine, residual)
}
