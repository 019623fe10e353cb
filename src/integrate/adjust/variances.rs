//! Lateral and heading variances at the stations after the adjustment: the
//! prior from the turn variances (prefix sums), reduced by what the control
//! points tell (`g V⁻¹ gᵀ`) and raised by the free start pose
//! (`e F⁻¹ eᵀ`). With many control points on a very long survey only a
//! subset of stations is evaluated and the standard deviations between are
//! interpolated.

use super::{Ctrl, Linearised, Solved, Sums, jmj};

/// Stations evaluated exactly between each pair of neighbouring controls.
const POINTS_BETWEEN_CONTROLS: usize = 16;
/// Work budget (multiply-adds) of the exact evaluation at every station;
/// beyond it every `stride`-th station is evaluated.
const WORK_BUDGET: f64 = 3e8;

/// Every how many stations the variances are evaluated exactly: with
/// control each station costs O(k²).
pub(super) fn stride(n: usize, k: usize) -> usize {
    let kk2 = (2 * k) * (2 * k);
    ((n as f64 * 3.0 * kk2 as f64 / WORK_BUDGET).ceil() as usize).max(1)
}

/// Which stations are evaluated: every `stride`-th, the last, the control
/// stations and their next, and points between neighbouring controls.
pub(super) fn evaluated(n: usize, ctrl: &[Ctrl], stride: usize) -> Vec<bool> {
    let mut eval = vec![stride == 1; n];
    if stride > 1 {
        for i in (0..n).step_by(stride) {
            eval[i] = true;
        }
        eval[n - 1] = true;
        let mut js: Vec<usize> = ctrl.iter().map(|q| q.j).collect();
        js.sort_unstable();
        js.dedup();
        for &j in &js {
            eval[j] = true;
            eval[(j + 1).min(n - 1)] = true;
        }
        for w in js.windows(2) {
            for t in 1..POINTS_BETWEEN_CONTROLS {
                eval[w[0] + (w[1] - w[0]) * t / POINTS_BETWEEN_CONTROLS] = true;
            }
        }
    }
    eval
}

/// The last linearisation's matrices as row-major vectors (fast inner loops).
struct Flat {
    vinv: Vec<f64>,
    a: Vec<f64>,
    finv: Option<Vec<f64>>,
    /// Columns of `A` (free start-pose parameters).
    p: usize,
}

fn row_major(m: &nalgebra::DMatrix<f64>) -> Vec<f64> {
    (0..m.nrows())
        .flat_map(|r| (0..m.ncols()).map(move |c| (r, c)))
        .map(|(r, c)| m[(r, c)])
        .collect()
}

impl Flat {
    fn of((vinv, a, finv): &Solved) -> Self {
        Flat {
            vinv: row_major(vinv),
            a: row_major(a),
            finv: finv.as_ref().map(row_major),
            p: a.ncols(),
        }
    }
}

/// Lateral and heading variance at every station (`NaN` where not evaluated
/// before the interpolation fills it).
pub(super) fn at_stations(
    lin: &Linearised,
    theta: &[f64],
    dr: &[f64],
    ctrl: &[Ctrl],
    last: Option<&Solved>,
    eval: &[bool],
) -> (Vec<f64>, Vec<f64>) {
    let n = theta.len();
    let flat = last.map(Flat::of);
    let mut lateral_var = vec![f64::NAN; n];
    let mut heading_var = vec![f64::NAN; n];
    let mut s = Sums::default(); // l ≤ i − 1
    let mut hsum = 0.0; // Σ_{l<i} D_l (prior heading)
    let mut work = Work::new(ctrl.len());
    for i in 0..n {
        let ci_ = lin.rel[i];
        if eval[i] {
            let (sn, cs) = theta[i].sin_cos();
            let nrm = (-sn, cs);
            // Prior.
            let m = jmj(s.m(ci_, ci_));
            let mut var_pos = [m[0], m[1], m[2], m[3]];
            let mut var_h = if i == 0 { dr[0] } else { hsum + 0.25 * dr[i] };
            if let Some(flat) = &flat {
                work.reduce(lin, ctrl, flat, i, s, dr, &mut var_pos, &mut var_h);
            }
            let lat = nrm.0 * (var_pos[0] * nrm.0 + var_pos[1] * nrm.1)
                + nrm.1 * (var_pos[2] * nrm.0 + var_pos[3] * nrm.1);
            lateral_var[i] = lat.max(0.0);
            heading_var[i] = var_h.max(0.0);
        }
        s.add(dr[i], ci_);
        hsum += dr[i];
    }
    if eval.iter().any(|e| !e) {
        interpolate_sd(&mut lateral_var, eval);
        interpolate_sd(&mut heading_var, eval);
    }
    (lateral_var, heading_var)
}

/// Buffers of the control reduction at one station: `g` (the covariances
/// of position and heading with the observations, 3 rows of 2k) and
/// `gv = g V⁻¹`.
struct Work {
    g: Vec<f64>,
    gv: Vec<f64>,
}

impl Work {
    fn new(k: usize) -> Self {
        Work {
            g: vec![0.0; 3 * 2 * k],
            gv: vec![0.0; 3 * 2 * k],
        }
    }

    /// Subtract what the controls tell about station `i` (`g V⁻¹ gᵀ`) and add
    /// the uncertainty of the free start pose (`e F⁻¹ eᵀ`).
    #[allow(clippy::too_many_arguments)]
    fn reduce(
        &mut self,
        lin: &Linearised,
        ctrl: &[Ctrl],
        flat: &Flat,
        i: usize,
        s: Sums,
        dr: &[f64],
        var_pos: &mut [f64; 4],
        var_h: &mut f64,
    ) {
        let k = ctrl.len();
        let w2 = 2 * k;
        let ci_ = lin.rel[i];
        let (g, gv) = (&mut self.g, &mut self.gv);
        let mut incl = s;
        incl.add(dr[i], ci_);
        // Cov(position_i, y) rows 0–1 and Cov(heading_i, y) row 2.
        let mut half = s;
        if i > 0 {
            half.add(0.5 * dr[i], ci_);
        } else {
            half.add(dr[0], ci_);
        }
        for cj in 0..k {
            let sp = if i <= ctrl[cj].j {
                incl
            } else {
                lin.sums_at[cj]
            };
            let mm = jmj(sp.m(ci_, lin.pts[cj]));
            g[2 * cj] = mm[0];
            g[2 * cj + 1] = mm[1];
            g[w2 + 2 * cj] = mm[2];
            g[w2 + 2 * cj + 1] = mm[3];
            let sh = if i <= ctrl[cj].j {
                half
            } else {
                lin.sums_at[cj]
            };
            let hv = sh.jv(lin.pts[cj]);
            g[2 * w2 + 2 * cj] = hv.0;
            g[2 * w2 + 2 * cj + 1] = hv.1;
        }
        // gv = g V⁻¹; red = gv gᵀ.
        for r in 0..3 {
            let gr = &g[r * w2..(r + 1) * w2];
            let out = &mut gv[r * w2..(r + 1) * w2];
            out.fill(0.0);
            for (mi, gm) in gr.iter().enumerate() {
                if *gm != 0.0 {
                    let vrow = &flat.vinv[mi * w2..(mi + 1) * w2];
                    for (o, v) in out.iter_mut().zip(vrow) {
                        *o += gm * v;
                    }
                }
            }
        }
        let dot = |r1: usize, r2: usize| -> f64 {
            gv[r1 * w2..(r1 + 1) * w2]
                .iter()
                .zip(&g[r2 * w2..(r2 + 1) * w2])
                .map(|(x, y)| x * y)
                .sum()
        };
        var_pos[0] -= dot(0, 0);
        var_pos[1] -= dot(0, 1);
        var_pos[2] -= dot(1, 0);
        var_pos[3] -= dot(1, 1);
        *var_h -= dot(2, 2);
        if let Some(finv) = &flat.finv {
            let e = start_pose_rows(gv, flat, w2, ci_);
            let p = flat.p;
            let quad = |r1: usize, r2: usize| -> f64 {
                let mut acc = 0.0;
                for x in 0..p {
                    for y in 0..p {
                        acc += e[r1][x] * finv[x * p + y] * e[r2][y];
                    }
                }
                acc
            };
            var_pos[0] += quad(0, 0);
            var_pos[1] += quad(0, 1);
            var_pos[2] += quad(1, 0);
            var_pos[3] += quad(1, 1);
            *var_h += quad(2, 2);
        }
    }
}

/// `e = a_i − gv A` (3 × p): how station `i` depends on the free start pose
/// once the controls are accounted for.
fn start_pose_rows(gv: &[f64], flat: &Flat, w2: usize, ci_: (f64, f64)) -> [[f64; 3]; 3] {
    let p = flat.p;
    let mut e = [[0.0; 3]; 3];
    for (r, row) in e.iter_mut().enumerate() {
        for (c, x) in row.iter_mut().enumerate().take(p) {
            let mut acc = 0.0;
            for m in 0..w2 {
                acc += gv[r * w2 + m] * flat.a[m * p + c];
            }
            *x = -acc;
        }
    }
    e[0][0] += 1.0;
    e[1][1] += 1.0;
    if p == 3 {
        e[0][2] += -ci_.1;
        e[1][2] += ci_.0;
        e[2][2] += 1.0;
    }
    e
}

/// Linear interpolation of the standard deviations between evaluated stations.
fn interpolate_sd(v: &mut [f64], eval: &[bool]) {
    let mut prev = 0usize;
    for i in 1..v.len() {
        if eval[i] {
            let (s0, s1) = (v[prev].sqrt(), v[i].sqrt());
            let span = (i - prev) as f64;
            for (t, x) in v[prev + 1..i].iter_mut().enumerate() {
                let f = (t + 1) as f64 / span;
                *x = (s0 + (s1 - s0) * f).powi(2);
            }
            prev = i;
        }
    }
}
