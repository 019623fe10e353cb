//! Coordinate reference systems named by EPSG code: projected grids (UTM,
//! national grids, US State Plane in metres and feet) through the pure-Rust
//! `proj4rs` library, with the datum shift PROJ applies by default.
//!
//! # Which grids, and how exact
//! The supported grids are the rows of `grids.csv` beside this file,
//! generated from the EPSG data set by `tests/fixtures/georef/make_grids.py`
//! (pyproj 3.7.2 / PROJ 9.5.1 / EPSG v11.022, network off, so no grid files).
//! Each row carries the grid's **area of use** (EPSG bounding box), its unit,
//! and one candidate **transformation from WGS 84** in PROJ's order, with its
//! area and the accuracy EPSG states for it. Where a grid has several
//! candidates (e.g. regional Helmert shifts for S-JTSK, EPSG:5514), the one
//! used at a point is chosen by the rule PROJ's `proj_trans` follows (best
//! stated accuracy among the candidates whose area holds the point, then the
//! smallest area, then the first listed), checked by the generator against
//! PROJ's own choice at 25 points. The projection maths is proj4rs's; every
//! grid is compared with PROJ at recorded points in `tests/georef_pyproj.rs`.
//!
//! The stated accuracy is that of the datum shift (e.g. 2 m for the British
//! grid without OSTN15, 4 m for NAD83 taken as WGS 84): agreement with PROJ to
//! a millimetre is not survey accuracy. Grids not in the table are refused.
//!
//! ## Reference
//! * IOGP, EPSG Geodetic Parameter Dataset v11.022 (areas of use,
//!   transformations, accuracies), as shipped with PROJ 9.5.1.
//! * proj4rs 0.3 (a Rust port of proj4js / PROJ.4).
//! * C.F.F. Karney, "Transverse Mercator with an accuracy of a few nanometers",
//!   J. Geodesy 85(8):475–485, 2011 (the `etmerc` algorithm proj4rs uses for UTM).

use std::fmt;
use std::sync::OnceLock;

use proj4rs::Proj;
use proj4rs::transform::{Transform, TransformClosure, transform};

/// What this module supports, for error messages.
pub const TESTED_GRIDS: &str = "checked against PROJ 9.5.1 at recorded points: EPSG:326xx / 327xx (WGS 84 / UTM north / south), \
EPSG:258xx (ETRS89 / UTM), EPSG:269xx (NAD83 / UTM), EPSG:27700 (British National Grid), EPSG:31466-31469 (DHDN Gauss-Krüger), \
EPSG:2056 (Swiss LV95), EPSG:5514 (S-JTSK Krovak East North), EPSG:28992 (RD New), EPSG:2154 (Lambert-93) and other national grids, \
and the US State Plane zones on NAD83 in metres, US survey feet and international feet (e.g. EPSG:2229, 2263, 6420)";

/// The table of supported grids (see the module documentation).
const GRIDS_CSV: &str = include_str!("grids.csv");

/// Why a coordinate reference system could not be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CrsError {
    /// The text is not of the form `EPSG:<number>`.
    #[error(
        "'{0}' is not a coordinate reference system name: write it as EPSG:<code>, e.g. EPSG:25832 (grids: {TESTED_GRIDS})"
    )]
    NotEpsg(String),
    /// No such EPSG code in the table.
    #[error(
        "EPSG:{0} is not a coordinate reference system this program knows: check the code (grids: {TESTED_GRIDS})"
    )]
    Unknown(u32),
    /// A geographic (longitude/latitude) system where a grid was expected.
    #[error(
        "EPSG:{0} is a longitude/latitude system, not a grid: give WGS 84 longitude and latitude in lon_deg/lat_deg columns (or --start-lonlat) instead, or name the grid the coordinates are in"
    )]
    Geographic(u32),
    /// The definition needs datum-shift grid files that are not shipped.
    #[error(
        "EPSG:{0} needs datum-shift grid files, which this program does not carry: use a grid on WGS 84 / ETRS89 (e.g. UTM) or longitude/latitude"
    )]
    NeedsGridFiles(u32),
    /// Grid units other than metres and feet.
    #[error(
        "EPSG:{code} has coordinates in {unit}, and only metre and foot grids are supported: convert the coordinates to a supported grid or to longitude/latitude"
    )]
    NotMetres {
        /// EPSG code.
        code: u32,
        /// Unit name from the definition.
        unit: String,
    },
    /// Web Mercator, World Mercator and similar small-scale projections.
    #[error(
        "EPSG:{0} is a world or web-map Mercator projection, not a survey grid (its scale is wrong by up to tens of percent away from the equator): use UTM or a national grid"
    )]
    DisplayProjection(u32),
    /// A known projected system that is not among the supported grids.
    #[error(
        "EPSG:{0} is a projected system this program has not checked against PROJ (its datum shift or projection is not reproduced exactly): use a supported grid ({TESTED_GRIDS}) or longitude/latitude"
    )]
    Unsupported(u32),
    /// A point outside the grid's area of use (the message names the likely mistake).
    #[error("{message}")]
    OutsideArea {
        /// EPSG code.
        code: u32,
        /// What is outside, where, and the likely mistake.
        message: String,
    },
    /// proj4rs could not build or apply the projection.
    #[error("EPSG:{code}: {message}")]
    Projection {
        /// EPSG code.
        code: u32,
        /// What went wrong.
        message: String,
    },
}

/// The unit of a grid's coordinates.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GridUnit {
    /// Metre.
    Metre,
    /// US survey foot, 1200/3937 m.
    UsSurveyFoot,
    /// International foot, 0.3048 m.
    Foot,
}

impl GridUnit {
    /// Metres per unit (US survey foot: 1200/3937 m; international foot:
    /// 0.3048 m, both by definition, NIST SP 811 appendix B).
    pub fn metres(self) -> f64 {
        match self {
            GridUnit::Metre => 1.0,
            GridUnit::UsSurveyFoot => 1200.0 / 3937.0,
            GridUnit::Foot => 0.3048,
        }
    }

    /// Column-name suffix: `m`, `usft`, `ft`.
    pub fn suffix(self) -> &'static str {
        match self {
            GridUnit::Metre => "m",
            GridUnit::UsSurveyFoot => "usft",
            GridUnit::Foot => "ft",
        }
    }

    /// Name for messages.
    pub fn name(self) -> &'static str {
        match self {
            GridUnit::Metre => "metres",
            GridUnit::UsSurveyFoot => "US survey feet",
            GridUnit::Foot => "international feet",
        }
    }
}

/// A longitude/latitude box, degrees (west < east; no box crosses ±180°).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AreaOfUse {
    /// Westernmost longitude.
    pub west: f64,
    /// Southernmost latitude.
    pub south: f64,
    /// Easternmost longitude.
    pub east: f64,
    /// Northernmost latitude.
    pub north: f64,
}

impl AreaOfUse {
    /// Whether the point is inside the box, widened by `margin_deg` on every side.
    pub fn contains(&self, lon: f64, lat: f64, margin_deg: f64) -> bool {
        lon >= self.west - margin_deg
            && lon <= self.east + margin_deg
            && lat >= self.south - margin_deg
            && lat <= self.north + margin_deg
    }

    fn size(&self) -> f64 {
        (self.east - self.west) * (self.north - self.south)
    }
}

impl fmt::Display for AreaOfUse {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "longitude {}..{}, latitude {}..{}",
            self.west, self.east, self.south, self.north
        )
    }
}

/// One row of `grids.csv`.
#[derive(Debug, Clone)]
struct Row {
    code: u32,
    unit: GridUnit,
    area: AreaOfUse,
    op_area: AreaOfUse,
    accuracy: f64,
    name: String,
    transformation: String,
    proj4: String,
}

fn parse_row(r: &csv::StringRecord) -> Option<Row> {
    let f = |i: usize| r.get(i).and_then(|s| s.parse::<f64>().ok());
    let unit = match r.get(1)? {
        "m" => GridUnit::Metre,
        "usft" => GridUnit::UsSurveyFoot,
        "ft" => GridUnit::Foot,
        _ => return None,
    };
    let bx = |i: usize| {
        Some(AreaOfUse {
            west: f(i)?,
            south: f(i + 1)?,
            east: f(i + 2)?,
            north: f(i + 3)?,
        })
    };
    Some(Row {
        code: r.get(0)?.parse().ok()?,
        unit,
        area: bx(2)?,
        op_area: bx(6)?,
        accuracy: f(10)?,
        name: r.get(11)?.to_string(),
        transformation: r.get(12)?.to_string(),
        proj4: r.get(13)?.to_string(),
    })
}

fn table() -> &'static [Row] {
    static TABLE: OnceLock<Vec<Row>> = OnceLock::new();
    TABLE.get_or_init(|| {
        let mut rd = csv::ReaderBuilder::new()
            .comment(Some(b'#'))
            .from_reader(GRIDS_CSV.as_bytes());
        rd.records()
            .filter_map(|r| r.ok().as_ref().and_then(parse_row))
            .collect()
    })
}

/// The EPSG codes of every supported grid, ascending.
pub fn supported_codes() -> Vec<u32> {
    let mut v: Vec<u32> = table().iter().map(|r| r.code).collect();
    v.dedup();
    v
}

/// One candidate transformation of a grid, ready to use.
#[derive(Clone)]
struct Variant {
    op_area: AreaOfUse,
    accuracy: f64,
    transformation: String,
    definition: String,
    proj: Proj,
}

/// A projected grid known by its EPSG code (see the module documentation).
#[derive(Clone)]
pub struct Crs {
    code: u32,
    name: String,
    unit: GridUnit,
    area: AreaOfUse,
    variants: Vec<Variant>,
    wgs84: Proj,
}

impl fmt::Debug for Crs {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "Crs(EPSG:{}, {})", self.code, self.definition())
    }
}

impl PartialEq for Crs {
    fn eq(&self, other: &Self) -> bool {
        self.code == other.code
    }
}

struct Pt(f64, f64, f64);

impl Transform for Pt {
    fn transform_coordinates<F: TransformClosure>(
        &mut self,
        f: &mut F,
    ) -> proj4rs::errors::Result<()> {
        let (x, y, z) = f(self.0, self.1, self.2)?;
        self.0 = x;
        self.1 = y;
        self.2 = z;
        Ok(())
    }
}

fn wgs84_proj() -> Result<Proj, String> {
    Proj::from_proj_string("+proj=longlat +datum=WGS84 +no_defs").map_err(|e| e.to_string())
}

/// Why a code outside the table is refused.
fn refusal(code: u32) -> CrsError {
    if matches!(code, 3857 | 3395 | 900913 | 3785 | 54004 | 41001) {
        return CrsError::DisplayProjection(code);
    }
    let Some(def) = u16::try_from(code)
        .ok()
        .and_then(crs_definitions::from_code)
    else {
        return CrsError::Unknown(code);
    };
    let s = def.proj4;
    let has = |k: &str| s.split_whitespace().any(|t| t.starts_with(k));
    if has("+proj=longlat") || has("+proj=latlong") || has("+proj=geocent") {
        return CrsError::Geographic(code);
    }
    if has("+proj=merc") {
        return CrsError::DisplayProjection(code);
    }
    if has("+nadgrids") || s.contains("+datum=NAD27") {
        return CrsError::NeedsGridFiles(code);
    }
    match s.split_whitespace().find_map(|t| t.strip_prefix("+units=")) {
        Some(u) if !matches!(u, "m" | "us-ft" | "ft") => CrsError::NotMetres {
            code,
            unit: u.to_string(),
        },
        _ => CrsError::Unsupported(code),
    }
}

impl Crs {
    /// Look up a supported grid by EPSG code.
    ///
    /// # Errors
    /// [`CrsError::Unknown`] for a code that is not in the EPSG table at all,
    /// [`CrsError::DisplayProjection`] for Web and World Mercator, and the
    /// other variants for systems that are known but not supported.
    pub fn from_epsg(code: u32) -> Result<Crs, CrsError> {
        let rows: Vec<&Row> = table().iter().filter(|r| r.code == code).collect();
        let Some(first) = rows.first() else {
            return Err(refusal(code));
        };
        let proj_err = |m: String| CrsError::Projection { code, message: m };
        let mut variants = Vec::with_capacity(rows.len());
        for r in &rows {
            let proj = Proj::from_proj_string(&r.proj4).map_err(|e| {
                proj_err(format!(
                    "the projection could not be set up ({e}); use UTM or longitude/latitude"
                ))
            })?;
            variants.push(Variant {
                op_area: r.op_area,
                accuracy: r.accuracy,
                transformation: r.transformation.clone(),
                definition: r.proj4.clone(),
                proj,
            });
        }
        Ok(Crs {
            code,
            name: first.name.clone(),
            unit: first.unit,
            area: first.area,
            variants,
            wgs84: wgs84_proj().map_err(proj_err)?,
        })
    }

    /// The EPSG code.
    pub fn code(&self) -> u32 {
        self.code
    }

    /// The EPSG name, e.g. "ETRS89 / UTM zone 32N".
    pub fn name(&self) -> &str {
        &self.name
    }

    /// The unit of the grid's coordinates.
    pub fn unit(&self) -> GridUnit {
        self.unit
    }

    /// The grid's area of use (EPSG bounding box).
    pub fn area(&self) -> AreaOfUse {
        self.area
    }

    /// The PROJ.4-style definition used (of the first candidate
    /// transformation, for reports).
    pub fn definition(&self) -> &str {
        &self.variants[0].definition
    }

    /// The candidate used at a WGS 84 point: PROJ's rule (best stated
    /// accuracy among those whose area holds the point, then the smallest
    /// area, then the first listed; candidates of unknown accuracy only where
    /// no other applies; the first listed outside all of them).
    fn variant_at(&self, lon: f64, lat: f64) -> &Variant {
        // Unknown accuracy (a "ballpark" shift) only where nothing else applies.
        let key = |v: &Variant| (v.accuracy < 0.0, v.accuracy.max(0.0), v.op_area.size());
        let mut best: Option<&Variant> = None;
        for v in &self.variants {
            if !v.op_area.contains(lon, lat, 0.0) {
                continue;
            }
            if best.is_none_or(|b| key(v) < key(b)) {
                best = Some(v);
            }
        }
        best.unwrap_or(&self.variants[0])
    }

    /// The datum transformation used at a WGS 84 point (EPSG name) and its
    /// stated accuracy in metres (0: none needed, the grid is on WGS 84).
    pub fn transformation_at(&self, lon: f64, lat: f64) -> (&str, f64) {
        let v = self.variant_at(lon, lat);
        (&v.transformation, v.accuracy)
    }

    /// A sentence on the datum shift at a WGS 84 point, if the grid is not on
    /// WGS 84 itself: which transformation PROJ's default uses there and the
    /// accuracy EPSG states for it.
    pub fn datum_note_at(&self, lon: f64, lat: f64) -> Option<String> {
        let (t, acc) = self.transformation_at(lon, lat);
        if acc == 0.0 {
            return None;
        }
        let shift = t.split(" + ").next().unwrap_or(t);
        if acc < 0.0 {
            return Some(format!(
                "EPSG:{} ({}) is not on WGS 84, and at this place PROJ 9.5 has only '{shift}', a shift of unknown accuracy (possibly metres to tens of metres): grid coordinates here are that uncertain relative to WGS 84 positions. Relative geometry (lengths, radii) is unaffected.",
                self.code, self.name
            ));
        }
        Some(format!(
            "EPSG:{} ({}) is not on WGS 84: the shift used is '{shift}', the transformation PROJ 9.5 applies by default without grid files, which EPSG states as good to {acc} m; coordinates in this grid are that uncertain relative to WGS 84 positions. Relative geometry (lengths, radii) is unaffected.",
            self.code, self.name
        ))
    }

    /// [`Crs::datum_note_at`] at the centre of the grid's area of use.
    pub fn datum_note(&self) -> Option<String> {
        let a = self.area;
        self.datum_note_at(0.5 * (a.west + a.east), 0.5 * (a.south + a.north))
    }

    /// Grid (easting, northing) in grid units ([`Crs::unit`]) → WGS 84
    /// (longitude, latitude) in degrees.
    ///
    /// # Errors
    /// [`CrsError::Projection`] when the point is outside the projection's domain.
    ///
    /// proj4rs inverts a datum shift approximately (a few millimetres for
    /// some grids, `tests/georef_pyproj.rs`), so the result is refined by
    /// Newton steps on the forward conversion until it reproduces the grid
    /// point to 1e-6 grid units.
    pub fn to_lonlat(&self, easting: f64, northing: f64) -> Result<(f64, f64), CrsError> {
        let first = self.inverse(&self.variants[0], easting, northing)?;
        let v = self.variant_at(first.0, first.1);
        let mut ll = if std::ptr::eq(v, &self.variants[0]) {
            first
        } else {
            self.inverse(v, easting, northing)?
        };
        for _ in 0..4 {
            let (e, n) = self.forward(v, ll.0, ll.1)?;
            let (de, dn) = (easting - e, northing - n);
            if de.hypot(dn) < 1e-6 {
                break;
            }
            let h = 1e-6;
            let (e1, n1) = self.forward(v, ll.0 + h, ll.1)?;
            let (e2, n2) = self.forward(v, ll.0, ll.1 + h)?;
            let (a, b, c, d) = ((e1 - e) / h, (e2 - e) / h, (n1 - n) / h, (n2 - n) / h);
            let det = a * d - b * c;
            if det == 0.0 || !det.is_finite() {
                break;
            }
            ll = (
                ll.0 + (d * de - b * dn) / det,
                ll.1 + (a * dn - c * de) / det,
            );
        }
        Ok(ll)
    }

    fn inverse(&self, v: &Variant, easting: f64, northing: f64) -> Result<(f64, f64), CrsError> {
        let mut p = Pt(easting, northing, 0.0);
        transform(&v.proj, &self.wgs84, &mut p).map_err(|e| CrsError::Projection {
            code: self.code,
            message: format!("easting {easting}, northing {northing} cannot be converted ({e}); check the coordinates and the grid"),
        })?;
        let (lon, lat) = (p.0.to_degrees(), p.1.to_degrees());
        if !(lon.is_finite() && lat.is_finite() && lat.abs() <= 90.0) {
            return Err(CrsError::Projection {
                code: self.code,
                message: format!("easting {easting}, northing {northing} is outside the grid"),
            });
        }
        Ok((lon, lat))
    }

    /// WGS 84 (longitude, latitude) in degrees → grid (easting, northing) in
    /// grid units ([`Crs::unit`]).
    ///
    /// # Errors
    /// [`CrsError::Projection`] when the point is outside the projection's domain.
    pub fn from_lonlat(&self, lon: f64, lat: f64) -> Result<(f64, f64), CrsError> {
        self.forward(self.variant_at(lon, lat), lon, lat)
    }

    fn forward(&self, v: &Variant, lon: f64, lat: f64) -> Result<(f64, f64), CrsError> {
        let mut p = Pt(lon.to_radians(), lat.to_radians(), 0.0);
        transform(&self.wgs84, &v.proj, &mut p).map_err(|e| CrsError::Projection {
            code: self.code,
            message: format!("longitude {lon}, latitude {lat} cannot be projected ({e})"),
        })?;
        if !(p.0.is_finite() && p.1.is_finite()) {
            return Err(CrsError::Projection {
                code: self.code,
                message: format!("longitude {lon}, latitude {lat} is outside the grid"),
            });
        }
        Ok((p.0, p.1))
    }
}

impl std::str::FromStr for Crs {
    type Err = CrsError;
    /// Parse `EPSG:25832` (case-insensitive, spaces allowed).
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let t = s.trim();
        let code = t
            .split_once(':')
            .filter(|(a, _)| a.trim().eq_ignore_ascii_case("epsg"))
            .and_then(|(_, c)| c.trim().parse::<u32>().ok())
            .ok_or_else(|| CrsError::NotEpsg(s.to_string()))?;
        Crs::from_epsg(code)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_what_it_cannot_do() {
        assert!(matches!(
            "EPSG:4326".parse::<Crs>(),
            Err(CrsError::Geographic(4326))
        ));
        for code in [3857, 3395] {
            assert!(matches!(
                Crs::from_epsg(code),
                Err(CrsError::DisplayProjection(c)) if c == code
            ));
        }
        // NAD27 needs datum grids.
        assert!(matches!(
            "EPSG:2085".parse::<Crs>(),
            Err(CrsError::NeedsGridFiles(2085))
        ));
        assert!(matches!(
            "EPSG:99999".parse::<Crs>(),
            Err(CrsError::Unknown(99999))
        ));
        assert!(matches!("25832".parse::<Crs>(), Err(CrsError::NotEpsg(_))));
        let e = "EPSG:1".parse::<Crs>().unwrap_err().to_string();
        assert!(e.contains("EPSG:1 ") && e.contains("EPSG:258xx"), "{e}");
    }

    #[test]
    fn the_table_is_read_whole() {
        // Every data line of grids.csv became a row (none silently dropped).
        let lines = GRIDS_CSV
            .lines()
            .filter(|l| !l.starts_with('#') && !l.is_empty())
            .count();
        assert_eq!(table().len(), lines - 1);
        let c = Crs::from_epsg(2263).unwrap();
        assert_eq!(c.unit(), GridUnit::UsSurveyFoot);
        assert!(c.name().contains("Long Island"));
    }
}
