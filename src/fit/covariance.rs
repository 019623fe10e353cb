//! Covariance of the fitted parameters of all groups, assembled into one
//! block-diagonal matrix, and the delta method for derived quantities.
//!
//! Per group the correlation-robust sandwich `(JᵀJ)⁻¹JᵀΓJ(JᵀJ)⁻¹` with the
//! pooled noise autocovariance `Γ` is used, but never below the ordinary
//! covariance `σ²(JᵀJ)⁻¹`: with white noise the two agree, and a noisy
//! autocovariance must not make intervals narrower than the scatter allows.
//!
//! ## Reference
//! SEGMENTATION.md §7 (this project's design study).

use super::lm;
use super::search::{GroupFit, Problem};
use super::stats;
use nalgebra::DMatrix;

/// A sandwich variance below this fraction of the ordinary one (for any
/// parameter) is implausible (a flat autocovariance window can make it
/// small or negative): the ordinary covariance is used instead.
const SANDWICH_SANE_FRACTION: f64 = 0.25;

/// The parameters of every group and their joint covariance.
#[derive(Debug, Clone)]
pub(super) struct Covariance {
    /// Global parameters (ramp and level indices of the assembled chain).
    params: Vec<lm::Param>,
    cov: DMatrix<f64>,
    /// Free parameters in all.
    pub p_free: usize,
}

impl Covariance {
    /// Covariance of the groups `fits`; `gamma` is the noise autocovariance
    /// at lags `0..`, `s2_ols` the residual variance of the ordinary one.
    pub fn of_groups(fits: &[GroupFit], p: &Problem, gamma: &[f64], s2_ols: f64) -> Self {
        let mut params: Vec<lm::Param> = Vec::new();
        let mut blocks: Vec<(usize, DMatrix<f64>)> = Vec::new(); // (first index, cov)
        let mut ramp_off = 0usize;
        let mut p_free = 0usize;
        for g in fits {
            let par = lm::full_params(&g.chain);
            let tm = lm::reduce_map(&g.chain);
            p_free += tm.ncols();
            let data = p.data(g.lo_idx, g.hi_idx, g.lo, g.hi);
            let (_, jf) = lm::jacobian(&g.chain, &par, &data);
            let jr = &jf * &tm;
            let cov = match (stats::sandwich(&jr, gamma), stats::sandwich(&jr, &[s2_ols])) {
                (Some(sw), Some(ols)) => &tm * choose(sw, ols) * tm.transpose(),
                _ => DMatrix::from_diagonal_element(par.len(), par.len(), f64::INFINITY),
            };
            blocks.push((params.len(), cov));
            params.extend(par.iter().map(|q| match *q {
                lm::Param::Mid(j) => lm::Param::Mid(j + ramp_off),
                lm::Param::Len(j) => lm::Param::Len(j + ramp_off),
                lm::Param::Level(i) => lm::Param::Level(i + ramp_off),
            }));
            ramp_off += g.chain.ramps();
        }
        let total = params.len();
        let mut cov = DMatrix::zeros(total, total);
        for (first, c) in &blocks {
            let k = c.nrows();
            cov.view_mut((*first, *first), (k, k)).copy_from(c);
        }
        Covariance {
            params,
            cov,
            p_free,
        }
    }

    /// Variance of a linear combination `Σ g_p θ_p` (delta method); parameters
    /// not fitted (held) contribute nothing.
    pub fn var(&self, grad: &[(lm::Param, f64)]) -> f64 {
        let idx: Vec<(usize, f64)> = grad
            .iter()
            .filter_map(|&(p, g)| self.params.iter().position(|q| *q == p).map(|i| (i, g)))
            .collect();
        let mut var = 0.0;
        for &(i, gi) in &idx {
            for &(k, gk) in &idx {
                var += gi * gk * self.cov[(i, k)];
            }
        }
        var.max(0.0)
    }
}

/// The sandwich when it is at least the ordinary covariance on average and
/// plausible for every parameter; otherwise the ordinary one.
fn choose(sw: DMatrix<f64>, ols: DMatrix<f64>) -> DMatrix<f64> {
    let k = sw.nrows();
    let ratio = (0..k)
        .filter(|&i| ols[(i, i)] > 0.0)
        .map(|i| sw[(i, i)] / ols[(i, i)])
        .sum::<f64>()
        / k.max(1) as f64;
    let sane = (0..k).all(|i| sw[(i, i)] >= SANDWICH_SANE_FRACTION * ols[(i, i)]);
    if ratio >= 1.0 && sane { sw } else { ols }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ordinary_covariance_wins_when_the_sandwich_is_smaller() {
        let ols = DMatrix::from_diagonal_element(2, 2, 4.0);
        let sw = DMatrix::from_diagonal_element(2, 2, 2.0);
        assert_eq!(choose(sw, ols.clone()), ols);
        let big = DMatrix::from_diagonal_element(2, 2, 5.0);
        assert_eq!(choose(big.clone(), ols), big);
    }
}
