//! The terminal block of the cant and speed advice (advisory only): the
//! caution, the limits with their sources, one or two lines per arc and
//! transition.

use crate::advice::{Advice, AdviceRow, degree_of_curve, header_lines};
use crate::geometry::ElementKind;
use crate::units::LengthUnit;
use std::fmt::Write as _;

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
