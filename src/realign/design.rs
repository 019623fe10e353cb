//! The design the track is moved onto: the fitted elements, the engineer's
//! own (an `elements.csv` passed back in, radii rounded or boundaries
//! moved), or an optimised design whose radii and boundaries are adjusted to
//! minimise the movement under the constraints.
//!
//! A design is a chain of elements in survey chainage; its versine at every
//! reading comes from the fit's forward model ([`crate::fit::model::Chain`]),
//! applied as a change to the fit's own design versines so that the fit's
//! reading-bias and finite-angle terms carry over unchanged.
//!
//! # Optimised design
//! Sequential quadratic programming (Nocedal & Wright, "Numerical
//! Optimization", 2nd ed., 2006, ch. 18, from memory): the design versines
//! are linearised in the arc curvatures and the transition mid-points and
//! lengths (central differences), and one QP in the slews, the design
//! changes `δ` and the parameter steps is solved by Clarabel, within a trust
//! region (5 m on boundaries, 2 % on curvatures: chosen here; halved when a
//! step does not reduce the movement of the final solve) and with every
//! plateau kept of non-negative length. The objective is `½Σ s̄²` (or the
//! largest `|s̄|`) plus `½·W·Σδ²` with `W = 1000` (chosen here so that `δ`
//! stays far below a reading's noise and the design, not `δ`, absorbs the
//! movement) plus a small pull of the parameters towards the current design (1e-3 per
//! m² or per (µ/m)², also chosen here); parameters that change no versine of
//! the work section are left as fitted.
//! Limits are elastic in these steps (penalty 10⁴ per mm, exact for an L1
//! penalty of this size); the final slews come from the fixed-design solve of
//! [`super::slews`] on the optimised design, which enforces every constraint.
//! With a radius step the arc radii are then rounded and the boundaries
//! optimised again.
//!
//! The SQP loop is written here (each QP is Clarabel's): no well-kept
//! pure-Rust nonlinear solver with sparse linear constraints was found
//! (`argmin` 0.11 has no constrained methods, from memory), and the loop is
//! short because the design versines are nearly linear in these parameters.

use super::limits::{Triplets, columns};
use super::{SlewError, SlewOptions};
use crate::fit::FitResult;
use crate::fit::model::{Chain, Level};
use crate::geometry::ElementKind;
use crate::survey::{Setup, Survey};
use clarabel::algebra::CscMatrix;
use clarabel::solver::{DefaultSettings, DefaultSolver, IPSolver, SolverStatus, SupportedConeT};

/// One element of a design, in survey chainage (metres).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DesignElement {
    /// Straight, transition or arc.
    pub kind: ElementKind,
    /// Start, survey chainage, metres.
    pub start: f64,
    /// End, survey chainage, metres.
    pub end: f64,
    /// Signed centreline radius of an arc (positive curving left), metres.
    pub radius: Option<f64>,
}

/// What to minimise in an optimised design.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Objective {
    /// The sum of squared slews.
    #[default]
    SumOfSquares,
    /// The largest slew.
    Largest,
}

/// Which design the track is moved onto.
#[derive(Debug, Clone, PartialEq, Default)]
pub enum DesignChoice {
    /// The fitted elements.
    #[default]
    Fitted,
    /// The engineer's elements (survey chainages in metres).
    Elements(Vec<DesignElement>),
    /// Radii and boundaries optimised.
    Optimised {
        /// What to minimise.
        objective: Objective,
        /// Round arc radii to this step (metres), then optimise the
        /// boundaries again.
        radius_step: Option<f64>,
    },
}

/// The design used, beside the fitted one, for `design-elements.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct DesignOutcome {
    /// The design's elements.
    pub elements: Vec<DesignElement>,
    /// The fitted elements, for "what changed".
    pub fitted: Vec<DesignElement>,
    /// How the design was chosen, in words.
    pub how: String,
}

/// The fitted elements as design elements.
pub fn elements_of_fit(fit: &FitResult) -> Vec<DesignElement> {
    fit.elements
        .iter()
        .map(|e| DesignElement {
            kind: e.kind,
            start: e.start_chainage.value,
            end: e.end_chainage.value,
            radius: (e.kind == ElementKind::Arc)
                .then(|| e.start_radius.map(|r| r.value))
                .flatten(),
        })
        .collect()
}

/// Rail radius minus centreline radius, from the fitted arcs (0 without
/// arcs): the measured rail lies a constant offset from the centreline.
fn radius_offset(fit: &FitResult) -> f64 {
    fit.elements
        .iter()
        .find(|e| e.kind == ElementKind::Arc)
        .and_then(|e| {
            let rc = e.start_radius?.value;
            let mid = 0.5 * (e.start_chainage.value + e.end_chainage.value);
            let kr = fit.rail_curvature(mid);
            (kr != 0.0).then(|| 1.0 / kr - rc)
        })
        .unwrap_or(0.0)
}

/// The rail curvature chain of `els` (plateaus joined by ramps).
fn chain_of(els: &[DesignElement], offset: f64) -> Chain {
    let level = |e: &DesignElement| match (e.kind, e.radius) {
        (ElementKind::Arc, Some(r)) if r != 0.0 => Level::Free(1.0 / (r + offset)),
        _ => Level::Zero,
    };
    let mut levels = Vec::new();
    let (mut mids, mut lens) = (Vec::new(), Vec::new());
    let mut last_plateau = false;
    for e in els {
        if e.kind == ElementKind::Transition {
            if !last_plateau {
                levels.push(Level::Zero);
            }
            mids.push(0.5 * (e.start + e.end));
            lens.push((e.end - e.start).max(0.0));
            last_plateau = false;
        } else {
            if last_plateau {
                mids.push(e.start);
                lens.push(0.0);
            }
            levels.push(level(e));
            last_plateau = true;
        }
    }
    if !last_plateau {
        levels.push(Level::Zero);
    }
    Chain::new(levels, mids, lens)
}

/// The elements of a chain (centreline radii), over `first..last`.
fn elements_of_chain(c: &Chain, offset: f64, first: f64, last: f64) -> Vec<DesignElement> {
    let mut out = Vec::new();
    let mut at = first;
    for j in 0..=c.ramps() {
        let end = if j < c.ramps() { c.ramp_start(j) } else { last };
        let k = c.levels[j].value();
        out.push(DesignElement {
            kind: if k == 0.0 {
                ElementKind::Straight
            } else {
                ElementKind::Arc
            },
            start: at,
            end,
            radius: (k != 0.0).then(|| 1.0 / k - offset),
        });
        if j < c.ramps() && c.lens[j] > 0.0 {
            out.push(DesignElement {
                kind: ElementKind::Transition,
                start: c.ramp_start(j),
                end: c.ramp_end(j),
                radius: None,
            });
        }
        at = if j < c.ramps() { c.ramp_end(j) } else { last };
    }
    out.retain(|e| e.end > e.start || e.kind == ElementKind::Transition);
    out
}

/// Design versines (field convention) of `chain` at every reading: the
/// fit's, changed by the model versine difference from the fitted chain.
fn versines(survey: &Survey, setup: &Setup, fit: &FitResult, base: &Chain, c: &Chain) -> Vec<f64> {
    let a = setup.arms();
    let eps = crate::fit::model::marking_epsilon(setup.marking);
    survey
        .readings
        .iter()
        .zip(&fit.design_versine)
        .map(|(r, &d)| {
            let dv = c.versine_arms(r.chainage, a, eps) - base.versine_arms(r.chainage, a, eps);
            d + r.rail.chord_side(dv)
        })
        .collect()
}

/// The design versines of `choice` at every reading, and the design used
/// (`None` for the fitted design).
///
/// # Errors
/// [`SlewError`] when the optimisation's solver fails or an elements design
/// does not cover the survey.
pub fn design_versines(
    survey: &Survey,
    setup: &Setup,
    fit: &FitResult,
    choice: &DesignChoice,
    opts: &SlewOptions,
    reading_sd: f64,
) -> Result<(Vec<f64>, Option<DesignOutcome>), SlewError> {
    let offset = radius_offset(fit);
    let fitted = elements_of_fit(fit);
    let base = chain_of(&fitted, offset);
    let (first, last) = match (survey.readings.first(), survey.readings.last()) {
        (Some(f), Some(l)) => (f.chainage, l.chainage),
        _ => return Ok((fit.design_versine.clone(), None)),
    };
    match choice {
        DesignChoice::Fitted => Ok((fit.design_versine.clone(), None)),
        DesignChoice::Elements(els) => {
            check_cover(&survey.source, els, first, last)?;
            let c = chain_of(els, offset);
            let how = "the engineer's elements".to_string();
            let out = DesignOutcome {
                elements: els.clone(),
                fitted,
                how,
            };
            Ok((versines(survey, setup, fit, &base, &c), Some(out)))
        }
        DesignChoice::Optimised {
            objective,
            radius_step,
        } => {
            let ctx = Ctx {
                survey,
                setup,
                fit,
                base: &base,
                opts,
                reading_sd,
            };
            let c = optimise(&ctx, *objective, *radius_step, offset)?;
            let how = match objective {
                Objective::SumOfSquares => "optimised: least sum of squared slews",
                Objective::Largest => "optimised: least largest slew",
            };
            let out = DesignOutcome {
                elements: elements_of_chain(&c, offset, first, last),
                fitted,
                how: match radius_step {
                    Some(s) => format!("{how}, radii rounded to {s:.3} m"),
                    None => how.to_string(),
                },
            };
            Ok((versines(survey, setup, fit, &base, &c), Some(out)))
        }
    }
}

fn check_cover(file: &str, els: &[DesignElement], first: f64, last: f64) -> Result<(), SlewError> {
    let bad = |what: String| SlewError::Option {
        file: file.into(),
        what,
    };
    let (Some(a), Some(b)) = (els.first(), els.last()) else {
        return Err(bad("the design file has no elements".into()));
    };
    // The fitted design starts and ends up to a half chord inside the survey.
    let reach = 0.5 * (last - first).min(40.0);
    if a.start > first + reach || b.end < last - reach {
        return Err(bad(format!(
            "the design covers {:.3} to {:.3} m but the survey runs from {first:.3} to {last:.3} m; give elements over the whole survey",
            a.start, b.end
        )));
    }
    for w in els.windows(2) {
        if (w[1].start - w[0].end).abs() > 1e-3 {
            return Err(bad(format!(
                "in the design an element ends at {:.3} m but the next starts at {:.3} m; elements must join",
                w[0].end, w[1].start
            )));
        }
    }
    for e in els {
        if e.kind == ElementKind::Arc && e.radius.is_none_or(|r| !r.is_finite() || r == 0.0) {
            return Err(bad(format!("the arc from {:.3} m has no radius", e.start)));
        }
    }
    Ok(())
}

struct Ctx<'a> {
    survey: &'a Survey,
    setup: &'a Setup,
    fit: &'a FitResult,
    base: &'a Chain,
    opts: &'a SlewOptions,
    reading_sd: f64,
}

/// The free parameters of a chain: (which, index) with which 0 = level,
/// 1 = ramp mid-point, 2 = ramp length.
fn parameters(c: &Chain, fix_levels: bool) -> Vec<(u8, usize)> {
    let mut p = Vec::new();
    if !fix_levels {
        p.extend(
            (0..c.levels.len())
                .filter(|&j| c.levels[j].is_free())
                .map(|j| (0, j)),
        );
    }
    p.extend((0..c.ramps()).map(|j| (1, j)));
    p.extend((0..c.ramps()).filter(|&j| c.lens[j] > 0.0).map(|j| (2, j)));
    p
}

/// Parameter units: curvature in 1e-6 /m, lengths in metres.
fn unit(which: u8) -> f64 {
    if which == 0 { 1e-6 } else { 1.0 }
}

fn stepped(c: &Chain, p: (u8, usize), h: f64) -> Chain {
    let mut c = c.clone();
    match p.0 {
        0 => c.levels[p.1] = Level::Free(c.levels[p.1].value() + h * unit(0)),
        1 => c.mids[p.1] += h,
        _ => c.lens[p.1] = (c.lens[p.1] + h).max(0.0),
    }
    c
}

const ITERATIONS: usize = 8;

/// The movement of the final, fixed-design solve on `c` (sum of squared
/// slews or the largest), infinite when no slews meet the constraints.
fn merit(ctx: &Ctx, c: &Chain, obj: Objective) -> f64 {
    let d = versines(ctx.survey, ctx.setup, ctx.fit, ctx.base, c);
    match super::slews(ctx.survey, ctx.setup, &d, ctx.reading_sd, ctx.opts) {
        Ok((s, _)) => match obj {
            Objective::SumOfSquares => s.slew.iter().map(|x| x * x).sum(),
            Objective::Largest => s.slew.iter().fold(0.0, |m: f64, x| m.max(x.abs())),
        },
        Err(_) => f64::INFINITY,
    }
}

/// SQP iterations from `c`: a step is kept when the movement of the final
/// solve does not grow (or no design so far meets the constraints);
/// otherwise the trust region is halved and the step tried again.
fn iterate(ctx: &Ctx, mut c: Chain, obj: Objective, fix_levels: bool) -> Result<Chain, SlewError> {
    let mut f = merit(ctx, &c, obj);
    let mut scale = 1.0;
    for _ in 0..ITERATIONS {
        let (next, moved) = sqp_step(ctx, &c, obj, fix_levels, scale)?;
        let fn_ = merit(ctx, &next, obj);
        if fn_ <= f || f.is_infinite() {
            c = next;
            f = fn_;
            if moved < 1e-4 {
                break;
            }
        } else {
            scale *= 0.5;
            if scale < 0.1 {
                break;
            }
        }
    }
    Ok(c)
}

fn optimise(ctx: &Ctx, obj: Objective, step: Option<f64>, offset: f64) -> Result<Chain, SlewError> {
    let mut c = iterate(ctx, ctx.base.clone(), obj, false)?;
    if let Some(s) = step.filter(|s| *s > 0.0) {
        for l in c.levels.iter_mut() {
            if let Level::Free(k) = *l {
                let rc = ((1.0 / k - offset) / s).round() * s;
                if rc != 0.0 {
                    *l = Level::Free(1.0 / (rc + offset));
                }
            }
        }
        c = iterate(ctx, c, obj, true)?;
    }
    Ok(c)
}

/// One SQP step from `c`: the new chain and the largest parameter change
/// (in parameter units).
fn sqp_step(
    ctx: &Ctx,
    c: &Chain,
    obj: Objective,
    fix_levels: bool,
    scale: f64,
) -> Result<(Chain, f64), SlewError> {
    let d0 = versines(ctx.survey, ctx.setup, ctx.fit, ctx.base, c);
    let sys = super::solve::system(ctx.survey, ctx.setup, &d0, ctx.reading_sd, ctx.opts, 2)?;
    let section = sys.first..sys.first + sys.chainage.len();
    // Central differences; parameters that change no versine of the work
    // section cannot change a slew and are left alone.
    let (params, cols): (Vec<(u8, usize)>, Vec<Vec<f64>>) = parameters(c, fix_levels)
        .into_iter()
        .map(|p| {
            let h = 0.01;
            let up = versines(ctx.survey, ctx.setup, ctx.fit, ctx.base, &stepped(c, p, h));
            let dn = versines(ctx.survey, ctx.setup, ctx.fit, ctx.base, &stepped(c, p, -h));
            let col: Vec<f64> = up
                .iter()
                .zip(&dn)
                .map(|(a, b)| (a - b) / (2.0 * h))
                .collect();
            (p, col)
        })
        .filter(|(_, col)| col[section.clone()].iter().any(|v| v.abs() > 1e-9))
        .unzip();
    let dp = solve_step(ctx, c, &sys, &params, &cols, obj, scale)?;
    let mut next = c.clone();
    let mut moved: f64 = 0.0;
    for (k, &p) in params.iter().enumerate() {
        next = stepped(&next, p, dp[k]);
        moved = moved.max(dp[k].abs());
    }
    Ok((next, moved))
}

const MM: f64 = 1e3;
const W_DELTA: f64 = 1e3;
const PULL: f64 = 1e-3;
const ELASTIC: f64 = 1e4;
/// The steps keep this far (metres) inside the bounds, so that the final
/// solve (which keeps 1 µm inside them) is not left on their edge.
const INSIDE: f64 = 3e-6;

/// Where each block of unknowns sits in the step's QP:
/// `x = [s | δ | Δp | slack per bound row | t]`.
struct Layout {
    fcol: Vec<Option<usize>>,
    nr: usize,
    np: usize,
    nb: usize,
    o_d: usize,
    o_p: usize,
    o_e: usize,
    o_t: usize,
    nx: usize,
}

impl Layout {
    fn new(sys: &super::solve::System, np: usize, obj: Objective) -> Self {
        let fcol = columns(&sys.free);
        let nf = fcol.iter().flatten().count();
        let nr = sys.rows.len();
        let bd = &sys.bounds;
        let nb = (0..sys.avg.len())
            .map(|i| usize::from(bd.upper[i].is_some()) + usize::from(bd.lower[i].is_some()))
            .sum::<usize>();
        let (o_d, o_p, o_e) = (nf, nf + nr, nf + nr + np);
        let o_t = o_e + nb;
        Layout {
            fcol,
            nr,
            np,
            nb,
            o_d,
            o_p,
            o_e,
            o_t,
            nx: o_t + usize::from(obj == Objective::Largest),
        }
    }

    /// Add `sign ×` the reported slew at reading `i` to row `row`.
    fn reported(
        &self,
        t: &mut Triplets,
        sys: &super::solve::System,
        row: usize,
        i: usize,
        sign: f64,
    ) {
        for &(j, w) in &sys.avg[i] {
            if let Some(k) = self.fcol[j] {
                t.push(row, k, sign * w);
            }
        }
    }
}

/// The equality rows: `Σ c·s − δ − B·Δp = D − v` (mm). Returns their count.
fn equality_rows(
    sys: &super::solve::System,
    dcols: &[Vec<f64>],
    l: &Layout,
    t: &mut Triplets,
    b: &mut Vec<f64>,
) -> usize {
    for (r, row) in sys.rows.iter().enumerate() {
        for &(j, cf) in &row.coef {
            if let Some(k) = l.fcol[j] {
                t.push(r, k, cf);
            }
        }
        t.push(r, l.o_d + r, -1.0);
        for (k, col) in dcols.iter().enumerate() {
            let v = col[sys.first + row.at] * MM;
            if v != 0.0 {
                t.push(r, l.o_p + k, -v);
            }
        }
        b.push(row.rhs * MM);
    }
    b.len()
}

/// Elastic bounds on the reported slews, `|δ| ≤ τ`, and the rows of the
/// largest-slew objective.
fn bound_rows(sys: &super::solve::System, l: &Layout, t: &mut Triplets, b: &mut Vec<f64>) {
    let bd = &sys.bounds;
    let mut e = 0;
    for i in 0..sys.avg.len() {
        for (bound, sign) in [(bd.upper[i], 1.0), (bd.lower[i].map(|v| -v), -1.0)] {
            let Some(v) = bound else { continue };
            let row = b.len();
            l.reported(t, sys, row, i, sign);
            t.push(row, l.o_e + e, -1.0);
            b.push((v - INSIDE).max(0.0) * MM);
            e += 1;
        }
    }
    for k in 0..l.nb {
        t.push(b.len(), l.o_e + k, -1.0);
        b.push(0.0);
    }
    for r in 0..l.nr {
        for sign in [1.0, -1.0] {
            t.push(b.len(), l.o_d + r, sign);
            b.push((sys.tau - INSIDE).max(0.0) * MM);
        }
    }
    if l.nx > l.o_t {
        for i in 0..sys.avg.len() {
            for sign in [1.0, -1.0] {
                let row = b.len();
                l.reported(t, sys, row, i, sign);
                t.push(row, l.o_t, -1.0);
                b.push(0.0);
            }
        }
    }
}

/// The trust region, non-negative ramp lengths and plateau lengths.
fn step_rows(
    c: &Chain,
    params: &[(u8, usize)],
    l: &Layout,
    scale: f64,
    t: &mut Triplets,
    b: &mut Vec<f64>,
) {
    for (k, &(which, j)) in params.iter().enumerate() {
        let lim = match which {
            0 => 0.02 * scale * c.levels[j].value().abs() / unit(0),
            _ => 5.0 * scale,
        };
        for sign in [1.0, -1.0] {
            t.push(b.len(), l.o_p + k, sign);
            b.push(lim);
        }
        if which == 2 {
            t.push(b.len(), l.o_p + k, -1.0);
            b.push(c.lens[j]); // length stays ≥ 0
        }
    }
    plateau_rows(c, params, l.o_p, t, b);
}

/// `½xᵀPx + qᵀx`: the slew objective, `W·½Σδ²`, the pull on the steps, the
/// slack penalty.
fn objective(sys: &super::solve::System, l: &Layout, obj: Objective) -> (CscMatrix<f64>, Vec<f64>) {
    let mut pt = Triplets::default();
    if obj == Objective::SumOfSquares {
        for w in &sys.avg {
            for &(j, wj) in w {
                for &(k, wk) in w {
                    if let (Some(cj), Some(ck)) = (l.fcol[j], l.fcol[k])
                        && cj <= ck
                    {
                        pt.push(cj, ck, wj * wk);
                    }
                }
            }
        }
    }
    for r in 0..l.nr {
        pt.push(l.o_d + r, l.o_d + r, W_DELTA);
    }
    for k in 0..l.np {
        pt.push(l.o_p + k, l.o_p + k, PULL);
    }
    let mut q = vec![0.0; l.nx];
    q[l.o_e..l.o_t].iter_mut().for_each(|v| *v = ELASTIC);
    if l.nx > l.o_t {
        q[l.o_t] = 1.0;
    }
    (pt.matrix(l.nx, l.nx), q)
}

/// The QP of one step; returns the parameter steps (parameter units).
fn solve_step(
    ctx: &Ctx,
    c: &Chain,
    sys: &super::solve::System,
    params: &[(u8, usize)],
    dcols: &[Vec<f64>],
    obj: Objective,
    scale: f64,
) -> Result<Vec<f64>, SlewError> {
    let l = Layout::new(sys, params.len(), obj);
    let mut t = Triplets::default();
    let mut b = Vec::new();
    let n_eq = equality_rows(sys, dcols, &l, &mut t, &mut b);
    bound_rows(sys, &l, &mut t, &mut b);
    step_rows(c, params, &l, scale, &mut t, &mut b);
    let m = b.len();
    let a = t.matrix(m, l.nx);
    let (pm, q) = objective(sys, &l, obj);
    let cones = [
        SupportedConeT::ZeroConeT(n_eq),
        SupportedConeT::NonnegativeConeT(m - n_eq),
    ];
    let settings = DefaultSettings {
        verbose: false,
        ..DefaultSettings::default()
    };
    let fail = |status: String| SlewError::Solver {
        file: ctx.survey.source.clone(),
        status,
    };
    let mut solver = DefaultSolver::new(&pm, &q, &a, &b, &cones, settings)
        .map_err(|e| fail(format!("{e:?}")))?;
    solver.solve();
    match solver.solution.status {
        SolverStatus::Solved | SolverStatus::AlmostSolved => {
            Ok(solver.solution.x[l.o_p..l.o_p + l.np].to_vec())
        }
        s => Err(fail(format!("design optimisation: {s:?}"))),
    }
}

/// Every plateau keeps a non-negative length: ramp `j` ends before ramp
/// `j + 1` starts, after the step.
fn plateau_rows(c: &Chain, params: &[(u8, usize)], o_p: usize, t: &mut Triplets, b: &mut Vec<f64>) {
    let col = |which: u8, j: usize| params.iter().position(|&p| p == (which, j));
    for j in 0..c.ramps().saturating_sub(1) {
        // (mid_j + len_j/2) − (mid_{j+1} − len_{j+1}/2) ≤ current gap
        let gap = c.ramp_start(j + 1) - c.ramp_end(j);
        let row = b.len();
        for (which, jj, coef) in [(1, j, 1.0), (2, j, 0.5), (1, j + 1, -1.0), (2, j + 1, 0.5)] {
            if let Some(k) = col(which, jj) {
                t.push(row, o_p + k, coef);
            }
        }
        b.push(gap.max(0.0));
    }
}

/// Read a design from the text of an `elements.csv` as `run` writes it
/// (columns `kind`, `start_chainage_m`, `end_chainage_m`, `start_radius_m`;
/// `_ft` for an imperial survey), edited by the engineer: radii rounded,
/// boundaries moved. Chainages and radii come back in metres. `name` is the
/// file name for messages.
///
/// # Errors
/// [`SlewError::Option`] naming the file, line and column of anything
/// unreadable.
///
/// # Examples
/// ```
/// use chordline::realign::parse_elements_csv;
/// let text = "element,kind,start_chainage_m,end_chainage_m,length_m,start_radius_m,end_radius_m\n\
///             1,straight,0,100,100,,\n2,arc,100,250,150,-450,-450\n";
/// let els = parse_elements_csv(text, "mine.csv").unwrap();
/// assert_eq!(els[1].radius, Some(-450.0));
/// ```
pub fn parse_elements_csv(text: &str, name: &str) -> Result<Vec<DesignElement>, SlewError> {
    let bad = |what: String| SlewError::Option {
        file: name.into(),
        what,
    };
    let mut rd = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .flexible(true)
        .from_reader(text.as_bytes());
    let head = rd
        .headers()
        .map_err(|e| bad(format!("not a CSV file: {e}")))?
        .clone();
    let feet = head.iter().any(|h| h == "start_chainage_ft");
    let (u, scale) = if feet {
        ("ft", crate::units::FOOT)
    } else {
        ("m", 1.0)
    };
    let find = |c: &str| {
        head.iter().position(|h| h == c).ok_or_else(|| {
            bad(format!(
                "line 1: no column '{c}'; pass elements.csv as chordline run writes it"
            ))
        })
    };
    let (ck, cs, ce, cr) = (
        find("kind")?,
        find(&format!("start_chainage_{u}"))?,
        find(&format!("end_chainage_{u}"))?,
        find(&format!("start_radius_{u}"))?,
    );
    let mut out = Vec::new();
    for (k, rec) in rd.records().enumerate() {
        let line = k + 2;
        let rec = rec.map_err(|e| bad(format!("line {line}: {e}")))?;
        let cell = |c: usize| rec.get(c).unwrap_or("").trim();
        let num = |c: usize| -> Result<Option<f64>, SlewError> {
            let t = cell(c);
            if t.is_empty() {
                return Ok(None);
            }
            t.parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .map(|v| Some(v * scale))
                .ok_or_else(|| {
                    bad(format!(
                        "line {line}, column {}: '{t}' is not a number",
                        c + 1
                    ))
                })
        };
        let kind = match cell(ck) {
            "straight" => ElementKind::Straight,
            "transition" => ElementKind::Transition,
            "arc" => ElementKind::Arc,
            t => {
                return Err(bad(format!(
                    "line {line}, column {}: kind '{t}' is not straight, transition or arc",
                    ck + 1
                )));
            }
        };
        let need = |c: usize| {
            num(c)?.ok_or_else(|| {
                bad(format!(
                    "line {line}, column {}: a chainage is missing",
                    c + 1
                ))
            })
        };
        let (start, end) = (need(cs)?, need(ce)?);
        if end < start {
            return Err(bad(format!(
                "line {line}: the element ends before it starts"
            )));
        }
        out.push(DesignElement {
            kind,
            start,
            end,
            radius: if kind == ElementKind::Arc {
                num(cr)?
            } else {
                None
            },
        });
    }
    Ok(out)
}
