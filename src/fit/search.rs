//! The search for the element sequence: chord-space fits of each curve group
//! and the bottom-up simplification under the Bayesian information criterion.
//!
//! Curves separated by long straights are independent groups; each is fitted
//! by Levenberg–Marquardt ([`super::lm`]) from the initial partition, then
//! moves that remove parameters (hold an arc at zero, drop a plateau, merge two
//! plateaus, collapse a ramp to a step, join two ramps at an inflection) are
//! accepted while `RSS/σ² + p ln n` falls.

use super::lm;
use super::model::{Chain, Level};

/// What a move in the simplification does.
#[derive(Debug, Clone, Copy)]
enum Move {
    /// Hold an arc's curvature at zero: it becomes a straight.
    ZeroLevel(usize),
    /// Remove an interior plateau: its two ramps become one.
    DropPlateau(usize),
    /// Remove a ramp between two equal plateaus: they become one.
    MergeRamp(usize),
    /// Hold a ramp at zero length: a curvature step.
    CollapseRamp(usize),
    /// Hold an interior plateau at zero length: the ramps either side meet.
    JoinPlateau(usize),
}

fn apply_move(c: &Chain, mv: Move) -> Option<Chain> {
    let mut c = c.clone();
    let last = c.levels.len() - 1;
    match mv {
        Move::ZeroLevel(i) => {
            if !c.levels[i].is_free() {
                return None;
            }
            c.levels[i] = Level::Zero;
        }
        Move::DropPlateau(i) => {
            if i == 0 || i >= last {
                return None;
            }
            let b0 = c.ramp_start(i - 1);
            let b1 = c.ramp_end(i);
            c.levels.remove(i);
            c.joined.remove(i);
            c.mids.remove(i);
            c.lens.remove(i);
            c.held.remove(i);
            c.mids[i - 1] = 0.5 * (b0 + b1);
            c.lens[i - 1] = b1 - b0;
            c.held[i - 1] = false;
        }
        Move::MergeRamp(j) => {
            let (l0, l1) = (c.levels[j], c.levels[j + 1]);
            let merged = match (l0, l1) {
                (Level::Zero, Level::Zero) => Level::Zero,
                (Level::Free(x), Level::Free(y)) => Level::Free(0.5 * (x + y)),
                _ => return None,
            };
            c.levels[j] = merged;
            c.levels.remove(j + 1);
            c.joined.remove(j + 1);
            c.joined[j] = false;
            c.mids.remove(j);
            c.lens.remove(j);
            c.held.remove(j);
        }
        Move::CollapseRamp(j) => {
            if c.held[j] {
                return None;
            }
            c.held[j] = true;
            c.lens[j] = 0.0;
        }
        Move::JoinPlateau(i) => {
            // Only an inflection (zero curvature) may be a point: a kink
            // between two transitions at non-zero curvature is no trade element.
            if i == 0 || i >= last || c.joined[i] || c.levels[i] != Level::Zero {
                return None;
            }
            c.joined[i] = true;
            // Meet half-way.
            let gap = c.ramp_start(i) - c.ramp_end(i - 1);
            c.mids[i - 1] += 0.5 * gap;
            c.mids[i] -= 0.5 * gap;
        }
    }
    Some(c)
}

pub(super) fn n_params(c: &Chain) -> usize {
    lm::free_params(c).len()
}

fn all_moves(c: &Chain) -> Vec<Move> {
    let mut moves = Vec::new();
    for i in 0..c.levels.len() {
        moves.push(Move::ZeroLevel(i));
        moves.push(Move::DropPlateau(i));
    }
    for j in 0..c.ramps() {
        moves.push(Move::MergeRamp(j));
        moves.push(Move::CollapseRamp(j));
    }
    for i in 1..c.levels.len().saturating_sub(1) {
        moves.push(Move::JoinPlateau(i));
    }
    moves
}

/// Middle of plateau `i` (chainage); the ends extend one metre past the ramps.
fn plateau_mid(c: &Chain, i: usize) -> f64 {
    let m = c.ramps();
    if m == 0 {
        return 0.0;
    }
    let lo = if i == 0 {
        c.ramp_start(0) - 1.0
    } else {
        c.ramp_end(i - 1)
    };
    let hi = if i >= m {
        c.ramp_end(m - 1) + 1.0
    } else {
        c.ramp_start(i)
    };
    0.5 * (lo + hi)
}

/// Where a move acts, as a chainage, to find it again after other moves.
fn move_anchor(c: &Chain, mv: Move) -> f64 {
    match mv {
        Move::ZeroLevel(i) | Move::DropPlateau(i) | Move::JoinPlateau(i) => plateau_mid(c, i),
        Move::MergeRamp(j) | Move::CollapseRamp(j) => c.mids[j],
    }
}

/// The same kind of move on the element of `c` nearest to `anchor`.
fn locate_move(c: &Chain, mv: Move, anchor: f64) -> Option<Move> {
    let nearest = |n: usize, f: &dyn Fn(usize) -> f64| {
        (0..n).min_by(|&x, &y| (f(x) - anchor).abs().total_cmp(&(f(y) - anchor).abs()))
    };
    match mv {
        Move::ZeroLevel(_) | Move::DropPlateau(_) | Move::JoinPlateau(_) => {
            let i = nearest(c.levels.len(), &|i| plateau_mid(c, i))?;
            Some(match mv {
                Move::ZeroLevel(_) => Move::ZeroLevel(i),
                Move::DropPlateau(_) => Move::DropPlateau(i),
                _ => Move::JoinPlateau(i),
            })
        }
        Move::MergeRamp(_) | Move::CollapseRamp(_) => {
            let j = nearest(c.ramps(), &|j| c.mids[j])?;
            Some(match mv {
                Move::MergeRamp(_) => Move::MergeRamp(j),
                _ => Move::CollapseRamp(j),
            })
        }
    }
}

/// One fitted curve group: its chain and the readings it was fitted to.
#[derive(Debug, Clone)]
pub(super) struct GroupFit {
    /// The group's plateaus and ramps.
    pub chain: Chain,
    /// First reading of the group's window.
    pub lo_idx: usize,
    /// One past the last reading of the window.
    pub hi_idx: usize,
    /// Lowest admissible knot (m).
    pub lo: f64,
    /// Highest admissible knot (m).
    pub hi: f64,
    /// How its last Levenberg–Marquardt fit ended.
    pub termination: lm::Termination,
}

/// The readings and constants every group fit shares.
#[derive(Debug, Clone, Copy)]
pub(super) struct Problem<'a> {
    /// Chainages of the readings used (m), increasing.
    pub s: &'a [f64],
    /// Chord-side versines (m).
    pub v: &'a [f64],
    /// Half chord (m; the mean arm `√(a₁a₂)` for a chord not read at its middle).
    pub a: f64,
    /// The chord's arms.
    pub arms: crate::survey::Arms,
    /// Finite-angle factor of the marking.
    pub eps: f64,
    /// Chord (m).
    pub chord: f64,
    /// Convergence tolerance on the residual sum of squares (m²).
    pub rss_tol: f64,
    /// Penalty variance `σ²` of the criterion (m²).
    pub s2pen: f64,
    /// Penalty per parameter, `ln n` times the option's multiplier.
    pub ln_n: f64,
    /// Iteration cap of each full fit.
    pub max_iterations: usize,
}

impl Problem<'_> {
    /// The group's readings between indices `lo_idx..hi_idx`.
    pub fn data(&self, lo_idx: usize, hi_idx: usize, lo: f64, hi: f64) -> lm::Data<'_> {
        lm::Data {
            s: &self.s[lo_idx..hi_idx],
            v: &self.v[lo_idx..hi_idx],
            arms: self.arms,
            eps: self.eps,
            lo,
            hi,
            rss_tol: self.rss_tol,
        }
    }
    /// The criterion `RSS/σ² + p ln n`, plus [`SHORT_RAMP_COST`] for every
    /// free transition shorter than the chord.
    pub(super) fn bic(&self, o: &lm::Outcome, c: &Chain) -> f64 {
        let short = (0..c.ramps())
            .filter(|&j| !c.held[j] && c.lens[j] < self.chord)
            .count();
        o.rss / self.s2pen + n_params(c) as f64 * self.ln_n + SHORT_RAMP_COST * short as f64
    }
}

/// Tie-break against transitions shorter than the chord, in units of the
/// criterion (one reading variance of RSS, far below one parameter's
/// `ln n`). The chord cannot resolve such a transition (it reads about a
/// chord long whatever its length, SEGMENTATION §1), so between a design
/// with one and a design without (a short straight between two arcs and one
/// transition through zero read alike) that the readings cannot tell apart,
/// the one without is kept.
const SHORT_RAMP_COST: f64 = 1.0;
/// Iterations of the trial fit that screens a move before its full fit.
pub(super) const SCREEN_ITERATIONS: usize = 8;
/// A move whose screening fit is worse than the current model by more than
/// this many penalty units (of `ln n`, at least 1) gets no full fit: a full
/// fit rarely recovers that much.
pub(super) const SCREEN_MARGIN: f64 = 2.0;
/// Readings farther out than this many chords on a group's outer straights
/// read zero under every model of the group and are left out of its fit.
const OUTER_STRAIGHT_CHORDS: f64 = 3.0;

/// Fit ramps `j0..j1` of `chain` (one group) and simplify it.
pub(super) fn fit_group(chain: &Chain, (j0, j1): (usize, usize), p: &Problem) -> GroupFit {
    let sub = chain.sub(j0, j1);
    let mut w_lo = if j0 == 0 {
        f64::NEG_INFINITY
    } else {
        0.5 * (chain.ramp_end(j0 - 1) + chain.ramp_start(j0))
    };
    let mut w_hi = if j1 == chain.ramps() {
        f64::INFINITY
    } else {
        0.5 * (chain.ramp_end(j1 - 1) + chain.ramp_start(j1))
    };
    // Readings far out on a long straight read zero under every model
    // of this group: leave them out (they add the same RSS to all).
    let last = sub.levels.len() - 1;
    let reach = OUTER_STRAIGHT_CHORDS * p.chord;
    if sub.ramps() > 0 && sub.levels[0] == Level::Zero {
        w_lo = w_lo.max(sub.ramp_start(0) - reach);
    }
    if sub.ramps() > 0 && sub.levels[last] == Level::Zero {
        w_hi = w_hi.min(sub.ramp_end(sub.ramps() - 1) + reach);
    }
    let (s_first, s_last) = (p.s[0], p.s[p.s.len() - 1]);
    let lo_idx = p.s.partition_point(|&x| x < w_lo);
    let hi_idx = p.s.partition_point(|&x| x < w_hi);
    let lo = w_lo.max(s_first - p.a);
    let hi = w_hi.min(s_last + p.a);
    let data = p.data(lo_idx, hi_idx, lo, hi);
    let mut sub = sub;
    let mut out = lm::fit(&mut sub, &data, p.max_iterations);
    simplify(&mut sub, &mut out, &data, p);
    super::grow::grow(&mut sub, &mut out, &data, p);
    GroupFit {
        chain: sub,
        lo_idx,
        hi_idx,
        lo,
        hi,
        termination: out.termination,
    }
}

/// Bottom-up simplification under BIC. Each round evaluates every move,
/// accepts the best, then tries the other improving moves in order of gain on
/// the updated chain (found again by chainage), so a curve with several
/// spurious pieces needs few rounds.
pub(super) fn simplify(sub: &mut Chain, out: &mut lm::Outcome, data: &lm::Data, p: &Problem) {
    let margin = SCREEN_MARGIN * p.ln_n.max(1.0);
    loop {
        let bic0 = p.bic(out, sub);
        let mut improving: Vec<(f64, Move, f64, Chain, lm::Outcome)> = Vec::new();
        for mv in all_moves(sub) {
            if let Some(mut c2) = apply_move(sub, mv) {
                let Some(o2) = screen(sub, &mut c2, data, p, bic0 + margin) else {
                    continue;
                };
                let bic = p.bic(&o2, &c2);
                if bic < bic0 {
                    improving.push((bic, mv, move_anchor(sub, mv), c2, o2));
                }
            }
        }
        if improving.is_empty() {
            break;
        }
        improving.sort_by(|x, y| x.0.total_cmp(&y.0));
        let mut it = improving.into_iter();
        let Some((_, _, _, c_best, o_best)) = it.next() else {
            break;
        };
        *sub = c_best;
        *out = polish(sub, o_best, data, p);
        for (_, mv, anchor, _, _) in it {
            let Some(mv2) = locate_move(sub, mv, anchor) else {
                continue;
            };
            let Some(mut c2) = apply_move(sub, mv2) else {
                continue;
            };
            let bic1 = p.bic(out, sub);
            if screens_locally(data, p) {
                if screen(sub, &mut c2, data, p, bic1).is_some_and(|o2| p.bic(&o2, &c2) < bic1) {
                    *out = lm::fit(&mut c2, data, p.max_iterations);
                    *sub = c2;
                }
            } else {
                let o2 = lm::fit(&mut c2, data, p.max_iterations);
                if p.bic(&o2, &c2) < bic1 {
                    *sub = c2;
                    *out = o2;
                }
            }
        }
    }
}

/// Screen a changed chain `c2` (from `old`): a short fit of the parameters
/// within [`SCREEN_REACH_CHORDS`] of the change, the rest held; when its
/// criterion is within `limit`, a fit to convergence of the parameters within
/// [`LOCAL_REACH_CHORDS`] (`None` otherwise). Either fit's criterion is that
/// of a feasible design on every reading, and a full fit from it can only
/// lower it: a change accepted on it is an improvement, and the caller refits
/// the accepted one in full. The work of a screen is that of the window, so
/// the moves of a group with many elements cost each the same, not the
/// group's size.
pub(super) fn screen(
    old: &Chain,
    c2: &mut Chain,
    data: &lm::Data,
    p: &Problem,
    limit: f64,
) -> Option<lm::Outcome> {
    if !screens_locally(data, p) {
        // A short fit first; only promising moves get a full one.
        let mut o = lm::fit(c2, data, SCREEN_ITERATIONS);
        if p.bic(&o, c2) > limit {
            return None;
        }
        if o.termination == lm::Termination::IterationLimit {
            o = lm::fit(c2, data, p.max_iterations);
        }
        return Some(o);
    }
    let span = changed_span(old, c2);
    let o = lm::fit_local(
        c2,
        data,
        SCREEN_ITERATIONS,
        span,
        SCREEN_REACH_CHORDS * p.chord,
    );
    if p.bic(&o, c2) > limit {
        return None;
    }
    Some(lm::fit_local(
        c2,
        data,
        p.max_iterations,
        span,
        LOCAL_REACH_CHORDS * p.chord,
    ))
}

/// A screening fit frees the elements within this many chords of a change:
/// a reading sees one chord, so a change is felt by the elements a chord
/// either side and, through them, a little beyond.
const SCREEN_REACH_CHORDS: f64 = 1.5;
/// Whether [`screen`] fits locally on this group (see
/// [`LOCAL_MIN_GROUP_CHORDS`]).
pub(super) fn screens_locally(data: &lm::Data, p: &Problem) -> bool {
    match (data.s.first(), data.s.last()) {
        (Some(s0), Some(s1)) => s1 - s0 >= LOCAL_MIN_GROUP_CHORDS * p.chord,
        _ => false,
    }
}

/// The outcome `o` of a chain accepted on a screen, refitted in full when
/// the screen was local.
pub(super) fn polish(c: &mut Chain, o: lm::Outcome, data: &lm::Data, p: &Problem) -> lm::Outcome {
    if screens_locally(data, p) {
        lm::fit(c, data, p.max_iterations)
    } else {
        o
    }
}

/// Groups shorter than this many chords are screened by fits of all their
/// parameters: there a window would be most of the group.
const LOCAL_MIN_GROUP_CHORDS: f64 = 32.0;
/// The fit that decides a move frees the elements within this many chords.
const LOCAL_REACH_CHORDS: f64 = 3.0;

/// The chainage span where `new` differs from `old`: from the end of the last
/// ramp the two share from the left to the start of the first they share
/// from the right (infinite where they share none).
pub(super) fn changed_span(old: &Chain, new: &Chain) -> (f64, f64) {
    let (mo, mn) = (old.ramps(), new.ramps());
    let same_ramp = |jo: usize, jn: usize| {
        old.mids[jo] == new.mids[jn] && old.lens[jo] == new.lens[jn] && old.held[jo] == new.held[jn]
    };
    let same_level =
        |io: usize, jn: usize| old.levels[io] == new.levels[jn] && old.joined[io] == new.joined[jn];
    let mut p = 0;
    while p < mo.min(mn) && same_level(p, p) && same_ramp(p, p) {
        p += 1;
    }
    let mut q = 0;
    while q < mo.min(mn) - p && same_level(mo - q, mn - q) && same_ramp(mo - 1 - q, mn - 1 - q) {
        q += 1;
    }
    let lo = if p == 0 {
        f64::NEG_INFINITY
    } else {
        new.ramp_end(p - 1)
    };
    let hi = if q == 0 {
        f64::INFINITY
    } else {
        new.ramp_start(mn - q)
    };
    (lo, hi)
}

/// Below this many readings the groups are fitted on one thread: threads
/// cost more than they save on a hand survey.
pub(super) const PARALLEL_MIN_READINGS: usize = 20_000;

/// Fit every group, in parallel on the current rayon pool for long surveys
/// unless `threads` is 1 (results in order and independent of the thread
/// count: each group is fitted alone).
pub(super) fn fit_groups(
    chain: &Chain,
    groups: &[(usize, usize)],
    p: &Problem,
    threads: usize,
) -> Vec<GroupFit> {
    use rayon::prelude::*;
    if threads <= 1 || groups.len() < 2 || p.s.len() < PARALLEL_MIN_READINGS {
        return groups.iter().map(|&g| fit_group(chain, g, p)).collect();
    }
    // One group per task: neighbouring curves differ in cost, and the pool
    // balances them by stealing.
    groups
        .par_iter()
        .with_max_len(1)
        .map(|&g| fit_group(chain, g, p))
        .collect()
}

/// A ramp the fit shrank below this (m) is a step: it is held at zero length.
const STEP_LENGTH: f64 = 1e-3;

/// Join the groups' chains into one (holding near-zero ramps as steps).
pub(super) fn assemble(fits: &mut [GroupFit]) -> Chain {
    for g in fits.iter_mut() {
        for j in 0..g.chain.ramps() {
            if g.chain.lens[j] < STEP_LENGTH {
                g.chain.lens[j] = 0.0;
                g.chain.held[j] = true;
            }
        }
    }
    let mut levels = Vec::new();
    let mut mids = Vec::new();
    let mut lens = Vec::new();
    let mut held = Vec::new();
    let mut joined = Vec::new();
    for (gi, g) in fits.iter().enumerate() {
        let skip = usize::from(gi > 0);
        levels.extend_from_slice(&g.chain.levels[skip..]);
        joined.extend_from_slice(&g.chain.joined[skip..]);
        mids.extend_from_slice(&g.chain.mids);
        lens.extend_from_slice(&g.chain.lens);
        held.extend_from_slice(&g.chain.held);
    }
    Chain {
        levels,
        mids,
        lens,
        held,
        joined,
    }
}

/// A straight longer than this many chords plus [`GROUP_GAP_EXTRA`] separates
/// independent groups: no reading then sees both curves (SEGMENTATION §5 step 3).
const GROUP_GAP_CHORDS: f64 = 2.0;
/// Margin added to the group-separating straight (m), for boundary movement.
const GROUP_GAP_EXTRA: f64 = 10.0;

/// Ramp index ranges `[j0, j1)` between straights longer than `2c + 10 m`.
pub(super) fn split_groups(chain: &Chain, chord: f64) -> Vec<(usize, usize)> {
    let m = chain.ramps();
    let mut cuts = vec![0usize];
    for i in 1..m {
        let len = chain.ramp_start(i) - chain.ramp_end(i - 1);
        if chain.levels[i] == Level::Zero && len > GROUP_GAP_CHORDS * chord + GROUP_GAP_EXTRA {
            cuts.push(i);
        }
    }
    cuts.push(m);
    let mut g: Vec<(usize, usize)> = cuts.windows(2).map(|w| (w[0], w[1])).collect();
    if g.is_empty() {
        g.push((0, 0));
    }
    g
}

#[cfg(test)]
mod tests {
    use super::*;

    fn chain() -> Chain {
        Chain::new(
            vec![
                Level::Zero,
                Level::Free(2e-3),
                Level::Free(2.1e-3),
                Level::Zero,
            ],
            vec![100.0, 200.0, 300.0],
            vec![40.0, 10.0, 40.0],
        )
    }

    #[test]
    fn merging_two_plateaus_removes_a_ramp_and_averages_them() {
        let c = apply_move(&chain(), Move::MergeRamp(1)).unwrap();
        assert_eq!(c.ramps(), 2);
        assert!((c.levels[1].value() - 2.05e-3).abs() < 1e-15);
        // A straight and an arc cannot merge.
        assert!(apply_move(&chain(), Move::MergeRamp(0)).is_none());
    }

    #[test]
    fn a_move_is_found_again_by_chainage() {
        let c = chain();
        let anchor = move_anchor(&c, Move::CollapseRamp(2));
        let fewer = apply_move(&c, Move::DropPlateau(1)).unwrap();
        match locate_move(&fewer, Move::CollapseRamp(2), anchor) {
            Some(Move::CollapseRamp(j)) => assert!((fewer.mids[j] - 300.0).abs() < 1e-9),
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn the_changed_span_covers_what_a_move_changed() {
        let c = chain();
        // Dropping plateau 1 changes ramps 0 and 1 into one: the span runs
        // from the survey's start (no ramp shared on the left) to ramp 2.
        let d = apply_move(&c, Move::DropPlateau(1)).unwrap();
        let (lo, hi) = changed_span(&c, &d);
        assert_eq!(lo, f64::NEG_INFINITY);
        assert!((hi - c.ramp_start(2)).abs() < 1e-12, "{hi}");
        // Collapsing ramp 1 changes only ramp 1: from ramp 0's end to ramp 2's start.
        let d = apply_move(&c, Move::CollapseRamp(1)).unwrap();
        let (lo, hi) = changed_span(&c, &d);
        assert!((lo - c.ramp_end(0)).abs() < 1e-12 && (hi - c.ramp_start(2)).abs() < 1e-12);
    }

    #[test]
    fn a_local_fit_reports_the_rss_of_every_reading_and_keeps_far_elements() {
        // Two curves 600 m apart; the second is shifted from the truth by
        // 3 m, the first by 2 m. A fit local to the second curve mends it,
        // leaves the first where it was, and its RSS is the whole survey's.
        let truth = Chain::new(
            vec![
                Level::Zero,
                Level::Free(2e-3),
                Level::Zero,
                Level::Free(-2e-3),
                Level::Zero,
            ],
            vec![100.0, 200.0, 800.0, 900.0],
            vec![40.0, 40.0, 40.0, 40.0],
        );
        let s: Vec<f64> = (0..110).map(|i| 10.0 * i as f64).collect();
        let v: Vec<f64> = s.iter().map(|&x| truth.versine(x, 10.0, 0.0)).collect();
        let d = lm::Data {
            s: &s,
            v: &v,
            arms: crate::survey::Arms::symmetric(10.0),
            eps: 0.0,
            lo: -1e9,
            hi: 1e9,
            rss_tol: 1e-16,
        };
        let mut c = truth.clone();
        c.mids[0] += 2.0;
        c.mids[3] += 3.0;
        let out = lm::fit_local(&mut c, &d, 60, (860.0, 940.0), 20.0);
        assert!((c.mids[3] - 900.0).abs() < 1e-3, "{}", c.mids[3]);
        assert_eq!(c.mids[0], 102.0);
        let rss: f64 = s
            .iter()
            .zip(&v)
            .map(|(&x, &vo)| (vo - c.versine(x, 10.0, 0.0)).powi(2))
            .sum();
        assert!(
            rss > 1e-9 && (out.rss - rss).abs() <= 1e-12 * rss,
            "{} {rss}",
            out.rss
        );
    }

    #[test]
    fn long_straights_cut_groups() {
        // 100 m of straight between the curves: > 2 chords + 10 m at 20 m.
        let c = Chain::new(
            vec![
                Level::Zero,
                Level::Free(2e-3),
                Level::Zero,
                Level::Free(-2e-3),
                Level::Zero,
            ],
            vec![100.0, 200.0, 340.0, 440.0],
            vec![40.0, 40.0, 40.0, 40.0],
        );
        assert_eq!(split_groups(&c, 20.0), vec![(0, 2), (2, 4)]);
        assert_eq!(split_groups(&c, 60.0), vec![(0, 4)]);
    }
}
