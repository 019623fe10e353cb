//! Placing the fitted design in the plan frame: the stage between the element
//! fit and the writers.
//!
//! The fit finds the elements from the versines alone, in a frame of its own.
//! A rigid placement of that chain on the plan misses control points (the
//! small errors of every turn add up) and, on a long survey, drifts away from
//! the measured centreline by metres. [`place_design`] therefore adjusts the
//! chain itself, by weighted least squares (Gauss–Newton) on
//!
//! * the start pose (position and heading, free),
//! * every element's length and every arc's curvature, each held to its
//!   fitted value with the standard error the fit gives it (so the design stays
//!   what the versines say, within their uncertainty),
//! * the control points, each with its own standard deviation, and
//! * ties to the measured centreline (the plan) at every joint and in the
//!   middle of every element, with sd [`TIE_SD`].
//!
//! The ties are the "curve by curve" part: the design and the plan come from
//! the same readings, so their distance is the integrated versine residual
//! (what the slews describe), not the plan's absolute uncertainty; a fixed tie
//! sd keeps the design on the measured centreline along the whole survey.
//! Transitions take their end curvatures from the neighbouring arcs, so the
//! chain stays continuous in position, heading and curvature.
//!
//! [`place_design_held`] adds sideways holds ([`Hold`]): the realignment's
//! section ends, fixed points and limits, so that the slews are the distances
//! to the one design placed and written ([`PlacedDesign::slew_at`];
//! [`crate::realign::slews_onto_placed`]).

use crate::fit::FitResult;
use crate::geometry::{Alignment, Element, ElementKind, Pose};
use crate::integrate::{Plan, PositionObs};
use nalgebra::{DMatrix, DVector};

mod hold;
mod locate;
pub use hold::{HOLD_SD, Hold};
use locate::{Loc, Locator};

/// Standard deviation of a tie between the design and the measured
/// centreline (m). A placement choice, not a survey figure: the design may
/// leave the measured centreline by the slews the residuals imply (a few
/// millimetres over a curve on a good survey); 20 mm lets it do so while
/// holding it to the centreline at every element.
pub const TIE_SD: f64 = 0.02;

/// Gauss–Newton iterations at most; the chain is nearly linear in its
/// parameters near the fit, so two or three are usual.
const MAX_ITER: usize = 20;

/// Stop when no observed point moves by more than this (m).
const CONVERGED_M: f64 = 1e-7;

/// Smallest standard error taken for a fitted length (m) and curvature (1/m):
/// an element whose value the fit pins exactly (a survey end) still gets a
/// finite weight.
const MIN_LENGTH_SE: f64 = 1e-4;
const MIN_CURVATURE_SE: f64 = 1e-9;

/// How the design passes one control point.
#[derive(Debug, Clone, PartialEq)]
pub struct ControlFit {
    /// Name of the point.
    pub id: String,
    /// Survey chainage (m).
    pub chainage: f64,
    /// Design minus control, easting and northing (m, local frame).
    pub dx: f64,
    /// Design minus control, northing (m).
    pub dy: f64,
    /// The point's standard deviation (m).
    pub sd: f64,
}

impl ControlFit {
    /// Distance from the design to the control point (m).
    pub fn distance(&self) -> f64 {
        self.dx.hypot(self.dy)
    }
}

/// How much the placement changed one element, against its standard error.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ElementChange {
    /// Placed minus fitted centreline length (m).
    pub length: f64,
    /// The change over the length's standard error.
    pub length_z: f64,
    /// Placed minus fitted curvature (1/m; 0 for straights and transitions).
    pub curvature: f64,
    /// The change over the curvature's standard error.
    pub curvature_z: f64,
}

/// The design placed in the plan frame.
#[derive(Debug, Clone)]
pub struct PlacedDesign {
    /// The placed chain (local frame of the plan, centreline lengths).
    pub alignment: Alignment,
    /// Each control point against the design.
    pub controls: Vec<ControlFit>,
    /// One entry per element.
    pub changes: Vec<ElementChange>,
    /// Signed distance from the design to the measured centreline at every
    /// plan station (m, positive: the measured track lies left of the design).
    pub offsets: Vec<f64>,
    /// Gauss–Newton iterations taken; `None` when the adjustment failed and
    /// the rigid placement was kept.
    pub iterations: Option<usize>,
    locator: Locator,
}

/// The parameters: start pose, then one length per element, then one
/// curvature per arc.
struct Params<'a> {
    template: &'a [Element],
    /// Index in the whole chain of `template[0]` (a block's first element).
    first: usize,
    /// Index of each element's curvature parameter (arcs only).
    arc: Vec<Option<usize>>,
    n_arcs: usize,
}

impl<'a> Params<'a> {
    fn new(template: &'a [Element], first: usize) -> Self {
        let mut n_arcs = 0;
        let arc = template
            .iter()
            .map(|e| {
                (e.kind == ElementKind::Arc).then(|| {
                    n_arcs += 1;
                    n_arcs - 1
                })
            })
            .collect();
        Params {
            template,
            first,
            arc,
            n_arcs,
        }
    }
    fn len(&self) -> usize {
        3 + self.template.len() + self.n_arcs
    }
    fn initial(&self, start: Pose) -> DVector<f64> {
        let mut p = DVector::zeros(self.len());
        p[0] = start.x;
        p[1] = start.y;
        p[2] = start.heading;
        for (i, e) in self.template.iter().enumerate() {
            p[3 + i] = e.length;
            if let Some(a) = self.arc[i] {
                p[3 + self.template.len() + a] = e.k_start;
            }
        }
        p
    }
    fn curvature(&self, p: &DVector<f64>, i: usize) -> Option<f64> {
        // `None` past either end too (a transition at the end of the chain).
        self.arc
            .get(i)
            .copied()
            .flatten()
            .map(|a| p[3 + self.template.len() + a])
    }
    /// Element `i` for parameters `p`.
    fn element(&self, p: &DVector<f64>, i: usize) -> Element {
        let t = self.template[i];
        let length = p[3 + i].max(0.0);
        match t.kind {
            ElementKind::Straight => Element::straight(length),
            ElementKind::Arc => {
                let k = self.curvature(p, i).unwrap_or(t.k_start);
                Element {
                    kind: ElementKind::Arc,
                    length,
                    k_start: k,
                    k_end: k,
                }
            }
            ElementKind::Transition => {
                let ks = i
                    .checked_sub(1)
                    .and_then(|j| self.curvature(p, j))
                    .unwrap_or(t.k_start);
                let ke = self.curvature(p, i + 1).unwrap_or(t.k_end);
                Element::transition(length, ks, ke)
            }
        }
    }
    fn alignment(&self, p: &DVector<f64>, start_chainage: f64) -> Alignment {
        let els = (0..self.template.len())
            .map(|i| self.element(p, i))
            .collect();
        let start = Pose {
            x: p[0],
            y: p[1],
            heading: p[2],
        };
        Alignment::new(start, start_chainage, els)
    }
    /// Elements whose shape parameter `j` changes (first, last).
    fn reach(&self, j: usize) -> (usize, usize) {
        let n = self.template.len();
        if j < 3 + n {
            return (j - 3, j - 3);
        }
        let a = j - 3 - n;
        let i = self.arc.iter().position(|&x| x == Some(a)).unwrap_or(0);
        let is_tr =
            |k: usize| self.template.get(k).map(|e| e.kind) == Some(ElementKind::Transition);
        let lo = if i > 0 && is_tr(i - 1) { i - 1 } else { i };
        let hi = if is_tr(i + 1) { i + 1 } else { i };
        (lo, hi)
    }
    /// Fitted value and its standard error for shape parameter `j`.
    fn prior(&self, fit: &FitResult, j: usize) -> (f64, f64) {
        let n = self.template.len();
        if j < 3 + n {
            let i = j - 3;
            let se = fit
                .elements
                .get(self.first + i)
                .map_or(0.0, |e| e.length.se);
            (self.template[i].length, se.max(MIN_LENGTH_SE))
        } else {
            let a = j - 3 - n;
            let i = self.arc.iter().position(|&x| x == Some(a)).unwrap_or(0);
            let k = self.template[i].k_start;
            // se(1/R) = se(R)/R².
            let se = fit
                .elements
                .get(i)
                .and_then(|e| e.start_radius)
                .map_or(0.0, |r| {
                    if r.value != 0.0 {
                        r.se / (r.value * r.value)
                    } else {
                        0.0
                    }
                });
            (k, se.max(MIN_CURVATURE_SE))
        }
    }
}

/// A point the placement looks at: where it is on the chain, where it should
/// be, and how well that is known.
#[derive(Clone, Copy)]
struct Target {
    loc: Loc,
    x: f64,
    y: f64,
    sd: f64,
    /// Only the distance along this unit vector counts (a sideways hold);
    /// `None`: both coordinates.
    normal: Option<(f64, f64)>,
}

/// Place the design of `fit` on `plan`, through `controls` (the plan's
/// position observations, local frame). See the module documentation.
pub fn place_design(fit: &FitResult, plan: &Plan, controls: &[PositionObs]) -> PlacedDesign {
    place_design_held(fit, plan, controls, &[])
}

/// [`place_design`] with the design also held sideways at plan stations
/// ([`Hold`]: the realignment's held readings, fixed points and limits).
pub fn place_design_held(
    fit: &FitResult,
    plan: &Plan,
    controls: &[PositionObs],
    holds: &[Hold],
) -> PlacedDesign {
    let points: Vec<(f64, f64, f64)> = plan
        .stations
        .iter()
        .map(|s| (s.chainage, s.x, s.y))
        .collect();
    let rigid = fit.place(&points);
    let locator = Locator::new(fit);
    let template = rigid.elements().to_vec();
    let params = Params::new(&template, 0);
    let mut targets = targets(fit, plan, controls, &locator);
    targets.extend(hold::targets(fit, plan, holds, &locator));
    targets.sort_by_key(|t| t.loc.element);
    let (alignment, iterations) = match adjust_in_blocks(fit, &template, &targets, &rigid) {
        Some((al, k)) => (al, Some(k)),
        None => (rigid.clone(), None),
    };
    let p = params.initial(alignment.start());
    let p = {
        // The placed values in the parameter layout, for the changes below.
        let mut p = p;
        for (i, e) in alignment.elements().iter().enumerate() {
            p[3 + i] = e.length;
            if let Some(a) = params.arc[i] {
                p[3 + template.len() + a] = e.k_start;
            }
        }
        p
    };
    let changes = (0..template.len())
        .map(|i| {
            let (l0, lse) = params.prior(fit, 3 + i);
            let (dk, kz) = match params.arc[i] {
                Some(a) => {
                    let (k0, kse) = params.prior(fit, 3 + template.len() + a);
                    let k = p[3 + template.len() + a];
                    (k - k0, (k - k0) / kse)
                }
                None => (0.0, 0.0),
            };
            ElementChange {
                length: p[3 + i] - l0,
                length_z: (p[3 + i] - l0) / lse,
                curvature: dk,
                curvature_z: kz,
            }
        })
        .collect();
    let controls = controls
        .iter()
        .map(|c| {
            let q = locator.point(&alignment, locator.locate(fit.centre_distance(c.chainage)));
            ControlFit {
                id: c.id.clone(),
                chainage: c.chainage,
                dx: q.x - c.x,
                dy: q.y - c.y,
                sd: c.sd,
            }
        })
        .collect();
    let mut out = PlacedDesign {
        alignment,
        controls,
        changes,
        offsets: Vec::new(),
        iterations,
        locator,
    };
    // The measured track left of the design: minus the slew onto it.
    out.offsets = plan.stations.iter().map(|s| -out.slew_at(fit, s)).collect();
    out
}

/// The ties (plan stations nearest every joint and element middle) and the
/// control points.
fn targets(
    fit: &FitResult,
    plan: &Plan,
    controls: &[PositionObs],
    locator: &Locator,
) -> Vec<Target> {
    let st = &plan.stations;
    let mut picks: Vec<usize> = Vec::new();
    if !st.is_empty() {
        let nearest = |ch: f64| {
            let i = st.partition_point(|s| s.chainage < ch);
            match (i.checked_sub(1), st.get(i)) {
                (Some(a), Some(b)) if (ch - st[a].chainage) < (b.chainage - ch) => a,
                (Some(a), None) => a,
                _ => i.min(st.len() - 1),
            }
        };
        picks.push(0);
        for e in &fit.elements {
            let (a, b) = (e.start_chainage.value, e.end_chainage.value);
            picks.push(nearest(a));
            picks.push(nearest(0.5 * (a + b)));
            picks.push(nearest(b));
        }
        picks.push(st.len() - 1);
        picks.sort_unstable();
        picks.dedup();
    }
    let mut out: Vec<Target> = picks
        .into_iter()
        .filter(|&i| st[i].x.is_finite() && st[i].y.is_finite())
        .map(|i| Target {
            loc: locator.locate(fit.centre_distance(st[i].chainage)),
            x: st[i].x,
            y: st[i].y,
            sd: TIE_SD,
            normal: None,
        })
        .collect();
    out.extend(
        controls
            .iter()
            .filter(|c| c.sd > 0.0 && c.x.is_finite() && c.y.is_finite())
            .map(|c| Target {
                loc: locator.locate(fit.centre_distance(c.chainage)),
                x: c.x,
                y: c.y,
                sd: c.sd,
                normal: None,
            }),
    );
    out.sort_by_key(|t| t.loc.element);
    out
}

/// Elements per least-squares block at most (more only until the next
/// straight): the normal equations of a block are dense, so a long survey is
/// placed block after block, each starting where the previous one ended,
/// which keeps the time linear in the length (a 100 km survey of 409
/// elements is three blocks), each solved with [`OVERLAP`] elements more.
const BLOCK: usize = 150;

/// Elements solved beyond a block's end (then dropped), at least.
const OVERLAP: usize = 40;

/// The chain adjusted block by block (blocks end before a straight, so that
/// no transition's end curvature belongs to another block); the total of the
/// Gauss–Newton iterations, or `None` when a block's adjustment failed.
fn adjust_in_blocks(
    fit: &FitResult,
    template: &[Element],
    targets: &[Target],
    rigid: &Alignment,
) -> Option<(Alignment, usize)> {
    let n = template.len();
    let mut placed: Vec<Element> = Vec::with_capacity(n);
    let mut start = rigid.start();
    let mut first_start = start;
    let mut total = 0;
    let mut a = 0;
    // The end of a block before the first straight at or after `i`.
    let to_straight = |mut i: usize| {
        while i < n && template[i].kind != ElementKind::Straight {
            i += 1;
        }
        i.min(n)
    };
    loop {
        // Solve on [a, c) and keep [a, b): the overlap lets the elements
        // after a block's end steer its last elements.
        let b = to_straight((a + BLOCK).min(n));
        let c = to_straight((b + OVERLAP).min(n));
        let block = &template[a..c];
        let params = Params::new(block, a);
        let lo = targets.partition_point(|t| t.loc.element < a);
        let hi = targets.partition_point(|t| t.loc.element < c.max(a + 1));
        let local: Vec<Target> = targets[lo..hi]
            .iter()
            .map(|t| Target {
                loc: Loc {
                    element: t.loc.element - a,
                    ..t.loc
                },
                ..*t
            })
            .collect();
        let p0 = params.initial(start);
        let (p, k) = adjust(fit, &params, &local, p0, rigid.start_chainage(), a > 0)?;
        total += k;
        let al = params.alignment(&p, rigid.start_chainage());
        if a == 0 {
            first_start = al.start();
        }
        placed.extend_from_slice(&al.elements()[..b - a]);
        if b >= n {
            break;
        }
        start = al.element_pose(b - a);
        a = b;
    }
    Some((
        Alignment::new(first_start, rigid.start_chainage(), placed),
        total,
    ))
}

/// Gauss–Newton on the parameters; `None` when the normal equations cannot
/// be solved (then the rigid placement stands).
fn adjust(
    fit: &FitResult,
    params: &Params,
    targets: &[Target],
    mut p: DVector<f64>,
    start_chainage: f64,
    fix_start: bool,
) -> Option<(DVector<f64>, usize)> {
    let np = params.len();
    let locator = Locator::new(fit);
    let priors: Vec<(f64, f64)> = (3..np).map(|j| params.prior(fit, j)).collect();
    for it in 1..=MAX_ITER {
        let al = params.alignment(&p, start_chainage);
        let pts: Vec<Pose> = targets.iter().map(|t| locator.point(&al, t.loc)).collect();
        let mut jac = jacobian(params, &p, &al, targets, &pts, &locator);
        let mut r = DVector::zeros(2 * targets.len());
        for (k, (t, q)) in targets.iter().zip(&pts).enumerate() {
            r[2 * k] = (q.x - t.x) / t.sd;
            r[2 * k + 1] = (q.y - t.y) / t.sd;
        }
        hold::sideways_only(targets, &mut jac, &mut r);
        let mut n = jac.tr_mul(&jac);
        let mut g = jac.tr_mul(&r);
        for (j, &(v, se)) in priors.iter().enumerate() {
            let w = 1.0 / (se * se);
            n[(3 + j, 3 + j)] += w;
            g[3 + j] += w * (p[3 + j] - v);
        }
        if fix_start {
            // The block starts where the previous one ended.
            for j in 0..3 {
                n[(j, j)] += 1e20;
                g[j] = 0.0;
            }
        }
        let step = n.cholesky()?.solve(&(-g));
        if !step.iter().all(|v| v.is_finite()) {
            return None;
        }
        // How far the step moves the observed points (m).
        let moved = (&jac * &step)
            .iter()
            .zip(targets.iter().flat_map(|t| [t.sd, t.sd]))
            .fold(0.0f64, |m, (d, sd)| m.max((d * sd).abs()));
        p += step;
        if moved < CONVERGED_M {
            return Some((p, it));
        }
    }
    Some((p, MAX_ITER))
}

/// Jacobian of the weighted residuals (rows: x, y of every target over its
/// sd) by central differences, each column computed only where the parameter
/// reaches: the points on the elements it changes are moved exactly, the
/// points beyond by the rigid motion of the last changed element's end.
fn jacobian(
    params: &Params,
    p: &DVector<f64>,
    al: &Alignment,
    targets: &[Target],
    pts: &[Pose],
    locator: &Locator,
) -> DMatrix<f64> {
    let mut jac = DMatrix::zeros(2 * targets.len(), params.len());
    let (x0, y0) = (p[0], p[1]);
    for (k, (t, q)) in targets.iter().zip(pts).enumerate() {
        jac[(2 * k, 0)] = 1.0 / t.sd;
        jac[(2 * k + 1, 1)] = 1.0 / t.sd;
        jac[(2 * k, 2)] = -(q.y - y0) / t.sd;
        jac[(2 * k + 1, 2)] = (q.x - x0) / t.sd;
    }
    let n_el = params.template.len();
    for j in 3..params.len() {
        let (a, b) = params.reach(j);
        // Steps that move points by about 0.1 mm over a few hundred metres:
        // well above rounding, far below where the chain bends non-linearly.
        let h = if j < 3 + n_el { 1e-4 } else { 1e-9 };
        let first = targets.partition_point(|t| t.loc.element < a);
        let mut cols = [Vec::new(), Vec::new()];
        for (side, sign) in [1.0, -1.0].into_iter().enumerate() {
            let mut q = p.clone();
            q[j] += sign * h;
            let els: Vec<Element> = (a..=b).map(|i| params.element(&q, i)).collect();
            let mut poses = Vec::with_capacity(els.len());
            let mut pose = al.element_pose(a);
            for e in &els {
                poses.push(pose);
                pose = e.advance(pose, e.length);
            }
            let end0 = {
                let e = &al.elements()[b];
                e.advance(al.element_pose(b), e.length)
            };
            let (s, c) = (pose.heading - end0.heading).sin_cos();
            cols[side] = targets[first..]
                .iter()
                .zip(&pts[first..])
                .map(|(t, q0)| {
                    let i = t.loc.element;
                    if i <= b {
                        let e = &els[i - a];
                        locator.point_on(e, poses[i - a], t.loc)
                    } else {
                        let (dx, dy) = (q0.x - end0.x, q0.y - end0.y);
                        Pose {
                            x: pose.x + c * dx - s * dy,
                            y: pose.y + s * dx + c * dy,
                            heading: q0.heading + pose.heading - end0.heading,
                        }
                    }
                })
                .collect();
        }
        for (k, (u, v)) in cols[0].iter().zip(&cols[1]).enumerate() {
            let row = first + k;
            let sd = targets[row].sd;
            jac[(2 * row, j)] = (u.x - v.x) / (2.0 * h * sd);
            jac[(2 * row + 1, j)] = (u.y - v.y) / (2.0 * h * sd);
        }
    }
    jac
}

impl PlacedDesign {
    /// The design centreline abreast of every survey reading (easting,
    /// northing): with [`PlacedDesign::design_versines`] what a run keeps of
    /// [`PlacedDesign::station_design`] (a long survey has
    /// millions of stations). Evaluated on the pool's threads, in order.
    pub fn station_xy(&self, fit: &FitResult) -> Vec<(f64, f64)> {
        use rayon::prelude::*;
        fit.chainages
            .par_iter()
            .with_min_len(4096)
            .map(|&ch| {
                let q = self.locator.point(
                    &self.alignment,
                    self.locator.locate(fit.centre_distance(ch)),
                );
                (q.x, q.y)
            })
            .collect()
    }

    /// Largest |distance| from the design to the measured centreline (m) and
    /// the index of its station.
    pub fn max_offset(&self) -> Option<(f64, usize)> {
        self.offsets
            .iter()
            .enumerate()
            .filter(|(_, v)| v.is_finite())
            .map(|(i, v)| (v.abs(), i))
            .max_by(|a, b| a.0.total_cmp(&b.0))
    }
}

/// What the run should say about the placement: how the design passes the
/// control points, how far it leaves the measured centreline, and how much
/// the elements were changed for it.
pub fn notes(p: &PlacedDesign) -> Vec<crate::diag::Diagnostic> {
    use crate::diag::Diagnostic;
    let mut out = Vec::new();
    if p.iterations.is_none() {
        out.push(Diagnostic::warning(
            "the design could not be adjusted to the measured centreline and the control points; it is placed rigidly (its coordinates may be off by more than the slews say)",
        ));
        return out;
    }
    if let Some(w) = p
        .controls
        .iter()
        .max_by(|a, b| (a.distance() / a.sd).total_cmp(&(b.distance() / b.sd)))
    {
        let far = p
            .controls
            .iter()
            .map(ControlFit::distance)
            .fold(0.0, f64::max);
        out.push(Diagnostic::note(format!(
            "the design passes the {} control points within {:.1} mm (worst against its sd: '{}', {:.1} mm for sd {:.1} mm)",
            p.controls.len(),
            far * 1e3,
            w.id,
            w.distance() * 1e3,
            w.sd * 1e3
        )));
    }
    let zl = p
        .changes
        .iter()
        .map(|c| c.length_z.abs())
        .fold(0.0, f64::max);
    let zk = p
        .changes
        .iter()
        .map(|c| c.curvature_z.abs())
        .fold(0.0, f64::max);
    let dl = p.changes.iter().map(|c| c.length.abs()).fold(0.0, f64::max);
    if let Some((d, _)) = p.max_offset() {
        out.push(Diagnostic::note(format!(
            "the design is placed on the measured centreline element by element: at most {:.1} mm from it; element lengths moved by up to {:.1} mm ({:.3} standard errors), arc curvatures by up to {:.2} standard errors",
            d * 1e3,
            dl * 1e3,
            zl,
            zk
        )));
    }
    out
}

#[cfg(test)]
mod tests;
