//! The spacing check for a chord not read at its middle.

use super::{Context, FIT_TOL, MIN_SPACING, Nominal};
use crate::survey::read::error::{SurveyError, SurveyErrorKind};
use crate::survey::read::fmt_num;

/// The nominal spacing for a chord not read at its middle: the readings
/// must fall on both ends of the chord, so the spacing must divide both arms.
pub(super) fn spacing(ctx: &Context<'_>, s_med: f64) -> Result<Nominal, SurveyError> {
    let (a1, a2) = (ctx.arms.behind, ctx.arms.ahead);
    let m1 = (a1 / s_med).round().max(1.0);
    let s_nom = a1 / m1;
    let m2 = a2 / s_nom;
    let fits =
        (s_med - s_nom).abs() <= FIT_TOL * s_nom && (m2 - m2.round()).abs() <= 1e-3 * m2.max(1.0);
    if fits {
        return Ok(Nominal {
            steps_per_half_chord: 0.5 * ctx.chord / s_nom,
            spacing: s_nom,
        });
    }
    let unit = ctx.cols.chainage_unit;
    let works = match ctx.arms.common_spacing(unit).filter(|&w| w >= MIN_SPACING) {
        Some(w) => format!(
            "readings every {} or a whole fraction of it ({}, {}, ...) fall on both ends",
            ctx.len(w),
            ctx.len(w / 2.0),
            ctx.len(w / 4.0)
        ),
        None => format!(
            "no spacing of {} or more divides both arms",
            ctx.len(MIN_SPACING)
        ),
    };
    Err(SurveyError::file(
        ctx.file,
        SurveyErrorKind::SpacingMisfit {
            what: format!(
                "the readings are {} apart, and the arms of the chord of {} ({} and {} such spacings) are not both whole numbers of them, so the readings do not fall on the chord's ends",
                ctx.len(s_med),
                ctx.arms_text(),
                fmt_num((a1 / s_med * 100.0).round() / 100.0),
                fmt_num((a2 / s_med * 100.0).round() / 100.0)
            ),
            todo: format!("{works}; check --chord and the spacing"),
        },
    ))
}
