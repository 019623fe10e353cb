//! The exact polygon of marks at the classic half-chord spacing (METHODS §2).

use crate::chord::{curvature_from_versine, versine_from_curvature};
use crate::survey::Marking;

/// Chord of an arc of length `s` and curvature `k`.
pub(crate) fn chord_of_arc(k: f64, s: f64) -> f64 {
    let x = 0.5 * k * s;
    if x.abs() < 1e-8 {
        s * (1.0 - x * x / 6.0)
    } else {
        s * x.sin() / x
    }
}

/// One run of stations on one rail, in a local frame: station 0 at the origin
/// with tangent heading 0.
#[derive(Debug, Clone)]
pub(crate) struct RunGeom {
    /// Rail vertices.
    pub rail: Vec<(f64, f64)>,
    /// Tangent heading at each station.
    pub theta: Vec<f64>,
    /// Rail curvature at each station (deflection over the mean arc spacing).
    pub k_rail: Vec<f64>,
    /// `dδ/dv` at each station (for the noise propagation), 1/m.
    pub gain: Vec<f64>,
    /// The next vertex beyond the last station and its tangent heading.
    pub next: ((f64, f64), f64),
}

/// The exact polygon of one run.
///
/// `v` are chord-side versines (all present: gaps filled by the caller),
/// `spacing[i]` the arc distance from station `i` to `i + 1` (the last entry
/// is the spacing assumed beyond the run), `a` the half chord.
/// Deflection `δ_i = asin(v/a_{i−1}) + asin(v/a_i)` with the true chord sides
/// `a_i = 2 sin(κ̄ Δ_i/2)/κ̄` (METHODS §2). A wire reading is first turned into
/// the versine its circle gives on the polygon of marks.
///
/// Errors with the index of a station whose versine is too large.
pub(crate) fn polygon_run(
    v: &[f64],
    spacing: &[f64],
    a: f64,
    marking: Marking,
) -> Result<RunGeom, usize> {
    let n = v.len();
    debug_assert_eq!(spacing.len(), n);
    let back = |i: usize| if i == 0 { spacing[0] } else { spacing[i - 1] };
    // Local circle and polygon versine at each station.
    let mut kap = Vec::with_capacity(n);
    let mut vp = Vec::with_capacity(n);
    for i in 0..n {
        let a_loc = 0.5 * (back(i) + spacing[i]);
        let (k, p) = match marking {
            Marking::Taped => (curvature_from_versine(v[i], a_loc, marking).ok_or(i)?, v[i]),
            Marking::Wire => {
                let k = curvature_from_versine(v[i], a, marking).ok_or(i)?;
                (k, versine_from_curvature(k, a_loc, Marking::Taped))
            }
        };
        kap.push(k);
        vp.push(p);
    }
    // Chord sides: side i joins station i and i+1; side "before 0" uses κ_0.
    let side_before0 = chord_of_arc(kap[0], back(0));
    let sides: Vec<f64> = (0..n)
        .map(|i| {
            let kb = if i + 1 < n {
                0.5 * (kap[i] + kap[i + 1])
            } else {
                kap[i]
            };
            chord_of_arc(kb, spacing[i])
        })
        .collect();
    // Side headings φ_i (side i from station i to i+1), with φ_{-1} = 0, and vertices.
    let mut phi = Vec::with_capacity(n + 1);
    phi.push(0.0); // φ_{-1}
    let mut k_rail = Vec::with_capacity(n);
    let mut gain = Vec::with_capacity(n);
    for i in 0..n {
        let sb = if i == 0 { side_before0 } else { sides[i - 1] };
        let sa = sides[i];
        if vp[i].abs() >= sb || vp[i].abs() >= sa {
            return Err(i);
        }
        let delta = (vp[i] / sb).asin() + (vp[i] / sa).asin();
        phi.push(phi[i] + delta);
        k_rail.push(delta / (0.5 * (back(i) + spacing[i])));
        gain.push(1.0 / (sb * sb - vp[i] * vp[i]).sqrt() + 1.0 / (sa * sa - vp[i] * vp[i]).sqrt());
    }
    // Tangent at a vertex. A chord runs at the mean heading of its arc, and
    // (small angles) θ(s_i) − mean_back θ = ∫ ramp-up·k over the side before,
    // mean_fwd θ − θ(s_i) = ∫ ramp-down·k over the side after. Their sum is the
    // deflection; their difference is −Δ²k'/3 for linear curvature, with k'
    // from the neighbouring stations. Exact on circles (k' = 0).
    let kk = |i: isize| k_rail[i.clamp(0, n as isize - 1) as usize];
    let mut theta = Vec::with_capacity(n);
    for i in 0..n {
        let ii = i as isize;
        let db = back(i);
        let df = spacing[i];
        let slope = (kk(ii + 1) - kk(ii - 1)) / (db + df);
        let diff = -(db * df) * slope / 3.0;
        theta.push(0.5 * (phi[i] + phi[i + 1]) + 0.5 * diff);
    }
    // Local frame: station 0 at the origin with tangent heading 0.
    let rot = -theta[0];
    let mut rail = Vec::with_capacity(n);
    let (mut x, mut y) = (0.0, 0.0);
    for i in 0..n {
        rail.push((x, y));
        let h = phi[i + 1] + rot;
        x += sides[i] * h.cos();
        y += sides[i] * h.sin();
    }
    for t in theta.iter_mut() {
        *t += rot;
    }
    let last = n - 1;
    let phi_last = phi[n] + rot;
    let next_th =
        phi_last + 0.5 * spacing[last] * (0.75 * kk(last as isize) + 0.25 * kk(last as isize));
    Ok(RunGeom {
        rail,
        theta,
        k_rail,
        gain,
        next: ((x, y), next_th),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inversions_round_trip() {
        for &m in &[Marking::Taped, Marking::Wire] {
            for &k in &[1.0 / 150.0, -1.0 / 300.0, 1e-5, 0.05] {
                let v = versine_from_curvature(k, 10.0, m);
                let kk = curvature_from_versine(v, 10.0, m).unwrap();
                assert!(
                    (kk - k).abs() < 1e-13 * (1.0 + k.abs() * 1e3),
                    "{m:?} {k} {kk}"
                );
            }
        }
        assert!(curvature_from_versine(8.0, 10.0, Marking::Taped).is_none());
        assert!(curvature_from_versine(10.5, 10.0, Marking::Wire).is_none());
    }

    #[test]
    fn circle_polygon_is_exact() {
        // METHODS C2.1: circle R = 300 m, a = 10 m, 30 stations: rebuild error < 1e-9 m.
        let r = 300.0;
        let a = 10.0;
        let v = vec![versine_from_curvature(1.0 / r, a, Marking::Taped); 30];
        let g = polygon_run(&v, &[a; 30], a, Marking::Taped).unwrap();
        for (i, &(x, y)) in g.rail.iter().enumerate() {
            let ang = i as f64 * a / r;
            let (ex, ey) = (r * ang.sin(), r * (1.0 - ang.cos()));
            assert!(
                (x - ex).abs() < 1e-9 && (y - ey).abs() < 1e-9,
                "{i}: {x} {y}"
            );
            assert!((g.theta[i] - ang).abs() < 1e-12);
            assert!((g.k_rail[i] - 1.0 / r).abs() < 1e-14);
        }
    }
}
