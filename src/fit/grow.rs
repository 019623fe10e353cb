//! Growth moves of the search: the search does not stop while the readings
//! say there is more.
//!
//! After the bottom-up simplification ([`super::search`]) the residuals of a
//! group are scanned with a window of about one chord for runs the penalty
//! noise does not explain. At each such run the element kinds that could
//! explain it are tried: an arc or a straight inserted into a plateau (meeting
//! its neighbours directly or through short transitions), a curvature break
//! (a compound curve, or an arc ending), and a plateau inside a transition.
//! Each trial is refitted by Levenberg–Marquardt; the one that lowers the
//! criterion `RSS/σ² + p ln n` most is kept, the simplification runs again, and
//! the two alternate until neither changes the design. Every accepted move
//! lowers the criterion, so the alternation cannot cycle.
//!
//! A lone large residual (a blunder the screen missed) does not start a
//! trial: the window statistic leaves out its largest term.
//!
//! ## Reference
//! SEGMENTATION.md §7 (a one-chord moving-RMS scan flags missed elements);
//! issue 9 of this project (insertion moves).

use super::lm;
use super::model::{Chain, Level};
use super::search::{Problem, SCREEN_MARGIN, polish, screen, simplify};

/// Most runs tried per round (the largest, not overlapping).
const MAX_CANDIDATES: usize = 4;
/// Most growth rounds per group.
const MAX_ROUNDS: usize = 40;
/// Most trial fits per group, over all rounds: a deterministic work limit, so
/// that readings with structure everywhere (random curvature, a survey of
/// something that is not track) cannot keep the search busy for minutes; the
/// design classes of the benchmark stay well inside it.
const MAX_TRIAL_FITS: usize = 400;
/// Lengths of an inserted arc or straight, in chords.
const BUMP_CHORDS: [f64; 3] = [0.5, 1.0, 2.0];
/// Starting length of the transitions of a trial with free transitions, in
/// chords (a ramp of zero length has no gradient in its length).
const RAMP_START_CHORDS: f64 = 0.25;
/// A run must exceed its expectation by this many penalty units (`ln n`):
/// the cheapest trial (a break) costs two parameters.
const RUN_EXCESS_PENALTIES: f64 = 2.0;
/// Transitions up to this many chords long are tried as a straight or an
/// arc with steps at both ends.
const SWAP_MAX_CHORDS: f64 = 2.0;
/// A step is tried as a short straight or arc this many chords long.
const STEP_OPEN_CHORDS: f64 = 0.5;
/// Shortest plateau a trial may be inserted into (m).
const MIN_SPAN: f64 = 1.0;

/// Alternate growth and simplification until neither changes the chain.
pub(super) fn grow(sub: &mut Chain, out: &mut lm::Outcome, data: &lm::Data, p: &Problem) {
    let margin = SCREEN_MARGIN * p.ln_n.max(1.0);
    let mut fits = 0usize;
    for _ in 0..MAX_ROUNDS {
        if fits >= MAX_TRIAL_FITS {
            return;
        }
        let mut tried = swaps(sub, data, p.chord);
        for x in candidates(sub, data, p) {
            tried.extend(trials(sub, x, data, p.chord));
        }
        if tried.is_empty() {
            return;
        }
        let bic0 = p.bic(out, sub);
        let mut best: Option<(f64, Chain, lm::Outcome)> = None;
        for mut c2 in tried.into_iter().take(MAX_TRIAL_FITS.saturating_sub(fits)) {
            fits += 1;
            // A short local fit first; only promising trials get a full one.
            let Some(o2) = screen(sub, &mut c2, data, p, bic0 + margin) else {
                continue;
            };
            let b = p.bic(&o2, &c2);
            if b < bic0 && best.as_ref().is_none_or(|x| b < x.0) {
                best = Some((b, c2, o2));
            }
        }
        let Some((_, c, o)) = best else {
            return;
        };
        *sub = c;
        *out = polish(sub, o, data, p);
        simplify(sub, out, data, p);
    }
}

/// Centres (chainage) of the runs of residuals the noise does not explain,
/// largest first, at most [`MAX_CANDIDATES`], not overlapping.
fn candidates(c: &Chain, d: &lm::Data, p: &Problem) -> Vec<f64> {
    let n = d.s.len();
    if n < 4 {
        return Vec::new();
    }
    let spacing = (d.s[n - 1] - d.s[0]) / (n - 1) as f64;
    let w = ((p.chord / spacing.max(1e-9)).round() as usize).clamp(3, n);
    let z: Vec<f64> = lm::predict(c, d)
        .iter()
        .zip(d.v)
        .map(|(m, o)| (o - m) * (o - m) / p.s2pen)
        .collect();
    let threshold = (w - 1) as f64 + RUN_EXCESS_PENALTIES * p.ln_n;
    // Window statistic without its largest term: a lone blunder is no run.
    let mut scored: Vec<(f64, usize)> = (0..=n - w)
        .filter_map(|i| {
            let win = &z[i..i + w];
            let sum: f64 = win.iter().sum();
            let top = win.iter().copied().fold(0.0, f64::max);
            (sum - top > threshold).then_some((sum - top, i))
        })
        .collect();
    scored.sort_by(|x, y| y.0.total_cmp(&x.0));
    let mut chosen: Vec<usize> = Vec::new();
    for (_, i) in scored {
        if chosen.len() >= MAX_CANDIDATES {
            break;
        }
        if chosen.iter().all(|&j| j.abs_diff(i) >= w) {
            chosen.push(i);
        }
    }
    chosen
        .into_iter()
        .map(|i| {
            let win = i..i + w;
            let zs: f64 = z[win.clone()].iter().sum();
            z[win.clone()]
                .iter()
                .zip(&d.s[win])
                .map(|(zz, s)| zz * s)
                .sum::<f64>()
                / zs.max(1e-300)
        })
        .collect()
}

/// The span `[start, end]` of plateau `i` (the survey ends stand in for the
/// outer plateaus' far ends).
fn plateau_span(c: &Chain, i: usize, d: &lm::Data) -> (f64, f64) {
    let m = c.ramps();
    let lo = if i == 0 { d.lo } else { c.ramp_end(i - 1) };
    let hi = if i >= m { d.hi } else { c.ramp_start(i) };
    (lo, hi)
}

/// Every trial chain for a run centred at `x`.
fn trials(c: &Chain, x: f64, d: &lm::Data, chord: f64) -> Vec<Chain> {
    let mut out = Vec::new();
    let ramp0 = RAMP_START_CHORDS * chord;
    for i in 0..c.levels.len() {
        let (lo, hi) = plateau_span(c, i, d);
        if !(lo <= x && x <= hi) || hi - lo < MIN_SPAN || c.joined[i] {
            continue;
        }
        for f in BUMP_CHORDS {
            let half = 0.5 * f * chord;
            let (x0, x1) = ((x - half).max(lo), (x + half).min(hi));
            if x1 - x0 < MIN_SPAN {
                continue;
            }
            for ramp in [None, Some(ramp0.min(0.25 * (x1 - x0)))] {
                out.extend(bump(c, i, x0, x1, Level::Free(0.0), ramp));
                if c.levels[i].is_free() {
                    out.extend(bump(c, i, x0, x1, Level::Zero, ramp));
                }
            }
        }
        for ramp in [None, Some(ramp0.min(0.25 * (hi - lo)))] {
            for right in [false, true] {
                out.extend(step(c, i, x, right, Level::Free(0.0), ramp, (lo, hi)));
                if c.levels[i].is_free() {
                    out.extend(step(c, i, x, right, Level::Zero, ramp, (lo, hi)));
                }
            }
        }
    }
    for j in 0..c.ramps() {
        let (b0, b1) = (c.ramp_start(j), c.ramp_end(j));
        if !c.held[j] && b0 + MIN_SPAN < x && x + MIN_SPAN < b1 {
            out.extend(split_ramp(c, j, x));
        }
    }
    out.into_iter()
        .map(|(mut t, k)| {
            if let Some(k) = k {
                set_level(&mut t, k, c, d);
            }
            t
        })
        .collect()
}

/// Exchanges of a short transition for what the chord cannot tell from it:
/// a straight or an arc meeting its neighbours directly (a short straight
/// between two arcs reads much like one transition through zero).
fn swaps(c: &Chain, d: &lm::Data, chord: f64) -> Vec<Chain> {
    let mut out = Vec::new();
    for j in 0..c.ramps() {
        let (mut b0, mut b1) = (c.ramp_start(j), c.ramp_end(j));
        if c.held[j] {
            // A step: try a short element in it.
            b0 -= 0.5 * STEP_OPEN_CHORDS * chord;
            b1 += 0.5 * STEP_OPEN_CHORDS * chord;
            let (lo, _) = plateau_span(c, j, d);
            let (_, hi) = plateau_span(c, j + 1, d);
            if b0 <= lo || b1 >= hi {
                continue;
            }
        } else if b1 - b0 < MIN_SPAN || b1 - b0 > SWAP_MAX_CHORDS * chord {
            continue;
        }
        for level in [Level::Zero, Level::Free(0.0)] {
            if c.held[j]
                && level == Level::Zero
                && !(c.levels[j].is_free() && c.levels[j + 1].is_free())
            {
                continue;
            }
            let mut t = c.clone();
            t.mids[j] = b0;
            t.lens[j] = 0.0;
            t.held[j] = true;
            t.levels.insert(j + 1, level);
            t.joined.insert(j + 1, false);
            t.mids.insert(j + 1, b1);
            t.lens.insert(j + 1, 0.0);
            t.held.insert(j + 1, true);
            if level.is_free() {
                set_level(&mut t, j + 1, c, d);
            }
            out.push(t);
        }
    }
    out
}

/// A trial chain and the index of its new free level, if any.
type Trial = (Chain, Option<usize>);

/// Plateau `i` of `c` with an arc or straight `level` on `[x0, x1]` inside
/// it: steps at both ends (`ramp` `None`) or transitions of length `ramp`.
fn bump(c: &Chain, i: usize, x0: f64, x1: f64, level: Level, ramp: Option<f64>) -> Option<Trial> {
    let mut t = c.clone();
    let base = c.levels[i];
    let (held, len) = ramp.map_or((true, 0.0), |l| (false, l));
    if base == level {
        return None;
    }
    t.levels.insert(i + 1, level);
    t.levels.insert(i + 2, base);
    t.joined.insert(i + 1, false);
    t.joined.insert(i + 2, false);
    t.mids.insert(i, x0 + 0.5 * len);
    t.lens.insert(i, len);
    t.held.insert(i, held);
    t.mids.insert(i + 1, x1 - 0.5 * len);
    t.lens.insert(i + 1, len);
    t.held.insert(i + 1, held);
    Some((t, level.is_free().then_some(i + 1)))
}

/// Plateau `i` of `c` broken at `x` (spanning `lo..hi`): the part right of
/// `x` (or left, `right` false) takes `level`.
fn step(
    c: &Chain,
    i: usize,
    x: f64,
    right: bool,
    level: Level,
    ramp: Option<f64>,
    (lo, hi): (f64, f64),
) -> Option<Trial> {
    let base = c.levels[i];
    if base == level {
        return None;
    }
    let (held, len) = ramp.map_or((true, 0.0), |l| (false, l));
    let mid = x.clamp(lo + 0.5 * len, hi - 0.5 * len);
    let mut t = c.clone();
    let new = if right {
        t.levels.insert(i + 1, level);
        i + 1
    } else {
        t.levels[i] = level;
        t.levels.insert(i + 1, base);
        i
    };
    t.joined.insert(i + 1, false);
    t.mids.insert(i, mid);
    t.lens.insert(i, len);
    t.held.insert(i, held);
    Some((t, level.is_free().then_some(new)))
}

/// Ramp `j` of `c` split at `x` by a short free plateau (a transition that
/// is really two, with an arc between).
fn split_ramp(c: &Chain, j: usize, x: f64) -> Option<Trial> {
    let (b0, b1) = (c.ramp_start(j), c.ramp_end(j));
    let g = (0.05 * (b1 - b0)).min(0.5);
    let mut t = c.clone();
    t.levels.insert(j + 1, Level::Free(0.0));
    t.joined.insert(j + 1, false);
    t.mids[j] = 0.5 * (b0 + x - g);
    t.lens[j] = x - g - b0;
    t.mids.insert(j + 1, 0.5 * (x + g + b1));
    t.lens.insert(j + 1, b1 - x - g);
    t.held.insert(j + 1, false);
    Some((t, Some(j + 1)))
}

/// Start the new free level `k` of trial `t` at its least-squares value with
/// the rest of the chain held (the model is linear in the levels): the
/// curvature the old chain has there plus the change the residuals ask for.
fn set_level(t: &mut Chain, k: usize, old: &Chain, d: &lm::Data) {
    /// Curvature step of the unit response (1/m).
    const UNIT: f64 = 1e-4;
    let (lo, hi) = plateau_span(t, k, d);
    t.levels[k] = Level::Free(old.curvature(0.5 * (lo + hi)));
    let p0 = lm::predict(t, d);
    let mut u = t.clone();
    u.levels[k] = Level::Free(t.levels[k].value() + UNIT);
    let pu = lm::predict(&u, d);
    let (mut num, mut den) = (0.0, 0.0);
    for i in 0..d.s.len() {
        let f = (pu[i] - p0[i]) / UNIT;
        num += f * (d.v[i] - p0[i]);
        den += f * f;
    }
    if den > 0.0 {
        t.levels[k] = Level::Free(t.levels[k].value() + num / den);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};

    /// Straight; arc R 300 over 100–130 m; 15 m straight; arc R −250 over
    /// 145–170 m; straight: all meeting directly, as in a yard.
    fn yard() -> Chain {
        let mut c = Chain::new(
            vec![
                Level::Zero,
                Level::Free(1.0 / 300.0),
                Level::Zero,
                Level::Free(-1.0 / 250.0),
                Level::Zero,
            ],
            vec![100.0, 130.0, 145.0, 170.0],
            vec![0.0; 4],
        );
        c.held = vec![true; 4];
        c
    }

    #[test]
    fn a_missed_short_arc_is_found_again() {
        let truth = yard();
        let s: Vec<f64> = (0..31).map(|i| 10.0 * i as f64).collect();
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let noise = Normal::new(0.0, 1e-3).unwrap();
        let v: Vec<f64> = s
            .iter()
            .map(|&x| truth.versine(x, 10.0, -1.0 / 3.0) + noise.sample(&mut rng))
            .collect();
        let p = Problem {
            s: &s,
            v: &v,
            a: 10.0,
            arms: crate::survey::Arms::symmetric(10.0),
            eps: -1.0 / 3.0,
            chord: 20.0,
            rss_tol: 1e-9,
            s2pen: 1e-6,
            ln_n: (s.len() as f64).ln(),
            max_iterations: 60,
        };
        let data = p.data(0, s.len(), -10.0, 310.0);
        // Start without the second arc: the first arc, then straight.
        let mut c = truth.sub(0, 2);
        let mut out = lm::fit(&mut c, &data, 60);
        simplify(&mut c, &mut out, &data, &p);
        assert_eq!(c.ramps(), 2, "the start misses the arc: {c:?}");
        grow(&mut c, &mut out, &data, &p);
        assert_eq!(c.ramps(), 4, "{c:?}");
        let k = c.levels[3].value();
        assert!((1.0 / k + 250.0).abs() < 25.0, "R {}", 1.0 / k);
        for (j, want) in [(2, 145.0), (3, 170.0)] {
            assert!((c.mids[j] - want).abs() < 1.0, "joint {j}: {}", c.mids[j]);
        }
        // Nothing is left for a second growth: the readings are explained.
        let before = c.clone();
        grow(&mut c, &mut out, &data, &p);
        assert_eq!(c.ramps(), before.ramps());
    }

    #[test]
    fn a_lone_large_residual_starts_no_trial() {
        let c = Chain::new(vec![Level::Zero], vec![], vec![]);
        let s: Vec<f64> = (0..40).map(|i| 5.0 * i as f64).collect();
        let runs = |v: &[f64]| {
            let p = Problem {
                s: &s,
                v,
                a: 10.0,
                arms: crate::survey::Arms::symmetric(10.0),
                eps: 0.0,
                chord: 20.0,
                rss_tol: 1e-9,
                s2pen: 1e-6,
                ln_n: (s.len() as f64).ln(),
                max_iterations: 60,
            };
            candidates(&c, &p.data(0, s.len(), -10.0, 205.0), &p)
        };
        let mut v = vec![0.0; 40];
        v[20] = 0.05; // a blunder of 50 σ
        assert!(runs(&v).is_empty());
        // Two large residuals side by side are a run.
        v[21] = 0.03;
        let x = runs(&v);
        assert_eq!(x.len(), 1);
        assert!((x[0] - 102.0).abs() < 5.0, "{x:?}");
    }
}
