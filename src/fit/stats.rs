//! Covariance of the fitted parameters (ordinary and correlation-robust
//! sandwich) and the distributions used for intervals and tests.
//!
//! ## Reference
//! Newey & West, "A simple, positive semi-definite, heteroskedasticity and
//! autocorrelation consistent covariance matrix", Econometrica 55(3), 1987
//! (from memory). SEGMENTATION.md §7 (pooled autocovariance instead of local
//! products).

use nalgebra::DMatrix;
use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor, StudentsT};

/// Autocovariance of a residual series at index lags `0..=h_max`, pooled
/// over `runs` (each a contiguous stretch of readings).
pub fn autocovariance(runs: &[&[f64]], h_max: usize) -> Vec<f64> {
    let mut num = vec![0.0; h_max + 1];
    let mut n0 = 0usize;
    for r in runs {
        n0 += r.len();
        for h in 0..=h_max.min(r.len().saturating_sub(1)) {
            num[h] += r.iter().zip(&r[h..]).map(|(a, b)| a * b).sum::<f64>();
        }
    }
    let n0 = n0.max(1) as f64;
    num.iter().map(|x| x / n0).collect()
}

/// `(JᵀJ)⁻¹ (JᵀΓJ) (JᵀJ)⁻¹` with `Γ_ik = γ(|i−k|)` for `|i−k| ≤ H = γ.len() − 1`
/// (a flat window: versine noise from track irregularity is a second
/// difference, so its autocovariance has negative lobes that a tapered window
/// would cut, overstating the variance of long averages such as an arc's
/// curvature; observed in `examples/fit_accuracy.rs`). The caller guards
/// against a too-small result. With `γ = [σ²]` this is `σ²(JᵀJ)⁻¹`.
/// Returns `None` when `JᵀJ` is singular.
pub fn sandwich(j: &DMatrix<f64>, gamma: &[f64]) -> Option<DMatrix<f64>> {
    let p = j.ncols();
    let n = j.nrows();
    if p == 0 {
        return Some(DMatrix::zeros(0, 0));
    }
    let jtj = j.transpose() * j;
    let binv = invert_spd(&jtj)?;
    let mut m = DMatrix::zeros(p, p);
    // Sparse rows: a reading informs only the parameters of nearby elements.
    let sp: Vec<Vec<(usize, f64)>> = (0..n)
        .map(|i| {
            (0..p)
                .filter(|&c| j[(i, c)] != 0.0)
                .map(|c| (c, j[(i, c)]))
                .collect()
        })
        .collect();
    for i in 0..n {
        if sp[i].is_empty() {
            continue;
        }
        for (h, &g) in gamma.iter().enumerate() {
            let w = g;
            let k = i + h;
            if k >= n {
                break;
            }
            if w == 0.0 || sp[k].is_empty() {
                continue;
            }
            for &(a, ja) in &sp[i] {
                for &(b, kb) in &sp[k] {
                    let x = w * ja * kb;
                    m[(a, b)] += x;
                    if h > 0 {
                        m[(b, a)] += x;
                    }
                }
            }
        }
    }
    Some(&binv * m * &binv)
}

/// Inverse of a symmetric positive definite matrix, with a tiny relative
/// ridge if the plain Cholesky fails (nearly collinear columns).
pub fn invert_spd(a: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    if let Some(c) = a.clone().cholesky() {
        return Some(c.inverse());
    }
    let maxd = (0..a.nrows()).map(|i| a[(i, i)]).fold(0.0, f64::max);
    let mut b = a.clone();
    for i in 0..a.nrows() {
        b[(i, i)] += 1e-10 * maxd.max(1e-300);
    }
    b.cholesky().map(|c| c.inverse())
}

/// Two-sided 95 % Student-t quantile for `dof` degrees of freedom (1.96 in
/// the limit).
pub fn t95(dof: f64) -> f64 {
    StudentsT::new(0.0, 1.0, dof.max(1.0))
        .map(|t| t.inverse_cdf(0.975))
        .unwrap_or(1.959964)
}

/// Upper-tail probability of a chi-square statistic.
pub fn chi2_upper(stat: f64, dof: f64) -> f64 {
    ChiSquared::new(dof.max(1.0))
        .map(|c| 1.0 - c.cdf(stat.max(0.0)))
        .unwrap_or(f64::NAN)
}

/// Upper-tail probability of a variance ratio with `d1` and `d2` degrees of
/// freedom: the chi-square test when the reading variance is itself an
/// estimate on `d2` degrees of freedom (it tends to [`chi2_upper`] of
/// `d1·x` as `d2` grows).
pub fn f_upper(x: f64, d1: f64, d2: f64) -> f64 {
    FisherSnedecor::new(d1.max(1.0), d2.max(1.0))
        .map(|f| 1.0 - f.cdf(x.max(0.0)))
        .unwrap_or(f64::NAN)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn white_sandwich_is_ordinary_covariance() {
        let j = DMatrix::from_fn(50, 2, |i, k| if k == 0 { 1.0 } else { i as f64 });
        let c = sandwich(&j, &[4.0]).unwrap();
        let o = invert_spd(&(j.transpose() * &j)).unwrap() * 4.0;
        assert!((c - o).abs().max() < 1e-12);
    }

    #[test]
    fn f_tail_matches_scipy() {
        // scipy 1.17.1 on this machine: scipy.stats.f.sf(1.5, 20, 30) =
        // 0.15372812747955322, f.sf(0.8, 60, 25) = 0.7625739689724145.
        let p = f_upper(1.5, 20.0, 30.0);
        assert!((p - 0.153_728_127_479_553_2).abs() < 1e-9, "{p}");
        let p = f_upper(0.8, 60.0, 25.0);
        assert!((p - 0.762_573_968_972_414_5).abs() < 1e-9, "{p}");
        // Large d2: the chi-square tail of d1·x.
        let q = f_upper(1.2, 40.0, 1e7);
        assert!((q - chi2_upper(48.0, 40.0)).abs() < 1e-4, "{q}");
    }

    #[test]
    fn t_quantile_matches_scipy() {
        // DEPENDENCIES.md §3.2: scipy t(0.975, 10) = 2.228138851986274.
        assert!((t95(10.0) - 2.228138851986274).abs() < 1e-9);
    }
}
