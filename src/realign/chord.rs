//! The chord relation between slews and versine changes, and the banded
//! least-squares solver used for the slews without limits and for their
//! standard deviations.
//!
//! The solver is written here rather than taken from a crate: a sequential
//! banded Givens QR with a selected inverse is about a hundred lines, is the
//! fastest and most accurate choice measured for this pattern (DEPENDENCIES.md
//! §5: faer's sparse QR scaled badly, normal-equation Cholesky loses
//! definiteness on long runs), and gives the covariance band directly.

use crate::survey::Rail;

/// The change of field versines caused by slews `slew` (positive left,
/// metres, one per reading, track beyond the ends unmoved) with readings
/// `step` per half chord, all read on `rail`.
///
/// Chord-side change at reading i: `−s_i + (s_{i−m} + s_{i+m})/2`
/// (METHODS §5, CHECKS 1.10), converted to the field convention of `rail`.
///
/// # Examples
/// ```
/// use chordline::realign::versine_change;
/// use chordline::survey::Rail;
/// // CHECKS.md 1.10: a left-hand curve read on its outer (right) rail; a
/// // +10 mm slew outwards (to the right, −0.010 here) raises that versine by
/// // 10 mm and lowers each neighbour's by 5 mm.
/// let dv = versine_change(&[0.0, -0.010, 0.0], 1, Rail::Right);
/// assert!((dv[1] - 0.010).abs() < 1e-15 && (dv[0] + 0.005).abs() < 1e-15);
/// ```
pub fn versine_change(slew: &[f64], step: usize, rail: Rail) -> Vec<f64> {
    let n = slew.len();
    let at = |j: Option<usize>| j.filter(|&j| j < n).map_or(0.0, |j| slew[j]);
    (0..n)
        .map(|i| {
            let cs = -slew[i] + 0.5 * (at(i.checked_sub(step)) + at(Some(i + step)));
            rail.chord_side(cs)
        })
        .collect()
}

/// Sequential banded Givens QR for rows with at most `W` nonzeros starting at
/// their first column (after DEPENDENCIES.md §5).
pub(super) const W: usize = 3;

pub(super) struct BandQr {
    r: Vec<[f64; W]>,
    d: Vec<f64>,
}

impl BandQr {
    pub(super) fn new(n: usize) -> Self {
        BandQr {
            r: vec![[0.0; W]; n],
            d: vec![0.0; n],
        }
    }

    pub(super) fn add_row(&mut self, first: usize, mut buf: [f64; W], mut y: f64) {
        let n = self.r.len();
        let mut c = first;
        while c < n {
            let a = buf[0];
            if a != 0.0 {
                let b = self.r[c][0];
                let h = a.hypot(b);
                let (cs, sn) = (b / h, a / h);
                let rk = &mut self.r[c];
                for t in 0..W {
                    let (rv, bv) = (rk[t], buf[t]);
                    rk[t] = cs * rv + sn * bv;
                    buf[t] = -sn * rv + cs * bv;
                }
                let dv = self.d[c];
                self.d[c] = cs * dv + sn * y;
                y = -sn * dv + cs * y;
            }
            buf.rotate_left(1);
            buf[W - 1] = 0.0;
            c += 1;
            if buf.iter().all(|v| *v == 0.0) {
                break;
            }
        }
    }

    /// Solve; `Err(column)` for the first column left undetermined.
    pub(super) fn solve(&self) -> Result<Vec<f64>, usize> {
        let n = self.r.len();
        if let Some(c) = (0..n).find(|&i| self.r[i][0].abs() < 1e-9) {
            return Err(c);
        }
        let mut x = vec![0.0; n];
        for i in (0..n).rev() {
            let mut s = self.d[i];
            for t in 1..W {
                if i + t < n {
                    s -= self.r[i][t] * x[i + t];
                }
            }
            x[i] = s / self.r[i][0];
        }
        Ok(x)
    }

    /// Band of (RᵀR)⁻¹ (`out[i][t]` = Σ_{i,i+t}) by the selected-inverse
    /// recurrence `Σ_ij = (δ_ij / r_ii − Σ_k r_ik Σ_kj) / r_ii` for j ≥ i,
    /// from the last row up.
    pub(super) fn band_inverse(&self) -> Vec<[f64; W]> {
        let n = self.r.len();
        // sig[i][t] = Σ_{i, i+t}
        let mut sig = vec![[0.0; W]; n];
        let get = |sig: &Vec<[f64; W]>, p: usize, q: usize| {
            let (lo, hi) = if p <= q { (p, q) } else { (q, p) };
            if hi - lo < W { sig[lo][hi - lo] } else { 0.0 }
        };
        for i in (0..n).rev() {
            let rii = self.r[i][0];
            for j in (i..(i + W).min(n)).rev() {
                let mut s = if j == i { 1.0 / rii } else { 0.0 };
                for k in (i + 1)..(i + W).min(n) {
                    s -= self.r[i][k - i] * get(&sig, k, j);
                }
                sig[i][j - i] = s / rii;
            }
        }
        sig
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    #[allow(clippy::needless_range_loop)] // dense matrix algebra reads best indexed
    fn selected_inverse_matches_dense() {
        // Random-ish banded R; compare with the dense inverse of RᵀR.
        let n = 7;
        let mut qr = BandQr::new(n);
        for k in 0..n + 3 {
            let c = k % n;
            let mut b = [
                1.0 + 0.1 * k as f64,
                -0.7 + 0.05 * k as f64,
                0.3 - 0.02 * (k * k) as f64,
            ];
            for (t, v) in b.iter_mut().enumerate() {
                if c + t >= n {
                    *v = 0.0;
                }
            }
            qr.add_row(c, b, 0.0);
        }
        // Dense RᵀR.
        let mut a = vec![vec![0.0; n]; n];
        for i in 0..n {
            for j in 0..n {
                for k in 0..n {
                    let rki = if i >= k && i - k < W {
                        qr.r[k][i - k]
                    } else {
                        0.0
                    };
                    let rkj = if j >= k && j - k < W {
                        qr.r[k][j - k]
                    } else {
                        0.0
                    };
                    a[i][j] += rki * rkj;
                }
            }
        }
        // Gauss–Jordan inverse.
        let mut inv = vec![vec![0.0; n]; n];
        for (i, row) in inv.iter_mut().enumerate() {
            row[i] = 1.0;
        }
        for p in 0..n {
            let piv = a[p][p];
            for j in 0..n {
                a[p][j] /= piv;
                inv[p][j] /= piv;
            }
            for i in 0..n {
                if i != p {
                    let f = a[i][p];
                    for j in 0..n {
                        a[i][j] -= f * a[p][j];
                        inv[i][j] -= f * inv[p][j];
                    }
                }
            }
        }
        let band = qr.band_inverse();
        for i in 0..n {
            for t in 0..W.min(n - i) {
                let want = inv[i][i + t];
                assert!(
                    (band[i][t] - want).abs() < 1e-9 * inv[i][i].abs().max(1.0),
                    "{i},{t}: {} vs {want}",
                    band[i][t]
                );
            }
        }
    }
}
