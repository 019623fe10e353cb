//! Control points that cannot both be right: one id used twice, two points
//! at one spot with different chainages.

use super::{ControlError, ControlPoint};

/// Ground distance below which two control points count as one spot, metres.
const COINCIDENT: f64 = 0.001;

/// Refuse two points with one id, and two points at one spot with different
/// chainages (in the order of the file).
pub(super) fn check_distinct(file: &str, points: &[ControlPoint]) -> Result<(), ControlError> {
    let contradiction = |line: usize, message: String| ControlError::Contradiction {
        file: file.to_string(),
        line,
        message,
    };
    let mut ids: std::collections::HashMap<&str, usize> = std::collections::HashMap::new();
    for p in points {
        if let Some(first) = ids.insert(&p.id, p.line) {
            return Err(contradiction(
                p.line,
                format!(
                    "control point id '{}' is used twice (lines {first} and {}): give each point its own id, or delete the repeated line",
                    p.id, p.line
                ),
            ));
        }
    }
    for (j, b) in points.iter().enumerate() {
        for a in &points[..j] {
            if ground_distance(a, b) < COINCIDENT && a.chainage != b.chainage {
                return Err(contradiction(
                    b.line,
                    format!(
                        "control points '{}' (line {}) and '{}' (line {}) are at the same place but {:.3} m apart in chainage: one of them has the wrong coordinates or the wrong chainage; correct it or remove the line",
                        a.id,
                        a.line,
                        b.id,
                        b.line,
                        (b.chainage - a.chainage).abs()
                    ),
                ));
            }
        }
    }
    Ok(())
}

/// Distance between two control points: in the grid when both have grid
/// coordinates, else on a sphere of the Earth's mean radius (good to a few
/// parts in a thousand, plenty to tell one spot from two).
fn ground_distance(a: &ControlPoint, b: &ControlPoint) -> f64 {
    if let (Some((ea, na)), Some((eb, nb))) = (a.grid, b.grid) {
        return (ea - eb).hypot(na - nb);
    }
    const EARTH_RADIUS: f64 = 6_371_000.0;
    let (la, lb) = (a.lonlat.lat.to_radians(), b.lonlat.lat.to_radians());
    let mut dlon = (b.lonlat.lon - a.lonlat.lon).to_radians();
    if dlon.abs() > std::f64::consts::PI {
        dlon -= std::f64::consts::TAU.copysign(dlon);
    }
    let x = dlon * (0.5 * (la + lb)).cos();
    EARTH_RADIUS * x.hypot(lb - la)
}
