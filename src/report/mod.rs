//! Human-readable summaries of a run: text for the terminal and a
//! self-contained HTML report. The library returns strings; the command-line
//! tool prints or writes them.

mod advice_text;
mod html;
mod svg;

pub use advice_text::advice_text;
pub use html::html_report;

use crate::diag::Severity;
use crate::geometry::heading_to_bearing;
use crate::integrate::NoiseSource;
use crate::results::Results;
use crate::units::LengthUnit;
use std::fmt::Write as _;

/// A short summary of a run: what was read, the noise, the plan's extent and
/// drift, and how many warnings there were.
pub fn summary(r: &Results) -> String {
    let mut s = String::new();
    let u = r.survey.chainage_unit;
    let lu = u.suffix();
    let vu = u.versine_unit();
    let st = &r.plan.stations;
    let n_read = r
        .survey
        .readings
        .iter()
        .filter(|x| x.versine.is_some())
        .count();
    let n_gap = r.survey.readings.len() - n_read;
    let (Some(first), Some(last)) = (st.first(), st.last()) else {
        return "no stations\n".to_string();
    };
    let _ = writeln!(
        s,
        "survey   {}: {} readings{} from {:.1} to {:.1} {lu}",
        r.survey.source,
        n_read,
        if n_gap > 0 {
            format!(" and {n_gap} gap{}", if n_gap == 1 { "" } else { "s" })
        } else {
            String::new()
        },
        u.from_m(first.chainage),
        u.from_m(last.chainage),
    );
    let _ = writeln!(
        s,
        "set-up   {} {lu} chord, {} marking, gauge {:.0} mm",
        fmt_len(u, r.setup.chord),
        match r.setup.marking {
            crate::survey::Marking::Taped => "taped",
            crate::survey::Marking::Wire => "fixed-wire",
        },
        r.setup.gauge * 1e3
    );
    let src = match r.plan.noise_source {
        NoiseSource::Stated => "as stated",
        NoiseSource::Estimated => "estimated from the readings",
        NoiseSource::RoundingFloor => "floor set by the rounding of the readings",
    };
    let _ = writeln!(
        s,
        "noise    reading sd {:.2} {} ({src})",
        vu.from_m(r.plan.reading_sd),
        vu.suffix()
    );
    let kmax = st.iter().map(|x| x.curvature.abs()).fold(0.0_f64, f64::max);
    let turn = (last.heading - first.heading).to_degrees();
    let _ = writeln!(
        s,
        "plan     total turn {turn:+.3} deg (positive: to the left), sharpest radius about {} {lu}",
        if kmax > 0.0 {
            format!("{:.0}", u.from_m(1.0 / kmax))
        } else {
            "none (straight)".into()
        }
    );
    match &r.georef {
        None => {
            let _ = writeln!(
                s,
                "frame    local, not placed on the Earth: first station at E 0, N 0, bearing {:.4} deg (give --start-lonlat and --start-bearing, or --control, to place it)",
                heading_to_bearing(first.heading)
            );
        }
        Some(g) => {
            let o = g.placement.origin();
            let how = if g.controls.is_some() {
                "by control points"
            } else {
                "by start point and bearing"
            };
            let _ = writeln!(
                s,
                "frame    placed {how}: local E/N are ground metres from the origin at WGS 84 longitude,latitude {o}; bearings from true north"
            );
        }
    }
    let end_bearing = match &r.georef {
        Some(g) => g.true_bearing(crate::geometry::Pose {
            x: last.x,
            y: last.y,
            heading: last.heading,
        }),
        None => heading_to_bearing(last.heading),
    };
    let _ = writeln!(
        s,
        "end      E {:.3} N {:.3} {lu}, bearing {:.4} deg, position sd {:.3} {lu}",
        u.from_m(last.x),
        u.from_m(last.y),
        end_bearing,
        u.from_m(last.position_sd)
    );
    if let Some(f) = &r.fit {
        let _ = writeln!(s, "\n{}", crate::export::elements::summary_table(f, u));
    }
    let warnings = r
        .diagnostics
        .iter()
        .filter(|d| d.severity == Severity::Warning)
        .count();
    if warnings > 0 {
        let _ = writeln!(s, "warnings {warnings} (listed above)");
    }
    s
}

fn fmt_len(u: LengthUnit, m: f64) -> String {
    let v = u.from_m(m);
    if (v - v.round()).abs() < 1e-9 {
        format!("{v:.0}")
    } else {
        format!("{v:.3}")
    }
}
