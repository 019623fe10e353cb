//! Forward model: the versine a chord reads on a piecewise-linear curvature
//! diagram (straights, clothoid ramps, arcs), with its exact derivatives.
//!
//! The curvature of the measured rail, as a function of survey chainage `s`,
//! is a chain of *plateaus* (constant curvature: a straight when held at zero,
//! an arc when free) joined by *ramps* (clothoid transitions: curvature linear
//! in length). Ramp `j` runs from `m_j − L_j/2` to `m_j + L_j/2` and takes the
//! curvature from plateau `j` to plateau `j + 1`, so curvature is continuous at
//! every joint by construction; a ramp of zero length is a curvature step (an
//! arc meeting a straight, or a compound curve without a transition).
//!
//! A symmetric chord of half-length `a` reads (small-angle form)
//! `v(s) = ∫ k(u) ½(a − |u − s|)₊ du`, the triangular kernel (METHODS §2). For a
//! unit ramp `r(s) = clamp((s − b_s)/L, 0, 1)` the double integral is
//! `Q(s) = [(s − b_s)₊³ − (s − b_e)₊³]/(6L)` and the versine contribution is the
//! second difference `D(s) = ½[Q(s + a) − 2Q(s) + Q(s − a)]`. All formulas here
//! are evaluated in local coordinates and without dividing by `L` where `L`
//! may vanish, so zero-length ramps and kilometre chainages cost no accuracy.
//!
//! The next-order (finite-angle) term of the chord geometry is added as a
//! factor `1 + ε v²/a²` with `ε = −1/3` for marks taped along the rail and
//! `ε = +1` for a straight wire of the nominal length (from the series of
//! METHODS §1: `v = c²/8R ∓ …`; derived here).
//!
//! ## Reference
//! SEGMENTATION.md §5 step 4 (this project's design study); METHODS.md §§1, 2, 6.

use crate::survey::Arms;

/// One plateau level: held at zero (a straight) or free (an arc).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Level {
    /// Curvature held at zero: a straight.
    Zero,
    /// Free curvature (1/m of the measured rail), fitted.
    Free(f64),
}

impl Level {
    /// The curvature value (1/m).
    pub fn value(self) -> f64 {
        match self {
            Level::Zero => 0.0,
            Level::Free(k) => k,
        }
    }
    /// Whether the level is fitted.
    pub fn is_free(self) -> bool {
        matches!(self, Level::Free(_))
    }
}

/// The curvature diagram of the measured rail as plateaus joined by ramps.
#[derive(Debug, Clone, PartialEq)]
pub struct Chain {
    /// Plateau levels, one more than there are ramps.
    pub levels: Vec<Level>,
    /// Ramp mid-points, survey chainage (m).
    pub mids: Vec<f64>,
    /// Ramp lengths along the measured rail (m), non-negative.
    pub lens: Vec<f64>,
    /// Per ramp: length held (not fitted), normally at zero: a curvature step.
    pub held: Vec<bool>,
    /// Per plateau: held at zero length (the ramps either side meet), e.g. the
    /// inflection of a reverse curve. Never set for the first or last plateau.
    pub joined: Vec<bool>,
}

/// Unit-ramp double integral `Q` and its derivatives with respect to the ramp
/// start and end, at `u = s − b_s` with ramp length `l`.
#[inline]
fn q_and_derivs(u: f64, l: f64) -> (f64, f64, f64) {
    if u <= 0.0 {
        (0.0, 0.0, 0.0)
    } else if u >= l {
        let u2 = u - l;
        let q = (u * u + u * u2 + u2 * u2) / 6.0;
        (q, -(2.0 * u + u2) / 6.0, -(u + 2.0 * u2) / 6.0)
    } else {
        // 0 < u < l, so l > 0 here.
        let t = u / l;
        let q = u * u * t / 6.0;
        (q, -u * t / 2.0 + u * t * t / 6.0, -u * t * t / 6.0)
    }
}

/// Versine contribution `D` of a unit ramp `[b_s, b_s + l]` at chainage `s`
/// for a chord of half-length `a`, with `∂D/∂b_s` and `∂D/∂b_e`.
#[inline]
pub fn ramp_versine(s: f64, b_s: f64, l: f64, a: f64) -> (f64, f64, f64) {
    let u = s - b_s;
    if u + a <= 0.0 {
        return (0.0, 0.0, 0.0);
    }
    if u - a >= l {
        return (0.5 * a * a, 0.0, 0.0);
    }
    let (q1, ds1, de1) = q_and_derivs(u + a, l);
    let (q0, ds0, de0) = q_and_derivs(u, l);
    let (qm, dsm, dem) = q_and_derivs(u - a, l);
    (
        0.5 * (q1 - 2.0 * q0 + qm),
        0.5 * (ds1 - 2.0 * ds0 + dsm),
        0.5 * (de1 - 2.0 * de0 + dem),
    )
}

/// Versine contribution `D` of a unit ramp `[b_s, b_s + l]` at chainage `s`
/// for a chord with arms `a₁` behind and `a₂` ahead of the measuring point,
/// with `∂D/∂b_s` and `∂D/∂b_e`: `D(s) = [a₂Q(s − a₁) + a₁Q(s + a₂)]/(a₁ + a₂) − Q(s)`
/// (the chord through the rail at `s − a₁` and `s + a₂`, read at `s`);
/// [`ramp_versine`] itself for a symmetric chord.
#[inline]
pub fn ramp_versine_arms(s: f64, b_s: f64, l: f64, arms: Arms) -> (f64, f64, f64) {
    if arms.is_symmetric() {
        return ramp_versine(s, b_s, l, arms.behind);
    }
    let (a1, a2) = (arms.behind, arms.ahead);
    let u = s - b_s;
    if u + a2 <= 0.0 {
        return (0.0, 0.0, 0.0);
    }
    if u - a1 >= l {
        return (0.5 * a1 * a2, 0.0, 0.0);
    }
    let (w1, w2) = (a2 / (a1 + a2), a1 / (a1 + a2));
    let (q1, ds1, de1) = q_and_derivs(u + a2, l);
    let (q0, ds0, de0) = q_and_derivs(u, l);
    let (qm, dsm, dem) = q_and_derivs(u - a1, l);
    (
        w1 * qm + w2 * q1 - q0,
        w1 * dsm + w2 * ds1 - ds0,
        w1 * dem + w2 * de1 - de0,
    )
}

/// The squared length `a_e²` of the finite-angle factor `1 + ε v²/a_e²`:
/// `a²` for a symmetric chord, `2a₁²a₂²/(a₁² + a₂²)` for arms `a₁`, `a₂`
/// (the next term of `v = (2/k)·sin(ka₁/2)·sin(ka₂/2)` for taped marks and of
/// `√(R² − t²) − √(R² − c²/4)` for a wire, `crate::chord`; derived in
/// docs/METHOD.md).
pub fn finite_angle_length_sq(arms: Arms) -> f64 {
    let (a1, a2) = (arms.behind, arms.ahead);
    if arms.is_symmetric() {
        a1 * a1
    } else {
        2.0 * a1 * a1 * a2 * a2 / (a1 * a1 + a2 * a2)
    }
}

/// The finite-angle correction factor `ε` for the station marking.
pub fn marking_epsilon(marking: crate::survey::Marking) -> f64 {
    match marking {
        crate::survey::Marking::Taped => -1.0 / 3.0,
        crate::survey::Marking::Wire => 1.0,
    }
}

impl Chain {
    /// A chain with nothing held.
    pub fn new(levels: Vec<Level>, mids: Vec<f64>, lens: Vec<f64>) -> Self {
        let (m, k) = (mids.len(), levels.len());
        Chain {
            levels,
            mids,
            lens,
            held: vec![false; m],
            joined: vec![false; k],
        }
    }
    /// The sub-chain of ramps `j0..j1` (levels `j0..=j1`).
    pub fn sub(&self, j0: usize, j1: usize) -> Chain {
        Chain {
            levels: self.levels[j0..=j1].to_vec(),
            mids: self.mids[j0..j1].to_vec(),
            lens: self.lens[j0..j1].to_vec(),
            held: self.held[j0..j1].to_vec(),
            joined: self.joined[j0..=j1].to_vec(),
        }
    }
    /// Number of ramps.
    pub fn ramps(&self) -> usize {
        self.mids.len()
    }
    /// Ramp `j` start chainage.
    pub fn ramp_start(&self, j: usize) -> f64 {
        self.mids[j] - 0.5 * self.lens[j]
    }
    /// Ramp `j` end chainage.
    pub fn ramp_end(&self, j: usize) -> f64 {
        self.mids[j] + 0.5 * self.lens[j]
    }
    /// Curvature of the measured rail at chainage `s` (1/m).
    pub fn curvature(&self, s: f64) -> f64 {
        let mut k = self.levels[0].value();
        for j in 0..self.ramps() {
            let dk = self.levels[j + 1].value() - self.levels[j].value();
            let b = self.ramp_start(j);
            let l = self.lens[j];
            let r = if s <= b {
                0.0
            } else if s >= b + l {
                1.0
            } else {
                (s - b) / l
            };
            k += dk * r;
        }
        k
    }
    /// The first ramp that the chord of half-length `a` centred at `s` does
    /// not see wholly behind it (`ramps()` when there is none), by bisection
    /// on the ordered ramp ends.
    pub fn first_ramp_seen(&self, s: f64, a: f64) -> usize {
        let (mut lo, mut hi) = (0, self.ramps());
        while lo < hi {
            let mid = lo + (hi - lo) / 2;
            if self.ramp_end(mid) + a > s {
                hi = mid;
            } else {
                lo = mid + 1;
            }
        }
        lo
    }
    /// Linear (small-angle) versine at `s` for half-chord `a` (m, chord side).
    pub fn versine_linear(&self, s: f64, a: f64) -> f64 {
        // Ramps are ordered: those wholly behind the chord contribute
        // dk·a²/2 each, i.e. the level reached; those ahead contribute nothing.
        // The first ramp not wholly behind, by bisection (the fit keeps the
        // knots ordered), so that a long route costs log(ramps) per reading.
        let j_lo = self.first_ramp_seen(s, a);
        let mut v = self.levels[j_lo].value() * 0.5 * a * a;
        for j in j_lo..self.ramps() {
            let b = self.ramp_start(j);
            if b - a >= s {
                break;
            }
            let dk = self.levels[j + 1].value() - self.levels[j].value();
            let (d, _, _) = ramp_versine(s, b, self.lens[j], a);
            v += dk * d;
        }
        v
    }
    /// Linear (small-angle) versine at `s` for a chord with arms `arms`
    /// ([`Chain::versine_linear`] itself for a symmetric chord).
    pub fn versine_linear_arms(&self, s: f64, arms: Arms) -> f64 {
        if arms.is_symmetric() {
            return self.versine_linear(s, arms.behind);
        }
        let (a1, a2) = (arms.behind, arms.ahead);
        let j_lo = self.first_ramp_seen(s, a1);
        let mut v = self.levels[j_lo].value() * 0.5 * a1 * a2;
        for j in j_lo..self.ramps() {
            let b = self.ramp_start(j);
            if b - a2 >= s {
                break;
            }
            let dk = self.levels[j + 1].value() - self.levels[j].value();
            let (d, _, _) = ramp_versine_arms(s, b, self.lens[j], arms);
            v += dk * d;
        }
        v
    }
    /// Versine at `s` for a chord with arms `arms`, including the
    /// finite-angle term `ε` ([`Chain::versine`] for a symmetric chord).
    pub fn versine_arms(&self, s: f64, arms: Arms, eps: f64) -> f64 {
        if arms.is_symmetric() {
            return self.versine(s, arms.behind, eps);
        }
        let v = self.versine_linear_arms(s, arms);
        v * (1.0 + eps * v * v / finite_angle_length_sq(arms))
    }
    /// Versine at `s` including the finite-angle term `ε`.
    pub fn versine(&self, s: f64, a: f64, eps: f64) -> f64 {
        let v = self.versine_linear(s, a);
        v * (1.0 + eps * v * v / (a * a))
    }
}
