//! The search passes over one survey: the noise iterated to a fixed point
//! with the search, and blunders screened out, confirmed against the fitted
//! design and described.

use super::model::Chain;
use super::outliers::{self, Outlier};
use super::search::{self, GroupFit, Problem};
use super::{FitOptions, Input, NEEDED, NOISE_FLOOR, noise, segment};
use crate::diag::{Diagnostic, Location};
use crate::integrate::Plan;

/// The coarse first partition penalises with this many reading standard
/// deviations: it only has to find the long straights, even when track
/// irregularity makes the reading noise far too small (SEGMENTATION §5 step 2).
const COARSE_PENALTY_SIGMAS: f64 = 5.0;
/// Bin width of the coarse partition, in bins of the final one (it runs at
/// a quarter of the resolution, SEGMENTATION §5 step 2).
const COARSE_BIN_FACTOR: f64 = 4.0;
/// Default bin width in chords: boundaries fall between bins, a quarter chord
/// resolves what the chord can (SEGMENTATION §5 step 1).
const BIN_CHORDS: f64 = 0.25;
/// A step (two adjacent plateaus) starts as a ramp this many chords long,
/// since a ramp of exactly zero length has no gradient in its length.
const STEP_START_CHORDS: f64 = 0.25;
/// A ramp-to-ramp joint within this many standard errors of zero curvature
/// starts as a straight of zero length (a reverse curve), SEGMENTATION §5 step 3.
const ZERO_LEVEL_SIGMAS: f64 = 3.0;
/// Convergence tolerance on the RSS, as a fraction of one reading's variance.
const RSS_TOL_FRACTION: f64 = 1e-3;
/// The penalty noise is at its fixed point when a new estimate moves it by
/// less than this fraction (the robust residual scale of ~100 readings
/// scatters by about 8 %).
const NOISE_RTOL: f64 = 0.15;
/// A fitted design whose residuals scatter this many times more than the
/// quiet differences show has missed structure: the search starts again low.
/// Track irregularity alone leaves 2–4 times (the restart would then only
/// cost time and risk spurious elements); a missed yard curve tens of times.
const RESTART_RATIO: f64 = 5.0;
/// The restarted design is kept when it leaves this many times less scatter.
const RESTART_GAIN: f64 = 2.0;
/// Longest survey (readings) the restart is tried on: a low-penalty search of
/// a long recording-vehicle run costs minutes. Such runs keep the first
/// search (splitting them at long straights first is left for later).
const RESTART_MAX_READINGS: usize = 20_000;
/// Most searches the noise fixed point may cost.
const NOISE_ROUNDS: usize = 3;
/// Fewest residuals off the zero step for a residual noise figure of
/// rounded readings.
const MIN_INFORMATIVE: usize = 20;
/// Most rounds of setting blunders aside and searching again.
const OUTLIER_ROUNDS: usize = 3;

/// Settings every search of one survey shares.
pub(super) struct Settings<'a> {
    pub(super) input: &'a Input,
    pub(super) opts: &'a FitOptions,
    /// Reading noise (m), one figure.
    pub(super) sigma_read: f64,
    /// Stated reading standard deviation (m), if any.
    pub(super) stated: Option<f64>,
    /// Noise floor from the rounding of the readings (m).
    pub(super) floor: f64,
    /// The step the readings are rounded to (m), if visible.
    pub(super) step: Option<f64>,
    pub(super) threads: usize,
}

/// One search on a set of readings: the chain, its groups and the noise.
pub(super) struct Searched {
    pub(super) s: Vec<f64>,
    /// Versines searched (the bias removed if asked).
    pub(super) v: Vec<f64>,
    pub(super) chain: Chain,
    pub(super) fits: Vec<GroupFit>,
    pub(super) sigma_pen: f64,
    /// Robust spread of the residuals about the design (m).
    pub(super) sigma_res: f64,
    /// The straights of the fitted design.
    pub(super) straights: noise::Straights,
    pub(super) bias: Option<(f64, f64)>,
    pub(super) bias_removed: bool,
}

impl Settings<'_> {
    fn base_dp(&self, sigma0: f64) -> segment::DpOptions {
        let (o, inp) = (self.opts, self.input);
        let bin = o
            .bin
            .unwrap_or(BIN_CHORDS * inp.chord)
            .max(inp.spacing * 0.999);
        let min_ramp = o.min_ramp.unwrap_or(inp.chord);
        segment::DpOptions {
            bin,
            sigma_k: COARSE_PENALTY_SIGMAS * 2.0 * sigma0 / (inp.a * inp.a),
            log_n: o.penalty,
            min_straight: o.min_straight,
            min_arc: o.min_arc,
            min_ramp,
            max_ramp: o.max_ramp.max(min_ramp),
        }
    }
    pub(super) fn problem<'b>(&self, s: &'b [f64], v: &'b [f64], sigma_pen: f64) -> Problem<'b> {
        Problem {
            s,
            v,
            a: self.input.a,
            arms: self.input.arms,
            eps: self.input.eps,
            chord: self.input.chord,
            rss_tol: RSS_TOL_FRACTION * self.sigma_read * self.sigma_read,
            s2pen: sigma_pen * sigma_pen,
            ln_n: (s.len() as f64).ln() * self.opts.penalty,
            max_iterations: self.opts.max_iterations,
        }
    }
    /// Where each reading's curvature estimate `2v/a²` belongs: the reading's
    /// chainage for a chord read at its middle; for arms `a₁` behind and `a₂`
    /// ahead, the centroid of the chord's kernel, `(a₂ − a₁)/3` ahead of the
    /// measuring point (so that the partition's joints start where the
    /// curvature changes, not shifted by the asymmetry).
    fn kernel_centres<'s>(&self, s: &'s [f64]) -> std::borrow::Cow<'s, [f64]> {
        let arms = self.input.arms;
        if arms.is_symmetric() {
            return std::borrow::Cow::Borrowed(s);
        }
        let t = (arms.ahead - arms.behind) / 3.0;
        std::borrow::Cow::Owned(s.iter().map(|x| x + t).collect())
    }
    /// Typed partition at penalty noise `sigma_pen`, then the group fits.
    fn search_at(
        &self,
        s: &[f64],
        v: &[f64],
        sigma_pen: f64,
        base: &segment::DpOptions,
    ) -> (Chain, Vec<GroupFit>) {
        let (a, chord) = (self.input.a, self.input.chord);
        let kest: Vec<f64> = v.iter().map(|x| 2.0 * x / (a * a)).collect();
        let sigma_k = 2.0 * sigma_pen / (a * a);
        let o1 = segment::DpOptions { sigma_k, ..*base };
        let segs = segment::typed_partition(&self.kernel_centres(s), &kest, &o1);
        let zero_tol = ZERO_LEVEL_SIGMAS * sigma_k / (chord / self.input.spacing).max(1.0).sqrt();
        let chain = segment::chain_from_segments(&segs, zero_tol, STEP_START_CHORDS * chord);
        let groups = search::split_groups(&chain, chord);
        let p = self.problem(s, v, sigma_pen);
        let mut fits = search::fit_groups(&chain, &groups, &p, self.threads);
        let chain = search::assemble(&mut fits);
        (chain, fits)
    }
    /// The residuals that say something about the reading noise. Where the
    /// readings are rounded coarsely, a reading and a design both inside the
    /// zero step (a straight) leave a residual of exactly the design's
    /// smallness, whatever the noise: those are left out, unless too few
    /// others remain.
    fn informative(&self, v: &[f64], resid: &[f64]) -> Vec<f64> {
        let Some(q) = self.step else {
            return resid.to_vec();
        };
        let kept: Vec<f64> = v
            .iter()
            .zip(resid)
            .filter(|&(o, r)| o.abs() >= 0.5 * q || (o - r).abs() >= 0.5 * q)
            .map(|(_, r)| *r)
            .collect();
        if kept.len() >= MIN_INFORMATIVE {
            kept
        } else {
            resid.to_vec()
        }
    }
    /// The penalty noise a fitted chain implies: robust residual spread and
    /// element-scale noise, with the straights it was measured on. The
    /// element-scale noise is the smaller of the figures on the coarse
    /// partition's straights (`coarse`, measured on the residuals about the
    /// fitted design) and on the fitted design's straights: a curve the
    /// coarse partition missed, or a joint too close, can only inflate
    /// either.
    fn noise_of(
        &self,
        s: &[f64],
        v: &[f64],
        chain: &Chain,
        fits: &[GroupFit],
        coarse: &noise::Straights,
    ) -> (f64, f64, noise::Straights) {
        let (arms, eps) = (self.input.arms, self.input.eps);
        let resid: Vec<f64> = s
            .iter()
            .zip(v)
            .map(|(&x, &o)| o - chain.versine_arms(x, arms, eps))
            .collect();
        let p: usize = fits.iter().map(|g| search::n_params(&g.chain)).sum();
        let raw = noise::residual_sigma(&self.informative(v, &resid), p);
        let sigma_res = raw
            .unwrap_or(self.sigma_read)
            .max(self.floor)
            .max(NOISE_FLOOR);
        let runs = noise::runs_from_chain(chain, s, self.input.chord);
        let st = noise::on_straights(runs, v, self.input.chord, self.input.spacing);
        let sigma0 = self.stated.unwrap_or(sigma_res).max(sigma_res);
        // On the coarse straights the figure is taken from the residuals
        // about the fitted design: a curve the coarse partition took for
        // straight, and the fit found, no longer inflates it.
        let coarse_res = noise::on_straights(
            coarse.runs.clone(),
            &resid,
            self.input.chord,
            self.input.spacing,
        );
        let eff = match (st.scales.is_empty(), coarse_res.scales.is_empty()) {
            (false, false) => st.sigma_eff.min(coarse_res.sigma_eff),
            (false, true) => st.sigma_eff,
            (true, _) => coarse_res.sigma_eff,
        };
        (sigma0.max(eff), sigma_res, st)
    }

    /// Fit a given chain to every reading (one group, no search): the
    /// known-topology reference.
    pub(super) fn fit_chain(&self, mut chain: Chain) -> Searched {
        let (s, v) = (self.input.s.clone(), self.input.v.clone());
        let sigma0 = self.stated.unwrap_or(self.sigma_read).max(self.sigma_read);
        let p = self.problem(&s, &v, sigma0);
        let (lo, hi) = (s[0] - p.a, s[s.len() - 1] + p.a);
        let out = super::lm::fit(&mut chain, &p.data(0, s.len(), lo, hi), p.max_iterations);
        let mut fits = vec![GroupFit {
            chain,
            lo_idx: 0,
            hi_idx: s.len(),
            lo,
            hi,
            termination: out.termination,
        }];
        let chain = search::assemble(&mut fits);
        let none = noise::on_straights(Vec::new(), &v, self.input.chord, self.input.spacing);
        let (_, sigma_res, straights) = self.noise_of(&s, &v, &chain, &fits, &none);
        Searched {
            s,
            v,
            chain,
            fits,
            sigma_pen: sigma0,
            sigma_res,
            straights,
            bias: None,
            bias_removed: false,
        }
    }

    /// Search at penalty noise `start`, then iterate the noise to its fixed
    /// point: (chain, groups, penalty noise, residual spread, straights).
    fn fixed_point(
        &self,
        s: &[f64],
        v: &[f64],
        start: f64,
        base: &segment::DpOptions,
        coarse: &noise::Straights,
    ) -> (Chain, Vec<GroupFit>, f64, f64, noise::Straights) {
        let mut sigma_pen = start;
        let (mut chain, mut fits) = self.search_at(s, v, sigma_pen, base);
        let (mut next, mut sigma_res, mut straights) = self.noise_of(s, v, &chain, &fits, coarse);
        for _ in 1..NOISE_ROUNDS {
            if (next / sigma_pen - 1.0).abs() < NOISE_RTOL {
                break;
            }
            sigma_pen = next;
            (chain, fits) = self.search_at(s, v, sigma_pen, base);
            (next, sigma_res, straights) = self.noise_of(s, v, &chain, &fits, coarse);
        }
        (chain, fits, sigma_pen, sigma_res, straights)
    }

    /// Search the readings `keep` (indices into the input) with the noise
    /// iterated to its fixed point.
    fn search(&self, keep: &[usize]) -> Searched {
        let s: Vec<f64> = keep.iter().map(|&i| self.input.s[i]).collect();
        let mut v: Vec<f64> = keep.iter().map(|&i| self.input.v[i]).collect();
        let sigma0 = self.stated.unwrap_or(self.sigma_read).max(self.sigma_read);
        let base = self.base_dp(sigma0);
        let mut coarse_dp = base;
        coarse_dp.bin = base.bin * COARSE_BIN_FACTOR;
        let kest: Vec<f64> = v
            .iter()
            .map(|x| 2.0 * x / (self.input.a * self.input.a))
            .collect();
        let segs0 = segment::typed_partition(&self.kernel_centres(&s), &kest, &coarse_dp);
        let runs = noise::runs_from_segments(&segs0, &s, self.input.chord);
        let coarse = noise::on_straights(runs, &v, self.input.chord, self.input.spacing);
        let bias = coarse
            .mean
            .map(|b| (b, coarse.sigma_eff.max(sigma0) / (coarse.n as f64).sqrt()));
        let bias_removed = self.opts.remove_bias && bias.is_some();
        if let (true, Some((b, _))) = (bias_removed, bias) {
            v.iter_mut().for_each(|x| *x -= b);
        }
        let start = sigma0.max(coarse.sigma_eff);
        let (mut chain, mut fits, mut sigma_pen, mut sigma_res, mut straights) =
            self.fixed_point(&s, &v, start, &base, &coarse);
        // A design that leaves far more scatter than the differences show
        // has missed structure: where joints lie closer together than the
        // straights the coarse partition needs, every noise figure above
        // is inflated and the search stopped early. Start again from the
        // quiet part of the differences and keep what explains the
        // readings much better.
        let low = noise::quiet_sigma(&v).max(self.floor).max(NOISE_FLOOR);
        if s.len() <= RESTART_MAX_READINGS
            && sigma_res > RESTART_RATIO * low.max(self.stated.unwrap_or(0.0))
        {
            let none = noise::on_straights(Vec::new(), &v, self.input.chord, self.input.spacing);
            let b = self.fixed_point(&s, &v, low, &base, &none);
            if b.3 * RESTART_GAIN < sigma_res {
                (chain, fits, sigma_pen, sigma_res, straights) = b;
            }
        }
        Searched {
            s,
            v,
            chain,
            fits,
            sigma_pen,
            sigma_res,
            straights,
            bias,
            bias_removed,
        }
    }
}

/// The search with blunders set aside: screened candidates out first, then
/// confirmed against the fitted design until the set no longer changes.
/// Returns the search, the readings it left out and the readings that look
/// like blunders (the same unless `keep_outliers`: then they are found the
/// same way, and the search is repeated with every reading), as input indices.
pub(super) fn search_robust(st: &Settings) -> (Searched, Vec<usize>, Vec<usize>) {
    let inp = st.input;
    let n = inp.s.len();
    let capped = |mut x: Vec<usize>| {
        if n - x.len() < NEEDED {
            x.clear();
        }
        x
    };
    let mut excluded = capped(outliers::screen(&inp.v, st.sigma_read));
    let mut round = 0;
    loop {
        round += 1;
        let keep: Vec<usize> = (0..n)
            .filter(|i| excluded.binary_search(i).is_err())
            .collect();
        let sr = st.search(&keep);
        let shift = if sr.bias_removed {
            sr.bias.map_or(0.0, |b| b.0)
        } else {
            0.0
        };
        let r_all: Vec<f64> = inp
            .s
            .iter()
            .zip(&inp.v)
            .map(|(&x, &o)| o - shift - sr.chain.versine_arms(x, inp.arms, inp.eps))
            .collect();
        let flagged = capped(outliers::confirm(&r_all, sr.sigma_res));
        if flagged == excluded || round >= OUTLIER_ROUNDS {
            if st.opts.keep_outliers && !excluded.is_empty() {
                // Found the same way, then kept as asked: search them all.
                let all: Vec<usize> = (0..n).collect();
                return (st.search(&all), Vec::new(), excluded);
            }
            return (sr, excluded.clone(), excluded);
        }
        excluded = flagged;
    }
}

/// Each blunder with what it looks like.
pub(super) fn describe_outliers(
    plan: &Plan,
    st: &Settings,
    sr: &Searched,
    listed: &[usize],
) -> Vec<Outlier> {
    let inp = st.input;
    let step = plan.resolution;
    let decimals = outliers::decimals_of(step, plan.versine_unit);
    let shift = if sr.bias_removed {
        sr.bias.map_or(0.0, |b| b.0)
    } else {
        0.0
    };
    listed
        .iter()
        .map(|&i| {
            let r = &plan.stations[inp.index[i]];
            let model = sr.chain.versine_arms(inp.s[i], inp.arms, inp.eps) + shift;
            let expected = r.rail.chord_side(model);
            let read = r.versine.unwrap_or(f64::NAN);
            let tol = outliers::OUTLIER_Z * 0.5 * sr.sigma_res + 0.5 * step.unwrap_or(0.0);
            Outlier {
                index: inp.index[i],
                line: r.line,
                chainage: r.chainage,
                read,
                expected,
                z: (inp.v[i] - model).abs() / sr.sigma_res,
                looks_like: outliers::classify(read, expected, tol, plan.versine_unit, decimals),
                excluded: !st.opts.keep_outliers,
            }
        })
        .collect()
}

pub(super) fn note_outliers(plan: &Plan, outliers: &[Outlier], diags: &mut Vec<Diagnostic>) {
    let vu = plan.versine_unit;
    for o in outliers {
        let d = Diagnostic::warning(format!(
            "the reading at chainage {:.3} m looks like a blunder ({}): read {:.2} {}, the fitted design expects {:.2} {} ({:.0} robust standard deviations off); {}",
            o.chainage,
            o.looks_like.describe(),
            vu.from_m(o.read),
            vu.suffix(),
            vu.from_m(o.expected),
            vu.suffix(),
            o.z,
            if o.excluded {
                "left out of the fit and bridged in the plan like a missing reading"
            } else {
                "kept, as asked"
            }
        ))
        .hint(if o.excluded {
            "check the field book; --keep-outliers keeps such readings"
        } else {
            "check the field book; without --keep-outliers it would be left out"
        });
        diags.push(if o.line > 0 {
            d.at(Location {
                file: plan.source.clone(),
                line: o.line,
                column: None,
            })
        } else {
            d
        });
    }
}
