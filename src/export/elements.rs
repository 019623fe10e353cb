//! `elements.csv`: one row per fitted element, and a plain-text element table
//! for the terminal.
//!
//! Columns (metric survey; an imperial survey has `_ft` instead of `_m` and
//! residuals in `_in`): `element, kind, start_chainage_m, end_chainage_m,
//! length_m, start_radius_m, end_radius_m`, then for each of start chainage,
//! end chainage, length, start radius and end radius its standard error and
//! 95 % interval (`_se`, `_lo95`, `_hi95`), then `residual_rms_mm,
//! residual_max_mm, readings, status, note`.
//!
//! Chainages are survey chainages along the measured rail; lengths and radii
//! are of the track centreline. Radii are signed (positive curving left) and
//! empty where the curvature is zero. Numbers have fixed decimals; a value
//! that does not exist (the radius of a straight, an interval of a survey
//! end, a radius interval that reaches a straight) is an empty field, never
//! NaN. Consecutive rows join exactly: each start is the previous end.
//!
//! With the placed design ([`write_elements_csv_placed`](crate::export::elements::write_elements_csv_placed)) ten columns
//! follow: `start_easting_m, start_northing_m, end_easting_m,
//! end_northing_m` (the element's ends on the design centreline: grid
//! coordinates with `--crs`, suffix in the grid's unit `_m`/`_usft`/`_ft`;
//! otherwise the local frame in the survey unit), `start_bearing_deg,
//! end_bearing_deg` (clockwise from north: true north when the survey is
//! placed, like `stations.csv`), and `clothoid_a_m`, the clothoid parameter
//! A = √(L / |1/R₂ − 1/R₁|) of a transition (A² = R·L from a straight;
//! empty for straights and arcs), then `placed_length_m,
//! placed_start_radius_m, placed_end_radius_m`: the element as placed
//! (`crate::place`: adjusted within the fit's uncertainty to pass the control
//! points and follow the measured centreline), the values the coordinates,
//! `alignment.xml` and `alignment.ifc` are drawn with.

use crate::fit::{Estimate, FitResult, FittedElement};
use crate::geometry::{Alignment, ElementKind, Pose, heading_to_bearing};
use crate::georef::{CrsError, Georef};
use crate::units::LengthUnit;
use std::io::{self, Write};

/// `x` with `dec` decimals, never `-0.000`; empty for a value that is not
/// finite. The fixed-decimal formatter of the CSV writers.
pub(crate) fn num(x: f64, dec: usize) -> String {
    if x.is_finite() {
        let s = format!("{x:.dec$}");
        // No "-0.000".
        if s.trim_start_matches('-')
            .chars()
            .all(|c| c == '0' || c == '.')
        {
            s.trim_start_matches('-').to_string()
        } else {
            s
        }
    } else {
        String::new()
    }
}

/// (value, se, lo, hi) of an estimate in `unit`, as strings.
fn est(e: Option<Estimate>, unit: LengthUnit, dec: usize, fixed: bool) -> [String; 4] {
    match e {
        None => Default::default(),
        Some(e) => {
            let v = num(unit.from_m(e.value), dec);
            if fixed {
                [v, String::new(), String::new(), String::new()]
            } else {
                [
                    v,
                    num(unit.from_m(e.se), dec),
                    num(unit.from_m(e.lo95), dec),
                    num(unit.from_m(e.hi95), dec),
                ]
            }
        }
    }
}

/// A radius interval only exists when it keeps one sign (it never reaches a straight).
fn radius(e: Option<Estimate>) -> Option<Estimate> {
    e.map(|mut r| {
        if r.lo95.signum() != r.hi95.signum() || !r.lo95.is_finite() || !r.hi95.is_finite() {
            r.lo95 = f64::NAN;
            r.hi95 = f64::NAN;
        }
        r
    })
}

/// The header of `elements.csv` for a survey in `unit`.
pub fn header(unit: LengthUnit) -> Vec<String> {
    let u = unit.suffix();
    let vu = unit.versine_unit().suffix();
    let mut h = vec![
        "element".to_string(),
        "kind".to_string(),
        format!("start_chainage_{u}"),
        format!("end_chainage_{u}"),
        format!("length_{u}"),
        format!("start_radius_{u}"),
        format!("end_radius_{u}"),
    ];
    for q in [
        "start_chainage",
        "end_chainage",
        "length",
        "start_radius",
        "end_radius",
    ] {
        for s in ["se", "lo95", "hi95"] {
            h.push(format!("{q}_{s}_{u}"));
        }
    }
    h.push(format!("residual_rms_{vu}"));
    h.push(format!("residual_max_{vu}"));
    h.push("readings".into());
    h.push("status".into());
    h.push("note".into());
    h
}

fn row(i: usize, e: &FittedElement, unit: LengthUnit) -> Vec<String> {
    let vu = unit.versine_unit();
    let vdec = if unit == LengthUnit::Foot { 3 } else { 2 };
    let sc = est(Some(e.start_chainage), unit, 3, e.starts_at_survey_end);
    let ec = est(Some(e.end_chainage), unit, 3, e.ends_at_survey_end);
    let ln = est(
        Some(e.length),
        unit,
        3,
        e.starts_at_survey_end || e.ends_at_survey_end,
    );
    let sr = est(radius(e.start_radius), unit, 3, false);
    let er = est(radius(e.end_radius), unit, 3, false);
    let mut r = vec![
        (i + 1).to_string(),
        e.kind.name().to_string(),
        sc[0].clone(),
        ec[0].clone(),
        ln[0].clone(),
        sr[0].clone(),
        er[0].clone(),
    ];
    for q in [&sc, &ec, &ln, &sr, &er] {
        r.extend_from_slice(&q[1..]);
    }
    r.push(num(vu.from_m(e.residual_rms), vdec));
    r.push(num(vu.from_m(e.residual_max), vdec));
    r.push(e.readings.to_string());
    r.push(e.status.name().to_string());
    r.push(e.note.clone());
    r
}

/// Write `elements.csv` for `fit` in the survey's length `unit`.
///
/// # Errors
/// Any I/O error of the writer.
pub fn write_elements_csv<W: Write>(fit: &FitResult, unit: LengthUnit, out: W) -> io::Result<()> {
    write_elements_csv_placed(fit, unit, None, out)
}

/// The ends of one element of the placed design.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ElementEnds {
    /// Start (easting, northing), in the unit of [`ElementPlacement::suffix`].
    pub start: (f64, f64),
    /// End (easting, northing).
    pub end: (f64, f64),
    /// Bearing at the start, degrees clockwise from north.
    pub start_bearing: f64,
    /// Bearing at the end.
    pub end_bearing: f64,
    /// Clothoid parameter A of a transition, metres.
    pub clothoid_a: Option<f64>,
    /// Centreline length of the placed element (m): the fitted length as
    /// adjusted to pass the control points and follow the measured
    /// centreline (`crate::place`).
    pub length: f64,
    /// Signed radius of the placed element at its start (m); `None` for zero curvature.
    pub start_radius: Option<f64>,
    /// Signed radius at its end (m).
    pub end_radius: Option<f64>,
}

/// Where the design's elements are: the extra columns of `elements.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct ElementPlacement {
    /// Unit suffix of the coordinates (`m`, `ft`, `usft`).
    pub suffix: &'static str,
    /// One entry per element.
    pub ends: Vec<ElementEnds>,
}

fn bearing_deg(g: Option<&Georef>, p: Pose) -> f64 {
    let b = match g {
        Some(g) => g.true_bearing(p),
        None => heading_to_bearing(p.heading),
    };
    // Keep bearings in [0, 360) at the written precision.
    if format!("{b:.6}") == "360.000000" {
        0.0
    } else {
        b
    }
}

impl ElementPlacement {
    /// The ends of every element of `al` (the design placed in the local
    /// frame): in the `--crs` grid when `georef` has one, otherwise local in
    /// the survey `unit`.
    ///
    /// # Errors
    /// [`CrsError`] when a point cannot be put in the grid.
    pub fn of(
        al: &Alignment,
        georef: Option<&Georef>,
        unit: LengthUnit,
    ) -> Result<ElementPlacement, CrsError> {
        let crs = georef.and_then(|g| g.crs.as_ref());
        let pos = |p: Pose| -> Result<(f64, f64), CrsError> {
            match (georef, crs) {
                (Some(g), Some(c)) => {
                    let (lon, lat) = g.placement.to_lonlat(p.x, p.y);
                    c.from_lonlat(lon, lat)
                }
                _ => Ok((unit.from_m(p.x), unit.from_m(p.y))),
            }
        };
        let mut ends = Vec::with_capacity(al.elements().len());
        for (i, e) in al.elements().iter().enumerate() {
            let p0 = al.element_pose(i);
            let p1 = e.advance(p0, e.length);
            let dk = (e.k_end - e.k_start).abs();
            ends.push(ElementEnds {
                start: pos(p0)?,
                end: pos(p1)?,
                start_bearing: bearing_deg(georef, p0),
                end_bearing: bearing_deg(georef, p1),
                clothoid_a: (e.kind == ElementKind::Transition && dk > 0.0)
                    .then(|| (e.length / dk).sqrt()),
                length: e.length,
                start_radius: (e.k_start != 0.0).then(|| 1.0 / e.k_start),
                end_radius: (e.k_end != 0.0).then(|| 1.0 / e.k_end),
            });
        }
        Ok(ElementPlacement {
            suffix: crs.map_or(unit.suffix(), |c| c.unit().suffix()),
            ends,
        })
    }
}

/// [`write_elements_csv`] with the placed design's columns when `placed` is
/// given (one entry per element).
///
/// # Errors
/// Any I/O error of the writer; `InvalidInput` when `placed` has the wrong length.
pub fn write_elements_csv_placed<W: Write>(
    fit: &FitResult,
    unit: LengthUnit,
    placed: Option<&ElementPlacement>,
    out: W,
) -> io::Result<()> {
    if let Some(p) = placed
        && p.ends.len() != fit.elements.len()
    {
        return Err(io::Error::new(
            io::ErrorKind::InvalidInput,
            format!(
                "elements.csv: {} placed elements for {} fitted ones",
                p.ends.len(),
                fit.elements.len()
            ),
        ));
    }
    let mut w = csv::Writer::from_writer(out);
    let mut h = header(unit);
    if let Some(p) = placed {
        let s = p.suffix;
        for c in [
            "start_easting",
            "start_northing",
            "end_easting",
            "end_northing",
        ] {
            h.push(format!("{c}_{s}"));
        }
        h.push("start_bearing_deg".into());
        h.push("end_bearing_deg".into());
        h.push(format!("clothoid_a_{}", unit.suffix()));
        for c in ["placed_length", "placed_start_radius", "placed_end_radius"] {
            h.push(format!("{c}_{}", unit.suffix()));
        }
    }
    w.write_record(h).map_err(io::Error::other)?;
    for (i, e) in fit.elements.iter().enumerate() {
        let mut r = row(i, e, unit);
        if let Some(p) = placed {
            let q = &p.ends[i];
            for v in [q.start.0, q.start.1, q.end.0, q.end.1] {
                r.push(num(v, 4));
            }
            r.push(num(q.start_bearing, 6));
            r.push(num(q.end_bearing, 6));
            r.push(
                q.clothoid_a
                    .map_or(String::new(), |a| num(unit.from_m(a), 3)),
            );
            r.push(num(unit.from_m(q.length), 3));
            for rad in [q.start_radius, q.end_radius] {
                r.push(rad.map_or(String::new(), |v| num(unit.from_m(v), 3)));
            }
        }
        w.write_record(r).map_err(io::Error::other)?;
    }
    w.flush()
}
