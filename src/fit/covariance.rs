//! Covariance of the fitted parameters of all groups, kept as one block per
//! group (the joint matrix is block-diagonal), and the delta method for
//! derived quantities.
//!
//! Per group the correlation-robust sandwich `(JᵀJ)⁻¹JᵀΓJ(JᵀJ)⁻¹` with the
//! pooled noise autocovariance `Γ` is used, but never below the ordinary
//! covariance `σ²(JᵀJ)⁻¹`: with white noise the two agree, and a noisy
//! autocovariance must not make intervals narrower than the scatter allows.
//!
//! ## Reference
//! SEGMENTATION.md §7 (this project's design study).

use super::lm;
use super::search::{self, GroupFit, Problem};
use super::stats;
use nalgebra::DMatrix;

/// A sandwich variance below this fraction of the ordinary one (for any
/// parameter) is implausible (a flat autocovariance window can make it
/// small or negative): the ordinary covariance is used instead.
const SANDWICH_SANE_FRACTION: f64 = 0.25;

/// The parameters of every group and their covariance: one block per group
/// (groups are independent, so the joint covariance is block-diagonal), with
/// an index from each parameter to its block and row. Memory and time are
/// linear in the number of groups (a dense matrix of all parameters would
/// grow with its square: 31 GB for a long hand survey).
#[derive(Debug, Clone)]
pub(super) struct Covariance {
    /// Covariance of each group's parameters (in `lm::full_params` order).
    blocks: Vec<DMatrix<f64>>,
    /// Where `Mid(j)`, `Len(j)` and `Level(i)` of the assembled chain live,
    /// by their global index `j` or `i`.
    mid: Vec<Option<Slot>>,
    len: Vec<Option<Slot>>,
    level: Vec<Option<Slot>>,
    /// Free parameters in all.
    pub p_free: usize,
}

/// A parameter's block and row in it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Slot {
    block: usize,
    row: usize,
}

impl Covariance {
    /// Covariance of the groups `fits`; `gamma` is the noise autocovariance
    /// at lags `0..`, `s2_ols` the residual variance of the ordinary one.
    /// The groups are done on the current rayon pool for long surveys unless
    /// `threads` is 1 (the same numbers either way).
    pub fn of_groups(
        fits: &[GroupFit],
        p: &Problem,
        gamma: &[f64],
        s2_ols: f64,
        threads: usize,
    ) -> Self {
        use rayon::prelude::*;
        // Each group's first global ramp index.
        let offsets: Vec<usize> = fits
            .iter()
            .scan(0, |off, g| {
                let o = *off;
                *off += g.chain.ramps();
                Some(o)
            })
            .collect();
        let one = |(g, &ramp_off): (&GroupFit, &usize)| group_block(g, ramp_off, p, gamma, s2_ols);
        let blocks: Vec<(Vec<lm::Param>, DMatrix<f64>, usize)> =
            if threads > 1 && fits.len() > 1 && p.s.len() >= search::PARALLEL_MIN_READINGS {
                fits.par_iter()
                    .zip(&offsets)
                    .with_max_len(1)
                    .map(one)
                    .collect()
            } else {
                fits.iter().zip(&offsets).map(one).collect()
            };
        let p_free = blocks.iter().map(|b| b.2).sum();
        let blocks = blocks.into_iter().map(|(q, c, _)| (q, c)).collect();
        Self::from_blocks(blocks, p_free)
    }

    /// From each group's parameters (global indices) and their covariance.
    /// A parameter named by two groups (a plateau two groups share) is the
    /// first group's.
    fn from_blocks(blocks: Vec<(Vec<lm::Param>, DMatrix<f64>)>, p_free: usize) -> Self {
        let mut cov = Covariance {
            blocks: Vec::with_capacity(blocks.len()),
            mid: Vec::new(),
            len: Vec::new(),
            level: Vec::new(),
            p_free,
        };
        for (block, (params, c)) in blocks.into_iter().enumerate() {
            debug_assert_eq!((c.nrows(), c.ncols()), (params.len(), params.len()));
            for (row, q) in params.into_iter().enumerate() {
                let (list, i) = cov.list_mut(q);
                if list.len() <= i {
                    list.resize(i + 1, None);
                }
                if list[i].is_none() {
                    list[i] = Some(Slot { block, row });
                }
            }
            cov.blocks.push(c);
        }
        cov
    }

    fn list_mut(&mut self, q: lm::Param) -> (&mut Vec<Option<Slot>>, usize) {
        match q {
            lm::Param::Mid(j) => (&mut self.mid, j),
            lm::Param::Len(j) => (&mut self.len, j),
            lm::Param::Level(i) => (&mut self.level, i),
        }
    }

    fn slot(&self, q: lm::Param) -> Option<Slot> {
        let (list, i) = match q {
            lm::Param::Mid(j) => (&self.mid, j),
            lm::Param::Len(j) => (&self.len, j),
            lm::Param::Level(i) => (&self.level, i),
        };
        list.get(i).copied().flatten()
    }

    /// Variance of a linear combination `Σ g_p θ_p` (delta method); parameters
    /// not fitted (held) contribute nothing, nor do pairs from different
    /// groups (independent).
    pub fn var(&self, grad: &[(lm::Param, f64)]) -> f64 {
        let idx: Vec<(Slot, f64)> = grad
            .iter()
            .filter_map(|&(p, g)| self.slot(p).map(|s| (s, g)))
            .collect();
        let mut var = 0.0;
        for &(i, gi) in &idx {
            let block = &self.blocks[i.block];
            for &(k, gk) in &idx {
                if k.block == i.block {
                    var += gi * gk * block[(i.row, k.row)];
                }
            }
        }
        var.max(0.0)
    }
}

/// One group's parameters (global indices, its ramps counted from
/// `ramp_off`), their covariance and the number of free ones.
fn group_block(
    g: &GroupFit,
    ramp_off: usize,
    p: &Problem,
    gamma: &[f64],
    s2_ols: f64,
) -> (Vec<lm::Param>, DMatrix<f64>, usize) {
    let par = lm::full_params(&g.chain);
    let tm = lm::reduce_map(&g.chain);
    let data = p.data(g.lo_idx, g.hi_idx, g.lo, g.hi);
    let (_, jf) = lm::jacobian(&g.chain, &par, &data);
    let jr = &jf * &tm;
    let cov = match (stats::sandwich(&jr, gamma), stats::sandwich(&jr, &[s2_ols])) {
        (Some(sw), Some(ols)) => &tm * choose(sw, ols) * tm.transpose(),
        _ => DMatrix::from_diagonal_element(par.len(), par.len(), f64::INFINITY),
    };
    let global = par
        .iter()
        .map(|q| match *q {
            lm::Param::Mid(j) => lm::Param::Mid(j + ramp_off),
            lm::Param::Len(j) => lm::Param::Len(j + ramp_off),
            lm::Param::Level(i) => lm::Param::Level(i + ramp_off),
        })
        .collect();
    (global, cov, tm.ncols())
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

    /// The reference: one dense matrix of all parameters, looked up by
    /// linear search (first match), as before the blocks.
    fn dense_var(blocks: &[(Vec<lm::Param>, DMatrix<f64>)], grad: &[(lm::Param, f64)]) -> f64 {
        let params: Vec<lm::Param> = blocks.iter().flat_map(|b| b.0.clone()).collect();
        let n = params.len();
        let mut cov = DMatrix::zeros(n, n);
        let mut first = 0;
        for (_, c) in blocks {
            let k = c.nrows();
            cov.view_mut((first, first), (k, k)).copy_from(c);
            first += k;
        }
        let idx: Vec<(usize, f64)> = grad
            .iter()
            .filter_map(|&(p, g)| params.iter().position(|q| *q == p).map(|i| (i, g)))
            .collect();
        let mut var = 0.0;
        for &(i, gi) in &idx {
            for &(k, gk) in &idx {
                var += gi * gk * cov[(i, k)];
            }
        }
        var.max(0.0)
    }

    #[test]
    fn blocks_give_the_dense_variance_exactly() {
        use lm::Param::{Len, Level, Mid};
        // Two groups sharing plateau 1 (free in both: the first group's wins),
        // symmetric positive definite blocks.
        let spd = |k: usize, seed: f64| {
            let a = DMatrix::from_fn(k, k, |i, j| ((i * 7 + j * 3) as f64 * seed).sin());
            &a * a.transpose() + DMatrix::identity(k, k)
        };
        let blocks = vec![
            (vec![Mid(0), Len(0), Level(0), Level(1)], spd(4, 0.37)),
            (vec![Mid(1), Len(1), Level(1), Level(2)], spd(4, 0.71)),
            (vec![Mid(2), Len(2)], spd(2, 1.3)),
        ];
        let cov = Covariance::from_blocks(blocks.clone(), 9);
        let grads: Vec<Vec<(lm::Param, f64)>> = vec![
            vec![(Mid(0), 1.0), (Len(0), -0.5)],
            vec![(Level(1), 2.0)],
            vec![(Mid(1), 1.0), (Len(0), 0.5), (Level(2), 3.0)],
            vec![
                (Mid(2), 1.0),
                (Level(7), 1.0),
                (Len(2), 0.25),
                (Mid(0), -1.0),
            ],
            vec![],
        ];
        for g in &grads {
            assert_eq!(cov.var(g), dense_var(&blocks, g), "gradient {g:?}");
        }
        // Cross-group pairs add nothing.
        let one = cov.var(&[(Mid(0), 1.0)]) + cov.var(&[(Mid(2), 1.0)]);
        assert_eq!(cov.var(&[(Mid(0), 1.0), (Mid(2), 1.0)]), one);
    }
}
