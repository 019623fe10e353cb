//! Versines → curvature, heading and plan coordinates, with standard deviations.
//!
//! The data types here are the interface other stages code against; the
//! integrator itself fills them.

use crate::geometry::Pose;

/// A known position of the track centreline at a chainage, in the local plan
/// frame (metres), used as an observation together with the versines.
#[derive(Debug, Clone, PartialEq)]
pub struct PositionObs {
    /// Name of the point (from the control file), for reports.
    pub id: String,
    /// Survey chainage (along the measured rail) of the point, metres.
    pub chainage: f64,
    /// Easting in the local frame, metres.
    pub x: f64,
    /// Northing in the local frame, metres.
    pub y: f64,
    /// Standard deviation of each coordinate, metres.
    pub sd: f64,
}

/// Residual of a position observation after the adjustment.
#[derive(Debug, Clone, PartialEq)]
pub struct PositionResidual {
    /// Name of the point.
    pub id: String,
    /// Observed minus adjusted, easting, metres.
    pub dx: f64,
    /// Observed minus adjusted, northing, metres.
    pub dy: f64,
    /// Normalised residual: |r| divided by its standard deviation (a value
    /// above about 3 flags a point that disagrees with the rest).
    pub normalised: f64,
}

/// Options of the integration.
#[derive(Debug, Clone, PartialEq)]
pub struct IntegrateOptions {
    /// Pose of the track centreline at the first station in the local frame
    /// (default: origin, heading north). Ignored for position when control
    /// observations fix the plan, but still used as the starting guess.
    pub start: Pose,
    /// Known centreline positions, used as observations.
    pub position_obs: Vec<PositionObs>,
}

impl Default for IntegrateOptions {
    fn default() -> Self {
        IntegrateOptions {
            start: Pose {
                x: 0.0,
                y: 0.0,
                heading: std::f64::consts::FRAC_PI_2,
            },
            position_obs: Vec::new(),
        }
    }
}

/// The reconstructed plan at one station (one row of `stations.csv`).
#[derive(Debug, Clone, PartialEq)]
pub struct Station {
    /// Survey chainage along the measured rail, metres.
    pub chainage: f64,
    /// Field versine as read (positive: rail bows away from the wire), metres; `None` in a gap.
    pub versine: Option<f64>,
    /// The rail the reading was taken on.
    pub rail: crate::survey::Rail,
    /// Curvature of the track centreline, 1/m, positive curving left.
    pub curvature: f64,
    /// Heading of the centreline, radians CCW from east (local frame).
    pub heading: f64,
    /// Centreline easting abreast of the station, local frame, metres.
    pub x: f64,
    /// Centreline northing abreast of the station, local frame, metres.
    pub y: f64,
    /// Running edge of the measured rail, easting, metres.
    pub rail_x: f64,
    /// Running edge of the measured rail, northing, metres.
    pub rail_y: f64,
    /// Standard deviation of position (lateral, the dominant part), metres.
    pub position_sd: f64,
    /// Standard deviation of heading, radians.
    pub heading_sd: f64,
}

/// How the reading standard deviation was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoiseSource {
    /// Stated by the user.
    Stated,
    /// Estimated from the readings themselves.
    Estimated,
    /// The floor implied by the rounding of the readings (resolution/√12).
    RoundingFloor,
}

/// Result of the integration.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// One entry per survey reading (including gaps), in chainage order.
    pub stations: Vec<Station>,
    /// Standard deviation of one reading used for the propagation, metres.
    pub reading_sd: f64,
    /// Where `reading_sd` came from.
    pub noise_source: NoiseSource,
    /// Residuals of the position observations, in the order given.
    pub position_residuals: Vec<PositionResidual>,
}
