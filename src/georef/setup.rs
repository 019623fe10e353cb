//! From the command-line options to everything the integrator and the
//! exporters need: one call, [`prepare`], so the rules on which options go
//! together live in one place.

use std::path::{Path, PathBuf};

use crate::diag::Diagnostic;
use crate::geometry::Pose;
use crate::integrate::{PositionObs, PositionResidual};
use crate::survey::Survey;

use super::area::{check_grid_point, check_lonlat_point};
use super::control::ControlPoint;
use super::control::{ControlCheck, ControlError, ControlSet, LooResult, read_controls};
use super::crs::{Crs, CrsError};
use super::place::{LonLat, PlaceError, Placement};

/// Where the first station is, when a start point places the survey.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum StartPoint {
    /// A WGS 84 position (`--start-lonlat` on the command line).
    LonLat(LonLat),
    /// Easting and northing in the grid of [`GeorefArgs::crs`], in the
    /// grid's own unit (`--start-grid`).
    Grid {
        /// Easting, grid unit.
        easting: f64,
        /// Northing, grid unit.
        northing: f64,
    },
}

/// A control-point file as read at the program's edge: the name its
/// messages use, the path it came from (an input that an output folder must
/// never replace) and its bytes. [`prepare`] parses the bytes; nothing in
/// the stages opens a file.
#[derive(Debug, Clone, PartialEq)]
pub struct ControlFile {
    /// The name in messages (`FILE:LINE: ...`).
    pub name: String,
    /// Where it was read from, if a file.
    pub path: Option<PathBuf>,
    /// The file's contents.
    pub bytes: Vec<u8>,
}

impl ControlFile {
    /// Read a control-point file.
    ///
    /// # Errors
    /// [`ControlError::Io`] naming the file.
    pub fn read(path: &Path) -> Result<Self, ControlError> {
        let name = path.display().to_string();
        let bytes = std::fs::read(path).map_err(|e| ControlError::Io {
            file: name.clone(),
            message: e.to_string(),
        })?;
        Ok(ControlFile {
            name,
            path: Some(path.to_path_buf()),
            bytes,
        })
    }

    /// Control points held in memory under `name`.
    pub fn from_text(name: &str, text: &str) -> Self {
        ControlFile {
            name: name.to_string(),
            path: None,
            bytes: text.as_bytes().to_vec(),
        }
    }
}

/// The georeferencing of a run, parsed: what places the survey on the Earth.
/// All empty: the survey stays in its local frame.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct GeorefArgs {
    /// The position of the first station (needs `start_bearing`; a grid
    /// point needs `crs`).
    pub start: Option<StartPoint>,
    /// True bearing of the track at the first station, degrees clockwise from
    /// north (with `control`: the direction for a file with a single point).
    pub start_bearing: Option<f64>,
    /// The grid of a grid start point, of a control file's easting/northing
    /// columns, and of the placed outputs.
    pub crs: Option<Crs>,
    /// Control points.
    pub control: Option<ControlFile>,
    /// Height of the track above the WGS 84 ellipsoid, metres (default 0).
    pub height: Option<f64>,
    /// Accept points outside the grid's area of use (they are refused by
    /// default, naming the likely mistake).
    pub allow_outside_area: bool,
}

/// Everything georeferencing gives the rest of the pipeline.
#[derive(Debug, Clone)]
pub struct Georef {
    /// The tie between the local frame and WGS 84 (for GeoJSON, LandXML grids, true bearings).
    pub placement: Placement,
    /// The grid named by `--crs`, if any (LandXML coordinates go in it).
    pub crs: Option<Crs>,
    /// The control points, if a file was given.
    pub controls: Option<ControlSet>,
    /// Control points as observations in the local frame: `IntegrateOptions::position_obs`.
    pub position_obs: Vec<PositionObs>,
    /// Pose of the first station: `IntegrateOptions::start`.
    pub start: Pose,
    /// Points outside the grid's area of use are accepted (`--allow-outside-area`).
    pub allow_outside_area: bool,
}

/// Why the georeferencing options cannot be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum GeorefError {
    /// A bad start point, bearing or height.
    #[error(transparent)]
    Place(#[from] PlaceError),
    /// A bad `--crs` (not marked as a source, so that error chains do not
    /// print the message twice).
    #[error("--crs: {0}")]
    Crs(CrsError),
    /// A bad control file.
    #[error(transparent)]
    Control(#[from] ControlError),
    /// Options that do not go together.
    #[error("{0}")]
    Options(String),
}

impl Georef {
    /// WGS 84 (longitude, latitude) in degrees of a local point.
    pub fn lonlat(&self, x: f64, y: f64) -> (f64, f64) {
        self.placement.to_lonlat(x, y)
    }

    /// Grid (easting, northing) of a local point in the `--crs` grid, if one was given.
    ///
    /// # Errors
    /// [`CrsError::Projection`] outside the grid's domain.
    pub fn grid(&self, x: f64, y: f64) -> Result<Option<(f64, f64)>, CrsError> {
        match &self.crs {
            Some(c) => {
                let (lon, lat) = self.placement.to_lonlat(x, y);
                c.from_lonlat(lon, lat).map(Some)
            }
            None => Ok(None),
        }
    }

    /// Check a WGS 84 point of the result (e.g. a station) against the
    /// `--crs` grid's area of use, unless that was switched off.
    ///
    /// # Errors
    /// [`CrsError::OutsideArea`] naming the point and the likely mistake.
    pub fn check_in_area(&self, what: &str, lon: f64, lat: f64) -> Result<(), CrsError> {
        match &self.crs {
            Some(c) if !self.allow_outside_area => check_lonlat_point(c, what, lon, lat, false),
            _ => Ok(()),
        }
    }

    /// True bearing (degrees clockwise from true north) of a local pose:
    /// use it for `bearing_deg` in outputs when the survey is placed (the
    /// local frame's north turns away from true north away from the origin).
    pub fn true_bearing(&self, pose: Pose) -> f64 {
        self.placement.true_bearing(pose)
    }

    /// Judge the control points after the integration (see [`ControlSet::assess`]).
    /// Returns nothing when there are no control points.
    pub fn assess(
        &self,
        residuals: &[PositionResidual],
        loo: &[LooResult],
    ) -> (Vec<ControlCheck>, Vec<Diagnostic>) {
        match &self.controls {
            Some(c) => c.assess(residuals, loo),
            None => (Vec::new(), Vec::new()),
        }
    }
}

impl From<CrsError> for GeorefError {
    fn from(e: CrsError) -> Self {
        GeorefError::Crs(e)
    }
}

fn opts(m: &str) -> GeorefError {
    GeorefError::Options(m.to_string())
}

/// Turn the options into a placement, observations and a start pose.
///
/// Returns `Ok((None, _))` when no placement was asked for (no
/// `--start-lonlat`, `--start-grid` or `--control`): the survey stays in its
/// local frame (oriented by `--start-bearing` if given) and nothing
/// pretending to be on the Earth should be written.
///
/// Rules: a start point (`--start-lonlat` or `--start-grid`) needs
/// `--start-bearing`; `--start-grid` needs `--crs`; a start point and
/// `--control` exclude each other; `--start-bearing` with `--control` is the
/// direction for a file with a single point; `--crs` needs a start point or
/// control points.
///
/// # Errors
/// [`GeorefError`] naming the option, file, line or column at fault.
pub fn prepare(
    args: &GeorefArgs,
    survey: &Survey,
) -> Result<(Option<Georef>, Vec<Diagnostic>), GeorefError> {
    let mut diags = Vec::new();
    let crs = args.crs.clone();
    let check = crs.as_ref().filter(|_| !args.allow_outside_area);
    let height = args.height.unwrap_or(0.0);
    let bearing = args.start_bearing;
    let first_chainage = survey.readings.first().map_or(0.0, |r| r.chainage);
    let has_start = args.start.is_some();
    if has_start && args.control.is_some() {
        return Err(opts(
            "give either a start point (--start-lonlat/--start-grid with --start-bearing) or --control, not both: the control points place the survey on their own",
        ));
    }
    if let Some(file) = &args.control {
        let (set, d) = read_controls(file.bytes.as_slice(), &file.name, crs.as_ref())?;
        diags.extend(d);
        if let Some(c) = check {
            set.points
                .iter()
                .try_for_each(|p| check_control(c, &set.file, p))?;
        }
        let placement = set.placement(height)?;
        diags.extend(datum_note(crs.as_ref(), &placement));
        let (obs, d) = set.to_position_obs(&placement, survey)?;
        diags.extend(d);
        let start = set.start_guess(&obs, first_chainage, bearing)?;
        return Ok((
            Some(Georef {
                placement,
                crs,
                controls: Some(set),
                position_obs: obs,
                start,
                allow_outside_area: args.allow_outside_area,
            }),
            diags,
        ));
    }
    if !has_start {
        // A bearing alone orients the local frame; nothing is placed.
        if crs.is_some() {
            return Err(opts(
                "--crs names the grid of a start point or of control points: add --start-grid E,N with --start-bearing, or --control FILE",
            ));
        }
        return Ok((None, diags));
    }
    let origin = match args.start {
        Some(StartPoint::LonLat(p)) => {
            if let Some(c) = check {
                check_lonlat_point(c, "--start-lonlat", p.lon, p.lat, true)?;
            }
            p
        }
        Some(StartPoint::Grid { easting, northing }) => {
            let Some(c) = &crs else {
                return Err(opts(
                    "--start-grid needs --crs EPSG:<code> naming the grid (e.g. --crs EPSG:25832)",
                ));
            };
            if !args.allow_outside_area {
                check_grid_point(c, "--start-grid", easting, northing)?;
            }
            let (lon, lat) = c.to_lonlat(easting, northing)?;
            LonLat::new(lon, lat)?
        }
        None => return Ok((None, diags)),
    };
    let Some(bearing) = bearing else {
        return Err(opts(
            "a start point needs the direction of the track: add --start-bearing DEGREES (clockwise from true north)",
        ));
    };
    let placement = Placement::new(origin, height)?;
    diags.extend(datum_note(crs.as_ref(), &placement));
    Ok((
        Some(Georef {
            placement,
            crs,
            controls: None,
            position_obs: Vec::new(),
            start: Placement::start_pose(bearing),
            allow_outside_area: args.allow_outside_area,
        }),
        diags,
    ))
}

/// The datum note of the grid at the survey's origin (see [`Crs::datum_note_at`]).
fn datum_note(crs: Option<&Crs>, placement: &Placement) -> Option<Diagnostic> {
    let o = placement.origin();
    crs.and_then(|c| c.datum_note_at(o.lon, o.lat))
        .map(Diagnostic::note)
}

/// A control point against the grid's area of use: grid figures as given,
/// or its longitude/latitude.
fn check_control(crs: &Crs, file: &str, p: &ControlPoint) -> Result<(), CrsError> {
    let what = format!("{file}:{}: control point '{}'", p.line, p.id);
    match p.grid {
        Some((e, n)) => check_grid_point(crs, &what, e, n),
        None => check_lonlat_point(crs, &what, p.lonlat.lon, p.lonlat.lat, true),
    }
}
