//! Words about slews: the diagnostics of a solve, the terminal line and the
//! direction words of the slew sheet.

use super::Slews;
use crate::diag::{Diagnostic, Location};
use crate::survey::Survey;
use crate::units::{LengthUnit, VersineUnit};

/// The caution every slew output carries.
pub const CAUTION: &str = "indicative only: check clearances, structure gauges, fixed points and cant against local standards before moving track";

fn loc(survey: &Survey, s: &Slews, i: usize) -> Option<Location> {
    survey.readings.get(s.first + i).map(|r| Location {
        file: survey.source.clone(),
        line: r.line,
        column: None,
    })
}

pub(super) fn diagnostics(survey: &Survey, s: &Slews) -> Vec<Diagnostic> {
    let mm = |v: f64| v * 1e3;
    let mut out = Vec::new();
    if let Some((i, v)) = s.max_abs() {
        out.push(Diagnostic::note(format!(
            "largest slew {:.1} mm{} at chainage {:.3} m (sd {:.1} mm); the design versines were changed by at most {:.2} mm so that the section ends and fixed points stay put and the limits hold. Slews are {CAUTION}",
            mm(v.abs()),
            match direction_words(s, i) {
                "" => String::new(),
                w => format!(" ({w})"),
            },
            s.chainage[i],
            mm(s.sd[i]),
            mm(s.max_design_change())
        )));
    }
    if let Some(d) = hidden_warning(survey, s) {
        out.push(d);
    }
    let worst_sd = (0..s.sd.len()).max_by(|a, b| s.sd[*a].total_cmp(&s.sd[*b]));
    if let Some(i) = worst_sd
        && s.sd[i] > 0.010
    {
        out.push(
            Diagnostic::warning(format!(
                "slews are uncertain by up to {:.1} mm (sd, at chainage {:.3} m): reading noise accumulates between held points",
                mm(s.sd[i]),
                s.chainage[i]
            ))
            .hint("add fixed points or surveyed offsets, or compute slews over shorter sections (--section)"),
        );
    }
    out
}

/// The warning for slews left out because their sd exceeds their limit,
/// with what would bring it within: held points closer together (the sd
/// grows like the distance between held points to the power 1.5).
fn hidden_warning(survey: &Survey, s: &Slews) -> Option<Diagnostic> {
    let hidden = s.hidden();
    let (&a, &b) = (hidden.first()?, hidden.last()?);
    let worst = hidden
        .iter()
        .copied()
        .max_by(|x, y| s.sd[*x].total_cmp(&s.sd[*y]))?;
    let limit = (0..s.slew.len())
        .filter(|&i| !s.shown[i])
        .filter_map(|i| {
            [s.upper[i], s.lower[i].map(|l| -l)]
                .into_iter()
                .flatten()
                .filter(|v| *v > 0.0)
                .min_by(f64::total_cmp)
        })
        .min_by(f64::total_cmp)?;
    let gap = longest_free_run(s);
    let needed = gap * (limit / s.sd[worst]).powf(2.0 / 3.0);
    let mut d = Diagnostic::warning(format!(
            "{} slews between chainage {:.3} and {:.3} m are not shown: their sd (up to {:.1} mm at {:.3} m) exceeds the {:.1} mm limit they are compared with, so the readings cannot tell whether the track there meets it",
            hidden.len(),
            s.chainage[a],
            s.chainage[b],
            s.sd[worst] * 1e3,
            s.chainage[worst],
            limit * 1e3
        ))
        .hint(format!(
            "held points about {needed:.0} m apart (now up to {gap:.0} m) would bring the sd within it: add fixed points or control points, compute a shorter section (--section FROM,TO), or survey with readings closer together"
        ));
    if let Some(l) = loc(survey, s, worst) {
        d = d.at(l);
    }
    Some(d)
}

/// The longest distance between held readings, metres.
fn longest_free_run(s: &Slews) -> f64 {
    let held: Vec<f64> = (0..s.held.len())
        .filter(|&i| s.held[i])
        .map(|i| s.chainage[i])
        .collect();
    held.windows(2).map(|w| w[1] - w[0]).fold(0.0, f64::max)
}

/// The direction of the slew at reading `i` in words: left or right facing
/// increasing chainage, and in (towards the curve centre) or out on a curve.
/// Empty for no move (under 0.005 mm).
pub fn direction_words(s: &Slews, i: usize) -> &'static str {
    let v = s.slew[i];
    // No words for a move that prints as 0.00 mm.
    if v.abs() < 5e-6 {
        return "";
    }
    let left = v > 0.0;
    match (s.towards_centre(i), left) {
        (Some(t), true) if t >= 0.0 => "left, in",
        (Some(_), true) => "left, out",
        (Some(t), false) if t >= 0.0 => "right, in",
        (Some(_), false) => "right, out",
        (None, true) => "left",
        (None, false) => "right",
    }
}

/// One terminal line: the largest slew and where, the limits, with the
/// caution. Slews in mm (metric) or inches, chainage in `unit`.
///
/// # Examples
/// ```
/// # use chordline::realign::{slews, summary_line, SlewOptions};
/// # use chordline::survey::{Rail, Reading, Setup, Survey};
/// # use chordline::units::{LengthUnit, VersineUnit};
/// # let v = [0.0, 2.0, 11.0, 19.0, 32.0, 18.0, 12.0, 1.0, 0.0];
/// # let p = [0.0, 2.0, 10.0, 20.0, 31.0, 21.0, 10.0, 1.0, 0.0];
/// # let readings = v.iter().enumerate().map(|(i, v)| Reading { chainage: 10.0 * i as f64,
/// #     versine: Some(v * 1e-3), rail: Rail::Right, note: None, line: i + 2 }).collect();
/// # let survey = Survey { source: "c51".into(), chainage_unit: LengthUnit::Metre,
/// #     versine_unit: VersineUnit::Millimetre, readings, has_side_column: false };
/// # let d: Vec<f64> = p.iter().map(|v| v * 1e-3).collect();
/// let (s, _) = slews(&survey, &Setup::new(20.0, Rail::Right), &d, 0.5e-3,
///     &SlewOptions::default()).unwrap();
/// let line = summary_line(&s, LengthUnit::Metre);
/// assert!(line.starts_with("slews: largest 4.0 mm"), "{line}");
/// ```
pub fn summary_line(s: &Slews, unit: LengthUnit) -> String {
    let vu = unit.versine_unit();
    let (vs, dp) = match vu {
        VersineUnit::Inch => ("in", 3),
        _ => ("mm", 1),
    };
    let l = unit.suffix();
    let Some((i, v)) = s.max_abs() else {
        return format!("slews: none shown ({CAUTION})");
    };
    let words = direction_words(s, i);
    let mut line = format!(
        "slews: largest {:.dp$} {vs}{} at {:.1} {l}, sd {:.dp$} {vs}",
        vu.from_m(v.abs()),
        if words.is_empty() {
            String::new()
        } else {
            format!(" ({words})")
        },
        unit.from_m(s.chainage[i]),
        vu.from_m(s.sd[i]),
    );
    if let Some(lim) = s.max_slew {
        let ex = s.exceeding();
        if ex.is_empty() {
            line.push_str(&format!(
                "; none beyond the {:.dp$} {vs} limit",
                vu.from_m(lim)
            ));
        } else {
            line.push_str(&format!(
                "; {} readings beyond the {:.dp$} {vs} limit, from {:.1} to {:.1} {l}",
                ex.len(),
                vu.from_m(lim),
                unit.from_m(s.chainage[ex[0]]),
                unit.from_m(s.chainage[ex[ex.len() - 1]]),
            ));
        }
    }
    let hidden = s.hidden().len();
    if hidden > 0 {
        line.push_str(&format!("; {hidden} not shown (sd beyond their limit)"));
    }
    line.push_str(&format!(" ({CAUTION})"));
    line
}
