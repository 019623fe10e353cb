//! The plain-text element table the terminal and the report show, with the
//! whole-fit statistics underneath, worded for a track engineer.

use crate::export::elements::num;
use crate::fit::{ElementStatus, Estimate, FitResult, FitStats};
use crate::units::{LengthUnit, VersineUnit};

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
    s.push_str(&noise_line(st, vu, vdec));
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

/// The noise figures, one each and named for what they are, and the
/// chi-square test in words.
fn noise_line(st: &FitStats, vu: VersineUnit, vdec: usize) -> String {
    let vs = vu.suffix();
    let how = if st.reading_sd_stated {
        "stated"
    } else {
        "estimated from the readings"
    };
    let p = st.chi2.2;
    let verdict = if p >= 0.05 {
        format!(
            "the design explains the readings: a misfit this large or larger would arise by chance alone {} of the time",
            percent(p)
        )
    } else if p >= 1e-3 {
        format!(
            "the design explains the readings only just: a misfit this large arises by chance {} of the time",
            percent(p)
        )
    } else {
        "the design does NOT explain the readings (a misfit this large almost never arises by chance): see the warning".to_string()
    };
    let against = if (st.chi2_sd - st.sigma_white).abs() < 0.5e-5 || st.reading_sd_stated {
        String::new()
    } else {
        format!(
            ", tested against {} {vs}, the scatter of the readings' third differences clear of the fitted joints",
            num(vu.from_m(st.chi2_sd), vdec)
        )
    };
    format!(
        "noise: reading sd {} {vs} ({how}); the readings scatter {} {vs} about the fitted design; track on the straights scatters {} {vs} at element scale (what the fit's penalties use)\ntest: {verdict} (chi-square {:.1} on {:.0} degrees of freedom{against}, p = {:.3})\n",
        num(
            vu.from_m(if st.reading_sd_stated {
                st.chi2_sd
            } else {
                st.sigma_white
            }),
            vdec
        ),
        num(vu.from_m(st.sigma_residual), vdec),
        num(vu.from_m(st.sigma_penalty), vdec),
        st.chi2.0,
        st.chi2.1,
        p
    )
}

/// A probability as a percentage a reader takes in at a glance.
fn percent(p: f64) -> String {
    if p >= 0.1 {
        format!("{:.0} %", p * 100.0)
    } else {
        format!("{:.1} %", p * 100.0)
    }
}
