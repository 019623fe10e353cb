//! `alignment.ifc`: the fitted elements as an IFC 4.3 alignment
//! (schema `IFC4X3_ADD2`, ISO 16739-1:2024), written as ISO 10303-21 text.
//!
//! What the file holds:
//! * an `IfcProject` with units (length: metre or international foot, the
//!   survey's chainage unit; plane angle: radian), one 3D model context with
//!   its `Axis` sub-context, and an `IfcSite` (with the WGS 84 position of the
//!   local origin when the survey is placed);
//! * one `IfcAlignment`, aggregated by the project and referenced by the site,
//!   nesting an `IfcAlignmentHorizontal` whose `IfcAlignmentSegment`s carry one
//!   `IfcAlignmentHorizontalSegment` per fitted element (`LINE`, `CLOTHOID`,
//!   `CIRCULARARC`): start point, start direction (counter-clockwise from the
//!   x axis, radians in [0, 2π)), start and end radius (signed: positive turning
//!   counter-clockwise, i.e. left; 0 for a straight end) and length, then the
//!   zero-length `LINE` the standard puts at the end of a layout;
//! * the alignment's geometry, representation `Axis`/`Curve2D`: an
//!   `IfcCompositeCurve` of `IfcCurveSegment`s (parent curves `IfcLine`,
//!   `IfcCircle`, `IfcClothoid`) placed at each element's start, with
//!   `SegmentStart` and `SegmentLength` as `IfcLengthMeasure` (a circle
//!   traversed clockwise has a negative length; a clothoid starts at the
//!   distance from its inflection point where its curvature is the element's
//!   start curvature, so a clothoid that changes the sense of its curvature
//!   stays one segment), closed by a zero-length segment, the only one with
//!   transition `DISCONTINUOUS`;
//! * an `IfcReferent` (`STATION`) at the start of the alignment with
//!   `Pset_Stationing.Station`: the survey chainage of the first element's
//!   start, the `staStart` of `alignment.xml`.
//!
//! Coordinates are in the frame of `alignment.xml` ([`LandXmlFrame`](crate::export::landxml::LandXmlFrame)): the
//! local ground frame, or the grid of `--crs`. In a grid every element is
//! the similarity image (rotation and uniform scale) of the fitted element
//! that puts both of its ends on their exact grid images, so the joints are
//! the grid points of `alignment.xml` and the curve is continuous; the scale
//! is the element's chord scale (the combined scale factor, grid ×
//! ellipsoid/ground, to within its variation along the element), and start
//! directions differ from the grid bearing of the track by the arc-to-chord
//! angle of the projection (microradians: `tests/ifc_export.rs` measures the
//! kinks this leaves at the joints). An `IfcMapConversion` ties the model to
//! an `IfcProjectedCRS` named `EPSG:code`, with `Scale` 0.3048 when the file
//! is in feet (the grids are in metres) and no rotation or offset. Joint
//! coordinates are written at full `f64` precision (the shortest text that
//! reads back to the same number).
//!
//! Deterministic: entity numbers follow a fixed order, the time stamp is the
//! run's (see [`crate::pipeline`]), and the `GlobalId`s are hashes of the
//! file's content and the entity's role, so the same input gives the same
//! bytes while different alignments get different identifiers.
//!
//! ## References
//! * ISO 16739-1:2024 / IFC 4.3.2.0 (`IFC4X3_ADD2`), entities named above;
//!   concept templates "Alignment Layout – Horizontal" (the final zero-length
//!   segment), "Alignment Geometry – Horizontal" (`Axis`/`Curve2D` with an
//!   `IfcCompositeCurve`), "Alignment Aggregation To Project" and
//!   "Stationing" (`IfcReferent` with `Pset_Stationing`).
//! * ISO 10303-21 for the file structure ([`step`](crate::export::ifc::step)).
//!
//! Checked by an outside reader in `tests/ifc_export.rs` (IfcOpenShell:
//! schema and EXPRESS rules, and its geometry kernel's evaluation of the curve).

mod model;
pub mod step;

use std::io::Write;
use std::time::SystemTime;

use crate::geometry::{Alignment, Element, ElementKind, Pose};
use crate::georef::CrsError;
use crate::units::LengthUnit;

use super::geojson::ElementProps;
use super::landxml::{LandXmlFrame, LandXmlOptions};

/// Options of the IFC writer.
#[derive(Debug, Clone)]
pub struct IfcOptions {
    /// Name of the alignment (e.g. the survey file's stem).
    pub name: String,
    /// Length unit of the file (the survey's chainage unit).
    pub unit: LengthUnit,
    /// Time stamp of the header's `FILE_NAME` (UTC).
    pub created: SystemTime,
}

impl From<&LandXmlOptions> for IfcOptions {
    fn from(o: &LandXmlOptions) -> Self {
        IfcOptions {
            name: o.name.clone(),
            unit: o.unit,
            created: o.created,
        }
    }
}

/// Why the IFC file could not be written.
#[derive(Debug, thiserror::Error)]
pub enum IfcError {
    /// A value is NaN or infinite.
    #[error("cannot write alignment.ifc: {0} is not a finite number (nothing was written)")]
    NotFinite(String),
    /// Element properties do not match the alignment.
    #[error(
        "cannot write alignment.ifc: {props} element property records for {elements} elements (nothing was written)"
    )]
    Mismatch {
        /// Number of property records.
        props: usize,
        /// Number of elements.
        elements: usize,
    },
    /// No elements.
    #[error("cannot write alignment.ifc: the alignment has no elements (nothing was written)")]
    Empty,
    /// Conversion to the grid failed.
    #[error("cannot write alignment.ifc: {0} (nothing was written)")]
    Crs(#[from] CrsError),
    /// Writing failed.
    #[error("cannot write alignment.ifc: {0}")]
    Io(#[from] std::io::Error),
}

impl IfcError {
    /// As an I/O error (the output folder writer takes `io::Result`); the
    /// message is kept.
    pub fn into_io(self) -> std::io::Error {
        match self {
            IfcError::Io(e) => e,
            other => std::io::Error::new(std::io::ErrorKind::InvalidData, other.to_string()),
        }
    }
}

/// The kind of an IFC horizontal segment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum SegKind {
    Line,
    Arc,
    Clothoid,
}

impl SegKind {
    fn of(e: &Element) -> SegKind {
        match e.kind {
            ElementKind::Transition if e.k_start != e.k_end => SegKind::Clothoid,
            _ if e.k_start == 0.0 && e.k_end == 0.0 => SegKind::Line,
            _ => SegKind::Arc,
        }
    }

    /// `IfcAlignmentHorizontalSegmentTypeEnum` value.
    pub(crate) fn ifc_name(self) -> &'static str {
        match self {
            SegKind::Line => "LINE",
            SegKind::Arc => "CIRCULARARC",
            SegKind::Clothoid => "CLOTHOID",
        }
    }
}

/// One horizontal segment in the file's frame and unit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Seg {
    pub kind: SegKind,
    /// Start point (x east, y north).
    pub x: f64,
    pub y: f64,
    /// Start direction, radians counter-clockwise from the x axis.
    pub dir: f64,
    /// Curvature at the start and the end (1/file unit, positive left).
    pub k0: f64,
    pub k1: f64,
    /// Length (file unit).
    pub len: f64,
    /// Whether the curvature at the end equals the next segment's start
    /// curvature (decides the transition code).
    pub same_curvature_next: bool,
}

/// Point (x, y) and direction of the alignment's end, in the file's frame.
pub(crate) type EndPose = (f64, f64, f64);

/// Maps local points and poses into the file's frame and unit.
struct Frame<'a> {
    frame: LandXmlFrame<'a>,
    /// The file's length unit (conversions divide by its length in metres,
    /// so that 31 ft read and written stays 31, not 30.999999999999996).
    unit: LengthUnit,
}

impl Frame<'_> {
    /// (x east, y north) in file units.
    fn point(&self, x: f64, y: f64, what: &str) -> Result<(f64, f64), IfcError> {
        let bad = || IfcError::NotFinite(what.to_string());
        if !(x.is_finite() && y.is_finite()) {
            return Err(bad());
        }
        let (e, n) = match self.frame {
            LandXmlFrame::Local { .. } => (x, y),
            // The grid's own unit (feet for a feet grid) to metres: the
            // map conversion declares metres (IfcProjectedCRS.MapUnit).
            LandXmlFrame::Grid { placement, crs } => {
                let (lon, lat) = placement.to_lonlat(x, y);
                let (e, n) = crs.from_lonlat(lon, lat)?;
                let m = crs.unit().metres();
                (e * m, n * m)
            }
        };
        let (e, n) = (self.unit.from_m(e), self.unit.from_m(n));
        if e.is_finite() && n.is_finite() {
            Ok((e, n))
        } else {
            Err(bad())
        }
    }

    /// Start point, start direction (radians counter-clockwise from the
    /// frame's x axis) and scale (frame metres per local metre) of the
    /// element from local pose `p0` to `p1`. The local frame is the identity;
    /// in a grid, the element is mapped by the similarity (rotation and
    /// uniform scale) that puts both of its ends on their exact grid images.
    fn similarity(&self, p0: Pose, p1: Pose, what: &str) -> Result<(f64, f64, f64, f64), IfcError> {
        let (x0, y0) = self.point(p0.x, p0.y, what)?;
        if let LandXmlFrame::Local { .. } = self.frame {
            return Ok((x0, y0, p0.heading, 1.0));
        }
        let (x1, y1) = self.point(p1.x, p1.y, what)?;
        let (gx, gy) = (self.unit.to_m(x1 - x0), self.unit.to_m(y1 - y0));
        let (lx, ly) = (p1.x - p0.x, p1.y - p0.y);
        let chord = lx.hypot(ly);
        if chord.is_nan() || chord <= 1e-9 {
            return Err(IfcError::NotFinite(format!("the grid scale of {what}")));
        }
        let turn = gy.atan2(gx) - ly.atan2(lx);
        Ok((x0, y0, p0.heading + turn, gx.hypot(gy) / chord))
    }
}

fn fin(v: f64, what: &str) -> Result<f64, IfcError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(IfcError::NotFinite(what.to_string()))
    }
}

/// The segments of `alignment` in the file's frame, and the end pose (point
/// and direction) where the zero-length segment goes.
fn segments(alignment: &Alignment, frame: &Frame) -> Result<(Vec<Seg>, EndPose), IfcError> {
    let els = alignment.elements();
    let mut segs = Vec::with_capacity(els.len());
    let mut end = (0.0, 0.0, 0.0);
    for (i, e) in els.iter().enumerate() {
        let what = format!("element {}", i + 1);
        let p0 = alignment.element_pose(i);
        let p1 = e.advance(p0, e.length);
        let (x, y, dir, scale) = frame.similarity(p0, p1, &what)?;
        let next_k = els.get(i + 1).map_or(0.0, |n| n.k_start);
        let tol = 1e-9 * e.k_end.abs().max(next_k.abs());
        segs.push(Seg {
            kind: SegKind::of(e),
            x,
            y,
            dir: fin(dir, &what)?.rem_euclid(std::f64::consts::TAU),
            k0: fin(frame.unit.to_m(e.k_start) / scale, &what)?,
            k1: fin(frame.unit.to_m(e.k_end) / scale, &what)?,
            len: fin(frame.unit.from_m(e.length * scale), &what)?,
            same_curvature_next: (e.k_end - next_k).abs() <= tol,
        });
        if i + 1 == els.len() {
            let (xe, ye) = frame.point(p1.x, p1.y, "end of the alignment")?;
            let end_dir = fin(p1.heading + (dir - p0.heading), &what)?;
            end = (xe, ye, end_dir.rem_euclid(std::f64::consts::TAU));
        }
    }
    Ok((segs, end))
}

/// Build the IFC file as text (see the module documentation).
///
/// `props` gives one record per element of `alignment` (the survey
/// chainages); geometry comes from the alignment.
///
/// # Errors
/// [`IfcError`] for non-finite values, mismatched inputs, grid conversion failures.
pub fn build_ifc(
    alignment: &Alignment,
    props: &[ElementProps],
    frame: LandXmlFrame,
    opts: &IfcOptions,
) -> Result<String, IfcError> {
    let els = alignment.elements();
    if els.is_empty() {
        return Err(IfcError::Empty);
    }
    if props.len() != els.len() {
        return Err(IfcError::Mismatch {
            props: props.len(),
            elements: els.len(),
        });
    }
    let f = Frame {
        frame,
        unit: opts.unit,
    };
    let (segs, end) = segments(alignment, &f)?;
    let chainages: Vec<(f64, f64)> = props
        .iter()
        .map(|p| {
            (
                opts.unit.from_m(p.start_chainage),
                opts.unit.from_m(p.end_chainage),
            )
        })
        .collect();
    for (i, &(a, b)) in chainages.iter().enumerate() {
        fin(a, &format!("start chainage of element {}", i + 1))?;
        fin(b, &format!("end chainage of element {}", i + 1))?;
    }
    let input = model::ModelInput {
        segs: &segs,
        end,
        chainages: &chainages,
        frame,
        opts,
    };
    model::build(&input)
}

/// Write `alignment.ifc` to `w` (see [`build_ifc`]).
///
/// # Errors
/// [`IfcError`]; on any error other than [`IfcError::Io`] nothing has been
/// written.
pub fn write_ifc(
    mut w: impl Write,
    alignment: &Alignment,
    props: &[ElementProps],
    frame: LandXmlFrame,
    opts: &IfcOptions,
) -> Result<(), IfcError> {
    let text = build_ifc(alignment, props, frame, opts)?;
    w.write_all(text.as_bytes())?;
    w.flush()?;
    Ok(())
}
