//! Coordinate reference systems named by EPSG code: WGS 84 longitude/latitude
//! and projected grids (UTM, national transverse Mercator grids, ...), through
//! the pure-Rust `proj4rs` library and the `crs-definitions` table.
//!
//! # Datum shifts
//! Grids on a datum other than WGS 84 / ETRS89 / GRS 80 are reached with the
//! seven-parameter (Helmert) shift written in their definition. Such a shift
//! is typically good to about a metre or a few metres, not to millimetres;
//! see [`Crs::datum_note`].
//!
//! ## Reference
//! * proj4rs 0.3 (a Rust port of proj4js / PROJ.4); definitions from the EPSG
//!   data set as packaged in `crs-definitions` 0.6.
//! * C.F.F. Karney, "Transverse Mercator with an accuracy of a few nanometers",
//!   J. Geodesy 85(8):475–485, 2011 (the `etmerc` algorithm proj4rs uses for UTM).

use std::fmt;

use proj4rs::Proj;
use proj4rs::transform::{Transform, TransformClosure, transform};

/// Grids checked against outside values in this crate's tests (CHECKS.md
/// §5.3 and DEPENDENCIES.md §4), listed in error messages.
pub const TESTED_GRIDS: &str = "checked against PROJ to 1 mm: EPSG:326xx / 327xx (WGS 84 / UTM north / south), \
EPSG:258xx (ETRS89 / UTM), EPSG:27700 (British National Grid, Helmert datum shift); \
built from their EPSG definitions: most other metre grids, e.g. EPSG:31467 (DHDN Gauss-Krüger zone 3), \
EPSG:2056 (Swiss LV95)";

/// The British National Grid with the datum shift pinned to the EPSG:1314
/// Helmert parameters PROJ uses (CHECKS.md 5.17); the built-in `OSGB36` datum
/// of proj4rs carries extra digits that move points by about 3 mm
/// (DEPENDENCIES.md §4).
const BNG_PINNED: &str = "+proj=tmerc +lat_0=49 +lon_0=-2 +k=0.9996012717 +x_0=400000 \
+y_0=-100000 +ellps=airy +towgs84=446.448,-125.157,542.06,0.15,0.247,0.842,-20.489 +units=m +no_defs";

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
    /// The definition needs datum grid files that are not shipped.
    #[error(
        "EPSG:{0} needs datum-shift grid files, which this program does not carry: use a grid on WGS 84 / ETRS89 (e.g. UTM) or longitude/latitude"
    )]
    NeedsGridFiles(u32),
    /// Grid units other than metres.
    #[error(
        "EPSG:{code} has coordinates in {unit}, and only metre grids are supported: convert the coordinates to a metre grid or to longitude/latitude"
    )]
    NotMetres {
        /// EPSG code.
        code: u32,
        /// Unit name from the definition.
        unit: String,
    },
    /// Web Mercator and similar display projections.
    #[error(
        "EPSG:{0} is a web-map display projection, not a survey grid (its scale is wrong by up to tens of percent): use UTM or a national grid"
    )]
    DisplayProjection(u32),
    /// proj4rs could not build or apply the projection.
    #[error("EPSG:{code}: {message}")]
    Projection {
        /// EPSG code.
        code: u32,
        /// What went wrong.
        message: String,
    },
}

/// A projected grid (easting, northing in metres) known by its EPSG code.
#[derive(Clone)]
pub struct Crs {
    code: u32,
    definition: String,
    proj: Proj,
    wgs84: Proj,
}

impl fmt::Debug for Crs {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "Crs(EPSG:{}, {})", self.code, self.definition)
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

impl Crs {
    /// Look up a projected grid by EPSG code.
    ///
    /// # Errors
    /// [`CrsError::Unknown`] for a code not in the table, and the other
    /// variants for systems that are not metre survey grids usable without
    /// grid files.
    pub fn from_epsg(code: u32) -> Result<Crs, CrsError> {
        let c16 = u16::try_from(code).map_err(|_| CrsError::Unknown(code))?;
        let def = crs_definitions::from_code(c16).ok_or(CrsError::Unknown(code))?;
        let s = def.proj4;
        let has = |k: &str| s.split_whitespace().any(|t| t.starts_with(k));
        if has("+proj=longlat") || has("+proj=latlong") {
            return Err(CrsError::Geographic(code));
        }
        if code == 3857 || code == 900913 || has("+proj=merc") && s.contains("+nadgrids=@null") {
            return Err(CrsError::DisplayProjection(code));
        }
        if has("+nadgrids") {
            return Err(CrsError::NeedsGridFiles(code));
        }
        if let Some(u) = s.split_whitespace().find_map(|t| t.strip_prefix("+units="))
            && u != "m"
        {
            return Err(CrsError::NotMetres {
                code,
                unit: u.to_string(),
            });
        }
        if has("+to_meter") {
            return Err(CrsError::NotMetres {
                code,
                unit: "non-metre units".to_string(),
            });
        }
        let definition = if code == 27700 { BNG_PINNED } else { s }.to_string();
        let proj_err = |m: String| CrsError::Projection { code, message: m };
        let proj = Proj::from_proj_string(&definition).map_err(|e| {
            let m = e.to_string();
            // e.g. NAD27 definitions imply datum grids (proj4rs: "NAD grid not available").
            if m.to_ascii_lowercase().contains("grid") {
                CrsError::NeedsGridFiles(code)
            } else {
                proj_err(format!(
                    "the projection could not be set up ({m}); use UTM or longitude/latitude"
                ))
            }
        })?;
        let wgs84 = wgs84_proj().map_err(proj_err)?;
        Ok(Crs {
            code,
            definition,
            proj,
            wgs84,
        })
    }

    /// The EPSG code.
    pub fn code(&self) -> u32 {
        self.code
    }

    /// The PROJ.4-style definition used (for reports).
    pub fn definition(&self) -> &str {
        &self.definition
    }

    /// A sentence on the datum of this grid, if it is not WGS 84 itself:
    /// grids on ETRS89 / NAD83 are taken as WGS 84 (metre-level drift), and
    /// Helmert shifts written in definitions are good to about a metre to a
    /// few metres (e.g. EPSG:1314 for the British grid is stated as 2 m by
    /// PROJ, DEPENDENCIES.md §4).
    pub fn datum_note(&self) -> Option<String> {
        let d = &self.definition;
        let zero_shift = !d.contains("+towgs84") || d.contains("+towgs84=0,0,0,0,0,0,0");
        if d.contains("+datum=WGS84") || d.contains("+ellps=WGS84") && zero_shift {
            return None;
        }
        if d.contains("+ellps=GRS80") && zero_shift || d.contains("+datum=NAD83") {
            return Some(format!(
                "EPSG:{} is on a datum (such as ETRS89 or NAD83) that this program, like PROJ without a time-dependent transformation, treats as identical to WGS 84; the realisations drift apart by up to about a metre (ETRS89 moves with Europe, about 2.5 cm a year since 1989; from memory). Relative geometry (lengths, radii) is unaffected; use coordinates of one datum throughout.",
                self.code
            ));
        }
        Some(format!(
            "EPSG:{} is on a datum other than WGS 84; the program shifts between the two with the seven-parameter (Helmert) transformation of its definition, which is good to about a metre to a few metres, not to millimetres. Relative geometry (lengths, radii) is unaffected.",
            self.code
        ))
    }

    /// Grid (easting, northing) in metres → WGS 84 (longitude, latitude) in degrees.
    ///
    /// # Errors
    /// [`CrsError::Projection`] when the point is outside the projection's domain.
    pub fn to_lonlat(&self, easting: f64, northing: f64) -> Result<(f64, f64), CrsError> {
        let mut p = Pt(easting, northing, 0.0);
        transform(&self.proj, &self.wgs84, &mut p).map_err(|e| CrsError::Projection {
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

    /// WGS 84 (longitude, latitude) in degrees → grid (easting, northing) in metres.
    ///
    /// # Errors
    /// [`CrsError::Projection`] when the point is outside the projection's domain.
    pub fn from_lonlat(&self, lon: f64, lat: f64) -> Result<(f64, f64), CrsError> {
        let mut p = Pt(lon.to_radians(), lat.to_radians(), 0.0);
        transform(&self.wgs84, &self.proj, &mut p).map_err(|e| CrsError::Projection {
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
        assert!(matches!(
            "EPSG:3857".parse::<Crs>(),
            Err(CrsError::DisplayProjection(3857))
        ));
        assert!(matches!(
            "EPSG:2263".parse::<Crs>(),
            Err(CrsError::NotMetres { .. })
        ));
        // NAD27 implies datum grids.
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
}
