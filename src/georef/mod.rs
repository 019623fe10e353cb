//! Putting the plan on the Earth: projections, start point and bearing, control points.
//!
//! * [`Placement`]: the local ground frame of the integrator as an azimuthal
//!   equidistant projection about an origin on WGS 84 (geodesics after Karney 2013).
//! * [`Crs`]: projected grids by EPSG code (UTM, national grids, US State
//!   Plane in metres and feet) via `proj4rs`, with their areas of use and
//!   PROJ's default datum shifts; [`check_grid_point`] and
//!   [`check_lonlat_point`] check points against the area of use.
//! * [`read_controls`], [`ControlSet`]: control-point files, their checks,
//!   conversion to [`crate::integrate::PositionObs`], and judging the residuals.
//!
//! # Pipeline
//! [`prepare`] does steps 1–3 from the command-line options in one call.
//!
//! 1. Parse `--start-lonlat` ([`LonLat`]), `--start-bearing` ([`parse_bearing`]),
//!    `--crs` ([`Crs`]); or read `--control` ([`read_controls`]).
//! 2. Build a [`Placement`] (at the start point, or [`ControlSet::placement`]).
//! 3. Control points → observations with [`ControlSet::to_position_obs`] and a
//!    start guess with [`ControlSet::start_guess`]; a start point alone gives
//!    [`Placement::start_pose`].
//! 4. Integrate; judge the control points with [`leave_one_out`] and
//!    [`ControlSet::assess`].
//! 5. Export with `export::geojson` / `export::landxml`, passing the placement.
//!
//! ## Reference
//! C.F.F. Karney, "Algorithms for geodesics", J. Geodesy 87(1):43–55, 2013.

mod area;
mod control;
mod crs;
mod place;
mod setup;

pub use area::{AREA_MARGIN_DEG, check_grid_point, check_lonlat_point};
pub use control::{
    ControlCheck, ControlError, ControlPoint, ControlSet, DEFAULT_SD, FLAG_LIMIT, LooResult,
    TIGHT_RADIUS, leave_one_out, position_at, read_controls,
};
pub use crs::{AreaOfUse, Crs, CrsError, GridUnit, TESTED_GRIDS, supported_codes};
pub use place::{LonLat, PlaceError, Placement, parse_bearing, parse_grid_point};
pub use setup::{ControlFile, Georef, GeorefArgs, GeorefError, StartPoint, prepare};
