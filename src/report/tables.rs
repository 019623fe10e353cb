//! The report's tables and text blocks: how the run came about, the summary
//! facts, the elements, the control points, the cant and speed advice and
//! the warnings. Every function returns an HTML fragment.

use super::RunRecord;
use super::svg::esc;
use crate::advice::{Advice, AdviceRow, CAUTION, limit_lines};
use crate::diag::Severity;
use crate::fit::{ElementStatus, Estimate, FitResult, FittedElement};
use crate::geometry::ElementKind;
use crate::results::Results;
use crate::survey::Marking;
use crate::units::LengthUnit;
use std::fmt::Write as _;

/// Date and time (UTC) of a time stamp.
fn date_text(t: std::time::SystemTime) -> String {
    let (d, time) = crate::export::landxml::date_time(t);
    format!("{d} {time} UTC")
}

/// "How this report was made": survey file, its header comments, set-up,
/// command, date, program version.
pub(super) fn about(r: &Results, rec: &RunRecord) -> String {
    let u = r.survey.chainage_unit;
    let lu = u.suffix();
    let mut h = String::from("<table class=\"facts\">\n");
    let mut row = |k: &str, v: String| {
        let _ = writeln!(h, "<tr><th scope=\"row\">{k}</th><td>{v}</td></tr>");
    };
    row(
        "survey file",
        format!("<code>{}</code>", esc(&r.survey.source)),
    );
    if !rec.header_comments.is_empty() {
        let lines: Vec<String> = rec.header_comments.iter().map(|l| esc(l)).collect();
        row(
            "its header",
            format!("<div class=\"comments\">{}</div>", lines.join("<br>")),
        );
    }
    let s = &r.setup;
    // Gauge and noise in the survey's small unit (mm, or inches for a survey in feet).
    let vu = u.versine_unit();
    let small = |m: f64, mm_decimals: usize, in_decimals: usize| match u {
        LengthUnit::Foot => format!("{:.*} {}", in_decimals, vu.from_m(m), vu.suffix()),
        LengthUnit::Metre => format!("{:.*} mm", mm_decimals, m * 1e3),
    };
    row(
        "set-up",
        format!(
            "chord {}; {} rail (facing increasing chainage); {}; gauge {}; reading sd {}",
            if s.is_symmetric() {
                format!("{} {lu}", fmt_num(u.from_m(s.chord)))
            } else {
                format!(
                    "{} {lu}, read {} {lu} from its rear end and {} {lu} from its front end",
                    fmt_num(u.from_m(s.chord)),
                    fmt_num(u.from_m(s.arms().behind)),
                    fmt_num(u.from_m(s.arms().ahead))
                )
            },
            r.setup.rail.name(),
            match s.marking {
                Marking::Taped => "marks taped along the rail",
                Marking::Wire => "rigid wire or beam of the chord length",
            },
            small(s.gauge, 0, 2),
            match s.reading_sd {
                Some(sd) => format!("{} (stated)", small(sd, 2, 3)),
                None => "estimated from the readings".into(),
            }
        ),
    );
    if !rec.command_line.is_empty() {
        row(
            "command",
            format!(
                "<code class=\"cmd\">{}</code><br><small>options that do not change the results (output folder, threads, jobs, --force, --quiet, --summary) are left out</small>",
                esc(&shell_words(&rec.command_line))
            ),
        );
    }
    if let Some((t, basis)) = &rec.date {
        row("date", format!("{} ({})", date_text(*t), esc(basis)));
    }
    row(
        "program",
        format!("chordline {}", env!("CARGO_PKG_VERSION")),
    );
    h.push_str("</table>\n");
    h
}

/// Words joined for a shell, quoting those with spaces or shell characters.
fn shell_words(w: &[String]) -> String {
    w.iter()
        .map(|s| {
            if !s.is_empty()
                && s.chars()
                    .all(|c| c.is_alphanumeric() || "-_./,:=+@%".contains(c))
            {
                s.clone()
            } else {
                format!("'{}'", s.replace('\'', "'\\''"))
            }
        })
        .collect::<Vec<_>>()
        .join(" ")
}

fn fmt_num(v: f64) -> String {
    if (v - v.round()).abs() < 1e-9 {
        format!("{v:.0}")
    } else {
        format!("{v:.3}")
    }
}

/// The summary as a table: the terminal summary's lines, each split into its
/// key and text, without the element table (shown on its own) and with the
/// fit statistics underneath as a list.
pub(super) fn summary(r: &Results) -> String {
    let u = r.survey.chainage_unit;
    let full = super::summary(r);
    let table = r
        .fit
        .as_ref()
        .map(|f| super::element_table::summary_table(f, u));
    let rest = match &table {
        Some(t) => full.replacen(t.as_str(), "", 1),
        None => full,
    };
    let mut h = String::from("<table class=\"facts\">\n");
    for line in rest.lines().filter(|l| !l.trim().is_empty()) {
        let (k, v) = line.split_once(' ').unwrap_or((line, ""));
        // The set-up is in "How it was made"; the warnings have their own section.
        if k == "warnings" || k == "set-up" {
            continue;
        }
        let _ = writeln!(
            h,
            "<tr><th scope=\"row\">{}</th><td>{}</td></tr>",
            esc(k),
            esc(v.trim())
        );
    }
    h.push_str("</table>\n");
    if let (Some(t), Some(f)) = (&table, &r.fit) {
        h.push_str("<ul class=\"stats\">\n");
        // The terminal table's closing note concerns its own marks; the
        // HTML element table has its own note.
        for line in t
            .lines()
            .skip(1 + f.elements.len())
            .filter(|l| !l.starts_with("Chainages along"))
        {
            let _ = writeln!(h, "<li>{}</li>", esc(line));
        }
        h.push_str("</ul>\n");
    }
    h
}

/// A chainage cell: the value with its 95 % half-width, or the survey end.
fn chainage_cell(e: &Estimate, at_end: bool, which: &str, u: LengthUnit) -> String {
    if at_end {
        format!(
            "{:.1}<br><span class=\"cut\">{which}: cut, not a joint</span>",
            u.from_m(e.value)
        )
    } else {
        format!(
            "{:.1}<br><span class=\"pm\">± {:.1}</span>",
            u.from_m(e.value),
            u.from_m(e.hi95 - e.value)
        )
    }
}

fn radius_cell(e: &FittedElement, u: LengthUnit) -> String {
    let one = |r: &Option<Estimate>| match r {
        None => "straight".to_string(),
        Some(r) => format!(
            "{:.1} <span class=\"pm\">± {:.1}</span>",
            u.from_m(r.value),
            u.from_m(r.hi95 - r.value)
        ),
    };
    match e.kind {
        ElementKind::Straight => "—".into(),
        ElementKind::Arc => one(&e.start_radius),
        ElementKind::Transition => {
            format!("{} →<br>{}", one(&e.start_radius), one(&e.end_radius))
        }
    }
}

/// The element table.
pub(super) fn elements(f: &FitResult, u: LengthUnit) -> String {
    let lu = u.suffix();
    let mut h = format!(
        "<div class=\"wide\"><table class=\"num\"><thead><tr><th>#</th><th>element</th><th>start ({lu})</th><th>end ({lu})</th><th>length ({lu})</th><th>radius ({lu})</th><th>readings</th><th>note</th></tr></thead><tbody>\n"
    );
    for (i, e) in f.elements.iter().enumerate() {
        let mut note = esc(&e.note);
        if e.status == ElementStatus::Indeterminate {
            note = format!("<b>indeterminate</b>: read the interval, not the value. {note}");
        }
        let _ = writeln!(
            h,
            "<tr class=\"{}\"><td>{}</td><td class=\"k\">{}</td><td>{}</td><td>{}</td><td>{:.1}</td><td>{}</td><td>{}</td><td class=\"k\">{note}</td></tr>",
            e.kind.name(),
            i + 1,
            e.kind.name(),
            chainage_cell(&e.start_chainage, e.starts_at_survey_end, "survey start", u),
            chainage_cell(&e.end_chainage, e.ends_at_survey_end, "survey end", u),
            u.from_m(e.length.value),
            radius_cell(e, u),
            e.readings
        );
    }
    h.push_str("</tbody></table></div>\n<p class=\"note\">Chainages along the measured rail; lengths and radii of the track centreline; radius positive curving left; ± is the half-width of the 95&nbsp;% interval. Where the survey starts or ends inside an element, the element is cut there: that chainage is the end of the readings, not a joint.</p>\n");
    h
}

/// The control points: chainage, residual, leave-one-out test, verdict.
pub(super) fn controls(r: &Results) -> Option<String> {
    if r.control_checks.is_empty() {
        return None;
    }
    let u = r.survey.chainage_unit;
    let lu = u.suffix();
    let file = r
        .georef
        .as_ref()
        .and_then(|g| g.controls.as_ref())
        .map_or(String::new(), |c| {
            format!(" from <code>{}</code>", esc(&c.file))
        });
    let mut h = format!(
        "<p>Control points{file}, used as observations together with the versines. Residual: observed minus adjusted position. Leave-one-out: the point against the position the others predict.</p>\n<div class=\"wide\"><table class=\"num\"><thead><tr><th>point</th><th>line</th><th>chainage ({lu})</th><th>residual E ({lu})</th><th>residual N ({lu})</th><th>normalised</th><th>leave-one-out ({lu})</th><th>test</th><th>verdict</th></tr></thead><tbody>\n"
    );
    let opt = |x: Option<f64>, d: usize| x.map_or("—".to_string(), |v| format!("{v:.d$}"));
    for c in &r.control_checks {
        let _ = writeln!(
            h,
            "<tr><td class=\"k\">{}</td><td>{}</td><td>{:.1}</td><td>{:.3}</td><td>{:.3}</td><td>{:.2}</td><td>{}</td><td>{}</td><td class=\"k\">{}</td></tr>",
            esc(&c.id),
            c.line,
            u.from_m(c.chainage),
            u.from_m(c.dx),
            u.from_m(c.dy),
            c.normalised,
            opt(c.loo_discrepancy.map(|v| u.from_m(v)), 3),
            opt(c.loo_statistic, 2),
            if c.flagged {
                "<b>disagrees with the others</b>"
            } else {
                "agrees"
            }
        );
    }
    h.push_str("</tbody></table></div>\n");
    Some(h)
}

/// Formatting of advice values in the profile's units.
struct AdviceFmt {
    cant_scale: f64,
    cant_decimals: usize,
    speed_scale: f64,
    unit: LengthUnit,
}

impl AdviceFmt {
    fn cant(&self, x: Option<f64>) -> String {
        x.map_or("—".to_string(), |v| {
            format!("{:.*}", self.cant_decimals, v / self.cant_scale)
        })
    }
    fn speed(&self, x: Option<f64>) -> String {
        x.map_or("—".to_string(), |v| {
            format!("{:.0}", v / self.speed_scale)
        })
    }
    fn len(&self, x: f64) -> String {
        format!("{:.1}", self.unit.from_m(x))
    }
    fn radius(&self, r: &AdviceRow) -> String {
        let u = self.unit;
        match (&r.radius, r.radius_used) {
            (Some(e), Some(used)) => format!(
                "{:.0}<br><span class=\"pm\">uses {:.0}</span>",
                u.from_m(e.value),
                u.from_m(used)
            ),
            (Some(e), None) => format!(
                "{:.0}<br><span class=\"pm\">not determined</span>",
                u.from_m(e.value)
            ),
            _ => "—".into(),
        }
    }
    /// The row's flags on a row of their own under it.
    fn flags(r: &AdviceRow, columns: usize) -> String {
        if r.flags.is_empty() {
            return String::new();
        }
        let flags: Vec<String> = r.flags.iter().map(|f| esc(f)).collect();
        format!(
            "<tr class=\"flag\"><td></td><td class=\"k\" colspan=\"{}\"><b>flag:</b> {}</td></tr>\n",
            columns - 1,
            flags.join("; ")
        )
    }

    fn arc_row(&self, r: &AdviceRow) -> String {
        format!(
            "<tr><td>{}</td><td>{}–{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>\n{}",
            r.element,
            self.len(r.start_chainage),
            self.len(r.end_chainage),
            self.radius(r),
            self.speed(r.speed),
            self.cant(r.equilibrium_cant),
            self.cant(r.min_applied_cant),
            self.cant(r.deficiency),
            self.speed(r.max_speed),
            self.speed(r.max_speed_no_cant),
            self.speed(r.max_speed_cant_limit),
            Self::flags(r, 10)
        )
    }

    fn transition_row(&self, r: &AdviceRow) -> String {
        let required = r.required_length.map_or("—".to_string(), |(len, rule)| {
            format!(
                "{}<br><span class=\"pm\">{}</span>",
                self.len(len),
                esc(rule)
            )
        });
        format!(
            "<tr><td>{}</td><td>{}–{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>\n{}",
            r.element,
            self.len(r.start_chainage),
            self.len(r.end_chainage),
            self.len(r.length.value),
            self.radius(r),
            self.speed(r.speed),
            self.cant(r.cant_change),
            self.cant(r.deficiency_change),
            required,
            Self::flags(r, 8)
        )
    }
}

/// Cant and speed advice: the caution, the limits with their sources, one
/// row per arc and transition.
pub(super) fn advice(a: &Advice, u: LengthUnit) -> String {
    let au = a.options.profile.units;
    let (cu, su, lu) = (au.cant_suffix(), au.speed_label(), u.suffix());
    let mut h = String::from("<div class=\"caution\"><b>Caution: advisory only.</b><ul>");
    for line in CAUTION {
        let _ = write!(h, "<li>{}</li>", esc(line));
    }
    h.push_str("</ul></div>\n<ul class=\"stats\">");
    for line in limit_lines(&a.options.profile) {
        let _ = write!(h, "<li>{}</li>", esc(&line));
    }
    let _ = writeln!(
        h,
        "<li>{}</li><li>{}</li></ul>",
        match a.options.speed {
            Some(v) => format!("line speed {:.0} {su}", v / au.speed_scale()),
            None => "no line speed given".into(),
        },
        match a.options.applied_cant {
            Some(c) => format!(
                "applied cant {:.1} {cu} in every arc (capped at the limit)",
                c / au.cant_scale()
            ),
            None => "no applied cant given".into(),
        }
    );
    if a.rows.is_empty() {
        h.push_str("<p>No arcs or transitions were fitted: nothing to advise on.</p>\n");
        return h;
    }
    let f = AdviceFmt {
        cant_scale: au.cant_scale(),
        cant_decimals: au.cant_decimals(),
        speed_scale: au.speed_scale(),
        unit: u,
    };
    let arcs: Vec<&AdviceRow> = a
        .rows
        .iter()
        .filter(|r| r.kind == ElementKind::Arc)
        .collect();
    if !arcs.is_empty() {
        let _ = writeln!(
            h,
            "<h3>Arcs</h3>\n<div class=\"wide\"><table class=\"num\"><thead><tr><th>#</th><th>chainage ({lu})</th><th>radius ({lu})</th><th>speed ({su})</th><th>equilibrium cant ({cu})</th><th>least applied cant ({cu})</th><th>deficiency ({cu})</th><th>highest speed with the applied cant ({su})</th><th>with no cant ({su})</th><th>with the largest cant ({su})</th></tr></thead><tbody>"
        );
        for r in arcs {
            h.push_str(&f.arc_row(r));
        }
        h.push_str("</tbody></table></div>\n");
    }
    let transitions: Vec<&AdviceRow> = a
        .rows
        .iter()
        .filter(|r| r.kind != ElementKind::Arc)
        .collect();
    if !transitions.is_empty() {
        let _ = writeln!(
            h,
            "<h3>Transitions</h3>\n<div class=\"wide\"><table class=\"num\"><thead><tr><th>#</th><th>chainage ({lu})</th><th>length ({lu})</th><th>radius at the tighter end ({lu})</th><th>speed ({su})</th><th>change of cant ({cu})</th><th>change of deficiency ({cu})</th><th>least length by the rules ({lu})</th></tr></thead><tbody>"
        );
        for r in transitions {
            h.push_str(&f.transition_row(r));
        }
        h.push_str("</tbody></table></div>\n");
    }
    h.push_str("<p class=\"note\"># is the element number. Radii at the tighter end of their 95&nbsp;% interval; speeds rounded down to 5. A dash: does not apply or not determined. The same figures are in <code>advice.csv</code>.</p>\n");
    h
}

/// The warnings and notes of every stage.
pub(super) fn diagnostics(r: &Results) -> Option<String> {
    if r.diagnostics.is_empty() {
        return None;
    }
    let mut h = String::from("<ul class=\"diag\">\n");
    for d in &r.diagnostics {
        let (cls, word) = if d.severity == Severity::Warning {
            ("warn", "warning")
        } else {
            ("note", "note")
        };
        let mut text = String::new();
        if let Some(l) = &d.location {
            let _ = write!(text, "{l}: ");
        }
        text.push_str(&d.message);
        if let Some(hint) = &d.hint {
            let _ = write!(text, " ({hint})");
        }
        let _ = writeln!(h, "<li class=\"{cls}\"><b>{word}</b> {}</li>", esc(&text));
    }
    h.push_str("</ul>\n");
    Some(h)
}
