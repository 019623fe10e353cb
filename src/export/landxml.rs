//! `alignment.xml`: the fitted elements as a LandXML 1.2 `Alignment`.
//!
//! Conventions of LandXML 1.2 (CHECKS.md 6.1, read from the schema):
//! * point text is **"northing easting"**;
//! * `dir`, `dirStart`, `dirEnd` are of the schema's `direction` type, whose
//!   note says only "Assume 0 degrees = north"; they are written as azimuths,
//!   clockwise from north (the surveying convention for directions from
//!   north: common practice), in decimal degrees as stated in `Units` (the
//!   schema's default would be radians);
//! * `rot="ccw"` for a curve turning left along increasing chainage, `"cw"` right;
//! * a spiral's straight end has radius `INF`; spirals are `spiType="clothoid"`;
//!   a clothoid whose curvature changes sign is written as two spirals split
//!   at the inflection point (a LandXML spiral has one sense of rotation).
//!
//! Coordinates are in the local ground frame ([`LandXmlFrame::Local`](crate::export::landxml::LandXmlFrame::Local)), or in
//! a projected grid ([`LandXmlFrame::Grid`](crate::export::landxml::LandXmlFrame::Grid), with a `CoordinateSystem`
//! element carrying the EPSG code; a feet grid in its own unit, `Imperial`
//! `linearUnit="USSurveyFoot"` or `"foot"`, a metre grid in the survey's unit). In a grid, every point is the grid image
//! of the exact local point; directions are grid bearings (from grid north),
//! and lengths and radii are multiplied by the element's combined scale
//! factor (grid scale × ellipsoid/ground), measured at the element's middle,
//! so that a reader rebuilding the geometry from the start point, direction
//! and lengths lands on the written end points to within the variation of
//! the scale factor along the element.
//!
//! **Stationing chains:** the alignment starts at the survey chainage of its
//! first element, and every `staStart` is the previous one plus the previous
//! element's written length; the alignment's `length` is the sum of the
//! element lengths (in the grid, grid lengths). The survey chainage runs along
//! the measured rail and so drifts from the centreline stationing; it is
//! carried as a `StaEquation` at every element start where the two differ
//! (`staInternal` the centreline station, `staAhead` the survey chainage,
//! `staBack` the running station just before), and in each element's `desc`.
//!
//! A placed local-frame file states its origin for programs: the
//! `CoordinateSystem` holds a `Start` point `0 0` with its WGS 84 `latitude`,
//! `longitude` and `ellipsoidHeight`, and an `ogcWktCode` describing the
//! frame (azimuthal equidistant about the origin, unit the ground metre; PROJ
//! reading it reproduces the frame to 1e-9°, `tests/georef_checks.rs`).
//!
//! The document is built in memory and validated (finite numbers) before
//! anything is written.
//!
//! ## Reference
//! LandXML 1.2 schema, LandXML.org, 2008 (`LandXML-1.2.xsd`).

use std::fmt::Write as _;
use std::io::Write;
use std::time::SystemTime;

use crate::geometry::{Alignment, Element, ElementKind, Pose};
use crate::georef::{Crs, CrsError, GridUnit, Placement};
use crate::units::LengthUnit;

use super::geojson::ElementProps;

/// Which coordinates to write.
#[derive(Debug, Clone, Copy)]
pub enum LandXmlFrame<'a> {
    /// The local ground frame of the integration (x east, y north, metres).
    /// `placement`, when the survey is placed, is described in the
    /// `CoordinateSystem` element (origin longitude/latitude).
    Local {
        /// The placement of the local frame, if any.
        placement: Option<&'a Placement>,
    },
    /// A projected grid named by EPSG code (`--crs`).
    Grid {
        /// The tie between the local frame and WGS 84.
        placement: &'a Placement,
        /// The grid.
        crs: &'a Crs,
    },
}

/// Options of the LandXML writer.
#[derive(Debug, Clone)]
pub struct LandXmlOptions {
    /// Name of the alignment (e.g. the survey file's stem).
    pub name: String,
    /// Length unit of the file (the survey's chainage unit): metres or international feet.
    pub unit: LengthUnit,
    /// Time stamp written in the `LandXML` element (UTC).
    pub created: SystemTime,
}

impl Default for LandXmlOptions {
    fn default() -> Self {
        LandXmlOptions {
            name: "alignment".into(),
            unit: LengthUnit::Metre,
            created: SystemTime::now(),
        }
    }
}

/// Why the LandXML could not be written.
#[derive(Debug, thiserror::Error)]
pub enum LandXmlError {
    /// A value is NaN or infinite.
    #[error("cannot write alignment.xml: {0} is not a finite number (nothing was written)")]
    NotFinite(String),
    /// Element properties do not match the alignment.
    #[error(
        "cannot write alignment.xml: {props} element property records for {elements} elements (nothing was written)"
    )]
    Mismatch {
        /// Number of property records.
        props: usize,
        /// Number of elements.
        elements: usize,
    },
    /// No elements.
    #[error("cannot write alignment.xml: the alignment has no elements (nothing was written)")]
    Empty,
    /// Conversion to the grid failed.
    #[error("cannot write alignment.xml: {0} (nothing was written)")]
    Crs(#[from] CrsError),
    /// Writing failed.
    #[error("cannot write alignment.xml: {0}")]
    Io(#[from] std::io::Error),
}

impl LandXmlError {
    /// As an I/O error (the output folder writer takes `io::Result`); the
    /// message is kept.
    pub fn into_io(self) -> std::io::Error {
        match self {
            LandXmlError::Io(e) => e,
            other => std::io::Error::new(std::io::ErrorKind::InvalidData, other.to_string()),
        }
    }
}

/// Proleptic Gregorian date from days since 1970-01-01 (H. Hinnant's
/// `civil_from_days` algorithm, public domain description "chrono-Compatible
/// Low-Level Date Algorithms").
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// UTC date `YYYY-MM-DD` and time `HH:MM:SS` of a time stamp (also used by
/// the IFC writer and the report).
pub(crate) fn date_time(t: SystemTime) -> (String, String) {
    let secs = t
        .duration_since(SystemTime::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs() as i64);
    let (y, m, d) = civil_from_days(secs.div_euclid(86_400));
    let s = secs.rem_euclid(86_400);
    (
        format!("{y:04}-{m:02}-{d:02}"),
        format!("{:02}:{:02}:{:02}", s / 3600, (s / 60) % 60, s % 60),
    )
}

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Maps local points and directions into the output frame and unit.
struct Out<'a> {
    frame: LandXmlFrame<'a>,
    /// Output units per metre.
    per_m: f64,
    /// Output units per grid unit (1 when the file is in the grid's unit).
    grid_to_file: f64,
}

impl Out<'_> {
    /// (northing, easting) in output units.
    fn point(&self, x: f64, y: f64, what: &str) -> Result<(f64, f64), LandXmlError> {
        if !(x.is_finite() && y.is_finite()) {
            return Err(LandXmlError::NotFinite(what.to_string()));
        }
        let (e, n) = match self.frame {
            LandXmlFrame::Local { .. } => (x * self.per_m, y * self.per_m),
            LandXmlFrame::Grid { placement, crs } => {
                let (lon, lat) = placement.to_lonlat(x, y);
                let (e, n) = crs.from_lonlat(lon, lat)?;
                (e * self.grid_to_file, n * self.grid_to_file)
            }
        };
        if !(e.is_finite() && n.is_finite()) {
            return Err(LandXmlError::NotFinite(what.to_string()));
        }
        Ok((n, e))
    }

    /// Direction (degrees clockwise from the frame's north) and the frame's
    /// scale (output metres per local metre) at a pose, by central differences
    /// over ±0.5 m.
    fn direction_and_scale(&self, p: Pose, what: &str) -> Result<(f64, f64), LandXmlError> {
        let h = 0.5;
        let (c, s) = (p.heading.cos(), p.heading.sin());
        let (n1, e1) = self.point(p.x - h * c, p.y - h * s, what)?;
        let (n2, e2) = self.point(p.x + h * c, p.y + h * s, what)?;
        let (de, dn) = ((e2 - e1) / self.per_m, (n2 - n1) / self.per_m);
        let dir = de.atan2(dn).to_degrees().rem_euclid(360.0);
        Ok((dir, de.hypot(dn) / (2.0 * h)))
    }
}

fn pt(n: f64, e: f64) -> String {
    format!("{n:.5} {e:.5}")
}

fn fin(v: f64, what: &str) -> Result<f64, LandXmlError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(LandXmlError::NotFinite(what.to_string()))
    }
}

fn radius_text(k: f64, scale: f64, per_m: f64) -> String {
    if k == 0.0 {
        "INF".to_string()
    } else {
        format!("{:.5}", scale * per_m / k.abs())
    }
}

/// Write one element (already split so that its curvature does not change
/// sign) starting at local pose `p0`, at centreline station `sta` and survey
/// chainage `survey` (both in the file's unit). Returns the length written.
fn element_xml(
    buf: &mut String,
    out: &Out,
    e: &Element,
    p0: Pose,
    (sta, survey): (f64, f64),
    name: &str,
) -> Result<f64, LandXmlError> {
    let what = format!("element {name}");
    let p1 = e.advance(p0, e.length);
    let mid = e.advance(p0, 0.5 * e.length);
    let (_, scale) = out.direction_and_scale(mid, &what)?;
    let (dir0, _) = out.direction_and_scale(p0, &what)?;
    let (dir1, _) = out.direction_and_scale(p1, &what)?;
    let (n0, e0) = out.point(p0.x, p0.y, &what)?;
    let (n1, e1) = out.point(p1.x, p1.y, &what)?;
    let len = fin(e.length * scale * out.per_m, &what)?;
    let sta = fin(sta, &what)?;
    let desc = format!("survey chainage at start {:.5}", fin(survey, &what)?);
    let turn = e.turn();
    let rot = if turn > 0.0 || (turn == 0.0 && e.k_start + e.k_end > 0.0) {
        "ccw"
    } else {
        "cw"
    };
    match e.kind {
        ElementKind::Straight => {
            let _ = writeln!(
                buf,
                "        <Line name=\"{name}\" desc=\"{desc}\" length=\"{len:.5}\" staStart=\"{sta:.5}\" dir=\"{dir0:.9}\">\n          <Start>{}</Start>\n          <End>{}</End>\n        </Line>",
                pt(n0, e0),
                pt(n1, e1)
            );
        }
        ElementKind::Arc => {
            let k = fin(e.k_start, &what)?;
            let (cx, cy) = p0.offset_left(1.0 / k);
            let (nc, ec) = out.point(cx, cy, &what)?;
            let _ = writeln!(
                buf,
                "        <Curve name=\"{name}\" desc=\"{desc}\" rot=\"{rot}\" crvType=\"arc\" length=\"{len:.5}\" radius=\"{}\" staStart=\"{sta:.5}\" dirStart=\"{dir0:.9}\" dirEnd=\"{dir1:.9}\" delta=\"{:.9}\">\n          <Start>{}</Start>\n          <Center>{}</Center>\n          <End>{}</End>\n        </Curve>",
                radius_text(k, scale, out.per_m),
                turn.abs().to_degrees(),
                pt(n0, e0),
                pt(nc, ec),
                pt(n1, e1)
            );
        }
        ElementKind::Transition => {
            // PI: intersection of the start and end tangents, in the output frame.
            let d0 = dir0.to_radians();
            let d1 = dir1.to_radians();
            let (u0, v0) = (d0.sin(), d0.cos()); // (east, north) unit vector
            let (u1, v1) = (d1.sin(), d1.cos());
            let cross = u0 * v1 - v0 * u1;
            let (npi, epi) = if cross.abs() > 1e-12 {
                // e0 + t u0 = e1 - s u1 ; n0 + t v0 = n1 - s v1
                let (de, dn) = (e1 - e0, n1 - n0);
                let t = (de * v1 - dn * u1) / cross;
                (n0 + t * v0, e0 + t * u0)
            } else {
                (0.5 * (n0 + n1), 0.5 * (e0 + e1))
            };
            let dk = (e.k_end - e.k_start).abs();
            let constant = if dk > 0.0 {
                format!(
                    " constant=\"{:.5}\"",
                    (e.length / dk).sqrt() * scale * out.per_m
                )
            } else {
                String::new()
            };
            let _ = writeln!(
                buf,
                "        <Spiral name=\"{name}\" desc=\"{desc}\" spiType=\"clothoid\" rot=\"{rot}\" length=\"{len:.5}\" radiusStart=\"{}\" radiusEnd=\"{}\" staStart=\"{sta:.5}\" dirStart=\"{dir0:.9}\" dirEnd=\"{dir1:.9}\" theta=\"{:.9}\"{constant}>\n          <Start>{}</Start>\n          <PI>{}</PI>\n          <End>{}</End>\n        </Spiral>",
                radius_text(e.k_start, scale, out.per_m),
                radius_text(e.k_end, scale, out.per_m),
                turn.abs().to_degrees(),
                pt(n0, e0),
                pt(npi, epi),
                pt(n1, e1)
            );
        }
    }
    Ok(len)
}

/// The file's length unit: a feet grid's own unit; otherwise the survey's
/// (as in `alignment.ifc`, so that the two files agree number for number).
fn file_unit(frame: &LandXmlFrame, unit: LengthUnit) -> GridUnit {
    match frame {
        LandXmlFrame::Grid { crs, .. } if crs.unit() != GridUnit::Metre => crs.unit(),
        _ => match unit {
            LengthUnit::Metre => GridUnit::Metre,
            LengthUnit::Foot => GridUnit::Foot,
        },
    }
}

fn units_xml(buf: &mut String, unit: GridUnit) {
    let _ = writeln!(buf, "  <Units>");
    let _ = match unit {
        GridUnit::Metre => writeln!(
            buf,
            "    <Metric areaUnit=\"squareMeter\" linearUnit=\"meter\" volumeUnit=\"cubicMeter\" temperatureUnit=\"celsius\" pressureUnit=\"HPA\" angularUnit=\"decimal degrees\" directionUnit=\"decimal degrees\"/>"
        ),
        GridUnit::Foot | GridUnit::UsSurveyFoot => writeln!(
            buf,
            "    <Imperial areaUnit=\"squareFoot\" linearUnit=\"{}\" volumeUnit=\"cubicFeet\" temperatureUnit=\"fahrenheit\" pressureUnit=\"inHG\" angularUnit=\"decimal degrees\" directionUnit=\"decimal degrees\"/>",
            if unit == GridUnit::Foot {
                "foot"
            } else {
                "USSurveyFoot"
            }
        ),
    };
    let _ = writeln!(buf, "  </Units>");
}

/// The azimuthal equidistant projection about `p`'s origin as OGC WKT 1,
/// with the local frame's ground scale as the unit (one local metre is
/// R/(R + h) metres on the ellipsoid): a GIS or PROJ reading it places the
/// file's local coordinates exactly as this program does.
fn local_wkt(p: &Placement) -> String {
    let o = p.origin();
    let unit = p.ellipsoid_per_ground();
    format!(
        "PROJCS[\"chordline local ground frame\",GEOGCS[\"WGS 84\",DATUM[\"WGS_1984\",SPHEROID[\"WGS 84\",6378137,298.257223563]],PRIMEM[\"Greenwich\",0],UNIT[\"degree\",0.0174532925199433]],PROJECTION[\"Azimuthal_Equidistant\"],PARAMETER[\"latitude_of_center\",{:.10}],PARAMETER[\"longitude_of_center\",{:.10}],PARAMETER[\"false_easting\",0],PARAMETER[\"false_northing\",0],UNIT[\"ground metre\",{unit:.15}]]",
        o.lat, o.lon
    )
}

fn coordinate_system_xml(buf: &mut String, frame: &LandXmlFrame) {
    match frame {
        LandXmlFrame::Grid { crs, placement } => {
            let _ = writeln!(
                buf,
                "  <CoordinateSystem name=\"EPSG:{0}\" epsgCode=\"{0}\" projectedCoordinateSystemName=\"{1}\" desc=\"{2}\"/>",
                crs.code(),
                esc(crs.name()),
                esc(&format!(
                    "grid coordinates in {}; directions from grid north, clockwise; lengths and radii scaled by each element's combined scale factor at its middle (grid scale x ellipsoid/ground, track height {} m above the ellipsoid); stations run along the centreline in grid lengths, the survey chainage (along the measured rail) is in each element's desc and in the station equations",
                    crs.unit().name(),
                    placement.height()
                ))
            );
        }
        LandXmlFrame::Local { placement: Some(p) } => {
            let o = p.origin();
            let _ = writeln!(
                buf,
                "  <CoordinateSystem name=\"local\" localCoordinateSystemName=\"chordline local ground frame\" horizontalDatum=\"WGS 84\" ellipsoidName=\"WGS 84\" ogcWktCode=\"{}\" desc=\"{}\">\n    <Start name=\"origin\" latitude=\"{:.10}\" longitude=\"{:.10}\" ellipsoidHeight=\"{}\" desc=\"the point 0 0 of the local frame (WGS 84)\">0 0</Start>\n  </CoordinateSystem>",
                esc(&local_wkt(p)),
                esc(&format!(
                    "local ground frame: x east, y north (true north at the origin), azimuthal equidistant about WGS 84 longitude,latitude {o} (the Start below), ground metres at {} m above the ellipsoid; stations run along the centreline, the survey chainage (along the measured rail) is in each element's desc and in the station equations",
                    p.height()
                )),
                o.lat,
                o.lon,
                p.height()
            );
        }
        LandXmlFrame::Local { placement: None } => {
            let _ = writeln!(
                buf,
                "  <CoordinateSystem name=\"local\" localCoordinateSystemName=\"chordline local ground frame\" desc=\"local ground frame of the survey (not placed on the Earth): x east, y north of an arbitrary origin; stations run along the centreline, the survey chainage (along the measured rail) is in each element's desc and in the station equations\"/>"
            );
        }
    }
}

/// The elements (`CoordGeom` content) and the station equations, with the
/// total length written.
fn geometry_xml(
    out: &Out,
    alignment: &Alignment,
    props: &[ElementProps],
    sta0: f64,
) -> Result<(String, String, f64), LandXmlError> {
    let per_m = out.per_m;
    let (mut geom, mut eqs) = (String::new(), String::new());
    let mut sta = sta0;
    // The last station equation (internal, ahead), or the start.
    let mut last = (sta0, sta0);
    for (i, (e, pr)) in alignment.elements().iter().zip(props).enumerate() {
        let p0 = alignment.element_pose(i);
        let survey = pr.start_chainage * per_m;
        if i > 0 {
            let back = last.1 + (sta - last.0);
            if (survey - back).abs() >= 5e-6 {
                let _ = writeln!(
                    eqs,
                    "      <StaEquation staInternal=\"{sta:.5}\" staBack=\"{back:.5}\" staAhead=\"{survey:.5}\" staIncrement=\"increasing\" desc=\"survey chainage at the start of element {}\"/>",
                    i + 1
                );
                last = (sta, survey);
            }
        }
        let name = format!("{}", i + 1);
        let c = e.curvature_rate();
        let flips = e.kind == ElementKind::Transition
            && e.k_start != 0.0
            && e.k_end != 0.0
            && e.k_start.signum() != e.k_end.signum()
            && c != 0.0;
        if flips {
            // Split at the inflection point u0 where the curvature is zero;
            // survey chainage of the split: proportional within the element.
            let u0 = -e.k_start / c;
            let a = Element::transition(u0, e.k_start, 0.0);
            let b = Element::transition(e.length - u0, 0.0, e.k_end);
            let frac = u0 / e.length;
            let survey_b =
                (pr.start_chainage + frac * (pr.end_chainage - pr.start_chainage)) * per_m;
            sta += element_xml(&mut geom, out, &a, p0, (sta, survey), &format!("{name}a"))?;
            let pb = a.advance(p0, u0);
            sta += element_xml(&mut geom, out, &b, pb, (sta, survey_b), &format!("{name}b"))?;
        } else {
            sta += element_xml(&mut geom, out, e, p0, (sta, survey), &name)?;
        }
    }
    Ok((geom, eqs, sta - sta0))
}

/// Build the LandXML document as text (see the module documentation).
///
/// `props` gives one record per element of `alignment` (the survey
/// chainages); lengths, radii and kinds come from the alignment.
///
/// # Errors
/// [`LandXmlError`] for non-finite values, mismatched inputs, grid conversion failures.
pub fn build_landxml(
    alignment: &Alignment,
    props: &[ElementProps],
    frame: LandXmlFrame,
    opts: &LandXmlOptions,
) -> Result<String, LandXmlError> {
    let els = alignment.elements();
    if els.is_empty() {
        return Err(LandXmlError::Empty);
    }
    if props.len() != els.len() {
        return Err(LandXmlError::Mismatch {
            props: props.len(),
            elements: els.len(),
        });
    }
    let unit = file_unit(&frame, opts.unit);
    let per_m = 1.0 / unit.metres();
    let grid_to_file = match &frame {
        LandXmlFrame::Grid { crs, .. } if crs.unit() != unit => crs.unit().metres() * per_m,
        _ => 1.0,
    };
    let out = Out {
        frame,
        per_m,
        grid_to_file,
    };
    let sta0 = fin(props[0].start_chainage * per_m, "start chainage")?;
    let (geom, eqs, total) = geometry_xml(&out, alignment, props, sta0)?;
    let total = fin(total, "alignment length")?;
    let (date, time) = date_time(opts.created);
    let mut buf = String::new();
    let _ = writeln!(buf, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>");
    let _ = writeln!(
        buf,
        "<LandXML xmlns=\"http://www.landxml.org/schema/LandXML-1.2\" version=\"1.2\" date=\"{date}\" time=\"{time}\">"
    );
    units_xml(&mut buf, unit);
    coordinate_system_xml(&mut buf, &frame);
    let _ = writeln!(
        buf,
        "  <Application name=\"chordline\" version=\"{}\" desc=\"as-built alignment fitted to versine survey readings\"/>",
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(buf, "  <Alignments>");
    let _ = writeln!(
        buf,
        "    <Alignment name=\"{}\" length=\"{total:.5}\" staStart=\"{sta0:.5}\" desc=\"fitted as-built centreline; stations along the centreline from the survey chainage of its start\">",
        esc(&opts.name)
    );
    let _ = writeln!(buf, "      <CoordGeom>");
    buf.push_str(&geom);
    let _ = writeln!(buf, "      </CoordGeom>");
    buf.push_str(&eqs);
    let _ = writeln!(buf, "    </Alignment>");
    let _ = writeln!(buf, "  </Alignments>");
    let _ = writeln!(buf, "</LandXML>");
    Ok(buf)
}

/// Write `alignment.xml` to `w` (see [`build_landxml`]).
///
/// # Errors
/// [`LandXmlError`]; on any error other than [`LandXmlError::Io`] nothing
/// has been written.
pub fn write_landxml(
    mut w: impl Write,
    alignment: &Alignment,
    props: &[ElementProps],
    frame: LandXmlFrame,
    opts: &LandXmlOptions,
) -> Result<(), LandXmlError> {
    let text = build_landxml(alignment, props, frame, opts)?;
    w.write_all(text.as_bytes())?;
    w.flush()?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_are_civil() {
        // 2026-12-01 23:32:04 UTC = 1796167924 s after the epoch (computed by hand
        // from 20788 days: 56 years incl. 14 leap days + 334 days).
        let t = SystemTime::UNIX_EPOCH + std::time::Duration::from_secs(1_796_167_924);
        let (d, tm) = date_time(t);
        assert_eq!(d, "2026-12-01");
        assert_eq!(tm, "23:32:04");
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(civil_from_days(11_016), (2000, 2, 29));
    }
}
