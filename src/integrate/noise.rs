//! The reading standard deviation: resolution of the readings and a robust
//! estimate of the noise from the readings themselves.

use crate::units::VersineUnit;

/// Candidate reading steps in the file's own versine unit, coarsest first.
fn candidates(unit: VersineUnit) -> &'static [f64] {
    match unit {
        // Millimetres (and metres, converted to millimetres below).
        VersineUnit::Millimetre | VersineUnit::Metre => {
            &[5.0, 2.0, 1.0, 0.5, 0.1, 0.05, 0.01, 0.001]
        }
        VersineUnit::Inch => &[0.25, 0.125, 0.1, 0.0625, 0.05, 0.03125, 0.01, 0.001],
        VersineUnit::Foot => &[0.01, 0.005, 0.001, 0.0001],
    }
}

/// The step the readings were rounded to, in metres, if every reading is a
/// whole multiple of one of the usual steps (5, 2, 1, 0.5, 0.1 … mm; 1/4, 1/8,
/// 1/16, 1/32, 0.1, 0.01 in; 0.01 ft …). Needs at least 8 readings, some
/// not zero. `None` for readings with no visible rounding.
///
/// # Examples
/// ```
/// use chordline::integrate::detect_resolution;
/// use chordline::units::VersineUnit;
/// let v: Vec<f64> = [3.0, 5.0, -2.0, 7.0, 11.0, 0.0, 4.0, 9.0]
///     .iter().map(|mm| mm * 1e-3).collect();
/// assert_eq!(detect_resolution(&v, VersineUnit::Millimetre), Some(1e-3));
/// let eighths: Vec<f64> = [1.0, 3.0, 5.0, 2.0, 7.0, 9.0, 4.0, 6.0]
///     .iter().map(|e| e / 8.0 * 0.0254).collect();
/// assert_eq!(detect_resolution(&eighths, VersineUnit::Inch), Some(0.125 * 0.0254));
/// ```
pub fn detect_resolution(readings_m: &[f64], unit: VersineUnit) -> Option<f64> {
    if readings_m.len() < 8 || readings_m.iter().all(|v| *v == 0.0) {
        return None;
    }
    // Candidates for metre files are listed in millimetres.
    let scale = match unit {
        VersineUnit::Metre => 1e-3,
        u => u.metres(),
    };
    'cand: for &q in candidates(unit) {
        let step = q * scale;
        for &v in readings_m {
            let n = v / step;
            if (n - n.round()).abs() > 1e-6 {
                continue 'cand;
            }
        }
        return Some(step);
    }
    None
}

/// Robust estimate of the reading standard deviation from third differences
/// of consecutive readings at (nearly) equal spacing: `Δ³v` removes a versine
/// signal that is locally quadratic in chainage and has variance `20σ²` for
/// independent noise, so `σ ≈ 1.4826·median|Δ³v|/√20`. Windows across gaps are
/// skipped. Returns `None` with fewer than 8 usable windows.
///
/// Real short-wave irregularity of the rail also counts as "noise" here, so the
/// estimate errs on the safe (larger) side.
///
/// ## Reference
/// Median absolute deviation with the normal-consistency factor 1.4826:
/// Hampel, "The influence curve and its role in robust estimation", JASA 69,
/// 1974 (from memory).
pub fn estimate_noise(versines: &[Option<f64>]) -> Option<f64> {
    let mut d3: Vec<f64> = versines
        .windows(4)
        .filter_map(|w| match (w[0], w[1], w[2], w[3]) {
            (Some(a), Some(b), Some(c), Some(d)) => Some((d - 3.0 * c + 3.0 * b - a).abs()),
            _ => None,
        })
        .collect();
    if d3.len() < 8 {
        return None;
    }
    let mid = d3.len() / 2;
    let (_, med, _) = d3.select_nth_unstable_by(mid, |a, b| a.total_cmp(b));
    Some(1.4826 * *med / 20f64.sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};

    #[test]
    fn noise_estimate_recovers_the_sd_on_a_curved_signal() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let n = Normal::new(0.0, 1e-3).unwrap();
        let v: Vec<Option<f64>> = (0..4000)
            .map(|i| {
                let s = i as f64;
                Some(0.05 * (s / 300.0).sin() + 1e-6 * s + n.sample(&mut rng))
            })
            .collect();
        let est = estimate_noise(&v).unwrap();
        assert!((est - 1e-3).abs() < 0.06e-3, "{est}");
    }

    #[test]
    fn resolution_rejects_unrounded_values() {
        let v: Vec<f64> = (0..20).map(|i| 1e-3 * (i as f64 * 0.37 + 0.0123)).collect();
        assert_eq!(detect_resolution(&v, VersineUnit::Millimetre), None);
        let v: Vec<f64> = (0..20).map(|i| 1e-3 * (i as f64 * 0.5)).collect();
        assert_eq!(detect_resolution(&v, VersineUnit::Millimetre), Some(0.5e-3));
    }
}
