//! Reading a control-point file, phase by phase: the lines (our own loop, so
//! that line numbers count comments and blank lines), the header (which
//! columns, which coordinates, which units), each point, and the checks
//! between points.

use std::io::Read;

use crate::diag::{Diagnostic, Location};

use super::super::crs::Crs;
use super::super::place::{LonLat, PlaceError};
use super::{ControlError, ControlPoint, ControlSet, DEFAULT_SD, distinct};

#[derive(Clone, Copy, PartialEq)]
enum Coords {
    LonLat(usize, usize),
    Grid(usize, usize),
}

fn find(headers: &[String], names: &[&str]) -> Option<(usize, String)> {
    headers
        .iter()
        .position(|h| names.contains(&h.as_str()))
        .map(|i| (i, headers[i].clone()))
}

/// Columns the reader knows.
const KNOWN: [&str; 11] = [
    "chainage_m",
    "chainage_ft",
    "lon_deg",
    "lat_deg",
    "easting_m",
    "northing_m",
    "sd_m",
    "sd_mm",
    "sd_ft",
    "id",
    "note",
];

/// What the header says: where each value is and in which unit.
struct Columns {
    headers: Vec<String>,
    chainage: usize,
    chainage_scale: f64,
    coords: Coords,
    sd: Option<(usize, String)>,
    id: Option<usize>,
}

/// Read a control-point file (format in the module documentation).
///
/// `crs` is the grid named by `--crs`; it is required when the file has
/// `easting_m`/`northing_m` columns and unused for `lon_deg`/`lat_deg`
/// (always WGS 84).
///
/// # Errors
/// [`ControlError`] naming the file, line and column and saying what to do.
///
/// # Examples
/// ```
/// use chordline::georef::read_controls;
/// let text = "# fixes\nid,chainage_m,lon_deg,lat_deg\nA,0,9.0,48.0\nB,500,9.005,48.002\n";
/// let (set, notes) = read_controls(text.as_bytes(), "cp.csv", None).unwrap();
/// assert_eq!(set.points.len(), 2);
/// assert_eq!(set.points[1].line, 4);
/// assert!(notes.is_empty());
/// ```
pub fn read_controls(
    mut reader: impl Read,
    file: &str,
    crs: Option<&Crs>,
) -> Result<(ControlSet, Vec<Diagnostic>), ControlError> {
    let fname = file.to_string();
    let mut text = String::new();
    reader
        .read_to_string(&mut text)
        .map_err(|e| ControlError::Io {
            file: fname.clone(),
            message: format!("{e} (the file must be UTF-8 text)"),
        })?;
    let mut records = records(&text, &fname)?.into_iter();
    let Some((header_line, header)) = records.next() else {
        return Err(ControlError::Empty { file: fname });
    };
    let (cols, diags) = columns(&header, header_line, &fname, crs)?;
    let mut points: Vec<ControlPoint> = Vec::new();
    for (line, rec) in records {
        points.push(point(&cols, &rec, line, &fname, crs)?);
    }
    if points.is_empty() {
        return Err(ControlError::Empty { file: fname });
    }
    distinct::check_distinct(&fname, &points)?;
    points.sort_by(|a, b| a.chainage.total_cmp(&b.chainage));
    check_chainages(&fname, &points)?;
    Ok((
        ControlSet {
            file: fname,
            points,
        },
        diags,
    ))
}

/// The non-blank, non-comment lines as CSV records with their 1-based line.
fn records(text: &str, fname: &str) -> Result<Vec<(usize, csv::StringRecord)>, ControlError> {
    let mut records = Vec::new();
    for (i, raw) in text.trim_start_matches('\u{feff}').lines().enumerate() {
        let t = raw.trim();
        if t.is_empty() || t.starts_with('#') {
            continue;
        }
        let mut r = csv::ReaderBuilder::new()
            .has_headers(false)
            .trim(csv::Trim::All)
            .flexible(true)
            .from_reader(t.as_bytes());
        let rec = r
            .records()
            .next()
            .unwrap_or_else(|| Ok(csv::StringRecord::new()))
            .map_err(|e| ControlError::Io {
                file: fname.to_string(),
                message: format!("line {}: {e}", i + 1),
            })?;
        records.push((i + 1, rec));
    }
    Ok(records)
}

/// The header: the columns used, the coordinate pair, and a note for every
/// column not used.
fn columns(
    header: &csv::StringRecord,
    header_line: usize,
    fname: &str,
    crs: Option<&Crs>,
) -> Result<(Columns, Vec<Diagnostic>), ControlError> {
    let headers: Vec<String> = header.iter().map(|h| h.to_ascii_lowercase()).collect();
    let header_err = |m: String| ControlError::Header {
        file: fname.to_string(),
        line: header_line,
        message: m,
    };
    if headers.len() == 1 && headers[0].contains(';') {
        return Err(header_err(format!(
            "the header '{}' is one field: this file separates its fields with semicolons, and a control-point file is comma-separated; save it with commas between fields and decimal points (e.g. chainage_m,lon_deg,lat_deg)",
            crate::diag::quote_capped(&headers[0])
        )));
    }
    let (ch_col, ch_name) = find(&headers, &["chainage_m", "chainage_ft"]).ok_or_else(|| {
        header_err(format!(
            "no chainage column: the header needs chainage_m (or chainage_ft); it has: {}",
            headers.join(", ")
        ))
    })?;
    let chainage_scale = if ch_name.ends_with("_ft") {
        crate::units::FOOT
    } else {
        1.0
    };
    let lon = find(&headers, &["lon_deg"]);
    let lat = find(&headers, &["lat_deg"]);
    let east = find(&headers, &["easting_m"]);
    let north = find(&headers, &["northing_m"]);
    let coords = match (lon, lat, east, north) {
        (Some(a), Some(b), None, None) => Coords::LonLat(a.0, b.0),
        (None, None, Some(a), Some(b)) => Coords::Grid(a.0, b.0),
        (Some(_), Some(_), Some(_), Some(_)) => {
            return Err(header_err(
                "the header has both lon_deg/lat_deg and easting_m/northing_m: keep one pair (one file, one kind of coordinates)".into(),
            ));
        }
        _ => {
            return Err(header_err(format!(
                "the header needs a coordinate pair, lon_deg and lat_deg (WGS 84) or easting_m and northing_m (grid, with --crs); it has: {}",
                headers.join(", ")
            )));
        }
    };
    if matches!(coords, Coords::Grid(..)) && crs.is_none() {
        return Err(ControlError::NeedsCrs {
            file: fname.to_string(),
        });
    }
    let diags = headers
        .iter()
        .filter(|h| !KNOWN.contains(&h.as_str()))
        .map(|h| {
            Diagnostic::note(format!("column '{h}' is not used"))
                .at(Location {
                    file: fname.to_string(),
                    line: header_line,
                    column: Some(h.clone()),
                })
                .hint("known columns: chainage_m, lon_deg, lat_deg, easting_m, northing_m, sd_m, id, note")
        })
        .collect();
    let cols = Columns {
        sd: find(&headers, &["sd_m", "sd_mm", "sd_ft"]),
        id: find(&headers, &["id"]).map(|c| c.0),
        headers,
        chainage: ch_col,
        chainage_scale,
        coords,
    };
    Ok((cols, diags))
}

/// One control point from its line.
fn point(
    cols: &Columns,
    rec: &csv::StringRecord,
    line: usize,
    fname: &str,
    crs: Option<&Crs>,
) -> Result<ControlPoint, ControlError> {
    let value_err = |col: &str, m: String| ControlError::Value {
        file: fname.to_string(),
        line,
        column: col.to_string(),
        message: m,
    };
    let num = |i: usize| -> Result<f64, ControlError> {
        let col = &cols.headers[i];
        let t = rec.get(i).unwrap_or("");
        if t.is_empty() {
            return Err(value_err(
                col,
                "empty: every control point needs this value".into(),
            ));
        }
        let v: f64 = t
            .parse()
            .map_err(|_| value_err(col, format!("'{t}' is not a number")))?;
        if !v.is_finite() {
            return Err(value_err(col, format!("'{t}' is not a finite number")));
        }
        Ok(v)
    };
    let chainage = num(cols.chainage)? * cols.chainage_scale;
    let sd = match &cols.sd {
        Some((i, name)) if !rec.get(*i).unwrap_or("").is_empty() => {
            let v = num(*i)?
                * match name.as_str() {
                    "sd_mm" => 1e-3,
                    "sd_ft" => crate::units::FOOT,
                    _ => 1.0,
                };
            if v <= 0.0 {
                return Err(value_err(
                    name,
                    "a standard deviation must be positive: give the point's accuracy, e.g. 0.02 (m)".into(),
                ));
            }
            v
        }
        _ => DEFAULT_SD,
    };
    let (lonlat, grid) = match cols.coords {
        Coords::LonLat(a, b) => {
            let (lo, la) = (num(a)?, num(b)?);
            let ll = LonLat::new(lo, la).map_err(|e| match e {
                PlaceError::Latitude { .. } => value_err(
                    "lat_deg",
                    format!("latitude {la} is outside -90..90 degrees: check the value and that lon_deg and lat_deg are not swapped"),
                ),
                _ => value_err("lon_deg", format!("longitude {lo} is outside -180..180 degrees")),
            })?;
            (ll, None)
        }
        Coords::Grid(a, b) => {
            let (e, n) = (num(a)?, num(b)?);
            let Some(crs) = crs else {
                return Err(ControlError::NeedsCrs {
                    file: fname.to_string(),
                });
            };
            let (lo, la) = crs.to_lonlat(e, n).map_err(|err| {
                value_err(
                    "easting_m",
                    format!(
                        "{err}; check that the coordinates belong to EPSG:{}",
                        crs.code()
                    ),
                )
            })?;
            let ll = LonLat::new(lo, la).map_err(|err| value_err("easting_m", err.to_string()))?;
            (ll, Some((e, n)))
        }
    };
    let id = cols
        .id
        .and_then(|i| rec.get(i))
        .filter(|s| !s.is_empty())
        .map_or_else(|| format!("CP{line}"), str::to_string);
    Ok(ControlPoint {
        id,
        chainage,
        lonlat,
        grid,
        sd,
        line,
    })
}

/// Refuse two points (in chainage order) at the same chainage.
fn check_chainages(fname: &str, points: &[ControlPoint]) -> Result<(), ControlError> {
    for w in points.windows(2) {
        if w[1].chainage == w[0].chainage {
            return Err(ControlError::Contradiction {
                file: fname.to_string(),
                line: w[1].line,
                message: format!(
                    "control points '{}' (line {}) and '{}' (line {}) have the same chainage {} m: keep one of them",
                    w[0].id, w[0].line, w[1].id, w[1].line, w[0].chainage
                ),
            });
        }
    }
    Ok(())
}
