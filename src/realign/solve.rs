//! The slews of a work section: checks of the inputs, the held readings, the
//! banded solve per chain (values without limits, and the sd), the
//! constrained solve when limits are given, and the derived columns.

use super::chord::BandQr;
use super::limits::{self, Bounds, Problem, Row};
use super::text::diagnostics;
use super::{SlewError, SlewOptions, Slews};
use crate::diag::Diagnostic;
use crate::survey::{Rail, Reading, Setup, Survey};

/// Slews that bring the surveyed track onto the design, with their standard
/// deviations and the design versines actually realised.
///
/// `design_versine` is one design versine per reading (field convention,
/// metres: [`crate::fit::FitResult::design_versine`]); `reading_sd` the
/// standard deviation of one reading (metres, e.g. the fit's
/// `stats.reading_sd`). Readings must be evenly spaced with the half chord a
/// whole number of spacings. Gaps keep their station; their equation is
/// skipped. The limits of `opts` are constraints (see the module
/// documentation for the method, the sign convention and the **caution**:
/// slews are indicative and must be checked by a competent engineer before
/// any track is moved).
///
/// Diagnostics: a note with the largest slew and the design change; a
/// warning where slews are not shown because their sd exceeds their limit; a
/// warning where the slews are uncertain by more than 10 mm (threshold
/// chosen here).
///
/// # Errors
/// [`SlewError`] for mismatched inputs, uneven spacing, fixed points outside
/// the section, a section too short, gaps that leave slews undetermined, or
/// constraints that no slews meet ([`SlewError::Infeasible`]).
///
/// # Examples
/// ```
/// use chordline::realign::{slews, SlewOptions};
/// use chordline::survey::{Rail, Reading, Setup, Survey};
/// use chordline::units::{LengthUnit, VersineUnit};
/// // METHODS.md C5.1 (versines in mm, read every half chord on the outer rail).
/// let v_ex = [0.0, 2.0, 11.0, 19.0, 32.0, 18.0, 12.0, 1.0, 0.0];
/// let v_prop = [0.0, 2.0, 10.0, 20.0, 31.0, 21.0, 10.0, 1.0, 0.0];
/// let readings = v_ex.iter().enumerate().map(|(i, v)| Reading {
///     chainage: 10.0 * i as f64, versine: Some(v * 1e-3), rail: Rail::Right,
///     note: None, line: i + 2 }).collect();
/// let survey = Survey { source: "c51".into(), chainage_unit: LengthUnit::Metre,
///     versine_unit: VersineUnit::Millimetre, readings, has_side_column: false };
/// let design: Vec<f64> = v_prop.iter().map(|v| v * 1e-3).collect();
/// let (s, _) = slews(&survey, &Setup::new(20.0, Rail::Right), &design, 0.5e-3,
///     &SlewOptions::default()).unwrap();
/// let towards: Vec<f64> = (0..9).map(|i| s.towards_centre(i).unwrap_or(0.0) * 1e3).collect();
/// let expect = [0.0, 0.0, 0.0, -2.0, -2.0, -4.0, 0.0, 0.0, 0.0];
/// assert!(towards.iter().zip(expect).all(|(a, b)| (a - b).abs() < 1e-9));
/// ```
pub fn slews(
    survey: &Survey,
    setup: &Setup,
    design_versine: &[f64],
    reading_sd: f64,
    opts: &SlewOptions,
) -> Result<(Slews, Vec<Diagnostic>), SlewError> {
    let file = survey.source.as_str();
    let sys = system(survey, setup, design_versine, reading_sd, opts, 2)?;
    let mut chord_slew = sys.banded.clone();
    let rd = &survey.readings[sys.first..sys.first + sys.chainage.len()];
    let design = &design_versine[sys.first..sys.first + sys.chainage.len()];
    let m = sys.m;
    let n = rd.len();
    let change0 = realised(rd, design, &chord_slew, m).1;
    let over_tau = change0.iter().any(|d| d.abs() > sys.tau);
    if sys.bounds.any() || over_tau {
        let problem = Problem {
            file,
            chainage: &sys.chainage,
            free: &sys.free,
            rows: &sys.rows,
            avg: &sys.avg,
            bounds: &sys.bounds,
            tau: sys.tau,
        };
        chord_slew = limits::solve_constrained(&problem)?;
    }
    let System {
        avg,
        sd,
        chainage,
        curve_side,
        bounds,
        free,
        at_fixed,
        tau,
        first: lo,
        ..
    } = sys;
    let reported = apply(&avg, &chord_slew);
    let (realised_versine, design_change) = realised(rd, design, &chord_slew, m);
    let shown = (0..n)
        .map(|i| bounds.compared(i).is_none_or(|l| sd[i] <= l))
        .collect();
    let Bounds { upper, lower, .. } = bounds;
    let out = Slews {
        chainage,
        slew: reported,
        sd,
        chord_slew,
        held: free.iter().map(|f| !f).collect(),
        at_fixed,
        measured_versine: rd.iter().map(|r| r.versine).collect(),
        design_versine: design.to_vec(),
        realised_versine,
        design_change,
        curve_side,
        upper,
        lower,
        shown,
        step: m,
        max_slew: opts.max_slew,
        fixed: opts.fixed.clone(),
        fixed_tolerance: opts.fixed_tolerance,
        ranges: opts.ranges.clone(),
        versine_tolerance: tau,
        reading_sd,
        first: lo,
        survey_len: survey.readings.len(),
        design: None,
        onto_placed: false,
    };
    let diags = diagnostics(survey, &out);
    Ok((out, diags))
}

/// The problem of a work section before any solve with limits: the held
/// readings, the equations, the averaging, the bounds, and the banded
/// solution without limits with its sd.
pub(super) struct System {
    /// Index of the section's first reading in the survey.
    pub first: usize,
    /// Readings per half chord.
    pub m: usize,
    pub chainage: Vec<f64>,
    /// Whether each chord slew is a variable (not held exactly).
    pub free: Vec<bool>,
    pub at_fixed: Vec<bool>,
    pub rows: Vec<Row>,
    pub avg: Vec<Vec<(usize, f64)>>,
    pub bounds: Bounds,
    pub tau: f64,
    pub curve_side: Vec<i8>,
    pub sd: Vec<f64>,
    /// Chord slews without limits (banded least squares).
    pub banded: Vec<f64>,
    /// Each fixed point's chainage and readings.
    pub fixed_pts: Vec<(f64, Vec<usize>)>,
}

/// Build the [`System`] of the work section of `opts`, its ends held at
/// `per_chain` readings of every interleaved chain (2: position and
/// direction; 1: position).
pub(super) fn system(
    survey: &Survey,
    setup: &Setup,
    design_versine: &[f64],
    reading_sd: f64,
    opts: &SlewOptions,
    per_chain: usize,
) -> Result<System, SlewError> {
    let file = survey.source.as_str();
    check_inputs(survey, design_versine, reading_sd)?;
    let (lo, hi) = section(survey, opts)?;
    let rd = &survey.readings[lo..hi];
    let design = &design_versine[lo..hi];
    let m = half_chord_steps(file, rd, setup)?;
    let n = rd.len();
    let (ends, fixed_at) = held_readings(file, rd, m, per_chain, &opts.fixed)?;
    let mut held = ends.clone();
    fixed_at.iter().flatten().for_each(|&i| held[i] = true);
    let at_fixed: Vec<bool> = (0..n).map(|i| held[i] && !ends[i]).collect();
    let chains = solve_chains(file, rd, design, &held, m)?;
    let (_, avg_var) = average(
        &chains.slew,
        &chains.var,
        &chains.cov_next,
        &averaging(n, m, &held),
        m,
    );
    let sd: Vec<f64> = avg_var
        .iter()
        .map(|v| reading_sd * v.max(0.0).sqrt())
        .collect();
    let chainage: Vec<f64> = rd.iter().map(|r| r.chainage).collect();
    let curve_side = curve_sides(rd, design, setup);
    let fixed_pts: Vec<(f64, Vec<usize>)> = opts.fixed.iter().copied().zip(fixed_at).collect();
    // With a tolerance the fixed points are bounded, not held, in the solve.
    let hard = if opts.fixed_tolerance > 0.0 {
        &ends
    } else {
        &held
    };
    let avg = averaging(n, m, hard);
    let bounds = limits::station_bounds(file, &chainage, &curve_side, hard, &fixed_pts, opts)?;
    Ok(System {
        first: lo,
        m,
        free: hard.iter().map(|h| !h).collect(),
        at_fixed,
        rows: equations(rd, design, m),
        avg,
        bounds,
        tau: opts.versine_tolerance.unwrap_or(3.0 * reading_sd),
        curve_side,
        sd,
        chainage,
        banded: chains.slew,
        fixed_pts,
    })
}

fn check_inputs(survey: &Survey, design: &[f64], reading_sd: f64) -> Result<(), SlewError> {
    let file = || survey.source.clone();
    let rd = &survey.readings;
    if design.len() != rd.len() {
        return Err(SlewError::LengthMismatch {
            file: file(),
            design: design.len(),
            readings: rd.len(),
        });
    }
    if !(reading_sd.is_finite() && reading_sd > 0.0) {
        return Err(SlewError::ReadingSd(reading_sd));
    }
    for (r, &d) in rd.iter().zip(design) {
        let bad = if !r.chainage.is_finite() {
            Some("chainage")
        } else if !d.is_finite() {
            Some("design versine")
        } else if r.versine.is_some_and(|v| !v.is_finite()) {
            Some("versine")
        } else {
            None
        };
        if let Some(what) = bad {
            return Err(SlewError::NotFinite {
                file: file(),
                what,
                chainage: r.chainage,
            });
        }
    }
    Ok(())
}

/// The readings of the work section, `lo..hi`.
fn section(survey: &Survey, opts: &SlewOptions) -> Result<(usize, usize), SlewError> {
    let rd = &survey.readings;
    let n = rd.len();
    let Some((a, b)) = opts.section else {
        return Ok((0, n));
    };
    let (first, last) = match (rd.first(), rd.last()) {
        (Some(f), Some(l)) => (f.chainage, l.chainage),
        _ => (0.0, 0.0),
    };
    let tol = 1e-6_f64.max(1e-9 * a.abs().max(b.abs()));
    let lo = rd.iter().position(|r| r.chainage >= a - tol);
    let hi = rd.iter().rposition(|r| r.chainage <= b + tol);
    match (lo, hi) {
        (Some(lo), Some(hi)) if a.is_finite() && b.is_finite() && a < b && lo < hi => {
            Ok((lo, hi + 1))
        }
        _ => Err(SlewError::Option {
            file: survey.source.clone(),
            what: format!(
                "the work section {a:.3} to {b:.3} m is not a stretch of the survey ({first:.3} to {last:.3} m); give --section FROM,TO with FROM before TO, inside the survey"
            ),
        }),
    }
}

/// Readings per half chord, after checking the spacing and the length.
fn half_chord_steps(file: &str, rd: &[Reading], setup: &Setup) -> Result<usize, SlewError> {
    let arms = setup.arms();
    if !arms.is_symmetric() {
        return Err(SlewError::AsymmetricChord {
            file: file.into(),
            behind: arms.behind,
            ahead: arms.ahead,
        });
    }
    let n = rd.len();
    if n < 2 {
        return Err(SlewError::TooShort {
            file: file.into(),
            readings: n,
            needed: 5,
        });
    }
    let d = (rd[n - 1].chainage - rd[0].chainage) / (n - 1) as f64;
    let tol = (0.01 * d).max(0.002);
    for w in rd.windows(2) {
        let found = w[1].chainage - w[0].chainage;
        if d.is_nan() || d <= 0.0 || (found - d).abs() > tol {
            return Err(SlewError::Uneven {
                file: file.into(),
                line: w[1].line,
                found,
                expected: rd[1].chainage - rd[0].chainage,
            });
        }
    }
    let a = setup.half_chord();
    let mf = a / d;
    let m = mf.round();
    if m.is_nan() || m < 1.0 || (mf - m).abs() > 0.01 {
        return Err(SlewError::Spacing {
            file: file.into(),
            half_chord: a,
            spacing: d,
        });
    }
    let m = m as usize;
    if n < 4 * m + 1 {
        return Err(SlewError::TooShort {
            file: file.into(),
            readings: n,
            needed: 4 * m + 1,
        });
    }
    Ok(m)
}

/// Held readings at the section ends (`per_chain` per chain at each end),
/// and the readings held by each fixed point (one per chain).
fn held_readings(
    file: &str,
    rd: &[Reading],
    m: usize,
    per_chain: usize,
    fixed: &[f64],
) -> Result<(Vec<bool>, Vec<Vec<usize>>), SlewError> {
    let n = rd.len();
    let mut held = vec![false; n];
    held.iter_mut().take(per_chain * m).for_each(|h| *h = true);
    held.iter_mut()
        .skip(n - per_chain * m)
        .for_each(|h| *h = true);
    let (first, last) = (rd[0].chainage, rd[n - 1].chainage);
    let d = (last - first) / (n - 1) as f64;
    let mut at = Vec::new();
    for &f in fixed {
        if !f.is_finite() || f < first - 0.5 * d || f > last + 0.5 * d {
            return Err(SlewError::FixedOutside {
                file: file.into(),
                chainage: f,
                first,
                last,
            });
        }
        let j = (((f - first) / d).round() as usize).min(n - 1);
        let lo = j.saturating_sub(m / 2).min(n - m);
        at.push((lo..lo + m).collect());
    }
    Ok((held, at))
}

/// The banded solution per chain: chord slews, their variances (per unit
/// reading variance) and the covariance with the next reading of the chain.
struct Chains {
    slew: Vec<f64>,
    var: Vec<f64>,
    cov_next: Vec<f64>,
}

fn sign(r: Rail) -> f64 {
    r.chord_side(1.0)
}

fn solve_chains(
    file: &str,
    rd: &[Reading],
    design: &[f64],
    held: &[bool],
    m: usize,
) -> Result<Chains, SlewError> {
    let n = rd.len();
    let mut c = Chains {
        slew: vec![0.0; n],
        var: vec![0.0; n],
        cov_next: vec![0.0; n],
    };
    for r in 0..m {
        let idx: Vec<usize> = (r..n).step_by(m).collect();
        let mut col = vec![usize::MAX; idx.len()];
        let mut nfree = 0;
        for (k, &i) in idx.iter().enumerate() {
            if !held[i] {
                col[k] = nfree;
                nfree += 1;
            }
        }
        if nfree == 0 {
            continue;
        }
        let mut qr = BandQr::new(nfree);
        let inner = idx.len().saturating_sub(2);
        for (k, &i) in idx.iter().enumerate().skip(1).take(inner) {
            let Some(v) = rd[i].versine else { continue };
            let sg = sign(rd[i].rail);
            let cols: Vec<(usize, f64)> = [(k - 1, 0.5), (k, -1.0), (k + 1, 0.5)]
                .into_iter()
                .filter(|(kk, _)| col[*kk] != usize::MAX)
                .map(|(kk, cf)| (col[kk], sg * cf))
                .collect();
            if let Some(&(c0, _)) = cols.first() {
                let mut buf = [0.0; 3];
                for &(cc, val) in &cols {
                    buf[cc - c0] = val;
                }
                qr.add_row(c0, buf, design[i] - v);
            }
        }
        let x = qr.solve().map_err(|cc| {
            let k = col.iter().position(|&q| q == cc).unwrap_or(0);
            SlewError::Undetermined {
                file: file.into(),
                chainage: rd[idx[k]].chainage,
            }
        })?;
        let band = qr.band_inverse();
        for (k, &i) in idx.iter().enumerate() {
            if col[k] != usize::MAX {
                c.slew[i] = x[col[k]];
                c.var[i] = band[col[k]][0];
                if k + 1 < idx.len() && col[k + 1] != usize::MAX {
                    c.cov_next[i] = band[col[k]][1];
                }
            }
        }
    }
    Ok(c)
}

/// The chord-relation equation of every chain-interior reading with a
/// versine (for the constrained solve).
fn equations(rd: &[Reading], design: &[f64], m: usize) -> Vec<Row> {
    let n = rd.len();
    (m..n.saturating_sub(m))
        .filter_map(|i| {
            let v = rd[i].versine?;
            let sg = sign(rd[i].rail);
            Some(Row {
                at: i,
                coef: vec![(i - m, 0.5 * sg), (i, -sg), (i + m, 0.5 * sg)],
                rhs: design[i] - v,
            })
        })
        .collect()
}

/// The reported slew at each reading as weights on the chord slews: the
/// average over a half chord (one reading per chain; the two end readings
/// of the window at half weight when `m` is even), or the chord slew itself
/// when `m = 1`; none (reported 0) at held readings and the section ends.
fn averaging(n: usize, m: usize, held: &[bool]) -> Vec<Vec<(usize, f64)>> {
    let h = m / 2;
    let even = m.is_multiple_of(2);
    let wt = 1.0 / m as f64;
    (0..n)
        .map(|i| {
            if held[i] {
                Vec::new()
            } else if m == 1 {
                vec![(i, 1.0)]
            } else if i < h || i + h >= n {
                Vec::new()
            } else {
                let (lo, hi) = (i - h, i + h);
                (lo..=hi)
                    .map(|j| {
                        let end = even && (j == lo || j == hi);
                        (j, if end { 0.5 * wt } else { wt })
                    })
                    .collect()
            }
        })
        .collect()
}

fn apply(avg: &[Vec<(usize, f64)>], s: &[f64]) -> Vec<f64> {
    avg.iter()
        .map(|w| w.iter().map(|&(j, c)| c * s[j]).sum())
        .collect()
}

/// Averaged slews and their variances (per unit reading variance). The
/// chains carry independent noise; with `m` even the two end readings of a
/// window lie on the same chain, next to each other.
fn average(
    slew: &[f64],
    var: &[f64],
    cov_next: &[f64],
    avg: &[Vec<(usize, f64)>],
    m: usize,
) -> (Vec<f64>, Vec<f64>) {
    let even = m > 1 && m.is_multiple_of(2);
    let vals = apply(avg, slew);
    let vars = avg
        .iter()
        .map(|w| {
            let mut v: f64 = w.iter().map(|&(j, c)| c * c * var[j]).sum();
            if even && let (Some(&(lo, cl)), Some(&(_, ch))) = (w.first(), w.last()) {
                v += 2.0 * cl * ch * cov_next[lo];
            }
            v
        })
        .collect();
    (vals, vars)
}

/// Realised versines and design change, reading by reading (rails may differ).
pub(super) fn realised(
    rd: &[Reading],
    design: &[f64],
    slew: &[f64],
    m: usize,
) -> (Vec<Option<f64>>, Vec<f64>) {
    let n = rd.len();
    let mut out = vec![None; n];
    let mut change = vec![0.0; n];
    let at = |j: Option<usize>| j.filter(|&j| j < n).map_or(0.0, |j| slew[j]);
    for i in 0..n {
        if let Some(v) = rd[i].versine {
            let cs = -slew[i] + 0.5 * (at(i.checked_sub(m)) + at(Some(i + m)));
            let rv = v + rd[i].rail.chord_side(cs);
            out[i] = Some(rv);
            change[i] = rv - design[i];
        }
    }
    (out, change)
}

/// Which side the curve centre is on, from the design versine.
pub(super) fn curve_sides(rd: &[Reading], design: &[f64], setup: &Setup) -> Vec<i8> {
    let straight = 1e-6 * setup.chord * setup.chord / 8.0; // R > 1000 km
    rd.iter()
        .zip(design)
        .map(|(r, &dv)| {
            let cs = r.rail.chord_side(dv);
            if cs.abs() <= straight {
                0
            } else if cs > 0.0 {
                1
            } else {
                -1
            }
        })
        .collect()
}
