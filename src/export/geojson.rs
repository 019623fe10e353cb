//! `alignment.geojson`: the placed survey as RFC 7946 GeoJSON.
//!
//! WGS 84 longitude/latitude in decimal degrees rounded to 7 decimals (about
//! 11 mm of latitude, CHECKS.md 5.1), no `crs` member (RFC 7946 §4). One
//! `FeatureCollection` with a `bbox` and these features, told apart by the
//! `feature` property:
//!
//! | `feature` | geometry | properties |
//! |---|---|---|
//! | `measured_centreline` | LineString through the stations | `start_chainage_m`, `end_chainage_m`, `stations` |
//! | `element` | LineString sampled every ≤ 1 m and at both ends | `element` (1-based), `kind`, `start_chainage_m`, `end_chainage_m`, `length_m`, `start_radius_m`, `end_radius_m` (signed, positive curving left, `null` for a straight end), `start_bearing_deg`, then the caller's extra statistics |
//! | `joint` | Point at the start of every element but the first | `joint` (e.g. `straight-transition`), `chainage_m`, `chainage_ci95_m` (half-width of the 95 % interval, if known) |
//! | `control` | Point at the observed position | `id`, `line`, `chainage_m`, `sd_m`, `residual_east_m`, `residual_north_m`, `normalised_residual`, `loo_discrepancy_m`, `loo_statistic`, `flagged` |
//!
//! Every number is checked to be finite before anything is written (serde_json
//! would otherwise turn NaN into `null` silently); the file is built in memory
//! and written in one go, so an error leaves the writer untouched.
//!
//! There is no way to call this without a [`Placement`](crate::georef::Placement): an unplaced survey
//! gets no GeoJSON.
//!
//! ## Reference
//! H. Butler et al., "The GeoJSON Format", IETF RFC 7946, 2016.

use std::io::Write;

use serde_json::{Map, Value, json};

use crate::geometry::Alignment;
use crate::georef::{ControlCheck, ControlSet, Placement};
use crate::integrate::Station;

/// Per-element facts the alignment itself does not carry: survey chainages,
/// the joint interval and any statistics to pass through as properties.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ElementProps {
    /// Survey chainage of the element's start, metres.
    pub start_chainage: f64,
    /// Survey chainage of the element's end, metres.
    pub end_chainage: f64,
    /// Half-width of the 95 % interval of the start chainage (the joint with
    /// the previous element), metres, if known.
    pub start_chainage_ci95: Option<f64>,
    /// Further numeric properties written as they are, e.g.
    /// `("length_se_m", 0.8)`, `("radius_se_m", 4.0)`. Names should carry their unit.
    pub extra: Vec<(String, f64)>,
    /// Further text properties, e.g. `("status", "determined")`.
    pub labels: Vec<(String, String)>,
}

impl ElementProps {
    /// The properties of one element of the fit: chainages, the 95 %
    /// half-interval of the start joint, standard errors of chainages, length
    /// and radii (`_se_m`), readings, residual RMS (`residual_rms_mm`), status
    /// and note.
    pub fn from_fitted(e: &crate::fit::FittedElement) -> ElementProps {
        let mut extra = vec![
            ("start_chainage_se_m".to_string(), e.start_chainage.se),
            ("end_chainage_se_m".to_string(), e.end_chainage.se),
            ("length_se_m".to_string(), e.length.se),
        ];
        if let Some(r) = &e.start_radius {
            extra.push(("start_radius_se_m".into(), r.se));
        }
        if let Some(r) = &e.end_radius {
            extra.push(("end_radius_se_m".into(), r.se));
        }
        extra.push(("readings".into(), e.readings as f64));
        extra.push(("residual_rms_mm".into(), e.residual_rms * 1e3));
        let mut labels = vec![("status".to_string(), e.status.name().to_string())];
        if !e.note.is_empty() {
            labels.push(("note".into(), e.note.clone()));
        }
        ElementProps {
            start_chainage: e.start_chainage.value,
            end_chainage: e.end_chainage.value,
            start_chainage_ci95: (!e.starts_at_survey_end)
                .then_some(0.5 * (e.start_chainage.hi95 - e.start_chainage.lo95)),
            extra,
            labels,
        }
    }
}

/// Why the GeoJSON could not be written.
#[derive(Debug, thiserror::Error)]
pub enum GeoJsonError {
    /// A value is NaN or infinite.
    #[error("cannot write alignment.geojson: {0} is not a finite number (nothing was written)")]
    NotFinite(String),
    /// Element properties do not match the alignment.
    #[error(
        "cannot write alignment.geojson: {props} element property records for {elements} elements (nothing was written)"
    )]
    Mismatch {
        /// Number of property records.
        props: usize,
        /// Number of elements.
        elements: usize,
    },
    /// The track crosses the ±180° meridian.
    #[error(
        "cannot write alignment.geojson: the track crosses the 180th meridian, which this writer does not split (nothing was written)"
    )]
    Antimeridian,
    /// Writing failed.
    #[error("cannot write alignment.geojson: {0}")]
    Io(#[from] std::io::Error),
}

impl GeoJsonError {
    /// As an I/O error (the output folder writer takes `io::Result`); the
    /// message is kept.
    pub fn into_io(self) -> std::io::Error {
        match self {
            GeoJsonError::Io(e) => e,
            other => std::io::Error::new(std::io::ErrorKind::InvalidData, other.to_string()),
        }
    }
}

/// What to put in the file. Only `placement` and `stations` are required.
#[derive(Debug, Clone, Copy)]
pub struct GeoJsonInput<'a> {
    /// The tie between the local frame and WGS 84.
    pub placement: &'a Placement,
    /// The integrated stations (local frame).
    pub stations: &'a [Station],
    /// The fitted design centreline (local frame) and one property record per element.
    pub design: Option<(&'a Alignment, &'a [ElementProps])>,
    /// The control points and their checks.
    pub controls: Option<(&'a ControlSet, &'a [ControlCheck])>,
}

fn round7(v: f64) -> f64 {
    (v * 1e7).round() / 1e7
}

fn round_m(v: f64) -> f64 {
    (v * 1e4).round() / 1e4
}

struct Builder<'a> {
    placement: &'a Placement,
    bbox: [f64; 4],
    last_lon: Option<f64>,
}

impl Builder<'_> {
    fn position(&mut self, x: f64, y: f64, what: &str) -> Result<Value, GeoJsonError> {
        if !(x.is_finite() && y.is_finite()) {
            return Err(GeoJsonError::NotFinite(what.to_string()));
        }
        let (lon, lat) = self.placement.to_lonlat(x, y);
        if !(lon.is_finite() && lat.is_finite()) {
            return Err(GeoJsonError::NotFinite(what.to_string()));
        }
        if let Some(l) = self.last_lon
            && (lon - l).abs() > 180.0
        {
            return Err(GeoJsonError::Antimeridian);
        }
        self.last_lon = Some(lon);
        let (lon, lat) = (round7(lon), round7(lat));
        self.bbox = [
            self.bbox[0].min(lon),
            self.bbox[1].min(lat),
            self.bbox[2].max(lon),
            self.bbox[3].max(lat),
        ];
        Ok(json!([lon, lat]))
    }
}

fn num(v: f64, what: &str) -> Result<Value, GeoJsonError> {
    if v.is_finite() {
        Ok(json!(round_m(v)))
    } else {
        Err(GeoJsonError::NotFinite(what.to_string()))
    }
}

fn opt_num(v: Option<f64>, what: &str) -> Result<Value, GeoJsonError> {
    v.map_or(Ok(Value::Null), |v| num(v, what))
}

fn feature(geometry: Value, properties: Map<String, Value>) -> Value {
    json!({"type": "Feature", "geometry": geometry, "properties": properties})
}

fn radius(k: f64) -> Option<f64> {
    (k != 0.0).then(|| 1.0 / k)
}

/// Build the GeoJSON document (see the module documentation).
///
/// # Errors
/// [`GeoJsonError`] for non-finite values, mismatched inputs or a track across ±180°.
pub fn build_geojson(input: &GeoJsonInput) -> Result<Value, GeoJsonError> {
    let mut b = Builder {
        placement: input.placement,
        bbox: [
            f64::INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NEG_INFINITY,
        ],
        last_lon: None,
    };
    let mut features = Vec::new();

    // As-measured centreline.
    if input.stations.len() >= 2 {
        let mut coords = Vec::with_capacity(input.stations.len());
        for s in input.stations {
            coords.push(b.position(s.x, s.y, &format!("station at chainage {}", s.chainage))?);
        }
        let mut p = Map::new();
        p.insert("feature".into(), json!("measured_centreline"));
        let (first, last) = (
            &input.stations[0],
            &input.stations[input.stations.len() - 1],
        );
        p.insert(
            "start_chainage_m".into(),
            num(first.chainage, "first chainage")?,
        );
        p.insert(
            "end_chainage_m".into(),
            num(last.chainage, "last chainage")?,
        );
        p.insert("stations".into(), json!(input.stations.len()));
        features.push(feature(
            json!({"type": "LineString", "coordinates": coords}),
            p,
        ));
    }

    // Fitted elements and joints.
    if let Some((al, props)) = input.design {
        let els = al.elements();
        if props.len() != els.len() {
            return Err(GeoJsonError::Mismatch {
                props: props.len(),
                elements: els.len(),
            });
        }
        for (i, (e, pr)) in els.iter().zip(props).enumerate() {
            let what = format!("element {}", i + 1);
            let s0 = al.element_start(i);
            let n = (e.length / 1.0).ceil().max(1.0) as usize;
            let mut coords = Vec::with_capacity(n + 1);
            for j in 0..=n {
                let s = s0 + e.length * j as f64 / n as f64;
                let q = al.pose_at(s);
                coords.push(b.position(q.x, q.y, &what)?);
            }
            let start_pose = al.element_pose(i);
            let mut p = Map::new();
            p.insert("feature".into(), json!("element"));
            p.insert("element".into(), json!(i + 1));
            p.insert("kind".into(), json!(e.kind.name()));
            p.insert("start_chainage_m".into(), num(pr.start_chainage, &what)?);
            p.insert("end_chainage_m".into(), num(pr.end_chainage, &what)?);
            p.insert("length_m".into(), num(e.length, &what)?);
            p.insert("start_radius_m".into(), opt_num(radius(e.k_start), &what)?);
            p.insert("end_radius_m".into(), opt_num(radius(e.k_end), &what)?);
            p.insert(
                "start_bearing_deg".into(),
                json!((input.placement.true_bearing(start_pose) * 1e6).round() / 1e6),
            );
            for (k, v) in &pr.extra {
                p.insert(k.clone(), num(*v, &format!("{what}, property {k}"))?);
            }
            for (k, v) in &pr.labels {
                p.insert(k.clone(), json!(v));
            }
            features.push(feature(
                json!({"type": "LineString", "coordinates": coords}),
                p,
            ));
            if i > 0 {
                let mut jp = Map::new();
                jp.insert("feature".into(), json!("joint"));
                jp.insert(
                    "joint".into(),
                    json!(format!("{}-{}", els[i - 1].kind.name(), e.kind.name())),
                );
                jp.insert("chainage_m".into(), num(pr.start_chainage, &what)?);
                jp.insert(
                    "chainage_ci95_m".into(),
                    opt_num(pr.start_chainage_ci95, &what)?,
                );
                let pt = b.position(start_pose.x, start_pose.y, &format!("joint before {what}"))?;
                features.push(feature(json!({"type": "Point", "coordinates": pt}), jp));
            }
        }
    }

    // Control points at their observed positions.
    if let Some((set, checks)) = input.controls {
        for cp in &set.points {
            let (x, y) = input.placement.to_local(cp.lonlat.lon, cp.lonlat.lat);
            let what = format!("control point '{}'", cp.id);
            let pt = b.position(x, y, &what)?;
            let c = checks.iter().find(|c| c.id == cp.id);
            let mut p = Map::new();
            p.insert("feature".into(), json!("control"));
            p.insert("id".into(), json!(cp.id));
            p.insert("line".into(), json!(cp.line));
            p.insert("chainage_m".into(), num(cp.chainage, &what)?);
            p.insert("sd_m".into(), num(cp.sd, &what)?);
            let fin = |v: f64| v.is_finite().then_some(v);
            p.insert(
                "residual_east_m".into(),
                opt_num(c.and_then(|c| fin(c.dx)), &what)?,
            );
            p.insert(
                "residual_north_m".into(),
                opt_num(c.and_then(|c| fin(c.dy)), &what)?,
            );
            p.insert(
                "normalised_residual".into(),
                opt_num(c.and_then(|c| fin(c.normalised)), &what)?,
            );
            p.insert(
                "loo_discrepancy_m".into(),
                opt_num(c.and_then(|c| c.loo_discrepancy).and_then(fin), &what)?,
            );
            p.insert(
                "loo_statistic".into(),
                opt_num(c.and_then(|c| c.loo_statistic).and_then(fin), &what)?,
            );
            p.insert("flagged".into(), json!(c.is_some_and(|c| c.flagged)));
            features.push(feature(json!({"type": "Point", "coordinates": pt}), p));
        }
    }

    let mut fc = Map::new();
    fc.insert("type".into(), json!("FeatureCollection"));
    if b.bbox.iter().all(|v| v.is_finite()) {
        fc.insert("bbox".into(), json!(b.bbox));
    }
    fc.insert("features".into(), Value::Array(features));
    Ok(Value::Object(fc))
}

/// Write `alignment.geojson` to `w` (see the module documentation).
///
/// # Errors
/// [`GeoJsonError`]; on any error other than [`GeoJsonError::Io`] nothing
/// has been written.
pub fn write_geojson(mut w: impl Write, input: &GeoJsonInput) -> Result<(), GeoJsonError> {
    let doc = build_geojson(input)?;
    let mut text = serde_json::to_string(&doc).map_err(|e| GeoJsonError::Io(e.into()))?;
    text.push('\n');
    w.write_all(text.as_bytes())?;
    w.flush()?;
    Ok(())
}
