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

use crate::advice::{Advice, header_lines};
use crate::units::LengthUnit;
use std::io::{self, Write};

fn num(x: Option<f64>, dec: usize) -> String {
    x.map_or(String::new(), |x| super::elements::num(x, dec))
}

fn quote(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
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
