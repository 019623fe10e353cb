//! Symmetric positive definite systems in envelope (profile) storage: the
//! normal equations of the chord-space fit, whose parameters each reach only
//! the readings within about a chord of their element.

use nalgebra::{DMatrix, DVector};

/// A symmetric matrix stored by rows of its lower triangle, each row from its
/// first non-zero column to the diagonal (the envelope, or profile). The
/// Cholesky factor of such a matrix fills in only inside the envelope
/// (George & Liu, *Computer Solution of Large Sparse Positive Definite
/// Systems*, 1981, ch. 4), so factorising costs the sum of the squared row
/// widths instead of `p³/3`.
#[derive(Debug, Clone)]
pub(super) struct Envelope {
    /// First stored column of each row.
    pub(super) first: Vec<usize>,
    /// Where row `i` starts in `data`; row `i` holds columns `first[i]..=i`.
    off: Vec<usize>,
    pub(super) data: Vec<f64>,
}

impl Envelope {
    /// Zeros in the envelope whose row `i` starts at column `first[i] ≤ i`.
    pub(super) fn new(first: Vec<usize>) -> Self {
        let mut off = Vec::with_capacity(first.len() + 1);
        let mut n = 0;
        for (i, &f) in first.iter().enumerate() {
            off.push(n);
            n += i + 1 - f;
        }
        off.push(n);
        Envelope {
            first,
            off,
            data: vec![0.0; n],
        }
    }

    pub(super) fn len(&self) -> usize {
        self.first.len()
    }

    /// Index in `data` of entry `(i, k)`, `first[i] ≤ k ≤ i`.
    pub(super) fn at(&self, i: usize, k: usize) -> usize {
        self.off[i] + k - self.first[i]
    }

    /// Add `x` to entry `(i, k)`, `k ≤ i`, inside the envelope.
    pub(super) fn add(&mut self, i: usize, k: usize, x: f64) {
        let at = self.at(i, k);
        self.data[at] += x;
    }

    pub(super) fn diag(&self, i: usize) -> f64 {
        self.data[self.at(i, i)]
    }

    pub(super) fn add_diag(&mut self, i: usize, x: f64) {
        let at = self.at(i, i);
        self.data[at] += x;
    }

    /// The whole symmetric matrix.
    pub(super) fn to_dense(&self) -> DMatrix<f64> {
        let n = self.len();
        let mut m = DMatrix::zeros(n, n);
        for i in 0..n {
            for k in self.first[i]..=i {
                let x = self.data[self.at(i, k)];
                m[(i, k)] = x;
                m[(k, i)] = x;
            }
        }
        m
    }

    /// The Cholesky factor `L` (`A = L Lᵀ`) in the same envelope, or `None`
    /// when the matrix is not positive definite.
    pub(super) fn cholesky(mut self) -> Option<Envelope> {
        for i in 0..self.len() {
            let (fi, oi) = (self.first[i], self.off[i]);
            for j in fi..=i {
                let (fj, oj) = (self.first[j], self.off[j]);
                let k0 = fi.max(fj);
                let mut sum = self.data[oi + j - fi];
                for k in k0..j {
                    sum -= self.data[oi + k - fi] * self.data[oj + k - fj];
                }
                if j == i {
                    if sum.is_nan() || sum <= 0.0 {
                        return None;
                    }
                    self.data[oi + i - fi] = sum.sqrt();
                } else {
                    self.data[oi + j - fi] = sum / self.data[oj + j - fj];
                }
            }
        }
        Some(self)
    }

    /// Solve `L Lᵀ x = b` with `self` the factor `L`.
    pub(super) fn solve(&self, b: &DVector<f64>) -> DVector<f64> {
        let n = self.len();
        let mut y = b.clone();
        for i in 0..n {
            let (fi, r) = (self.first[i], &self.data[self.off[i]..self.off[i + 1]]);
            let mut sum = y[i];
            for k in fi..i {
                sum -= r[k - fi] * y[k];
            }
            y[i] = sum / r[i - fi];
        }
        for i in (0..n).rev() {
            let (fi, r) = (self.first[i], &self.data[self.off[i]..self.off[i + 1]]);
            y[i] /= r[i - fi];
            let yi = y[i];
            for k in fi..i {
                y[k] -= r[k - fi] * yi;
            }
        }
        y
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn envelope_solve_matches_the_dense_cholesky() {
        // A banded positive definite matrix with rows of uneven width.
        let first = vec![0, 0, 1, 1, 3, 2, 5];
        let n = first.len();
        let mut dense = DMatrix::zeros(n, n);
        for i in 0..n {
            for k in first[i]..i {
                let x = 0.3 + 0.1 * ((i * 7 + k * 3) % 5) as f64;
                dense[(i, k)] = x;
                dense[(k, i)] = x;
            }
            dense[(i, i)] = 4.0 + i as f64;
        }
        let mut env = Envelope::new(first.clone());
        for i in 0..n {
            for k in first[i]..=i {
                env.add(i, k, dense[(i, k)]);
            }
        }
        let b = DVector::from_iterator(n, (0..n).map(|i| 1.0 - 0.25 * i as f64));
        let want = dense.clone().cholesky().unwrap().solve(&b);
        let got = env.clone().cholesky().unwrap().solve(&b);
        assert_eq!(env.to_dense(), dense);
        assert!((want - got).amax() < 1e-12);
        // Not positive definite: refused, as the dense factor refuses it.
        let mut bad = env;
        bad.add_diag(3, -100.0);
        assert!(bad.cholesky().is_none());
    }
}
