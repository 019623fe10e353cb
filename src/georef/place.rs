//! The local ground frame and its placement on the WGS 84 ellipsoid.
//!
//! The integrator works in a local plan frame (x east, y north, metres). A
//! [`Placement`] ties that frame to the Earth as an **azimuthal equidistant
//! projection** centred at an origin point: the local point (x, y) lies on the
//! geodesic leaving the origin with azimuth `atan2(x, y)` (clockwise from true
//! north) at distance `√(x² + y²)`. Distances and azimuths from the origin are
//! exact; elsewhere the frame's scale differs from 1 by about `ρ²/(6R²)`
//! across the radius (4·10⁻⁷ at ρ = 10 km, 4·10⁻⁵ at 100 km; computed from the
//! spherical formula).
//!
//! Ground distances measured on the track at height `h` above the ellipsoid
//! are longer than the same distances on the ellipsoid by the factor
//! `(R + h)/R` (R = Gaussian mean radius at the origin): 1.6·10⁻⁵ at 100 m,
//! 7.8·10⁻⁵ at 500 m. Give the height to [`Placement::new`] to remove it.
//!
//! ## Reference
//! C.F.F. Karney, "Algorithms for geodesics", J. Geodesy 87(1):43–55, 2013
//! (geodesic direct and inverse problems, via `geographiclib-rs`).

use std::fmt;
use std::str::FromStr;

use geographiclib_rs::{DirectGeodesic, Geodesic, InverseGeodesic};

use crate::geometry::{Pose, bearing_to_heading};

/// WGS 84 semi-major axis, metres (NIMA TR8350.2, common value).
const WGS84_A: f64 = 6_378_137.0;
/// WGS 84 flattening (NIMA TR8350.2, common value).
const WGS84_F: f64 = 1.0 / 298.257_223_563;

/// Why a longitude/latitude, bearing or height given by the user is not usable.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PlaceError {
    /// Not two numbers separated by a comma.
    #[error(
        "'{0}' is not a longitude,latitude pair: write it as two decimal degrees separated by a comma, longitude first, e.g. 9.1234,48.5678"
    )]
    Format(String),
    /// Latitude outside [−90°, 90°].
    #[error(
        "latitude {lat} in '{text}' is outside -90..90 degrees: the order is longitude,latitude (e.g. 9.1234,48.5678)"
    )]
    Latitude {
        /// The text given.
        text: String,
        /// The latitude read.
        lat: f64,
    },
    /// Longitude outside [−180°, 180°].
    #[error("longitude {lon} in '{text}' is outside -180..180 degrees")]
    Longitude {
        /// The text given.
        text: String,
        /// The longitude read.
        lon: f64,
    },
    /// A bearing that is not a finite number of degrees.
    #[error(
        "'{0}' is not a bearing: give degrees clockwise from true north as a number, e.g. 75 or 281.5"
    )]
    Bearing(String),
    /// Not two numbers (easting, northing) separated by a comma.
    #[error(
        "'{0}' is not an easting,northing pair: write two numbers in the grid's unit (metres, or feet for a feet grid) separated by a comma, easting first, e.g. 512345.6,5376543.2 (and name the grid with --crs EPSG:<code>)"
    )]
    GridFormat(String),
    /// A height that is not a finite number of metres within reason.
    #[error(
        "height {0} m above the ellipsoid is not plausible: give it in metres, between -500 and 9000"
    )]
    Height(f64),
}

/// A WGS 84 position in decimal degrees.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LonLat {
    /// Longitude, degrees east, in [−180, 180].
    pub lon: f64,
    /// Latitude, degrees north, in [−90, 90].
    pub lat: f64,
}

impl LonLat {
    /// A checked position.
    ///
    /// # Errors
    /// [`PlaceError::Latitude`] / [`PlaceError::Longitude`] when out of range
    /// or not finite.
    pub fn new(lon: f64, lat: f64) -> Result<LonLat, PlaceError> {
        let text = format!("{lon},{lat}");
        if !(lat.is_finite() && lat.abs() <= 90.0) {
            return Err(PlaceError::Latitude { text, lat });
        }
        if !(lon.is_finite() && lon.abs() <= 180.0) {
            return Err(PlaceError::Longitude { text, lon });
        }
        Ok(LonLat { lon, lat })
    }
}

impl fmt::Display for LonLat {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:.7},{:.7}", self.lon, self.lat)
    }
}

impl FromStr for LonLat {
    type Err = PlaceError;
    /// Parse `"9.1234,48.5678"` (longitude first, decimal degrees).
    ///
    /// # Examples
    /// ```
    /// use chordline::georef::LonLat;
    /// let p: LonLat = "9.1234,48.5678".parse().unwrap();
    /// assert_eq!((p.lon, p.lat), (9.1234, 48.5678));
    /// assert!("9.1234,95".parse::<LonLat>().is_err());
    /// ```
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let (a, b) = s
            .split_once(',')
            .ok_or_else(|| PlaceError::Format(s.to_string()))?;
        let lon: f64 = a
            .trim()
            .parse()
            .map_err(|_| PlaceError::Format(s.to_string()))?;
        let lat: f64 = b
            .trim()
            .parse()
            .map_err(|_| PlaceError::Format(s.to_string()))?;
        LonLat::new(lon, lat).map_err(|e| match e {
            PlaceError::Latitude { lat, .. } => PlaceError::Latitude {
                text: s.to_string(),
                lat,
            },
            PlaceError::Longitude { lon, .. } => PlaceError::Longitude {
                text: s.to_string(),
                lon,
            },
            e => e,
        })
    }
}

/// Parse a grid start point `"512345.6,5376543.2"` (easting, northing in
/// the grid's unit, easting first) for `--start-grid`, used with `--crs`; convert it
/// with [`crate::georef::Crs::to_lonlat`] and [`LonLat::new`].
///
/// # Errors
/// [`PlaceError::GridFormat`] unless it is two finite numbers.
pub fn parse_grid_point(s: &str) -> Result<(f64, f64), PlaceError> {
    let err = || PlaceError::GridFormat(s.to_string());
    let (a, b) = s.split_once(',').ok_or_else(err)?;
    let e: f64 = a.trim().parse().map_err(|_| err())?;
    let n: f64 = b.trim().parse().map_err(|_| err())?;
    if !(e.is_finite() && n.is_finite()) {
        return Err(err());
    }
    Ok((e, n))
}

/// Parse a bearing in degrees clockwise from true north (`--start-bearing 75`),
/// returned in [0, 360).
///
/// # Errors
/// [`PlaceError::Bearing`] for text that is not a finite number.
pub fn parse_bearing(s: &str) -> Result<f64, PlaceError> {
    let t = s.trim().trim_end_matches("deg").trim();
    let v: f64 = t.parse().map_err(|_| PlaceError::Bearing(s.to_string()))?;
    if !v.is_finite() {
        return Err(PlaceError::Bearing(s.to_string()));
    }
    Ok(v.rem_euclid(360.0))
}

/// The tie between the local ground frame and WGS 84 (azimuthal equidistant
/// about an origin, with a height scale; see the module documentation).
#[derive(Debug, Clone)]
pub struct Placement {
    origin: LonLat,
    height: f64,
    /// Ellipsoid distance per ground distance, `R/(R + h)`.
    k: f64,
    geod: Geodesic,
}

impl PartialEq for Placement {
    fn eq(&self, other: &Self) -> bool {
        self.origin == other.origin && self.height == other.height
    }
}

impl Placement {
    /// A placement with its local origin (0, 0) at `origin` and the track at
    /// `height` metres above the WGS 84 ellipsoid (0 if unknown; see the
    /// module documentation for what this changes).
    ///
    /// # Errors
    /// [`PlaceError::Height`] for a height that is not finite or outside −500…9000 m.
    pub fn new(origin: LonLat, height: f64) -> Result<Placement, PlaceError> {
        if !(height.is_finite() && (-500.0..=9000.0).contains(&height)) {
            return Err(PlaceError::Height(height));
        }
        let phi = origin.lat.to_radians();
        let e2 = WGS84_F * (2.0 - WGS84_F);
        let w = (1.0 - e2 * phi.sin().powi(2)).sqrt();
        // Gaussian mean radius sqrt(M N).
        let r = WGS84_A * (1.0 - e2).sqrt() / (w * w);
        Ok(Placement {
            origin,
            height,
            k: r / (r + height),
            geod: Geodesic::new(WGS84_A, WGS84_F),
        })
    }

    /// The WGS 84 position of the local origin.
    pub fn origin(&self) -> LonLat {
        self.origin
    }

    /// Height of the track above the ellipsoid assumed, metres.
    pub fn height(&self) -> f64 {
        self.height
    }

    /// Ellipsoid metres per ground metre of the local frame, `R/(R + h)`
    /// (1 at height 0).
    pub fn ellipsoid_per_ground(&self) -> f64 {
        self.k
    }

    /// Local ground (x east, y north) in metres → WGS 84 (longitude, latitude)
    /// in degrees, longitude in [−180, 180].
    pub fn to_lonlat(&self, x: f64, y: f64) -> (f64, f64) {
        let d = x.hypot(y) * self.k;
        let az = x.atan2(y).to_degrees();
        let (lat, lon): (f64, f64) = self.geod.direct(self.origin.lat, self.origin.lon, az, d);
        let lon = if lon > 180.0 {
            lon - 360.0
        } else if lon < -180.0 {
            lon + 360.0
        } else {
            lon
        };
        (lon, lat)
    }

    /// WGS 84 (longitude, latitude) in degrees → local ground (x, y) in metres.
    pub fn to_local(&self, lon: f64, lat: f64) -> (f64, f64) {
        let (s, azi, _azi2, _a12): (f64, f64, f64, f64) =
            self.geod
                .inverse(self.origin.lat, self.origin.lon, lat, lon);
        let d = s / self.k;
        let a = azi.to_radians();
        (d * a.sin(), d * a.cos())
    }

    /// Geodesic distance on the ellipsoid between two WGS 84 points, metres,
    /// scaled up to the track height.
    pub fn ground_distance(&self, a: LonLat, b: LonLat) -> f64 {
        let s: f64 = self.geod.inverse(a.lat, a.lon, b.lat, b.lon);
        s / self.k
    }

    /// The true bearing (degrees clockwise from true north, [0, 360)) of a
    /// direction given as a local pose. The local frame's "north" is true
    /// north only at the origin; elsewhere they differ by the frame's
    /// convergence, which this removes.
    pub fn true_bearing(&self, pose: Pose) -> f64 {
        let step = 1.0;
        let (lon1, lat1) = self.to_lonlat(pose.x, pose.y);
        let (lon2, lat2) = self.to_lonlat(
            pose.x + step * pose.heading.cos(),
            pose.y + step * pose.heading.sin(),
        );
        let (azi, _, _): (f64, f64, f64) = self.geod.inverse(lat1, lon1, lat2, lon2);
        azi.rem_euclid(360.0)
    }

    /// Local start pose of the first station for a start given as a point
    /// and a true bearing: the origin itself, heading from the bearing.
    pub fn start_pose(bearing_deg: f64) -> Pose {
        Pose {
            x: 0.0,
            y: 0.0,
            heading: bearing_to_heading(bearing_deg),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_and_rejects_positions() {
        let p: LonLat = " -0.1275 , 51.5072 ".parse().unwrap();
        assert_eq!((p.lon, p.lat), (-0.1275, 51.5072));
        let e = "9.1234,95".parse::<LonLat>().unwrap_err();
        assert!(matches!(e, PlaceError::Latitude { lat, .. } if lat == 95.0));
        assert!(e.to_string().contains("longitude,latitude"));
        assert!(matches!(
            "190,45".parse::<LonLat>(),
            Err(PlaceError::Longitude { .. })
        ));
        assert!(matches!(
            "9.1;48.5".parse::<LonLat>(),
            Err(PlaceError::Format(_))
        ));
        assert!(matches!(
            "nan,48".parse::<LonLat>(),
            Err(PlaceError::Longitude { .. })
        ));
        assert_eq!(parse_bearing("75").unwrap(), 75.0);
        assert_eq!(parse_bearing("-90").unwrap(), 270.0);
        assert!(parse_bearing("east").is_err());
        assert_eq!(
            parse_grid_point("512345.6, 5376543.2").unwrap(),
            (512345.6, 5376543.2)
        );
        assert!(matches!(
            parse_grid_point("512345.6"),
            Err(PlaceError::GridFormat(_))
        ));
    }

    #[test]
    fn local_frame_round_trips() {
        let pl = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 350.0).unwrap();
        for &(x, y) in &[(0.0, 0.0), (1234.5, -876.25), (-20_000.0, 35_000.0)] {
            let (lon, lat) = pl.to_lonlat(x, y);
            let (x2, y2) = pl.to_local(lon, lat);
            assert!((x - x2).abs() < 1e-8 && (y - y2).abs() < 1e-8, "{x2} {y2}");
        }
    }
}
