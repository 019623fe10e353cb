//! Is a point where its grid is meant for? Every point that goes through a
//! grid is checked against the grid's EPSG area of use; outside it, the
//! likely mistake is named (another zone or grid, easting and northing
//! swapped, metres for feet, a local site grid, longitude and latitude
//! swapped). Written here rather than taken from a crate because no Rust
//! crate carries the EPSG areas of use (crs-definitions 0.6 has only the
//! definitions); the areas come from `grids.csv` (see [`super::crs`]).

use super::crs::{Crs, CrsError, GridUnit, supported_codes};

/// Slack around an area of use, degrees (about 5 km of latitude): a track
/// that runs a little past a zone edge is still in its grid (common practice:
/// grids are used somewhat beyond their nominal area).
pub const AREA_MARGIN_DEG: f64 = 0.05;

/// The hint for small figures.
const LOCAL: &str = "figures this small look like a local site grid, not a national one: give the control points in the grid they were surveyed in, or in WGS 84 lon_deg/lat_deg";

/// What the refusal says to do when the coordinates are right after all.
const OVERRIDE: &str = "if the coordinates and the grid are right, give --allow-outside-area";

/// Up to `max` supported grids other than `crs` in which the point is in
/// the area of use; `position` gives the point's longitude/latitude in a
/// grid. Grids that put the point nearest the area of `crs` come first (the
/// user named a grid for the right region), then grids on the same datum
/// (name before " / "), then the smaller areas.
fn grids_holding(
    crs: &Crs,
    max: usize,
    position: impl Fn(&Crs) -> Option<(f64, f64)>,
) -> Vec<String> {
    let family = crs.name().split(" / ").next().unwrap_or("").to_string();
    let mut found = Vec::new();
    for code in supported_codes() {
        if code == crs.code() {
            continue;
        }
        let Ok(c) = Crs::from_epsg(code) else {
            continue;
        };
        let Some((lon, lat)) = position(&c).filter(|&(lon, lat)| inside(&c, lon, lat)) else {
            continue;
        };
        let a = c.area();
        let key = (
            distance_deg(crs, lon, lat),
            !c.name().starts_with(&family),
            (a.east - a.west) * (a.north - a.south),
        );
        found.push((key, format!("EPSG:{code} ({})", c.name())));
    }
    found.sort_by(|a, b| a.0.partial_cmp(&b.0).unwrap_or(std::cmp::Ordering::Equal));
    found.into_iter().take(max).map(|(_, l)| l).collect()
}

/// How far a point is outside the area of `c`, degrees (0 inside).
fn distance_deg(c: &Crs, lon: f64, lat: f64) -> f64 {
    let a = c.area();
    let dx = (a.west - lon).max(lon - a.east).max(0.0);
    let dy = (a.south - lat).max(lat - a.north).max(0.0);
    dx.hypot(dy)
}

fn inside(c: &Crs, lon: f64, lat: f64) -> bool {
    c.area().contains(lon, lat, AREA_MARGIN_DEG)
}

fn grid_inside(c: &Crs, e: f64, n: f64) -> bool {
    c.to_lonlat(e, n)
        .is_ok_and(|(lon, lat)| inside(c, lon, lat))
}

fn refuse(crs: &Crs, what: &str, at: String, hint: String) -> CrsError {
    CrsError::OutsideArea {
        code: crs.code(),
        message: format!(
            "{what} {at} is outside the area of use of EPSG:{} ({}: {}); {hint}; {OVERRIDE}",
            crs.code(),
            crs.name(),
            crs.area()
        ),
    }
}

/// Check grid coordinates given by the user (`--start-grid`, a control file)
/// against the area of use of `crs`.
///
/// # Errors
/// [`CrsError::OutsideArea`] naming the likely mistake.
pub fn check_grid_point(crs: &Crs, what: &str, e: f64, n: f64) -> Result<(), CrsError> {
    if grid_inside(crs, e, n) {
        return Ok(());
    }
    let at = match crs.to_lonlat(e, n) {
        Ok((lon, lat)) => {
            format!("(easting {e}, northing {n}: longitude {lon:.4}, latitude {lat:.4})")
        }
        Err(_) => format!("(easting {e}, northing {n}, not even in the projection's domain)"),
    };
    Err(refuse(crs, what, at, grid_hint(crs, e, n)))
}

fn grid_hint(crs: &Crs, e: f64, n: f64) -> String {
    if grid_inside(crs, n, e) {
        return "easting and northing look swapped: write easting first".into();
    }
    let ft = GridUnit::UsSurveyFoot.metres();
    if crs.unit() == GridUnit::Metre && grid_inside(crs, e * ft, n * ft) {
        return "the coordinates look like feet, but this grid is in metres".into();
    }
    if crs.unit() != GridUnit::Metre {
        let k = 1.0 / crs.unit().metres();
        if grid_inside(crs, e * k, n * k) {
            return format!(
                "the coordinates look like metres, but this grid is in {}",
                crs.unit().name()
            );
        }
    }
    let others = grids_holding(crs, 3, |c| c.to_lonlat(e, n).ok());
    let local = e.abs() < 100_000.0 && n.abs() < 100_000.0;
    match (local, others.is_empty()) {
        (true, true) => return LOCAL.into(),
        (true, false) => return format!("{LOCAL} (they would also fit {})", others.join(", ")),
        (false, false) => {
            return format!(
                "these figures fit another grid, e.g. {}: check the zone and --crs",
                others.join(", ")
            );
        }
        (false, true) => {}
    }
    "check the coordinates and --crs".into()
}

/// Check a WGS 84 point against the area of use of `crs`; `lonlat_given`
/// says the user typed it as longitude,latitude (so a swap is worth naming).
///
/// # Errors
/// [`CrsError::OutsideArea`] naming the likely mistake.
pub fn check_lonlat_point(
    crs: &Crs,
    what: &str,
    lon: f64,
    lat: f64,
    lonlat_given: bool,
) -> Result<(), CrsError> {
    if inside(crs, lon, lat) {
        return Ok(());
    }
    let hint = if lonlat_given && inside(crs, lat, lon) {
        "longitude and latitude look swapped: the order is longitude,latitude".to_string()
    } else {
        let others = grids_holding(crs, 4, |_| Some((lon, lat)));
        if others.is_empty() {
            "no supported grid covers this point: check the position".to_string()
        } else {
            format!("grids for this place include {}", others.join(", "))
        }
    };
    Err(refuse(
        crs,
        what,
        format!("(longitude {lon:.6}, latitude {lat:.6})"),
        hint,
    ))
}
