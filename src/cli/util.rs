//! Small helpers shared by the commands.

use chordline::survey::Setup;
use chordline::units::{LengthUnit, length_unit_of, split_unit};

use std::path::Path;

/// Parse a small length with its unit (`1mm`, `0.5 mm`, `2cm`, `0.125in`, `0.001m`) into metres.
pub fn small_length(s: &str) -> Result<f64, String> {
    let v = signed_length(s, true)?;
    if v < 0.0 {
        return Err(format!(
            "'{s}' is below zero; give a length of zero or more, e.g. 1mm"
        ));
    }
    Ok(v)
}

/// Parse a length with its unit into metres, negative values allowed; a
/// bare number is refused unless `need_unit` is false (then it is metres).
pub fn signed_length(s: &str, need_unit: bool) -> Result<f64, String> {
    non_finite(s, "length")?;
    let (num, unit) = split_unit(s).map_err(|e| e.to_string())?;
    let scale = match unit {
        "" if need_unit => {
            return Err(format!("'{s}' has no unit: write e.g. 1mm or 0.125in"));
        }
        "" => 1.0,
        u => match length_unit_of(u) {
            Some((scale, _)) => scale,
            None => {
                return Err(format!(
                    "'{s}' has an unknown unit: use mm, cm, m, in or ft"
                ));
            }
        },
    };
    let v: f64 = num
        .parse()
        .map_err(|_| format!("'{s}' is not a number with a unit (e.g. 1mm)"))?;
    if !v.is_finite() {
        return Err(format!("'{s}' is not a finite length"));
    }
    Ok(v * scale)
}

/// Refuse `NaN`, `inf` and the like (which would otherwise look like a unit).
fn non_finite(s: &str, what: &str) -> Result<(), String> {
    match s.trim().parse::<f64>() {
        Ok(v) if !v.is_finite() => Err(format!(
            "'{s}' is not a finite {what}: write a number, e.g. 4200 (with a unit where one is asked for)"
        )),
        _ => Ok(()),
    }
}

/// Parse `--gauge`: a length with unit within the range of real track gauges.
pub fn gauge(s: &str) -> Result<f64, String> {
    let g = small_length(s)?;
    let (narrowest, widest) = Setup::GAUGE_RANGE;
    if !(narrowest..=widest).contains(&g) {
        return Err(format!(
            "'{s}' is not a track gauge: gauges run from about 381 mm (15 in) to 1676 mm (5 ft 6 in); give the distance between the running edges of the rails, e.g. 1435mm (standard gauge) or 1000mm"
        ));
    }
    Ok(g)
}

/// A chainage on the command line: a number, optionally with the unit m or
/// ft (without one, it is in the survey's chainage unit).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChainageArg {
    /// The number as written.
    pub value: f64,
    /// The unit written after it, if any.
    pub unit: Option<LengthUnit>,
}

/// Parse one `--fixed` chainage (`4200`, `4200m`, `13780ft`, `-100`).
pub fn chainage(s: &str) -> Result<ChainageArg, String> {
    non_finite(s, "chainage")?;
    let (num, unit) = split_unit(s).map_err(|e| e.to_string())?;
    let unit = match unit {
        "" => None,
        "m" => Some(LengthUnit::Metre),
        "ft" => Some(LengthUnit::Foot),
        _ => {
            return Err(format!(
                "'{s}' has an unknown unit: write the chainage as a number, in the survey's unit or with m or ft (e.g. 4200 or 4200m)"
            ));
        }
    };
    let value: f64 = num.parse().map_err(|_| {
        format!("'{s}' is not a chainage: write a number, e.g. 4200 or 4200m (several separated by commas)")
    })?;
    if !value.is_finite() {
        return Err(format!(
            "'{s}' is not a finite chainage: write a number, e.g. 4200"
        ));
    }
    Ok(ChainageArg { value, unit })
}

/// Whether two paths name the same file (the same text, or the same file
/// once links and `..` are resolved).
pub fn same_file(a: &Path, b: &Path) -> bool {
    if a == b {
        return true;
    }
    match (std::fs::canonicalize(a), std::fs::canonicalize(b)) {
        (Ok(x), Ok(y)) => x == y,
        _ => false,
    }
}

/// Size the one thread pool of the process (rayon's global pool): `threads`,
/// or one per processor. Every parallel part (curve groups, covariance
/// blocks, writing, the surveys of a batch) shares it, so nesting never
/// runs more threads than this. Returns the size.
pub fn thread_pool(threads: Option<usize>) -> usize {
    let n = threads
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
        .max(1);
    // Fails only if the pool was already built (then it is used as it is).
    let _ = rayon::ThreadPoolBuilder::new()
        .num_threads(n)
        .build_global();
    rayon::current_num_threads()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn small_lengths_need_units() {
        assert_eq!(small_length("1mm"), Ok(1e-3));
        assert_eq!(small_length("0.125in"), Ok(0.125 * chordline::units::INCH));
        assert!(small_length("1").is_err());
        assert!(small_length("-1mm").is_err());
        assert!(small_length("1yd").is_err());
        assert!((small_length("5cm").unwrap() - 0.05).abs() < 1e-15);
        assert!(gauge("0mm").is_err() && gauge("3000mm").is_err() && gauge("10m").is_err());
        assert!((gauge("1435mm").unwrap() - 1.435).abs() < 1e-15);
        assert_eq!(signed_length("350m", false), Ok(350.0));
        assert_eq!(signed_length("-20", false), Ok(-20.0));
        assert_eq!(
            chainage("4200m"),
            Ok(ChainageArg {
                value: 4200.0,
                unit: Some(LengthUnit::Metre)
            })
        );
        assert!(chainage("NaN").is_err() && chainage("inf").is_err());
    }
}
