//! Levenberg–Marquardt fit of a plateau–ramp chain to the readings, in
//! versine (chord) space, with the analytic Jacobian of [`super::model`].
//!
//! Parameters: each ramp's mid-point and length (the length can be held), and
//! each free plateau level. Ramp lengths are kept non-negative and the ramps
//! in order (plateau lengths non-negative) by projecting every step
//! (pool-adjacent-violators on the knot sequence), so a ramp may shrink to a
//! step and a plateau to a point; such parameters are reported as at a bound.
//!
//! ## Reference
//! Marquardt, "An algorithm for least-squares estimation of nonlinear
//! parameters", J. SIAM 11(2), 1963; Nocedal & Wright, *Numerical
//! Optimization*, 2nd ed., 2006, ch. 10.

use super::envelope::Envelope;
use super::model::{Chain, Level, finite_angle_length_sq, ramp_versine_arms};
use crate::survey::Arms;
use nalgebra::{DMatrix, DVector};

/// One fitted parameter.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Param {
    /// Mid-point of ramp `j` (m).
    Mid(usize),
    /// Length of ramp `j` (m).
    Len(usize),
    /// Level of plateau `i` (1/m).
    Level(usize),
}

/// Readings of one group.
#[derive(Debug, Clone, Copy)]
pub struct Data<'a> {
    /// Chainages (m), sorted.
    pub s: &'a [f64],
    /// Chord-side versines (m).
    pub v: &'a [f64],
    /// The chord's arms (both the half chord when it is read at its middle).
    pub arms: Arms,
    /// Finite-angle factor.
    pub eps: f64,
    /// Lowest admissible knot (m).
    pub lo: f64,
    /// Highest admissible knot (m).
    pub hi: f64,
    /// A fall of the residual sum of squares below this (m²) counts as
    /// converged: a small fraction of one reading's variance.
    pub rss_tol: f64,
}

/// Every parameter of a chain: each ramp's mid-point and length, each free
/// level. Holds (see [`Chain::held`], [`Chain::joined`]) are applied through
/// [`reduce_map`].
pub fn full_params(chain: &Chain) -> Vec<Param> {
    let mut p = Vec::new();
    for j in 0..chain.ramps() {
        p.push(Param::Mid(j));
        p.push(Param::Len(j));
    }
    for (i, l) in chain.levels.iter().enumerate() {
        if l.is_free() {
            p.push(Param::Level(i));
        }
    }
    p
}

/// The free (reduced) parameters, the columns of [`reduce_map`]: each ramp's
/// mid-point unless its plateau before is joined, its length unless held,
/// then each free level.
pub fn free_params(chain: &Chain) -> Vec<Param> {
    let mut free: Vec<Param> = Vec::new();
    for j in 0..chain.ramps() {
        let joined = j > 0 && chain.joined.get(j).copied().unwrap_or(false);
        if !joined {
            free.push(Param::Mid(j));
        }
        if !chain.held.get(j).copied().unwrap_or(false) {
            free.push(Param::Len(j));
        }
    }
    for (i, l) in chain.levels.iter().enumerate() {
        if l.is_free() {
            free.push(Param::Level(i));
        }
    }
    free
}

/// Linear map `T` from the free (reduced) parameters to the full ones:
/// `δθ_full = T δθ_free`. A held length has no column; a joined plateau `i`
/// makes ramp `i`'s mid-point follow `mid_{i−1} + (L_{i−1} + L_i)/2`.
pub fn reduce_map(chain: &Chain) -> DMatrix<f64> {
    let full = full_params(chain);
    let m = chain.ramps();
    let idx = |p: Param| full.iter().position(|q| *q == p).unwrap_or(usize::MAX);
    // Rows of T per full parameter, built ramp by ramp from the left.
    let free = free_params(chain);
    let fidx = |p: Param| free.iter().position(|q| *q == p);
    let mut tm = DMatrix::zeros(full.len(), free.len());
    for j in 0..m {
        // Length row.
        if let Some(c) = fidx(Param::Len(j)) {
            tm[(idx(Param::Len(j)), c)] = 1.0;
        }
        // Mid row.
        let r = idx(Param::Mid(j));
        if let Some(c) = fidx(Param::Mid(j)) {
            tm[(r, c)] = 1.0;
        } else {
            // mid_j = mid_{j-1} + L_{j-1}/2 + L_j/2.
            let prev = tm.row(idx(Param::Mid(j - 1))).clone_owned();
            let mut row = prev;
            let lp = tm.row(idx(Param::Len(j - 1))).clone_owned();
            let lc = tm.row(idx(Param::Len(j))).clone_owned();
            row += lp * 0.5 + lc * 0.5;
            tm.set_row(r, &row);
        }
    }
    for (i, l) in chain.levels.iter().enumerate() {
        if l.is_free()
            && let Some(c) = fidx(Param::Level(i))
        {
            tm[(idx(Param::Level(i)), c)] = 1.0;
        }
    }
    tm
}

/// Model versines (chord side) at every reading.
pub fn predict(chain: &Chain, d: &Data) -> Vec<f64> {
    d.s.iter()
        .map(|&s| chain.versine_arms(s, d.arms, d.eps))
        .collect()
}

/// Visit every reading with its residual `v − v̂` and the non-zero entries
/// `(column in par, ∂v̂/∂θ)` of its Jacobian row.
fn rows(chain: &Chain, par: &[Param], d: &Data, mut f: impl FnMut(usize, f64, &[(usize, f64)])) {
    let m = chain.ramps();
    let mut col_mid = vec![usize::MAX; m];
    let mut col_len = vec![usize::MAX; m];
    let mut col_lvl = vec![usize::MAX; chain.levels.len()];
    for (c, p) in par.iter().enumerate() {
        match *p {
            Param::Mid(j) => col_mid[j] = c,
            Param::Len(j) => col_len[j] = c,
            Param::Level(i) => col_lvl[i] = c,
        }
    }
    let (a1, a2) = (d.arms.behind, d.arms.ahead);
    let half_a2 = 0.5 * a1 * a2;
    let ae2 = finite_angle_length_sq(d.arms);
    let mut dd = vec![0.0; m];
    let mut ent: Vec<(usize, f64)> = Vec::with_capacity(16);
    for (row, (&s, &vo)) in d.s.iter().zip(d.v).enumerate() {
        ent.clear();
        // Ramps wholly behind the chord read a²/2 each and have no
        // derivatives: start at the first ramp the chord still touches.
        let j_lo = chain.first_ramp_seen(s, a1);
        let mut v = chain.levels[j_lo].value() * half_a2;
        let mut j_hi = m;
        for j in j_lo..m {
            let b = chain.ramp_start(j);
            if b - a2 >= s {
                j_hi = j;
                break;
            }
            let dk = chain.levels[j + 1].value() - chain.levels[j].value();
            let (dv, dbs, dbe) = ramp_versine_arms(s, b, chain.lens[j], d.arms);
            dd[j] = dv;
            v += dk * dv;
            if dbs != 0.0 || dbe != 0.0 {
                if col_mid[j] != usize::MAX {
                    ent.push((col_mid[j], dk * (dbs + dbe)));
                }
                if col_len[j] != usize::MAX {
                    ent.push((col_len[j], dk * 0.5 * (dbe - dbs)));
                }
            }
        }
        for i in j_lo..=j_hi {
            let c = col_lvl[i];
            if c == usize::MAX {
                continue;
            }
            let before = if i == j_lo { half_a2 } else { dd[i - 1] };
            let after = if i < j_hi { dd[i] } else { 0.0 };
            if before != after {
                ent.push((c, before - after));
            }
        }
        let g = 1.0 + 3.0 * d.eps * v * v / ae2;
        if g != 1.0 {
            for e in ent.iter_mut() {
                e.1 *= g;
            }
        }
        let vm = v * (1.0 + d.eps * v * v / ae2);
        f(row, vo - vm, &ent);
    }
}

/// Residuals `v − v̂` and the Jacobian `∂v̂/∂θ` (rows: readings).
pub fn jacobian(chain: &Chain, par: &[Param], d: &Data) -> (DVector<f64>, DMatrix<f64>) {
    let n = d.s.len();
    let mut jm = DMatrix::zeros(n, par.len());
    let mut r = DVector::zeros(n);
    rows(chain, par, d, |row, res, ent| {
        r[row] = res;
        for &(c, x) in ent {
            jm[(row, c)] = x;
        }
    });
    (r, jm)
}

/// `JᵀJ`, `Jᵀr` and the residual sum of squares in the reduced parameters,
/// accumulated row by row from the sparse rows (no dense Jacobian). `JᵀJ` is
/// kept in envelope form: a reading touches only the parameters of the
/// elements within about a chord of it, so with the reduced parameters in
/// chainage order (see [`reduced_columns`]) it is banded.
fn normal_equations(
    chain: &Chain,
    par: &[Param],
    tcols: &[Vec<(usize, f64)>],
    np: usize,
    d: &Data,
) -> (Envelope, DVector<f64>, f64) {
    let mut jtr = DVector::zeros(np);
    let mut rss = 0.0;
    // The reduced rows, kept to size the envelope before accumulating.
    let mut ents: Vec<(usize, f64)> = Vec::with_capacity(8 * d.s.len());
    let mut starts: Vec<usize> = Vec::with_capacity(d.s.len() + 1);
    let mut first: Vec<usize> = (0..np).collect();
    rows(chain, par, d, |_, res, ent| {
        rss += res * res;
        let start = ents.len();
        starts.push(start);
        for &(c, x) in ent {
            for &(rc, k) in &tcols[c] {
                match ents[start..].iter_mut().find(|e| e.0 == rc) {
                    Some(e) => e.1 += x * k,
                    None => ents.push((rc, x * k)),
                }
            }
        }
        let red = &mut ents[start..];
        red.sort_unstable_by_key(|e| e.0);
        if let Some(&(lo, _)) = red.first() {
            for &(i, xi) in red.iter() {
                jtr[i] += xi * res;
                first[i] = first[i].min(lo);
            }
        }
    });
    starts.push(ents.len());
    let mut jtj = Envelope::new(first);
    for w in starts.windows(2) {
        let red = &ents[w[0]..w[1]];
        for (n, &(i, xi)) in red.iter().enumerate() {
            for &(k, xk) in &red[..=n] {
                jtj.add(i, k, xi * xk);
            }
        }
    }
    (jtj, jtr, rss)
}

/// The reduced (free) parameters in chainage order (with `chainage_order`;
/// otherwise in the order of [`reduce_map`]): each column of
/// [`reduce_map`] is given the position of the element it belongs to (a
/// plateau's level before its ramp's mid-point and length), so that the
/// normal equations are banded. Returns, per full parameter, its non-zero
/// entries `(reduced column, coefficient)`, and the parameter of each
/// reduced column.
pub(super) fn reduced_columns(
    chain: &Chain,
    chainage_order: bool,
) -> (Vec<Vec<(usize, f64)>>, Vec<Param>) {
    let tm = reduce_map(chain);
    let np = tm.ncols();
    let key = |p: Param| match p {
        Param::Level(i) => 3 * i,
        Param::Mid(j) => 3 * j + 1,
        Param::Len(j) => 3 * j + 2,
    };
    let free = free_params(chain);
    let mut order: Vec<(usize, usize)> = free
        .iter()
        .enumerate()
        .map(|(c, &p)| (if chainage_order { key(p) } else { c }, c))
        .collect();
    order.sort_unstable();
    let mut new_of = vec![0; np];
    for (new, &(_, old)) in order.iter().enumerate() {
        new_of[old] = new;
    }
    let tcols = (0..tm.nrows())
        .map(|r| {
            (0..np)
                .filter(|&c| tm[(r, c)] != 0.0)
                .map(|c| (new_of[c], tm[(r, c)]))
                .collect()
        })
        .collect();
    (tcols, order.iter().map(|&(_, c)| free[c]).collect())
}

/// `T x`: the full parameters' change for a change `x` of the reduced ones.
fn expand(tcols: &[Vec<(usize, f64)>], x: &DVector<f64>) -> DVector<f64> {
    DVector::from_iterator(
        tcols.len(),
        tcols.iter().map(|r| r.iter().map(|&(c, k)| k * x[c]).sum()),
    )
}

fn apply(chain: &Chain, par: &[Param], delta: &DVector<f64>, d: &Data) -> Chain {
    let mut c = chain.clone();
    for (k, p) in par.iter().enumerate() {
        match *p {
            Param::Mid(j) => c.mids[j] += delta[k],
            Param::Len(j) => c.lens[j] += delta[k],
            Param::Level(i) => {
                if let Level::Free(x) = c.levels[i] {
                    c.levels[i] = Level::Free(x + delta[k]);
                }
            }
        }
    }
    project(&mut c, d.lo, d.hi);
    c
}

/// Make the chain feasible: lengths ≥ 0, knots ordered and within `[lo, hi]`,
/// held lengths kept, joined plateaus of zero length.
pub fn project(c: &mut Chain, lo: f64, hi: f64) {
    let held = c.held.clone();
    let m = c.ramps();
    for l in c.lens.iter_mut() {
        if *l < 0.0 || !l.is_finite() {
            *l = 0.0;
        }
    }
    let mut knots: Vec<f64> = (0..m)
        .flat_map(|j| [c.ramp_start(j), c.ramp_end(j)])
        .map(|k| k.clamp(lo, hi))
        .collect();
    // Pool adjacent violators (unweighted isotonic regression).
    let mut blocks: Vec<(f64, usize)> = Vec::with_capacity(knots.len());
    for &k in &knots {
        blocks.push((k, 1));
        while blocks.len() > 1 {
            let (v2, n2) = blocks[blocks.len() - 1];
            let (v1, n1) = blocks[blocks.len() - 2];
            if v1 > v2 {
                blocks.pop();
                let last = blocks.len() - 1;
                blocks[last] = (
                    (v1 * n1 as f64 + v2 * n2 as f64) / (n1 + n2) as f64,
                    n1 + n2,
                );
            } else {
                break;
            }
        }
    }
    let mut i = 0;
    for (v, n) in blocks {
        for _ in 0..n {
            knots[i] = v;
            i += 1;
        }
    }
    for j in 0..m {
        let (b0, b1) = (knots[2 * j], knots[2 * j + 1]);
        c.mids[j] = 0.5 * (b0 + b1);
        if !held.get(j).copied().unwrap_or(false) {
            c.lens[j] = (b1 - b0).max(0.0);
        }
    }
    for j in 1..m {
        if c.joined.get(j).copied().unwrap_or(false) {
            c.mids[j] = c.mids[j - 1] + 0.5 * (c.lens[j - 1] + c.lens[j]);
        }
    }
}

/// Why a fit stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Termination {
    /// The possible gain (Gauss–Newton decrement) or the relative change of
    /// the residual sum of squares fell below tolerance.
    Converged,
    /// No step along the damped directions lowered the residual sum of
    /// squares: a minimum to rounding, or a stall at a bound.
    NoImprovingStep,
    /// The iteration cap was reached while the fit was still improving.
    IterationLimit,
}

/// How a fit ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Outcome {
    /// Residual sum of squares (m²).
    pub rss: f64,
    /// Iterations used.
    pub iterations: usize,
    /// Why it stopped.
    pub termination: Termination,
}

/// Starting damping of Levenberg–Marquardt (relative to the diagonal).
const LAMBDA_START: f64 = 1e-3;
/// Damping after a successful step is multiplied by this (trust more).
const LAMBDA_DOWN: f64 = 0.3;
/// Damping after a failed step is multiplied by this (trust less).
const LAMBDA_UP: f64 = 10.0;
/// Damping tries per iteration before the step is declared impossible.
const DAMPING_TRIES: usize = 12;
/// Relative ridge that keeps the decrement's Cholesky factor defined.
const DECREMENT_RIDGE: f64 = 1e-12;
/// A relative fall of the RSS below this is convergence by itself.
const REL_CHANGE_TOL: f64 = 1e-14;
/// A relative fall below this together with a boundary move below
/// [`STEP_TOL`] is convergence.
const REL_CHANGE_SMALL: f64 = 1e-9;
/// When no step improves, a possible gain below this many times the RSS
/// tolerance still counts as convergence (the minimum met to rounding).
const STALL_FACTOR: f64 = 100.0;
/// Boundary move (m) below which a step counts as nothing: a micrometre.
const STEP_TOL: f64 = 1e-6;

/// Fit `chain` to the data in place, respecting its holds.
pub fn fit(chain: &mut Chain, d: &Data, max_iter: usize) -> Outcome {
    let par = full_params(chain);
    // A small system is solved densely in the parameters' own order (as
    // fast, and the same to the last bit as before the envelope existed).
    let banded = free_params(chain).len() > DENSE_MAX;
    let (tcols, free) = reduced_columns(chain, banded);
    project(chain, d.lo, d.hi);
    iterate(chain, d, max_iter, &par, &tcols, free.len())
}

/// Fit only the parameters of the elements that reach into `[x0 − reach,
/// x1 + reach]`, the others held, on the readings those parameters can move
/// (the readings within a half chord and `reach` of the elements they move).
/// The outcome's RSS is over every reading of `d`, of the chain as fitted, so
/// it is a true criterion of a feasible design; only the fit is local. The
/// cost is that of the window, not of the group.
pub fn fit_local(
    chain: &mut Chain,
    d: &Data,
    max_iter: usize,
    (x0, x1): (f64, f64),
    reach: f64,
) -> Outcome {
    let par = full_params(chain);
    let (tcols, free) = reduced_columns(chain, true);
    project(chain, d.lo, d.hi);
    let m = chain.ramps();
    let (w0, w1) = (x0 - reach, x1 + reach);
    // Chainage span of a parameter's element.
    let span = |p: Param| match p {
        Param::Level(i) => (
            if i == 0 {
                f64::NEG_INFINITY
            } else {
                chain.ramp_end(i - 1)
            },
            if i == m {
                f64::INFINITY
            } else {
                chain.ramp_start(i)
            },
        ),
        Param::Mid(j) | Param::Len(j) => (chain.ramp_start(j), chain.ramp_end(j)),
    };
    let mut local = vec![usize::MAX; free.len()];
    let mut nl = 0;
    for (c, &p) in free.iter().enumerate() {
        let (lo, hi) = span(p);
        if hi >= w0 && lo <= w1 {
            local[c] = nl;
            nl += 1;
        }
    }
    let ltcols: Vec<Vec<(usize, f64)>> = tcols
        .iter()
        .map(|r| {
            r.iter()
                .filter(|e| local[e.0] != usize::MAX)
                .map(|&(c, k)| (local[c], k))
                .collect()
        })
        .collect();
    // Readings the free parameters reach: a level moves the ramps either
    // side of its plateau too.
    let (mut r0, mut r1) = (f64::INFINITY, f64::NEG_INFINITY);
    for (row, p) in par.iter().enumerate() {
        if ltcols[row].is_empty() {
            continue;
        }
        let (lo, hi) = match *p {
            Param::Level(i) => (
                if i == 0 {
                    f64::NEG_INFINITY
                } else {
                    chain.ramp_start(i - 1)
                },
                if i == m {
                    f64::INFINITY
                } else {
                    chain.ramp_end(i)
                },
            ),
            other => span(other),
        };
        // A reading at s spans [s − behind, s + ahead].
        r0 = r0.min(lo - d.arms.ahead - reach);
        r1 = r1.max(hi + d.arms.behind + reach);
    }
    let i0 = d.s.partition_point(|&x| x < r0);
    let i1 = d.s.partition_point(|&x| x <= r1);
    let mut out = Outcome {
        rss: 0.0,
        iterations: 0,
        termination: Termination::Converged,
    };
    if nl > 0 && i1 > i0 {
        let ld = Data {
            s: &d.s[i0..i1],
            v: &d.v[i0..i1],
            ..*d
        };
        out = iterate(chain, &ld, max_iter, &par, &ltcols, nl);
    }
    out.rss = rss_of(chain, d);
    out
}

/// Residual sum of squares of `chain` on the readings of `d`.
fn rss_of(chain: &Chain, d: &Data) -> f64 {
    d.s.iter()
        .zip(d.v)
        .map(|(&s, &vo)| {
            let e = vo - chain.versine_arms(s, d.arms, d.eps);
            e * e
        })
        .sum()
}

/// Systems of up to this many parameters are factorised densely: below it a
/// dense Cholesky factor costs no more than the envelope's bookkeeping.
const DENSE_MAX: usize = 48;

/// A factorised system `A = L Lᵀ`: dense for small systems, in envelope
/// storage for large ones.
enum Factor {
    Dense(nalgebra::Cholesky<f64, nalgebra::Dyn>),
    Envelope(Envelope),
}

impl Factor {
    /// The factor of `a`, or `None` when it is not positive definite.
    fn of(a: Envelope) -> Option<Factor> {
        if a.len() <= DENSE_MAX {
            a.to_dense().cholesky().map(Factor::Dense)
        } else {
            a.cholesky().map(Factor::Envelope)
        }
    }

    fn solve(&self, b: &DVector<f64>) -> DVector<f64> {
        match self {
            Factor::Dense(c) => c.solve(b),
            Factor::Envelope(e) => e.solve(b),
        }
    }
}

/// The Levenberg–Marquardt iterations on the reduced parameters `tcols`
/// (`np` of them) from a feasible chain.
fn iterate(
    chain: &mut Chain,
    d: &Data,
    max_iter: usize,
    par: &[Param],
    tcols: &[Vec<(usize, f64)>],
    np: usize,
) -> Outcome {
    let (mut jtj, mut g, mut rss) = normal_equations(chain, par, tcols, np, d);
    if np == 0 {
        return Outcome {
            rss,
            iterations: 0,
            termination: Termination::Converged,
        };
    }
    let mut lambda = LAMBDA_START;
    let mut termination = Termination::IterationLimit;
    let mut it = 0;
    while it < max_iter {
        it += 1;
        let maxd = (0..np).map(|i| jtj.diag(i)).fold(0.0, f64::max);
        if maxd <= 0.0 {
            termination = Termination::Converged;
            break;
        }
        // Gauss–Newton decrement gᵀ(JᵀJ)⁻¹g: the most a full step could gain
        // on the local quadratic model. Below the tolerance there is nothing
        // left worth having.
        let mut ridge = jtj.clone();
        for i in 0..np {
            ridge.add_diag(i, DECREMENT_RIDGE * maxd);
        }
        let mut dec = f64::INFINITY;
        if let Some(ch) = Factor::of(ridge) {
            dec = g.dot(&ch.solve(&g));
            if dec < d.rss_tol {
                termination = Termination::Converged;
                break;
            }
        }
        let mut improved = false;
        let mut converged = false;
        for _ in 0..DAMPING_TRIES {
            let mut a = jtj.clone();
            for i in 0..np {
                a.add_diag(i, lambda * jtj.diag(i).max(1e-9 * maxd));
            }
            let Some(ch) = Factor::of(a) else {
                lambda *= LAMBDA_UP;
                continue;
            };
            let delta = expand(tcols, &ch.solve(&g));
            let trial = apply(chain, par, &delta, d);
            let rss2 = rss_of(&trial, d);
            if rss2 <= rss {
                let rel = (rss - rss2) / rss.max(1e-300);
                // Largest move of a boundary (m).
                let step = trial
                    .mids
                    .iter()
                    .zip(&chain.mids)
                    .chain(trial.lens.iter().zip(&chain.lens))
                    .map(|(x, y)| (x - y).abs())
                    .fold(0.0, f64::max);
                *chain = trial;
                let (j2, g2, r2) = normal_equations(chain, par, tcols, np, d);
                jtj = j2;
                g = g2;
                rss = r2;
                lambda = (lambda * LAMBDA_DOWN).max(1e-12);
                improved = true;
                if rel < REL_CHANGE_TOL || (rel < REL_CHANGE_SMALL && step < STEP_TOL) {
                    converged = true;
                }
                break;
            }
            lambda *= LAMBDA_UP;
        }
        if !improved {
            // Nothing lowers the RSS. If the most a step could gain is
            // negligible, this is the minimum met to rounding; otherwise the
            // fit is stuck (at a bound, or in a narrow valley).
            termination = if dec < STALL_FACTOR * d.rss_tol {
                Termination::Converged
            } else {
                Termination::NoImprovingStep
            };
            break;
        }
        if converged {
            termination = Termination::Converged;
            break;
        }
    }
    Outcome {
        rss,
        iterations: it,
        termination,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The test surveys' data: a 20 m chord, taped marks, no bounds.
    fn test_data<'a>(s: &'a [f64], v: &'a [f64], rss_tol: f64) -> Data<'a> {
        Data {
            s,
            v,
            arms: Arms::symmetric(10.0),
            eps: -1.0 / 3.0,
            lo: -1e9,
            hi: 1e9,
            rss_tol,
        }
    }

    /// A straight, a 40 m ramp to an arc, a 15 m ramp back (finite-angle
    /// term on), and readings every 5 m with a 20 m chord.
    fn case() -> (Chain, Vec<f64>) {
        let c = Chain::new(
            vec![Level::Zero, Level::Free(2e-3), Level::Zero],
            vec![120.0, 235.0],
            vec![40.0, 15.0],
        );
        let s: Vec<f64> = (0..70).map(|i| 5.0 * i as f64).collect();
        (c, s)
    }

    #[test]
    fn analytic_jacobian_matches_central_differences() {
        let (c, s) = case();
        let v = vec![0.0; s.len()];
        let d = test_data(&s, &v, 0.0);
        let par = full_params(&c);
        let (_, jm) = jacobian(&c, &par, &d);
        for (k, p) in par.iter().enumerate() {
            let h = match p {
                Param::Level(_) => 1e-7,
                _ => 1e-4,
            };
            let shifted = |sign: f64| {
                let mut c2 = c.clone();
                match *p {
                    Param::Mid(j) => c2.mids[j] += sign * h,
                    Param::Len(j) => c2.lens[j] += sign * h,
                    Param::Level(i) => c2.levels[i] = Level::Free(c.levels[i].value() + sign * h),
                }
                predict(&c2, &d)
            };
            let (up, down) = (shifted(1.0), shifted(-1.0));
            for i in 0..s.len() {
                let fd = (up[i] - down[i]) / (2.0 * h);
                let an = jm[(i, k)];
                assert!(
                    (fd - an).abs() <= 1e-6 * (1.0 + an.abs()) + 1e-9,
                    "{p:?} at {} m: analytic {an:e}, differences {fd:e}",
                    s[i]
                );
            }
        }
    }

    #[test]
    fn a_fit_from_a_shifted_start_converges_to_the_truth() {
        let (truth, s) = case();
        let v = predict_with(&truth, &s);
        let d = test_data(&s, &v, 1e-16);
        let mut c = truth.clone();
        c.mids[0] += 4.0;
        c.lens[1] += 6.0;
        c.levels[1] = Level::Free(1.8e-3);
        let out = fit(&mut c, &d, 60);
        assert_eq!(out.termination, Termination::Converged);
        assert!((c.mids[0] - 120.0).abs() < 1e-4, "{}", c.mids[0]);
        assert!((c.lens[1] - 15.0).abs() < 1e-3, "{}", c.lens[1]);
        // One iteration is not enough from this start: the limit says so.
        let mut c = truth.clone();
        c.mids[0] += 4.0;
        assert_eq!(fit(&mut c, &d, 1).termination, Termination::IterationLimit);
    }

    #[test]
    fn normal_equations_match_the_dense_jacobian() {
        let (c, s) = case();
        let v: Vec<f64> = s.iter().map(|x| 1e-3 * (x / 37.0).sin()).collect();
        let d = test_data(&s, &v, 0.0);
        let par = full_params(&c);
        let (tcols, free) = reduced_columns(&c, true);
        let np = free.len();
        let (env, jtr, _) = normal_equations(&c, &par, &tcols, np, &d);
        let (r, jf) = jacobian(&c, &par, &d);
        // The reduced Jacobian in the envelope's column order.
        let mut tm = DMatrix::zeros(par.len(), np);
        for (row, ents) in tcols.iter().enumerate() {
            for &(col, k) in ents {
                tm[(row, col)] = k;
            }
        }
        let jr = &jf * &tm;
        let jtj = jr.transpose() * &jr;
        let g = jr.transpose() * &r;
        for i in 0..np {
            assert!((g[i] - jtr[i]).abs() <= 1e-12 * (1.0 + g[i].abs()));
            for k in 0..=i {
                let stored = if k >= env.first[i] {
                    env.data[env.at(i, k)]
                } else {
                    0.0
                };
                assert!(
                    (jtj[(i, k)] - stored).abs() <= 1e-9 * (1.0 + jtj[(i, k)].abs()),
                    "({i}, {k}): {} vs {stored}",
                    jtj[(i, k)]
                );
            }
        }
    }

    #[test]
    fn a_fit_of_many_elements_goes_through_the_envelope_and_converges() {
        // 16 arcs between straights: 64 ramp parameters and 16 levels, more
        // than DENSE_MAX, so the banded factor is used.
        let mut levels = vec![Level::Zero];
        let (mut mids, mut lens) = (Vec::new(), Vec::new());
        for k in 0..16 {
            let x0 = 100.0 + 160.0 * k as f64;
            levels.push(Level::Free(if k % 2 == 0 { 2e-3 } else { -1.5e-3 }));
            levels.push(Level::Zero);
            mids.extend([x0, x0 + 70.0]);
            lens.extend([30.0, 20.0]);
        }
        let truth = Chain::new(levels, mids, lens);
        assert!(free_params(&truth).len() > DENSE_MAX);
        let s: Vec<f64> = (0..560).map(|i| 5.0 * i as f64).collect();
        let v = predict_with(&truth, &s);
        let d = test_data(&s, &v, 1e-16);
        let mut c = truth.clone();
        for j in (0..c.ramps()).step_by(3) {
            c.mids[j] += 2.0;
        }
        let out = fit(&mut c, &d, 100);
        assert_eq!(out.termination, Termination::Converged);
        for j in 0..c.ramps() {
            assert!(
                (c.mids[j] - truth.mids[j]).abs() < 1e-3,
                "ramp {j}: {}",
                c.mids[j]
            );
        }
    }

    fn predict_with(c: &Chain, s: &[f64]) -> Vec<f64> {
        s.iter().map(|&x| c.versine(x, 10.0, -1.0 / 3.0)).collect()
    }
}
