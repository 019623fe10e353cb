//! Blunders: readings no smooth geometry explains (typing errors of a hand
//! survey), found, set aside and described.
//!
//! Two steps, because a least-squares search would otherwise explain a gross
//! error with a spurious short element:
//! 1. **Screen** ([`screen`]): a reading farther than [`OUTLIER_Z`] reading
//!    standard deviations from the median of itself and its two neighbours is
//!    a *candidate*. Real geometry is smooth at the reading scale except at the
//!    peak of a short arc, so candidates are blunders and a few such peaks.
//!    Candidates are left out of the first search.
//! 2. **Confirm** ([`confirm`]): against the fitted design, a reading whose
//!    residual departs from its neighbours' residuals by more than
//!    `OUTLIER_Z` robust standard deviations is a blunder; every other
//!    candidate is taken back and the search repeated.
//!
//! The description compares the value read with the value the design
//! expects, in the file's own unit: a wrong sign, a slipped decimal point, or
//! two neighbouring digits swapped.
//!
//! ## Reference
//! The 5σ rule is a choice of ours: at it a normal reading is flagged with
//! probability 6·10⁻⁷, far below one false alarm per thousand readings.

use crate::units::VersineUnit;

/// Readings farther than this many standard deviations from what the fitted
/// design expects (and from their neighbours' residuals) are blunders.
pub const OUTLIER_Z: f64 = 5.0;
/// Neighbours on each side whose residuals give the local level a blunder is
/// measured from (a missed element shifts a run of residuals, not one).
const LOCAL_HALF_WINDOW: usize = 2;

/// What a blunder looks like.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Slip {
    /// The sign is wrong: the value read is the expected one negated.
    WrongSign,
    /// The decimal point slipped: the value read is about 10 or 100 times
    /// the expected one, or a tenth or a hundredth of it.
    DecimalPoint,
    /// Two neighbouring digits are swapped (26 for 62).
    TransposedDigits,
    /// None of these.
    Other,
}

impl Slip {
    /// Words for the engineer.
    pub fn describe(self) -> &'static str {
        match self {
            Slip::WrongSign => "wrong sign",
            Slip::DecimalPoint => "slipped decimal point",
            Slip::TransposedDigits => "transposed digits",
            Slip::Other => "not a simple typing slip",
        }
    }
}

/// One reading set aside as a blunder.
#[derive(Debug, Clone, PartialEq)]
pub struct Outlier {
    /// Index in the survey's readings.
    pub index: usize,
    /// 1-based line in the survey file (0 when not read from a file).
    pub line: usize,
    /// Chainage (m).
    pub chainage: f64,
    /// The field versine read (m).
    pub read: f64,
    /// The field versine the fitted design expects there (m).
    pub expected: f64,
    /// Its distance from the design in robust standard deviations.
    pub z: f64,
    /// What it looks like.
    pub looks_like: Slip,
    /// Whether it was left out of the fit (false with `keep_outliers`).
    pub excluded: bool,
}

/// Candidate blunders among readings `v` (indices into `v`): farther than
/// `OUTLIER_Z·sigma` from the median of themselves and their neighbours.
pub fn screen(v: &[f64], sigma: f64) -> Vec<usize> {
    let n = v.len();
    let mut out = Vec::new();
    for i in 1..n.saturating_sub(1) {
        let (a, b, c) = (v[i - 1], v[i], v[i + 1]);
        let med = median3(a, b, c);
        if (b - med).abs() > OUTLIER_Z * sigma {
            out.push(i);
        }
    }
    out
}

fn median3(a: f64, b: f64, c: f64) -> f64 {
    a.max(b).min(a.min(b).max(c))
}

/// Blunders among all readings given their residuals `r` about the fitted
/// design (indices into `r`): the residual departs by more than
/// `OUTLIER_Z·sigma` from zero, from each immediate neighbour's residual and
/// from the median residual of its neighbours.
pub fn confirm(r: &[f64], sigma: f64) -> Vec<usize> {
    let n = r.len();
    let lim = OUTLIER_Z * sigma;
    let mut out = Vec::new();
    let mut nb: Vec<f64> = Vec::with_capacity(2 * LOCAL_HALF_WINDOW);
    for i in 0..n {
        if r[i].abs() <= lim {
            continue;
        }
        nb.clear();
        let lo = i.saturating_sub(LOCAL_HALF_WINDOW);
        let hi = (i + LOCAL_HALF_WINDOW + 1).min(n);
        nb.extend((lo..hi).filter(|&k| k != i).map(|k| r[k]));
        let level = if nb.is_empty() {
            0.0
        } else {
            nb.sort_by(f64::total_cmp);
            let m = nb.len();
            if m % 2 == 1 {
                nb[m / 2]
            } else {
                0.5 * (nb[m / 2 - 1] + nb[m / 2])
            }
        };
        // Departs from each immediate neighbour too: the edge of a run of
        // large residuals (a missed element) does not.
        let apart = (i == 0 || (r[i] - r[i - 1]).abs() > lim)
            && (i + 1 == n || (r[i] - r[i + 1]).abs() > lim);
        if apart && (r[i] - level).abs() > lim {
            out.push(i);
        }
    }
    out
}

/// Describe a blunder: `read` and `expected` field versines (m), `tol` the
/// uncertainty of the expected value (m), `unit` the file's versine unit and
/// `decimals` the decimals the file writes in it.
pub fn classify(read: f64, expected: f64, tol: f64, unit: VersineUnit, decimals: u32) -> Slip {
    let (x, e, t) = (unit.from_m(read), unit.from_m(expected), unit.from_m(tol));
    if e.abs() > 2.0 * t && (x + e).abs() <= t {
        return Slip::WrongSign;
    }
    for f in [10.0, 100.0, 0.1, 0.01] {
        if (x - f * e).abs() <= t * f64::max(1.0, f) && (x - e).abs() > t {
            return Slip::DecimalPoint;
        }
    }
    if transposed(x, e, t, decimals) {
        return Slip::TransposedDigits;
    }
    Slip::Other
}

/// Whether `x` is some value within `t` of `e` with two neighbouring digits
/// swapped (both written with `decimals` decimals, same sign).
fn transposed(x: f64, e: f64, t: f64, decimals: u32) -> bool {
    if x.signum() != e.signum() && x != 0.0 && e != 0.0 {
        return false;
    }
    let scale = 10f64.powi(decimals as i32);
    let xd = format!("{}", (x.abs() * scale).round() as u64);
    let lo = ((e.abs() - t).max(0.0) * scale).floor() as u64;
    let hi = ((e.abs() + t) * scale).ceil() as u64;
    if hi - lo > 2000 {
        return false;
    }
    (lo..=hi).any(|cand| {
        let cd = format!("{cand}");
        if cd.len() != xd.len() || cd == xd {
            return false;
        }
        let (a, b) = (cd.as_bytes(), xd.as_bytes());
        let diff: Vec<usize> = (0..a.len()).filter(|&k| a[k] != b[k]).collect();
        diff.len() == 2
            && diff[1] == diff[0] + 1
            && a[diff[0]] == b[diff[1]]
            && a[diff[1]] == b[diff[0]]
    })
}

/// Decimals a reading step `step` (m) needs in `unit` (0 for whole
/// millimetres, 1 for tenths, 3 for eighths of an inch); 1 if unknown.
pub fn decimals_of(step: Option<f64>, unit: VersineUnit) -> u32 {
    let Some(q) = step else { return 1 };
    let q = unit.from_m(q);
    (0..=4)
        .find(|&d| {
            let x = q * 10f64.powi(d);
            (x - x.round()).abs() < 1e-6
        })
        .unwrap_or(4) as u32
}

#[cfg(test)]
mod tests {
    use super::*;
    const MM: f64 = 1e-3;

    #[test]
    fn slips_are_told_apart() {
        let mm = VersineUnit::Millimetre;
        let tol = 2.0 * MM;
        assert_eq!(
            classify(26.0 * MM, 62.4 * MM, tol, mm, 0),
            Slip::TransposedDigits
        );
        assert_eq!(
            classify(85.0 * MM, 8.5 * MM, tol, mm, 1),
            Slip::DecimalPoint
        );
        assert_eq!(classify(-41.0 * MM, 40.2 * MM, tol, mm, 0), Slip::WrongSign);
        assert_eq!(classify(90.0 * MM, 40.0 * MM, tol, mm, 0), Slip::Other);
        // 1/8 in readings: 3 decimals in inches.
        assert_eq!(decimals_of(Some(0.125 * 0.0254), VersineUnit::Inch), 3);
        assert_eq!(decimals_of(Some(1e-3), mm), 0);
    }

    #[test]
    fn one_spike_is_a_candidate_a_ramp_is_not() {
        let mut v: Vec<f64> = (0..30).map(|i| i as f64 * 4.0 * MM).collect();
        assert!(screen(&v, MM).is_empty());
        v[12] += 36.0 * MM;
        assert_eq!(screen(&v, MM), vec![12]);
    }

    #[test]
    fn a_run_of_large_residuals_is_misfit_not_blunders() {
        let mut r = vec![0.0; 40];
        for x in r.iter_mut().skip(10).take(6) {
            *x = 20.0 * MM;
        }
        assert!(confirm(&r, MM).is_empty());
        r[30] = -12.0 * MM;
        assert_eq!(confirm(&r, MM), vec![30]);
    }
}
