//! From the fitted chain to the element table: boundaries, lengths and radii
//! with standard errors (delta method), the engineer's notes, and the design
//! centreline.
//!
//! Honest numbers: no interval reaches past the survey (a boundary cannot be
//! placed outside the readings, a length cannot exceed the survey), and an
//! element whose interval the survey bounds, whose length may be zero or
//! whose radius is poorly determined is `indeterminate`.

use super::covariance::Covariance;
use super::lm;
use super::model::Chain;
use super::result::{ElementStatus, Estimate, FittedElement};
use super::search::{GroupFit, Problem};
use crate::diag::Diagnostic;
use crate::geometry::{Alignment, Element, ElementKind, Pose};

/// A radius whose standard error exceeds this fraction of itself is poorly
/// determined (its 95 % interval spans about a factor two).
const RADIUS_SE_FRACTION: f64 = 0.25;
/// Chi-square quantile χ²₁(0.95) of the profile bound on a collapsed ramp.
const CHI2_1_95: f64 = 3.84;
/// Trial lengths of the profile bound, in chords.
const PROFILE_CHORDS: [f64; 9] = [0.125, 0.25, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0, 4.0];

/// Everything the extraction reads.
pub(super) struct Context<'a> {
    /// The assembled chain.
    pub chain: &'a Chain,
    /// The group fits it came from.
    pub fits: &'a [GroupFit],
    /// Readings and constants.
    pub problem: &'a Problem<'a>,
    /// Parameter covariance.
    pub cov: &'a Covariance,
    /// Residual of every reading used (m).
    pub resid: &'a [f64],
    /// Offset of the measured rail left of the centreline (m).
    pub d_off: f64,
    /// Student-t 95 % factor.
    pub t: f64,
}

/// The element table and the design centreline (from the origin heading
/// east, starting at survey chainage `start`).
pub(super) struct Extracted {
    pub elements: Vec<FittedElement>,
    pub design: Alignment,
    pub start: f64,
}

impl Context<'_> {
    fn centre_k(&self, k: f64) -> f64 {
        k / (1.0 + self.d_off * k)
    }
    /// Knot `k`: `2j` is the start of ramp `j`, `2j + 1` its end.
    fn knot(&self, k: usize) -> f64 {
        let j = k / 2;
        if k.is_multiple_of(2) {
            self.chain.ramp_start(j)
        } else {
            self.chain.ramp_end(j)
        }
    }
    /// Gradient of knot `k` in (mid, len).
    fn knot_grad(k: usize) -> Vec<(lm::Param, f64)> {
        let j = k / 2;
        let sign = if k.is_multiple_of(2) { -0.5 } else { 0.5 };
        vec![(lm::Param::Mid(j), 1.0), (lm::Param::Len(j), sign)]
    }
    fn radius(&self, lvl: usize) -> Option<Estimate> {
        let k = self.chain.levels[lvl].value();
        if k == 0.0 {
            return None;
        }
        let r = 1.0 / self.centre_k(k);
        let var = self.cov.var(&[(lm::Param::Level(lvl), 1.0 / (k * k))]);
        Some(Estimate::new(r, var.sqrt(), self.t))
    }
    /// The survey's extent in chainage (m).
    fn extent(&self) -> (f64, f64) {
        let s = self.problem.s;
        (s[0], s[s.len() - 1])
    }
}

/// One piece of the chain: plateau `i` spans knots `2i − 1 … 2i`, ramp `j`
/// knots `2j … 2j + 1`; `None` at a survey end.
struct Piece {
    is_ramp: bool,
    k0: Option<usize>,
    k1: Option<usize>,
    b0: f64,
    b1: f64,
    lv0: usize,
    lv1: usize,
}

fn piece(cx: &Context, idx: usize, start: f64, end: f64) -> Piece {
    let m = cx.chain.ramps();
    let is_ramp = idx % 2 == 1;
    let (k0, k1) = if idx == 0 {
        (None, (m > 0).then_some(0))
    } else if idx == 2 * m {
        (Some(2 * m - 1), None)
    } else {
        (Some(idx - 1), Some(idx))
    };
    let (lv0, lv1) = if is_ramp {
        (idx / 2, idx / 2 + 1)
    } else {
        (idx / 2, idx / 2)
    };
    Piece {
        is_ramp,
        k0,
        k1,
        b0: k0.map(|k| cx.knot(k)).unwrap_or(start),
        b1: k1.map(|k| cx.knot(k)).unwrap_or(end),
        lv0,
        lv1,
    }
}

/// Build the element table, its notes and the design centreline.
pub(super) fn extract(cx: &Context, diags: &mut Vec<Diagnostic>) -> Extracted {
    let chain = cx.chain;
    let m = chain.ramps();
    let (s_first, s_last) = cx.extent();
    let start = if m > 0 {
        s_first.min(chain.ramp_start(0))
    } else {
        s_first
    };
    let end = if m > 0 {
        s_last.max(chain.ramp_end(m - 1))
    } else {
        s_last
    };
    let collapsed: Vec<bool> = (0..m)
        .map(|j| chain.held[j] && chain.lens[j] == 0.0)
        .collect();
    let mut elements: Vec<FittedElement> = Vec::new();
    let mut pending_note: Option<String> = None;
    for idx in 0..(2 * m + 1) {
        let pc = piece(cx, idx, start, end);
        if pc.is_ramp && collapsed[idx / 2] {
            pending_note = Some(step_note(cx, &pc, idx / 2));
            continue;
        }
        if pc.b1 - pc.b0 <= 1e-9 {
            continue;
        }
        let mut e = element(cx, &pc);
        if let Some(pn) = pending_note.take() {
            e.note = if e.note.is_empty() {
                pn
            } else {
                format!("{pn}; {}", e.note)
            };
        }
        elements.push(e);
    }
    mark_broken_back(&mut elements);
    // Make consecutive rows join exactly.
    for i in 1..elements.len() {
        let prev_end = elements[i - 1].end_chainage;
        elements[i].start_chainage = prev_end;
    }
    note_indeterminate(&elements, cx.problem.chord, diags);
    let design_elems = elements
        .iter()
        .map(|e| Element {
            kind: e.kind,
            length: e.length.value,
            k_start: e.start_curvature,
            k_end: e.end_curvature,
        })
        .collect();
    Extracted {
        elements,
        design: Alignment::new(Pose::default(), start, design_elems),
        start,
    }
}

/// The note on a ramp held at zero length (a curvature step), with the
/// profile bound on how long a transition there could still be.
fn step_note(cx: &Context, pc: &Piece, j: usize) -> String {
    let kr0 = cx.chain.levels[pc.lv0].value();
    let kr1 = cx.chain.levels[pc.lv1].value();
    let what = if kr0 == 0.0 || kr1 == 0.0 {
        "no transition: the arc meets the straight directly"
    } else {
        "no transition between the arcs"
    };
    match profile_upper(cx.fits, cx.problem, j) {
        Some(hi_l) => format!(
            "{what} at {:.1} m (a transition up to {:.0} m long cannot be excluded at this chord)",
            pc.b0, hi_l
        ),
        None => format!("{what} at {:.1} m", pc.b0),
    }
}

/// One element of positive length with its estimates, status and notes.
fn element(cx: &Context, pc: &Piece) -> FittedElement {
    let chain = cx.chain;
    let (b0, b1) = (pc.b0, pc.b1);
    let kr0 = chain.levels[pc.lv0].value();
    let kr1 = chain.levels[pc.lv1].value();
    let grad_b0 = pc.k0.map(Context::knot_grad).unwrap_or_default();
    let grad_b1 = pc.k1.map(Context::knot_grad).unwrap_or_default();
    let se_b0 = cx.cov.var(&grad_b0).sqrt();
    let se_b1 = cx.cov.var(&grad_b1).sqrt();
    // Centreline length L_c = (b1 − b0)(1 + d (k0 + k1)/2).
    let f = 1.0 + cx.d_off * 0.5 * (kr0 + kr1);
    let lr = b1 - b0;
    let mut gl: Vec<(lm::Param, f64)> = grad_b1.iter().map(|&(p, g)| (p, g * f)).collect();
    gl.extend(grad_b0.iter().map(|&(p, g)| (p, -g * f)));
    for lv in [pc.lv0, pc.lv1] {
        if chain.levels[lv].is_free() {
            gl.push((lm::Param::Level(lv), 0.5 * cx.d_off * lr));
        }
    }
    let se_len = cx.cov.var(&gl).sqrt();
    let kind = if pc.is_ramp {
        ElementKind::Transition
    } else if chain.levels[pc.lv0].is_free() {
        ElementKind::Arc
    } else {
        ElementKind::Straight
    };
    let s = cx.problem.s;
    let i0 = s.partition_point(|&x| x < b0);
    let i1 = s.partition_point(|&x| x < b1);
    let rr = &cx.resid[i0..i1];
    let rms = if rr.is_empty() {
        0.0
    } else {
        (rr.iter().map(|x| x * x).sum::<f64>() / rr.len() as f64).sqrt()
    };
    let rmax = rr.iter().fold(0.0f64, |mx, x| mx.max(x.abs()));
    let (lo, hi) = cx.extent();
    let mut length = Estimate::new(lr * f, se_len, cx.t);
    let mut start_chainage = Estimate::new(b0, se_b0, cx.t);
    let mut end_chainage = Estimate::new(b1, se_b1, cx.t);
    let unbounded = [
        start_chainage.bound(lo, hi),
        end_chainage.bound(lo, hi),
        length.bound(0.0, (hi - lo) * f),
    ]
    .contains(&true);
    let (start_radius, end_radius) = if kind == ElementKind::Straight {
        (None, None)
    } else {
        (cx.radius(pc.lv0), cx.radius(pc.lv1))
    };
    let mut el = FittedElement {
        kind,
        start_chainage,
        end_chainage,
        starts_at_survey_end: pc.k0.is_none(),
        ends_at_survey_end: pc.k1.is_none(),
        length,
        start_radius,
        end_radius,
        start_curvature: cx.centre_k(kr0),
        end_curvature: cx.centre_k(kr1),
        readings: rr.len(),
        residual_rms: rms,
        residual_max: rmax,
        status: ElementStatus::Determined,
        note: String::new(),
    };
    judge(&mut el, lr, kr0, kr1, cx.problem.chord, unbounded);
    el
}

/// Status and notes of an element.
fn judge(e: &mut FittedElement, lr: f64, kr0: f64, kr1: f64, chord: f64, unbounded: bool) {
    let mut notes: Vec<String> = Vec::new();
    let at_end = e.starts_at_survey_end || e.ends_at_survey_end;
    if unbounded {
        e.status = ElementStatus::Indeterminate;
        notes.push("not resolved at this chord: its interval reaches the survey end".into());
    }
    if !at_end && e.length.lo95 <= 0.0 {
        e.status = ElementStatus::Indeterminate;
        notes.push(format!(
            "length not resolved at this chord: 95 % interval {:.1} to {:.1} m",
            e.length.lo95.max(0.0),
            e.length.hi95
        ));
    }
    if e.kind == ElementKind::Arc
        && let Some(r) = e.start_radius
        && r.se > RADIUS_SE_FRACTION * r.value.abs()
    {
        e.status = ElementStatus::Indeterminate;
        notes.push("radius poorly determined".into());
    }
    if e.kind == ElementKind::Transition && kr0 * kr1 < 0.0 {
        let z = e.start_chainage.value + lr * kr0 / (kr0 - kr1);
        notes.push(format!(
            "one transition through zero curvature (reverse curve), inflection at {z:.1} m"
        ));
    }
    if e.kind != ElementKind::Straight && !at_end && lr < 0.5 * chord {
        notes.push("shorter than half the chord".into());
    }
    if at_end {
        notes.push("cut by the survey end".into());
    }
    e.note = notes.join("; ");
}

/// Longest straight between two curves of the same hand that is still
/// called a broken-back curve, metres. The term is for a short straight
/// (common practice, figure from memory, not from a standard: beyond about
/// 100 m the curves read as separate curves); local standards may set
/// another length.
const BROKEN_BACK_MAX_STRAIGHT: f64 = 100.0;

/// A short straight between two curves of the same hand: a broken-back curve
/// (common practice: usually undesirable; say so, do not merge it away).
fn mark_broken_back(elements: &mut [FittedElement]) {
    for i in 1..elements.len().saturating_sub(1) {
        if elements[i].kind != ElementKind::Straight
            || elements[i].length.value >= BROKEN_BACK_MAX_STRAIGHT
        {
            continue;
        }
        let before = elements[..i]
            .iter()
            .rev()
            .map(|e| e.start_curvature)
            .find(|k| *k != 0.0);
        let after = elements[i + 1..]
            .iter()
            .map(|e| e.end_curvature)
            .find(|k| *k != 0.0);
        if let (Some(k0), Some(k1)) = (before, after)
            && k0 * k1 > 0.0
        {
            let e = &mut elements[i];
            if !e.note.is_empty() {
                e.note.push_str("; ");
            }
            e.note.push_str(
                "straight under 100 m between two curves of the same hand (broken-back curve)",
            );
        }
    }
}

fn note_indeterminate(elements: &[FittedElement], chord: f64, diags: &mut Vec<Diagnostic>) {
    for e in elements
        .iter()
        .filter(|e| e.status == ElementStatus::Indeterminate)
    {
        diags.push(
            Diagnostic::note(format!(
                "{} from {:.1} m to {:.1} m is not resolved at a {:.2} m chord: {}",
                e.kind.name(),
                e.start_chainage.value,
                e.end_chainage.value,
                chord,
                e.note
            ))
            .hint(
                "read its interval, not its value; a shorter chord or denser readings resolve it",
            ),
        );
    }
}

/// Upper 95 % profile bound on the length of collapsed ramp `j` (global
/// index): the length at which holding it costs `3.84 σ²` of residual sum of
/// squares. `None` if no group holds it.
fn profile_upper(fits: &[GroupFit], p: &Problem, j: usize) -> Option<f64> {
    let mut off = 0;
    for g in fits {
        if j >= off + g.chain.ramps() {
            off += g.chain.ramps();
            continue;
        }
        let jl = j - off;
        let data = p.data(g.lo_idx, g.hi_idx, g.lo, g.hi);
        let mut base = g.chain.clone();
        base.held[jl] = true;
        base.lens[jl] = 0.0;
        let r0 = lm::fit(&mut base, &data, p.max_iterations).rss;
        let mut prev = 0.0;
        let mut prev_d = 0.0;
        for f in PROFILE_CHORDS {
            let l = f * 2.0 * p.a;
            let mut c = base.clone();
            c.lens[jl] = l;
            let r = lm::fit(&mut c, &data, p.max_iterations).rss;
            let dlt = (r - r0) / p.s2pen;
            if dlt >= CHI2_1_95 {
                let w = (CHI2_1_95 - prev_d) / (dlt - prev_d).max(1e-12);
                return Some(prev + w * (l - prev));
            }
            prev = l;
            prev_d = dlt;
        }
        return Some(prev);
    }
    None
}
