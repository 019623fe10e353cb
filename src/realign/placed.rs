//! Slews onto the placed design: one design for the slews and the
//! coordinates.
//!
//! The slews of [`super::slews`] solve the chord relation in versine space
//! and hold only the section ends; the design written with coordinates
//! (`elements.csv` `placed_*`, GeoJSON, LandXML, IFC) is placed through the
//! control points and tied to the measured centreline
//! ([`crate::place`]). The two agreed only within the slews' sd. Here the
//! realignment starts from the placement instead: the design is placed once
//! more with the realignment's requirements as sideways holds
//! ([`crate::place::Hold`]: the design on the measured centreline at the held
//! readings of the section ends and the fixed points; at a bound wherever a
//! limit would be broken, added round by round until none is), and the slew
//! at every reading is the signed perpendicular distance from the measured
//! centreline to that design. The design versines are those of the same
//! design on the surveyed rail with the survey's chord and marking
//! ([`PlacedDesign::design_versines`]); the change they make
//! to the fitted design versines is what holding the held points and the
//! limits costs, and must stay within the versine tolerance as in the
//! versine-space solve (otherwise [`SlewError::Infeasible`] names the
//! binding constraint). The sd of each slew is that of the versine-space
//! solve (the reading noise between held points).

use super::limits::{Bounds, station_bounds};
use super::solve::{curve_sides, realised, system};
use super::text::diagnostics;
use super::{Binding, SlewError, SlewOptions, Slews};
use crate::diag::Diagnostic;
use crate::fit::FitResult;
use crate::integrate::{Plan, PositionObs};
use crate::place::{HOLD_SD, Hold, PlacedDesign, place_design_held};
use crate::survey::{Setup, Survey};

/// Rounds of adding holds at broken limits, at most (each a placement).
const ROUNDS: usize = 12;

/// A slew beyond its bound by more than this is a broken limit (m), as in
/// [`Slews::exceeding`].
const LIMIT_TOL: f64 = 1e-6;

/// How far inside its bound a limit holds the design (m): ten times the hold
/// sd, so that the held slew lands inside the bound.
const INSIDE: f64 = 1e-5;

/// Slews onto the design placed with the realignment's holds and limits,
/// and that design (which the pipeline writes). See the module
/// documentation; `controls` are the plan's position observations.
///
/// # Errors
/// As [`super::slews`]: inputs, spacing, section, fixed points, and
/// [`SlewError::Infeasible`] when the limits cannot be met within the
/// versine tolerance.
pub fn slews_onto_placed(
    survey: &Survey,
    setup: &Setup,
    fit: &FitResult,
    plan: &Plan,
    controls: &[PositionObs],
    opts: &SlewOptions,
) -> Result<(Slews, PlacedDesign, Vec<Diagnostic>), SlewError> {
    let reading_sd = setup.reading_sd.unwrap_or(fit.stats.reading_sd);
    let mut sys = system(survey, setup, &fit.design_versine, reading_sd, opts, 2)?;
    let (lo, n, m) = (sys.first, sys.chainage.len(), sys.m);
    release_direction(&mut sys.free, &mut sys.sd, &sys.at_fixed, m);
    // The readings set free get their limits.
    let hard: Vec<bool> = sys.free.iter().map(|f| !f).collect();
    let file = survey.source.as_str();
    sys.bounds = station_bounds(
        file,
        &sys.chainage,
        &sys.curve_side,
        &hard,
        &sys.fixed_pts,
        opts,
    )?;
    let hold = |i: usize, offset: f64| Hold {
        station: lo + i,
        offset,
        sd: HOLD_SD,
    };
    let mut holds: Vec<Hold> = (0..n)
        .filter(|&i| !sys.free[i])
        .map(|i| hold(i, 0.0))
        .collect();
    let (mut placed, mut g) = place_exactly(fit, plan, controls, &holds, lo, n);
    let first = g.clone();
    let mut limited = vec![false; n];
    for _ in 0..ROUNDS {
        let over = worst_of_runs(&sys.bounds, &sys.free, &limited, &g);
        if over.is_empty() {
            break;
        }
        for i in over {
            limited[i] = true;
            holds.push(hold(i, inside(&sys.bounds, i, g[i])));
        }
        (placed, g) = place_exactly(fit, plan, controls, &holds, lo, n);
    }
    let all_dv = placed.design_versines(fit, plan, setup);
    let design = &all_dv[lo..lo + n];
    let change: Vec<f64> = design
        .iter()
        .zip(&fit.design_versine[lo..lo + n])
        .map(|(d, f)| d - f)
        .collect();
    if let Some(e) = infeasible(
        file,
        &sys.chainage,
        &sys.bounds,
        &first,
        &g,
        &change,
        sys.tau,
    ) {
        return Err(e);
    }
    let rd = &survey.readings[lo..lo + n];
    let (realised_versine, _) = realised(rd, design, &g, m);
    let curve_side = curve_sides(rd, design, setup);
    let shown = (0..n)
        .map(|i| sys.bounds.compared(i).is_none_or(|l| sys.sd[i] <= l))
        .collect();
    let Bounds { upper, lower, .. } = sys.bounds;
    let out = Slews {
        chainage: sys.chainage,
        slew: g.clone(),
        sd: sys.sd,
        chord_slew: g,
        held: sys.free.iter().map(|f| !f).collect(),
        at_fixed: sys.at_fixed,
        measured_versine: rd.iter().map(|r| r.versine).collect(),
        design_versine: design.to_vec(),
        realised_versine,
        design_change: change,
        curve_side,
        upper,
        lower,
        shown,
        step: m,
        max_slew: opts.max_slew,
        fixed: opts.fixed.clone(),
        fixed_tolerance: opts.fixed_tolerance,
        ranges: opts.ranges.clone(),
        versine_tolerance: sys.tau,
        reading_sd,
        first: lo,
        survey_len: survey.readings.len(),
        design: None,
        onto_placed: true,
    };
    let mut diags = diagnostics(survey, &out);
    diags.push(Diagnostic::note(format!(
        "the slews are the sideways distances from the measured centreline to the placed design (the one written with coordinates: elements.csv placed_*, the GeoJSON layers, alignment.xml, alignment.ifc), held on the measured centreline at the section ends{}{}",
        if opts.fixed.is_empty() { "" } else { " and the fixed points" },
        if limited.iter().any(|&l| l) {
            format!(" and at its bounds at {} readings", limited.iter().filter(|&&l| l).count())
        } else {
            String::new()
        }
    )));
    Ok((out, placed, diags))
}

/// The section ends held in position only, at their first and last
/// reading: of the readings held at each end by the versine-space solve (two
/// per chain: position and direction), the others are set free (with more
/// than one reading per half chord, even two readings of one end a spacing
/// apart hold a direction). Holding the direction too would bend the
/// element chain to the measured track's direction over the last chord,
/// which the readings fix only poorly (on the placed demo it pushed the design
/// 57 mm off a control point of sd 10 mm). Their sd is taken from the
/// first reading free in that solve, the nearest one whose sd it gives: on
/// the cautious side, as they lie nearer the held end.
fn release_direction(free: &mut [bool], sd: &mut [f64], at_fixed: &[bool], m: usize) {
    let n = free.len();
    if n < 4 * m + 1 {
        return;
    }
    for i in (1..2 * m).chain(n - 2 * m..n - 1) {
        if !at_fixed[i] {
            free[i] = true;
            sd[i] = if i < n / 2 {
                sd[2 * m]
            } else {
                sd[n - 2 * m - 1]
            };
        }
    }
}

/// Passes of [`place_exactly`] at most.
const PASSES: usize = 6;

/// The design placed with `holds`, and the slews onto it at readings
/// `lo..lo + n`, each hold met to 1 µm in the slew itself: a hold ties the
/// design point abreast of the station, not the foot of the perpendicular,
/// and is weighted, not exact, so its target is moved by what the slew still
/// misses and the design placed again (the miss is nearly the same from
/// pass to pass, so a few passes suffice).
fn place_exactly(
    fit: &FitResult,
    plan: &Plan,
    controls: &[PositionObs],
    holds: &[Hold],
    lo: usize,
    n: usize,
) -> (PlacedDesign, Vec<f64>) {
    let mut aimed = holds.to_vec();
    let mut placed = place_design_held(fit, plan, controls, &aimed);
    let mut g = slews_of(&placed, fit, plan, lo, n);
    for _ in 1..PASSES {
        let miss = |h: &Hold| g[h.station - lo] - h.offset;
        if holds.iter().all(|h| miss(h).abs() < LIMIT_TOL) {
            break;
        }
        for (a, h) in aimed.iter_mut().zip(holds) {
            a.offset -= miss(h);
        }
        placed = place_design_held(fit, plan, controls, &aimed);
        g = slews_of(&placed, fit, plan, lo, n);
    }
    (placed, g)
}

/// The slew onto `placed` at readings `lo..lo + n`.
fn slews_of(placed: &PlacedDesign, fit: &FitResult, plan: &Plan, lo: usize, n: usize) -> Vec<f64> {
    plan.stations[lo..lo + n]
        .iter()
        .map(|s| placed.slew_at(fit, s))
        .collect()
}

/// The reading that breaks its limit most in every run of readings that
/// break one (only free readings not yet held at a bound): one hold per run
/// and round, so that the design is bent no more than it must be.
fn worst_of_runs(b: &Bounds, free: &[bool], limited: &[bool], g: &[f64]) -> Vec<usize> {
    let mut out = Vec::new();
    let mut run: Option<(usize, f64)> = None;
    for i in 0..=g.len() {
        let e = if i < g.len() && free[i] && !limited[i] {
            beyond(b, i, g[i])
        } else {
            0.0
        };
        if e > LIMIT_TOL {
            if run.is_none_or(|(_, w)| e > w) {
                run = Some((i, e));
            }
        } else if let Some((k, _)) = run.take() {
            out.push(k);
        }
    }
    out
}

/// How far slew `v` at reading `i` is beyond its bounds (m; 0 within).
fn beyond(b: &Bounds, i: usize, v: f64) -> f64 {
    let up = b.upper[i].map_or(0.0, |u| v - u);
    let down = b.lower[i].map_or(0.0, |l| l - v);
    up.max(down).max(0.0)
}

/// The bound slew `v` breaks at reading `i`, moved [`INSIDE`] inwards.
fn inside(b: &Bounds, i: usize, v: f64) -> f64 {
    match (b.upper[i], b.lower[i]) {
        (Some(u), _) if v > u => u - INSIDE,
        (_, Some(l)) if v < l => l + INSIDE,
        _ => v,
    }
}

/// The binding constraint at reading `i` for the slew `v` (beyond a bound).
fn binding_at(b: &Bounds, i: usize, v: f64) -> Option<Binding> {
    let src = if b.upper[i].is_some_and(|u| v > u) {
        b.up_src[i]
    } else {
        b.lo_src[i]
    };
    b.sources.get(src).cloned()
}

/// [`SlewError::Infeasible`] when a limit is still broken or the design
/// versines changed by more than `tau`: the binding constraint, where, and
/// by how much it would have to give (the slews onto the design held only at
/// the held readings, `first`, against its bound; or the design change over
/// `tau`).
fn infeasible(
    file: &str,
    chainage: &[f64],
    b: &Bounds,
    first: &[f64],
    g: &[f64],
    change: &[f64],
    tau: f64,
) -> Option<SlewError> {
    let n = chainage.len();
    let broken = (0..n).any(|i| beyond(b, i, g[i]) > LIMIT_TOL);
    let (ic, worst) = (0..n)
        .map(|i| (i, change[i].abs()))
        .max_by(|x, y| x.1.total_cmp(&y.1))?;
    if !broken && worst <= tau {
        return None;
    }
    // The limit broken most by the design held only at the held readings.
    let limit = (0..n)
        .map(|i| (i, beyond(b, i, first[i])))
        .filter(|x| x.1 > LIMIT_TOL)
        .max_by(|x, y| x.1.total_cmp(&y.1));
    let (i, binding, excess, over): (usize, Binding, f64, Vec<bool>) = match limit {
        Some((i, e)) => {
            let bind = binding_at(b, i, first[i]).unwrap_or(Binding::VersineTolerance(tau));
            let over = (0..n)
                .map(|k| {
                    beyond(b, k, first[k]) > LIMIT_TOL
                        && binding_at(b, k, first[k]).as_ref() == Some(&bind)
                })
                .collect();
            (i, bind, e, over)
        }
        None => {
            let over = change.iter().map(|c| c.abs() > tau).collect();
            (ic, Binding::VersineTolerance(tau), worst - tau, over)
        }
    };
    let from = (0..=i).rev().take_while(|&k| over[k]).last().unwrap_or(i);
    let to = (i..n).take_while(|&k| over[k]).last().unwrap_or(i);
    Some(SlewError::Infeasible {
        file: file.into(),
        binding,
        chainage: chainage[i],
        from: chainage[from],
        to: chainage[to],
        excess,
        also: if broken {
            String::new()
        } else {
            format!(
                "; the design versines would change by {:.2} mm, more than the {:.2} mm allowed",
                worst * 1e3,
                tau * 1e3
            )
        },
    })
}
