//! The report's diagrams, built from the results: versines, curvature,
//! residuals and slews along the chainage (each with the element strip and
//! the joints), the position uncertainty, and the plan with the control
//! points and their residuals.

use super::strip::Strip;
use super::svg::{
    BLACK, BLUE, Band, Chart, GREY, Mark, MarkSet, Marker, PURPLE, Pattern, RefLine, Series, Style,
    VERMILLION, VMarks,
};
use crate::results::Results;
use std::cell::Cell;

const MEASURED: Style = Style::new(BLUE, Pattern::Solid, 1.3);
const DESIGN: Style = Style::new(VERMILLION, Pattern::Dashed, 2.0);
const LIMIT: Style = Style::new(BLACK, Pattern::DotDash, 1.2);

/// A chainage range shown, chart units; `None`: the whole survey.
pub(super) type Range = Option<(f64, f64)>;

/// The element strips drawn above the chainage charts (with and without
/// joint chainages), built once per report and shared by its diagrams.
pub(super) struct Strips {
    strip: Option<Strip>,
    labelled: Option<Strip>,
}

impl Strips {
    pub(super) fn new(r: &Results) -> Self {
        let u = r.survey.chainage_unit;
        let strip = r.fit.as_ref().map(|f| Strip::from_fit(f, u));
        let labelled = strip.clone().map(|mut s| {
            s.label_joints = true;
            s
        });
        Strips { strip, labelled }
    }
}

/// Builds diagrams of one report; numbers them from a given first id so
/// that every SVG id is unique in the page, also when the sections of a long
/// survey are drawn at the same time (each from its own first id).
pub(super) struct Diagrams<'a> {
    r: &'a Results,
    strip: Option<&'a Strip>,
    labelled: Option<&'a Strip>,
    next: Cell<usize>,
}

impl<'a> Diagrams<'a> {
    /// Diagrams numbered from `first + 1`.
    pub(super) fn new(r: &'a Results, strips: &'a Strips, first: usize) -> Self {
        Diagrams {
            r,
            strip: strips.strip.as_ref(),
            labelled: strips.labelled.as_ref(),
            next: Cell::new(first),
        }
    }

    /// The number of the last diagram made (the first id of what follows).
    pub(super) fn last_id(&self) -> usize {
        self.next.get()
    }

    /// Diagrams one chainage range has: versines, curvature, and the
    /// residuals and slews when there are a design and slews.
    pub(super) fn per_range(&self) -> usize {
        2 + usize::from(self.r.design.is_some()) + usize::from(self.r.slews.is_some())
    }

    fn ch(&self, metres: f64) -> f64 {
        self.r.survey.chainage_unit.from_m(metres)
    }

    fn v(&self, metres: f64) -> f64 {
        self.r.survey.chainage_unit.versine_unit().from_m(metres)
    }

    fn vs(&self) -> &'static str {
        self.r.survey.chainage_unit.versine_unit().suffix()
    }

    /// The indices of the stations a chart of `range` draws (see [`window`]).
    fn stations_in(&self, range: Range) -> std::ops::Range<usize> {
        let st = &self.r.plan.stations;
        window(st.len(), |i| self.ch(st[i].chainage), range)
    }

    /// A chainage chart with the element strip; joint chainages written
    /// when `label_joints`.
    fn chart(&self, title: String, y_label: String, range: Range, label_joints: bool) -> Chart<'_> {
        let n = self.next.get() + 1;
        self.next.set(n);
        Chart {
            id: format!("d{n}"),
            title,
            x_label: format!("chainage ({})", self.r.survey.chainage_unit.suffix()),
            y_label,
            strip: if label_joints {
                self.labelled
            } else {
                self.strip
            },
            x_range: range,
            ..Default::default()
        }
    }

    /// Measured and design versines; an `overview` (a long survey drawn
    /// whole) has the measured line only and no joint chainages.
    pub(super) fn versines(&self, range: Range, overview: bool) -> String {
        let w = self.stations_in(range);
        let st = &self.r.plan.stations[w.clone()];
        let mut c = self.chart(
            "Versines".into(),
            format!("versine ({}), + = rail bows away from wire", self.vs()),
            range,
            !overview,
        );
        c.series.push(Series {
            name: "measured".into(),
            points: st
                .iter()
                .map(|s| {
                    (
                        self.ch(s.chainage),
                        s.versine.map_or(f64::NAN, |v| self.v(v)),
                    )
                })
                .collect(),
            style: MEASURED,
        });
        if let Some((_, _, dv)) = self.r.design.as_ref().filter(|_| !overview) {
            c.series.push(Series {
                name: "design (fitted elements)".into(),
                points: st
                    .iter()
                    .zip(&dv[w.clone()])
                    .map(|(s, &dv)| (self.ch(s.chainage), self.v(dv)))
                    .collect(),
                style: DESIGN,
            });
        }
        c.to_svg()
    }

    /// Curvature from the versines and of the fitted elements; an
    /// `overview` has the fitted line only (solid) and no joint chainages.
    pub(super) fn curvature(&self, range: Range, overview: bool) -> String {
        let u = self.r.survey.chainage_unit;
        // 1/km or 1/(1000 ft): curvature per thousand chainage units.
        let per = 1000.0 * u.metres();
        let st = &self.r.plan.stations[self.stations_in(range)];
        let mut c = self.chart(
            "Curvature of the centreline".into(),
            match u {
                crate::units::LengthUnit::Metre => "curvature (1/km), + = curving left".to_string(),
                crate::units::LengthUnit::Foot => {
                    "curvature (1/1000 ft), + = curving left".to_string()
                }
            },
            range,
            !overview,
        );
        if !(overview && self.r.design.is_some()) {
            c.series.push(Series {
                name: "from the versines".into(),
                points: st
                    .iter()
                    .map(|s| (self.ch(s.chainage), s.curvature * per))
                    .collect(),
                style: MEASURED,
            });
        }
        if let (Some(f), Some((placed, ..))) = (&self.r.fit, &self.r.design) {
            c.series.push(Series {
                name: "fitted elements".into(),
                points: st
                    .iter()
                    .map(|s| {
                        let k = placed.curvature_at(f.centre_distance(s.chainage));
                        (self.ch(s.chainage), k * per)
                    })
                    .collect(),
                style: if overview {
                    Style::new(VERMILLION, Pattern::Solid, 1.3)
                } else {
                    DESIGN
                },
            });
        }
        c.to_svg()
    }

    /// Residuals (measured − design) with ± 2 reading sd.
    pub(super) fn residuals(&self, range: Range) -> Option<String> {
        let (f, (_, _, dv)) = (self.r.fit.as_ref()?, self.r.design.as_ref()?);
        let w = self.stations_in(range);
        let st = &self.r.plan.stations[w.clone()];
        let mut c = self.chart(
            "Residuals: measured − design".into(),
            format!("residual ({})", self.vs()),
            range,
            false,
        );
        c.series.push(Series {
            name: "residual".into(),
            points: st
                .iter()
                .zip(w.map(|i| {
                    crate::results::placed_residual(f.residual[i], dv[i], f.design_versine[i])
                }))
                .map(|(s, r)| (self.ch(s.chainage), r.map_or(f64::NAN, |r| self.v(r))))
                .collect(),
            style: Style::new(BLUE, Pattern::Solid, 1.0),
        });
        let band = self.v(2.0 * self.r.plan.reading_sd);
        for y in [band, -band] {
            c.ref_lines.push(RefLine {
                name: format!("± 2 reading sd ({band:.2} {})", self.vs()),
                y,
                style: LIMIT,
            });
        }
        Some(c.to_svg())
    }

    /// Slews with their ± 2 sd band (clipped at the plot edge), the slew
    /// limit and the fixed points; with a caption saying what was clipped.
    pub(super) fn slews(&self, range: Range) -> Option<(String, String)> {
        let sl = self.r.slews.as_ref()?;
        let vs = self.vs();
        let in_range = |c: f64| range.is_none_or(|(a, b)| c >= a && c <= b);
        let w = window(sl.chainage.len(), |i| self.ch(sl.chainage[i]), range);
        let (chainage, slew, sd) = (&sl.chainage[w.clone()], &sl.slew[w.clone()], &sl.sd[w]);
        let mut biggest = 0.0_f64;
        let mut band_reach = 0.0_f64;
        for ((&c, &s), &sd) in chainage.iter().zip(slew).zip(sd) {
            if in_range(self.ch(c)) {
                biggest = biggest.max(self.v(s.abs()));
                band_reach = band_reach.max(self.v(s.abs() + 2.0 * sd));
            }
        }
        let limit = sl.max_slew.map(|l| self.v(l));
        let top = (biggest.max(limit.unwrap_or(0.0)) * 1.25).max(self.v(0.002));
        let mut c = self.chart(
            "Slews onto the design (indicative)".into(),
            format!("slew ({vs}), + = move left"),
            range,
            false,
        );
        c.y_range = Some((-top, top));
        c.bands.push(Band {
            name: "± 2 sd".into(),
            points: chainage
                .iter()
                .zip(slew)
                .zip(sd)
                .map(|((&ch, &s), &sd)| (self.ch(ch), self.v(s - 2.0 * sd), self.v(s + 2.0 * sd)))
                .collect(),
            colour: GREY,
        });
        c.series.push(Series {
            name: "slew".into(),
            points: chainage
                .iter()
                .zip(slew)
                .map(|(&ch, &s)| (self.ch(ch), self.v(s)))
                .collect(),
            style: Style::new(BLUE, Pattern::Solid, 1.8),
        });
        if let Some(l) = limit {
            for y in [l, -l] {
                c.ref_lines.push(RefLine {
                    name: format!("slew limit ± {l:.0} {vs}"),
                    y,
                    style: Style::new(VERMILLION, Pattern::DotDash, 1.6),
                });
            }
            // The stretches beyond the limit, drawn as a thick line under the slew.
            let over = sl.exceeding();
            if !over.is_empty() {
                let points = chainage
                    .iter()
                    .zip(slew)
                    .map(|(&ch, &s)| {
                        let y = if s.abs() > sl.max_slew.unwrap_or(f64::INFINITY) {
                            self.v(s)
                        } else {
                            f64::NAN
                        };
                        (self.ch(ch), y)
                    })
                    .collect();
                c.series.insert(
                    0,
                    Series {
                        name: format!("beyond the limit ({} readings)", over.len()),
                        points,
                        style: Style::new(VERMILLION, Pattern::Solid, 5.0),
                    },
                );
            }
        }
        let fixed = self.fixed_points();
        if !fixed.is_empty() {
            c.vmarks.push(VMarks {
                name: "fixed point (held)".into(),
                colour: PURPLE,
                at: fixed,
            });
        }
        let mut caption = String::from(
            "The first and last chord length are held (slew 0) so that the realigned track joins the undisturbed track.",
        );
        if band_reach > top {
            caption.push_str(&format!(
                " The ± 2 sd band reaches {band_reach:.0} {vs} and is cut at the plot edge so that the slews stay readable; read slew_sd_mm (or slew_sd_in) in stations.csv."
            ));
        }
        Some((c.to_svg(), caption))
    }

    /// Interior runs of held readings (fixed points), chart x and label.
    fn fixed_points(&self) -> Vec<(f64, String)> {
        let Some(sl) = &self.r.slews else {
            return Vec::new();
        };
        let n = sl.held.len();
        let mut out = Vec::new();
        let mut i = 0;
        while i < n {
            if !sl.held[i] {
                i += 1;
                continue;
            }
            let start = i;
            while i < n && sl.held[i] {
                i += 1;
            }
            if start > 0 && i < n {
                let mid = 0.5 * (sl.chainage[start] + sl.chainage[i - 1]);
                out.push((self.ch(mid), format!("held {:.0}", self.ch(mid))));
            }
        }
        out
    }

    /// Standard deviation of position along the survey.
    pub(super) fn position_sd(&self) -> String {
        let u = self.r.survey.chainage_unit;
        let mut c = self.chart(
            "Uncertainty of position".into(),
            format!("position sd ({})", u.suffix()),
            None,
            false,
        );
        c.series.push(Series {
            name: "position sd (1 sd, lateral)".into(),
            points: self
                .r
                .plan
                .stations
                .iter()
                .map(|s| (self.ch(s.chainage), self.ch(s.position_sd)))
                .collect(),
            style: MEASURED,
        });
        if !self.r.control_checks.is_empty() {
            c.vmarks.push(VMarks {
                name: "control point".into(),
                colour: BLACK,
                at: self
                    .r
                    .control_checks
                    .iter()
                    .map(|k| (self.ch(k.chainage), k.id.clone()))
                    .collect(),
            });
        }
        c.to_svg()
    }

    /// The plan (equal scales), with control points and their residuals
    /// drawn as arrows enlarged by a stated factor.
    pub(super) fn plan(&self) -> (String, Option<String>) {
        let lu = self.r.survey.chainage_unit.suffix();
        let st = &self.r.plan.stations;
        let n = self.next.get() + 1;
        self.next.set(n);
        let mut c = Chart {
            id: format!("d{n}"),
            title: "Plan (equal scales)".into(),
            x_label: format!("easting ({lu}, local frame)"),
            y_label: format!("northing ({lu})"),
            equal_axes: true,
            ..Default::default()
        };
        c.series.push(Series {
            name: "centreline from the versines".into(),
            points: st.iter().map(|s| (self.ch(s.x), self.ch(s.y))).collect(),
            style: MEASURED,
        });
        if let Some((_, d, _)) = &self.r.design {
            c.series.push(Series {
                name: "fitted design".into(),
                points: d.iter().map(|&(x, y)| (self.ch(x), self.ch(y))).collect(),
                style: DESIGN,
            });
        }
        let caption = self.control_marks(&mut c);
        (c.to_svg(), caption)
    }

    /// Control points on the plan; returns the caption stating the arrow scale.
    fn control_marks(&self, c: &mut Chart<'_>) -> Option<String> {
        let g = self.r.georef.as_ref()?;
        if g.position_obs.is_empty() {
            return None;
        }
        let st = &self.r.plan.stations;
        let span = st.iter().fold(
            (
                f64::INFINITY,
                f64::NEG_INFINITY,
                f64::INFINITY,
                f64::NEG_INFINITY,
            ),
            |a, s| (a.0.min(s.x), a.1.max(s.x), a.2.min(s.y), a.3.max(s.y)),
        );
        let span = (span.1 - span.0).max(span.3 - span.2);
        let res = &self.r.plan.position_residuals;
        let largest = res.iter().map(|r| r.dx.hypot(r.dy)).fold(0.0, f64::max);
        let scale = if largest > 0.0 && span > 0.0 {
            round_down_125(0.06 * span / largest)
        } else {
            0.0
        };
        let mut ok = Vec::new();
        let mut flagged = Vec::new();
        for o in &g.position_obs {
            let r = res.iter().find(|r| r.id == o.id);
            let is_flagged = self
                .r
                .control_checks
                .iter()
                .any(|k| k.id == o.id && k.flagged);
            let m = Mark {
                x: self.ch(o.x),
                y: self.ch(o.y),
                label: o.id.clone(),
                vector: r
                    .filter(|_| scale > 0.0)
                    .map(|r| (self.ch(r.dx * scale), self.ch(r.dy * scale))),
            };
            if is_flagged {
                flagged.push(m);
            } else {
                ok.push(m);
            }
        }
        let what = if scale > 0.0 {
            format!("; arrow: residual × {scale:.0}")
        } else {
            String::new()
        };
        if !ok.is_empty() {
            c.marks.push(MarkSet {
                name: format!("control point{what}"),
                marker: Marker::Square,
                colour: BLACK,
                marks: ok,
            });
        }
        if !flagged.is_empty() {
            c.marks.push(MarkSet {
                name: "control point that disagrees".into(),
                marker: Marker::Circle,
                colour: VERMILLION,
                marks: flagged,
            });
        }
        Some(if scale > 0.0 {
            format!(
                "Control points at their given positions; each arrow is the residual (given minus adjusted position) drawn {scale:.0} times its size. The largest is {:.3} {lu}.",
                self.ch(largest),
                lu = self.r.survey.chainage_unit.suffix()
            )
        } else {
            "Control points at their given positions; their residuals are zero at this drawing's precision.".into()
        })
    }
}

/// The indices `0..n` of the points, at increasing chart x `x(i)`, that a
/// chart of `range` draws: those inside it plus one neighbour on each side
/// (as the chart's own clipping keeps), so that a section of a long survey
/// costs its own length, not the survey's. `None`: all of them.
fn window(n: usize, x: impl Fn(usize) -> f64, range: Range) -> std::ops::Range<usize> {
    let Some((x0, x1)) = range else {
        return 0..n;
    };
    let first = partition(n, |i| x(i) < x0);
    let past = partition(n, |i| x(i) <= x1);
    if first < past {
        first.saturating_sub(1)..(past + 1).min(n)
    } else {
        0..0
    }
}

/// The first index in `0..n` where `before` turns false (it is true on a
/// prefix and false after).
fn partition(n: usize, before: impl Fn(usize) -> bool) -> usize {
    let (mut lo, mut hi) = (0, n);
    while lo < hi {
        let mid = lo + (hi - lo) / 2;
        if before(mid) {
            lo = mid + 1;
        } else {
            hi = mid;
        }
    }
    lo
}

/// The largest 1, 2 or 5 times a power of ten not above `x` (x > 0).
fn round_down_125(x: f64) -> f64 {
    if !(x.is_finite() && x > 0.0) {
        return 0.0;
    }
    let p = 10f64.powf(x.log10().floor());
    let m = x / p;
    let f = if m >= 5.0 {
        5.0
    } else if m >= 2.0 {
        2.0
    } else {
        1.0
    };
    (f * p).max(1.0)
}

#[cfg(test)]
mod tests {
    use super::round_down_125;

    #[test]
    fn arrow_scales_are_round() {
        assert_eq!(round_down_125(730.0), 500.0);
        assert_eq!(round_down_125(23.0), 20.0);
        assert_eq!(round_down_125(0.3), 1.0);
        assert_eq!(round_down_125(0.0), 0.0);
    }
}
