//! SVG line charts for the HTML report: round-numbered axes, lines, shaded
//! bands, reference lines, point marks, vertical marks, and an element strip
//! (see [`super::Strip`]) with the joints drawn through the plot. The legend
//! sits above the plot, never on the data.
//!
//! Hand-written rather than taken from a plotting crate (plotters, say):
//! such a crate would give the axes and lines, but not the element strip,
//! the joints with their intervals or a legend laid out off the data, and the
//! report needs byte-identical output from the same results; the chart code
//! here is small and tested below.
//!
//! Every colour comes from the Okabe–Ito colour-universal-design palette
//! (Okabe & Ito 2008, "Color Universal Design"), and every layer also differs
//! by line style or marker shape, so the charts read in greyscale and for
//! colour-blind readers.

mod layers;

pub use layers::*;

use super::strip::Strip;
use std::fmt::Write as _;

/// Drawing width of every chart (SVG user units; the page scales it).
pub const W: f64 = 820.0;
const ML: f64 = 64.0;
const MR: f64 = 24.0;
const PLOT_H: f64 = 220.0;
const LEGEND_ROW: f64 = 17.0;
const FONT: f64 = 12.0;

/// A chart. `id` must be unique in the page (it names the clip path).
#[derive(Debug, Clone, Default)]
pub struct Chart<'a> {
    /// Unique id within the page, e.g. `c3`.
    pub id: String,
    /// Title above the plot.
    pub title: String,
    /// Label of the x axis.
    pub x_label: String,
    /// Label of the y axis.
    pub y_label: String,
    /// Lines.
    pub series: Vec<Series>,
    /// Shaded bands (drawn under the lines).
    pub bands: Vec<Band>,
    /// Horizontal reference lines.
    pub ref_lines: Vec<RefLine>,
    /// Point marks.
    pub marks: Vec<MarkSet>,
    /// Vertical marks.
    pub vmarks: Vec<VMarks>,
    /// Elements and joints, drawn above the plot and through it.
    pub strip: Option<&'a Strip>,
    /// The x range shown (default: the data's).
    pub x_range: Option<(f64, f64)>,
    /// The y range shown (default: the lines', reference lines' and marks';
    /// bands do not widen it and are clipped at the plot edge).
    pub y_range: Option<(f64, f64)>,
    /// Same scale on both axes (the plan).
    pub equal_axes: bool,
}

/// Round tick step for a span: 1, 2 or 5 times a power of ten, about 6 ticks.
pub fn tick_step(span: f64) -> f64 {
    if !(span.is_finite() && span > 0.0) {
        return 1.0;
    }
    let raw = span / 6.0;
    let p = 10f64.powf(raw.log10().floor());
    let m = raw / p;
    let f = if m < 1.5 {
        1.0
    } else if m < 3.5 {
        2.0
    } else if m < 7.5 {
        5.0
    } else {
        10.0
    };
    f * p
}

/// Keep at most about `max` points, keeping each bucket's minimum and
/// maximum so that peaks survive.
fn decimate(p: &[(f64, f64)], max: usize) -> Vec<(f64, f64)> {
    if p.len() <= max || max < 4 {
        return p.to_vec();
    }
    let per = p.len().div_ceil(max / 2);
    let mut out = Vec::with_capacity(max + 2);
    for chunk in p.chunks(per) {
        if chunk.iter().any(|q| !q.1.is_finite()) {
            // Keep a gap visible: the chunk's ends and a break between them.
            out.push(chunk[0]);
            out.push((f64::NAN, f64::NAN));
            out.push(chunk[chunk.len() - 1]);
            continue;
        }
        let lo = chunk
            .iter()
            .enumerate()
            .min_by(|a, b| a.1.1.total_cmp(&b.1.1))
            .map(|x| x.0);
        let hi = chunk
            .iter()
            .enumerate()
            .max_by(|a, b| a.1.1.total_cmp(&b.1.1))
            .map(|x| x.0);
        if let (Some(lo), Some(hi)) = (lo, hi) {
            let (a, b) = if lo <= hi { (lo, hi) } else { (hi, lo) };
            out.push(chunk[a]);
            if b != a {
                out.push(chunk[b]);
            }
        }
    }
    out
}

/// The points whose x lies in `[x0, x1]`, plus one neighbour on each side so
/// that lines run to the plot edge (the clip path cuts them there).
fn in_range<T: Copy>(p: &[T], x: impl Fn(&T) -> f64, x0: f64, x1: f64) -> &[T] {
    let first = p.iter().position(|q| x(q) >= x0);
    let last = p.iter().rposition(|q| x(q) <= x1);
    match (first, last) {
        (Some(a), Some(b)) if a <= b => {
            let a = a.saturating_sub(1);
            let b = (b + 1).min(p.len() - 1);
            &p[a..=b]
        }
        _ => &[],
    }
}

/// XML-escape text.
pub fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Approximate width of `s` in a sans-serif face of size `font` (average
/// advance 0.56 em; used only to decide whether a label fits).
pub fn text_width(s: &str, font: f64) -> f64 {
    s.chars().count() as f64 * 0.56 * font
}

fn fmt_tick(v: f64, step: f64) -> String {
    let d = if step >= 1.0 {
        0
    } else {
        (-step.log10()).ceil() as usize
    };
    let s = format!("{v:.d$}");
    if s.starts_with('-') && s[1..].bytes().all(|b| b == b'0' || b == b'.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// Maps data to drawing coordinates.
#[derive(Debug, Clone, Copy)]
pub struct Frame {
    /// Data x range.
    pub x0: f64,
    /// Data x range.
    pub x1: f64,
    /// Data y range.
    pub y0: f64,
    /// Data y range.
    pub y1: f64,
    /// Plot left edge.
    pub left: f64,
    /// Plot top edge.
    pub top: f64,
    /// Plot width.
    pub pw: f64,
    /// Plot height.
    pub ph: f64,
}

impl Frame {
    /// Drawing x of data x.
    pub fn sx(&self, x: f64) -> f64 {
        self.left + (x - self.x0) / (self.x1 - self.x0) * self.pw
    }
    /// Drawing y of data y.
    pub fn sy(&self, y: f64) -> f64 {
        self.top + (1.0 - (y - self.y0) / (self.y1 - self.y0)) * self.ph
    }
    /// Bottom edge of the plot.
    pub fn bottom(&self) -> f64 {
        self.top + self.ph
    }
    /// Right edge of the plot.
    pub fn right(&self) -> f64 {
        self.left + self.pw
    }
}

/// One legend entry: how its swatch is drawn.
enum Swatch {
    Line(Style),
    Fill(&'static str),
    Mark(Marker, &'static str),
    Hatch,
    Shade,
    Joint,
    Ragged,
}

struct Extent {
    x0: f64,
    x1: f64,
    y0: f64,
    y1: f64,
}

impl Extent {
    fn new() -> Self {
        Extent {
            x0: f64::INFINITY,
            x1: f64::NEG_INFINITY,
            y0: f64::INFINITY,
            y1: f64::NEG_INFINITY,
        }
    }
    fn add(&mut self, x: f64, y: f64) {
        if x.is_finite() && y.is_finite() {
            self.x0 = self.x0.min(x);
            self.x1 = self.x1.max(x);
            self.y0 = self.y0.min(y);
            self.y1 = self.y1.max(y);
        }
    }
}

impl Chart<'_> {
    /// The series after cutting to the x range and decimating.
    fn prepared(&self) -> Vec<Vec<(f64, f64)>> {
        self.series
            .iter()
            .map(|s| {
                // A slice, not a copy: an overview series has a point per reading.
                let p = match self.x_range {
                    Some((a, b)) => in_range(&s.points, |q| q.0, a, b),
                    None => &s.points[..],
                };
                decimate(p, 1600)
            })
            .collect()
    }

    fn extent(&self, series: &[Vec<(f64, f64)>]) -> Extent {
        let mut e = Extent::new();
        for p in series.iter().flatten() {
            if self.x_range.is_none_or(|(a, b)| p.0 >= a && p.0 <= b) {
                e.add(p.0, p.1);
            }
        }
        for m in self.marks.iter().flat_map(|m| &m.marks) {
            e.add(m.x, m.y);
            if let Some((dx, dy)) = m.vector {
                e.add(m.x + dx, m.y + dy);
            }
        }
        if e.x0.is_finite() {
            for r in &self.ref_lines {
                e.add(e.x0, r.y);
            }
        }
        if let Some((a, b)) = self.x_range {
            (e.x0, e.x1) = (a, b);
        }
        if let Some((a, b)) = self.y_range {
            (e.y0, e.y1) = (a, b);
        }
        if !(e.x0.is_finite() && e.y0.is_finite()) {
            e = Extent {
                x0: 0.0,
                x1: 1.0,
                y0: 0.0,
                y1: 1.0,
            };
        }
        if e.x1 - e.x0 < 1e-12 {
            e.x1 = e.x0 + 1.0;
        }
        if e.y1 - e.y0 < 1e-12 {
            e.y0 -= 0.5;
            e.y1 += 0.5;
        }
        if self.y_range.is_none() {
            let pad = 0.06 * (e.y1 - e.y0);
            e.y0 -= pad;
            e.y1 += pad;
        }
        e
    }

    fn legend_entries(&self, dense: bool) -> Vec<(String, Swatch)> {
        let mut v: Vec<(String, Swatch)> = Vec::new();
        for s in &self.series {
            v.push((s.name.clone(), Swatch::Line(s.style)));
        }
        for b in &self.bands {
            v.push((b.name.clone(), Swatch::Fill(b.colour)));
        }
        for r in &self.ref_lines {
            if !v.iter().any(|(n, _)| *n == r.name) {
                v.push((r.name.clone(), Swatch::Line(r.style)));
            }
        }
        for m in &self.marks {
            v.push((m.name.clone(), Swatch::Mark(m.marker, m.colour)));
        }
        let shown = |x: f64| self.x_range.is_none_or(|(a, b)| x >= a && x <= b);
        for m in self
            .vmarks
            .iter()
            .filter(|m| m.at.iter().any(|p| shown(p.0)))
        {
            v.push((m.name.clone(), Swatch::Mark(Marker::Triangle, m.colour)));
        }
        if let Some(s) = self.strip {
            if s.has_arcs() {
                v.push(("arc (shaded)".into(), Swatch::Shade));
            }
            if s.has_transitions() {
                v.push(("transition (hatched)".into(), Swatch::Hatch));
            }
            if !s.joints.is_empty() && !dense {
                v.push(("joint, 95 % interval".into(), Swatch::Joint));
            }
            if s.has_cut_in(self.x_range) {
                v.push(("element cut by the survey end".into(), Swatch::Ragged));
            }
        }
        v
    }

    /// Lay the legend out in rows across the width; returns the entries
    /// with their (x, row) and the number of rows.
    fn legend_layout(&self, dense: bool) -> (Vec<(String, Swatch, f64, usize)>, usize) {
        let mut out = Vec::new();
        let (mut x, mut row) = (ML, 0);
        for (name, sw) in self.legend_entries(dense) {
            let w = 30.0 + text_width(&name, FONT) + 18.0;
            if x + w > W - MR && x > ML {
                x = ML;
                row += 1;
            }
            out.push((name, sw, x, row));
            x += w;
        }
        let rows = if out.is_empty() { 0 } else { row + 1 };
        (out, rows)
    }

    /// The chart as an `<svg>` element.
    pub fn to_svg(&self) -> String {
        let series = self.prepared();
        let mut e = self.extent(&series);
        let pw = W - ML - MR;
        let dense = self.strip.is_some_and(|s| s.dense(e.x0, e.x1, pw));
        let (legend, rows) = self.legend_layout(dense);
        let strip_h = self.strip.map_or(0.0, |s| s.height());
        let top = 26.0 + LEGEND_ROW * rows as f64 + 4.0 + strip_h;
        let ph = if self.equal_axes {
            // Tall enough for the route's shape, within reason.
            let aspect = (e.y1 - e.y0) / (e.x1 - e.x0);
            (pw * aspect).clamp(PLOT_H, 2.2 * PLOT_H)
        } else {
            PLOT_H
        };
        if self.equal_axes {
            let s = ((e.x1 - e.x0) / pw).max((e.y1 - e.y0) / ph);
            let (cx, cy) = (0.5 * (e.x0 + e.x1), 0.5 * (e.y0 + e.y1));
            (e.x0, e.x1) = (cx - 0.5 * s * pw, cx + 0.5 * s * pw);
            (e.y0, e.y1) = (cy - 0.5 * s * ph, cy + 0.5 * s * ph);
        }
        let f = Frame {
            x0: e.x0,
            x1: e.x1,
            y0: e.y0,
            y1: e.y1,
            left: ML,
            top,
            pw,
            ph,
        };
        let h = top + ph + 44.0;
        let mut o = String::new();
        let id = &self.id;
        let _ = write!(
            o,
            r##"<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {W} {h:.0}" class="chart" role="img" aria-label="{t}" font-family="sans-serif" font-size="{FONT}"><defs><clipPath id="{id}-clip"><rect x="{ML}" y="{top:.1}" width="{pw:.1}" height="{ph:.1}"/></clipPath><pattern id="{id}-hatch" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)"><line x1="0" y1="0" x2="0" y2="6" stroke="#000" stroke-opacity="0.22" stroke-width="2"/></pattern></defs>"##,
            t = esc(&self.title)
        );
        let _ = write!(
            o,
            r##"<text x="{ML}" y="17" font-size="14" font-weight="bold">{}</text>"##,
            esc(&self.title)
        );
        self.draw_legend(&mut o, &legend);
        if let Some(s) = self.strip {
            s.draw_above(&mut o, &f, &self.id);
        }
        self.draw_axes(&mut o, &f, h);
        let _ = write!(o, r#"<g clip-path="url(#{id}-clip)">"#);
        if let Some(s) = self.strip {
            s.draw_in_plot(&mut o, &f, &self.id);
        }
        self.draw_bands(&mut o, &f);
        self.draw_ref_lines(&mut o, &f);
        for (s, pts) in self.series.iter().zip(&series) {
            draw_line(&mut o, &f, pts, s.style);
        }
        self.draw_marks(&mut o, &f);
        o.push_str("</g>");
        self.draw_vmarks(&mut o, &f);
        let _ = write!(
            o,
            r##"<rect x="{ML}" y="{top:.1}" width="{pw:.1}" height="{ph:.1}" fill="none" stroke="#444"/>"##
        );
        o.push_str("</svg>");
        o
    }

    fn draw_legend(&self, o: &mut String, legend: &[(String, Swatch, f64, usize)]) {
        for (name, sw, x, row) in legend {
            let y = 30.0 + LEGEND_ROW * *row as f64;
            let (x, y) = (*x, y);
            match sw {
                Swatch::Line(s) => {
                    let _ = write!(
                        o,
                        r##"<line x1="{x:.1}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="{}" stroke-width="{}"{}/>"##,
                        x + 26.0,
                        s.colour,
                        s.width.max(1.5),
                        s.dash.attr()
                    );
                }
                Swatch::Fill(c) => {
                    let _ = write!(
                        o,
                        r##"<rect x="{x:.1}" y="{:.1}" width="26" height="10" fill="{c}" fill-opacity="0.25" stroke="{c}" stroke-width="0.8"/>"##,
                        y - 5.0
                    );
                }
                Swatch::Mark(m, c) => draw_marker(o, x + 13.0, y, *m, c),
                Swatch::Hatch => {
                    let _ = write!(
                        o,
                        r##"<rect x="{x:.1}" y="{:.1}" width="26" height="10" fill="url(#{}-hatch)" stroke="#999" stroke-width="0.5"/>"##,
                        y - 5.0,
                        self.id
                    );
                }
                Swatch::Shade => {
                    let _ = write!(
                        o,
                        r##"<rect x="{x:.1}" y="{:.1}" width="26" height="10" fill="#000" fill-opacity="0.09" stroke="#999" stroke-width="0.5"/>"##,
                        y - 5.0
                    );
                }
                Swatch::Ragged => {
                    super::strip::ragged_edge(o, x + 10.0, y - 7.0, 14.0);
                }
                Swatch::Joint => {
                    let _ = write!(
                        o,
                        r##"<rect x="{:.1}" y="{:.1}" width="8" height="12" fill="{GREY}" fill-opacity="0.35"/><line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="#333" stroke-width="1"/>"##,
                        x + 9.0,
                        y - 6.0,
                        x + 13.0,
                        y - 6.0,
                        x + 13.0,
                        y + 6.0
                    );
                }
            }
            let _ = write!(
                o,
                r##"<text x="{:.1}" y="{:.1}">{}</text>"##,
                x + 31.0,
                y + 4.0,
                esc(name)
            );
        }
    }

    fn draw_axes(&self, o: &mut String, f: &Frame, h: f64) {
        let xs = tick_step(f.x1 - f.x0);
        let mut t = (f.x0 / xs).ceil() * xs;
        while t <= f.x1 + 1e-9 * xs {
            let px = f.sx(t);
            let _ = write!(
                o,
                r##"<line x1="{px:.1}" y1="{:.1}" x2="{px:.1}" y2="{:.1}" stroke="#e2e2e2"/><line x1="{px:.1}" y1="{:.1}" x2="{px:.1}" y2="{:.1}" stroke="#444"/><text x="{px:.1}" y="{:.1}" text-anchor="middle">{}</text>"##,
                f.top,
                f.bottom(),
                f.bottom(),
                f.bottom() + 4.0,
                f.bottom() + 17.0,
                fmt_tick(t, xs)
            );
            t += xs;
        }
        let ys = tick_step(f.y1 - f.y0);
        let mut t = (f.y0 / ys).ceil() * ys;
        while t <= f.y1 + 1e-9 * ys {
            let py = f.sy(t);
            let zero = t.abs() < 1e-9 * ys;
            let _ = write!(
                o,
                r##"<line x1="{ML}" y1="{py:.1}" x2="{:.1}" y2="{py:.1}" stroke="{}"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
                f.right(),
                if zero { "#999" } else { "#e2e2e2" },
                ML - 6.0,
                py + 4.0,
                fmt_tick(t, ys)
            );
            t += ys;
        }
        let _ = write!(
            o,
            r##"<text x="{:.1}" y="{:.1}" text-anchor="middle">{}</text>"##,
            ML + 0.5 * f.pw,
            h - 8.0,
            esc(&self.x_label)
        );
        let _ = write!(
            o,
            r##"<text transform="translate(14 {:.1}) rotate(-90)" text-anchor="middle">{}</text>"##,
            f.top + 0.5 * f.ph,
            esc(&self.y_label)
        );
    }

    fn draw_bands(&self, o: &mut String, f: &Frame) {
        for b in &self.bands {
            let pts = match self.x_range {
                Some((a, c)) => in_range(&b.points, |q| q.0, a, c),
                None => &b.points[..],
            };
            for run in pts
                .split(|q| !(q.0.is_finite() && q.1.is_finite() && q.2.is_finite()))
                .filter(|r| r.len() >= 2)
            {
                let mut d = String::new();
                for (i, q) in run.iter().enumerate() {
                    let _ = write!(
                        d,
                        "{}{:.1},{:.1}",
                        if i == 0 { "M" } else { " L" },
                        f.sx(q.0),
                        f.sy(q.2).clamp(f.top - 2.0, f.bottom() + 2.0)
                    );
                }
                for q in run.iter().rev() {
                    let _ = write!(
                        d,
                        " L{:.1},{:.1}",
                        f.sx(q.0),
                        f.sy(q.1).clamp(f.top - 2.0, f.bottom() + 2.0)
                    );
                }
                let _ = write!(
                    o,
                    r##"<path d="{d} Z" fill="{c}" fill-opacity="0.2" stroke="{c}" stroke-opacity="0.6" stroke-width="0.6"/>"##,
                    c = b.colour
                );
            }
        }
    }

    fn draw_ref_lines(&self, o: &mut String, f: &Frame) {
        for r in &self.ref_lines {
            let y = f.sy(r.y);
            let _ = write!(
                o,
                r##"<line x1="{ML}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="{}" stroke-width="{}"{}/>"##,
                f.right(),
                r.style.colour,
                r.style.width,
                r.style.dash.attr()
            );
        }
    }

    fn draw_marks(&self, o: &mut String, f: &Frame) {
        for set in &self.marks {
            for m in &set.marks {
                let (x, y) = (f.sx(m.x), f.sy(m.y));
                if let Some((dx, dy)) = m.vector {
                    let (x2, y2) = (f.sx(m.x + dx), f.sy(m.y + dy));
                    draw_arrow(o, (x, y), (x2, y2), set.colour);
                }
                draw_marker(o, x, y, set.marker, set.colour);
                if !m.label.is_empty() {
                    let _ = write!(
                        o,
                        r##"<text x="{:.1}" y="{:.1}" font-weight="bold" stroke="#fff" stroke-width="3" paint-order="stroke">{}</text>"##,
                        x + 8.0,
                        y - 6.0,
                        esc(&m.label)
                    );
                }
            }
        }
    }

    fn draw_vmarks(&self, o: &mut String, f: &Frame) {
        for v in &self.vmarks {
            for (x, label) in &v.at {
                if !(*x >= f.x0 && *x <= f.x1) {
                    continue;
                }
                let px = f.sx(*x);
                let _ = write!(
                    o,
                    r##"<line x1="{px:.1}" y1="{:.1}" x2="{px:.1}" y2="{:.1}" stroke="{}" stroke-width="1.5" stroke-dasharray="2 2"/>"##,
                    f.top,
                    f.bottom(),
                    v.colour
                );
                draw_marker(o, px, f.top + 6.0, Marker::Triangle, v.colour);
                let _ = write!(
                    o,
                    r##"<text x="{:.1}" y="{:.1}" font-size="11" stroke="#fff" stroke-width="3" paint-order="stroke">{}</text>"##,
                    px + 7.0,
                    f.top + 12.0,
                    esc(label)
                );
            }
        }
    }
}

fn draw_line(o: &mut String, f: &Frame, pts: &[(f64, f64)], s: Style) {
    let mut d = String::new();
    let mut pen = false;
    for &(x, y) in pts {
        if !(x.is_finite() && y.is_finite()) {
            pen = false;
            continue;
        }
        let _ = write!(
            d,
            "{}{:.1},{:.1}",
            if pen { " L" } else { " M" },
            f.sx(x),
            f.sy(y)
        );
        pen = true;
    }
    if d.is_empty() {
        return;
    }
    let _ = write!(
        o,
        r##"<path d="{}" fill="none" stroke="{}" stroke-width="{}" stroke-linejoin="round"{}/>"##,
        d.trim_start(),
        s.colour,
        s.width,
        s.dash.attr()
    );
}

fn draw_marker(o: &mut String, x: f64, y: f64, m: Marker, c: &str) {
    let _ = match m {
        Marker::Circle => write!(
            o,
            r##"<circle cx="{x:.1}" cy="{y:.1}" r="4" fill="#fff" stroke="{c}" stroke-width="1.8"/>"##
        ),
        Marker::Square => write!(
            o,
            r##"<rect x="{:.1}" y="{:.1}" width="8" height="8" fill="{c}" stroke="#fff" stroke-width="0.8"/>"##,
            x - 4.0,
            y - 4.0
        ),
        Marker::Triangle => write!(
            o,
            r##"<path d="M{:.1},{:.1} L{:.1},{:.1} L{x:.1},{:.1} Z" fill="{c}" stroke="#fff" stroke-width="0.8"/>"##,
            x - 5.0,
            y - 5.0,
            x + 5.0,
            y - 5.0,
            y + 4.0
        ),
    };
}

fn draw_arrow(o: &mut String, a: (f64, f64), b: (f64, f64), c: &str) {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    let len = dx.hypot(dy);
    if len < 1.0 {
        return;
    }
    let (ux, uy) = (dx / len, dy / len);
    let head = 7.0_f64.min(0.5 * len);
    let (l, r) = (
        (
            b.0 - head * ux + 0.5 * head * uy,
            b.1 - head * uy - 0.5 * head * ux,
        ),
        (
            b.0 - head * ux - 0.5 * head * uy,
            b.1 - head * uy + 0.5 * head * ux,
        ),
    );
    let _ = write!(
        o,
        r##"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{c}" stroke-width="2"/><path d="M{:.1},{:.1} L{:.1},{:.1} L{:.1},{:.1} Z" fill="{c}"/>"##,
        a.0, a.1, b.0, b.1, b.0, b.1, l.0, l.1, r.0, r.1
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round() {
        assert_eq!(tick_step(1000.0), 200.0);
        assert_eq!(tick_step(7.0), 1.0);
        assert_eq!(tick_step(0.3), 0.05);
    }

    #[test]
    fn decimation_keeps_peaks_and_gaps() {
        let p: Vec<(f64, f64)> = (0..10_000)
            .map(|i| (i as f64, if i == 5_001 { 99.0 } else { 0.0 }))
            .collect();
        let d = decimate(&p, 200);
        assert!(d.len() <= 202);
        assert!(d.iter().any(|q| q.1 == 99.0));
        let mut g = p.clone();
        g[7_000].1 = f64::NAN;
        assert!(decimate(&g, 200).iter().any(|q| q.1.is_nan()));
    }

    #[test]
    fn range_keeps_one_neighbour_each_side() {
        let p: Vec<(f64, f64)> = (0..10).map(|i| (i as f64, 0.0)).collect();
        let r = in_range(&p, |q| q.0, 2.5, 5.5);
        assert_eq!(r.first().unwrap().0, 2.0);
        assert_eq!(r.last().unwrap().0, 6.0);
        assert!(in_range(&p, |q| q.0, 20.0, 30.0).is_empty());
    }

    #[test]
    fn chart_is_well_formed_and_escapes_text() {
        let c = Chart {
            id: "t".into(),
            title: "a < b".into(),
            x_label: "chainage (m)".into(),
            y_label: "v".into(),
            series: vec![Series {
                name: "s".into(),
                points: vec![(0.0, 1.0), (f64::NAN, 2.0), (2.0, 3.0)],
                style: Style::new(BLUE, Pattern::Solid, 1.0),
            }],
            ..Default::default()
        };
        let s = c.to_svg();
        assert!(s.starts_with("<svg") && s.ends_with("</svg>"));
        assert!(s.contains("a &lt; b"));
        assert!(!s.contains("NaN"));
    }

    #[test]
    fn the_legend_sits_above_the_plot() {
        let c = Chart {
            id: "t".into(),
            title: "t".into(),
            series: (0..8)
                .map(|i| Series {
                    name: format!("a rather long legend entry {i}"),
                    points: vec![(0.0, 0.0), (1.0, 1.0)],
                    style: Style::new(BLUE, Pattern::Solid, 1.0),
                })
                .collect(),
            ..Default::default()
        };
        let (legend, rows) = c.legend_layout(false);
        assert!(rows >= 3, "eight long entries wrap over several rows");
        assert!(legend.iter().all(|l| l.2 + 30.0 < W));
        let svg = c.to_svg();
        // The plot frame starts below the last legend row.
        let top = 26.0 + LEGEND_ROW * rows as f64 + 4.0;
        assert!(svg.contains(&format!(r#"y="{top:.1}" width"#)), "{svg}");
    }
}
