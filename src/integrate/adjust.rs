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

/// Run the adjustment. `d[0]` is the variance of the start heading, `d[l]`
/// (l ≥ 1) that of the turn at station `l`.
pub(crate) fn adjust(
    c_in: &[(f64, f64)],
    theta_in: &[f64],
    d: &[f64],
    ctrl: &[Ctrl],
    mode: StartMode,
) -> Option<Adjusted> {
    let n = c_in.len();
    let mut c = c_in.to_vec();
    let mut theta = theta_in.to_vec();
    let mut acc = vec![0.0; n];
    let p_fixed = match mode {
        StartMode::Fixed => 0,
        StartMode::Translate => 2,
        StartMode::TranslateRotate => 3,
    };
    // Random-effect variances: the start heading is a fixed effect when free.
    let mut dr = d.to_vec();
    if mode == StartMode::TranslateRotate {
        dr[0] = 0.0;
    }
    let k = ctrl.len();
    let mut order: Vec<usize> = (0..k).collect();
    order.sort_by_key(|&i| ctrl[i].j);

    // V⁻¹, A and (AᵀV⁻¹A)⁻¹ of the last linearisation.
    let mut last: Option<Solved> = None;
    if k > 0 {
        for _iter in 0..8 {
            let o = c[0];
            let rel: Vec<(f64, f64)> = c.iter().map(|p| (p.0 - o.0, p.1 - o.1)).collect();
            let pts: Vec<(f64, f64)> = ctrl.iter().map(|q| point(&rel, q.j, q.t)).collect();
            // Prefix sums at each control (l ≤ j), and of the prior means.
            let mut sums_at = vec![Sums::default(); k];
            let mut mu_at = vec![Sums::default(); k];
            {
                let (mut s, mut sm) = (Sums::default(), Sums::default());
                let mut oi = 0;
                for l in 0..n {
                    s.add(dr[l], rel[l]);
                    if dr[l] > 0.0 {
                        sm.add(-acc[l], rel[l]);
                    }
                    while oi < k && ctrl[order[oi]].j == l {
                        sums_at[order[oi]] = s;
                        mu_at[order[oi]] = sm;
                        oi += 1;
                    }
                }
            }
            // V = B D Bᵀ + R, A, r = y − B μ.
            let mut v = DMatrix::<f64>::zeros(2 * k, 2 * k);
            let mut a = DMatrix::<f64>::zeros(2 * k, p_fixed);
            let mut r = DVector::<f64>::zeros(2 * k);
            for ci in 0..k {
                for cj in 0..k {
                    let s = if ctrl[ci].j <= ctrl[cj].j {
                        sums_at[ci]
                    } else {
                        sums_at[cj]
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
            let chol = v.clone().cholesky()?;
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
            // û_l = μ_l + D_l Σ_{c: j_c ≥ l} (P_c − C_l)ᵀ Jᵀ w_c  (suffix sums).
            let mut du = vec![0.0; n];
            {
                let (mut zp, mut zs) = (0.0, (0.0, 0.0));
                let mut oi = k;
                for l in (0..n).rev() {
                    while oi > 0 && ctrl[order[oi - 1]].j >= l {
                        let ci = order[oi - 1];
                        // Jᵀ w = (w_y, −w_x).
                        let z = (w[2 * ci + 1], -w[2 * ci]);
                        zp += z.0 * pts[ci].0 + z.1 * pts[ci].1;
                        zs.0 += z.0;
                        zs.1 += z.1;
                        oi -= 1;
                    }
                    let mu = if dr[l] > 0.0 { -acc[l] } else { 0.0 };
                    du[l] = mu + dr[l] * (zp - zs.0 * rel[l].0 - zs.1 * rel[l].1);
                }
            }
            let (tx, ty, rot) = match p_fixed {
                0 => (0.0, 0.0, 0.0),
                2 => (beta[0], beta[1], 0.0),
                _ => (beta[0], beta[1], beta[2]),
            };
            // Apply (nonlinear): rotate each step by its heading correction.
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
            c = newc;
            let mut big: f64 = rot.abs();
            for l in 0..n {
                acc[l] += du[l];
                big = big.max(du[l].abs());
            }
            acc[0] += rot;
            last = Some((vinv, a, finv));
            if big < 1e-14 {
                break;
            }
        }
    }

    // Variances at every station (final linearisation).
    let o = c[0];
    let rel: Vec<(f64, f64)> = c.iter().map(|p| (p.0 - o.0, p.1 - o.1)).collect();
    let pts: Vec<(f64, f64)> = ctrl.iter().map(|q| point(&rel, q.j, q.t)).collect();
    let mut sums_at = vec![Sums::default(); k];
    {
        let mut s = Sums::default();
        let mut oi = 0;
        for l in 0..n {
            s.add(dr[l], rel[l]);
            while oi < k && ctrl[order[oi]].j == l {
                sums_at[order[oi]] = s;
                oi += 1;
            }
        }
    }
    // With control, each station costs O(k²); on very long surveys with many
    // control points evaluate a subset (every `stride`-th station, the
    // control stations and 16 points between each pair of neighbouring
    // controls) and interpolate the standard deviations linearly between them.
    let kk2 = (2 * k) * (2 * k);
    let stride = if last.is_some() {
        ((n as f64 * 3.0 * kk2 as f64 / 3e8).ceil() as usize).max(1)
    } else {
        1
    };
    let mut eval = vec![stride == 1; n];
    if stride > 1 {
        for i in (0..n).step_by(stride) {
            eval[i] = true;
        }
        eval[n - 1] = true;
        let mut js: Vec<usize> = ctrl.iter().map(|q| q.j).collect();
        js.sort_unstable();
        js.dedup();
        for &j in &js {
            eval[j] = true;
            eval[(j + 1).min(n - 1)] = true;
        }
        for w in js.windows(2) {
            for t in 1..16 {
                eval[w[0] + (w[1] - w[0]) * t / 16] = true;
            }
        }
    }
    let (vinv_f, a_f, finv_f, p) = match &last {
        Some((vinv, a, finv)) => (
            (0..2 * k)
                .flat_map(|r| (0..2 * k).map(move |c| (r, c)))
                .map(|(r, c)| vinv[(r, c)])
                .collect::<Vec<f64>>(),
            (0..2 * k)
                .flat_map(|r| (0..a.ncols()).map(move |c| (r, c)))
                .map(|(r, c)| a[(r, c)])
                .collect::<Vec<f64>>(),
            finv.as_ref().map(|f| {
                (0..f.nrows())
                    .flat_map(|r| (0..f.ncols()).map(move |c| (r, c)))
                    .map(|(r, c)| f[(r, c)])
                    .collect::<Vec<f64>>()
            }),
            a.ncols(),
        ),
        None => (Vec::new(), Vec::new(), None, 0),
    };
    let mut lateral_var = vec![f64::NAN; n];
    let mut heading_var = vec![f64::NAN; n];
    let mut s = Sums::default(); // l ≤ i − 1
    let mut hsum = 0.0; // Σ_{l<i} D_l (prior heading)
    let mut g = vec![0.0; 3 * 2 * k];
    let mut gv = vec![0.0; 3 * 2 * k];
    for i in 0..n {
        let ci_ = rel[i];
        if eval[i] {
            let (sn, cs) = theta[i].sin_cos();
            let nrm = (-sn, cs);
            // Prior.
            let mut incl = s;
            incl.add(dr[i], ci_);
            let m = jmj(s.m(ci_, ci_));
            let mut var_pos = [m[0], m[1], m[2], m[3]];
            let mut var_h = if i == 0 { dr[0] } else { hsum + 0.25 * dr[i] };
            if last.is_some() {
                let w2 = 2 * k;
                // Cov(position_i, y) rows 0–1 and Cov(heading_i, y) row 2.
                let mut half = s;
                if i > 0 {
                    half.add(0.5 * dr[i], ci_);
                } else {
                    half.add(dr[0], ci_);
                }
                for cj in 0..k {
                    let sp = if i <= ctrl[cj].j { incl } else { sums_at[cj] };
                    let mm = jmj(sp.m(ci_, pts[cj]));
                    g[2 * cj] = mm[0];
                    g[2 * cj + 1] = mm[1];
                    g[w2 + 2 * cj] = mm[2];
                    g[w2 + 2 * cj + 1] = mm[3];
                    let sh = if i <= ctrl[cj].j { half } else { sums_at[cj] };
                    let hv = sh.jv(pts[cj]);
                    g[2 * w2 + 2 * cj] = hv.0;
                    g[2 * w2 + 2 * cj + 1] = hv.1;
                }
                // gv = g V⁻¹; red = gv gᵀ.
                for r in 0..3 {
                    let gr = &g[r * w2..(r + 1) * w2];
                    let out = &mut gv[r * w2..(r + 1) * w2];
                    out.fill(0.0);
                    for (mi, gm) in gr.iter().enumerate() {
                        if *gm != 0.0 {
                            let vrow = &vinv_f[mi * w2..(mi + 1) * w2];
                            for (o, v) in out.iter_mut().zip(vrow) {
                                *o += gm * v;
                            }
                        }
                    }
                }
                let dot = |r1: usize, r2: usize| -> f64 {
                    gv[r1 * w2..(r1 + 1) * w2]
                        .iter()
                        .zip(&g[r2 * w2..(r2 + 1) * w2])
                        .map(|(x, y)| x * y)
                        .sum()
                };
                var_pos[0] -= dot(0, 0);
                var_pos[1] -= dot(0, 1);
                var_pos[2] -= dot(1, 0);
                var_pos[3] -= dot(1, 1);
                var_h -= dot(2, 2);
                if let Some(finv) = &finv_f {
                    // e = a_i − gv A (3 × p); add = e F⁻¹ eᵀ.
                    let mut e = [[0.0; 3]; 3];
                    for r in 0..3 {
                        for c in 0..p {
                            let mut acc = 0.0;
                            for m in 0..w2 {
                                acc += gv[r * w2 + m] * a_f[m * p + c];
                            }
                            e[r][c] = -acc;
                        }
                    }
                    e[0][0] += 1.0;
                    e[1][1] += 1.0;
                    if p == 3 {
                        e[0][2] += -ci_.1;
                        e[1][2] += ci_.0;
                        e[2][2] += 1.0;
                    }
                    let quad = |r1: usize, r2: usize| -> f64 {
                        let mut acc = 0.0;
                        for x in 0..p {
                            for y in 0..p {
                                acc += e[r1][x] * finv[x * p + y] * e[r2][y];
                            }
                        }
                        acc
                    };
                    var_pos[0] += quad(0, 0);
                    var_pos[1] += quad(0, 1);
                    var_pos[2] += quad(1, 0);
                    var_pos[3] += quad(1, 1);
                    var_h += quad(2, 2);
                }
            }
            let lat = nrm.0 * (var_pos[0] * nrm.0 + var_pos[1] * nrm.1)
                + nrm.1 * (var_pos[2] * nrm.0 + var_pos[3] * nrm.1);
            lateral_var[i] = lat.max(0.0);
            heading_var[i] = var_h.max(0.0);
        }
        s.add(dr[i], ci_);
        hsum += dr[i];
    }
    if stride > 1 {
        // Linear interpolation of the standard deviations between evaluated stations.
        for v in [&mut lateral_var, &mut heading_var] {
            let mut prev = 0usize;
            for i in 1..n {
                if eval[i] {
                    let (s0, s1) = (v[prev].sqrt(), v[i].sqrt());
                    let span = (i - prev) as f64;
                    for (t, x) in v[prev + 1..i].iter_mut().enumerate() {
                        let f = (t + 1) as f64 / span;
                        *x = (s0 + (s1 - s0) * f).powi(2);
                    }
                    prev = i;
                }
            }
        }
    }

    // Residuals of the control points.
    let mut residuals = Vec::with_capacity(k);
    if let Some((vinv, a, finv)) = &last {
        let mut pm = vinv.clone();
        if let Some(finv) = finv {
            pm -= vinv * a * finv * a.transpose() * vinv;
        }
        for (ci, q) in ctrl.iter().enumerate() {
            let p = point(&c, q.j, q.t);
            let (dx, dy) = (q.obs.0 - p.0, q.obs.1 - p.1);
            let s2 = q.sd * q.sd;
            // Cov(ê) = R P R, block ci.
            let cm = [
                s2 * s2 * pm[(2 * ci, 2 * ci)],
                s2 * s2 * pm[(2 * ci, 2 * ci + 1)],
                s2 * s2 * pm[(2 * ci + 1, 2 * ci)],
                s2 * s2 * pm[(2 * ci + 1, 2 * ci + 1)],
            ];
            residuals.push((dx, dy, normalised(dx, dy, cm)));
        }
    }
    Some(Adjusted {
        c,
        theta,
        turn: acc,
        lateral_var,
        heading_var,
        residuals,
        stride,
    })
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
