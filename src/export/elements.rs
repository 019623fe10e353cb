//! `elements.csv`: one row per fitted element, and a plain-text element table
//! for the terminal.
//!
//! Columns (metric survey; an imperial survey has `_ft` instead of `_m` and
//! residuals in `_in`): `element, kind, start_chainage_m, end_chainage_m,
//! length_m, start_radius_m, end_radius_m`, then for each of start chainage,
//! end chainage, length, start radius and end radius its standard error and
//! 95 % interval (`_se`, `_lo95`, `_hi95`), then `residual_rms_mm,
//! residual_max_mm, readings, status, note`.
//!
//! Chainages are survey chainages along the measured rail; lengths and radii
//! are of the track centreline. Radii are signed (positive curving left) and
//! empty where the curvature is zero. Numbers have fixed decimals; a value
//! that does not exist (the radius of a straight, an interval of a survey
//! end, a radius interval that reaches a straight) is an empty field, never
//! NaN. Consecutive rows join exactly: each start is the previous end.

use crate::fit::{ElementStatus, Estimate, FitResult, FittedElement};
use crate::units::LengthUnit;
use std::io::{self, Write};

pub(crate) fn num(x: f64, dec: usize) -> String {
    if x.is_finite() {
        let s = format!("{x:.dec$}");
        // No "-0.000".
        if s.trim_start_matches('-')
            .chars()
            .all(|c| c == '0' || c == '.')
        {
            s.trim_start_matches('-').to_string()
        } else {
            s
        }
    } else {
        String::new()
    }
}

/// (value, se, lo, hi) of an estimate in `unit`, as strings.
fn est(e: Option<Estimate>, unit: LengthUnit, dec: usize, fixed: bool) -> [String; 4] {
    match e {
        None => Default::default(),
        Some(e) => {
            let v = num(unit.from_m(e.value), dec);
            if fixed {
                [v, String::new(), String::new(), String::new()]
            } else {
                [
                    v,
                    num(unit.from_m(e.se), dec),
                    num(unit.from_m(e.lo95), dec),
                    num(unit.from_m(e.hi95), dec),
                ]
            }
        }
    }
}

/// A radius interval only exists when it keeps one sign (it never reaches a straight).
fn radius(e: Option<Estimate>) -> Option<Estimate> {
    e.map(|mut r| {
        if r.lo95.signum() != r.hi95.signum() || !r.lo95.is_finite() || !r.hi95.is_finite() {
            r.lo95 = f64::NAN;
            r.hi95 = f64::NAN;
        }
        r
    })
}

/// The header of `elements.csv` for a survey in `unit`.
pub fn header(unit: LengthUnit) -> Vec<String> {
    let u = unit.suffix();
    let vu = unit.versine_unit().suffix();
    let mut h = vec![
        "element".to_string(),
        "kind".to_string(),
        format!("start_chainage_{u}"),
        format!("end_chainage_{u}"),
        format!("length_{u}"),
        format!("start_radius_{u}"),
        format!("end_radius_{u}"),
    ];
    for q in [
        "start_chainage",
        "end_chainage",
        "length",
        "start_radius",
        "end_radius",
    ] {
        for s in ["se", "lo95", "hi95"] {
            h.push(format!("{q}_{s}_{u}"));
        }
    }
    h.push(format!("residual_rms_{vu}"));
    h.push(format!("residual_max_{vu}"));
    h.push("readings".into());
    h.push("status".into());
    h.push("note".into());
    h
}

fn row(i: usize, e: &FittedElement, unit: LengthUnit) -> Vec<String> {
    let vu = unit.versine_unit();
    let vdec = if unit == LengthUnit::Foot { 3 } else { 2 };
    let sc = est(Some(e.start_chainage), unit, 3, e.starts_at_survey_end);
    let ec = est(Some(e.end_chainage), unit, 3, e.ends_at_survey_end);
    let ln = est(
        Some(e.length),
        unit,
        3,
        e.starts_at_survey_end || e.ends_at_survey_end,
    );
    let sr = est(radius(e.start_radius), unit, 3, false);
    let er = est(radius(e.end_radius), unit, 3, false);
    let mut r = vec![
        (i + 1).to_string(),
        e.kind.name().to_string(),
        sc[0].clone(),
        ec[0].clone(),
        ln[0].clone(),
        sr[0].clone(),
        er[0].clone(),
    ];
    for q in [&sc, &ec, &ln, &sr, &er] {
        r.extend_from_slice(&q[1..]);
    }
    r.push(num(vu.from_m(e.residual_rms), vdec));
    r.push(num(vu.from_m(e.residual_max), vdec));
    r.push(e.readings.to_string());
    r.push(e.status.name().to_string());
    r.push(e.note.clone());
    r
}

/// Write `elements.csv` for `fit` in the survey's length `unit`.
///
/// # Errors
/// Any I/O error of the writer.
pub fn write_elements_csv<W: Write>(fit: &FitResult, unit: LengthUnit, out: W) -> io::Result<()> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(header(unit)).map_err(io::Error::other)?;
    for (i, e) in fit.elements.iter().enumerate() {
        w.write_record(row(i, e, unit)).map_err(io::Error::other)?;
    }
    w.flush()
}

/// A plain-text element table an engineer reads at a glance, with the
/// whole-fit statistics underneath. The library returns it; the command line
/// prints it.
pub fn summary_table(fit: &FitResult, unit: LengthUnit) -> String {
    let u = unit.suffix();
    let vu = unit.versine_unit();
    let vs = vu.suffix();
    let vdec = if unit == LengthUnit::Foot { 3 } else { 2 };
    let mut s = String::new();
    s.push_str(&format!(
        "{:>3}  {:<10} {:>12} {:>12} {:>10}  {:>22}  {}\n",
        "#",
        "element",
        format!("start ({u})"),
        format!("end ({u})"),
        format!("length ({u})"),
        format!("radius ({u}), ±95 %"),
        "note"
    ));
    for (i, e) in fit.elements.iter().enumerate() {
        let f = |x: f64| num(unit.from_m(x), 1);
        let start = if e.starts_at_survey_end {
            format!("[{}]", f(e.start_chainage.value))
        } else {
            format!(
                "{}±{}",
                f(e.start_chainage.value),
                num(
                    unit.from_m(e.start_chainage.hi95 - e.start_chainage.value),
                    1
                )
            )
        };
        let end = if e.ends_at_survey_end {
            format!("[{}]", f(e.end_chainage.value))
        } else {
            format!(
                "{}±{}",
                f(e.end_chainage.value),
                num(unit.from_m(e.end_chainage.hi95 - e.end_chainage.value), 1)
            )
        };
        let rad = |r: Option<Estimate>| match r {
            None => "straight".to_string(),
            Some(r) => format!("{:.0}", unit.from_m(r.value)),
        };
        let radius = match e.kind {
            crate::geometry::ElementKind::Straight => "—".to_string(),
            crate::geometry::ElementKind::Arc => match e.start_radius {
                Some(r) => format!(
                    "{} ± {}",
                    num(unit.from_m(r.value), 1),
                    num(unit.from_m(r.hi95 - r.value), 1)
                ),
                None => "—".into(),
            },
            crate::geometry::ElementKind::Transition => {
                format!("{} → {}", rad(e.start_radius), rad(e.end_radius))
            }
        };
        let mut note = e.note.clone();
        if e.status == ElementStatus::Indeterminate && !note.starts_with("indeterminate") {
            note = format!("INDETERMINATE: {note}");
        }
        s.push_str(&format!(
            "{:>3}  {:<10} {:>12} {:>12} {:>10}  {:>22}  {}\n",
            i + 1,
            e.kind.name(),
            start,
            end,
            num(unit.from_m(e.length.value), 1),
            radius,
            note
        ));
    }
    let st = &fit.stats;
    s.push_str(&format!(
        "residuals: RMS {} {vs}, max {} {vs} at {} {u}; {} readings, {} parameters\n",
        num(vu.from_m(st.residual_rms), vdec),
        num(vu.from_m(st.residual_max.0), vdec),
        num(unit.from_m(st.residual_max.1), 1),
        st.n,
        st.p
    ));
    s.push_str(&format!(
        "noise: readings {} {vs}, about the design {} {vs}, penalties at element scale {} {vs}; chi-square {:.1} on {:.0} degrees of freedom against {} {vs} ({}), p = {:.3}\n",
        num(vu.from_m(st.sigma_white), vdec + 1),
        num(vu.from_m(st.sigma_residual), vdec + 1),
        num(vu.from_m(st.sigma_penalty), vdec + 1),
        st.chi2.0,
        st.chi2.1,
        num(vu.from_m(st.chi2_sd), vdec + 1),
        if st.reading_sd_stated { "stated" } else { "estimated" },
        st.chi2.2
    ));
    if let Some((b, se)) = st.bias {
        s.push_str(&format!(
            "reading bias on the straights: {} ± {} {vs} (standard error){}\n",
            num(vu.from_m(b), vdec + 1),
            num(vu.from_m(se), vdec + 1),
            if st.bias_removed {
                ", removed before the fit"
            } else {
                ""
            }
        ));
    }
    s.push_str("Chainages along the measured rail; lengths and radii of the track centreline, positive radius curving left. [x]: survey end, not a boundary.\n");
    s
}
