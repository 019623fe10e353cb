//! Minimal SVG line charts for the HTML report: axes with round ticks, one
//! or more series, a legend. Hand-written so the report needs no fonts,
//! no system libraries and no JavaScript.

use std::fmt::Write as _;

/// One line on a chart.
#[derive(Debug, Clone)]
pub struct Series<'a> {
    /// Legend text.
    pub name: &'a str,
    /// Points (x, y); non-finite points break the line.
    pub points: Vec<(f64, f64)>,
    /// CSS colour.
    pub colour: &'a str,
    /// Draw dashed.
    pub dashed: bool,
}

/// A chart: title, axis labels and series. `equal_axes` keeps one unit the
/// same length on both axes (for the plan).
#[derive(Debug, Clone)]
pub struct Chart<'a> {
    /// Title above the plot.
    pub title: &'a str,
    /// Label of the x axis.
    pub x_label: &'a str,
    /// Label of the y axis.
    pub y_label: &'a str,
    /// The lines.
    pub series: Vec<Series<'a>>,
    /// Same scale on both axes.
    pub equal_axes: bool,
}

const W: f64 = 900.0;
const H: f64 = 300.0;
const ML: f64 = 70.0;
const MR: f64 = 20.0;
const MT: f64 = 30.0;
const MB: f64 = 45.0;

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

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
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

impl Chart<'_> {
    /// The chart as an `<svg>` element.
    pub fn to_svg(&self) -> String {
        let series: Vec<Vec<(f64, f64)>> = self
            .series
            .iter()
            .map(|s| decimate(&s.points, 3000))
            .collect();
        let pts = series
            .iter()
            .flatten()
            .filter(|p| p.0.is_finite() && p.1.is_finite());
        let (mut x0, mut x1, mut y0, mut y1) = (
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY,
        );
        for &(x, y) in pts {
            x0 = x0.min(x);
            x1 = x1.max(x);
            y0 = y0.min(y);
            y1 = y1.max(y);
        }
        if !(x0.is_finite() && y0.is_finite()) {
            (x0, x1, y0, y1) = (0.0, 1.0, 0.0, 1.0);
        }
        if x1 - x0 < 1e-12 {
            x1 = x0 + 1.0;
        }
        if y1 - y0 < 1e-12 {
            y0 -= 0.5;
            y1 += 0.5;
        }
        let pad = 0.05 * (y1 - y0);
        y0 -= pad;
        y1 += pad;
        let h = if self.equal_axes { 1.8 * H } else { H };
        let (pw, ph) = (W - ML - MR, h - MT - MB);
        if self.equal_axes {
            // Same metres per pixel on both axes: widen the smaller span.
            let sx = (x1 - x0) / pw;
            let sy = (y1 - y0) / ph;
            let s = sx.max(sy);
            let (cx, cy) = (0.5 * (x0 + x1), 0.5 * (y0 + y1));
            x0 = cx - 0.5 * s * pw;
            x1 = cx + 0.5 * s * pw;
            y0 = cy - 0.5 * s * ph;
            y1 = cy + 0.5 * s * ph;
        }
        let sx = |x: f64| ML + (x - x0) / (x1 - x0) * pw;
        let sy = |y: f64| MT + (1.0 - (y - y0) / (y1 - y0)) * ph;
        let mut o = String::new();
        let _ = write!(
            o,
            r#"<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {W} {h}" width="100%" role="img" aria-label="{t}" font-family="sans-serif" font-size="12">"#,
            t = esc(self.title)
        );
        let _ = write!(
            o,
            r##"<text x="{ML}" y="18" font-size="14" font-weight="bold">{}</text>"##,
            esc(self.title)
        );
        let _ = write!(
            o,
            r##"<rect x="{ML}" y="{MT}" width="{pw}" height="{ph}" fill="none" stroke="#888"/>"##
        );
        let xs = tick_step(x1 - x0);
        let mut t = (x0 / xs).ceil() * xs;
        while t <= x1 + 1e-9 * xs {
            let px = sx(t);
            let _ = write!(
                o,
                r##"<line x1="{px:.1}" y1="{MT}" x2="{px:.1}" y2="{b:.1}" stroke="#ddd"/><text x="{px:.1}" y="{ty:.1}" text-anchor="middle">{}</text>"##,
                fmt_tick(t, xs),
                b = MT + ph,
                ty = MT + ph + 16.0
            );
            t += xs;
        }
        let ys = tick_step(y1 - y0);
        let mut t = (y0 / ys).ceil() * ys;
        while t <= y1 + 1e-9 * ys {
            let py = sy(t);
            let _ = write!(
                o,
                r##"<line x1="{ML}" y1="{py:.1}" x2="{r:.1}" y2="{py:.1}" stroke="#ddd"/><text x="{tx:.1}" y="{ty:.1}" text-anchor="end">{}</text>"##,
                fmt_tick(t, ys),
                r = ML + pw,
                tx = ML - 6.0,
                ty = py + 4.0
            );
            t += ys;
        }
        let _ = write!(
            o,
            r##"<text x="{:.1}" y="{:.1}" text-anchor="middle">{}</text>"##,
            ML + 0.5 * pw,
            h - 6.0,
            esc(self.x_label)
        );
        let _ = write!(
            o,
            r##"<text transform="translate(14 {:.1}) rotate(-90)" text-anchor="middle">{}</text>"##,
            MT + 0.5 * ph,
            esc(self.y_label)
        );
        for (s, pts) in self.series.iter().zip(&series) {
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
                    sx(x),
                    sy(y)
                );
                pen = true;
            }
            let _ = write!(
                o,
                r##"<path d="{d}" fill="none" stroke="{}" stroke-width="1.4"{}/>"##,
                s.colour,
                if s.dashed {
                    r#" stroke-dasharray="5 3""#
                } else {
                    ""
                }
            );
        }
        // A white panel under the legend so that it stays readable over data.
        let _ = write!(
            o,
            r##"<rect x="{:.1}" y="{:.1}" width="200" height="{:.1}" fill="white" fill-opacity="0.85"/>"##,
            ML + pw - 206.0,
            MT + 3.0,
            16.0 * self.series.len() as f64 + 6.0
        );
        for (i, s) in self.series.iter().enumerate() {
            let lx = ML + pw - 200.0;
            let ly = MT + 14.0 + 16.0 * i as f64;
            let _ = write!(
                o,
                r##"<line x1="{lx}" y1="{ly}" x2="{:.1}" y2="{ly}" stroke="{}" stroke-width="2"{}/><text x="{:.1}" y="{:.1}">{}</text>"##,
                lx + 24.0,
                s.colour,
                if s.dashed {
                    r#" stroke-dasharray="5 3""#
                } else {
                    ""
                },
                lx + 30.0,
                ly + 4.0,
                esc(s.name)
            );
        }
        o.push_str("</svg>");
        o
    }
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
    fn decimation_keeps_peaks() {
        let p: Vec<(f64, f64)> = (0..10_000)
            .map(|i| (i as f64, if i == 5_001 { 99.0 } else { 0.0 }))
            .collect();
        let d = decimate(&p, 200);
        assert!(d.len() <= 202);
        assert!(d.iter().any(|q| q.1 == 99.0));
    }

    #[test]
    fn chart_is_well_formed_and_escapes_text() {
        let c = Chart {
            title: "a < b",
            x_label: "chainage (m)",
            y_label: "v",
            series: vec![Series {
                name: "s",
                points: vec![(0.0, 1.0), (f64::NAN, 2.0), (2.0, 3.0)],
                colour: "#000",
                dashed: false,
            }],
            equal_axes: false,
        };
        let s = c.to_svg();
        assert!(s.starts_with("<svg") && s.ends_with("</svg>"));
        assert!(s.contains("a &lt; b"));
        assert!(!s.contains("NaN"));
    }
}
