//! A self-contained HTML report of a run: how it was made, the summary, the
//! elements, diagrams along the track (in sections of a few km on long
//! surveys, after an overview), the plan with the control points, the
//! uncertainty, cant and speed advice, warnings. One file, inline SVG, no
//! scripts, no fonts, no network; the same results give the same bytes.
//!
//! Layout: one column at most 1000 px wide, so nothing scrolls sideways at
//! 1400 px and the diagrams keep 11 px text or more at 800 px; `@media print`
//! sets A4/Letter margins, keeps each diagram on one page and starts each
//! section of a long survey on a new page.

use super::RunRecord;
use super::diagrams::{Diagrams, Range, Strips};
use super::sections::{Section, sections};
use super::svg::esc;
use super::tables;
use crate::results::Results;
use rayon::prelude::*;
use std::fmt::Write as _;
use std::io;

const CSS: &str = "*{box-sizing:border-box}\
body{margin:0;background:#fff;color:#1b1b1b;font-family:sans-serif;font-size:16px;line-height:1.45}\
main{max-width:1000px;margin:0 auto;padding:1.2em 1.2em 3em}\
h1{font-size:1.6em;margin:.3em 0 .1em}\
h2{font-size:1.25em;margin:2.2em 0 .6em;padding-bottom:.15em;border-bottom:2px solid #1b1b1b}\
h3{font-size:1.08em;margin:1.6em 0 .4em}\
p.sub{margin:0 0 1em;color:#333}\
.caution{border:2px solid #1b1b1b;border-left-width:8px;background:#fff7e0;padding:.6em 1em;margin:1em 0}\
.caution ul{margin:.3em 0;padding-left:1.3em}\
nav.toc{font-size:.95em}nav.toc a{margin-right:1em;white-space:nowrap}\
table{border-collapse:collapse;font-size:.92em;margin:.4em 0}\
th,td{border:1px solid #b8b8b8;padding:.3em .5em;vertical-align:top}\
th{background:#ececec;text-align:left}\
table.facts{width:100%}table.facts th{width:8.5em}\
table.num td{text-align:right;font-variant-numeric:tabular-nums}table.num td.k{text-align:left}\
tr.arc td{background:#f3f3f3}tr.flag td{font-size:.9em;border-top:none}tr{break-inside:avoid;page-break-inside:avoid}\
.pm{font-size:.86em;color:#3a3a3a;white-space:nowrap}.cut{font-size:.84em;font-style:italic}\
code{font-family:monospace;font-size:.92em}code.cmd{white-space:pre-wrap;overflow-wrap:anywhere}\
.comments{font-family:monospace;font-size:.9em;white-space:pre-wrap;overflow-wrap:anywhere}\
.wide{overflow-x:auto}\
ul.stats{padding-left:1.2em;margin:.4em 0}p.note,figcaption{font-size:.9em;color:#333}\
figure,.keep{margin:1em 0 1.8em;break-inside:avoid;page-break-inside:avoid}\
svg.chart{display:block;width:100%;height:auto}\
ul.diag li{margin:.2em 0}ul.diag li.warn b{background:#1b1b1b;color:#fff;padding:0 .3em}\
footer{margin-top:3em;font-size:.85em;color:#444}\
@media (max-width:860px){main{padding:.6em .6em 2em}table{font-size:.86em}th,td{padding:.2em .3em}}\
@media print{@page{margin:14mm 12mm}body{font-size:10pt}main{max-width:none;padding:0}\
h2,h3{break-after:avoid;page-break-after:avoid}.caution{background:none}\
section.part{break-before:page;page-break-before:always}.wide{overflow:visible}\
nav.toc a{color:inherit;text-decoration:none}}";

fn figure(svg: &str, caption: Option<&str>) -> String {
    match caption {
        Some(c) => format!(
            "<figure>{svg}<figcaption>{}</figcaption></figure>\n",
            esc(c)
        ),
        None => format!("<figure>{svg}</figure>\n"),
    }
}

const SLEW_CAUTION: &str = "<p class=\"caution\"><b>Caution.</b> Slews are indicative, for planning only: check clearances, structure gauges, fixed points and cant against local standards before any track is moved.</p>\n";

/// Versines, curvature, residuals and slews over one range.
fn along_track(h: &mut String, d: &Diagrams<'_>, range: Range) {
    h.push_str(&figure(&d.versines(range, false), None));
    h.push_str(&figure(&d.curvature(range, false), None));
    if let Some(s) = d.residuals(range) {
        h.push_str(&figure(&s, None));
    }
    if let Some((s, cap)) = d.slews(range) {
        // The caution stays on the page of its diagram.
        let _ = writeln!(
            h,
            "<div class=\"keep\">{SLEW_CAUTION}{}</div>",
            figure(&s, Some(&cap))
        );
    }
}

/// Sections drawn at a time (on the pool's threads), then written in order:
/// the report of a long survey is never held whole.
const SECTION_BATCH: usize = 32;

/// A long survey: the overview, then its sections, each written to `w` as
/// it is drawn (`h`, the text so far, first). Returns the last diagram id.
fn sectioned(
    w: &mut dyn io::Write,
    h: &mut String,
    (r, strips, first): (&Results, &Strips, usize),
    parts: &[Section],
    lu: &str,
) -> io::Result<usize> {
    let d = Diagrams::new(r, strips, first);
    let _ = writeln!(
        h,
        "<p>The survey is long, so it is drawn whole first (an overview) and then in {} sections of about 2 km, each on its own page when printed.</p>",
        parts.len()
    );
    h.push_str("<h3>Overview of the whole survey</h3>\n");
    h.push_str(&figure(&d.versines(None, true), None));
    h.push_str(&figure(&d.curvature(None, true), None));
    h.push_str("<nav class=\"toc\">Sections: ");
    for (i, s) in parts.iter().enumerate() {
        let _ = write!(h, "<a href=\"#s{}\">{:.0}–{:.0}</a> ", i + 1, s.from, s.to);
    }
    h.push_str("</nav>\n");
    w.write_all(h.as_bytes())?;
    h.clear();
    let (start, per) = (d.last_id(), d.per_range());
    let one = |i: usize, s: &Section| {
        let d = Diagrams::new(r, strips, start + i * per);
        let mut t = String::new();
        let _ = writeln!(
            t,
            "<section class=\"part\" id=\"s{}\"><h3>Section {} of {}: {:.1} to {:.1} {lu}</h3>",
            i + 1,
            i + 1,
            parts.len(),
            s.from,
            s.to
        );
        along_track(&mut t, &d, Some((s.from, s.to)));
        t.push_str("</section>\n");
        debug_assert_eq!(d.last_id(), start + (i + 1) * per);
        t
    };
    for (b, batch) in parts.chunks(SECTION_BATCH).enumerate() {
        let texts: Vec<String> = batch
            .par_iter()
            .enumerate()
            .map(|(k, s)| one(b * SECTION_BATCH + k, s))
            .collect();
        for t in texts {
            w.write_all(t.as_bytes())?;
        }
    }
    Ok(start + parts.len() * per)
}

fn head(h: &mut String, r: &Results, rec: &RunRecord) {
    let t = esc(&r.survey.source);
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"><title>chordline report: {t}</title><style>{CSS}</style></head><body><main>\n<h1>Track alignment from versines</h1>\n<p class=\"sub\"><code>{t}</code>"
    );
    if let Some(first) = rec.header_comments.iter().find(|c| !c.is_empty()) {
        let _ = write!(h, " · {}", esc(first));
    }
    if let Some((time, _)) = &rec.date {
        let (d, _) = crate::export::landxml::date_time(*time);
        let _ = write!(h, " · {d}");
    }
    h.push_str("</p>\n");
    h.push_str(
        "<p class=\"caution\"><b>Caution.</b> These figures come from chord offsets measured by others and fitted by statistics. \
They are an aid to a competent track engineer, not a substitute for one: check them against the site, the records and your \
railway's standards before using them for slewing, cant, speed or any decision that bears on safety. Intervals are 95&nbsp;%; \
an element marked indeterminate could not be resolved by the data.</p>\n",
    );
}

/// The report as HTML text. `rec` says how the run came about (command,
/// date, the survey file's header comments).
pub fn html_report(r: &Results, rec: &RunRecord) -> String {
    let mut out = Vec::new();
    // Writing to memory cannot fail, and only text is written.
    let _ = write_html_report(&mut out, r, rec);
    String::from_utf8(out).unwrap_or_default()
}

/// Write the report (as [`html_report`]) to `w` piece by piece: a long
/// survey's sections are drawn a batch at a time and written in order, so
/// the whole report is never in memory.
///
/// # Errors
/// An I/O error from `w`.
pub fn write_html_report(w: &mut dyn io::Write, r: &Results, rec: &RunRecord) -> io::Result<()> {
    let u = r.survey.chainage_unit;
    let lu = u.suffix();
    let mut h = String::new();
    head(&mut h, r, rec);
    let mut toc = vec![
        ("summary", "Summary"),
        ("track", "Along the track"),
        ("elements", "Elements"),
        ("plan", "Plan"),
        ("uncertainty", "Uncertainty"),
    ];
    if r.fit.is_none() {
        toc.retain(|t| t.0 != "elements");
    }
    if r.advice.is_some() {
        toc.push(("advice", "Cant and speed advice"));
    }
    toc.push(("run", "How it was made"));
    if !r.diagnostics.is_empty() {
        toc.push(("notes", "Warnings and notes"));
    }
    h.push_str("<nav class=\"toc\">");
    for (id, name) in &toc {
        let _ = write!(h, "<a href=\"#{id}\">{name}</a>");
    }
    h.push_str("</nav>\n");
    let _ = write!(h, "<h2 id=\"summary\">Summary</h2>\n{}", tables::summary(r));
    let strips = Strips::new(r);
    h.push_str("<h2 id=\"track\">Along the track</h2>\n<p class=\"note\">Above each diagram: the fitted elements with their radius and length (as many words as there is room for; the element table has them all). Through it: arcs shaded, transitions hatched, each joint a line inside its grey 95&nbsp;% interval.</p>\n");
    let st = &r.plan.stations;
    let parts = match (st.first(), st.last()) {
        (Some(a), Some(b)) => sections(u.from_m(a.chainage), u.from_m(b.chainage), u),
        _ => Vec::new(),
    };
    let first = if parts.is_empty() {
        let d = Diagrams::new(r, &strips, 0);
        along_track(&mut h, &d, None);
        d.last_id()
    } else {
        sectioned(w, &mut h, (r, &strips, 0), &parts, lu)?
    };
    let d = Diagrams::new(r, &strips, first);
    if let Some(f) = &r.fit {
        let _ = write!(
            h,
            "<h2 id=\"elements\">Elements</h2>\n{}",
            tables::elements(f, u)
        );
    }
    let (plan, caption) = d.plan();
    h.push_str("<h2 id=\"plan\">Plan</h2>\n");
    h.push_str(&figure(&plan, caption.as_deref()));
    if let Some(t) = tables::controls(r) {
        h.push_str(&t);
    }
    let _ = write!(
        h,
        "<h2 id=\"uncertainty\">Uncertainty of position</h2>\n{}",
        figure(
            &d.position_sd(),
            Some(
                "Versines fix the shape, not the position: without control points the lateral uncertainty grows along the survey."
            )
        )
    );
    if let Some(a) = &r.advice {
        let _ = write!(
            h,
            "<h2 id=\"advice\">Cant and speed advice (advisory only)</h2>\n{}",
            tables::advice(a, u)
        );
    }
    let _ = write!(
        h,
        "<h2 id=\"run\">How it was made</h2>\n{}",
        tables::about(r, rec)
    );
    if let Some(t) = tables::diagnostics(r) {
        let _ = write!(h, "<h2 id=\"notes\">Warnings and notes</h2>\n{t}");
    }
    let _ = write!(
        h,
        "<footer>chordline {}. Chainages along the measured rail, lengths and radii of the centreline; curvature and radius positive curving left.</footer>\n</main></body></html>\n",
        env!("CARGO_PKG_VERSION")
    );
    w.write_all(h.as_bytes())
}
