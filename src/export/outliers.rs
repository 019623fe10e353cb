//! `outliers.csv`: the readings the element fit found to be blunders (typing
//! errors of a hand survey), one row each, written only when there are any.
//!
//! Columns (metric survey; an imperial one has `_ft` and `_in`): `line,
//! chainage_m, read_mm, expected_mm, robust_sd, looks_like, left_out`.
//! `line` is the 1-based line of the survey file, `read` the versine as read
//! and `expected` the versine of the fitted design there (both in the field
//! convention of the file), `robust_sd` how far apart they are in robust
//! standard deviations, `looks_like` one of `wrong sign`, `slipped decimal
//! point`, `transposed digits`, `not a simple typing slip`, and `left_out`
//! `yes` when the reading was left out of the fit and bridged in the plan
//! (`no` with `--keep-outliers`).

use super::elements::num;
use crate::fit::Outlier;
use crate::units::{LengthUnit, VersineUnit};
use std::io::{self, Write};

/// Write `outliers.csv`: chainages in `unit`, versines in `vunit` (the
/// survey's own units).
///
/// # Errors
/// Any error of the writer.
///
/// # Examples
/// ```
/// use chordline::export::outliers::write_outliers_csv;
/// use chordline::fit::{Outlier, Slip};
/// use chordline::units::{LengthUnit, VersineUnit};
/// let o = Outlier { index: 7, line: 9, chainage: 70.0, read: 0.026, expected: 0.0623,
///     z: 36.3, looks_like: Slip::TransposedDigits, excluded: true };
/// let mut out = Vec::new();
/// write_outliers_csv(&mut out, &[o], LengthUnit::Metre, VersineUnit::Millimetre).unwrap();
/// let text = String::from_utf8(out).unwrap();
/// assert_eq!(text.lines().nth(1), Some("9,70.000,26.0,62.3,36.3,transposed digits,yes"));
/// ```
pub fn write_outliers_csv(
    mut w: impl Write,
    outliers: &[Outlier],
    unit: LengthUnit,
    vunit: VersineUnit,
) -> io::Result<()> {
    let (u, vu) = (unit.suffix(), vunit.suffix());
    let vdec = match vunit {
        VersineUnit::Millimetre => 1,
        VersineUnit::Inch => 3,
        VersineUnit::Metre | VersineUnit::Foot => 4,
    };
    writeln!(
        w,
        "line,chainage_{u},read_{vu},expected_{vu},robust_sd,looks_like,left_out"
    )?;
    for o in outliers {
        writeln!(
            w,
            "{},{},{},{},{},{},{}",
            o.line,
            num(unit.from_m(o.chainage), 3),
            num(vunit.from_m(o.read), vdec),
            num(vunit.from_m(o.expected), vdec),
            num(o.z, 1),
            o.looks_like.describe(),
            if o.excluded { "yes" } else { "no" }
        )?;
    }
    Ok(())
}
