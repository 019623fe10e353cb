//! The placed survey as RFC 7946 GeoJSON layers, one file per geometry
//! type and meaning, so that a GIS (or `ogr2ogr` to a Shapefile or a
//! GeoPackage) loads each as one layer of one geometry type:
//!
//! | file | geometry | properties |
//! |---|---|---|
//! | `alignment.geojson` | one LineString: the measured centreline through the stations | `start_ch_m`, `end_ch_m`, `stations` |
//! | `elements.geojson` | a LineString per fitted element, sampled every ≤ 1 m and at both ends | `element`, `kind`, `start_ch_m`, `end_ch_m`, `length_m`, `radius_m` (unsigned, for labels: the arc's radius, a transition's tighter end; `null` on a straight), `turn` (`left`/`right`), `r_start_m`, `r_end_m` (signed, positive curving left, `null` for a straight end), `brg_start`, `brg_end` (degrees from true north), `clothoid_a` (m), then the fit's statistics |
//! | `joints.geojson` | a Point at the start of every element but the first | `joint` (e.g. `straight-transition`), `element` (the one starting there), `chainage_m`, `ch_ci95_m` (half-width of the 95 % interval, if known), `brg_deg` |
//! | `controls.geojson` | a Point per control point at its given position | `id`, `line`, `chainage_m`, `sd_m`, `res_e_m`, `res_n_m`, `res_norm`, `loo_m`, `loo_stat`, `flagged` |
//!
//! Rules kept for every layer: WGS 84 longitude/latitude in decimal degrees
//! with 9 decimals (0.1 mm; CHECKS.md 5.1), no `crs` member (RFC 7946 §4),
//! a `bbox`; property names of at most 10 characters (the dBase limit of a
//! Shapefile, so none is truncated or clashes); counts written as JSON
//! integers; every feature of a layer carries the same properties
//! (`null` where a value does not exist).
//!
//! Every number is checked to be finite before anything is written (serde_json
//! would otherwise turn NaN into `null` silently); the layers are built in
//! memory, so an error leaves the writers untouched.
//!
//! There is no way to call this without a [`Placement`](crate::georef::Placement): an unplaced survey
//! gets no GeoJSON.
//!
//! ## Reference
//! H. Butler et al., "The GeoJSON Format", IETF RFC 7946, 2016; the 10-character
//! field names: ESRI, "ESRI Shapefile Technical Description", 1998 (dBase table).

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
    /// Further numeric properties written as they are (`None`: `null`), e.g.
    /// `("len_se_m", Some(0.8))`. Names should carry their unit and have at most
    /// 10 characters (longer ones are refused).
    pub extra: Vec<(String, Option<f64>)>,
    /// Further integer properties, e.g. `("readings", 18)`.
    pub integers: Vec<(String, i64)>,
    /// Further text properties, e.g. `("status", "determined")`.
    pub labels: Vec<(String, String)>,
}

impl ElementProps {
    /// The properties of one element of the fit: chainages, the 95 %
    /// half-interval of the start joint, standard errors of the chainages
    /// (`start_se_m`, `end_se_m`), length (`len_se_m`) and radii
    /// (`r_start_se`, `r_end_se`, metres; `null` for a straight end),
    /// `readings`, residual RMS (`rms_mm`), `status` and `note`.
    pub fn from_fitted(e: &crate::fit::FittedElement) -> ElementProps {
        let mut extra = vec![
            ("start_se_m".to_string(), Some(e.start_chainage.se)),
            ("end_se_m".to_string(), Some(e.end_chainage.se)),
            ("len_se_m".to_string(), Some(e.length.se)),
        ];
        extra.push(("r_start_se".into(), e.start_radius.map(|r| r.se)));
        extra.push(("r_end_se".into(), e.end_radius.map(|r| r.se)));
        extra.push(("rms_mm".into(), Some(e.residual_rms * 1e3)));
        let labels = vec![
            ("status".to_string(), e.status.name().to_string()),
            ("note".into(), e.note.clone()),
        ];
        ElementProps {
            start_chainage: e.start_chainage.value,
            end_chainage: e.end_chainage.value,
            start_chainage_ci95: (!e.starts_at_survey_end)
                .then_some(0.5 * (e.start_chainage.hi95 - e.start_chainage.lo95)),
            extra,
            integers: vec![("readings".into(), e.readings as i64)],
            labels,
        }
    }
}

/// Why the GeoJSON could not be written.
#[derive(Debug, thiserror::Error)]
pub enum GeoJsonError {
    /// A value is NaN or infinite.
    #[error("cannot write the GeoJSON layers: {0} is not a finite number (nothing was written)")]
    NotFinite(String),
    /// Element properties do not match the alignment.
    #[error(
        "cannot write the GeoJSON layers: {props} element property records for {elements} elements (nothing was written)"
    )]
    Mismatch {
        /// Number of property records.
        props: usize,
        /// Number of elements.
        elements: usize,
    },
    /// A property name a Shapefile would truncate.
    #[error(
        "cannot write the GeoJSON layers: {0}: the property name is longer than 10 characters, which a Shapefile would truncate (nothing was written)"
    )]
    LongName(String),
    /// The track crosses the ±180° meridian.
    #[error(
        "cannot write the GeoJSON layers: the track crosses the 180th meridian, which this writer does not split (nothing was written)"
    )]
    Antimeridian,
    /// Writing failed.
    #[error("cannot write the GeoJSON layers: {0}")]
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

/// Decimals of longitude and latitude: 1e-9° is at most 0.11 mm (CHECKS.md 5.1).
const COORD_DECIMALS: f64 = 1e9;

fn round_deg(v: f64) -> f64 {
    (v * COORD_DECIMALS).round() / COORD_DECIMALS
}

fn round_m(v: f64) -> f64 {
    (v * 1e4).round() / 1e4
}

/// Longest property name a Shapefile keeps whole (dBase field names).
pub const MAX_NAME: usize = 10;

/// One layer: its file name and document.
#[derive(Debug, Clone, PartialEq)]
pub struct Layer {
    /// File name, e.g. `elements.geojson`.
    pub file: &'static str,
    /// The `FeatureCollection`.
    pub doc: Value,
}

struct Builder<'a> {
    placement: &'a Placement,
    bbox: [f64; 4],
    last_lon: Option<f64>,
}

impl<'a> Builder<'a> {
    fn new(placement: &'a Placement) -> Self {
        Builder {
            placement,
            bbox: [
                f64::INFINITY,
                f64::INFINITY,
                f64::NEG_INFINITY,
                f64::NEG_INFINITY,
            ],
            last_lon: None,
        }
    }

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
        let (lon, lat) = (round_deg(lon), round_deg(lat));
        self.bbox = [
            self.bbox[0].min(lon),
            self.bbox[1].min(lat),
            self.bbox[2].max(lon),
            self.bbox[3].max(lat),
        ];
        Ok(json!([lon, lat]))
    }

    /// The finished layer (`None` without features).
    fn layer(self, file: &'static str, features: Vec<Value>) -> Option<Layer> {
        if features.is_empty() {
            return None;
        }
        let mut fc = Map::new();
        fc.insert("type".into(), json!("FeatureCollection"));
        fc.insert("name".into(), json!(file.trim_end_matches(".geojson")));
        if self.bbox.iter().all(|v| v.is_finite()) {
            fc.insert("bbox".into(), json!(self.bbox));
        }
        fc.insert("features".into(), Value::Array(features));
        Some(Layer {
            file,
            doc: Value::Object(fc),
        })
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

fn bearing(placement: &Placement, p: crate::geometry::Pose) -> Value {
    json!((placement.true_bearing(p) * 1e6).round() / 1e6)
}

fn name_ok(k: &str, what: &str) -> Result<String, GeoJsonError> {
    if k.chars().count() > MAX_NAME {
        return Err(GeoJsonError::LongName(format!("{what}, '{k}'")));
    }
    Ok(k.to_string())
}

fn centreline_layer(input: &GeoJsonInput) -> Result<Option<Layer>, GeoJsonError> {
    let mut b = Builder::new(input.placement);
    if input.stations.len() < 2 {
        return Ok(None);
    }
    let mut coords = Vec::with_capacity(input.stations.len());
    for s in input.stations {
        coords.push(b.position(s.x, s.y, &format!("station at chainage {}", s.chainage))?);
    }
    let (first, last) = (
        &input.stations[0],
        &input.stations[input.stations.len() - 1],
    );
    let mut p = Map::new();
    p.insert("start_ch_m".into(), num(first.chainage, "first chainage")?);
    p.insert("end_ch_m".into(), num(last.chainage, "last chainage")?);
    p.insert("stations".into(), json!(input.stations.len()));
    let f = feature(json!({"type": "LineString", "coordinates": coords}), p);
    Ok(b.layer("alignment.geojson", vec![f]))
}

fn element_properties(
    placement: &Placement,
    i: usize,
    e: &crate::geometry::Element,
    pr: &ElementProps,
    (p0, p1): (crate::geometry::Pose, crate::geometry::Pose),
) -> Result<Map<String, Value>, GeoJsonError> {
    let what = format!("element {}", i + 1);
    let mut p = Map::new();
    p.insert("element".into(), json!(i + 1));
    p.insert("kind".into(), json!(e.kind.name()));
    p.insert("start_ch_m".into(), num(pr.start_chainage, &what)?);
    p.insert("end_ch_m".into(), num(pr.end_chainage, &what)?);
    p.insert("length_m".into(), num(e.length, &what)?);
    let kmax = if e.k_start.abs() >= e.k_end.abs() {
        e.k_start
    } else {
        e.k_end
    };
    p.insert(
        "radius_m".into(),
        opt_num(radius(kmax).map(f64::abs), &what)?,
    );
    let turn = match kmax.partial_cmp(&0.0) {
        Some(std::cmp::Ordering::Greater) => json!("left"),
        Some(std::cmp::Ordering::Less) => json!("right"),
        _ => Value::Null,
    };
    p.insert("turn".into(), turn);
    p.insert("r_start_m".into(), opt_num(radius(e.k_start), &what)?);
    p.insert("r_end_m".into(), opt_num(radius(e.k_end), &what)?);
    p.insert("brg_start".into(), bearing(placement, p0));
    p.insert("brg_end".into(), bearing(placement, p1));
    let dk = (e.k_end - e.k_start).abs();
    let a = (e.kind == crate::geometry::ElementKind::Transition && dk > 0.0)
        .then(|| (e.length / dk).sqrt());
    p.insert("clothoid_a".into(), opt_num(a, &what)?);
    for (k, v) in &pr.extra {
        let k = name_ok(k, &what)?;
        p.insert(k.clone(), opt_num(*v, &format!("{what}, property {k}"))?);
    }
    for (k, v) in &pr.integers {
        p.insert(name_ok(k, &what)?, json!(v));
    }
    for (k, v) in &pr.labels {
        p.insert(name_ok(k, &what)?, json!(v));
    }
    Ok(p)
}

fn joint_feature(
    b: &mut Builder,
    els: &[crate::geometry::Element],
    i: usize,
    pr: &ElementProps,
    p0: crate::geometry::Pose,
) -> Result<Value, GeoJsonError> {
    let what = format!("joint before element {}", i + 1);
    let mut jp = Map::new();
    jp.insert(
        "joint".into(),
        json!(format!("{}-{}", els[i - 1].kind.name(), els[i].kind.name())),
    );
    jp.insert("element".into(), json!(i + 1));
    jp.insert("chainage_m".into(), num(pr.start_chainage, &what)?);
    jp.insert("ch_ci95_m".into(), opt_num(pr.start_chainage_ci95, &what)?);
    jp.insert("brg_deg".into(), bearing(b.placement, p0));
    let pt = b.position(p0.x, p0.y, &what)?;
    Ok(feature(json!({"type": "Point", "coordinates": pt}), jp))
}

fn design_layers(input: &GeoJsonInput) -> Result<Vec<Layer>, GeoJsonError> {
    let Some((al, props)) = input.design else {
        return Ok(Vec::new());
    };
    let els = al.elements();
    if props.len() != els.len() {
        return Err(GeoJsonError::Mismatch {
            props: props.len(),
            elements: els.len(),
        });
    }
    let mut eb = Builder::new(input.placement);
    let mut jb = Builder::new(input.placement);
    let (mut lines, mut joints) = (Vec::new(), Vec::new());
    for (i, (e, pr)) in els.iter().zip(props).enumerate() {
        let what = format!("element {}", i + 1);
        let s0 = al.element_start(i);
        let n = e.length.ceil().max(1.0) as usize;
        let mut coords = Vec::with_capacity(n + 1);
        for j in 0..=n {
            let q = al.pose_at(s0 + e.length * j as f64 / n as f64);
            coords.push(eb.position(q.x, q.y, &what)?);
        }
        let p0 = al.element_pose(i);
        let p = element_properties(input.placement, i, e, pr, (p0, e.advance(p0, e.length)))?;
        lines.push(feature(
            json!({"type": "LineString", "coordinates": coords}),
            p,
        ));
        if i > 0 {
            joints.push(joint_feature(&mut jb, els, i, pr, p0)?);
        }
    }
    Ok(eb
        .layer("elements.geojson", lines)
        .into_iter()
        .chain(jb.layer("joints.geojson", joints))
        .collect())
}

fn control_layer(input: &GeoJsonInput) -> Result<Option<Layer>, GeoJsonError> {
    let Some((set, checks)) = input.controls else {
        return Ok(None);
    };
    let mut b = Builder::new(input.placement);
    let mut features = Vec::new();
    for cp in &set.points {
        let (x, y) = input.placement.to_local(cp.lonlat.lon, cp.lonlat.lat);
        let what = format!("control point '{}'", cp.id);
        let pt = b.position(x, y, &what)?;
        let c = checks.iter().find(|c| c.id == cp.id);
        let fin = |v: f64| v.is_finite().then_some(v);
        let mut p = Map::new();
        p.insert("id".into(), json!(cp.id));
        p.insert("line".into(), json!(cp.line));
        p.insert("chainage_m".into(), num(cp.chainage, &what)?);
        p.insert("sd_m".into(), num(cp.sd, &what)?);
        for (k, v) in [
            ("res_e_m", c.and_then(|c| fin(c.dx))),
            ("res_n_m", c.and_then(|c| fin(c.dy))),
            ("res_norm", c.and_then(|c| fin(c.normalised))),
            ("loo_m", c.and_then(|c| c.loo_discrepancy).and_then(fin)),
            ("loo_stat", c.and_then(|c| c.loo_statistic).and_then(fin)),
        ] {
            p.insert(k.into(), opt_num(v, &what)?);
        }
        p.insert("flagged".into(), json!(c.is_some_and(|c| c.flagged)));
        features.push(feature(json!({"type": "Point", "coordinates": pt}), p));
    }
    Ok(b.layer("controls.geojson", features))
}

/// Build every layer that has features (see the module documentation), in
/// the order centreline, elements, joints, controls.
///
/// # Errors
/// [`GeoJsonError`] for non-finite values, mismatched inputs, over-long
/// property names or a track across ±180°.
pub fn build_layers(input: &GeoJsonInput) -> Result<Vec<Layer>, GeoJsonError> {
    let mut layers: Vec<Layer> = centreline_layer(input)?.into_iter().collect();
    layers.extend(design_layers(input)?);
    layers.extend(control_layer(input)?);
    Ok(layers)
}

/// Write one layer to `w` (compact JSON and a newline).
///
/// # Errors
/// An I/O error of the writer.
pub fn write_layer(mut w: impl Write, layer: &Layer) -> std::io::Result<()> {
    let mut text = serde_json::to_string(&layer.doc).map_err(std::io::Error::other)?;
    text.push('\n');
    w.write_all(text.as_bytes())?;
    w.flush()
}
