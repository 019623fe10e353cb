//! A self-contained HTML report of a run: summary, cautions, diagrams of
//! versines, curvature, residuals, plan and uncertainty, and the element
//! table. One file, inline SVG, no scripts, no fonts, no network.

use super::svg::{Chart, Series};
use crate::diag::Severity;
use crate::results::Results;
use std::fmt::Write as _;

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

const CSS: &str = "body{font-family:sans-serif;max-width:980px;margin:2em auto;padding:0 1em;color:#222}\
h1{font-size:1.5em}h2{font-size:1.15em;margin-top:2em;border-bottom:1px solid #ccc}\
pre{background:#f6f6f6;padding:.8em;overflow-x:auto;font-size:.85em}\
table{border-collapse:collapse;font-size:.85em}td,th{border:1px solid #ccc;padding:.25em .5em;text-align:right}\
th{background:#eee}td.k{text-align:left}.caution{border-left:4px solid #b60;background:#fff6ea;padding:.6em 1em}\
.warn{color:#a40}";

/// The report as HTML text.
pub fn html_report(r: &Results) -> String {
    let u = r.survey.chainage_unit;
    let lu = u.suffix();
    let vu = u.versine_unit();
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>chordline report: {t}</title><style>{CSS}</style></head><body>\n<h1>Alignment from versines: {t}</h1>\n",
        t = esc(&r.survey.source)
    );
    h.push_str(
        "<p class=\"caution\"><b>Caution.</b> These figures come from chord offsets measured by others and fitted by statistics. \
They are an aid to a competent track engineer, not a substitute for one: check them against the site, the records and your \
railway's standards before using them for slewing, cant, speed or any decision that bears on safety. Intervals are 95&nbsp;%; \
an element marked indeterminate could not be resolved by the data.</p>\n",
    );
    let _ = write!(
        h,
        "<h2>Summary</h2>\n<pre>{}</pre>\n",
        esc(&super::summary(r))
    );

    let st = &r.plan.stations;
    let ch = |c: f64| u.from_m(c);
    let measured: Vec<(f64, f64)> = st
        .iter()
        .map(|s| (ch(s.chainage), s.versine.map_or(f64::NAN, |v| vu.from_m(v))))
        .collect();
    let mut versine_series = vec![Series {
        name: "measured",
        points: measured,
        colour: "#1f5fa8",
        dashed: false,
    }];
    if let Some((_, d)) = &r.design {
        versine_series.push(Series {
            name: "design (fitted)",
            points: st
                .iter()
                .zip(d)
                .map(|(s, d)| (ch(s.chainage), vu.from_m(d.design_versine)))
                .collect(),
            colour: "#c0392b",
            dashed: true,
        });
    }
    let x_label = format!("chainage ({lu})");
    let chart = |title: &str, y: &str, series: Vec<Series>| {
        Chart {
            title,
            x_label: &x_label,
            y_label: y,
            series,
            equal_axes: false,
        }
        .to_svg()
    };
    let v_label = format!("versine ({}), + = rail bows away from wire", vu.suffix());
    let _ = write!(
        h,
        "<h2>Versines</h2>\n{}\n",
        chart("Versines", &v_label, versine_series)
    );

    let mut k_series = vec![Series {
        name: "from the versines",
        points: st
            .iter()
            .map(|s| (ch(s.chainage), s.curvature * 1e3))
            .collect(),
        colour: "#1f5fa8",
        dashed: false,
    }];
    if let (Some(f), Some((placed, _))) = (&r.fit, &r.design) {
        k_series.push(Series {
            name: "fitted elements",
            points: st
                .iter()
                .map(|s| {
                    (
                        ch(s.chainage),
                        placed.curvature_at(f.centre_distance(s.chainage)) * 1e3,
                    )
                })
                .collect(),
            colour: "#c0392b",
            dashed: true,
        });
    }
    let _ = write!(
        h,
        "<h2>Curvature of the centreline</h2>\n{}\n",
        chart("Curvature", "curvature (1/km), + = curving left", k_series)
    );

    if let Some((_, d)) = &r.design {
        let sd = r.plan.reading_sd;
        let (a, b) = (
            st.first().map_or(0.0, |s| ch(s.chainage)),
            st.last().map_or(1.0, |s| ch(s.chainage)),
        );
        let res: Vec<(f64, f64)> = st
            .iter()
            .zip(d)
            .map(|(s, d)| {
                (
                    ch(s.chainage),
                    d.residual.map_or(f64::NAN, |r| vu.from_m(r)),
                )
            })
            .collect();
        let band = vu.from_m(2.0 * sd);
        let _ = write!(
            h,
            "<h2>Residuals (measured − design)</h2>\n{}\n",
            chart(
                "Residuals",
                &format!("residual ({})", vu.suffix()),
                vec![
                    Series {
                        name: "residual",
                        points: res,
                        colour: "#1f5fa8",
                        dashed: false
                    },
                    Series {
                        name: "± 2 reading sd",
                        points: vec![
                            (a, band),
                            (b, band),
                            (f64::NAN, 0.0),
                            (a, -band),
                            (b, -band)
                        ],
                        colour: "#888",
                        dashed: true
                    },
                ]
            )
        );
    }

    let mut plan = vec![Series {
        name: "centreline from the versines",
        points: st.iter().map(|s| (ch(s.x), ch(s.y))).collect(),
        colour: "#1f5fa8",
        dashed: false,
    }];
    if let Some((_, d)) = &r.design {
        plan.push(Series {
            name: "fitted design",
            points: d.iter().map(|d| (ch(d.x), ch(d.y))).collect(),
            colour: "#c0392b",
            dashed: true,
        });
    }
    let e_label = format!("easting ({lu}, local frame)");
    let n_label = format!("northing ({lu})");
    let _ = write!(
        h,
        "<h2>Plan</h2>\n{}\n",
        Chart {
            title: "Plan (equal scales)",
            x_label: &e_label,
            y_label: &n_label,
            series: plan,
            equal_axes: true,
        }
        .to_svg()
    );
    if let Some(sl) = &r.slews {
        let _ = write!(
            h,
            "<h2>Slews onto the design (indicative)</h2>\n<p class=\"caution\">Slews are for planning only: check clearances, structure gauges, fixed points and cant against local standards before any track is moved. The band is ± 2 sd.</p>\n{}\n",
            chart(
                "Slews",
                &format!("slew ({}), + = move left", vu.suffix()),
                vec![
                    Series {
                        name: "slew",
                        points: sl
                            .chainage
                            .iter()
                            .zip(&sl.slew)
                            .map(|(&c, &v)| (ch(c), vu.from_m(v)))
                            .collect(),
                        colour: "#1f5fa8",
                        dashed: false
                    },
                    Series {
                        name: "± 2 sd",
                        points: sl
                            .chainage
                            .iter()
                            .zip(&sl.slew)
                            .zip(&sl.sd)
                            .map(|((&c, &v), &d)| (ch(c), vu.from_m(v + 2.0 * d)))
                            .chain(std::iter::once((f64::NAN, 0.0)))
                            .chain(
                                sl.chainage
                                    .iter()
                                    .zip(&sl.slew)
                                    .zip(&sl.sd)
                                    .map(|((&c, &v), &d)| (ch(c), vu.from_m(v - 2.0 * d)))
                            )
                            .collect(),
                        colour: "#888",
                        dashed: true
                    },
                ]
            )
        );
    }
    let _ = write!(
        h,
        "<h2>Uncertainty of position</h2>\n{}\n",
        chart(
            "Standard deviation of position",
            &format!("position sd ({lu})"),
            vec![Series {
                name: "position sd",
                points: st
                    .iter()
                    .map(|s| (ch(s.chainage), ch(s.position_sd)))
                    .collect(),
                colour: "#1f5fa8",
                dashed: false
            }]
        )
    );

    if let Some(f) = &r.fit {
        let _ = write!(
            h,
            "<h2>Elements</h2>\n<table><tr><th>#</th><th>kind</th><th>start ({lu})</th><th>end ({lu})</th><th>length ({lu})</th><th>start radius ({lu})</th><th>end radius ({lu})</th><th>status</th><th>note</th></tr>\n"
        );
        for (i, e) in f.elements.iter().enumerate() {
            let rad = |x: &Option<crate::fit::Estimate>| {
                x.as_ref().map_or("—".to_string(), |x| {
                    format!("{:.1} ± {:.1}", ch(x.value), ch(x.hi95 - x.value))
                })
            };
            let _ = writeln!(
                h,
                "<tr><td>{}</td><td class=\"k\">{}</td><td>{:.2} ± {:.2}</td><td>{:.2} ± {:.2}</td><td>{:.2}</td><td>{}</td><td>{}</td><td class=\"k\">{}</td><td class=\"k\">{}</td></tr>",
                i + 1,
                e.kind.name(),
                ch(e.start_chainage.value),
                ch(e.start_chainage.hi95 - e.start_chainage.value),
                ch(e.end_chainage.value),
                ch(e.end_chainage.hi95 - e.end_chainage.value),
                ch(e.length.value),
                rad(&e.start_radius),
                rad(&e.end_radius),
                e.status.name(),
                esc(&e.note)
            );
        }
        h.push_str("</table>\n<p>Chainages along the measured rail; lengths and radii of the track centreline; radius positive curving left; ± is the half-width of the 95&nbsp;% interval.</p>\n");
    }

    if !r.diagnostics.is_empty() {
        h.push_str("<h2>Warnings and notes</h2>\n<ul>\n");
        for d in &r.diagnostics {
            let cls = if d.severity == Severity::Warning {
                " class=\"warn\""
            } else {
                ""
            };
            let _ = writeln!(h, "<li{cls}>{}</li>", esc(&d.to_string()));
        }
        h.push_str("</ul>\n");
    }
    let _ = write!(
        h,
        "<p><small>chordline {}</small></p>\n</body></html>\n",
        env!("CARGO_PKG_VERSION")
    );
    h
}
