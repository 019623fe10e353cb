//! The chord: what a versine says about the circle it was read on, for both
//! markings (taped marks on the rail, a rigid wire or beam), and the degree
//! of curve. One home for these relations; the integrator, the fit, the
//! advice and the writers all use them (`simulate` measures geometrically on
//! purpose, as the independent check).
//!
//! ## Reference
//! METHODS.md §1 (shared project notes, with their sources); CHECKS.md §1.

use crate::survey::Marking;

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
