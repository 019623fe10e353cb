//! Element fitting: straights, clothoid transitions and arcs by least squares
//! in versine (chord) space.
//!
//! # Method
//! 1. **Noise.** The white reading noise is estimated from second differences;
//!    a coarse first partition finds the long straights, on which the noise is
//!    measured again at the scale of elements (¼ chord to 4 chords). Track
//!    irregularity makes the element-scale noise larger than the white noise;
//!    the larger value sets every penalty, so irregularities never become
//!    elements. A constant reading bias is estimated on the same straights.
//! 2. **Initial partition** ([`segment`]): a typed penalised optimal partition
//!    of the curvature estimate `k̂ = 2v/a²` into straights, arcs and ramps.
//! 3. **Chord-space fit** ([`lm`]): the partition becomes a continuous
//!    piecewise-linear curvature diagram whose versines are predicted exactly as
//!    the chord measures them ([`model`]); Levenberg–Marquardt refines every
//!    boundary and arc curvature, curve by curve (curves separated by straights
//!    longer than two chords are independent).
//! 4. **Element count.** Bottom-up moves (drop a short plateau, hold an arc at
//!    zero, merge two equal plateaus) are accepted while the Bayesian
//!    information criterion `RSS/σ² + p ln n` falls.
//! 5. **Uncertainty** ([`stats`]): covariance `(JᵀJ)⁻¹JᵀΓJ(JᵀJ)⁻¹` with the
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

pub mod lm;
pub mod model;
pub mod segment;
pub mod stats;

use crate::diag::Diagnostic;
use crate::geometry::{Alignment, Element, ElementKind, Pose};
use crate::survey::{Rail, Setup, Survey};
use model::{Chain, Level};
use nalgebra::DMatrix;

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
    /// Threads for fitting independent curves of long surveys (`None`: one
    /// per processor). The result does not depend on it.
    pub threads: Option<usize>,
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
    /// Chainages are not finite and strictly increasing.
    #[error(
        "chainage {chainage} m at line {line} of {source_name} is not a number above the one before; sort and check the survey"
    )]
    Unsorted {
        /// Where the survey came from.
        source_name: String,
        /// The offending chainage.
        chainage: f64,
        /// Its line.
        line: usize,
    },
}

/// An estimate with its standard error and 95 % interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate {
    /// Value.
    pub value: f64,
    /// Standard error (0 when the value is fixed, e.g. the survey end).
    pub se: f64,
    /// Lower end of the 95 % interval.
    pub lo95: f64,
    /// Upper end of the 95 % interval.
    pub hi95: f64,
}

impl Estimate {
    fn new(value: f64, se: f64, t: f64) -> Self {
        let se = if se.is_finite() { se } else { 0.0 };
        Estimate {
            value,
            se,
            lo95: value - t * se,
            hi95: value + t * se,
        }
    }
}

/// Whether an element is resolved by the data.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ElementStatus {
    /// Determined: the 95 % interval is informative.
    Determined,
    /// The chord cannot resolve it: read the interval, not the value.
    Indeterminate,
}

impl ElementStatus {
    /// `determined` or `indeterminate`.
    pub fn name(self) -> &'static str {
        match self {
            ElementStatus::Determined => "determined",
            ElementStatus::Indeterminate => "indeterminate",
        }
    }
}

/// One fitted element.
#[derive(Debug, Clone, PartialEq)]
pub struct FittedElement {
    /// Straight, transition or arc.
    pub kind: ElementKind,
    /// Start, survey chainage along the measured rail (m).
    pub start_chainage: Estimate,
    /// End, survey chainage (m).
    pub end_chainage: Estimate,
    /// Whether the start is the survey's end rather than a fitted boundary.
    pub starts_at_survey_end: bool,
    /// Whether the end is the survey's end rather than a fitted boundary.
    pub ends_at_survey_end: bool,
    /// Centreline length (m).
    pub length: Estimate,
    /// Signed centreline radius at the start (m, positive curving left); `None` for zero curvature.
    pub start_radius: Option<Estimate>,
    /// Signed centreline radius at the end (m); `None` for zero curvature.
    pub end_radius: Option<Estimate>,
    /// Centreline curvature at the start (1/m).
    pub start_curvature: f64,
    /// Centreline curvature at the end (1/m).
    pub end_curvature: f64,
    /// Readings inside the element.
    pub readings: usize,
    /// RMS of the versine residuals inside the element (m).
    pub residual_rms: f64,
    /// Largest absolute versine residual inside the element (m).
    pub residual_max: f64,
    /// Whether the data resolve it.
    pub status: ElementStatus,
    /// Free text for the engineer (empty if nothing to say).
    pub note: String,
}

/// Statistics of the whole fit.
#[derive(Debug, Clone, PartialEq)]
pub struct FitStats {
    /// Readings used.
    pub n: usize,
    /// Parameters fitted.
    pub p: usize,
    /// Residual sum of squares (m²).
    pub rss: f64,
    /// RMS residual (m).
    pub residual_rms: f64,
    /// Largest absolute residual (m) and its chainage.
    pub residual_max: (f64, f64),
    /// White reading noise estimated from second differences (m).
    pub sigma_white: f64,
    /// Element-scale noise on the straights: (window length m, σ m).
    pub sigma_scales: Vec<(f64, f64)>,
    /// Noise used for the penalty (m).
    pub sigma_penalty: f64,
    /// Reading standard deviation the chi-square test uses (m).
    pub reading_sd: f64,
    /// Whether `reading_sd` was stated (true) or estimated (false).
    pub reading_sd_stated: bool,
    /// Chi-square statistic `RSS/σ²`, its degrees of freedom and upper-tail probability.
    pub chi2: (f64, f64, f64),
    /// Reading bias estimated on the straights (m), its standard error, and
    /// whether it was removed.
    pub bias: Option<(f64, f64)>,
    /// Whether the bias was subtracted before the fit.
    pub bias_removed: bool,
    /// Lag-1 autocorrelation of the residuals.
    pub lag1: f64,
    /// Bayesian information criterion of the final model.
    pub bic: f64,
    /// Independent curve groups fitted.
    pub groups: usize,
    /// Whether every Levenberg–Marquardt fit converged.
    pub converged: bool,
}

/// Design values at one survey station (one row of `stations.csv`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StationDesign {
    /// Survey chainage (m).
    pub chainage: f64,
    /// Design versine, field convention (positive: rail bows away from the wire), m.
    pub design_versine: f64,
    /// Observed minus design versine (m); `None` in a gap.
    pub residual: Option<f64>,
    /// Design centreline easting (m), local frame.
    pub x: f64,
    /// Design centreline northing (m), local frame.
    pub y: f64,
}

/// The result of [`fit`].
#[derive(Debug, Clone)]
pub struct FitResult {
    /// The fitted elements, end to end.
    pub elements: Vec<FittedElement>,
    /// The design centreline (centreline lengths and curvatures), from the
    /// origin heading east; [`FitResult::place`] puts it in the plan. Its
    /// `start_chainage` is the survey chainage of its start; distances along
    /// it are centreline distances ([`FitResult::centre_distance`] converts a
    /// survey chainage).
    pub design: Alignment,
    /// Whole-fit statistics.
    pub stats: FitStats,
    /// Survey chainage of the design's start.
    pub start_chainage: f64,
    /// Chainage of every survey reading (including gaps), m.
    pub chainages: Vec<f64>,
    /// Design versine (field convention) at every reading, m.
    pub design_versine: Vec<f64>,
    /// Observed minus design versine at every reading (None in a gap), m.
    pub residual: Vec<Option<f64>>,
    chain: Chain,
    rail_offset: f64,
    /// Knots of the piecewise-linear rail curvature from the design start:
    /// (chainage, centreline distance there, rail curvature there), for
    /// [`FitResult::centre_distance`] in O(log n).
    centre_knots: Vec<(f64, f64, f64)>,
}

/// What a move in the simplification does.
#[derive(Debug, Clone, Copy)]
enum Move {
    /// Hold an arc's curvature at zero: it becomes a straight.
    ZeroLevel(usize),
    /// Remove an interior plateau: its two ramps become one.
    DropPlateau(usize),
    /// Remove a ramp between two equal plateaus: they become one.
    MergeRamp(usize),
    /// Hold a ramp at zero length: a curvature step.
    CollapseRamp(usize),
    /// Hold an interior plateau at zero length: the ramps either side meet.
    JoinPlateau(usize),
}

fn apply_move(c: &Chain, mv: Move) -> Option<Chain> {
    let mut c = c.clone();
    let last = c.levels.len() - 1;
    match mv {
        Move::ZeroLevel(i) => {
            if !c.levels[i].is_free() {
                return None;
            }
            c.levels[i] = Level::Zero;
        }
        Move::DropPlateau(i) => {
            if i == 0 || i >= last {
                return None;
            }
            let b0 = c.ramp_start(i - 1);
            let b1 = c.ramp_end(i);
            c.levels.remove(i);
            c.joined.remove(i);
            c.mids.remove(i);
            c.lens.remove(i);
            c.held.remove(i);
            c.mids[i - 1] = 0.5 * (b0 + b1);
            c.lens[i - 1] = b1 - b0;
            c.held[i - 1] = false;
        }
        Move::MergeRamp(j) => {
            let (l0, l1) = (c.levels[j], c.levels[j + 1]);
            let merged = match (l0, l1) {
                (Level::Zero, Level::Zero) => Level::Zero,
                (Level::Free(x), Level::Free(y)) => Level::Free(0.5 * (x + y)),
                _ => return None,
            };
            c.levels[j] = merged;
            c.levels.remove(j + 1);
            c.joined.remove(j + 1);
            c.joined[j] = false;
            c.mids.remove(j);
            c.lens.remove(j);
            c.held.remove(j);
        }
        Move::CollapseRamp(j) => {
            if c.held[j] {
                return None;
            }
            c.held[j] = true;
            c.lens[j] = 0.0;
        }
        Move::JoinPlateau(i) => {
            // Only an inflection (zero curvature) may be a point: a kink
            // between two transitions at non-zero curvature is no trade element.
            if i == 0 || i >= last || c.joined[i] || c.levels[i] != Level::Zero {
                return None;
            }
            c.joined[i] = true;
            // Meet half-way.
            let gap = c.ramp_start(i) - c.ramp_end(i - 1);
            c.mids[i - 1] += 0.5 * gap;
            c.mids[i] -= 0.5 * gap;
        }
    }
    Some(c)
}

fn n_params(c: &Chain) -> usize {
    lm::reduce_map(c).ncols()
}

fn all_moves(c: &Chain) -> Vec<Move> {
    let mut moves = Vec::new();
    for i in 0..c.levels.len() {
        moves.push(Move::ZeroLevel(i));
        moves.push(Move::DropPlateau(i));
    }
    for j in 0..c.ramps() {
        moves.push(Move::MergeRamp(j));
        moves.push(Move::CollapseRamp(j));
    }
    for i in 1..c.levels.len().saturating_sub(1) {
        moves.push(Move::JoinPlateau(i));
    }
    moves
}

/// Middle of plateau `i` (chainage); the ends extend one metre past the ramps.
fn plateau_mid(c: &Chain, i: usize) -> f64 {
    let m = c.ramps();
    if m == 0 {
        return 0.0;
    }
    let lo = if i == 0 {
        c.ramp_start(0) - 1.0
    } else {
        c.ramp_end(i - 1)
    };
    let hi = if i >= m {
        c.ramp_end(m - 1) + 1.0
    } else {
        c.ramp_start(i)
    };
    0.5 * (lo + hi)
}

/// Where a move acts, as a chainage, to find it again after other moves.
fn move_anchor(c: &Chain, mv: Move) -> f64 {
    match mv {
        Move::ZeroLevel(i) | Move::DropPlateau(i) | Move::JoinPlateau(i) => plateau_mid(c, i),
        Move::MergeRamp(j) | Move::CollapseRamp(j) => c.mids[j],
    }
}

/// The same kind of move on the element of `c` nearest to `anchor`.
fn locate_move(c: &Chain, mv: Move, anchor: f64) -> Option<Move> {
    let nearest = |n: usize, f: &dyn Fn(usize) -> f64| {
        (0..n).min_by(|&x, &y| (f(x) - anchor).abs().total_cmp(&(f(y) - anchor).abs()))
    };
    match mv {
        Move::ZeroLevel(_) | Move::DropPlateau(_) | Move::JoinPlateau(_) => {
            let i = nearest(c.levels.len(), &|i| plateau_mid(c, i))?;
            Some(match mv {
                Move::ZeroLevel(_) => Move::ZeroLevel(i),
                Move::DropPlateau(_) => Move::DropPlateau(i),
                _ => Move::JoinPlateau(i),
            })
        }
        Move::MergeRamp(_) | Move::CollapseRamp(_) => {
            let j = nearest(c.ramps(), &|j| c.mids[j])?;
            Some(match mv {
                Move::MergeRamp(_) => Move::MergeRamp(j),
                _ => Move::CollapseRamp(j),
            })
        }
    }
}

struct GroupFit {
    chain: Chain,
    lo_idx: usize,
    hi_idx: usize,
    lo: f64,
    hi: f64,
    converged: bool,
}

/// Fit straights, transitions and arcs to a versine survey.
///
/// Returns the fitted elements with standard errors and intervals, the design
/// centreline, the design versine and residual at every reading, whole-fit
/// statistics, and diagnostics (bias, noise, indeterminate elements).
///
/// # Errors
/// [`FitError::TooFewReadings`] with fewer than 8 readings; [`FitError::BadSetup`]
/// for a non-positive chord or a negative gauge; [`FitError::Unsorted`] when
/// chainages do not increase.
///
/// # Examples
/// ```
/// use chordline::fit::{fit, FitOptions};
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
/// let (res, _diags) = fit(&sim.survey, &Setup::new(20.0, Rail::Right), &FitOptions::default()).unwrap();
/// let kinds: Vec<_> = res.elements.iter().map(|e| e.kind).collect();
/// assert_eq!(kinds, [ElementKind::Straight, ElementKind::Transition, ElementKind::Arc,
///                    ElementKind::Transition, ElementKind::Straight]);
/// let r = res.elements[2].start_radius.unwrap().value;
/// assert!((r - 450.0).abs() < 0.05, "{r}");
/// ```
pub fn fit(
    survey: &Survey,
    setup: &Setup,
    opts: &FitOptions,
) -> Result<(FitResult, Vec<Diagnostic>), FitError> {
    let mut diags = Vec::new();
    if !(setup.chord.is_finite() && setup.chord > 0.0) {
        return Err(FitError::BadSetup {
            what: "chord",
            value: setup.chord,
        });
    }
    if !(setup.gauge.is_finite() && setup.gauge >= 0.0) {
        return Err(FitError::BadSetup {
            what: "gauge",
            value: setup.gauge,
        });
    }
    if let Some(r) = survey.readings.iter().find(|r| !r.chainage.is_finite()) {
        return Err(FitError::Unsorted {
            source_name: survey.source.clone(),
            chainage: r.chainage,
            line: r.line,
        });
    }
    for w in survey.readings.windows(2) {
        if w[1].chainage.partial_cmp(&w[0].chainage) != Some(std::cmp::Ordering::Greater) {
            return Err(FitError::Unsorted {
                source_name: survey.source.clone(),
                chainage: w[1].chainage,
                line: w[1].line,
            });
        }
    }
    let chord = setup.chord;
    let a = 0.5 * chord;
    let eps = model::marking_epsilon(setup.marking);
    let mut s = Vec::new();
    let mut v = Vec::new();
    let mut n_left = 0usize;
    for r in &survey.readings {
        if let Some(x) = r.chord_side()
            && x.is_finite()
            && r.chainage.is_finite()
        {
            s.push(r.chainage);
            v.push(x);
            if r.rail == Rail::Left {
                n_left += 1;
            }
        }
    }
    const NEEDED: usize = 8;
    if s.len() < NEEDED {
        return Err(FitError::TooFewReadings {
            source_name: survey.source.clone(),
            found: s.len(),
            needed: NEEDED,
        });
    }
    let n = s.len();
    let rail = if survey.has_side_column {
        if n_left * 2 >= n {
            Rail::Left
        } else {
            Rail::Right
        }
    } else {
        setup.rail
    };
    if survey.has_side_column && n_left != 0 && n_left != n {
        diags.push(Diagnostic::warning(
            "readings were taken on both rails; the element fit uses one rail chainage and converts radii with the rail most readings were on",
        ));
    }
    let d_off = rail.offset_left(setup.gauge);
    let mut gaps: Vec<f64> = s.windows(2).map(|w| w[1] - w[0]).collect();
    let mid = gaps.len() / 2;
    gaps.select_nth_unstable_by(mid, |x, y| x.total_cmp(y));
    let spacing = gaps[mid];
    // Floor: 0.01 mm, far below any real reading, keeps noise-free input sane.
    let sigma_white = segment::white_sigma(&v).max(1e-5);
    let stated = opts.reading_sd.or(setup.reading_sd);
    let sigma0 = stated.unwrap_or(sigma_white).max(sigma_white);
    let kest: Vec<f64> = v.iter().map(|x| 2.0 * x / (a * a)).collect();
    let bin = opts.bin.unwrap_or(0.25 * chord).max(spacing * 0.999);
    let min_ramp = opts.min_ramp.unwrap_or(chord);
    let base = segment::DpOptions {
        bin: 4.0 * bin,
        sigma_k: 5.0 * 2.0 * sigma0 / (a * a),
        log_n: opts.penalty,
        min_straight: opts.min_straight,
        min_arc: opts.min_arc,
        min_ramp,
        max_ramp: opts.max_ramp.max(min_ramp),
    };
    // Pass 0: long straights.
    let segs0 = segment::typed_partition(&s, &kest, &base);
    let trim = 1.5 * chord;
    let mut runs: Vec<(usize, usize)> = Vec::new();
    for sg in segs0.iter().filter(|g| g.kind == segment::SegKind::S) {
        let lo = sg.start + trim;
        let hi = sg.end - trim;
        if hi - lo < chord {
            continue;
        }
        let i0 = s.partition_point(|&x| x < lo);
        let i1 = s.partition_point(|&x| x <= hi);
        if i1 > i0 + 3 {
            runs.push((i0, i1));
        }
    }
    let straight_n: usize = runs.iter().map(|(i, j)| j - i).sum();
    let mut bias = None;
    if straight_n >= 10 {
        let sum: f64 = runs.iter().flat_map(|&(i, j)| &v[i..j]).sum();
        let mean = sum / straight_n as f64;
        bias = Some(mean);
    }
    let slices: Vec<&[f64]> = runs.iter().map(|&(i, j)| &v[i..j]).collect();
    let mut sigma_scales = Vec::new();
    for f in [0.25, 0.5, 1.0, 2.0, 4.0] {
        let l = f * chord;
        let m = (l / spacing).round().max(1.0) as usize;
        if let Some(sg) = segment::scale_sigma(&slices, m) {
            sigma_scales.push((m as f64 * spacing, sg));
        }
    }
    let sigma_eff = sigma_scales.iter().map(|x| x.1).fold(0.0, f64::max);
    let sigma_pen = sigma0.max(sigma_eff);
    let bias = bias.map(|b| {
        let se = sigma_eff.max(sigma0) / (straight_n as f64).sqrt();
        (b, se)
    });
    if sigma_scales.is_empty() {
        diags.push(Diagnostic::note(
            "no long straight in the survey: the element-scale noise could not be measured, the white noise sets the penalties",
        ).hint("irregular track may then show as extra short elements; state --reading-sd or survey some straight track"));
    } else if sigma_eff > 2.0 * sigma0 {
        diags.push(Diagnostic::note(format!(
            "the readings on the straights scatter {:.1} times more at element scale than reading noise alone (track irregularity); penalties use {:.2} mm",
            sigma_eff / sigma0,
            sigma_pen * 1e3
        )));
    }
    let mut bias_removed = false;
    if let Some((b, se)) = bias {
        if opts.remove_bias {
            for x in v.iter_mut() {
                *x -= b;
            }
            bias_removed = true;
        } else if (b / se).abs() > 3.0 {
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
    // Pass 1.
    let kest: Vec<f64> = v.iter().map(|x| 2.0 * x / (a * a)).collect();
    let sigma_k = 2.0 * sigma_pen / (a * a);
    let o1 = segment::DpOptions {
        bin,
        sigma_k,
        ..base
    };
    let segs = segment::typed_partition(&s, &kest, &o1);
    let zero_tol = 3.0 * sigma_k / (chord / spacing).max(1.0).sqrt();
    let mut chain = segment::chain_from_segments(&segs, zero_tol, 0.25 * chord);
    let s_first = s[0];
    let s_last = s[n - 1];
    let ln_n = (n as f64).ln() * opts.penalty;
    let s2pen = sigma_pen * sigma_pen;
    let rss_tol = 1e-3 * sigma_white * sigma_white;

    // Groups separated by long straights.
    let groups = split_groups(&chain, chord);
    // Curves separated by long straights are independent: fit them on all
    // cores for long surveys (scoped threads, results in order).
    let fit_group = |&(j0, j1): &(usize, usize)| -> GroupFit {
        let sub = chain.sub(j0, j1);
        let w_lo = if j0 == 0 {
            f64::NEG_INFINITY
        } else {
            0.5 * (chain.ramp_end(j0 - 1) + chain.ramp_start(j0))
        };
        let w_hi = if j1 == chain.ramps() {
            f64::INFINITY
        } else {
            0.5 * (chain.ramp_end(j1 - 1) + chain.ramp_start(j1))
        };
        // Readings far out on a long straight read zero under every model
        // of this group: leave them out (they add the same RSS to all).
        let last = sub.levels.len() - 1;
        let (mut w_lo, mut w_hi) = (w_lo, w_hi);
        if sub.ramps() > 0 && sub.levels[0] == Level::Zero {
            w_lo = w_lo.max(sub.ramp_start(0) - 3.0 * chord);
        }
        if sub.ramps() > 0 && sub.levels[last] == Level::Zero {
            w_hi = w_hi.min(sub.ramp_end(sub.ramps() - 1) + 3.0 * chord);
        }
        let lo_idx = s.partition_point(|&x| x < w_lo);
        let hi_idx = s.partition_point(|&x| x < w_hi);
        let lo = w_lo.max(s_first - a);
        let hi = w_hi.min(s_last + a);
        let data = lm::Data {
            s: &s[lo_idx..hi_idx],
            v: &v[lo_idx..hi_idx],
            a,
            eps,
            lo,
            hi,
            rss_tol,
        };
        let mut sub = sub;
        let mut out = lm::fit(&mut sub, &data, opts.max_iterations);
        // Bottom-up simplification under BIC. Each round evaluates every
        // move, accepts the best, then tries the other improving moves in
        // order of gain on the updated chain (found again by chainage), so a
        // curve with several spurious pieces needs few rounds.
        let bic_of = |o: &lm::Outcome, c: &Chain| o.rss / s2pen + n_params(c) as f64 * ln_n;
        loop {
            let bic0 = bic_of(&out, &sub);
            let mut improving: Vec<(f64, Move, f64, Chain, lm::Outcome)> = Vec::new();
            for mv in all_moves(&sub) {
                if let Some(mut c2) = apply_move(&sub, mv) {
                    // A short fit first; only promising moves get a full one.
                    let mut o2 = lm::fit(&mut c2, &data, 8);
                    if bic_of(&o2, &c2) > bic0 + 2.0 * ln_n.max(1.0) {
                        continue;
                    }
                    if !o2.converged {
                        o2 = lm::fit(&mut c2, &data, opts.max_iterations);
                    }
                    let bic = bic_of(&o2, &c2);
                    if bic < bic0 {
                        improving.push((bic, mv, move_anchor(&sub, mv), c2, o2));
                    }
                }
            }
            if improving.is_empty() {
                break;
            }
            improving.sort_by(|x, y| x.0.total_cmp(&y.0));
            let mut it = improving.into_iter();
            let Some((_, _, _, c_best, o_best)) = it.next() else {
                break;
            };
            sub = c_best;
            out = o_best;
            for (_, mv, anchor, _, _) in it {
                let Some(mv2) = locate_move(&sub, mv, anchor) else {
                    continue;
                };
                if let Some(mut c2) = apply_move(&sub, mv2) {
                    let o2 = lm::fit(&mut c2, &data, opts.max_iterations);
                    if bic_of(&o2, &c2) < bic_of(&out, &sub) {
                        sub = c2;
                        out = o2;
                    }
                }
            }
        }
        GroupFit {
            chain: sub,
            lo_idx,
            hi_idx,
            lo,
            hi,
            converged: out.converged,
        }
    };
    let threads = opts
        .threads
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |x| x.get()))
        .max(1)
        .min(groups.len());
    let mut fits: Vec<GroupFit> = if threads <= 1 || n < 20_000 {
        groups.iter().map(fit_group).collect()
    } else {
        // Interleave the curves over the threads (neighbouring curves are
        // often alike in cost), then put the results back in order.
        let mut done: Vec<(usize, GroupFit)> = std::thread::scope(|sc| {
            let handles: Vec<_> = (0..threads)
                .map(|k| {
                    let groups = &groups;
                    let fit_group = &fit_group;
                    sc.spawn(move || {
                        (k..groups.len())
                            .step_by(threads)
                            .map(|i| (i, fit_group(&groups[i])))
                            .collect::<Vec<_>>()
                    })
                })
                .collect();
            handles
                .into_iter()
                .flat_map(|h| match h.join() {
                    Ok(v) => v,
                    Err(e) => std::panic::resume_unwind(e),
                })
                .collect()
        });
        done.sort_by_key(|x| x.0);
        done.into_iter().map(|x| x.1).collect()
    };
    // Reassemble.
    // A ramp the fit shrank to (almost) nothing is a step: hold it there.
    for g in fits.iter_mut() {
        for j in 0..g.chain.ramps() {
            if g.chain.lens[j] < 1e-3 {
                g.chain.lens[j] = 0.0;
                g.chain.held[j] = true;
            }
        }
    }
    let mut levels = Vec::new();
    let mut mids = Vec::new();
    let mut lens = Vec::new();
    let mut held = Vec::new();
    let mut joined = Vec::new();
    for (gi, g) in fits.iter().enumerate() {
        let skip = usize::from(gi > 0);
        levels.extend_from_slice(&g.chain.levels[skip..]);
        joined.extend_from_slice(&g.chain.joined[skip..]);
        mids.extend_from_slice(&g.chain.mids);
        lens.extend_from_slice(&g.chain.lens);
        held.extend_from_slice(&g.chain.held);
    }
    chain = Chain {
        levels,
        mids,
        lens,
        held,
        joined,
    };

    // Residuals.
    let model_v: Vec<f64> = s.iter().map(|&x| chain.versine(x, a, eps)).collect();
    let resid: Vec<f64> = v.iter().zip(&model_v).map(|(o, m)| o - m).collect();
    let rss: f64 = resid.iter().map(|r| r * r).sum();
    let h_max = ((3.0 * chord / spacing).round() as usize).clamp(1, 800);
    let gamma_res = stats::autocovariance(&[&resid], h_max);
    let lag1 = if gamma_res[0] > 0.0 && gamma_res.len() > 1 {
        gamma_res[1] / gamma_res[0]
    } else {
        0.0
    };
    // The noise autocovariance for the sandwich: from the long straights,
    // where the truth is known to be zero, when there is enough of them (fit
    // residuals are biased towards negative correlation by the fit itself);
    // otherwise from the residuals.
    let straight_runs: Vec<Vec<f64>> = runs
        .iter()
        .map(|&(i, j)| {
            let m = v[i..j].iter().sum::<f64>() / (j - i) as f64;
            v[i..j].iter().map(|x| x - m).collect()
        })
        .collect();
    let gamma_from_straights = straight_n >= (4 * h_max).max(50);
    let gamma = if gamma_from_straights {
        let sl: Vec<&[f64]> = straight_runs.iter().map(|r| r.as_slice()).collect();
        stats::autocovariance(&sl, h_max)
    } else {
        gamma_res.clone()
    };
    let p_guess: usize = fits.iter().map(|g| n_params(&g.chain)).sum();
    let s2_ols = rss / (n as f64 - p_guess as f64).max(1.0);

    // Covariance per group, assembled into a global parameter list.
    let mut gparams: Vec<(usize, lm::Param)> = Vec::new(); // (group, global param)
    let mut blocks: Vec<(usize, DMatrix<f64>)> = Vec::new(); // (first global index, cov)
    let mut ramp_off = 0usize;
    let mut collapsed: Vec<bool> = Vec::new();
    let mut p_free = 0usize;
    for (gi, g) in fits.iter().enumerate() {
        collapsed.extend(
            g.chain
                .held
                .iter()
                .zip(&g.chain.lens)
                .map(|(h, l)| *h && *l == 0.0),
        );
        let par = lm::full_params(&g.chain);
        let tm = lm::reduce_map(&g.chain);
        p_free += tm.ncols();
        let data = lm::Data {
            s: &s[g.lo_idx..g.hi_idx],
            v: &v[g.lo_idx..g.hi_idx],
            a,
            eps,
            lo: g.lo,
            hi: g.hi,
            rss_tol,
        };
        let (_, jf) = lm::jacobian(&g.chain, &par, &data);
        let jr = &jf * &tm;
        // Correlation-robust covariance, never below the ordinary one: with
        // white noise the two agree, and a noisy autocovariance estimate must
        // not make the intervals narrower than the residual scatter allows.
        let cov = match (
            stats::sandwich(&jr, &gamma),
            stats::sandwich(&jr, &[s2_ols]),
        ) {
            (Some(sw), Some(ols)) => {
                let k = sw.nrows();
                let ratio = (0..k)
                    .filter(|&i| ols[(i, i)] > 0.0)
                    .map(|i| sw[(i, i)] / ols[(i, i)])
                    .sum::<f64>()
                    / k.max(1) as f64;
                // A flat window can make a variance implausibly small (or
                // negative): then the ordinary covariance is used.
                let sane = (0..k).all(|i| sw[(i, i)] >= 0.25 * ols[(i, i)]);
                let c = if ratio >= 1.0 && sane { sw } else { ols };
                &tm * c * tm.transpose()
            }
            _ => DMatrix::from_diagonal_element(par.len(), par.len(), f64::INFINITY),
        };
        let first = gparams.len();
        for p in &par {
            let gp = match *p {
                lm::Param::Mid(j) => lm::Param::Mid(j + ramp_off),
                lm::Param::Len(j) => lm::Param::Len(j + ramp_off),
                lm::Param::Level(i) => lm::Param::Level(i + ramp_off),
            };
            gparams.push((gi, gp));
        }
        blocks.push((first, cov));
        ramp_off += g.chain.ramps();
    }
    let p_total = gparams.len();
    let mut cov = DMatrix::zeros(p_total, p_total);
    for (first, c) in &blocks {
        let k = c.nrows();
        cov.view_mut((*first, *first), (k, k)).copy_from(c);
    }
    let index_of = |p: lm::Param| gparams.iter().position(|(_, q)| *q == p);
    let dof = (n as f64 - p_free as f64).max(1.0);
    let t = stats::t95(dof);
    let var_of = |grad: &[(lm::Param, f64)]| -> f64 {
        let idx: Vec<(usize, f64)> = grad
            .iter()
            .filter_map(|&(p, g)| index_of(p).map(|i| (i, g)))
            .collect();
        let mut var = 0.0;
        for &(i, gi) in &idx {
            for &(k, gk) in &idx {
                var += gi * gk * cov[(i, k)];
            }
        }
        var.max(0.0)
    };

    // Elements.
    let m = chain.ramps();
    let start_s = if m > 0 {
        s_first.min(chain.ramp_start(0))
    } else {
        s_first
    };
    let end_s = if m > 0 {
        s_last.max(chain.ramp_end(m - 1))
    } else {
        s_last
    };
    // Knot k: 2j = start of ramp j, 2j+1 = end; gradients in (mid, len).
    let knot_grad = |k: usize| -> Vec<(lm::Param, f64)> {
        let j = k / 2;
        let sign = if k.is_multiple_of(2) { -0.5 } else { 0.5 };
        vec![(lm::Param::Mid(j), 1.0), (lm::Param::Len(j), sign)]
    };
    let knot = |k: usize| -> f64 {
        let j = k / 2;
        if k.is_multiple_of(2) {
            chain.ramp_start(j)
        } else {
            chain.ramp_end(j)
        }
    };
    let centre_k = |k: f64| k / (1.0 + d_off * k);
    let radius_est = |lvl: usize| -> Option<Estimate> {
        let k = chain.levels[lvl].value();
        if k == 0.0 {
            return None;
        }
        let r = 1.0 / centre_k(k);
        let var = var_of(&[(lm::Param::Level(lvl), 1.0 / (k * k))]);
        Some(Estimate::new(r, var.sqrt(), t))
    };
    let mut elements: Vec<FittedElement> = Vec::new();
    let mut design_elems: Vec<Element> = Vec::new();
    let mut pending_note: Option<String> = None;
    // Pieces: plateau i spans [knot(2i-1), knot(2i)], ramp j spans [knot(2j), knot(2j+1)].
    for piece in 0..(2 * m + 1) {
        let is_ramp = piece % 2 == 1;
        let (k0i, k1i) = if piece == 0 {
            (None, if m > 0 { Some(0) } else { None })
        } else if piece == 2 * m {
            (Some(2 * m - 1), None)
        } else {
            (Some(piece - 1), Some(piece))
        };
        let b0 = k0i.map(knot).unwrap_or(start_s);
        let b1 = k1i.map(knot).unwrap_or(end_s);
        let (lv0, lv1) = if is_ramp {
            let j = piece / 2;
            (j, j + 1)
        } else {
            (piece / 2, piece / 2)
        };
        let kr0 = chain.levels[lv0].value();
        let kr1 = chain.levels[lv1].value();
        if is_ramp && collapsed[piece / 2] {
            let j = piece / 2;
            let (hi_l, fitted) = profile_upper(
                rss_tol,
                &fits,
                &s,
                &v,
                a,
                eps,
                j,
                s2pen,
                opts.max_iterations,
            );
            let what = if kr0 == 0.0 || kr1 == 0.0 {
                "no transition: the arc meets the straight directly"
            } else {
                "no transition between the arcs"
            };
            pending_note = Some(if fitted {
                format!(
                    "{what} at {:.1} m (a transition up to {:.0} m long cannot be excluded at this chord)",
                    b0, hi_l
                )
            } else {
                format!("{what} at {:.1} m", b0)
            });
            continue;
        }
        if b1 - b0 <= 1e-9 {
            continue;
        }
        let mut grad_b0 = k0i.map(knot_grad).unwrap_or_default();
        let grad_b1 = k1i.map(knot_grad).unwrap_or_default();
        let se_b0 = var_of(&grad_b0).sqrt();
        let se_b1 = var_of(&grad_b1).sqrt();
        // Centreline length L_c = (b1 − b0)(1 + d (k0 + k1)/2).
        let f = 1.0 + d_off * 0.5 * (kr0 + kr1);
        let lr = b1 - b0;
        let mut gl: Vec<(lm::Param, f64)> = grad_b1.iter().map(|&(p, g)| (p, g * f)).collect();
        for (p, g) in grad_b0.drain(..) {
            gl.push((p, -g * f));
        }
        if chain.levels[lv0].is_free() {
            gl.push((lm::Param::Level(lv0), 0.5 * d_off * lr));
        }
        if chain.levels[lv1].is_free() {
            gl.push((lm::Param::Level(lv1), 0.5 * d_off * lr));
        }
        let se_len = var_of(&gl).sqrt();
        let lc = lr * f;
        let kind = if is_ramp {
            ElementKind::Transition
        } else if chain.levels[lv0].is_free() {
            ElementKind::Arc
        } else {
            ElementKind::Straight
        };
        let i0 = s.partition_point(|&x| x < b0);
        let i1 = s.partition_point(|&x| x < b1);
        let rr = &resid[i0..i1];
        let rms = if rr.is_empty() {
            0.0
        } else {
            (rr.iter().map(|x| x * x).sum::<f64>() / rr.len() as f64).sqrt()
        };
        let rmax = rr.iter().fold(0.0f64, |mx, x| mx.max(x.abs()));
        let length = Estimate::new(lc, se_len, t);
        let start_radius = if kind == ElementKind::Straight {
            None
        } else {
            radius_est(lv0)
        };
        let end_radius = if kind == ElementKind::Straight {
            None
        } else {
            radius_est(lv1)
        };
        let mut status = ElementStatus::Determined;
        let mut notes: Vec<String> = Vec::new();
        if let Some(pn) = pending_note.take() {
            notes.push(pn);
        }
        let at_end0 = k0i.is_none();
        let at_end1 = k1i.is_none();
        if !(at_end0 || at_end1) && length.lo95 <= 0.0 {
            status = ElementStatus::Indeterminate;
            notes.push(format!(
                "length not resolved at this chord: 95 % interval {:.1} to {:.1} m",
                length.lo95.max(0.0),
                length.hi95
            ));
        }
        if kind == ElementKind::Arc
            && let Some(r) = start_radius
            && r.se > 0.25 * r.value.abs()
        {
            status = ElementStatus::Indeterminate;
            notes.push("radius poorly determined".into());
        }
        if is_ramp && kr0 * kr1 < 0.0 {
            let z = b0 + lr * kr0 / (kr0 - kr1);
            notes.push(format!(
                "one transition through zero curvature (reverse curve), inflection at {z:.1} m"
            ));
        }
        if kind != ElementKind::Straight && !(at_end0 || at_end1) && lr < 0.5 * chord {
            notes.push("shorter than half the chord".into());
        }
        if at_end0 || at_end1 {
            notes.push("cut by the survey end".into());
        }
        elements.push(FittedElement {
            kind,
            start_chainage: Estimate::new(b0, se_b0, t),
            end_chainage: Estimate::new(b1, se_b1, t),
            starts_at_survey_end: at_end0,
            ends_at_survey_end: at_end1,
            length,
            start_radius,
            end_radius,
            start_curvature: centre_k(kr0),
            end_curvature: centre_k(kr1),
            readings: rr.len(),
            residual_rms: rms,
            residual_max: rmax,
            status,
            note: notes.join("; "),
        });
        design_elems.push(Element {
            kind,
            length: lc,
            k_start: centre_k(kr0),
            k_end: centre_k(kr1),
        });
    }
    // A straight between two curves of the same hand: a broken-back curve
    // (common practice: usually undesirable; say so, do not merge it away).
    for i in 1..elements.len().saturating_sub(1) {
        if elements[i].kind != ElementKind::Straight {
            continue;
        }
        let before = elements[..i]
            .iter()
            .rev()
            .map(|e| e.start_curvature)
            .find(|k| *k != 0.0);
        let after = elements[i + 1..]
            .iter()
            .map(|e| e.end_curvature)
            .find(|k| *k != 0.0);
        if let (Some(k0), Some(k1)) = (before, after)
            && k0 * k1 > 0.0
        {
            let e = &mut elements[i];
            if !e.note.is_empty() {
                e.note.push_str("; ");
            }
            e.note
                .push_str("straight between two curves of the same hand (broken-back curve)");
        }
    }
    // Make consecutive rows join exactly.
    for i in 1..elements.len() {
        let prev_end = elements[i - 1].end_chainage;
        elements[i].start_chainage = prev_end;
    }
    for e in elements
        .iter()
        .filter(|e| e.status == ElementStatus::Indeterminate)
    {
        diags.push(
            Diagnostic::note(format!(
                "{} from {:.1} m to {:.1} m is not resolved at a {:.2} m chord: {}",
                e.kind.name(),
                e.start_chainage.value,
                e.end_chainage.value,
                chord,
                e.note
            ))
            .hint(
                "read its interval, not its value; a shorter chord or denser readings resolve it",
            ),
        );
    }
    let design = Alignment::new(Pose::default(), start_s, design_elems);

    // Whole-fit statistics.
    let (mut rmax, mut rmax_s) = (0.0, s_first);
    for (r, &x) in resid.iter().zip(&s) {
        if r.abs() > rmax {
            rmax = r.abs();
            rmax_s = x;
        }
    }
    let reading_sd = stated.unwrap_or(sigma_white);
    let chi2_stat = rss / (reading_sd * reading_sd);
    let chi2_p = stats::chi2_upper(chi2_stat, dof);
    if chi2_p < 0.001 {
        diags.push(Diagnostic::note(format!(
            "the residuals (RMS {:.2} mm) are larger than {} reading noise of {:.2} mm explains (chi-square p = {:.1e}): track irregularity or an unmodelled feature",
            (rss / n as f64).sqrt() * 1e3,
            if stated.is_some() { "the stated" } else { "the estimated" },
            reading_sd * 1e3,
            chi2_p
        )));
    }
    if fits.iter().any(|g| !g.converged) {
        diags.push(
            Diagnostic::warning(format!(
                "the element fit stopped at its iteration limit ({}) in at least one curve; boundaries there may be less accurate than their intervals say",
                opts.max_iterations
            ))
            .hint("raise max_iterations, or check the survey for a gap or a blunder in that curve"),
        );
    }
    let bic = rss / s2pen + p_free as f64 * ln_n;
    let stats_out = FitStats {
        n,
        p: p_free,
        rss,
        residual_rms: (rss / n as f64).sqrt(),
        residual_max: (rmax, rmax_s),
        sigma_white,
        sigma_scales,
        sigma_penalty: sigma_pen,
        reading_sd,
        reading_sd_stated: stated.is_some(),
        chi2: (chi2_stat, dof, chi2_p),
        bias,
        bias_removed,
        lag1,
        bic,
        groups: fits.len(),
        converged: fits.iter().all(|g| g.converged),
    };
    // Per reading, including gaps.
    let bias_shift = if bias_removed {
        bias.map(|b| b.0).unwrap_or(0.0)
    } else {
        0.0
    };
    let mut chainages = Vec::with_capacity(survey.readings.len());
    let mut design_versine = Vec::with_capacity(survey.readings.len());
    let mut residual = Vec::with_capacity(survey.readings.len());
    for r in &survey.readings {
        let dv = chain.versine(r.chainage, a, eps) + bias_shift;
        chainages.push(r.chainage);
        design_versine.push(r.rail.chord_side(dv));
        residual.push(
            r.chord_side()
                .filter(|o| o.is_finite())
                .map(|o| r.rail.chord_side(o - dv)),
        );
    }
    Ok((
        FitResult {
            elements,
            design,
            stats: stats_out,
            start_chainage: start_s,
            chainages,
            design_versine,
            residual,
            centre_knots: centre_knots(&chain, start_s, d_off),
            chain,
            rail_offset: d_off,
        },
        diags,
    ))
}

/// The knot table of [`FitResult::centre_distance`]: the centreline distance
/// `∫(1 + d k(u)) du` from `s0` at every ramp end, with `k` piecewise linear
/// between knots (exact).
fn centre_knots(c: &Chain, s0: f64, d: f64) -> Vec<(f64, f64, f64)> {
    let mut xs = vec![s0];
    for j in 0..c.ramps() {
        xs.push(c.ramp_start(j).max(s0));
        xs.push(c.ramp_end(j).max(s0));
    }
    xs.sort_by(f64::total_cmp);
    xs.dedup();
    let mut out = Vec::with_capacity(xs.len());
    let mut acc = 0.0;
    let mut prev: Option<(f64, f64)> = None;
    for x in xs {
        let k = c.curvature(x);
        if let Some((x0, k0)) = prev {
            acc += (x - x0) * (1.0 + d * 0.5 * (k0 + k));
        }
        out.push((x, acc, k));
        prev = Some((x, k));
    }
    out
}

/// Ramp index ranges `[j0, j1)` between straights longer than `2c + 10 m`.
fn split_groups(chain: &Chain, chord: f64) -> Vec<(usize, usize)> {
    let m = chain.ramps();
    let mut cuts = vec![0usize];
    for i in 1..m {
        let len = chain.ramp_start(i) - chain.ramp_end(i - 1);
        if chain.levels[i] == Level::Zero && len > 2.0 * chord + 10.0 {
            cuts.push(i);
        }
    }
    cuts.push(m);
    let mut g: Vec<(usize, usize)> = cuts.windows(2).map(|w| (w[0], w[1])).collect();
    if g.is_empty() {
        g.push((0, 0));
    }
    g
}

/// Upper 95 % profile bound on the length of collapsed ramp `j`: the length
/// at which holding it costs `3.84 σ²` of residual sum of squares.
#[allow(clippy::too_many_arguments)]
fn profile_upper(
    rss_tol: f64,
    fits: &[GroupFit],
    s: &[f64],
    v: &[f64],
    a: f64,
    eps: f64,
    j: usize,
    s2: f64,
    max_iter: usize,
) -> (f64, bool) {
    // Find the group holding ramp j.
    let mut off = 0;
    for g in fits {
        if j < off + g.chain.ramps() {
            let jl = j - off;
            let data = lm::Data {
                s: &s[g.lo_idx..g.hi_idx],
                v: &v[g.lo_idx..g.hi_idx],
                a,
                eps,
                lo: g.lo,
                hi: g.hi,
                rss_tol,
            };
            let mut base = g.chain.clone();
            base.held[jl] = true;
            base.lens[jl] = 0.0;
            let r0 = lm::fit(&mut base, &data, max_iter).rss;
            let mut prev = 0.0;
            let mut prev_d = 0.0;
            for f in [0.125, 0.25, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0, 4.0] {
                let l = f * 2.0 * a;
                let mut c = base.clone();
                c.lens[jl] = l;
                let r = lm::fit(&mut c, &data, max_iter).rss;
                let dlt = (r - r0) / s2;
                if dlt >= 3.84 {
                    let w = (3.84 - prev_d) / (dlt - prev_d).max(1e-12);
                    return (prev + w * (l - prev), true);
                }
                prev = l;
                prev_d = dlt;
            }
            return (prev, true);
        }
        off += g.chain.ramps();
    }
    (0.0, false)
}

impl FitResult {
    /// Centreline distance from the design start to survey chainage `ch`.
    pub fn centre_distance(&self, ch: f64) -> f64 {
        let s0 = self.start_chainage;
        if ch <= s0 || self.centre_knots.is_empty() {
            return ch - s0;
        }
        // Last knot at or before `ch`; beyond it the curvature is linear up
        // to the next knot (or constant after the last one).
        let i = self.centre_knots.partition_point(|k| k.0 <= ch) - 1;
        let (x0, acc, k0) = self.centre_knots[i];
        let k1 = match self.centre_knots.get(i + 1) {
            Some(&(x1, _, kn)) if x1 > x0 => k0 + (kn - k0) * (ch - x0) / (x1 - x0),
            _ => k0,
        };
        acc + (ch - x0) * (1.0 + self.rail_offset * 0.5 * (k0 + k1))
    }

    /// Place the design centreline in the plan so that it best matches
    /// integrated centreline points `(survey chainage, x, y)` in the least-
    /// squares sense (rotation and translation; the shape is the fit's).
    /// With fewer than two points the design keeps its origin start.
    ///
    /// ## Reference
    /// Umeyama, "Least-squares estimation of transformation parameters
    /// between two point patterns", IEEE PAMI 13(4), 1991 (rotation without scale).
    pub fn place(&self, points: &[(f64, f64, f64)]) -> Alignment {
        let pts: Vec<(f64, f64, f64, f64)> = points
            .iter()
            .filter(|p| p.0.is_finite() && p.1.is_finite() && p.2.is_finite())
            .map(|&(ch, x, y)| {
                let q = self.design.pose_at(self.centre_distance(ch));
                (q.x, q.y, x, y)
            })
            .collect();
        if pts.len() < 2 {
            return self.design.clone();
        }
        let nf = pts.len() as f64;
        let (mut qx, mut qy, mut px, mut py) = (0.0, 0.0, 0.0, 0.0);
        for p in &pts {
            qx += p.0;
            qy += p.1;
            px += p.2;
            py += p.3;
        }
        qx /= nf;
        qy /= nf;
        px /= nf;
        py /= nf;
        let (mut sc, mut ss) = (0.0, 0.0);
        for p in &pts {
            let (ax, ay) = (p.0 - qx, p.1 - qy);
            let (bx, by) = (p.2 - px, p.3 - py);
            sc += ax * bx + ay * by;
            ss += ax * by - ay * bx;
        }
        let th = ss.atan2(sc);
        let (sn, cs) = th.sin_cos();
        // p = R q + t  ⇒ t = p̄ − R q̄.
        let tx = px - (cs * qx - sn * qy);
        let ty = py - (sn * qx + cs * qy);
        let st = self.design.start();
        let start = Pose {
            x: cs * st.x - sn * st.y + tx,
            y: sn * st.x + cs * st.y + ty,
            heading: st.heading + th,
        };
        Alignment::new(
            start,
            self.design.start_chainage(),
            self.design.elements().to_vec(),
        )
    }

    /// Design versine, residual and design centreline position at every
    /// reading, for a design placed with [`FitResult::place`].
    pub fn station_design(&self, placed: &Alignment) -> Vec<StationDesign> {
        self.chainages
            .iter()
            .zip(&self.design_versine)
            .zip(&self.residual)
            .map(|((&ch, &dv), &r)| {
                let p = placed.pose_at(self.centre_distance(ch));
                StationDesign {
                    chainage: ch,
                    design_versine: dv,
                    residual: r,
                    x: p.x,
                    y: p.y,
                }
            })
            .collect()
    }

    /// The design columns of `stations.csv`, one per survey reading (gaps
    /// included, in survey order), for a design placed with
    /// [`FitResult::place`]. A gap has no residual (an empty cell).
    pub fn design_at_stations(
        &self,
        placed: &Alignment,
    ) -> Vec<crate::export::stations::DesignAtStation> {
        self.station_design(placed)
            .into_iter()
            .map(|d| crate::export::stations::DesignAtStation {
                design_versine: d.design_versine,
                residual: d.residual,
                x: d.x,
                y: d.y,
            })
            .collect()
    }

    /// Curvature of the fitted design on the measured rail at survey
    /// chainage `ch` (1/m, positive left).
    pub fn rail_curvature(&self, ch: f64) -> f64 {
        self.chain.curvature(ch)
    }
}
