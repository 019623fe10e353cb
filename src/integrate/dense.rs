//! Readings denser than the half chord: regularised least-squares estimate of
//! the curvature on a uniform knot grid (METHODS §3), solved by banded Givens QR.
//!
//! Model: the (linearised) versine is the curvature seen through a triangle
//! kernel, `v(s) = ∫_{−a}^{a} (a − |u|)/2 · k(s + u) du`, with `k` piecewise
//! linear between knots spaced `h`. Each reading is first linearised through
//! its own circle (`v_lin = κ(v)·a²/2`, exact on circles and straights, so
//! the kernel's small-angle error `a⁴k³/24` disappears there). Unknowns: the
//! knot values from half a chord before the first reading to half a chord
//! after the last one. Penalty `ρ²‖Δ²k‖²` (second differences), with `ρ` chosen
//! by the discrepancy principle: the data residual, in units of the reading
//! standard deviation, equals the number of readings.
//!
//! ## Reference
//! Morozov, "On the solution of functional equations by the method of
//! regularization", Soviet Math. Dokl. 7, 1966 (discrepancy principle, from
//! memory); Hansen, *Rank-Deficient and Discrete Ill-Posed Problems*, SIAM
//! 1998 (from memory); METHODS.md §3.

use super::banded::BandedLsq;
use crate::chord::curvature_from_versine_arms;
use crate::survey::{Arms, Marking};
use rayon::prelude::*;

/// A knot grid with curvature values.
#[derive(Debug, Clone)]
pub(crate) struct KnotCurve {
    /// Position of knot 0 (chainage), metres.
    pub t0: f64,
    /// Knot spacing, metres.
    pub h: f64,
    /// Curvature at the knots, 1/m.
    pub k: Vec<f64>,
}

impl KnotCurve {
    /// Curvature at chainage `s` (linear between knots, clamped at the ends).
    pub fn at(&self, s: f64) -> f64 {
        let n = self.k.len();
        if n == 0 {
            return 0.0;
        }
        let u = (s - self.t0) / self.h;
        if u.is_nan() || u <= 0.0 {
            return self.k[0];
        }
        let j = u.floor() as usize;
        if j + 1 >= n {
            return self.k[n - 1];
        }
        let f = u - j as f64;
        self.k[j] * (1.0 - f) + self.k[j + 1] * f
    }
}

/// The knot spacing used for readings at median spacing `d` with half chord `a`:
/// `a/m` with `m = round(a/d)` kept between 2 and 8, so the knots coincide
/// with the readings when 2 ≤ a/d ≤ 8, and stay at `a/8` for denser readings
/// (curvature detail shorter than a chord is not observable anyway). For a
/// chord not read at its middle: the smallest whole number of reading
/// spacings that is at least an eighth of the mean arm `√(a₁a₂)`, so that the
/// knots fall on readings (which fall on both chord ends).
pub(crate) fn knot_spacing(arms: Arms, d: f64) -> f64 {
    if arms.is_symmetric() {
        let a = arms.behind;
        let m = (a / d).round().clamp(2.0, 8.0);
        return a / m;
    }
    d * (mean_arm(arms) / (8.0 * d)).ceil().max(1.0)
}

/// The length scale of a chord for the penalty weight and the noise
/// propagation: the half chord, or `√(a₁a₂)` for a chord not read at its middle.
pub(crate) fn mean_arm(arms: Arms) -> f64 {
    if arms.is_symmetric() {
        arms.behind
    } else {
        arms.product().sqrt()
    }
}

/// Kernel row of the reading at `s`: returns the first knot and fills `out`
/// with the weights (exact for the piecewise-linear curvature: Simpson's rule
/// on pieces where the integrand is quadratic). The kernel is the triangle
/// `(a − |u|)/2` on `[−a, a]` for a symmetric chord, and for arms `a₁`
/// behind and `a₂` ahead the triangle with its apex `a₁a₂/(a₁ + a₂)` at the
/// measuring point, `a₂(a₁ + u)/(a₁ + a₂)` behind and `a₁(a₂ − u)/(a₁ + a₂)`
/// ahead (the second difference of `v = [a₂y(s − a₁) + a₁y(s + a₂)]/(a₁ + a₂) − y(s)`).
fn kernel_row(s: f64, arms: Arms, t0: f64, h: f64, nk: usize, out: &mut Vec<f64>) -> usize {
    out.clear();
    let (a, a1, a2) = (arms.behind, arms.behind, arms.ahead);
    let sym = arms.is_symmetric();
    let (lo, hi) = if sym {
        (s - a, s + a)
    } else {
        (s - a1, s + a2)
    };
    let jf = (((lo - t0) / h).floor().max(0.0) as usize).min(nk - 1);
    let jl = ((((hi - t0) / h).ceil().max(0.0)) as usize).min(nk - 1);
    out.resize(jl - jf + 1, 0.0);
    let c = a1 + a2;
    let w = |t: f64| {
        if sym {
            0.5 * (a - (t - s).abs()).max(0.0)
        } else if t < s {
            (a2 * (a1 - (s - t)) / c).max(0.0)
        } else {
            (a1 * (a2 - (t - s)) / c).max(0.0)
        }
    };
    for j in jf..jl {
        let tj = t0 + j as f64 * h;
        let (p0, q0) = (tj.max(lo), (tj + h).min(hi));
        if q0 <= p0 {
            continue;
        }
        let mut pieces = [(p0, q0), (0.0, 0.0)];
        let mut np = 1;
        if s > p0 && s < q0 {
            pieces = [(p0, s), (s, q0)];
            np = 2;
        }
        for &(p, q) in &pieces[..np] {
            let m = 0.5 * (p + q);
            let len = q - p;
            let phi_hi = |t: f64| (t - tj) / h;
            let (wp, wm, wq) = (w(p), w(m), w(q));
            let (hp, hm, hq) = (phi_hi(p), phi_hi(m), phi_hi(q));
            let i_hi = len / 6.0 * (wp * hp + 4.0 * wm * hm + wq * hq);
            let i_all = len / 6.0 * (wp + 4.0 * wm + wq);
            out[j - jf] += i_all - i_hi;
            out[j + 1 - jf] += i_hi;
        }
    }
    jf
}

/// Linearised versines: `κ(v)·a²/2` (`κ(v)·a₁a₂/2` for arms `a₁`, `a₂`)
/// through the reading's own circle.
/// Errors with the index of a reading too large for its chord.
pub(crate) fn linearise(
    v: &[Option<f64>],
    arms: Arms,
    marking: Marking,
) -> Result<Vec<Option<f64>>, usize> {
    let (a, a1, a2) = (arms.behind, arms.behind, arms.ahead);
    let sym = arms.is_symmetric();
    v.iter()
        .enumerate()
        .map(|(i, x)| match x {
            None => Ok(None),
            Some(x) => curvature_from_versine_arms(*x, arms, marking)
                .map(|k| {
                    Some(if sym {
                        0.5 * k * a * a
                    } else {
                        0.5 * k * a1 * a2
                    })
                })
                .ok_or(i),
        })
        .collect()
}

/// The data rows of one stretch of readings, built once and reused while the
/// penalty weight is searched.
struct Rows {
    t0: f64,
    nk: usize,
    w: usize,
    first: Vec<usize>,
    /// `w` coefficients per row (zero padded), already divided by σ.
    coef: Vec<f64>,
    /// Linearised versine over σ.
    y: Vec<f64>,
}

fn grid(s: &[f64], arms: Arms, h: f64) -> Option<(f64, usize, usize)> {
    let (first, last) = (*s.first()?, *s.last()?);
    let (a1, a2) = (arms.behind, arms.ahead);
    let t0 = first - a1;
    let nk = (((last + a2 - t0) / h) - 1e-9).ceil().max(2.0) as usize + 1;
    let w = (a1 / h).ceil() as usize + (a2 / h).ceil() as usize + 3;
    Some((t0, nk, w))
}

fn build_rows(s: &[f64], v: &[Option<f64>], arms: Arms, h: f64, sigma: f64) -> Option<Rows> {
    let (t0, nk, w) = grid(s, arms, h)?;
    let inv = 1.0 / sigma;
    let mut rows = Rows {
        t0,
        nk,
        w,
        first: Vec::new(),
        coef: Vec::new(),
        y: Vec::new(),
    };
    let mut row = Vec::with_capacity(w);
    for (si, vi) in s.iter().zip(v) {
        let Some(vi) = vi else { continue };
        let jf = kernel_row(*si, arms, t0, h, nk, &mut row);
        rows.first.push(jf);
        let base = rows.coef.len();
        rows.coef.resize(base + w, 0.0);
        for (t, c) in row.iter().enumerate() {
            rows.coef[base + t] = c * inv;
        }
        rows.y.push(vi * inv);
    }
    Some(rows)
}

/// Add the penalty rows `ρ(k_j − 2k_{j+1} + k_{j+2})` with first column below
/// `upto` (all when `None`), continuing from `*next`.
fn add_penalty(lsq: &mut BandedLsq, next: &mut usize, nk: usize, upto: Option<usize>, rho: f64) {
    let pen = [rho, -2.0 * rho, rho];
    while *next + 2 < nk && upto.is_none_or(|u| *next < u) {
        lsq.add_row(*next, &pen, 0.0);
        *next += 1;
    }
}

/// Solve with cached rows; returns the knot values and the data χ².
fn solve_rows(rows: &Rows, rho: f64) -> Option<(Vec<f64>, f64)> {
    let mut lsq = BandedLsq::new(rows.nk, rows.w);
    let mut next = 0;
    for (r, &jf) in rows.first.iter().enumerate() {
        add_penalty(&mut lsq, &mut next, rows.nk, Some(jf), rho);
        let len = rows.w.min(rows.nk - jf);
        lsq.add_row(jf, &rows.coef[r * rows.w..r * rows.w + len], rows.y[r]);
    }
    add_penalty(&mut lsq, &mut next, rows.nk, None, rho);
    let k = lsq.solve()?;
    let mut chi2 = 0.0;
    for (r, &jf) in rows.first.iter().enumerate() {
        let len = rows.w.min(rows.nk - jf);
        let c = &rows.coef[r * rows.w..r * rows.w + len];
        let pred: f64 = c.iter().zip(&k[jf..jf + len]).map(|(a, b)| a * b).sum();
        chi2 += (pred - rows.y[r]).powi(2);
    }
    Some((k, chi2))
}

/// Readings per chunk of [`solve`]: the rows of one chunk are built while the
/// previous chunk's are fed to the factorisation.
const SOLVE_CHUNK: usize = 8192;

/// The rows of a chunk of readings: first column, coefficients (over σ)
/// and right-hand side, in reading order.
#[derive(Default)]
struct ChunkRows {
    first: Vec<usize>,
    len: Vec<usize>,
    coef: Vec<f64>,
    y: Vec<f64>,
}

/// Solve the whole survey once, in chunks of readings: the next chunk's
/// rows are built (on another thread when the pool has one) while the
/// factorisation takes the current one, so memory stays at two chunks and
/// the result is the same as feeding the rows one by one.
pub(crate) fn solve(
    s: &[f64],
    v: &[Option<f64>],
    arms: Arms,
    h: f64,
    sigma: f64,
    rho: f64,
) -> Option<KnotCurve> {
    let (t0, nk, w) = grid(s, arms, h)?;
    let mut lsq = BandedLsq::new(nk, w);
    let inv = 1.0 / sigma;
    let mut next = 0;
    let build = |lo: usize| {
        let hi = (lo + SOLVE_CHUNK).min(s.len());
        let mut c = ChunkRows::default();
        let mut row = Vec::with_capacity(w);
        for (si, vi) in s[lo..hi].iter().zip(&v[lo..hi]) {
            let Some(vi) = vi else { continue };
            let jf = kernel_row(*si, arms, t0, h, nk, &mut row);
            for x in row.iter_mut() {
                *x *= inv;
            }
            c.first.push(jf);
            c.len.push(row.len());
            c.coef.extend_from_slice(&row);
            c.y.push(vi * inv);
        }
        c
    };
    let mut feed = |c: &ChunkRows, lsq: &mut BandedLsq| {
        let mut at = 0;
        for ((&jf, &len), &y) in c.first.iter().zip(&c.len).zip(&c.y) {
            add_penalty(lsq, &mut next, nk, Some(jf), rho);
            lsq.add_row(jf, &c.coef[at..at + len], y);
            at += len;
        }
    };
    let mut cur = build(0);
    let mut lo = SOLVE_CHUNK;
    while lo < s.len() {
        let (following, ()) = rayon::join(|| build(lo), || feed(&cur, &mut lsq));
        cur = following;
        lo += SOLVE_CHUNK;
    }
    feed(&cur, &mut lsq);
    add_penalty(&mut lsq, &mut next, nk, None, rho);
    let k = lsq.solve()?;
    Some(KnotCurve { t0, h, k })
}

/// Choose the penalty weight by the discrepancy principle (bisection on
/// `log10 ρ` between −2 and 7, relative to `a·h/σ`, to 0.003 decade) on six windows of 2000 readings
/// spread over the survey (all readings when there are at most 12 000), then
/// solve the whole survey once.
/// Returns the curve and `log10` of the weight relative to `a·h/σ`.
pub(crate) fn fit(
    s: &[f64],
    v: &[Option<f64>],
    arms: Arms,
    h: f64,
    sigma: f64,
) -> Option<(KnotCurve, f64)> {
    let a = mean_arm(arms);
    let n = s.len();
    let windows: Vec<(usize, usize)> = if n <= 12_000 {
        vec![(0, n)]
    } else {
        let len = 2000;
        (0..6)
            .map(|i| {
                let start = (n - len) * i / 5;
                (start, start + len)
            })
            .collect()
    };
    // The windows are independent: on the pool's threads, summed in order.
    let rows: Vec<Rows> = windows
        .par_iter()
        .map(|&(lo, hi)| build_rows(&s[lo..hi], &v[lo..hi], arms, h, sigma))
        .collect::<Option<_>>()?;
    let nvalid: usize = rows.iter().map(|r| r.y.len()).sum();
    let scale = a * h / sigma;
    let chi2 = |p: f64| -> Option<f64> {
        let rho = 10f64.powf(p) * scale;
        let each: Vec<f64> = rows
            .par_iter()
            .map(|r| solve_rows(r, rho).map(|x| x.1))
            .collect::<Option<_>>()?;
        let mut tot = 0.0;
        for c in each {
            tot += c;
        }
        Some(tot)
    };
    let target = nvalid as f64;
    // Below 10^-2 the near-null "comb" modes of the chord (period a/n, METHODS
    // §3) are no longer held down and the small model error of exact,
    // noise-free readings leaks into them (seen as a slow lateral drift in
    // the round-trip tests); real noise always lands well above this bound.
    let (mut lo, mut hi) = (-2.0_f64, 7.0_f64);
    let p = if chi2(lo)? >= target {
        lo
    } else if chi2(hi)? <= target {
        hi
    } else {
        for _ in 0..12 {
            let mid = 0.5 * (lo + hi);
            if chi2(mid)? > target {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        0.5 * (lo + hi)
    };
    let rho = 10f64.powf(p) * scale;
    let curve = if windows.len() == 1 {
        let (k, _) = solve_rows(&rows[0], rho)?;
        KnotCurve {
            t0: rows[0].t0,
            h,
            k,
        }
    } else {
        solve(s, v, arms, h, sigma, rho)?
    };
    Some((curve, p))
}

/// Heading and displacement along a piece of length `len` whose curvature goes
/// linearly from `k0` to `k1`, starting at heading `th`: 3-point Gauss–Legendre
/// for short pieces (turn ≤ 0.05 rad, error far below 1e-12 m), the clothoid
/// quadrature of [`crate::geometry`] otherwise.
pub(crate) fn advance(th: f64, k0: f64, k1: f64, len: f64) -> (f64, f64, f64) {
    let c = (k1 - k0) / len;
    let th_end = th + 0.5 * (k0 + k1) * len;
    if k0.abs().max(k1.abs()) * len > 0.05 {
        let (dx, dy) = crate::geometry::integrate_heading(th, k0, c, len);
        return (dx, dy, th_end);
    }
    const X: f64 = 0.774_596_669_241_483_4; // sqrt(3/5)
    let (mut sx, mut sy) = (0.0, 0.0);
    for (u, wgt) in [(-X, 5.0 / 9.0), (0.0, 8.0 / 9.0), (X, 5.0 / 9.0)] {
        let t = 0.5 * len * (1.0 + u);
        let a = th + k0 * t + 0.5 * c * t * t;
        sx += wgt * a.cos();
        sy += wgt * a.sin();
    }
    (0.5 * len * sx, 0.5 * len * sy, th_end)
}

/// Integrate the curve exactly (piecewise-linear curvature) along the rail
/// from the first station (origin, heading 0): rail positions, tangent
/// headings and curvature at every station.
pub(crate) fn integrate_curve(
    curve: &KnotCurve,
    s: &[f64],
) -> (Vec<(f64, f64)>, Vec<f64>, Vec<f64>) {
    let n = s.len();
    let mut pos = Vec::with_capacity(n);
    let mut th = Vec::with_capacity(n);
    let mut ks = Vec::with_capacity(n);
    let (mut x, mut y, mut h) = (0.0, 0.0, 0.0);
    for i in 0..n {
        pos.push((x, y));
        th.push(h);
        ks.push(curve.at(s[i]));
        if i + 1 == n {
            break;
        }
        // Pieces between s[i] and s[i+1], broken at the knots.
        let mut p = s[i];
        let end = s[i + 1];
        while p < end {
            let u = ((p - curve.t0) / curve.h).floor() + 1.0;
            let knot = curve.t0 + u * curve.h;
            let q = if knot > p + 1e-12 && knot < end {
                knot
            } else {
                end
            };
            let (dx, dy, h2) = advance(h, curve.at(p), curve.at(q), q - p);
            x += dx;
            y += dy;
            h = h2;
            p = q;
        }
    }
    (pos, th, ks)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kernel_rows_sum_to_half_a_squared_and_match_methods_weights() {
        // METHODS §3: W_{i,i+j} = d(a − |j|d)/2 for 0<|j|<m, a d/2 − d²/6 at j=0, d²/12 at |j|=m.
        let (a, d) = (10.0, 2.0);
        let mut row = Vec::new();
        let jf = kernel_row(50.0, Arms::symmetric(a), 0.0, d, 200, &mut row);
        assert_eq!(jf, 20);
        let m = 5usize;
        assert!((row.iter().sum::<f64>() - 0.5 * a * a).abs() < 1e-12);
        for (t, c) in row.iter().enumerate() {
            let j = (t as i64 - m as i64).unsigned_abs() as usize;
            let expect = if j == 0 {
                a * d / 2.0 - d * d / 6.0
            } else if j == m {
                d * d / 12.0
            } else {
                d * (a - j as f64 * d) / 2.0
            };
            assert!((c - expect).abs() < 1e-12, "{t}: {c} vs {expect}");
        }
    }

    #[test]
    fn constant_curvature_integrates_to_a_circle() {
        let r = 200.0;
        let curve = KnotCurve {
            t0: -5.0,
            h: 0.7,
            k: vec![1.0 / r; 400],
        };
        let s: Vec<f64> = (0..100).map(|i| i as f64 * 2.5).collect();
        let (pos, th, _) = integrate_curve(&curve, &s);
        for i in 0..100 {
            let ang = s[i] / r;
            assert!((pos[i].0 - r * ang.sin()).abs() < 1e-10);
            assert!((pos[i].1 - r * (1.0 - ang.cos())).abs() < 1e-10);
            assert!((th[i] - ang).abs() < 1e-12);
        }
    }
}
