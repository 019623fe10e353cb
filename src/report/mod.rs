//! Human-readable summaries of a run: text for the terminal and a
//! self-contained HTML report. The library returns strings; the command-line
//! tool prints or writes them.

mod advice_text;
mod diagrams;
mod element_table;
pub use element_table::summary_table;
mod html;
mod sections;
mod strip;
mod svg;
mod tables;
mod units_text;

pub use advice_text::advice_text;
pub use html::{html_report, write_html_report};
pub use units_text::{in_feet, localise_diagnostics};

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
        "set-up   {}, {} marking, gauge {}",
        chord_words(u, &r.setup),
        match r.setup.marking {
            crate::survey::Marking::Taped => "taped",
            crate::survey::Marking::Wire => "fixed-wire",
        },
        match u {
            LengthUnit::Metre => format!("{:.0} mm", r.setup.gauge * 1e3),
            LengthUnit::Foot => format!("{:.2} {}", vu.from_m(r.setup.gauge), vu.suffix()),
        }
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
        let _ = writeln!(s, "\n{}", element_table::summary_table(f, u));
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

/// What the report says about how a run came about, passed in as plain data
/// by the caller (the library never reads the clock or the command line).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RunRecord {
    /// The command, as words (empty: not recorded).
    pub command_line: Vec<String>,
    /// The comment lines at the head of the survey file, without their `#`.
    pub header_comments: Vec<String>,
    /// The date the report states and where it comes from (e.g.
    /// `SOURCE_DATE_EPOCH`), so that the same input gives the same bytes.
    pub date: Option<(std::time::SystemTime, String)>,
}

/// The comment lines (`#`) before the first other non-blank line of a
/// survey file's text, without the `#` and surrounding blanks.
///
/// # Examples
/// ```
/// let c = chordline::report::header_comments("# Up line\n#\n# 20 m chord\nchainage_m,versine_mm\n# late\n");
/// assert_eq!(c, ["Up line", "", "20 m chord"]);
/// ```
pub fn header_comments(text: &str) -> Vec<String> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut out = Vec::new();
    for line in text.lines() {
        let t = line.trim();
        if t.is_empty() {
            continue;
        }
        match t.strip_prefix('#') {
            Some(c) => out.push(c.trim().to_string()),
            None => break,
        }
    }
    out
}

/// A summary of a few lines for long routes (`--summary short`): extent,
/// set-up, the elements counted by kind, the sharpest arc, the residuals, the
/// end position's uncertainty, slews and advice in one line each, warnings.
pub fn summary_short(r: &Results) -> String {
    let mut s = String::new();
    let u = r.survey.chainage_unit;
    let lu = u.suffix();
    let vu = u.versine_unit();
    let st = &r.plan.stations;
    let (Some(first), Some(last)) = (st.first(), st.last()) else {
        return "no stations\n".to_string();
    };
    let _ = writeln!(
        s,
        "survey   {}: {} readings from {:.1} to {:.1} {lu} ({:.1} {lu} long)",
        r.survey.source,
        r.survey.readings.len(),
        u.from_m(first.chainage),
        u.from_m(last.chainage),
        u.from_m(last.chainage - first.chainage)
    );
    let _ = writeln!(
        s,
        "set-up   {}, {} rail, reading sd {:.2} {}",
        chord_words(u, &r.setup),
        r.setup.rail.name(),
        vu.from_m(r.plan.reading_sd),
        vu.suffix()
    );
    if let Some(f) = &r.fit {
        short_fit_lines(&mut s, f, u);
    }
    let _ = writeln!(
        s,
        "end      position sd {:.3} {lu} at {:.1} {lu}",
        u.from_m(last.position_sd),
        u.from_m(last.chainage)
    );
    if let Some(sl) = &r.slews {
        let _ = writeln!(s, "{}", crate::realign::summary_line(sl, u));
    }
    if let Some(a) = &r.advice {
        let flagged = a.rows.iter().filter(|x| !x.flags.is_empty()).count();
        let _ = writeln!(
            s,
            "advice   {} arcs and transitions, {flagged} flagged (ADVISORY ONLY; see advice.csv and report.html)",
            a.rows.len()
        );
    }
    let warnings = r
        .diagnostics
        .iter()
        .filter(|d| d.severity == Severity::Warning)
        .count();
    let _ = writeln!(s, "warnings {warnings}");
    s
}

fn short_fit_lines(s: &mut String, f: &crate::fit::FitResult, u: LengthUnit) {
    use crate::geometry::ElementKind;
    let lu = u.suffix();
    let vu = u.versine_unit();
    let count = |k: ElementKind| f.elements.iter().filter(|e| e.kind == k).count();
    let indeterminate = f
        .elements
        .iter()
        .filter(|e| e.status == crate::fit::ElementStatus::Indeterminate)
        .count();
    let _ = writeln!(
        s,
        "elements {} ({} straights, {} transitions, {} arcs; {indeterminate} indeterminate): see elements.csv",
        f.elements.len(),
        count(ElementKind::Straight),
        count(ElementKind::Transition),
        count(ElementKind::Arc)
    );
    let sharpest = f
        .elements
        .iter()
        .filter(|e| e.kind == ElementKind::Arc)
        .filter_map(|e| e.start_radius.map(|r| (e, r)))
        .min_by(|a, b| a.1.value.abs().total_cmp(&b.1.value.abs()));
    if let Some((e, r)) = sharpest {
        let _ = writeln!(
            s,
            "sharpest arc R {:.1} ± {:.1} {lu} from {:.1} to {:.1} {lu}",
            u.from_m(r.value),
            u.from_m(r.hi95 - r.value),
            u.from_m(e.start_chainage.value),
            u.from_m(e.end_chainage.value)
        );
    }
    let st = &f.stats;
    let _ = writeln!(
        s,
        "residuals RMS {:.2} {vs}, max {:.2} {vs} at {:.1} {lu}",
        vu.from_m(st.residual_rms),
        vu.from_m(st.residual_max.0),
        u.from_m(st.residual_max.1),
        vs = vu.suffix()
    );
}

/// The chord as the set-up lines state it: `20 m chord`, or for a chord not
/// read at its middle `10.5 m chord read 4 m behind and 6.5 m ahead`.
pub(crate) fn chord_words(u: LengthUnit, setup: &crate::survey::Setup) -> String {
    let lu = u.suffix();
    let arms = setup.arms();
    if arms.is_symmetric() {
        format!("{} {lu} chord", fmt_len(u, setup.chord))
    } else {
        format!(
            "{} {lu} chord read {} {lu} behind and {} {lu} ahead",
            fmt_len(u, setup.chord),
            fmt_len(u, arms.behind),
            fmt_len(u, arms.ahead)
        )
    }
}

fn fmt_len(u: LengthUnit, m: f64) -> String {
    let v = u.from_m(m);
    if (v - v.round()).abs() < 1e-9 {
        format!("{v:.0}")
    } else {
        format!("{v:.3}")
    }
}
