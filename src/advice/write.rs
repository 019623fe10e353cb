//! `advice.csv` and the terminal block.
//!
//! `advice.csv` starts with `# ` comment lines: the caution, the profile and
//! every limit with its source, the speed and applied cant asked for. Then
//! one row per arc and transition. Columns (metric survey and a metric
//! profile; an imperial survey has `_ft` for chainages, lengths and radii, an
//! imperial profile `_in` for cant and `_mph` for speed):
//! `element, kind, start_chainage_m, end_chainage_m, length_m, length_lo95_m,
//! radius_m, radius_lo95_m, radius_hi95_m, radius_used_m, speed_kmh,
//! equilibrium_cant_mm, min_applied_cant_mm, applied_cant_mm,
//! deficiency_mm, max_speed_kmh, max_speed_no_cant_kmh,
//! max_speed_cant_limit_kmh, cant_change_mm, deficiency_change_mm,
//! required_length_m, governing_rule, flags`. A value that does not apply is
//! an empty field. Speeds marked `max_` are rounded down to 5 km/h (5 mph).

use super::{Advice, AdviceRow, CAUTION, degree_of_curve, limit_lines};
use crate::geometry::ElementKind;
use crate::units::LengthUnit;
use std::fmt::Write as _;
use std::io::{self, Write};

fn num(x: Option<f64>, dec: usize) -> String {
    match x {
        Some(x) if x.is_finite() => {
            let s = format!("{x:.dec$}");
            if s.trim_start_matches('-')
                .chars()
                .all(|c| c == '0' || c == '.')
            {
                s.trim_start_matches('-').to_string()
            } else {
                s
            }
        }
        _ => String::new(),
    }
}

fn quote(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// Header lines (without the `# ` prefix): caution, limits, request.
fn header_lines(a: &Advice) -> Vec<String> {
    let o = &a.options;
    let u = o.profile.units;
    let mut v: Vec<String> = CAUTION.iter().map(|s| s.to_string()).collect();
    v.extend(limit_lines(&o.profile));
    v.push(match o.speed {
        Some(s) => format!("line speed {:.0} {}", s / u.speed_scale(), u.speed_label()),
        None => "line speed not given".into(),
    });
    v.push(match o.applied_cant {
        Some(c) => format!(
            "applied cant {:.1} {} in every arc (as given; capped at the limit)",
            c / u.cant_scale(),
            u.cant_suffix()
        ),
        None => "applied cant not given".into(),
    });
    v
}

/// Write `advice.csv` (see the module text for the columns). `unit` is the
/// survey's chainage unit (chainages, lengths and radii are written in it).
///
/// # Errors
/// Only those of `w`.
pub fn write_advice_csv(w: &mut dyn Write, a: &Advice, unit: LengthUnit) -> io::Result<()> {
    for l in header_lines(a) {
        writeln!(w, "# {l}")?;
    }
    let u = a.options.profile.units;
    let (lu, cu, su) = (unit.suffix(), u.cant_suffix(), u.speed_suffix());
    writeln!(
        w,
        "element,kind,start_chainage_{lu},end_chainage_{lu},length_{lu},length_lo95_{lu},radius_{lu},radius_lo95_{lu},radius_hi95_{lu},radius_used_{lu},speed_{su},equilibrium_cant_{cu},min_applied_cant_{cu},applied_cant_{cu},deficiency_{cu},max_speed_{su},max_speed_no_cant_{su},max_speed_cant_limit_{su},cant_change_{cu},deficiency_change_{cu},required_length_{lu},governing_rule,flags"
    )?;
    let len = |x: Option<f64>| num(x.map(|x| unit.from_m(x)), 3);
    let rad = |x: Option<f64>| num(x.map(|x| unit.from_m(x)), 1);
    let cant = |x: Option<f64>| num(x.map(|x| x / u.cant_scale()), u.cant_decimals() + 1);
    let spd = |x: Option<f64>| num(x.map(|x| x / u.speed_scale()), 0);
    for r in &a.rows {
        let fields = [
            r.element.to_string(),
            r.kind.name().to_string(),
            len(Some(r.start_chainage)),
            len(Some(r.end_chainage)),
            len(Some(r.length.value)),
            len(Some(r.length.lo95)),
            rad(r.radius.map(|e| e.value)),
            rad(r.radius.map(|e| e.lo95)),
            rad(r.radius.map(|e| e.hi95)),
            rad(r.radius_used),
            spd(r.speed),
            cant(r.equilibrium_cant),
            cant(r.min_applied_cant),
            cant(r.applied_cant),
            cant(r.deficiency),
            spd(r.max_speed),
            spd(r.max_speed_no_cant),
            spd(r.max_speed_cant_limit),
            cant(r.cant_change),
            cant(r.deficiency_change),
            len(r.required_length.map(|x| x.0)),
            r.required_length.map_or(String::new(), |x| x.1.to_string()),
            quote(&r.flags.join("; ")),
        ];
        writeln!(w, "{}", fields.join(","))?;
    }
    Ok(())
}

fn row_text(r: &AdviceRow, a: &Advice, unit: LengthUnit, out: &mut String) {
    let u = a.options.profile.units;
    let lu = unit.suffix();
    let c = |x: f64| {
        format!(
            "{:.*} {}",
            u.cant_decimals(),
            x / u.cant_scale(),
            u.cant_suffix()
        )
    };
    let s = |x: f64| format!("{:.0} {}", x / u.speed_scale(), u.speed_label());
    let l = |x: f64| format!("{:.1} {lu}", unit.from_m(x));
    let _ = write!(
        out,
        "  {:>3} {:<10} {} - {}",
        r.element,
        r.kind.name(),
        l(r.start_chainage),
        l(r.end_chainage)
    );
    match r.kind {
        ElementKind::Arc => {
            if let Some(e) = &r.radius {
                let _ = write!(
                    out,
                    "  R {:.0} (95 %: {:.0} .. {:.0}) {lu}",
                    unit.from_m(e.value),
                    unit.from_m(e.lo95),
                    unit.from_m(e.hi95)
                );
            }
            if let Some(ru) = r.radius_used {
                let _ = write!(out, ", used {:.0} {lu}", unit.from_m(ru));
                if a.options.profile.name == "us-fra"
                    && let Some(d) = degree_of_curve(ru)
                {
                    let _ = write!(out, " ({d:.2} deg)");
                }
            }
            out.push('\n');
            let mut parts = Vec::new();
            if let (Some(v), Some(eq)) = (r.speed, r.equilibrium_cant) {
                parts.push(format!("at {}: equilibrium cant {}", s(v), c(eq)));
                if let Some(m) = r.min_applied_cant {
                    parts.push(format!("needs applied cant >= {}", c(m)));
                }
                if let Some(d) = r.deficiency {
                    parts.push(format!("deficiency {}", c(d)));
                }
            }
            if let (Some(v), Some(ac)) = (r.max_speed, r.applied_cant) {
                parts.push(format!("max {} with {} applied", s(v), c(ac)));
            }
            if let (Some(v0), Some(v1)) = (r.max_speed_no_cant, r.max_speed_cant_limit) {
                parts.push(format!(
                    "max {} with no cant, {} with {}",
                    s(v0),
                    s(v1),
                    c(a.options.profile.max_cant.value)
                ));
            }
            if !parts.is_empty() {
                let _ = writeln!(out, "        {}", parts.join("; "));
            }
            if !r.speed_table.is_empty() {
                let cells: Vec<String> = r
                    .speed_table
                    .iter()
                    .map(|(ct, v)| format!("{} {:.0}", c(*ct), v / u.speed_scale()))
                    .collect();
                let _ = writeln!(
                    out,
                    "        max {} by applied cant: {}",
                    u.speed_label(),
                    cells.join(", ")
                );
            }
        }
        ElementKind::Transition | ElementKind::Straight => {
            let _ = write!(
                out,
                "  length {} (95 % from {})",
                l(r.length.value),
                l(r.length.lo95)
            );
            if let Some((req, rule)) = r.required_length {
                let _ = write!(out, "; needs >= {} ({rule})", l(req));
            }
            if let Some(v) = r.speed {
                let _ = write!(out, " at {}", s(v));
            }
            out.push('\n');
        }
    }
    for f in &r.flags {
        let _ = writeln!(out, "        ! {f}");
    }
}

/// The terminal block: caution, limits with their sources, one or two lines
/// per arc and transition. Ends with a newline.
pub fn advice_text(a: &Advice, unit: LengthUnit) -> String {
    let mut out = String::from("cant and speed advice (ADVISORY ONLY)\n");
    for l in header_lines(a) {
        let _ = writeln!(out, "  {l}");
    }
    if a.rows.is_empty() {
        out.push_str("  no arcs or transitions were fitted: nothing to advise on\n");
    }
    for r in &a.rows {
        row_text(r, a, unit, &mut out);
    }
    out
}
