//! Initial segmentation: noise scales and a typed penalised optimal
//! partitioning (PELT) of the curvature estimate `k̂ = 2v/a²`.
//!
//! Segments are straights (`S`, curvature 0), arcs (`A`, constant) and ramps
//! (`T`, linear), each with a least-squares cost computed in O(1) from prefix
//! sums. A straight may not follow a straight; everything else may follow
//! anything. Penalties are `p_X ln n` in units of the element-scale noise
//! (`p = 1, 2, 3` for S, A, T: boundary, + level, + slope). This stage only
//! has to find the number, type and rough place of the elements; the
//! chord-space fit ([`super::lm`]) refines them.
//!
//! ## Reference
//! Killick, Fearnhead & Eckley, "Optimal detection of changepoints with a
//! linear computational cost", JASA 107(500), 2012 (PELT pruning);
//! SEGMENTATION.md §5 steps 1–3 (this project's design study).

use super::model::{Chain, Level};

/// Kind of an initial segment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SegKind {
    /// Zero curvature.
    S,
    /// Constant curvature.
    A,
    /// Linear curvature.
    T,
}

/// One segment of the initial partition, in survey chainage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Seg {
    /// Start chainage (m).
    pub start: f64,
    /// End chainage (m).
    pub end: f64,
    /// Kind.
    pub kind: SegKind,
    /// Fitted curvature at the start (1/m).
    pub k_start: f64,
    /// Fitted curvature at the end (1/m).
    pub k_end: f64,
}

/// Options of the typed partition.
#[derive(Debug, Clone, Copy)]
pub struct DpOptions {
    /// Bin width (m): boundaries fall between bins.
    pub bin: f64,
    /// Noise of one curvature estimate used for the penalty (1/m).
    pub sigma_k: f64,
    /// Penalty multiplier on `ln n`.
    pub log_n: f64,
    /// Minimum straight length (m).
    pub min_straight: f64,
    /// Minimum arc length (m).
    pub min_arc: f64,
    /// Minimum ramp length (m).
    pub min_ramp: f64,
    /// Maximum ramp length (m).
    pub max_ramp: f64,
}

struct Prefix {
    n: Vec<f64>,
    x: Vec<f64>,
    xx: Vec<f64>,
    z: Vec<f64>,
    xz: Vec<f64>,
    zz: Vec<f64>,
}

impl Prefix {
    #[inline]
    fn sums(&self, i: usize, j: usize) -> [f64; 6] {
        [
            self.n[j] - self.n[i],
            self.x[j] - self.x[i],
            self.xx[j] - self.xx[i],
            self.z[j] - self.z[i],
            self.xz[j] - self.xz[i],
            self.zz[j] - self.zz[i],
        ]
    }
    #[inline]
    fn cost(&self, kind: SegKind, i: usize, j: usize) -> f64 {
        let [n, x, xx, z, xz, zz] = self.sums(i, j);
        match kind {
            SegKind::S => zz,
            SegKind::A => zz - z * z / n,
            SegKind::T => {
                let sxx = xx - x * x / n;
                let sxz = xz - x * z / n;
                let base = zz - z * z / n;
                if sxx > 1e-12 * xx.abs().max(1e-300) {
                    (base - sxz * sxz / sxx).max(0.0)
                } else {
                    base
                }
            }
        }
    }
    /// Least-squares line (intercept at x=0, slope) of z on x for a segment.
    fn line(&self, i: usize, j: usize) -> (f64, f64) {
        let [n, x, xx, z, xz, _] = self.sums(i, j);
        let sxx = xx - x * x / n;
        let sxz = xz - x * z / n;
        if sxx > 0.0 {
            let b = sxz / sxx;
            ((z - b * x) / n, b)
        } else {
            (z / n, 0.0)
        }
    }
}

const KINDS: [SegKind; 3] = [SegKind::S, SegKind::A, SegKind::T];

fn allowed(prev: SegKind, next: SegKind) -> bool {
    !(prev == SegKind::S && next == SegKind::S)
}

/// Scale of the local chainage in the prefix sums (m): keeps `x²` near 1.
const XSCALE: f64 = 100.0;

/// Prefix sums over bins of the normalised curvature, and the bin edges.
fn binned(s: &[f64], k: &[f64], o: &DpOptions) -> (Prefix, Vec<f64>) {
    let n_read = s.len();
    let s0 = s[0];
    let xscale = XSCALE;
    // Bins: consecutive readings within the same bin-width cell.
    let mut bin_first = vec![0usize];
    for i in 1..n_read {
        let cell_prev = ((s[i - 1] - s0) / o.bin).floor();
        let cell = ((s[i] - s0) / o.bin).floor();
        if cell != cell_prev {
            bin_first.push(i);
        }
    }
    let nb = bin_first.len();
    bin_first.push(n_read);
    // Positions of bin edges.
    let half_first = if n_read > 1 { 0.5 * (s[1] - s[0]) } else { 0.5 };
    let half_last = if n_read > 1 {
        0.5 * (s[n_read - 1] - s[n_read - 2])
    } else {
        0.5
    };
    let mut pos = Vec::with_capacity(nb + 1);
    pos.push(s[0] - half_first);
    for &i in &bin_first[1..nb] {
        pos.push(0.5 * (s[i - 1] + s[i]));
    }
    pos.push(s[n_read - 1] + half_last);
    // Prefix sums over bins of normalised data.
    let inv = 1.0 / o.sigma_k.max(1e-300);
    let mut p = Prefix {
        n: vec![0.0; nb + 1],
        x: vec![0.0; nb + 1],
        xx: vec![0.0; nb + 1],
        z: vec![0.0; nb + 1],
        xz: vec![0.0; nb + 1],
        zz: vec![0.0; nb + 1],
    };
    for b in 0..nb {
        let (mut an, mut ax, mut axx, mut az, mut axz, mut azz) = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0);
        for i in bin_first[b]..bin_first[b + 1] {
            let x = (s[i] - s0) / xscale;
            let z = k[i] * inv;
            an += 1.0;
            ax += x;
            axx += x * x;
            az += z;
            axz += x * z;
            azz += z * z;
        }
        p.n[b + 1] = p.n[b] + an;
        p.x[b + 1] = p.x[b] + ax;
        p.xx[b + 1] = p.xx[b] + axx;
        p.z[b + 1] = p.z[b] + az;
        p.xz[b + 1] = p.xz[b] + axz;
        p.zz[b + 1] = p.zz[b] + azz;
    }
    (p, pos)
}

/// Typed penalised partition of the curvature estimates `k` at chainages `s`
/// (sorted). Returns the segments in order.
pub fn typed_partition(s: &[f64], k: &[f64], o: &DpOptions) -> Vec<Seg> {
    let n_read = s.len();
    if n_read == 0 {
        return Vec::new();
    }
    let (p, pos) = binned(s, k, o);
    let nb = pos.len() - 1;
    let ln_n = (n_read as f64).ln().max(1.0) * o.log_n;
    let beta = |kd: SegKind| match kd {
        SegKind::S => 1.0 * ln_n,
        SegKind::A => 2.0 * ln_n,
        SegKind::T => 3.0 * ln_n,
    };
    let minlen = |kd: SegKind| match kd {
        SegKind::S => o.min_straight,
        SegKind::A => o.min_arc,
        SegKind::T => o.min_ramp,
    };
    let inf = f64::INFINITY;
    // f[t][x], best predecessor (tau, kind of the segment ending at tau).
    let mut f = vec![[inf; 3]; nb + 1];
    let mut arg_tau = vec![[0usize; 3]; nb + 1];
    // g[t][x] and the kind achieving it.
    let mut g = vec![[inf; 3]; nb + 1];
    let mut g_arg = vec![[0usize; 3]; nb + 1];
    g[0] = [0.0; 3];
    // Straight: running minimum of g_S(tau) - zz(tau).
    let mut s_ptr = 0usize;
    let mut s_best = (inf, 0usize);
    // Arcs and ramps: candidate lists with lazy pruning.
    let mut cands: [Vec<(usize, f64)>; 2] = [vec![], vec![]]; // (tau, dead_after_pos)
    for t in 1..=nb {
        // New candidate tau = t-1.
        for c in &mut cands {
            c.push((t - 1, inf));
        }
        // S
        while s_ptr < t && pos[t] - pos[s_ptr] >= minlen(SegKind::S) - 1e-9 {
            let val = g[s_ptr][0] - p.zz[s_ptr];
            if val < s_best.0 {
                s_best = (val, s_ptr);
            }
            s_ptr += 1;
        }
        if s_best.0.is_finite() {
            f[t][0] = s_best.0 + p.zz[t] + beta(SegKind::S);
            arg_tau[t][0] = s_best.1;
        }
        // A and T
        for (ci, kd) in [(0usize, SegKind::A), (1usize, SegKind::T)] {
            let xi = ci + 1;
            let mut best = (inf, 0usize);
            let list = &mut cands[ci];
            let min_l = minlen(kd);
            list.retain(|&(tau, dead)| {
                pos[t] < dead && !(kd == SegKind::T && pos[t] - pos[tau] > o.max_ramp + 1e-9)
            });
            let mut vals: Vec<f64> = Vec::with_capacity(list.len());
            for &(tau, _) in list.iter() {
                let v = if pos[t] - pos[tau] >= min_l - 1e-9 && g[tau][xi].is_finite() {
                    g[tau][xi] + p.cost(kd, tau, t)
                } else {
                    inf
                };
                if v < best.0 {
                    best = (v, tau);
                }
                vals.push(v);
            }
            if best.0.is_finite() {
                f[t][xi] = best.0 + beta(kd);
                arg_tau[t][xi] = best.1;
                let ft = f[t][xi];
                let dead_at = pos[t] + min_l;
                for (c, v) in list.iter_mut().zip(vals) {
                    if v.is_finite() && v >= ft && c.1 > dead_at {
                        c.1 = dead_at;
                    }
                }
            }
        }
        // g[t]
        for (xi, &kd) in KINDS.iter().enumerate() {
            for (yi, &prev) in KINDS.iter().enumerate() {
                if allowed(prev, kd) && f[t][yi] < g[t][xi] {
                    g[t][xi] = f[t][yi];
                    g_arg[t][xi] = yi;
                }
            }
        }
    }
    backtrack(&f, &arg_tau, &g_arg, &p, &pos, s[0], o)
}

/// The segments of the optimal partition, from the DP tables.
fn backtrack(
    f: &[[f64; 3]],
    arg_tau: &[[usize; 3]],
    g_arg: &[[usize; 3]],
    p: &Prefix,
    pos: &[f64],
    s0: f64,
    o: &DpOptions,
) -> Vec<Seg> {
    let nb = pos.len() - 1;
    let xscale = XSCALE;
    let mut xi = (0..3)
        .min_by(|&a, &b| f[nb][a].total_cmp(&f[nb][b]))
        .unwrap_or(1);
    if !f[nb][xi].is_finite() {
        // Survey too short for any admissible partition: one arc (the fit
        // turns it into a straight if its curvature is not supported).
        let lvl = p.z[nb] / p.n[nb] * o.sigma_k;
        return vec![Seg {
            start: pos[0],
            end: pos[nb],
            kind: SegKind::A,
            k_start: lvl,
            k_end: lvl,
        }];
    }
    let mut t = nb;
    let mut out = Vec::new();
    while t > 0 {
        let tau = arg_tau[t][xi];
        let kd = KINDS[xi];
        let (k_start, k_end) = match kd {
            SegKind::S => (0.0, 0.0),
            SegKind::A => {
                let [n, _, _, z, _, _] = p.sums(tau, t);
                let l = z / n * o.sigma_k;
                (l, l)
            }
            SegKind::T => {
                let (c0, c1) = p.line(tau, t);
                let xs = (pos[tau] - s0) / xscale;
                let xe = (pos[t] - s0) / xscale;
                ((c0 + c1 * xs) * o.sigma_k, (c0 + c1 * xe) * o.sigma_k)
            }
        };
        out.push(Seg {
            start: pos[tau],
            end: pos[t],
            kind: kd,
            k_start,
            k_end,
        });
        let prev = g_arg[tau][xi];
        t = tau;
        xi = prev;
    }
    out.reverse();
    out
}

/// Turn typed segments into a plateau–ramp chain: adjacent plateaus get a
/// zero-length ramp between them, adjacent ramps a zero-length plateau (held at
/// zero when the joint curvature is within `zero_tol` of zero).
/// A step (two adjacent plateaus) starts as a ramp `step_len` long, since a
/// ramp of exactly zero length has no gradient in its length.
pub fn chain_from_segments(segs: &[Seg], zero_tol: f64, step_len: f64) -> Chain {
    let mut levels = Vec::new();
    let mut mids = Vec::new();
    let mut lens = Vec::new();
    let lvl = |k: f64| {
        if k.abs() <= zero_tol {
            Level::Zero
        } else {
            Level::Free(k)
        }
    };
    let mut prev: Option<SegKind> = None;
    let mut prev_end_k = 0.0;
    for sg in segs {
        match sg.kind {
            SegKind::S | SegKind::A => {
                if matches!(prev, Some(SegKind::S) | Some(SegKind::A)) {
                    mids.push(sg.start);
                    lens.push(step_len);
                }
                levels.push(if sg.kind == SegKind::S {
                    Level::Zero
                } else {
                    Level::Free(sg.k_start)
                });
            }
            SegKind::T => {
                match prev {
                    None => levels.push(lvl(sg.k_start)),
                    Some(SegKind::T) => levels.push(lvl(0.5 * (prev_end_k + sg.k_start))),
                    _ => {}
                }
                mids.push(0.5 * (sg.start + sg.end));
                lens.push(sg.end - sg.start);
            }
        }
        prev = Some(sg.kind);
        prev_end_k = sg.k_end;
    }
    if prev == Some(SegKind::T) {
        levels.push(lvl(prev_end_k));
    }
    if levels.is_empty() {
        levels.push(Level::Zero);
    }
    Chain::new(levels, mids, lens)
}

/// Effective noise of the readings at the scale of `m` consecutive readings:
/// `√m` times the robust spread ([`crate::integrate::trimmed_sigma`]) of the
/// means of non-overlapping windows of the de-meaned `runs` (each run a
/// stretch believed to be straight). For white noise this is the reading
/// noise at every `m`; correlated irregularity makes it grow with `m`. The
/// trimming keeps a turnout or a stray element out. `None` with fewer than
/// 3 windows.
pub fn scale_sigma(runs: &[&[f64]], m: usize) -> Option<f64> {
    let m = m.max(1);
    let mut means = Vec::new();
    for r in runs {
        let mean = r.iter().sum::<f64>() / r.len().max(1) as f64;
        for w in r.chunks_exact(m) {
            means.push(w.iter().map(|x| x - mean).sum::<f64>() / m as f64);
        }
    }
    if means.len() < 3 {
        return None;
    }
    crate::integrate::trimmed_sigma(&means).map(|s| s * (m as f64).sqrt())
}
