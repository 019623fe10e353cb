//! `slews.csv`: the slew sheet a gang takes to site.
//!
//! It starts with `# ` comment lines: the caution, the work section, the
//! constraints (largest slew, range limits, fixed points and their
//! tolerance, the largest design versine change) and the reading sd used.
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
        out.push(format!(
            "Work section {} to {}, held in position and direction at both ends.",
            ch(*a),
            ch(*b)
        ));
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
