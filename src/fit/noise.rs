//! The noise the fit works with.
//!
//! * **Reading noise** (one figure per survey): stated, or the robust estimate
//!   the integration makes ([`crate::integrate::estimate_noise`]: trimmed mean
//!   square of third differences), never below the rounding of the readings. The fit
//!   takes it from the plan when it has one, so the terminal shows one figure.
//! * **Residual scale**: the robust spread of the readings about the fitted
//!   design (mean square with residuals clipped at ±3σ, iterated). Differences are inflated wherever
//!   joints lie closer together than a few readings (yards, station throats);
//!   the residuals of the fitted design are not, so the penalties of the
//!   search iterate on this figure to a fixed point.
//! * **Element scale**: the spread of window means on what the fit finds
//!   straight, well clear of its joints, for windows of ¼ to 4 chords. Track
//!   irregularity makes it larger than the reading noise; the larger value
//!   sets the penalties so that irregularities never become elements.
//!
//! ## Reference
//! SEGMENTATION.md §5 step 2 and §9 (this project's design study).

use super::model::{Chain, Level};
use super::segment::{self, Seg, SegKind};

/// Straights are trimmed by this many chords at each end before the noise is
/// measured on them: a joint's versines spread over one chord either side.
pub(super) const STRAIGHT_TRIM_CHORDS: f64 = 1.5;
/// Window lengths of the element-scale noise, in chords.
const SCALE_CHORDS: [f64; 5] = [0.25, 0.5, 1.0, 2.0, 4.0];
/// Fewest windows for an element-scale noise figure: the median of fewer
/// squared window means scatters by more than a third, and the largest of
/// five such figures would inflate every penalty.
const MIN_WINDOWS: usize = 8;
/// Fewest readings on the straights for a bias estimate.
const BIAS_MIN_READINGS: usize = 10;

/// Readings `[i0, i1)` on trimmed straights of an initial partition.
pub(super) fn runs_from_segments(segs: &[Seg], s: &[f64], chord: f64) -> Vec<(usize, usize)> {
    let spans = segs
        .iter()
        .filter(|g| g.kind == SegKind::S)
        .map(|g| (g.start, g.end));
    trimmed_runs(spans, s, chord)
}

/// Readings `[i0, i1)` on trimmed straights of a fitted chain (plateaus held
/// at zero; the first and last reach the survey ends).
pub(super) fn runs_from_chain(c: &Chain, s: &[f64], chord: f64) -> Vec<(usize, usize)> {
    let (first, last) = (s[0], s[s.len() - 1]);
    let m = c.ramps();
    let spans = (0..c.levels.len())
        .filter(|&i| c.levels[i] == Level::Zero)
        .map(|i| {
            let lo = if i == 0 { first } else { c.ramp_end(i - 1) };
            let hi = if i >= m { last } else { c.ramp_start(i) };
            (lo, hi)
        });
    trimmed_runs(spans, s, chord)
}

fn trimmed_runs(
    spans: impl Iterator<Item = (f64, f64)>,
    s: &[f64],
    chord: f64,
) -> Vec<(usize, usize)> {
    let trim = STRAIGHT_TRIM_CHORDS * chord;
    let mut runs = Vec::new();
    for (start, end) in spans {
        let lo = start + trim;
        let hi = end - trim;
        if hi - lo < chord {
            continue;
        }
        let i0 = s.partition_point(|&x| x < lo);
        let i1 = s.partition_point(|&x| x <= hi);
        if i1 > i0 + 3 {
            runs.push((i0, i1));
        }
    }
    runs
}

/// What the straights say about the noise and the reading bias.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct Straights {
    /// Readings `[i0, i1)` of each trimmed straight.
    pub runs: Vec<(usize, usize)>,
    /// Readings on them.
    pub n: usize,
    /// Element-scale noise: (window length m, σ m).
    pub scales: Vec<(f64, f64)>,
    /// The largest of `scales` (0 without straights).
    pub sigma_eff: f64,
    /// Mean versine on them (m), with enough readings.
    pub mean: Option<f64>,
}

/// Measure the element-scale noise and the mean on `runs` of `v`.
pub(super) fn on_straights(
    runs: Vec<(usize, usize)>,
    v: &[f64],
    chord: f64,
    spacing: f64,
) -> Straights {
    let n: usize = runs.iter().map(|(i, j)| j - i).sum();
    let mean = (n >= BIAS_MIN_READINGS)
        .then(|| runs.iter().flat_map(|&(i, j)| &v[i..j]).sum::<f64>() / n as f64);
    let slices: Vec<&[f64]> = runs.iter().map(|&(i, j)| &v[i..j]).collect();
    let mut scales = Vec::new();
    for f in SCALE_CHORDS {
        let l = f * chord;
        let m = (l / spacing).round().max(1.0) as usize;
        let windows: usize = slices.iter().map(|r| r.len() / m).sum();
        if windows < MIN_WINDOWS {
            continue;
        }
        if let Some(sg) = segment::scale_sigma(&slices, m) {
            scales.push((m as f64 * spacing, sg));
        }
    }
    let sigma_eff = scales.iter().map(|x| x.1).fold(0.0, f64::max);
    Straights {
        runs,
        n,
        scales,
        sigma_eff,
        mean,
    }
}

/// Residuals are clipped at this many standard deviations in the residual
/// spread (Huber's winsorising), bounding the weight of a gross error.
const CLIP_SIGMAS: f64 = 3.0;
/// `E[min(z², 9)]` for a standard normal `z`: `0.99730·0.97335 + 9·0.00270`
/// (derived here), the consistency factor of the clipped mean square.
const CLIP_MEAN_SQUARE: f64 = 0.995_03;
/// Iterations of the clipping (it converges from above in a few).
const CLIP_ITERATIONS: usize = 30;

/// Robust spread of residuals about a fitted model with `p` parameters: the
/// mean square with every residual clipped at ±3σ, iterated from the plain
/// RMS to its fixed point (a gross error then weighs as a 3σ residual),
/// normalised for the clipping and multiplied by `√(n/(n − p))`, which
/// undoes the shrinkage of residuals by the fit. Unlike a median or a
/// trimmed mean it does not collapse when coarsely rounded readings on a
/// straight are exactly zero and so are their residuals. `None` with fewer
/// than 8 residuals.
///
/// ## Reference
/// Huber, "Robust estimation of a location parameter", Ann. Math. Stat.
/// 35(1), 1964 (clipping; from memory). The factor is derived here.
pub(super) fn residual_sigma(resid: &[f64], p: usize) -> Option<f64> {
    let n = resid.len();
    if n < 8 {
        return None;
    }
    let mut s2 = resid.iter().map(|r| r * r).sum::<f64>() / n as f64;
    for _ in 0..CLIP_ITERATIONS {
        let lim2 = CLIP_SIGMAS * CLIP_SIGMAS * s2;
        let next =
            resid.iter().map(|r| (r * r).min(lim2)).sum::<f64>() / n as f64 / CLIP_MEAN_SQUARE;
        let done = (next - s2).abs() <= 1e-9 * s2;
        s2 = next;
        if done {
            break;
        }
    }
    let dof = (n as f64 - p as f64).max(1.0);
    Some((s2 * n as f64 / dof).sqrt())
}

/// Share of the third differences [`quiet_sigma`] reads the noise from.
const QUIET_SHARE: f64 = 0.2;
/// The 20 % quantile of |z| for a standard normal z: Φ⁻¹(0.6) (scipy
/// `norm.ppf(0.6)` = 0.253347).
const QUIET_QUANTILE: f64 = 0.253_347;

/// The reading noise as the quietest fifth of the third differences shows
/// it: their 20 % quantile in size, scaled for a normal variable and by √20.
/// Biased low by rounding, but it stays near the reading noise even where
/// joints touch four of every five differences (a yard), where every other
/// figure is inflated: a starting point for the search, never a result.
/// 0 with fewer than 8 differences.
pub(super) fn quiet_sigma(v: &[f64]) -> f64 {
    let mut d: Vec<f64> = v
        .windows(4)
        .map(|w| (w[3] - 3.0 * w[2] + 3.0 * w[1] - w[0]).abs())
        .collect();
    if d.len() < 8 {
        return 0.0;
    }
    let k = (d.len() as f64 * QUIET_SHARE) as usize;
    crate::numeric::order_statistic(&mut d, k).unwrap_or(0.0) / QUIET_QUANTILE / 20f64.sqrt()
}

/// Third differences of white noise have variance `20σ²`; their squares
/// are correlated over three lags (`ρ = −0.75, 0.3, −0.05`), so the mean of
/// `m` squares carries as much as `m/2.3` independent ones: `1 + 2Σρ²`
/// = 2.305 (derived here).
const THIRD_DIFF_DOF_FACTOR: f64 = 2.305;
/// Third differences are clipped at this many standard deviations.
const THIRD_CLIP_SIGMAS: f64 = 4.0;
/// `E[min(z², 16)]` for a standard normal `z` (derived here:
/// `1 − 2(4φ(4) + Q(4)) + 16·2Q(4)`).
const THIRD_CLIP_MEAN_SQUARE: f64 = 0.999_88;
/// Fewest design-free third differences for a noise figure.
const MIN_CLEAN_STENCILS: usize = 12;

/// The reading noise from the third differences the fitted design says are
/// free of signal: a third difference of four consecutive, evenly spaced
/// readings is zero on a straight, an arc or a clothoid, so one whose four
/// chords (from `s_i − a` to `s_{i+3} + a`) touch no joint of the design
/// reads only the noise (rounding included). Mean square clipped at 4σ,
/// iterated. Returns (σ, degrees of freedom of σ²); `None` with fewer than
/// [`MIN_CLEAN_STENCILS`] such differences.
///
/// Unlike the figure from all differences it is not inflated by the joints,
/// and unlike the spread of the residuals it is not shrunk by the fit, so a
/// chi-square test against it has the level it claims.
pub(super) fn clean_sigma(s: &[f64], v: &[f64], c: &Chain, a: f64) -> Option<(f64, f64)> {
    let knots: Vec<f64> = (0..c.ramps())
        .flat_map(|j| [c.ramp_start(j), c.ramp_end(j)])
        .collect();
    let mut d = Vec::new();
    // Knots are in order, and so are the stencils: one pass over both.
    let mut next = 0;
    for i in 0..s.len().saturating_sub(3) {
        let h = s[i + 1] - s[i];
        let even = (1..3).all(|k| ((s[i + k + 1] - s[i + k]) - h).abs() <= 1e-6 * h.abs().max(1.0));
        let (lo, hi) = (s[i] - a, s[i + 3] + a);
        while next < knots.len() && knots[next] <= lo {
            next += 1;
        }
        if even && knots.get(next).is_none_or(|&k| k >= hi) {
            d.push(v[i + 3] - 3.0 * v[i + 2] + 3.0 * v[i + 1] - v[i]);
        }
    }
    if d.len() < MIN_CLEAN_STENCILS {
        return None;
    }
    let m = d.len() as f64;
    let mut s2 = d.iter().map(|x| x * x).sum::<f64>() / m;
    for _ in 0..CLIP_ITERATIONS {
        let lim = THIRD_CLIP_SIGMAS * THIRD_CLIP_SIGMAS * s2;
        let next = d.iter().map(|x| (x * x).min(lim)).sum::<f64>() / m / THIRD_CLIP_MEAN_SQUARE;
        let done = (next - s2).abs() <= 1e-9 * s2;
        s2 = next;
        if done {
            break;
        }
    }
    Some(((s2 / 20.0).sqrt(), m / THIRD_DIFF_DOF_FACTOR))
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};

    fn normal(n: usize, sd: f64, seed: u64) -> Vec<f64> {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
        let d = Normal::new(0.0, sd).unwrap();
        (0..n).map(|_| d.sample(&mut rng)).collect()
    }

    #[test]
    fn residual_sigma_ignores_a_few_blunders() {
        let mut r = normal(2000, 1e-3, 3);
        for i in (0..2000).step_by(50) {
            r[i] = 0.05; // 2 % gross errors of 50 σ
        }
        let s = residual_sigma(&r, 0).unwrap();
        // 2 % at 50σ weigh as 3σ each: about 9 % high, not 50 % (plain RMS
        // would be 7 σ).
        assert!(s > 0.98e-3 && s < 1.15e-3, "{s}");
    }

    #[test]
    fn element_scale_of_white_noise_is_the_reading_noise() {
        // White noise: window means of m readings have variance σ²/m, so
        // √(m·Var) recovers σ at every window length.
        let v = normal(4000, 1e-3, 5);
        let st = on_straights(vec![(0, 4000)], &v, 20.0, 1.0);
        assert_eq!(st.scales.len(), 5);
        for (l, sg) in &st.scales {
            assert!((sg - 1e-3).abs() < 0.2e-3, "{l} m: {sg}");
        }
        assert!(st.mean.unwrap().abs() < 1e-4);
    }

    #[test]
    fn chain_straights_are_trimmed_clear_of_joints() {
        // Straight to 100 m, ramp 100–160 m, arc after: one straight run,
        // ending 1.5 chords before the ramp.
        let c = Chain::new(
            vec![Level::Zero, Level::Free(1e-3)],
            vec![130.0],
            vec![60.0],
        );
        let s: Vec<f64> = (0..40).map(|i| 10.0 * i as f64).collect();
        let runs = runs_from_chain(&c, &s, 20.0);
        assert_eq!(runs.len(), 1);
        let (i0, i1) = runs[0];
        assert_eq!(s[i0], 30.0);
        assert_eq!(s[i1 - 1], 70.0);
    }

    #[test]
    fn design_free_third_differences_read_the_noise_between_joints() {
        // A 300 m arc of R 200 with steps at both ends, read every 5 m with
        // a 20 m chord and 1 mm noise: the steps put third differences of
        // tens of mm into every stencil whose chords reach them.
        let mut c = Chain::new(
            vec![Level::Zero, Level::Free(1.0 / 200.0), Level::Zero],
            vec![300.0, 600.0],
            vec![0.0, 0.0],
        );
        c.held = vec![true, true];
        let s: Vec<f64> = (0..200).map(|i| 5.0 * i as f64).collect();
        let e = normal(200, 1e-3, 9);
        let v: Vec<f64> = s
            .iter()
            .zip(&e)
            .map(|(&x, n)| c.versine(x, 10.0, 0.0) + n)
            .collect();
        let (sg, dof) = clean_sigma(&s, &v, &c, 10.0).unwrap();
        assert!((sg - 1e-3).abs() < 0.12e-3, "{sg}");
        // 197 stencils less those within 25 m of either joint, over 2.3.
        assert!(dof > 70.0 && dof < 85.0, "{dof}");
        // Every stencil: inflated by the joints.
        let all: f64 = v
            .windows(4)
            .map(|w| (w[3] - 3.0 * w[2] + 3.0 * w[1] - w[0]).powi(2))
            .sum::<f64>()
            / 197.0;
        assert!((all / 20.0).sqrt() > 2e-3, "{}", (all / 20.0).sqrt());
    }
}
