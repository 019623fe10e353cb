//! Control points: known positions of a few points on the track, read from a
//! small CSV file, checked against each other and against the survey, turned
//! into position observations for the integrator, and judged afterwards.
//!
//! # File format
//! Comma-separated, one header line, `#` starts a comment line; blank lines
//! are skipped. Column names carry their unit, as in the survey file:
//!
//! | column | meaning |
//! |---|---|
//! | `chainage_m` or `chainage_ft` | survey chainage of the point (required) |
//! | `lon_deg`, `lat_deg` | WGS 84 longitude and latitude, decimal degrees |
//! | `easting_m`, `northing_m` | grid coordinates in the system named by `--crs EPSG:<code>` |
//! | `sd_m`, `sd_mm` or `sd_ft` | standard deviation of each coordinate (optional; default 0.02 m) |
//! | `id` | a name for the point (optional; default `CP<line>`) |
//! | `note` | free text (optional, ignored) |
//!
//! Each point is a position of the **track centreline** (midway between the
//! running edges) at the given survey chainage (the survey's chainage, along
//! the measured rail). Exactly one of the coordinate pairs must be present.
//! Example:
//! ```text
//! # GNSS fixes on the track centreline, ETRS89 / UTM 32N
//! id,chainage_m,easting_m,northing_m,sd_m
//! A,0.0,512345.678,5376543.210,0.02
//! B,850.0,513101.004,5376912.551,0.02
//! ```

use crate::diag::{Diagnostic, Location};
use crate::geometry::Pose;
use crate::integrate::{Plan, PositionObs, PositionResidual, Station};
use crate::survey::Survey;

use super::place::{LonLat, PlaceError, Placement};

mod distinct;
mod read;
pub use read::read_controls;

/// Default standard deviation of a control coordinate when the file has no
/// `sd` column, metres (a good GNSS RTK fix; common practice).
pub const DEFAULT_SD: f64 = 0.02;

/// Normalised residual above which a control point is flagged (about the
/// 99.7 % point of a normal distribution; common practice).
pub const FLAG_LIMIT: f64 = 3.0;

/// Radius below which two control points whose ground distance is much
/// shorter than their chainage difference are reported (main-line railway
/// curves are rarely tighter; common practice, no source).
pub const TIGHT_RADIUS: f64 = 150.0;

/// Why the control points cannot be used. Every variant names the file and,
/// where it applies, the line and column, and says what to do.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ControlError {
    /// The file could not be read.
    #[error("{file}: cannot read the control-point file: {message}")]
    Io {
        /// File name as given.
        file: String,
        /// What the system said.
        message: String,
    },
    /// A problem with the header line.
    #[error("{file}:{line}: {message}")]
    Header {
        /// File name.
        file: String,
        /// 1-based line.
        line: usize,
        /// What is wrong and what to do.
        message: String,
    },
    /// A value that cannot be used.
    #[error("{file}:{line}, column {column}: {message}")]
    Value {
        /// File name.
        file: String,
        /// 1-based line.
        line: usize,
        /// Column name.
        column: String,
        /// What is wrong and what to do.
        message: String,
    },
    /// Grid coordinates without `--crs`.
    #[error(
        "{file}: the file gives easting_m/northing_m, so the grid must be named: add --crs EPSG:<code> (e.g. --crs EPSG:25832 for ETRS89 / UTM 32N)"
    )]
    NeedsCrs {
        /// File name.
        file: String,
    },
    /// No data rows.
    #[error("{file}: the file has no control points (only a header, comments or blank lines)")]
    Empty {
        /// File name.
        file: String,
    },
    /// Too few points to place the survey without a start bearing.
    #[error(
        "{file}: one control point fixes the position but not the direction of the track: add a second point (preferably far along the survey) or give --start-bearing"
    )]
    TooFew {
        /// File name.
        file: String,
    },
    /// A point outside the surveyed chainage.
    #[error(
        "{file}:{line}: control point '{id}' is at chainage {chainage} m, outside the survey ({first} m to {last} m): correct its chainage or remove the line"
    )]
    OffSurvey {
        /// File name.
        file: String,
        /// 1-based line.
        line: usize,
        /// Point name.
        id: String,
        /// Its chainage, metres.
        chainage: f64,
        /// First surveyed chainage, metres.
        first: f64,
        /// Last surveyed chainage, metres.
        last: f64,
    },
    /// Two points that cannot both be right.
    #[error("{file}:{line}: {message}")]
    Contradiction {
        /// File name.
        file: String,
        /// 1-based line of the second point of the pair.
        line: usize,
        /// Which points, what is impossible, what to do.
        message: String,
    },
}

/// One control point, converted to WGS 84 and metres.
#[derive(Debug, Clone, PartialEq)]
pub struct ControlPoint {
    /// Name.
    pub id: String,
    /// Survey chainage, metres.
    pub chainage: f64,
    /// WGS 84 position.
    pub lonlat: LonLat,
    /// Grid coordinates as given (easting, northing), metres, if the file had them.
    pub grid: Option<(f64, f64)>,
    /// Standard deviation of each coordinate, metres.
    pub sd: f64,
    /// 1-based line in the file.
    pub line: usize,
}

/// The control points of one file, in chainage order.
#[derive(Debug, Clone, PartialEq)]
pub struct ControlSet {
    /// File name as given.
    pub file: String,
    /// The points, chainage strictly increasing.
    pub points: Vec<ControlPoint>,
}

/// A control point's agreement with the rest.
#[derive(Debug, Clone, PartialEq)]
pub struct ControlCheck {
    /// Point name.
    pub id: String,
    /// 1-based line in the file.
    pub line: usize,
    /// Chainage, metres.
    pub chainage: f64,
    /// Observed minus adjusted, local east, metres.
    pub dx: f64,
    /// Observed minus adjusted, local north, metres.
    pub dy: f64,
    /// Normalised residual from the adjustment with all points.
    pub normalised: f64,
    /// Leave-one-out discrepancy: observed minus predicted from the other
    /// points, metres (length of the vector), if computed.
    pub loo_discrepancy: Option<f64>,
    /// That discrepancy divided by its standard deviation.
    pub loo_statistic: Option<f64>,
    /// Whether the point disagrees with the rest (either statistic above [`FLAG_LIMIT`]).
    pub flagged: bool,
}

/// Solve `sin φ / φ = q` for φ in (0, π) by bisection (q in (0, 1)).
fn half_angle_for_ratio(q: f64) -> f64 {
    let (mut lo, mut hi) = (1e-12_f64, std::f64::consts::PI);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid.sin() / mid > q {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

impl ControlSet {
    /// A placement with its origin at the first control point (in chainage order).
    ///
    /// # Errors
    /// [`PlaceError::Height`] for an implausible height.
    pub fn placement(&self, height: f64) -> Result<Placement, PlaceError> {
        // `read_controls` never returns an empty set.
        let origin = self
            .points
            .first()
            .map_or(LonLat { lon: 0.0, lat: 0.0 }, |p| p.lonlat);
        Placement::new(origin, height)
    }

    /// Check the points against the survey and against each other, and turn
    /// them into position observations in the local frame of `placement`.
    ///
    /// Checks, in order:
    /// * every point lies within the surveyed chainage (else
    ///   [`ControlError::OffSurvey`] naming its line);
    /// * for consecutive points, the ground distance cannot exceed the
    ///   chainage difference (a chord is never longer than its arc) beyond
    ///   3 standard deviations plus 0.5 % of the chainage difference
    ///   (chainage scale error of odometers and tapes, common practice)
    ///   plus 0.05 m (else [`ControlError::Contradiction`]);
    /// * when the ground distance is much shorter than the chainage
    ///   difference, the single circular arc joining them would be tighter
    ///   than [`TIGHT_RADIUS`]: a warning naming both lines.
    ///
    /// # Errors
    /// As listed above.
    pub fn to_position_obs(
        &self,
        placement: &Placement,
        survey: &Survey,
    ) -> Result<(Vec<PositionObs>, Vec<Diagnostic>), ControlError> {
        let first = survey.readings.first().map_or(0.0, |r| r.chainage);
        let last = survey.readings.last().map_or(0.0, |r| r.chainage);
        let mut diags = Vec::new();
        for p in &self.points {
            if p.chainage < first - 1e-9 || p.chainage > last + 1e-9 {
                return Err(ControlError::OffSurvey {
                    file: self.file.clone(),
                    line: p.line,
                    id: p.id.clone(),
                    chainage: p.chainage,
                    first,
                    last,
                });
            }
        }
        for w in self.points.windows(2) {
            let (a, b) = (&w[0], &w[1]);
            let d = placement.ground_distance(a.lonlat, b.lonlat);
            let s = b.chainage - a.chainage;
            let tol = 3.0 * a.sd.hypot(b.sd) + 0.005 * s + 0.05;
            if d > s + tol {
                return Err(ControlError::Contradiction {
                    file: self.file.clone(),
                    line: b.line,
                    message: format!(
                        "control points '{}' (line {}) and '{}' (line {}) are {:.3} m apart on the ground but only {:.3} m apart in chainage, which no track can do: check the chainages and coordinates of these two lines",
                        a.id, a.line, b.id, b.line, d, s
                    ),
                });
            }
            if d < s {
                let q = (d / s).max(1e-9);
                let phi = half_angle_for_ratio(q);
                let r = s / (2.0 * phi);
                if r < TIGHT_RADIUS {
                    diags.push(
                        Diagnostic::warning(format!(
                            "control points '{}' (line {}) and '{}' (line {}) are {:.1} m apart on the ground but {:.1} m apart in chainage: the track between them would have to curve at a radius of {:.0} m or less",
                            a.id, a.line, b.id, b.line, d, s, r
                        ))
                        .at(Location {
                            file: self.file.clone(),
                            line: b.line,
                            column: None,
                        })
                        .hint("check the chainages and coordinates of these two lines"),
                    );
                }
            }
        }
        let obs = self
            .points
            .iter()
            .map(|p| {
                let (x, y) = placement.to_local(p.lonlat.lon, p.lonlat.lat);
                PositionObs {
                    id: p.id.clone(),
                    chainage: p.chainage,
                    x,
                    y,
                    sd: p.sd,
                }
            })
            .collect();
        Ok((obs, diags))
    }

    /// A starting guess for the pose of the first station: heading from the
    /// first to the last control point (or `bearing_deg`, true bearing, when
    /// given), position extrapolated back from the first point along it.
    ///
    /// # Errors
    /// [`ControlError::TooFew`] with one point and no bearing.
    pub fn start_guess(
        &self,
        obs: &[PositionObs],
        survey_start: f64,
        bearing_deg: Option<f64>,
    ) -> Result<Pose, ControlError> {
        let heading = match (bearing_deg, obs.first(), obs.last()) {
            (Some(b), _, _) => crate::geometry::bearing_to_heading(b),
            (None, Some(a), Some(b)) if obs.len() >= 2 => (b.y - a.y).atan2(b.x - a.x),
            _ => {
                return Err(ControlError::TooFew {
                    file: self.file.clone(),
                });
            }
        };
        let a = obs
            .first()
            .map_or((0.0, 0.0, survey_start), |a| (a.x, a.y, a.chainage));
        let back = a.2 - survey_start;
        Ok(Pose {
            x: a.0 - back * heading.cos(),
            y: a.1 - back * heading.sin(),
            heading,
        })
    }

    /// Judge the points after the adjustment: one [`ControlCheck`] per point
    /// (in file chainage order), and a warning naming the line of every point
    /// that disagrees with the rest.
    ///
    /// With leave-one-out results, when the points disagree and exactly one
    /// of them leaves the others in agreement once it is left out (all their
    /// normalised residuals ≤ [`FLAG_LIMIT`]), that point alone is flagged.
    /// Otherwise every point with a normalised residual or leave-one-out
    /// statistic above [`FLAG_LIMIT`] is flagged, with a summary warning when
    /// several are.
    ///
    /// `residuals` are the integrator's `Plan::position_residuals` (matched
    /// by id). `loo` are optional leave-one-out results from
    /// [`leave_one_out`], matched by id.
    pub fn assess(
        &self,
        residuals: &[PositionResidual],
        loo: &[LooResult],
    ) -> (Vec<ControlCheck>, Vec<Diagnostic>) {
        // One blunder spreads into every residual of a joint adjustment, so
        // the residuals alone would flag innocent points too. A point is the
        // culprit when the others agree once it is left out (their largest
        // normalised residual ≤ FLAG_LIMIT) while the full set does not, and
        // it is the only such point. (Its own leave-one-out statistic can stay
        // small when the prediction from the others is uncertain.)
        let disagree = residuals.iter().any(|r| r.normalised > FLAG_LIMIT)
            || loo.iter().any(|l| l.statistic > FLAG_LIMIT);
        let candidates: Vec<&LooResult> = loo
            .iter()
            .filter(|l| l.rest_max_normalised.is_some_and(|m| m <= FLAG_LIMIT))
            .collect();
        let culprit_id = (disagree && candidates.len() == 1).then(|| candidates[0].id.as_str());
        let culprit = |l: &LooResult| Some(l.id.as_str()) == culprit_id;
        let any_culprit = culprit_id.is_some();
        let mut checks = Vec::new();
        let mut diags = Vec::new();
        for p in &self.points {
            let r = residuals.iter().find(|r| r.id == p.id);
            let l = loo.iter().find(|l| l.id == p.id);
            let (dx, dy, nr) = r.map_or((f64::NAN, f64::NAN, f64::NAN), |r| {
                (r.dx, r.dy, r.normalised)
            });
            let is_culprit = l.is_some_and(culprit);
            let flagged = if any_culprit {
                is_culprit
            } else {
                nr > FLAG_LIMIT || l.is_some_and(|l| l.statistic > FLAG_LIMIT)
            };
            if flagged {
                let mut msg = format!(
                    "control point '{}' at chainage {:.3} m disagrees with the survey and the other points: residual {:.3} m",
                    p.id,
                    p.chainage,
                    dx.hypot(dy)
                );
                if nr.is_finite() {
                    msg.push_str(&format!(", normalised {nr:.1}"));
                }
                if let Some(l) = l {
                    msg.push_str(&format!(
                        "; predicted from the others it is off by {:.3} m ({:.1} standard deviations)",
                        l.discrepancy, l.statistic
                    ));
                    if is_culprit && let Some(m) = l.rest_max_normalised {
                        msg.push_str(&format!(
                            ", and without it the other points agree (largest normalised residual {m:.1})"
                        ));
                    }
                }
                diags.push(
                    Diagnostic::warning(msg)
                        .at(Location {
                            file: self.file.clone(),
                            line: p.line,
                            column: None,
                        })
                        .hint("check this point's chainage and coordinates, raise its sd_m, or remove it"),
                );
            }
            checks.push(ControlCheck {
                id: p.id.clone(),
                line: p.line,
                chainage: p.chainage,
                dx,
                dy,
                normalised: nr,
                loo_discrepancy: l.map(|l| l.discrepancy),
                loo_statistic: l.map(|l| l.statistic),
                flagged,
            });
        }
        let n_flagged = checks.iter().filter(|c| c.flagged).count();
        if !any_culprit && n_flagged >= 2 {
            let why = if candidates.len() > 1 {
                let names: Vec<String> = candidates.iter().map(|c| format!("'{}'", c.id)).collect();
                format!(
                    "leaving out any one of {} makes the others agree, so the data cannot tell which is wrong",
                    names.join(", ")
                )
            } else {
                "no single point explains it".to_string()
            };
            diags.push(
                Diagnostic::warning(format!(
                    "{n_flagged} of {} control points disagree with the survey and with each other; {why}",
                    self.points.len()
                ))
                .at(Location {
                    file: self.file.clone(),
                    line: 1,
                    column: None,
                })
                .hint("check for a constant offset between the survey's and the control points' chainages, the coordinate system (--crs) of the control points, the chord length and rail, and whether sd_m is realistic"),
            );
        }
        (checks, diags)
    }
}

/// Result of predicting one control point from all the others.
#[derive(Debug, Clone, PartialEq)]
pub struct LooResult {
    /// Point name.
    pub id: String,
    /// |observed − predicted|, metres.
    pub discrepancy: f64,
    /// Discrepancy divided by √(2 sd² + predicted position sd²).
    pub statistic: f64,
    /// Largest normalised residual of the other points in the solution
    /// without this one (`None` if they had no residuals).
    pub rest_max_normalised: Option<f64>,
}

/// Centreline position and its standard deviation at `chainage`, by cubic
/// Hermite interpolation between the two neighbouring stations using their
/// headings (exact for arcs to well under a millimetre at station spacings of
/// a few metres). `None` outside the stations or where they are not finite.
pub fn position_at(stations: &[Station], chainage: f64) -> Option<(f64, f64, f64)> {
    let i = stations.partition_point(|s| s.chainage <= chainage);
    let (a, b) = if i == 0 {
        let a = stations.first()?;
        return ((a.chainage - chainage).abs() < 1e-9).then_some((a.x, a.y, a.position_sd));
    } else if i >= stations.len() {
        let b = stations.last()?;
        return ((b.chainage - chainage).abs() < 1e-9).then_some((b.x, b.y, b.position_sd));
    } else {
        (&stations[i - 1], &stations[i])
    };
    let h = b.chainage - a.chainage;
    if h <= 0.0 {
        return None;
    }
    // Tangent length: the chord between the stations (≈ the centreline arc).
    let l = (b.x - a.x).hypot(b.y - a.y);
    let t = (chainage - a.chainage) / h;
    let (h00, h10, h01, h11) = (
        2.0 * t.powi(3) - 3.0 * t * t + 1.0,
        t.powi(3) - 2.0 * t * t + t,
        -2.0 * t.powi(3) + 3.0 * t * t,
        t.powi(3) - t * t,
    );
    let x = h00 * a.x + h10 * l * a.heading.cos() + h01 * b.x + h11 * l * b.heading.cos();
    let y = h00 * a.y + h10 * l * a.heading.sin() + h01 * b.y + h11 * l * b.heading.sin();
    let sd = (1.0 - t) * a.position_sd + t * b.position_sd;
    (x.is_finite() && y.is_finite()).then_some((x, y, sd))
}

/// Leave-one-out test: for each observation, solve with all the others
/// (`solve` runs the integration with the given observations and returns its
/// plan) and compare the left-out point with the predicted position; also
/// record whether the remaining points then agree among themselves.
/// Needs at least three observations (returns nothing otherwise); points
/// whose solve fails are skipped.
///
/// # Errors
/// The first error from `solve`.
pub fn leave_one_out<E>(
    obs: &[PositionObs],
    mut solve: impl FnMut(&[PositionObs]) -> Result<Plan, E>,
) -> Result<Vec<LooResult>, E> {
    let mut out = Vec::new();
    if obs.len() < 3 {
        return Ok(out);
    }
    for i in 0..obs.len() {
        let rest: Vec<PositionObs> = obs
            .iter()
            .enumerate()
            .filter(|&(j, _)| j != i)
            .map(|(_, o)| o.clone())
            .collect();
        let plan = solve(&rest)?;
        let rest_max = plan
            .position_residuals
            .iter()
            .map(|r| r.normalised)
            .filter(|v| v.is_finite())
            .fold(None, |m: Option<f64>, v| Some(m.map_or(v, |m| m.max(v))));
        let o = &obs[i];
        if let Some((x, y, sd)) = position_at(&plan.stations, o.chainage) {
            let d = (o.x - x).hypot(o.y - y);
            // Two coordinates: the vector length's sd is about √2 × per-coordinate sd
            // for the point; the prediction's sd is the lateral position sd.
            let s = (2.0 * o.sd * o.sd + sd * sd).sqrt();
            out.push(LooResult {
                id: o.id.clone(),
                discrepancy: d,
                statistic: if s > 0.0 { d / s } else { f64::INFINITY },
                rest_max_normalised: rest_max,
            });
        }
    }
    Ok(out)
}
