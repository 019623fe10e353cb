//! The element strip drawn above every chainage diagram: one block per fitted
//! element, labelled with its kind, radius and length as far as the block's
//! width allows, and the joints between elements drawn through the plot with
//! their 95 % intervals. A survey end is not a joint: the element there is
//! drawn with a ragged edge ("cut by the survey end").

use super::svg::{Frame, GREY, esc, text_width};
use crate::fit::{ElementStatus, FitResult};
use crate::geometry::ElementKind;
use crate::units::LengthUnit;
use std::fmt::Write as _;

const BLOCK_H: f64 = 30.0;
const JOINT_ROW: f64 = 66.0;
const LABEL_FONT: f64 = 11.0;

/// One element as drawn.
#[derive(Debug, Clone, PartialEq)]
pub struct Block {
    /// Start, chart x (survey chainage in the survey's unit).
    pub x0: f64,
    /// End, chart x.
    pub x1: f64,
    /// Straight, transition or arc.
    pub kind: ElementKind,
    /// Labels from the longest to the shortest; the first that fits is
    /// drawn. A `\n` splits a label over two lines.
    pub labels: Vec<String>,
    /// The start is the survey's end, not a joint.
    pub cut_start: bool,
    /// The end is the survey's end, not a joint.
    pub cut_end: bool,
}

/// A joint between two elements.
#[derive(Debug, Clone, PartialEq)]
pub struct Joint {
    /// Fitted chainage, chart x.
    pub x: f64,
    /// Lower end of the 95 % interval.
    pub lo: f64,
    /// Upper end of the 95 % interval.
    pub hi: f64,
    /// Text, e.g. `12480.1±1.9`.
    pub label: String,
}

/// Elements and joints of a fit, in chart units.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Strip {
    /// The elements.
    pub blocks: Vec<Block>,
    /// The joints (survey ends excluded).
    pub joints: Vec<Joint>,
    /// Whether to write each joint's chainage above the plot.
    pub label_joints: bool,
}

fn hand(r: f64) -> &'static str {
    if r > 0.0 { "left" } else { "right" }
}

fn block_labels(i: usize, e: &crate::fit::FittedElement, unit: LengthUnit) -> Vec<String> {
    let n = i + 1;
    let q = if e.status == ElementStatus::Indeterminate {
        "?"
    } else {
        ""
    };
    let lu = unit.suffix();
    let len = unit.from_m(e.length.value);
    let radius = |r: &Option<crate::fit::Estimate>| r.as_ref().map(|r| unit.from_m(r.value));
    match e.kind {
        ElementKind::Arc => {
            let r = radius(&e.start_radius).unwrap_or(f64::INFINITY);
            vec![
                format!(
                    "{n}{q} arc R {:.1} {lu} {}\nlength {len:.1} {lu}",
                    r.abs(),
                    hand(r)
                ),
                format!("{n}{q} R {:.1} {}\n{len:.1} {lu}", r.abs(), hand(r)),
                format!("{n}{q} R {:.0} {}\n{len:.0} {lu}", r.abs(), hand(r)),
                format!("R{:.0}\n{len:.0}", r.abs()),
                format!("{n}{q}"),
            ]
        }
        ElementKind::Transition => {
            let end = |r: Option<f64>| r.map_or("∞".to_string(), |r| format!("{:.0}", r.abs()));
            let (a, b) = (end(radius(&e.start_radius)), end(radius(&e.end_radius)));
            vec![
                format!("{n}{q} transition R {a}→{b}\nlength {len:.1} {lu}"),
                format!("{n}{q} transition\n{len:.1} {lu}"),
                format!("{n}{q} T\n{len:.1} {lu}"),
                format!("{n}{q} T\n{len:.0}"),
                format!("{n}{q}"),
            ]
        }
        ElementKind::Straight => vec![
            format!("{n}{q} straight\nlength {len:.1} {lu}"),
            format!("{n}{q} straight\n{len:.0} {lu}"),
            format!("{n}{q}\n{len:.0} {lu}"),
            format!("{n}{q}"),
        ],
    }
}

impl Strip {
    /// The strip of a fit, chart x in the survey's chainage unit.
    pub fn from_fit(fit: &FitResult, unit: LengthUnit) -> Strip {
        let c = |v: f64| unit.from_m(v);
        let blocks = fit
            .elements
            .iter()
            .enumerate()
            .map(|(i, e)| Block {
                x0: c(e.start_chainage.value),
                x1: c(e.end_chainage.value),
                kind: e.kind,
                labels: block_labels(i, e, unit),
                cut_start: e.starts_at_survey_end,
                cut_end: e.ends_at_survey_end,
            })
            .collect();
        let joints = fit
            .elements
            .iter()
            .filter(|e| !e.ends_at_survey_end)
            .map(|e| {
                let v = &e.end_chainage;
                Joint {
                    x: c(v.value),
                    lo: c(v.lo95),
                    hi: c(v.hi95),
                    label: format!("{:.1}±{:.1}", c(v.value), c(v.hi95 - v.value)),
                }
            })
            .collect();
        Strip {
            blocks,
            joints,
            label_joints: false,
        }
    }

    /// Height drawn above the plot.
    pub fn height(&self) -> f64 {
        BLOCK_H + 6.0 + if self.label_joints { JOINT_ROW } else { 0.0 }
    }

    /// Whether the joints in `x0..x1` are too close to draw on a plot `pw`
    /// wide (under 6 px apart on average): the strip then shows the shading
    /// only, without borders, labels or joint lines.
    pub fn dense(&self, x0: f64, x1: f64, pw: f64) -> bool {
        let n = self
            .joints
            .iter()
            .filter(|j| j.x >= x0 && j.x <= x1)
            .count();
        n as f64 * 6.0 > pw
    }

    /// Whether a survey end lies in `x0..x1` (`None`: anywhere).
    pub fn has_cut_in(&self, range: Option<(f64, f64)>) -> bool {
        let inside = |x: f64| range.is_none_or(|(a, b)| x >= a && x <= b);
        self.blocks
            .iter()
            .any(|b| (b.cut_start && inside(b.x0)) || (b.cut_end && inside(b.x1)))
    }

    /// Whether any element is an arc.
    pub fn has_arcs(&self) -> bool {
        self.blocks.iter().any(|b| b.kind == ElementKind::Arc)
    }

    /// Whether any element is a transition.
    pub fn has_transitions(&self) -> bool {
        self.blocks
            .iter()
            .any(|b| b.kind == ElementKind::Transition)
    }

    fn fill(kind: ElementKind, id: &str) -> String {
        match kind {
            ElementKind::Arc => r##"fill="#000" fill-opacity="0.09""##.to_string(),
            ElementKind::Transition => format!(r#"fill="url(#{id}-hatch)""#),
            ElementKind::Straight => r##"fill="#fff""##.to_string(),
        }
    }

    /// The blocks, their labels and the joint chainages, above the plot.
    pub fn draw_above(&self, o: &mut String, f: &Frame, id: &str) {
        let top = f.top - self.height();
        let dense = self.dense(f.x0, f.x1, f.pw);
        let stroke = if dense {
            r#"stroke="none""#
        } else {
            r##"stroke="#666" stroke-width="0.8""##
        };
        for b in &self.blocks {
            let (a, c) = (b.x0.max(f.x0), b.x1.min(f.x1));
            if c <= a {
                continue;
            }
            let (px0, px1) = (f.sx(a), f.sx(c));
            let _ = write!(
                o,
                r##"<rect x="{px0:.1}" y="{top:.1}" width="{:.1}" height="{BLOCK_H}" {} {stroke}/>"##,
                px1 - px0,
                Self::fill(b.kind, id)
            );
            if dense {
                continue;
            }
            if b.cut_start && b.x0 >= f.x0 {
                ragged(o, px0, top);
            }
            if b.cut_end && b.x1 <= f.x1 {
                ragged(o, px1, top);
            }
            let room = px1 - px0 - 6.0;
            let fits = |l: &&String| l.lines().all(|s| text_width(s, LABEL_FONT) <= room);
            if let Some(label) = b.labels.iter().find(fits) {
                let cx = 0.5 * (px0 + px1);
                for (k, line) in label.lines().enumerate() {
                    let _ = write!(
                        o,
                        r##"<text x="{cx:.1}" y="{:.1}" text-anchor="middle" font-size="{LABEL_FONT}" stroke="#fff" stroke-width="3" paint-order="stroke">{}</text>"##,
                        top + 12.0 + 13.0 * k as f64,
                        esc(line)
                    );
                }
            }
        }
        if dense {
            let _ = write!(
                o,
                r##"<rect x="{:.1}" y="{top:.1}" width="{:.1}" height="{BLOCK_H}" fill="none" stroke="#666" stroke-width="0.8"/>"##,
                f.left, f.pw
            );
        }
        if self.label_joints && !dense {
            let mut last = f64::NEG_INFINITY;
            for j in &self.joints {
                if !(j.x >= f.x0 && j.x <= f.x1) {
                    continue;
                }
                let px = f.sx(j.x);
                if px - last < 12.0 {
                    continue;
                }
                last = px;
                let _ = write!(
                    o,
                    r##"<text transform="translate({:.1} {:.1}) rotate(-90)" font-size="10.5">{}</text>"##,
                    px + 3.5,
                    f.top - 3.0,
                    esc(&j.label)
                );
            }
        }
    }

    /// Element shading and the joints with their intervals, inside the plot.
    pub fn draw_in_plot(&self, o: &mut String, f: &Frame, id: &str) {
        for b in &self.blocks {
            if b.kind == ElementKind::Straight {
                continue;
            }
            let (a, c) = (b.x0.max(f.x0), b.x1.min(f.x1));
            if c <= a {
                continue;
            }
            let _ = write!(
                o,
                r##"<rect x="{:.1}" y="{:.1}" width="{:.1}" height="{:.1}" {}/>"##,
                f.sx(a),
                f.top,
                f.sx(c) - f.sx(a),
                f.ph,
                Self::fill(b.kind, id).replace("0.09", "0.06")
            );
        }
        if self.dense(f.x0, f.x1, f.pw) {
            return;
        }
        for j in &self.joints {
            if !(j.hi >= f.x0 && j.lo <= f.x1) {
                continue;
            }
            let (a, c) = (f.sx(j.lo), f.sx(j.hi));
            let w = (c - a).max(1.5);
            let _ = write!(
                o,
                r##"<rect x="{:.1}" y="{:.1}" width="{w:.1}" height="{:.1}" fill="{GREY}" fill-opacity="0.3"/><line x1="{px:.1}" y1="{:.1}" x2="{px:.1}" y2="{:.1}" stroke="#333" stroke-width="0.9"/>"##,
                0.5 * (a + c) - 0.5 * w,
                f.top,
                f.ph,
                f.top,
                f.bottom(),
                px = f.sx(j.x)
            );
        }
    }
}

/// A zigzag edge: the element continues beyond the survey.
fn ragged(o: &mut String, x: f64, top: f64) {
    ragged_edge(o, x, top, BLOCK_H);
}

/// A zigzag edge `height` high from (`x`, `top`) (also the legend's swatch).
pub(super) fn ragged_edge(o: &mut String, x: f64, top: f64, height: f64) {
    let mut d = format!("M{x:.1},{top:.1}");
    for k in 1..=6 {
        let dx = if k % 2 == 1 { 3.0 } else { -3.0 };
        let _ = write!(d, " L{:.1},{:.1}", x + dx, top + height * k as f64 / 6.0);
    }
    let _ = write!(
        o,
        r##"<path d="{d}" fill="none" stroke="#000" stroke-width="1.6"/>"##
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    fn strip(joints: usize) -> Strip {
        Strip {
            blocks: Vec::new(),
            joints: (0..joints)
                .map(|i| {
                    let x = 1000.0 * (i as f64 + 0.5) / joints as f64;
                    Joint {
                        x,
                        lo: x - 1.0,
                        hi: x + 1.0,
                        label: String::new(),
                    }
                })
                .collect(),
            label_joints: true,
        }
    }

    #[test]
    fn joints_closer_than_six_pixels_are_not_drawn() {
        assert!(!strip(10).dense(0.0, 1000.0, 740.0));
        assert!(strip(200).dense(0.0, 1000.0, 740.0));
        // The same joints are drawn on a section a tenth as long.
        assert!(!strip(200).dense(0.0, 100.0, 740.0));
        let f = Frame {
            x0: 0.0,
            x1: 1000.0,
            y0: 0.0,
            y1: 1.0,
            left: 60.0,
            top: 100.0,
            pw: 740.0,
            ph: 200.0,
        };
        let (mut sparse, mut dense) = (String::new(), String::new());
        strip(10).draw_in_plot(&mut sparse, &f, "t");
        strip(200).draw_in_plot(&mut dense, &f, "t");
        assert_eq!(sparse.matches("<line").count(), 10);
        assert_eq!(dense.matches("<line").count(), 0);
    }
}
