//! Joint least squares of the versine-derived turns with position
//! observations, and the standard deviations of position and heading.
//!
//! Linear(ised) model: the plan is the nominal one (from the versines) turned
//! at every station `l` by a small correction `u_l` (a rotation of everything
//! beyond the station about it), plus, when control fixes them, a free
//! translation and rotation of the whole plan. The turn corrections are random
//! with variance `D_l` (the variance of the turn derived from the readings);
//! control points observe positions with their standard deviation. The best
//! linear unbiased estimate (generalised least squares for the start pose, best
//! linear unbiased prediction for the turns) minimises
//! `Σ u_l²/D_l + Σ |P_cp − P|²/σ_cp²` over turns and start pose, which is the
//! joint adjustment of METHODS §4 with the versines entering through the turns
//! they give. The model is re-linearised about the adjusted plan until the
//! corrections vanish (Gauss–Newton). Variances use prefix sums of
//! `D_l`, `D_l C_l` and `D_l C_l C_lᵀ`, so the no-control case is O(n) and each
//! control adds O(n) work.
//!
//! ## Reference
//! Henderson, "Best linear unbiased estimation and prediction under a
//! selection model", Biometrics 31, 1975 (mixed-model equations and the
//! prediction error variance, from memory); METHODS.md §4.

use nalgebra::{DMatrix, DVector};

mod variances;

/// A control observation attached to the station grid.
#[derive(Debug, Clone)]
pub(crate) struct Ctrl {
    /// Station at or before the point.
    pub j: usize,
    /// Fraction of the step from station `j` to `j + 1`.
    pub t: f64,
    /// Observed position.
    pub obs: (f64, f64),
    /// Standard deviation of each coordinate.
    pub sd: f64,
}

/// What the control fixes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum StartMode {
    /// Start pose fixed (no control).
    Fixed,
    /// Start position free, heading from the start pose.
    Translate,
    /// Start position and heading free.
    TranslateRotate,
}

/// `V⁻¹`, `A` and `(AᵀV⁻¹A)⁻¹` of one linearisation.
type Solved = (DMatrix<f64>, DMatrix<f64>, Option<DMatrix<f64>>);

/// Result of the adjustment.
#[derive(Debug, Clone)]
pub(crate) struct Adjusted {
    pub c: Vec<(f64, f64)>,
    pub theta: Vec<f64>,
    /// Total turn correction at each station (index 0: start heading).
    pub turn: Vec<f64>,
    pub lateral_var: Vec<f64>,
    pub heading_var: Vec<f64>,
    /// Per control: (dx, dy, normalised).
    pub residuals: Vec<(f64, f64, f64)>,
    /// Standard deviations were evaluated every this many stations (1: all).
    pub stride: usize,
}

#[inline]
fn jmj(m: [f64; 4]) -> [f64; 4] {
    // J M Jᵀ with J = [[0,-1],[1,0]], M = [m11, m12, m21, m22].
    [m[3], -m[2], -m[1], m[0]]
}

/// Running sums Σ D, Σ D C, Σ D C Cᵀ (coordinates relative to an origin).
#[derive(Debug, Clone, Copy, Default)]
struct Sums {
    s0: f64,
    s1: (f64, f64),
    s2: [f64; 4],
}

impl Sums {
    fn add(&mut self, d: f64, c: (f64, f64)) {
        self.s0 += d;
        self.s1.0 += d * c.0;
        self.s1.1 += d * c.1;
        self.s2[0] += d * c.0 * c.0;
        self.s2[1] += d * c.0 * c.1;
        self.s2[2] += d * c.1 * c.0;
        self.s2[3] += d * c.1 * c.1;
    }
    /// Σ D (P − C)(Q − C)ᵀ.
    fn m(&self, p: (f64, f64), q: (f64, f64)) -> [f64; 4] {
        let (s0, (a, b), s2) = (self.s0, self.s1, self.s2);
        [
            s0 * p.0 * q.0 - p.0 * a - a * q.0 + s2[0],
            s0 * p.0 * q.1 - p.0 * b - a * q.1 + s2[1],
            s0 * p.1 * q.0 - p.1 * a - b * q.0 + s2[2],
            s0 * p.1 * q.1 - p.1 * b - b * q.1 + s2[3],
        ]
    }
    /// Σ D J(P − C) as a vector.
    fn jv(&self, p: (f64, f64)) -> (f64, f64) {
        let v = (self.s0 * p.0 - self.s1.0, self.s0 * p.1 - self.s1.1);
        (-v.1, v.0)
    }
}

fn point(c: &[(f64, f64)], j: usize, t: f64) -> (f64, f64) {
    if j + 1 < c.len() && t != 0.0 {
        (
            c[j].0 + t * (c[j + 1].0 - c[j].0),
            c[j].1 + t * (c[j + 1].1 - c[j].1),
        )
    } else {
        c[j]
    }
}

/// The plan relative to its first point, the control points on it, and the
/// prefix sums `Σ_{l ≤ j} D_l (…)` at each control: one linearisation.
struct Linearised {
    o: (f64, f64),
    rel: Vec<(f64, f64)>,
    pts: Vec<(f64, f64)>,
    sums_at: Vec<Sums>,
}

impl Linearised {
    /// About the plan `c`; with `acc` also the prefix sums of the prior
    /// means `−acc_l` (returned second).
    fn new(
        c: &[(f64, f64)],
        dr: &[f64],
        ctrl: &[Ctrl],
        order: &[usize],
        acc: Option<&[f64]>,
    ) -> (Self, Vec<Sums>) {
        let (n, k) = (c.len(), ctrl.len());
        let o = c[0];
        let rel: Vec<(f64, f64)> = c.iter().map(|p| (p.0 - o.0, p.1 - o.1)).collect();
        let pts: Vec<(f64, f64)> = ctrl.iter().map(|q| point(&rel, q.j, q.t)).collect();
        let mut sums_at = vec![Sums::default(); k];
        let mut mu_at = vec![Sums::default(); if acc.is_some() { k } else { 0 }];
        let (mut s, mut sm) = (Sums::default(), Sums::default());
        let mut oi = 0;
        for l in 0..n {
            s.add(dr[l], rel[l]);
            if let Some(acc) = acc
                && dr[l] > 0.0
            {
                sm.add(-acc[l], rel[l]);
            }
            while oi < k && ctrl[order[oi]].j == l {
                sums_at[order[oi]] = s;
                if acc.is_some() {
                    mu_at[order[oi]] = sm;
                }
                oi += 1;
            }
        }
        (
            Linearised {
                o,
                rel,
                pts,
                sums_at,
            },
            mu_at,
        )
    }
}

/// The mixed-model system of one linearisation: `V = B D Bᵀ + R`, the
/// design matrix `A` of the free start pose, and `r = y − B μ`.
fn system(
    lin: &Linearised,
    mu_at: &[Sums],
    ctrl: &[Ctrl],
    p_fixed: usize,
) -> (DMatrix<f64>, DMatrix<f64>, DVector<f64>) {
    let k = ctrl.len();
    let (pts, o) = (&lin.pts, lin.o);
    let mut v = DMatrix::<f64>::zeros(2 * k, 2 * k);
    let mut a = DMatrix::<f64>::zeros(2 * k, p_fixed);
    let mut r = DVector::<f64>::zeros(2 * k);
    for ci in 0..k {
        for cj in 0..k {
            let s = if ctrl[ci].j <= ctrl[cj].j {
                lin.sums_at[ci]
            } else {
                lin.sums_at[cj]
            };
            let m = jmj(s.m(pts[ci], pts[cj]));
            v[(2 * ci, 2 * cj)] = m[0];
            v[(2 * ci, 2 * cj + 1)] = m[1];
            v[(2 * ci + 1, 2 * cj)] = m[2];
            v[(2 * ci + 1, 2 * cj + 1)] = m[3];
        }
        let s2 = ctrl[ci].sd * ctrl[ci].sd;
        v[(2 * ci, 2 * ci)] += s2;
        v[(2 * ci + 1, 2 * ci + 1)] += s2;
        if p_fixed >= 2 {
            a[(2 * ci, 0)] = 1.0;
            a[(2 * ci + 1, 1)] = 1.0;
        }
        if p_fixed == 3 {
            a[(2 * ci, 2)] = -pts[ci].1;
            a[(2 * ci + 1, 2)] = pts[ci].0;
        }
        let bmu = mu_at[ci].jv(pts[ci]);
        let pa = (pts[ci].0 + o.0, pts[ci].1 + o.1);
        r[2 * ci] = ctrl[ci].obs.0 - pa.0 - bmu.0;
        r[2 * ci + 1] = ctrl[ci].obs.1 - pa.1 - bmu.1;
    }
    (v, a, r)
}

/// The turn corrections `û_l = μ_l + D_l Σ_{c: j_c ≥ l} (P_c − C_l)ᵀ Jᵀ w_c`
/// (suffix sums) for the weights `w = V⁻¹(r − Aβ)`.
fn turn_corrections(
    lin: &Linearised,
    w: &DVector<f64>,
    dr: &[f64],
    acc: &[f64],
    ctrl: &[Ctrl],
    order: &[usize],
) -> Vec<f64> {
    let n = dr.len();
    let mut du = vec![0.0; n];
    let (mut zp, mut zs) = (0.0, (0.0, 0.0));
    let mut oi = ctrl.len();
    for l in (0..n).rev() {
        while oi > 0 && ctrl[order[oi - 1]].j >= l {
            let ci = order[oi - 1];
            // Jᵀ w = (w_y, −w_x).
            let z = (w[2 * ci + 1], -w[2 * ci]);
            zp += z.0 * lin.pts[ci].0 + z.1 * lin.pts[ci].1;
            zs.0 += z.0;
            zs.1 += z.1;
            oi -= 1;
        }
        let mu = if dr[l] > 0.0 { -acc[l] } else { 0.0 };
        du[l] = mu + dr[l] * (zp - zs.0 * lin.rel[l].0 - zs.1 * lin.rel[l].1);
    }
    du
}

/// Apply the corrections (nonlinear): translate the start, rotate each step
/// by its heading correction. Returns the new plan.
fn apply_corrections(
    c: &[(f64, f64)],
    theta: &mut [f64],
    du: &[f64],
    (tx, ty, rot): (f64, f64, f64),
) -> Vec<(f64, f64)> {
    let n = c.len();
    let mut newc = Vec::with_capacity(n);
    newc.push((c[0].0 + tx, c[0].1 + ty));
    let mut hc = rot + du[0];
    for i in 0..n {
        if i > 0 {
            let th_corr = hc + 0.5 * du[i];
            theta[i] += th_corr;
            hc += du[i];
        } else {
            theta[0] += rot + du[0];
        }
        if i + 1 < n {
            let (sx, sy) = (c[i + 1].0 - c[i].0, c[i + 1].1 - c[i].1);
            let (sn, cs) = hc.sin_cos();
            let prev = newc[i];
            newc.push((prev.0 + cs * sx - sn * sy, prev.1 + sn * sx + cs * sy));
        }
    }
    newc
}

/// The state the iterated linearisation moves: the plan, its headings and
/// the total turn correction at each station.
struct State {
    c: Vec<(f64, f64)>,
    theta: Vec<f64>,
    acc: Vec<f64>,
}

/// The iterated linearisation (Gauss–Newton, at most 8 steps, until the
/// corrections vanish). Returns the system of the last linearisation;
/// `None` when it is singular.
fn iterate(
    st: &mut State,
    dr: &[f64],
    ctrl: &[Ctrl],
    order: &[usize],
    p_fixed: usize,
) -> Option<Solved> {
    let mut last = None;
    for _iter in 0..8 {
        let (lin, mu_at) = Linearised::new(&st.c, dr, ctrl, order, Some(&st.acc));
        let (v, a, r) = system(&lin, &mu_at, ctrl, p_fixed);
        let chol = v.cholesky()?;
        let vinv = chol.inverse();
        let (beta, finv) = if p_fixed > 0 {
            let f = a.transpose() * &vinv * &a;
            let finv = f.try_inverse()?;
            let b = &finv * a.transpose() * &vinv * &r;
            (b, Some(finv))
        } else {
            (DVector::zeros(0), None)
        };
        let w = &vinv * (&r - &a * &beta);
        let du = turn_corrections(&lin, &w, dr, &st.acc, ctrl, order);
        let pose = match p_fixed {
            0 => (0.0, 0.0, 0.0),
            2 => (beta[0], beta[1], 0.0),
            _ => (beta[0], beta[1], beta[2]),
        };
        st.c = apply_corrections(&st.c, &mut st.theta, &du, pose);
        let mut big: f64 = pose.2.abs();
        for (a, d) in st.acc.iter_mut().zip(&du) {
            *a += d;
            big = big.max(d.abs());
        }
        st.acc[0] += pose.2;
        last = Some((vinv, a, finv));
        if big < 1e-14 {
            break;
        }
    }
    last
}

/// Run the adjustment. `d[0]` is the variance of the start heading, `d[l]`
/// (l ≥ 1) that of the turn at station `l`.
pub(crate) fn adjust(
    c: Vec<(f64, f64)>,
    theta: Vec<f64>,
    d: Vec<f64>,
    ctrl: &[Ctrl],
    mode: StartMode,
) -> Option<Adjusted> {
    let n = c.len();
    // The nominal plan's arrays are adjusted in place (no copies of a long survey's).
    let mut st = State {
        c,
        theta,
        acc: vec![0.0; n],
    };
    let p_fixed = match mode {
        StartMode::Fixed => 0,
        StartMode::Translate => 2,
        StartMode::TranslateRotate => 3,
    };
    // Random-effect variances: the start heading is a fixed effect when free.
    let mut dr = d;
    if mode == StartMode::TranslateRotate {
        dr[0] = 0.0;
    }
    let mut order: Vec<usize> = (0..ctrl.len()).collect();
    order.sort_by_key(|&i| ctrl[i].j);
    // V⁻¹, A and (AᵀV⁻¹A)⁻¹ of the last linearisation.
    let last = if ctrl.is_empty() {
        None
    } else {
        Some(iterate(&mut st, &dr, ctrl, &order, p_fixed)?)
    };
    let (lin, _) = Linearised::new(&st.c, &dr, ctrl, &order, None);
    let stride = if last.is_some() {
        variances::stride(n, ctrl.len())
    } else {
        1
    };
    let eval = variances::evaluated(n, ctrl, stride);
    let (lateral_var, heading_var) =
        variances::at_stations(&lin, &st.theta, &dr, ctrl, last.as_ref(), &eval);
    let residuals = last
        .as_ref()
        .map_or_else(Vec::new, |l| control_residuals(&st.c, ctrl, l));
    Some(Adjusted {
        c: st.c,
        theta: st.theta,
        turn: st.acc,
        lateral_var,
        heading_var,
        residuals,
        stride,
    })
}

/// Residuals of the control points and their normalised size, from
/// `Cov(ê) = R P R` with `P = V⁻¹ − V⁻¹A F⁻¹AᵀV⁻¹`.
fn control_residuals(c: &[(f64, f64)], ctrl: &[Ctrl], last: &Solved) -> Vec<(f64, f64, f64)> {
    let (vinv, a, finv) = last;
    let mut pm = vinv.clone();
    if let Some(finv) = finv {
        pm -= vinv * a * finv * a.transpose() * vinv;
    }
    let mut residuals = Vec::with_capacity(ctrl.len());
    for (ci, q) in ctrl.iter().enumerate() {
        let p = point(c, q.j, q.t);
        let (dx, dy) = (q.obs.0 - p.0, q.obs.1 - p.1);
        let s2 = q.sd * q.sd;
        let cm = [
            s2 * s2 * pm[(2 * ci, 2 * ci)],
            s2 * s2 * pm[(2 * ci, 2 * ci + 1)],
            s2 * s2 * pm[(2 * ci + 1, 2 * ci)],
            s2 * s2 * pm[(2 * ci + 1, 2 * ci + 1)],
        ];
        residuals.push((dx, dy, normalised(dx, dy, cm)));
    }
    residuals
}

/// `sqrt(rᵀ C⁺ r)` for a 2×2 covariance, ignoring directions with (almost) no variance.
fn normalised(dx: f64, dy: f64, m: [f64; 4]) -> f64 {
    let (a, b, d) = (m[0], 0.5 * (m[1] + m[2]), m[3]);
    let tr = a + d;
    let disc = ((a - d) * (a - d) + 4.0 * b * b).sqrt();
    let l1 = 0.5 * (tr + disc);
    let l2 = 0.5 * (tr - disc);
    let tol = 1e-9 * l1.abs().max(f64::MIN_POSITIVE);
    // Eigenvectors.
    let (e1, e2) = if b.abs() > 1e-300 {
        let v1 = (l1 - d, b);
        let n1 = v1.0.hypot(v1.1);
        ((v1.0 / n1, v1.1 / n1), (-v1.1 / n1, v1.0 / n1))
    } else if a >= d {
        ((1.0, 0.0), (0.0, 1.0))
    } else {
        ((0.0, 1.0), (1.0, 0.0))
    };
    let mut q = 0.0;
    for (l, e) in [(l1, e1), (l2, e2)] {
        if l > tol {
            let p = dx * e.0 + dy * e.1;
            q += p * p / l;
        }
    }
    q.sqrt()
}
