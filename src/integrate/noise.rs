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
/// 1/16, 1/32, 0.1, 0.01 in; 0.01 ft …), but for at most one in
/// 16 of the non-zero readings (typing slips). Needs at least
/// 8 readings, some not zero. `None` for readings with no visible rounding.
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
    // A few readings off the step are typing slips, not a finer step.
    let allowed = readings_m.iter().filter(|v| **v != 0.0).count() / OFF_STEP_SHARE;
    for &q in candidates(unit) {
        let step = q * scale;
        let off = readings_m
            .iter()
            .filter(|&&v| {
                let n = v / step;
                (n - n.round()).abs() > 1e-6
            })
            .count();
        if off <= allowed {
            return Some(step);
        }
    }
    None
}

/// At most one non-zero reading in this many may be off the step (typing
/// slips, which a field book writes in whatever digits were typed): slips
/// do not make the step look finer. Counted among the non-zero readings, as
/// zero is on every step.
const OFF_STEP_SHARE: usize = 16;

/// Robust estimate of the reading standard deviation from third differences
/// of consecutive readings at (nearly) equal spacing: `Δ³v` removes a versine
/// signal that is locally quadratic in chainage and has variance `20σ²` for
/// independent noise. The estimate starts from the trimmed mean square
/// ([`trimmed_sigma`]) of the third differences and is refined by clipping at
/// three standard deviations, then divided by √20. Windows across
/// gaps are skipped. Returns `None` with fewer than 8 usable windows.
///
/// Real short-wave irregularity of the rail also counts as "noise" here, so the
/// estimate errs on the safe (larger) side.
pub fn estimate_noise(versines: &[Option<f64>]) -> Option<f64> {
    let d3: Vec<f64> = versines
        .windows(4)
        .filter_map(|w| match (w[0], w[1], w[2], w[3]) {
            (Some(a), Some(b), Some(c), Some(d)) => Some(d - 3.0 * c + 3.0 * b - a),
            _ => None,
        })
        .collect();
    if d3.len() < 8 {
        return None;
    }
    trimmed_sigma(&d3).map(|s0| clipped_sigma(&d3, s0) / 20f64.sqrt())
}

/// Values beyond this many standard deviations are left out by
/// [`clipped_sigma`] (a normal value is beyond it with probability 0.27 %).
const CLIP_SIGMAS: f64 = 3.0;
/// Mean square of a standard normal variable truncated to ±3:
/// `1 − 2·3·φ(3)/0.99730` (derived here).
const CLIP_MEAN_SQUARE: f64 = 0.973_35;

/// Refine a robust starting scale `s0` of values centred on zero: the root
/// mean square of the values within ±3σ, normalised for the truncation,
/// iterated. From the trimmed start the gross values (blunders, kinks) stay
/// out, and the clean ones all count, so a few percent of gross errors no
/// longer bias the scale (the trimmed mean alone drops clean values too).
fn clipped_sigma(x: &[f64], s0: f64) -> f64 {
    let mut s = s0;
    for _ in 0..20 {
        let lim = CLIP_SIGMAS * s;
        let (mut ss, mut k) = (0.0, 0usize);
        for v in x.iter().filter(|v| v.abs() <= lim) {
            ss += v * v;
            k += 1;
        }
        if k < 8 || ss <= 0.0 {
            return s;
        }
        let next = (ss / k as f64 / CLIP_MEAN_SQUARE).sqrt();
        let done = (next - s).abs() <= 1e-9 * s;
        s = next;
        if done {
            break;
        }
    }
    s
}

/// Fraction of the values [`trimmed_sigma`] keeps (the smallest in size).
const TRIM_KEEP: f64 = 0.8;
/// Mean square of a standard normal variable truncated to its central 80 %:
/// `1 − 2qφ(q)/0.8` with `q = 1.28155` (derived here; scipy.stats.truncnorm
/// gives the same to five digits).
const TRIM_MEAN_SQUARE: f64 = 0.437_72;

/// Robust standard deviation of values centred on zero: the mean square of
/// the smallest 80 % in size, divided by the same for a normal variable.
/// Up to a fifth of the values may be gross errors or signal (kinks, joints)
/// without effect; unlike a median it does not collapse to zero when the
/// readings are rounded coarsely and many values are exactly zero.
/// `None` for an empty slice.
///
/// ## Reference
/// Trimmed estimators of scale: Huber & Ronchetti, *Robust Statistics*, 2nd
/// ed., Wiley 2009, ch. 5 (from memory); the normal factor is derived here.
pub fn trimmed_sigma(x: &[f64]) -> Option<f64> {
    if x.is_empty() {
        return None;
    }
    let mut sq: Vec<f64> = x.iter().map(|v| v * v).collect();
    let keep = ((sq.len() as f64 * TRIM_KEEP).round() as usize).clamp(1, sq.len());
    if keep < sq.len() {
        // Puts the `keep` smallest first (the value itself is not needed).
        crate::numeric::order_statistic(&mut sq, keep - 1);
    }
    let ms = sq[..keep].iter().sum::<f64>() / keep as f64;
    Some((ms / TRIM_MEAN_SQUARE).sqrt())
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
    fn trimmed_sigma_ignores_a_fifth_of_gross_errors_and_rounding() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let n = Normal::new(0.0, 1.0).unwrap();
        let mut x: Vec<f64> = (0..20000).map(|_| n.sample(&mut rng)).collect();
        let clean = trimmed_sigma(&x).unwrap();
        assert!((clean - 1.0).abs() < 0.03, "{clean}");
        // Rounded to whole units: variance 1 + 1/12 (Sheppard), no collapse.
        let rounded: Vec<f64> = x.iter().map(|v| v.round()).collect();
        let r = trimmed_sigma(&rounded).unwrap();
        assert!((r - (1.0f64 + 1.0 / 12.0).sqrt()).abs() < 0.08, "{r}");
        for v in x.iter_mut().step_by(20) {
            *v = 50.0;
        }
        let dirty = trimmed_sigma(&x).unwrap();
        assert!((dirty - 1.0).abs() < 0.1, "{dirty}");
    }

    #[test]
    fn a_few_typing_slips_leave_the_step_found() {
        // 40 readings in eighths of an inch, two of them typed in other
        // digits (2.735 for 2.375): the step is still 1/8 in; with a fifth of
        // the readings off it, it is not.
        let inch = 0.0254;
        let mut v: Vec<f64> = (0..40).map(|i| (1 + i % 23) as f64 / 8.0 * inch).collect();
        v[7] = 2.735 * inch;
        v[30] = 1.53 * inch;
        assert_eq!(detect_resolution(&v, VersineUnit::Inch), Some(0.125 * inch));
        for k in (0..40).step_by(5) {
            v[k] = (0.37 + k as f64 * 0.011) * inch;
        }
        assert_eq!(detect_resolution(&v, VersineUnit::Inch), Some(0.001 * inch));
    }

    #[test]
    fn resolution_rejects_unrounded_values() {
        let v: Vec<f64> = (0..20).map(|i| 1e-3 * (i as f64 * 0.37 + 0.0123)).collect();
        assert_eq!(detect_resolution(&v, VersineUnit::Millimetre), None);
        let v: Vec<f64> = (0..20).map(|i| 1e-3 * (i as f64 * 0.5)).collect();
        assert_eq!(detect_resolution(&v, VersineUnit::Millimetre), Some(0.5e-3));
    }
}
