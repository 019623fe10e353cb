//! `stations.csv`: one row per survey station with the reconstructed plan.
//!
//! Columns, in this order (metric surveys; imperial surveys use `_ft` for
//! lengths, `_in` for versines):
//!
//! | column | unit | decimals | meaning |
//! |---|---|---|---|
//! | `chainage_m` | m | 3 | survey chainage along the measured rail |
//! | `versine_mm` | mm | 2 (in: 3) | field versine as read; empty for a missing reading |
//! | `curvature_1_per_km` | 1/km | 6 | centreline curvature, positive curving left |
//! | `bearing_deg` | ° | 6 | centreline bearing, clockwise from north |
//! | `easting_m`, `northing_m` | m | 4 | centreline position |
//! | `position_sd_m` | m | 4 | standard deviation of the lateral position |
//! | `heading_sd_deg` | ° | 6 | standard deviation of the bearing |
//! | `side` | | | `left` or `right`: the rail measured |
//! | `rail_easting_m`, `rail_northing_m` | m | 4 | running edge of the measured rail |
//! | `degree_of_curve` | ° | 4 | imperial surveys only: **chord definition**, the angle a 100 ft chord subtends, `2 asin(50 ft/R)` (North American railway usage, AREMA Manual for Railway Engineering ch. 5, from memory), signed like the curvature; empty under R 50 ft |
//! | `design_versine_mm`, `residual_mm` | mm | 2 (in: 3) | with a design: its versine and measured − design |
//! | `design_easting_m`, `design_northing_m` | m | 4 | with a design: its centreline position |
//! | `slew_mm`, `slew_sd_mm` | mm | 2 (in: 3) | with slews: lateral move onto the design, positive to the left, and its sd |
//! | `longitude_deg`, `latitude_deg` | ° | 8 | placed surveys (WGS 84); `bearing_deg` is then from true north |
//! | `local_easting_m`, `local_northing_m` | m | 4 | with `--crs` only: the centreline in the local ground frame |
//! | `curvature_deg_per_100ft` | °/100 ft | 6 | imperial surveys only, last: centreline curvature as the turn in degrees per 100 ft along the track (equal to the **arc-definition** degree of curve `5729.58/R[ft]`, and linear in the curvature, so defined on transitions and straights too); `curvature_1_per_km` stays for the contract |
//!
//! With `--crs`, every `easting`/`northing` column (centreline, rail,
//! design) holds **grid coordinates** of that system, and its suffix is the
//! grid's unit (`_m`, `_usft` for US survey feet, `_ft` for international
//! feet); the local frame, which those columns hold otherwise, moves to
//! `local_easting`, `local_northing` (survey unit) at the end of the row.
//!
//! Numbers have fixed decimals, so the same plan always gives the same bytes.
//! A value that is not finite is refused (an error), never written as NaN.

use crate::fit::StationDesign;
use crate::integrate::{Plan, Station};
use crate::realign::StationSlew;
use crate::units::{LengthUnit, VersineUnit};
use rayon::prelude::*;
use std::io::{self, Write};

const POW10: [f64; 10] = [1.0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9];

fn num(out: &mut String, v: f64, dp: usize, col: &str, chainage: f64) -> io::Result<()> {
    use std::fmt::Write as _;
    if !v.is_finite() {
        return Err(io::Error::new(
            io::ErrorKind::InvalidData,
            format!("stations.csv: {col} at chainage {chainage:.3} m is not a finite number"),
        ));
    }
    // Fixed decimals through integers (much faster than float formatting for
    // a million rows; deterministic). A value that rounds to zero is written
    // without a sign.
    let x = (v * POW10[dp]).round();
    if x.abs() < 9e15 {
        let xi = x.abs() as u64;
        if x < 0.0 && xi != 0 {
            out.push('-');
        }
        push_fixed(out, xi, dp);
    } else {
        let _ = write!(out, "{v:.dp$}");
    }
    Ok(())
}

/// Write the whole number `xi` as a decimal with `dp` decimals (`xi / 10^dp`,
/// at least one digit before the point), without the formatting machinery:
/// a million rows of a dozen numbers each are most of the writing time.
fn push_fixed(out: &mut String, mut xi: u64, dp: usize) {
    let mut buf = [0u8; 24];
    let mut i = buf.len();
    let mut written = 0;
    while xi > 0 || written <= dp {
        if written == dp && dp > 0 {
            i -= 1;
            buf[i] = b'.';
        }
        i -= 1;
        buf[i] = b'0' + (xi % 10) as u8;
        xi /= 10;
        written += 1;
    }
    // ASCII digits and a point: appended as one slice, not char by char.
    out.push_str(std::str::from_utf8(&buf[i..]).unwrap_or_default());
}

/// Write `stations.csv` for `plan` in `unit` (metres or feet; versines in mm
/// or inches to match), with the design columns when `design` is given (one
/// entry per station).
///
/// # Errors
/// An I/O error from `w`; `InvalidInput` when `design` has the wrong length;
/// `InvalidData` when a value is not finite.
///
/// # Examples
/// ```
/// use chordline::export::stations::write_stations;
/// use chordline::integrate::{NoiseSource, Plan, Station};
/// use chordline::survey::{Rail, Setup};
/// use chordline::units::{LengthUnit, VersineUnit};
/// let st = Station { chainage: 10.0, versine: Some(0.0125), rail: Rail::Left, line: 2, curvature: 0.002,
///     heading: std::f64::consts::FRAC_PI_2, x: 1.0, y: 2.0, rail_x: 0.2825, rail_y: 2.0,
///     position_sd: 0.001, heading_sd: 1e-4 };
/// let plan = Plan { stations: vec![st], reading_sd: 1e-3, noise_source: NoiseSource::Stated,
///     position_residuals: vec![], setup: Setup::new(20.0, Rail::Left), source: "s.csv".into(),
///     versine_unit: VersineUnit::Millimetre, resolution: None };
/// let mut out = Vec::new();
/// write_stations(&mut out, &plan, LengthUnit::Metre, None).unwrap();
/// let text = String::from_utf8(out).unwrap();
/// assert!(text.starts_with("chainage_m,versine_mm,curvature_1_per_km,bearing_deg,easting_m,northing_m,position_sd_m"));
/// assert!(text.lines().nth(1).unwrap().starts_with("10.000,12.50,2.000000,0.000000,1.0000,2.0000,0.0010"));
/// ```
pub fn write_stations(
    w: impl Write,
    plan: &Plan,
    unit: LengthUnit,
    design: Option<&[StationDesign]>,
) -> io::Result<()> {
    write_stations_with(
        w,
        plan,
        unit,
        &StationExtras {
            design: design.map(DesignColumns::Rows),
            ..StationExtras::default()
        },
    )
}

/// Where a placed survey is on the Earth at one station.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GeoAtStation {
    /// WGS 84 longitude of the centreline, degrees.
    pub lon: f64,
    /// WGS 84 latitude of the centreline, degrees.
    pub lat: f64,
    /// Bearing of the centreline from true north, degrees clockwise.
    pub true_bearing: f64,
}

/// Grid coordinates (grid units) at every station, for a survey placed with `--crs`.
#[derive(Debug, Clone, Copy)]
pub struct GridColumns<'a> {
    /// The grid's unit (column suffix).
    pub unit: crate::georef::GridUnit,
    /// Centreline (easting, northing).
    pub centre: &'a [(f64, f64)],
    /// Running edge of the measured rail (easting, northing).
    pub rail: &'a [(f64, f64)],
    /// Design centreline (easting, northing), with a design.
    pub design: Option<&'a [(f64, f64)]>,
}

/// The design columns of `stations.csv` (`design_versine`, `residual`,
/// `design_easting`, `design_northing`), one entry per station.
#[derive(Debug, Clone, Copy)]
pub enum DesignColumns<'a> {
    /// A row per station, as [`crate::place::PlacedDesign::station_design`] gives them.
    Rows(&'a [StationDesign]),
    /// The placed design's centreline and versine at each station with the
    /// fit's residuals moved onto it (what a run holds: no copy of the fit's
    /// per-reading columns).
    Fit {
        /// The fit (its `chainages`, `design_versine` and `residual`).
        fit: &'a crate::fit::FitResult,
        /// The design centreline (easting, northing) at each station.
        xy: &'a [(f64, f64)],
        /// The placed design's versine at each station (field convention, m).
        versine: &'a [f64],
    },
}

impl DesignColumns<'_> {
    /// Stations covered (the shortest of the columns).
    pub fn len(&self) -> usize {
        match self {
            DesignColumns::Rows(r) => r.len(),
            DesignColumns::Fit { fit, xy, versine } => xy
                .len()
                .min(versine.len())
                .min(fit.chainages.len())
                .min(fit.design_versine.len())
                .min(fit.residual.len()),
        }
    }

    /// Whether there are no stations.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The values at station `i` (`i < len()`).
    fn at(&self, i: usize) -> StationDesign {
        match self {
            DesignColumns::Rows(r) => r[i],
            DesignColumns::Fit { fit, xy, versine } => StationDesign {
                chainage: fit.chainages[i],
                design_versine: versine[i],
                residual: crate::results::placed_residual(
                    fit.residual[i],
                    versine[i],
                    fit.design_versine[i],
                ),
                x: xy[i].0,
                y: xy[i].1,
            },
        }
    }
}

/// Optional column groups of `stations.csv`, one entry per station each.
#[derive(Debug, Clone, Copy, Default)]
pub struct StationExtras<'a> {
    /// With `--crs`: grid coordinates for the `easting`/`northing` columns
    /// (the local frame then goes to `local_easting`, `local_northing`).
    pub grid: Option<GridColumns<'a>>,
    /// The fitted design: `design_versine`, `residual`, `design_easting`, `design_northing`.
    pub design: Option<DesignColumns<'a>>,
    /// A placed survey: `bearing_deg` becomes the true bearing, and
    /// `longitude_deg`, `latitude_deg` are added.
    pub geo: Option<&'a [GeoAtStation]>,
    /// Slews onto the design: `slew`, `slew_sd` (versine unit).
    pub slews: Option<&'a [StationSlew]>,
}

/// [`write_stations`] with any of the optional column groups.
///
/// # Errors
/// As [`write_stations`]; `InvalidInput` when a group has the wrong length.
pub fn write_stations_with(
    w: impl Write,
    plan: &Plan,
    unit: LengthUnit,
    extras: &StationExtras,
) -> io::Result<()> {
    let n = plan.stations.len();
    for (what, len) in [
        ("design", extras.design.map(|d| d.len())),
        ("geographic", extras.geo.map(<[_]>::len)),
        ("slew", extras.slews.map(<[_]>::len)),
        ("grid", extras.grid.map(|g| g.centre.len())),
        ("grid rail", extras.grid.map(|g| g.rail.len())),
        (
            "grid design",
            extras.grid.and_then(|g| g.design.map(<[_]>::len)),
        ),
    ] {
        if let Some(len) = len
            && len != n
        {
            return Err(io::Error::new(
                io::ErrorKind::InvalidInput,
                format!("stations.csv: the {what} columns have {len} stations but the plan {n}"),
            ));
        }
    }
    let mut w = io::BufWriter::new(w);
    let vu = unit.versine_unit();
    let v_dp = if vu == VersineUnit::Inch { 3 } else { 2 };
    let imperial = unit == LengthUnit::Foot;
    w.write_all(header(unit, extras).as_bytes())?;
    let rows = Rows {
        plan,
        unit,
        extras,
        vu,
        v_dp,
        imperial,
    };
    // Blocks formatted on the pool's threads a batch at a time, written in
    // order (the first error in row order is the one reported).
    let starts: Vec<usize> = (0..n).step_by(ROW_BLOCK).collect();
    for batch in starts.chunks(ROW_BATCH) {
        let texts: Vec<io::Result<String>> = batch
            .par_iter()
            .map(|&lo| rows.block(lo, (lo + ROW_BLOCK).min(n)))
            .collect();
        for t in texts {
            w.write_all(t?.as_bytes())?;
        }
    }
    w.flush()
}

/// Stations per block of `stations.csv` formatted at once, and blocks per batch.
const ROW_BLOCK: usize = 4096;
const ROW_BATCH: usize = 8;

/// What every row of one `stations.csv` needs.
struct Rows<'a> {
    plan: &'a Plan,
    unit: LengthUnit,
    extras: &'a StationExtras<'a>,
    vu: VersineUnit,
    v_dp: usize,
    imperial: bool,
}

impl Rows<'_> {
    /// The rows of stations `lo..hi`, as text.
    fn block(&self, lo: usize, hi: usize) -> io::Result<String> {
        let mut out = String::with_capacity((hi - lo) * 160);
        let mut row = String::with_capacity(256);
        for (i, s) in self.plan.stations.iter().enumerate().take(hi).skip(lo) {
            row.clear();
            self.row(&mut row, i, s)?;
            row.push('\n');
            out.push_str(&row);
        }
        Ok(out)
    }

    /// Station `i`'s row (without its newline).
    fn row(&self, row: &mut String, i: usize, s: &Station) -> io::Result<()> {
        let (unit, vu, v_dp, imperial, extras) =
            (self.unit, self.vu, self.v_dp, self.imperial, self.extras);
        let design = extras.design;
        let g_unit = extras.grid.map(|g| g.unit);
        // Coordinates in the output unit: the grid's (already in it) or the survey's.
        let xy = |local: f64, grid: Option<f64>| grid.unwrap_or_else(|| unit.from_m(local));
        let c = s.chainage;
        num(row, unit.from_m(c), 3, "chainage", c)?;
        row.push(',');
        if let Some(v) = s.versine {
            num(row, vu.from_m(v), v_dp, "versine", c)?;
        }
        row.push(',');
        num(row, s.curvature * 1e3, 6, "curvature", c)?;
        row.push(',');
        let b = match extras.geo {
            Some(g) => g[i].true_bearing.rem_euclid(360.0),
            None => crate::geometry::heading_to_bearing(s.heading),
        };
        // 359.9999996 would print as 360.000000: keep bearings in [0, 360).
        let b = if b > 359.999_99 && format!("{b:.6}") == "360.000000" {
            0.0
        } else {
            b
        };
        num(row, b, 6, "bearing", c)?;
        let gc = extras.grid.map(|g| g.centre[i]);
        for (val, col, dp) in [
            (xy(s.x, gc.map(|g| g.0)), "easting", 4),
            (xy(s.y, gc.map(|g| g.1)), "northing", 4),
            (unit.from_m(s.position_sd), "position_sd", 4),
            (s.heading_sd.to_degrees(), "heading_sd", 6),
        ] {
            row.push(',');
            num(row, val, dp, col, c)?;
        }
        row.push(',');
        row.push_str(s.rail.name());
        let gr = extras.grid.map(|g| g.rail[i]);
        for (val, col) in [
            (xy(s.rail_x, gr.map(|g| g.0)), "rail_easting"),
            (xy(s.rail_y, gr.map(|g| g.1)), "rail_northing"),
        ] {
            row.push(',');
            num(row, val, 4, col, c)?;
        }
        if imperial {
            row.push(',');
            let d = if s.curvature == 0.0 {
                Some(0.0)
            } else {
                crate::integrate::degree_of_curve(1.0 / s.curvature)
                    .map(|d| d * s.curvature.signum())
            };
            if let Some(d) = d {
                num(row, d, 4, "degree_of_curve", c)?;
            }
        }
        if let Some(d) = design {
            let d = d.at(i);
            row.push(',');
            num(row, vu.from_m(d.design_versine), v_dp, "design_versine", c)?;
            row.push(',');
            if let Some(r) = d.residual {
                num(row, vu.from_m(r), v_dp, "residual", c)?;
            }
            let gd = extras.grid.and_then(|g| g.design).map(|g| g[i]);
            for (val, col) in [
                (xy(d.x, gd.map(|g| g.0)), "design_easting"),
                (xy(d.y, gd.map(|g| g.1)), "design_northing"),
            ] {
                row.push(',');
                num(row, val, 4, col, c)?;
            }
        }
        if let Some(sl) = extras.slews {
            for (val, col) in [(sl[i].slew, "slew"), (sl[i].sd, "slew_sd")] {
                row.push(',');
                num(row, vu.from_m(val), v_dp, col, c)?;
            }
        }
        if let Some(g) = extras.geo {
            for (val, col) in [(g[i].lon, "longitude"), (g[i].lat, "latitude")] {
                row.push(',');
                num(row, val, 8, col, c)?;
            }
        }
        if g_unit.is_some() {
            for (val, col) in [
                (unit.from_m(s.x), "local_easting"),
                (unit.from_m(s.y), "local_northing"),
            ] {
                row.push(',');
                num(row, val, 4, col, c)?;
            }
        }
        if imperial {
            row.push(',');
            let per_100ft = (s.curvature * unit.to_m(100.0)).to_degrees();
            num(row, per_100ft, 6, "curvature_deg_per_100ft", c)?;
        }
        Ok(())
    }
}

/// The header line (with its newline) for the column groups present.
fn header(unit: LengthUnit, extras: &StationExtras) -> String {
    let l = unit.suffix();
    let v = unit.versine_unit().suffix();
    let g = extras.grid.map_or(l, |g| g.unit.suffix());
    let mut head = format!(
        "chainage_{l},versine_{v},curvature_1_per_km,bearing_deg,easting_{g},northing_{g},position_sd_{l},heading_sd_deg,side,rail_easting_{g},rail_northing_{g}"
    );
    if unit == LengthUnit::Foot {
        head.push_str(",degree_of_curve");
    }
    if extras.design.is_some() {
        head.push_str(&format!(
            ",design_versine_{v},residual_{v},design_easting_{g},design_northing_{g}"
        ));
    }
    if extras.slews.is_some() {
        head.push_str(&format!(",slew_{v},slew_sd_{v}"));
    }
    if extras.geo.is_some() {
        head.push_str(",longitude_deg,latitude_deg");
    }
    if extras.grid.is_some() {
        head.push_str(&format!(",local_easting_{l},local_northing_{l}"));
    }
    if unit == LengthUnit::Foot {
        head.push_str(",curvature_deg_per_100ft");
    }
    head.push('\n');
    head
}

/// Grid coordinates at every station, owned (see [`GridColumns`]).
#[derive(Debug, Clone, PartialEq)]
pub struct GridCoords {
    /// The grid's unit.
    pub unit: crate::georef::GridUnit,
    /// Centreline.
    pub centre: Vec<(f64, f64)>,
    /// Measured rail.
    pub rail: Vec<(f64, f64)>,
    /// Design centreline, with a design.
    pub design: Option<Vec<(f64, f64)>>,
}

impl GridCoords {
    /// Grid coordinates of a survey placed with `--crs` (`None` without a
    /// grid), each centreline point checked against the grid's area of use.
    ///
    /// # Errors
    /// [`crate::georef::CrsError`] for a station outside the area of use
    /// (unless `--allow-outside-area`) or outside the projection.
    pub fn of(
        g: &crate::georef::Georef,
        plan: &Plan,
        design: Option<DesignColumns>,
    ) -> Result<Option<GridCoords>, crate::georef::CrsError> {
        let Some(crs) = &g.crs else { return Ok(None) };
        let to_grid = |x: f64, y: f64| {
            let (lon, lat) = g.placement.to_lonlat(x, y);
            crs.from_lonlat(lon, lat)
        };
        let mut centre = Vec::with_capacity(plan.stations.len());
        let mut rail = Vec::with_capacity(plan.stations.len());
        for s in &plan.stations {
            let (lon, lat) = g.placement.to_lonlat(s.x, s.y);
            g.check_in_area(
                &format!("the station at chainage {:.3} m", s.chainage),
                lon,
                lat,
            )?;
            centre.push(crs.from_lonlat(lon, lat)?);
            rail.push(to_grid(s.rail_x, s.rail_y)?);
        }
        let design = design
            .map(|d| {
                (0..d.len())
                    .map(|i| d.at(i))
                    .map(|p| to_grid(p.x, p.y))
                    .collect::<Result<Vec<_>, _>>()
            })
            .transpose()?;
        Ok(Some(GridCoords {
            unit: crs.unit(),
            centre,
            rail,
            design,
        }))
    }

    /// As the borrowed columns of [`StationExtras::grid`].
    pub fn columns(&self) -> GridColumns<'_> {
        GridColumns {
            unit: self.unit,
            centre: &self.centre,
            rail: &self.rail,
            design: self.design.as_deref(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::num;

    /// The reference: the standard formatter on the rounded whole number.
    fn reference(v: f64, dp: usize) -> String {
        let x = (v * 10f64.powi(dp as i32)).round();
        let xi = x.abs() as u64;
        let p = 10u64.pow(dp as u32);
        let sign = if x < 0.0 && xi != 0 { "-" } else { "" };
        if dp == 0 {
            format!("{sign}{xi}")
        } else {
            format!("{sign}{}.{:0w$}", xi / p, xi % p, w = dp)
        }
    }

    #[test]
    fn fixed_decimals_match_the_standard_formatter() {
        let values = [
            0.0,
            -0.0,
            1e-9,
            -1e-9,
            0.004,
            0.005,
            -0.005,
            0.5,
            1.0,
            9.99999,
            10.0,
            123.456789,
            -123.456789,
            359.9999996,
            1e6,
            12345678.9,
            -0.000049,
            4.2e9,
            1e-3,
        ];
        for dp in 0..=8 {
            for &v in &values {
                let mut got = String::new();
                num(&mut got, v, dp, "test", 0.0).unwrap();
                assert_eq!(got, reference(v, dp), "{v} with {dp} decimals");
            }
        }
        let mut s = String::new();
        assert!(num(&mut s, f64::NAN, 3, "test", 0.0).is_err());
    }
}
