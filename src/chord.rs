//! The chord: what a versine says about the circle it was read on, for both
//! markings (taped marks on the rail, a rigid wire or beam), and the degree
//! of curve. One home for these relations; the integrator, the fit, the
//! advice and the writers all use them (`simulate` measures geometrically on
//! purpose, as the independent check).
//!
//! ## Reference
//! METHODS.md §1 (shared project notes, with their sources); CHECKS.md §1.

use crate::survey::{Arms, Marking};

/// Largest `(1 − cos x)/x` over `x > 0` (at x ≈ 2.3311): a taped versine
/// above this fraction of the half chord has no circle.
const TAPED_MAX_RATIO: f64 = 0.724_611_353_776_708;

/// Curvature (1/m, signed like `v`) of the circle on which a chord-side
/// versine `v` (metres) is read with half chord `a` (metres): marks taped at
/// arc length `a` either side (`v = (1 − cos κa)/κ`) or a straight wire of
/// length `2a` (`v = R − √(R² − a²)`, so `κ = 2v/(a² + v²)`).
/// `None` when no circle gives that versine (|v| too large for the chord).
///
/// # Examples
/// ```
/// use chordline::chord::curvature_from_versine;
/// use chordline::survey::Marking;
/// // CHECKS.md 1.4: R = 500 m, c = 20 m: exact string 100.0100 mm, marks on the arc 99.9967 mm.
/// let k = curvature_from_versine(0.100_010_0, 10.0, Marking::Wire).unwrap();
/// assert!((1.0 / k - 500.0).abs() < 0.01);
/// let k = curvature_from_versine(0.099_996_7, 10.0, Marking::Taped).unwrap();
/// assert!((1.0 / k - 500.0).abs() < 0.01);
/// ```
pub fn curvature_from_versine(v: f64, a: f64, marking: Marking) -> Option<f64> {
    if !(v.is_finite() && a.is_finite() && a > 0.0) {
        return None;
    }
    if v == 0.0 {
        return Some(0.0);
    }
    match marking {
        Marking::Wire => (v.abs() <= a).then(|| 2.0 * v / (a * a + v * v)),
        Marking::Taped => {
            let r = v.abs() / a;
            if r >= TAPED_MAX_RATIO {
                return None;
            }
            // Solve f(x) = 2 sin²(x/2)/x = r by Newton from the small-angle guess.
            let mut x = 2.0 * r;
            for _ in 0..60 {
                let sh = (0.5 * x).sin();
                let f = 2.0 * sh * sh / x - r;
                let df = (x * x.sin() - 2.0 * sh * sh) / (x * x);
                if df <= 0.0 {
                    return None;
                }
                let step = f / df;
                x -= step;
                if x.is_nan() || x <= 0.0 {
                    return None;
                }
                if step.abs() <= 1e-16 * x {
                    break;
                }
            }
            Some(v.signum() * x / a)
        }
    }
}

/// Versine (metres) read on a circle of curvature `k` (1/m) with half chord
/// `a`, for the given marking; the inverse of [`curvature_from_versine`].
pub fn versine_from_curvature(k: f64, a: f64, marking: Marking) -> f64 {
    if k == 0.0 {
        return 0.0;
    }
    match marking {
        Marking::Taped => {
            let sh = (0.5 * k * a).sin();
            2.0 * sh * sh / k
        }
        // R − √(R² − a²) without cancellation on gentle curves.
        Marking::Wire => k * a * a / (1.0 + (1.0 - (k * a).powi(2)).max(0.0).sqrt()),
    }
}

/// Versine (metres) read on a circle of curvature `k` (1/m) by a chord with
/// the arms `arms`, measuring point `arms.behind` from the rear end:
/// - taped marks at rail (arc) distances `a₁` behind and `a₂` ahead:
///   `v = (2/k)·sin(k a₁/2)·sin(k a₂/2)` (the distance from the middle mark to
///   the chord of the outer marks, `R[cos((a₂ − a₁)/2R) − cos((a₁ + a₂)/2R)]`);
/// - a rigid straight wire of length `c = a₁ + a₂` with both ends on the
///   circle, read perpendicular to the wire at `a₁` from its rear end:
///   `v = √(R² − t²) − √(R² − c²/4)` with `t = (a₁ − a₂)/2` the reading
///   point's distance from the wire's middle, written without cancellation as
///   `k a₁ a₂ / (√(1 − k²t²) + √(1 − k²c²/4))`.
///
/// Both give `k a₁ a₂/2` in the small-angle form (Trackopedia, "Versine
/// measurement": `h = a·b/(2R)` for a point at distances `a`, `b` from the
/// chord ends) and the symmetric relations of [`versine_from_curvature`]
/// when `a₁ = a₂` (then they are that function, bit for bit).
///
/// # Examples
/// ```
/// use chordline::chord::versine_from_curvature_arms;
/// use chordline::survey::{Arms, Marking};
/// // R = 500 m, arms 4 m + 6.5 m: v ≈ a₁a₂/2R = 26 mm.
/// let arms = Arms { behind: 4.0, ahead: 6.5 };
/// let v = versine_from_curvature_arms(1.0 / 500.0, arms, Marking::Wire);
/// assert!((v - 0.026).abs() < 1e-5);
/// ```
pub fn versine_from_curvature_arms(k: f64, arms: Arms, marking: Marking) -> f64 {
    if arms.is_symmetric() {
        return versine_from_curvature(k, arms.behind, marking);
    }
    if k == 0.0 {
        return 0.0;
    }
    let (a1, a2) = (arms.behind, arms.ahead);
    match marking {
        Marking::Taped => 2.0 * (0.5 * k * a1).sin() * (0.5 * k * a2).sin() / k,
        Marking::Wire => {
            let t = 0.5 * (a1 - a2);
            let h = 0.5 * (a1 + a2);
            let root = |x: f64| (1.0 - (k * x).powi(2)).max(0.0).sqrt();
            k * a1 * a2 / (root(t) + root(h))
        }
    }
}

/// Curvature (1/m, signed like `v`) of the circle on which the chord with
/// arms `arms` reads the chord-side versine `v`; the inverse of
/// [`versine_from_curvature_arms`] (and [`curvature_from_versine`] itself for
/// a symmetric chord). Wire: `R² = u² + c²/4` with `u = (a₁a₂ − v²)/(2|v|)`
/// the distance of the circle's centre from the wire (so `v² ≤ a₁a₂`, the
/// wire no longer than a half circle's chord); taped marks: Newton's method
/// from the small-angle value `2v/(a₁a₂)` (monotone from below, as the
/// versine is concave in the curvature). `None` when no circle gives `v`.
pub fn curvature_from_versine_arms(v: f64, arms: Arms, marking: Marking) -> Option<f64> {
    if arms.is_symmetric() {
        return curvature_from_versine(v, arms.behind, marking);
    }
    let (a1, a2) = (arms.behind, arms.ahead);
    if !(v.is_finite() && a1.is_finite() && a2.is_finite() && a1 > 0.0 && a2 > 0.0) {
        return None;
    }
    if v == 0.0 {
        return Some(0.0);
    }
    let p = a1 * a2;
    let w = v.abs();
    match marking {
        Marking::Wire => {
            if w * w > p {
                return None;
            }
            let u = (p - w * w) / (2.0 * w);
            let h = 0.5 * (a1 + a2);
            Some(v.signum() / (u * u + h * h).sqrt())
        }
        Marking::Taped => {
            let f = |k: f64| 2.0 * (0.5 * k * a1).sin() * (0.5 * k * a2).sin() / k;
            let df = |k: f64| {
                let (s1, c1) = (0.5 * k * a1).sin_cos();
                let (s2, c2) = (0.5 * k * a2).sin_cos();
                (a1 * c1 * s2 + a2 * s1 * c2) / k - 2.0 * s1 * s2 / (k * k)
            };
            let mut k = 2.0 * w / p;
            for _ in 0..100 {
                let d = df(k);
                if d.is_nan() || d <= 0.0 {
                    return None;
                }
                let step = (w - f(k)) / d;
                k += step;
                if !k.is_finite() || k <= 0.0 {
                    return None;
                }
                if step.abs() <= 1e-15 * k {
                    return ((f(k) - w).abs() <= 1e-10 * w).then_some(v.signum() * k);
                }
            }
            None
        }
    }
}

/// Exact radius (metres, signed like `v`) of the circle that gives the
/// chord-side versine `v` on a chord of length `chord` (metres) with the given
/// marking; `None` for a zero versine (a straight) or a versine no circle
/// gives. Wire: `R = (a² + v²)/(2v)` (exact sagitta, `a` = half chord); taped
/// marks: the root of `v = R(1 − cos(a/R))`.
///
/// # Examples
/// ```
/// use chordline::chord::radius_from_versine;
/// use chordline::survey::Marking;
/// // CHECKS.md 1.6: v = 50 mm, c = 20 m: exact R = 1000.025 m.
/// let r = radius_from_versine(20.0, 0.050, Marking::Wire).unwrap();
/// assert!((r - 1000.025).abs() < 1e-3);
/// ```
pub fn radius_from_versine(chord: f64, v: f64, marking: Marking) -> Option<f64> {
    let k = curvature_from_versine(v, 0.5 * chord, marking)?;
    (k != 0.0).then(|| 1.0 / k)
}

/// The trade approximation `R = c²/(8v)` (metres; CHECKS.md 1.1–1.2: on a
/// 20 m chord `R[m] = 50 000/v[mm]`). Infinite for `v = 0`.
pub fn radius_from_versine_approx(chord: f64, v: f64) -> f64 {
    chord * chord / (8.0 * v)
}

/// Versine (metres) of a circle of radius `radius` (metres, signed) on a chord
/// of length `chord` with the given marking: wire `R − √(R² − a²)`, taped
/// `R(1 − cos(a/R))`.
pub fn versine_from_radius(chord: f64, radius: f64, marking: Marking) -> f64 {
    versine_from_curvature(1.0 / radius, 0.5 * chord, marking)
}

/// Degree of curve, chord definition (railway usage): the angle in degrees
/// subtended by a 100 ft chord on a circle of radius `radius_m` metres,
/// `D = 2 asin(50 ft/R)`. `None` when the radius is shorter than 50 ft.
///
/// # Examples
/// ```
/// use chordline::chord::degree_of_curve;
/// // CHECKS.md 1.16: D = 1° (chord definition) ↔ R = 5729.651 ft.
/// let d = degree_of_curve(5729.651 * 0.3048).unwrap();
/// assert!((d - 1.0).abs() < 1e-6);
/// ```
pub fn degree_of_curve(radius_m: f64) -> Option<f64> {
    let half = 50.0 * crate::units::FOOT;
    let r = radius_m.abs();
    (r >= half && r.is_finite()).then(|| 2.0 * (half / r).asin().to_degrees())
}

/// Radius in metres of a curve of `d_deg` degrees, chord definition:
/// `R = 50 ft / sin(D/2)` (CHECKS.md 1.16).
pub fn radius_from_degree_of_curve(d_deg: f64) -> f64 {
    50.0 * crate::units::FOOT / (0.5 * d_deg.to_radians()).sin()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn asymmetric_relations_invert_and_reduce_to_the_symmetric_ones() {
        for m in [Marking::Taped, Marking::Wire] {
            for (a1, a2) in [(4.0, 6.5), (6.5, 4.0), (1.0, 19.0), (10.0, 30.0)] {
                let arms = Arms {
                    behind: a1,
                    ahead: a2,
                };
                for r in [20.1, 60.0, 450.0, 1e5] {
                    let v = versine_from_curvature_arms(1.0 / r, arms, m);
                    let k = curvature_from_versine_arms(v, arms, m).unwrap();
                    assert!((k * r - 1.0).abs() < 1e-10, "{m:?} {a1}+{a2} R={r}: {k}");
                }
                assert_eq!(curvature_from_versine_arms(0.0, arms, m), Some(0.0));
                assert_eq!(versine_from_curvature_arms(0.0, arms, m), 0.0);
            }
            // No circle reads a versine longer than the arms allow.
            let arms = Arms {
                behind: 4.0,
                ahead: 6.5,
            };
            assert!(curvature_from_versine_arms(6.0, arms, m).is_none());
            assert!(curvature_from_versine_arms(f64::NAN, arms, m).is_none());
            let sym = Arms::symmetric(10.0);
            for v in [0.0, 0.05, -0.3, 2.0] {
                assert_eq!(
                    curvature_from_versine_arms(v, sym, m),
                    curvature_from_versine(v, 10.0, m)
                );
            }
        }
    }
}
