//! Banded linear least squares by sequential Givens rotations.
//!
//! Rows are fed in order of their first column; each row's non-zeros lie in a
//! window of `w` columns starting at its first column. The upper-triangular
//! factor `R` is kept in band storage (`w` entries per column), so memory is
//! `O(n w)` and time `O(rows · w²)`. No normal equations are formed, so the
//! condition number is not squared.
//!
//! ## Reference
//! Lawson & Hanson, *Solving Least Squares Problems*, 1974, ch. 27 (sequential
//! banded processing, from memory); Golub & Van Loan, *Matrix Computations*,
//! 4th ed., 2013, §5.1.8 (Givens rotations, from memory); DEPENDENCIES.md §5.

/// An incremental banded least-squares problem with `n` unknowns and band width `w`.
#[derive(Debug, Clone)]
pub struct BandedLsq {
    n: usize,
    w: usize,
    /// Row `k` of R: `r[k*w + t] = R[k][k+t]`.
    r: Vec<f64>,
    /// Rotated right-hand side.
    d: Vec<f64>,
    /// Sum of squares of the rotated-out residual components.
    rss: f64,
    buf: Vec<f64>,
    last_first: usize,
}

impl BandedLsq {
    /// A problem with `n` unknowns whose rows span at most `w` consecutive columns.
    pub fn new(n: usize, w: usize) -> Self {
        let w = w.max(1);
        BandedLsq {
            n,
            w,
            r: vec![0.0; n * w],
            d: vec![0.0; n],
            rss: 0.0,
            buf: vec![0.0; w],
            last_first: 0,
        }
    }

    /// Add the row `Σ coef[t]·x[first+t] ≈ y` (`coef.len() ≤ w`). Rows must be
    /// added with non-decreasing `first`: then every entry of `R` that a new row
    /// meets lies inside the row's own window, and the update costs `O(w²)`.
    pub fn add_row(&mut self, first: usize, coef: &[f64], y: f64) {
        let w = self.w;
        debug_assert!(coef.len() <= w);
        debug_assert!(
            first >= self.last_first,
            "rows must come in order of first column"
        );
        self.last_first = first;
        let m = coef.len().min(w);
        self.buf[..m].copy_from_slice(&coef[..m]);
        self.buf[m..].fill(0.0);
        let mut yv = y;
        // buf[t] is the coefficient of column first + t. Eliminating it with R
        // row c = first + t touches R[c][0..w − t] and buf[t..w]; the rest of
        // R row c lies beyond the window and is zero by the ordering.
        for t in 0..w {
            let c = first + t;
            if c >= self.n {
                break;
            }
            let a = self.buf[t];
            if a == 0.0 {
                continue;
            }
            let rk = &mut self.r[c * w..c * w + (w - t)];
            let b = rk[0];
            let h = (a * a + b * b).sqrt();
            let (cs, sn) = (b / h, a / h);
            for (rv, xv) in rk.iter_mut().zip(self.buf[t..].iter_mut()) {
                let (r0, x0) = (*rv, *xv);
                *rv = cs * r0 + sn * x0;
                *xv = -sn * r0 + cs * x0;
            }
            let dv = self.d[c];
            self.d[c] = cs * dv + sn * yv;
            yv = -sn * dv + cs * yv;
        }
        self.rss += yv * yv;
    }

    /// Residual sum of squares of the rows added so far (at the solution).
    #[cfg_attr(not(test), allow(dead_code, reason = "checked in the unit tests"))]
    pub fn rss(&self) -> f64 {
        self.rss
    }

    /// Back-substitute. Returns `None` when a column is not determined (zero
    /// pivot relative to the largest one).
    pub fn solve(&self) -> Option<Vec<f64>> {
        let (n, w) = (self.n, self.w);
        let big = (0..n).map(|i| self.r[i * w].abs()).fold(0.0_f64, f64::max);
        let mut x = vec![0.0; n];
        for i in (0..n).rev() {
            let row = &self.r[i * w..(i + 1) * w];
            let piv = row[0];
            if piv.is_nan() || piv.abs() <= 1e-14 * big {
                return None;
            }
            let mut s = self.d[i];
            for t in 1..w.min(n - i) {
                s -= row[t] * x[i + t];
            }
            x[i] = s / piv;
        }
        Some(x)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn solves_a_small_overdetermined_system_like_dense_qr() {
        // Fit x0..x3 to rows [1,1], [1,-1], second differences and anchors.
        let mut p = BandedLsq::new(4, 3);
        let rows: Vec<(usize, Vec<f64>, f64)> = vec![
            (0, vec![1.0, 0.0, 0.0], 1.0),
            (0, vec![1.0, 1.0], 3.0),
            (0, vec![1.0, -2.0, 1.0], 0.1),
            (1, vec![1.0, -2.0, 1.0], -0.2),
            (1, vec![2.0, 1.0], 4.0),
            (3, vec![1.0], 4.2),
        ];
        for (f, c, y) in &rows {
            p.add_row(*f, c, *y);
        }
        let x = p.solve().unwrap();
        // Dense normal equations for comparison (tiny, well conditioned).
        let mut a = nalgebra::DMatrix::<f64>::zeros(rows.len(), 4);
        let mut b = nalgebra::DVector::<f64>::zeros(rows.len());
        for (i, (f, c, y)) in rows.iter().enumerate() {
            for (t, v) in c.iter().enumerate() {
                a[(i, f + t)] = *v;
            }
            b[i] = *y;
        }
        let sol = a.clone().svd(true, true).solve(&b, 1e-14).unwrap();
        for i in 0..4 {
            assert!((x[i] - sol[i]).abs() < 1e-12, "{x:?} vs {sol}");
        }
        let r = &a * &sol - &b;
        assert!((p.rss() - r.norm_squared()).abs() < 1e-12);
    }

    #[test]
    fn reports_an_undetermined_column() {
        let mut p = BandedLsq::new(3, 2);
        p.add_row(0, &[1.0, 1.0], 1.0);
        p.add_row(1, &[1.0, 1.0], 1.0);
        assert!(p.solve().is_none());
    }
}
