//! Limits as constraints: the bounds on the reported slew at every reading,
//! the quadratic programme (solved by Clarabel) and, when it has no
//! solution, the smallest relaxation that would give one.

use super::{Binding, RangeLimit, SlewError, SlewOptions, Toward};
use clarabel::algebra::CscMatrix;
use clarabel::solver::{DefaultSettings, DefaultSolver, IPSolver, SolverStatus, SupportedConeT};

/// The problem is solved in millimetres, so that the solver's absolute
/// tolerances (1e-8) are far below anything printed.
const MM: f64 = 1e3;
/// Bounds are tightened by this much (metres) so that a slew solved to the
/// solver's tolerance still prints within its limit.
const MARGIN: f64 = 1e-6;
/// A relaxation smaller than this (metres) counts as none.
const SLACK_FLOOR: f64 = 1e-9;

/// Parse a direction word for a range limit: `left`, `right`, `in` or
/// `out` (case does not matter).
///
/// # Examples
/// ```
/// use chordline::realign::{parse_toward, Toward};
/// assert_eq!(parse_toward("Out"), Some(Toward::Out));
/// assert_eq!(parse_toward("up"), None);
/// ```
pub fn parse_toward(s: &str) -> Option<Toward> {
    match s.trim().to_ascii_lowercase().as_str() {
        "left" => Some(Toward::Left),
        "right" => Some(Toward::Right),
        "in" | "inwards" | "inward" => Some(Toward::In),
        "out" | "outwards" | "outward" => Some(Toward::Out),
        _ => None,
    }
}

/// Bounds on the reported slew at every reading of the section, and which
/// constraint each comes from (an index into `sources`).
#[derive(Debug, Clone)]
pub(super) struct Bounds {
    pub upper: Vec<Option<f64>>,
    pub lower: Vec<Option<f64>>,
    pub up_src: Vec<usize>,
    pub lo_src: Vec<usize>,
    pub sources: Vec<Binding>,
}

impl Bounds {
    fn tighten_upper(&mut self, i: usize, v: f64, src: usize) {
        if self.upper[i].is_none_or(|u| v < u) {
            self.upper[i] = Some(v);
            self.up_src[i] = src;
        }
    }

    fn tighten_lower(&mut self, i: usize, v: f64, src: usize) {
        if self.lower[i].is_none_or(|l| v > l) {
            self.lower[i] = Some(v);
            self.lo_src[i] = src;
        }
    }

    /// Whether any reading has a bound.
    pub fn any(&self) -> bool {
        self.upper.iter().chain(&self.lower).any(Option::is_some)
    }

    /// The limit a slew's sd is compared with: the smaller non-zero bound.
    pub fn compared(&self, i: usize) -> Option<f64> {
        [self.upper[i], self.lower[i].map(|l| -l)]
            .into_iter()
            .flatten()
            .filter(|v| *v > 0.0)
            .min_by(f64::total_cmp)
    }
}

/// The bounds of `opts` at readings `chainage` (metres) of the section.
/// `curve_side` (+1 centre left, −1 right, 0 straight) turns in/out into
/// left/right; `held` readings get none (they do not move); `fixed_at`
/// lists the readings of each fixed point, bounded by the tolerance when it
/// is not zero.
pub(super) fn station_bounds(
    file: &str,
    chainage: &[f64],
    curve_side: &[i8],
    held: &[bool],
    fixed_at: &[(f64, Vec<usize>)],
    opts: &SlewOptions,
) -> Result<Bounds, SlewError> {
    let n = chainage.len();
    let mut b = Bounds {
        upper: vec![None; n],
        lower: vec![None; n],
        up_src: vec![0; n],
        lo_src: vec![0; n],
        sources: Vec::new(),
    };
    let bad = |what: String| SlewError::Option {
        file: file.to_string(),
        what,
    };
    if let Some(l) = opts.max_slew {
        if !(l.is_finite() && l > 0.0) {
            return Err(bad(format!(
                "--max-slew {l} m is not a positive length; give e.g. 50mm"
            )));
        }
        b.sources.push(Binding::MaxSlew(l));
        for i in 0..n {
            b.tighten_upper(i, l, 0);
            b.tighten_lower(i, -l, 0);
        }
    }
    for r in &opts.ranges {
        range_bounds(&mut b, chainage, curve_side, r).map_err(bad)?;
    }
    if opts.fixed_tolerance > 0.0 {
        for (c, idx) in fixed_at {
            let src = b.sources.len();
            b.sources.push(Binding::Fixed(*c));
            for &i in idx {
                b.tighten_upper(i, opts.fixed_tolerance, src);
                b.tighten_lower(i, -opts.fixed_tolerance, src);
            }
        }
    }
    for i in (0..n).filter(|&i| held[i]) {
        b.upper[i] = None;
        b.lower[i] = None;
    }
    Ok(b)
}

fn range_bounds(
    b: &mut Bounds,
    chainage: &[f64],
    curve_side: &[i8],
    r: &RangeLimit,
) -> Result<(), String> {
    let (first, last) = (chainage[0], chainage[chainage.len() - 1]);
    if !(r.from.is_finite() && r.to.is_finite() && r.from < r.to) {
        return Err(format!(
            "the limit from {:.3} to {:.3} m needs a start before its end",
            r.from, r.to
        ));
    }
    if !(r.max.is_finite() && r.max >= 0.0) {
        return Err(format!(
            "the limit from {:.3} to {:.3} m needs a largest slew of 0 or more",
            r.from, r.to
        ));
    }
    let inside: Vec<usize> = (0..chainage.len())
        .filter(|&i| chainage[i] >= r.from && chainage[i] <= r.to)
        .collect();
    if inside.is_empty() {
        return Err(format!(
            "the limit from {:.3} to {:.3} m holds no reading of the work section ({first:.3} to {last:.3} m)",
            r.from, r.to
        ));
    }
    let src = b.sources.len();
    b.sources.push(Binding::Range(*r));
    for &i in &inside {
        let left = match r.toward {
            Toward::Left => true,
            Toward::Right => false,
            Toward::In | Toward::Out => {
                let c = side_near(curve_side, &inside, i).ok_or_else(|| {
                    format!(
                        "the limit from {:.3} to {:.3} m says '{}' but the design is straight there; say left or right",
                        r.from,
                        r.to,
                        r.toward.word()
                    )
                })?;
                (c > 0) == (r.toward == Toward::In)
            }
        };
        if left {
            b.tighten_upper(i, r.max, src);
        } else {
            b.tighten_lower(i, -r.max, src);
        }
    }
    Ok(())
}

/// The curve side at `i`, or at the nearest curving reading of the range.
fn side_near(curve_side: &[i8], inside: &[usize], i: usize) -> Option<i8> {
    inside
        .iter()
        .filter(|&&j| curve_side[j] != 0)
        .min_by_key(|&&j| j.abs_diff(i))
        .map(|&j| curve_side[j])
}

/// One reading's chord-relation equation: `Σ c·s − δ = D − v` (metres).
#[derive(Debug, Clone)]
pub(super) struct Row {
    /// The reading.
    pub at: usize,
    /// (reading, coefficient) of the slews in the equation.
    pub coef: Vec<(usize, f64)>,
    /// Design minus measured versine, metres.
    pub rhs: f64,
}

/// Everything the constrained solve needs (readings of the section).
pub(super) struct Problem<'a> {
    pub file: &'a str,
    pub chainage: &'a [f64],
    /// Whether the chord slew at each reading is free (not held exactly).
    pub free: &'a [bool],
    pub rows: &'a [Row],
    /// The reported slew at each reading as weights on chord slews.
    pub avg: &'a [Vec<(usize, f64)>],
    pub bounds: &'a Bounds,
    /// Largest |δ|, metres.
    pub tau: f64,
}

/// Which rows are elastic (may be relaxed at a cost) in a solve.
#[derive(Clone, Copy, PartialEq)]
enum Mode {
    Hard,
    ElasticLimits,
    ElasticVersines,
}

/// A bound row of the programme and what it stands for.
struct BoundRow {
    at: usize,
    src: Option<usize>,
}

struct Solved {
    x: Vec<f64>,
    slack: Vec<(BoundRow, f64)>,
}

/// The chord slews (metres, one per reading, 0 where held) minimising
/// `Σ δ²` under the bounds.
///
/// # Errors
/// [`SlewError::Infeasible`] naming the constraint that binds most;
/// [`SlewError::Solver`] if the solver fails.
pub(super) fn solve_constrained(p: &Problem) -> Result<Vec<f64>, SlewError> {
    match run(p, Mode::Hard)? {
        Some(s) => Ok(chord_slews(p, &s.x)),
        None => Err(diagnose(p)?),
    }
}

fn chord_slews(p: &Problem, x: &[f64]) -> Vec<f64> {
    let cols = columns(p.free);
    cols.iter().map(|c| c.map_or(0.0, |k| x[k] / MM)).collect()
}

pub(super) fn columns(free: &[bool]) -> Vec<Option<usize>> {
    let mut k = 0;
    free.iter()
        .map(|&f| {
            f.then(|| {
                k += 1;
                k - 1
            })
        })
        .collect()
}

fn diagnose(p: &Problem) -> Result<SlewError, SlewError> {
    let (solved, limits_relaxed) = match run(p, Mode::ElasticLimits)? {
        Some(s) => (s, true),
        None => match run(p, Mode::ElasticVersines)? {
            Some(s) => (s, false),
            None => {
                return Err(SlewError::Solver {
                    file: p.file.into(),
                    status: "the relaxed problem has no solution".into(),
                });
            }
        },
    };
    let name = |r: &BoundRow| match r.src {
        Some(k) if limits_relaxed => p.bounds.sources[k].clone(),
        _ => Binding::VersineTolerance(p.tau),
    };
    // Group the relaxed rows by constraint; the worst group binds.
    let mut groups: Vec<(Binding, usize, f64, f64, f64)> = Vec::new(); // (what, at, excess, from, to)
    for (r, e) in solved.slack.iter().filter(|(_, e)| *e > SLACK_FLOOR) {
        let what = name(r);
        let ch = p.chainage[r.at];
        match groups.iter_mut().find(|g| g.0 == what) {
            Some(g) => {
                if *e > g.2 {
                    g.1 = r.at;
                    g.2 = *e;
                }
                g.3 = g.3.min(ch);
                g.4 = g.4.max(ch);
            }
            None => groups.push((what, r.at, *e, ch, ch)),
        }
    }
    groups.sort_by(|a, b| b.2.total_cmp(&a.2));
    let Some((binding, at, excess, from, to)) = groups.first().cloned() else {
        return Err(SlewError::Solver {
            file: p.file.into(),
            status: "infeasible, but no constraint needs relaxing".into(),
        });
    };
    let also: String = groups
        .iter()
        .skip(1)
        .take(2)
        .map(|g| {
            format!(
                "; also the {} (by {:.1} mm at {:.3} m)",
                g.0,
                g.2 * 1e3,
                p.chainage[g.1]
            )
        })
        .collect();
    Ok(SlewError::Infeasible {
        file: p.file.into(),
        binding,
        chainage: p.chainage[at],
        from,
        to,
        excess,
        also,
    })
}

/// Build and solve the programme. `Ok(None)`: no solution (infeasible).
fn run(p: &Problem, mode: Mode) -> Result<Option<Solved>, SlewError> {
    let cols = columns(p.free);
    let nf = cols.iter().flatten().count();
    let nr = p.rows.len();
    let mut t = Triplets::default();
    let mut b = Vec::new();
    // Equalities: Σ c·s − δ = rhs.
    for (r, row) in p.rows.iter().enumerate() {
        for &(j, c) in &row.coef {
            if let Some(k) = cols[j] {
                t.push(r, k, c);
            }
        }
        t.push(r, nf + r, -1.0);
        b.push(row.rhs * MM);
    }
    let n_eq = b.len();
    // Bound rows: ±(reported slew) ≤ bound, ±δ ≤ τ.
    let mut brows: Vec<BoundRow> = Vec::new();
    let mut elastic: Vec<usize> = Vec::new(); // constraint row indices with a slack
    let margin = if mode == Mode::Hard { MARGIN } else { 0.0 };
    if mode != Mode::ElasticVersines {
        let bd = p.bounds;
        for i in 0..p.chainage.len() {
            for (bound, sign, src) in [
                (bd.upper[i], 1.0, bd.up_src[i]),
                (bd.lower[i].map(|l| -l), -1.0, bd.lo_src[i]),
            ] {
                let Some(v) = bound else { continue };
                let row = b.len();
                for &(j, w) in &p.avg[i] {
                    if let Some(k) = cols[j] {
                        t.push(row, k, sign * w);
                    }
                }
                b.push((v - margin).max(0.0) * MM);
                if mode == Mode::ElasticLimits {
                    elastic.push(row);
                }
                brows.push(BoundRow {
                    at: i,
                    src: Some(src),
                });
            }
        }
    }
    for (r, row) in p.rows.iter().enumerate() {
        for sign in [1.0, -1.0] {
            let k = b.len();
            t.push(k, nf + r, sign);
            b.push((p.tau - margin).max(0.0) * MM);
            if mode == Mode::ElasticVersines {
                elastic.push(k);
            }
            brows.push(BoundRow {
                at: row.at,
                src: None,
            });
        }
    }
    let nx = nf + nr + elastic.len();
    for (e, &row) in elastic.iter().enumerate() {
        t.push(row, nf + nr + e, -1.0);
        let k = b.len();
        t.push(k, nf + nr + e, -1.0);
        b.push(0.0);
    }
    let m = b.len();
    let a = t.matrix(m, nx);
    // Objective: ½Σδ² (tiny when only the relaxation is minimised) + Σ slack.
    let wd = if mode == Mode::Hard { 1.0 } else { 1e-6 };
    let pm = CscMatrix::new_from_triplets(
        nx,
        nx,
        (nf..nf + nr).collect(),
        (nf..nf + nr).collect(),
        vec![wd; nr],
    );
    let mut q = vec![0.0; nx];
    q[nf + nr..].iter_mut().for_each(|v| *v = 1.0);
    let cones = [
        SupportedConeT::ZeroConeT(n_eq),
        SupportedConeT::NonnegativeConeT(m - n_eq),
    ];
    let settings = DefaultSettings {
        verbose: false,
        ..DefaultSettings::default()
    };
    let mut solver =
        DefaultSolver::new(&pm, &q, &a, &b, &cones, settings).map_err(|e| SlewError::Solver {
            file: p.file.into(),
            status: format!("{e:?}"),
        })?;
    solver.solve();
    match solver.solution.status {
        SolverStatus::Solved | SolverStatus::AlmostSolved => {}
        SolverStatus::PrimalInfeasible | SolverStatus::AlmostPrimalInfeasible => return Ok(None),
        s => {
            return Err(SlewError::Solver {
                file: p.file.into(),
                status: format!("{s:?}"),
            });
        }
    }
    let x = solver.solution.x.clone();
    let slack_rows: Vec<usize> = elastic
        .iter()
        .map(|&row| row - n_eq) // index into brows
        .collect();
    let mut slack = Vec::new();
    let mut brows: Vec<Option<BoundRow>> = brows.into_iter().map(Some).collect();
    for (e, r) in slack_rows.into_iter().enumerate() {
        if let Some(br) = brows[r].take() {
            slack.push((br, x[nf + nr + e] / MM));
        }
    }
    Ok(Some(Solved { x, slack }))
}

#[derive(Default)]
pub(super) struct Triplets {
    i: Vec<usize>,
    j: Vec<usize>,
    v: Vec<f64>,
}

impl Triplets {
    pub(super) fn push(&mut self, i: usize, j: usize, v: f64) {
        self.i.push(i);
        self.j.push(j);
        self.v.push(v);
    }

    pub(super) fn matrix(self, m: usize, n: usize) -> CscMatrix<f64> {
        CscMatrix::new_from_triplets(m, n, self.i, self.j, self.v)
    }
}
