//! The result types of the element fit: estimates with intervals, fitted
//! elements, whole-fit statistics, set-aside readings, and the fitted design
//! with its placement in the plan.

use super::model::Chain;
use crate::geometry::{Alignment, ElementKind, Pose};

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
    pub(super) fn new(value: f64, se: f64, t: f64) -> Self {
        let se = if se.is_finite() { se } else { 0.0 };
        Estimate {
            value,
            se,
            lo95: value - t * se,
            hi95: value + t * se,
        }
    }

    /// Keep the interval within `[lo, hi]` (what the survey can support) and
    /// the standard error within its width. Returns whether the interval was
    /// wider than `[lo, hi]` itself: then the value is not resolved.
    pub(super) fn bound(&mut self, lo: f64, hi: f64) -> bool {
        if !(lo.is_finite() && hi.is_finite()) {
            return true;
        }
        let (lo, hi) = (lo.min(hi), lo.max(hi));
        let wider = self.hi95 - self.lo95 > hi - lo;
        self.lo95 = self.lo95.clamp(lo, hi);
        self.hi95 = self.hi95.clamp(lo, hi);
        self.se = self.se.min(hi - lo);
        wider
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
    /// The reading noise (m): the one figure of the survey, stated or
    /// estimated robustly from third differences (as the plan's).
    pub sigma_white: f64,
    /// Robust spread of the readings about the fitted design (m): median
    /// absolute residual, corrected for the parameters fitted.
    pub sigma_residual: f64,
    /// Element-scale noise on the straights: (window length m, σ m).
    pub sigma_scales: Vec<(f64, f64)>,
    /// Noise used for the penalty (m).
    pub sigma_penalty: f64,
    /// Reading standard deviation for the stages after the fit (slews), m:
    /// stated, else the larger of the reading noise and the spread of the
    /// readings about the design (which also carries irregularity the design
    /// smooths over).
    pub reading_sd: f64,
    /// Reading standard deviation the chi-square test uses (m): stated, else
    /// the noise of the third differences whose chords touch no fitted joint
    /// (zero on straights, arcs and transitions); with too few of those, the
    /// reading noise (or the spread about the design when joints close
    /// together inflate the noise estimate).
    pub chi2_sd: f64,
    /// Whether `reading_sd` was stated (true) or estimated (false).
    pub reading_sd_stated: bool,
    /// Chi-square statistic `RSS/σ²`, its degrees of freedom and upper-tail
    /// probability. Against an estimated `σ` the probability is that of the
    /// variance ratio (F distribution), allowing for the estimate's own
    /// degrees of freedom.
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
    /// The worst way a curve's fit ended (iteration limit, then a stall,
    /// then convergence).
    pub termination: super::lm::Termination,
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

/// The result of [`fit`](super::fit).
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
    /// Readings that look like blunders, in chainage order (left out of the
    /// fit unless `keep_outliers`).
    pub outliers: Vec<super::Outlier>,
    pub(super) chain: Chain,
    pub(super) rail_offset: f64,
    /// Knots of the piecewise-linear rail curvature from the design start:
    /// (chainage, centreline distance there, rail curvature there), for
    /// [`FitResult::centre_distance`] in O(log n).
    pub(super) centre_knots: Vec<(f64, f64, f64)>,
}

/// [`Chain::curvature`] at increasing chainages, in time linear in the
/// ramps and the chainages together (a route's knot table would otherwise
/// cost the square of its ramps). The same sums in the same order: the ramps
/// wholly behind (a prefix, the knots being ordered), then the one under way;
/// the ramps ahead add exact zeros there.
struct CurvatureSweep<'a> {
    c: &'a Chain,
    /// Ramps wholly behind the last chainage asked for.
    behind: usize,
    /// The curvature once they are all passed.
    k_behind: f64,
}

impl<'a> CurvatureSweep<'a> {
    fn new(c: &'a Chain) -> Self {
        CurvatureSweep {
            c,
            behind: 0,
            k_behind: c.levels[0].value(),
        }
    }
    fn dk(&self, j: usize) -> f64 {
        self.c.levels[j + 1].value() - self.c.levels[j].value()
    }
    /// Curvature at `s`, not below any chainage asked for before.
    fn at(&mut self, s: f64) -> f64 {
        let c = self.c;
        // Wholly behind as `Chain::curvature` decides it: past the start, at
        // or past the end.
        while self.behind < c.ramps() && {
            let b = c.ramp_start(self.behind);
            s > b && s >= b + c.lens[self.behind]
        } {
            self.k_behind += self.dk(self.behind) * 1.0;
            self.behind += 1;
        }
        let mut k = self.k_behind;
        for j in self.behind..c.ramps() {
            let b = c.ramp_start(j);
            if s <= b {
                break;
            }
            let l = c.lens[j];
            let r = if s >= b + l { 1.0 } else { (s - b) / l };
            k += self.dk(j) * r;
        }
        k
    }
}

/// The knot table of [`FitResult::centre_distance`]: the centreline distance
/// `∫(1 + d k(u)) du` from `s0` at every ramp end, with `k` piecewise linear
/// between knots (exact).
pub(super) fn centre_knots(c: &Chain, s0: f64, d: f64) -> Vec<(f64, f64, f64)> {
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
    let mut sweep = CurvatureSweep::new(c);
    for x in xs {
        let k = sweep.at(x);
        if let Some((x0, k0)) = prev {
            acc += (x - x0) * (1.0 + d * 0.5 * (k0 + k));
        }
        out.push((x, acc, k));
        prev = Some((x, k));
    }
    out
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
    /// reading (gaps included, in survey order; a gap has no residual), for a
    /// design placed with [`FitResult::place`]: the design columns of
    /// `stations.csv`.
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

    /// Curvature of the fitted design on the measured rail at survey
    /// chainage `ch` (1/m, positive left).
    pub fn rail_curvature(&self, ch: f64) -> f64 {
        self.chain.curvature(ch)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_curvature_sweep_is_the_chain_curvature_exactly() {
        use super::super::model::Level;
        // Straight, transition, arc, transition, straight, a step to an arc
        // (a held zero-length ramp), transition to straight.
        let chain = Chain {
            levels: vec![
                Level::Zero,
                Level::Free(1.0 / 480.0),
                Level::Zero,
                Level::Free(-1.0 / 620.0),
                Level::Zero,
            ],
            mids: vec![130.0, 370.0, 500.0, 640.0],
            lens: vec![60.0, 40.0, 0.0, 55.5],
            held: vec![false, false, true, false],
            joined: vec![false; 5],
        };
        let mut sweep = CurvatureSweep::new(&chain);
        for i in 0..=8000 {
            let s = -10.0 + 0.1 * f64::from(i);
            assert_eq!(
                sweep.at(s).to_bits(),
                chain.curvature(s).to_bits(),
                "at {s}"
            );
        }
    }

    #[test]
    fn a_bound_never_panics_and_says_when_it_cut() {
        let mut e = Estimate::new(10.0, 1e7, 1.96);
        assert!(e.bound(0.0, 100.0));
        assert_eq!((e.lo95, e.hi95, e.se), (0.0, 100.0, 100.0));
        let mut e = Estimate::new(10.0, 1.0, 1.96);
        assert!(!e.bound(100.0, 0.0)); // reversed bounds are sorted
        assert!((e.lo95 - 8.04).abs() < 1e-12);
        assert!(e.bound(f64::NAN, 1.0));
    }
}
