//! `slews.csv`: the slew sheet a gang takes to site.
//!
//! It starts with `# ` comment lines: the caution, the work section, the
//! constraints (largest slew, range limits, fixed points and their
//! tolerance, the largest design versine change) and the reading sd used;
//! onto the placed design the section line says that the slews are the
//! sideways distances to it and that the ends are held in position.
//! Then one row per reading of the work section. Columns (metric survey;
//! an imperial survey has `_ft` for the chainage and `_in` for slews and
//! versines):
//!
//! | column | unit | meaning |
//! |---|---|---|
//! | `chainage_m` | m | survey chainage |
//! | `slew_mm` | mm, 2 dp (in: 3) | move onto the design, positive to the left facing increasing chainage; empty where not shown |
//! | `direction` | words | `left` or `right`, then `in` (towards the curve centre) or `out` on a curve; empty for no move |
//! | `slew_sd_mm` | mm | standard deviation of the slew from the reading noise |
//! | `versine_mm` | mm | measured versine (field convention); empty in a gap |
//! | `design_versine_mm` | mm | design versine |
//! | `versine_after_mm` | mm | versine after slewing (measured plus the change the slews make); empty in a gap |
//! | `limit_left_mm`, `limit_right_mm` | mm | largest move allowed to the left / to the right here (positive numbers); empty: no limit |
//! | `mark` | words | `end` (section end, held), `fixed` (fixed point), `at-limit` (slew within 0.05 mm of a limit), `not-shown` (sd beyond the limit) |
//!
//! Values are written with fixed decimals; a value that rounds to zero has
//! no sign.

use crate::realign::{CAUTION, Slews, direction_words};
use crate::survey::Survey;
use crate::units::{LengthUnit, VersineUnit};
use std::fmt::Write as _;
use std::io::{self, Write};

fn num(out: &mut String, x: Option<f64>, dp: usize) {
    if let Some(x) = x.filter(|x| x.is_finite()) {
        let s = format!("{x:.dp$}");
        if s.trim_start_matches('-')
            .chars()
            .all(|c| c == '0' || c == '.')
        {
            out.push_str(s.trim_start_matches('-'));
        } else {
            out.push_str(&s);
        }
    }
}

/// The `# ` header lines: caution, section, constraints.
fn header_lines(s: &Slews, unit: LengthUnit) -> Vec<String> {
    let vu = unit.versine_unit();
    let (v, l) = (vu.suffix(), unit.suffix());
    let dp = if vu == VersineUnit::Inch { 3 } else { 1 };
    let len = |x: f64| format!("{:.dp$} {v}", vu.from_m(x));
    let ch = |x: f64| format!("{:.3} {l}", unit.from_m(x));
    let mut out = vec![
        format!("Slews are {CAUTION}."),
        "Slew positive to the left facing increasing chainage; in = towards the curve centre."
            .to_string(),
    ];
    if let (Some(a), Some(b)) = (s.chainage.first(), s.chainage.last()) {
        out.push(if s.onto_placed {
            format!(
                "Work section {} to {}, held in position at both ends; slews are the sideways distances from the measured centreline to the placed design (elements.csv placed_*, alignment.xml, alignment.ifc).",
                ch(*a),
                ch(*b)
            )
        } else {
            format!(
                "Work section {} to {}, held in position and direction at both ends.",
                ch(*a),
                ch(*b)
            )
        });
    }
    if let Some(m) = s.max_slew {
        out.push(format!("Largest slew either way: {}.", len(m)));
    }
    for r in &s.ranges {
        out.push(format!(
            "From {} to {}: at most {} {}.",
            ch(r.from),
            ch(r.to),
            len(r.max),
            r.toward.word()
        ));
    }
    if !s.fixed.is_empty() {
        let pts: Vec<String> = s.fixed.iter().map(|c| ch(*c)).collect();
        out.push(format!(
            "Fixed points {} held within {}.",
            pts.join(", "),
            len(s.fixed_tolerance)
        ));
    }
    out.push(format!(
        "Design versines changed by at most {} (allowed {}); reading sd {}.",
        len(s.max_design_change()),
        len(s.versine_tolerance),
        len(s.reading_sd)
    ));
    out
}

/// The mark words of reading `i`.
fn mark(s: &Slews, i: usize) -> String {
    let mut m: Vec<&str> = Vec::new();
    let near_fixed = s.at_fixed[i];
    if s.held[i] && !near_fixed {
        m.push("end");
    }
    if near_fixed && (s.held[i] || s.fixed_tolerance > 0.0) {
        m.push("fixed");
    }
    let v = s.slew[i];
    let at = |b: Option<f64>| b.is_some_and(|b| (v - b).abs() <= 5e-5);
    if !s.held[i] && (at(s.upper[i]) || at(s.lower[i])) {
        m.push("at-limit");
    }
    if !s.shown[i] {
        m.push("not-shown");
    }
    m.join(" ")
}

/// Write `slews.csv` for `s` (chainages and slews in the units of `unit`,
/// the survey's chainage unit).
///
/// # Errors
/// Only from `w`.
pub fn write_slews_csv(w: impl Write, s: &Slews, survey: &Survey) -> io::Result<()> {
    let unit = survey.chainage_unit;
    let vu = unit.versine_unit();
    let (v, l) = (vu.suffix(), unit.suffix());
    let dp = if vu == VersineUnit::Inch { 3 } else { 2 };
    let mut w = io::BufWriter::new(w);
    for line in header_lines(s, unit) {
        writeln!(w, "# {line}")?;
    }
    writeln!(
        w,
        "chainage_{l},slew_{v},direction,slew_sd_{v},versine_{v},design_versine_{v},versine_after_{v},limit_left_{v},limit_right_{v},mark"
    )?;
    let x = |m: f64| Some(vu.from_m(m));
    let mut row = String::with_capacity(128);
    for i in 0..s.chainage.len() {
        row.clear();
        let _ = write!(row, "{:.3},", unit.from_m(s.chainage[i]));
        let shown = s.shown[i];
        num(&mut row, x(s.slew[i]).filter(|_| shown), dp);
        row.push(',');
        if shown {
            row.push_str(&direction_words(s, i).replace(", ", " "));
        }
        row.push(',');
        num(&mut row, x(s.sd[i]), dp);
        for val in [
            s.measured_versine[i],
            Some(s.design_versine[i]),
            s.realised_versine[i],
            s.upper[i],
            s.lower[i].map(|b| -b),
        ] {
            row.push(',');
            num(&mut row, val.and_then(x), dp);
        }
        row.push(',');
        row.push_str(&mark(s, i));
        row.push('\n');
        w.write_all(row.as_bytes())?;
    }
    w.flush()
}

/// Write `slews.csv` and, when the design is not the fitted one,
/// `design-elements.csv` into the output folder.
///
/// # Errors
/// [`crate::export::output_dir::OutputError`] from writing.
pub fn write_slew_files(
    dir: &mut crate::export::output_dir::OutputDir,
    s: &Slews,
    survey: &Survey,
) -> Result<(), crate::export::output_dir::OutputError> {
    dir.write_file("slews.csv", |w| write_slews_csv(w, s, survey))?;
    if let Some(d) = &s.design {
        dir.write_file("design-elements.csv", |w| {
            write_design_elements_csv(w, d, survey.chainage_unit)
        })?;
    }
    Ok(())
}

/// Write `design-elements.csv`: the design the slews move the track onto,
/// when it is not the fitted one, element by element beside the fitted
/// element it replaces and what changed. Columns (`_ft` for an imperial
/// survey): `element, kind, start_chainage_m, end_chainage_m, radius_m,
/// fitted_start_chainage_m, fitted_end_chainage_m, fitted_radius_m, change`.
/// Radii are signed centreline radii (positive curving left); chainages are
/// survey chainages. `# ` comment lines first: how the design was chosen
/// and the caution.
///
/// # Errors
/// Only from `w`.
pub fn write_design_elements_csv(
    w: impl Write,
    d: &crate::realign::DesignOutcome,
    unit: LengthUnit,
) -> io::Result<()> {
    let l = unit.suffix();
    let mut w = io::BufWriter::new(w);
    writeln!(w, "# Design: {}.", d.how)?;
    writeln!(w, "# Slews onto this design are {CAUTION}.")?;
    writeln!(
        w,
        "element,kind,start_chainage_{l},end_chainage_{l},radius_{l},fitted_start_chainage_{l},fitted_end_chainage_{l},fitted_radius_{l},change"
    )?;
    let paired = d.elements.len() == d.fitted.len()
        && d.elements
            .iter()
            .zip(&d.fitted)
            .all(|(a, b)| a.kind == b.kind);
    let x = |m: f64| Some(unit.from_m(m));
    for (i, e) in d.elements.iter().enumerate() {
        let f = paired.then(|| d.fitted[i]);
        let mut row = format!("{},{}", i + 1, kind_word(e.kind));
        for v in [
            x(e.start),
            x(e.end),
            e.radius.and_then(x),
            f.and_then(|f| x(f.start)),
            f.and_then(|f| x(f.end)),
            f.and_then(|f| f.radius).and_then(x),
        ] {
            row.push(',');
            num(&mut row, v, 3);
        }
        row.push(',');
        row.push_str(&change_words(e, f.as_ref(), unit));
        writeln!(w, "{row}")?;
    }
    w.flush()
}

fn kind_word(k: crate::geometry::ElementKind) -> &'static str {
    match k {
        crate::geometry::ElementKind::Straight => "straight",
        crate::geometry::ElementKind::Transition => "transition",
        crate::geometry::ElementKind::Arc => "arc",
    }
}

/// What changed from the fitted element, in words ("new" when the design
/// has a different set of elements; "unchanged" below 1 mm).
fn change_words(
    e: &crate::realign::DesignElement,
    f: Option<&crate::realign::DesignElement>,
    unit: LengthUnit,
) -> String {
    let Some(f) = f else {
        return "new".into();
    };
    let l = unit.suffix();
    let mut parts = Vec::new();
    for (what, a, b) in [("start", e.start, f.start), ("end", e.end, f.end)] {
        if (a - b).abs() >= 1e-3 {
            parts.push(format!("{what} {:+.3} {l}", unit.from_m(a - b)));
        }
    }
    if let (Some(a), Some(b)) = (e.radius, f.radius)
        && (a - b).abs() >= 1e-3
    {
        parts.push(format!(
            "radius {:.3} to {:.3} {l}",
            unit.from_m(b),
            unit.from_m(a)
        ));
    }
    if parts.is_empty() {
        "unchanged".into()
    } else {
        parts.join("; ")
    }
}
