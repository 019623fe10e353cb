//! Checks on the whole survey once it is read: spacing against the chord,
//! the size of the versines against their unit, isolated outliers.

use super::error::{ColumnRef, SurveyError, SurveyErrorKind};
use super::header::Columns;
use super::{fmt_num, versine_word};
use crate::diag::{Diagnostic, Location};
use crate::survey::{Marking, Reading};
use crate::units::VersineUnit;

/// Smallest curve radius that any railway has, metres. Tramways go down to
/// about 15–20 m and main lines rarely below 150 m (common practice, from
/// memory); a versine implying less than this is not a railway reading.
pub(crate) const MIN_RADIUS: f64 = 15.0;
/// Below this radius (implied by a tenth of the readings) a survey in a unit
/// another unit would turn into ordinary main-line curves (at least
/// [`ORDINARY_RADIUS`]) gets a warning (common practice: curves under about
/// 60 m are found only on tramways and in some sidings).
const SHARP_RADIUS: f64 = 60.0;
/// Radius from which a curve is ordinary on a main line (common practice).
const ORDINARY_RADIUS: f64 = 150.0;

/// A step within this fraction of the spacing counts as regular (rounding of
/// the chainages written).
const REGULAR_TOL: f64 = 0.01;
/// A step within this fraction of a whole number of spacings is accepted
/// (with a warning if not regular); beyond it the chord pattern is broken.
const PATTERN_TOL: f64 = 0.25;
/// The median spacing may differ from half the chord over a whole number by
/// this fraction before the spacing is said not to fit the chord.
const FIT_TOL: f64 = 0.02;
/// Mean spacing off the nominal by more than this fraction gets a warning.
const SCALE_TOL: f64 = 0.002;
/// An outlier is a second difference beyond this many robust sigmas.
const OUTLIER_SIGMAS: f64 = 6.0;
/// Floor of the robust sigma of second differences, metres, so that exact
/// (noise-free) surveys do not flag rounding as outliers.
const SIGMA_FLOOR: f64 = 1e-4;
/// Closest spacing read (metres): recording vehicles read every 0.25 m or
/// so; 0.1 m leaves room (common practice, from memory). Closer readings are
/// usually kilometres in a metre column.
const MIN_SPACING: f64 = 0.1;
/// Hand surveys with taped marks read every half chord, or two or four times
/// as often; more than this many steps per half chord suggests a wrong
/// `--chord` (common practice).
const MAX_TAPED_STEPS: f64 = 4.0;
/// Longest gap bridged, in chords (1 km on a 20 m chord): beyond it the
/// bridged geometry would be a guess, and one fitted element would span it.
const MAX_GAP_CHORDS: f64 = 50.0;
/// At most this many warnings of one kind are listed line by line.
pub(crate) const MAX_LISTED: usize = 20;

pub(crate) struct Context<'a> {
    pub file: &'a str,
    pub cols: &'a Columns,
    pub chord: f64,
    pub marking: Marking,
    /// Every chainage is written like `1.010` in a file with decimal commas
    /// (the '.' may separate thousands).
    pub thousands_like: bool,
}

impl Context<'_> {
    fn loc(&self, line: usize, field: Option<usize>) -> Location {
        Location {
            file: self.file.to_string(),
            line,
            column: field.map(|i| self.cols.name(i).to_string()),
        }
    }
    /// A length in the file's chainage unit, with the unit, to 3 decimals.
    fn len(&self, metres: f64) -> String {
        let u = self.cols.chainage_unit;
        format!(
            "{} {}",
            fmt_num((u.from_m(metres) * 1e3).round() / 1e3),
            u.suffix()
        )
    }
    /// A chainage as a number in the file's unit (no unit).
    fn ch(&self, metres: f64) -> String {
        fmt_num(self.cols.chainage_unit.from_m(metres))
    }
    /// The chord in metres, and in feet too for an imperial file.
    /// For feet surveys, the half chord in feet (", that is 32.808 ft,"),
    /// so that a metric chord is not misread; empty for metres.
    fn half_note(&self) -> String {
        match self.cols.chainage_unit {
            crate::units::LengthUnit::Metre => String::new(),
            crate::units::LengthUnit::Foot => format!(", that is {},", self.len(0.5 * self.chord)),
        }
    }

    /// The chord as the user most likely gave it: metres for a metric file;
    /// for a feet file, feet when the chord is a whole number of thousandths
    /// of a foot (62 ft), else metres with the feet beside ("20 m (65.617 ft)").
    fn chord_text(&self) -> String {
        let m = format!("{} m", fmt_num((self.chord * 1e4).round() / 1e4));
        let u = self.cols.chainage_unit;
        match u {
            crate::units::LengthUnit::Metre => m,
            crate::units::LengthUnit::Foot => {
                let ft = u.from_m(self.chord);
                if (ft * 1e3 - (ft * 1e3).round()).abs() < 1e-6 {
                    self.len(self.chord)
                } else {
                    format!("{m} ({})", self.len(self.chord))
                }
            }
        }
    }
    /// A radius in the file's chainage unit, rounded to `decimals`.
    fn radius(&self, metres: f64, decimals: i32) -> String {
        let u = self.cols.chainage_unit;
        let p = 10f64.powi(decimals);
        format!(
            "{} {}",
            fmt_num((u.from_m(metres) * p).round() / p),
            u.suffix()
        )
    }
}

fn median(v: &mut [f64]) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    let mid = v.len() / 2;
    let (_, m, _) = v.select_nth_unstable_by(mid, f64::total_cmp);
    *m
}

/// Check the spacing of the chainages against the chord. Returns, for each
/// reading, whether the step from the previous one is one regular spacing
/// (within the pattern tolerance; `false` for the first reading), and the
/// regular spacing, metres.
pub(crate) fn spacing(
    ctx: &Context<'_>,
    r: &[Reading],
    diags: &mut Vec<Diagnostic>,
) -> Result<(Vec<bool>, f64), SurveyError> {
    let mut steps: Vec<f64> = r
        .windows(2)
        .map(|w| w[1].chainage - w[0].chainage)
        .collect();
    let s_med = median(&mut steps);
    let half = 0.5 * ctx.chord;
    let ratio = half / s_med;
    let m = ratio.round().max(1.0);
    let s_nom = half / m;
    let misfit = |what: String| {
        let todo = format!(
            "readings must be every half chord or a whole fraction of it ({}, {}, {}, ...); check --chord (a chord of {} fits this spacing)",
            ctx.len(half),
            ctx.len(half / 2.0),
            ctx.len(half / 4.0),
            ctx.len(2.0 * s_med)
        );
        SurveyError::file(ctx.file, SurveyErrorKind::SpacingMisfit { what, todo })
    };
    if s_med < MIN_SPACING {
        return Err(SurveyError::file(
            ctx.file,
            SurveyErrorKind::SpacingTooSmall {
                what: format!(
                    "the readings are {} apart, closer than any chord survey reads (every {} at the closest)",
                    ctx.len(s_med),
                    ctx.len(MIN_SPACING)
                ),
                todo: if ctx.thousands_like {
                    format!(
                        "the chainages are written like {:.3}, where '.' separates thousands in this file: write them without it ({})",
                        ctx.cols.chainage_unit.from_m(r[1].chainage),
                        fmt_num((ctx.cols.chainage_unit.from_m(r[1].chainage) * 1000.0).round())
                    )
                } else {
                    format!(
                        "if the chainages are kilometres (like {} for {} m), write them in {} in the column {}",
                        fmt_num(ctx.cols.chainage_unit.from_m(r[1].chainage)),
                        fmt_num((ctx.cols.chainage_unit.from_m(r[1].chainage) * 1000.0).round()),
                        if ctx.cols.chainage_unit == crate::units::LengthUnit::Foot {
                            "feet"
                        } else {
                            "metres"
                        },
                        ctx.cols.name(ctx.cols.chainage)
                    )
                },
            },
        ));
    }
    if ratio < 1.0 - FIT_TOL {
        return Err(misfit(format!(
            "the readings are {} apart, more than half the chord of {}{}",
            ctx.len(s_med),
            ctx.chord_text(),
            ctx.half_note()
        )));
    }
    if (s_med - s_nom).abs() > FIT_TOL * s_nom {
        return Err(misfit(format!(
            "the readings are {} apart, and half the chord of {}{} is not a whole number of such spacings ({} of them)",
            ctx.len(s_med),
            ctx.chord_text(),
            ctx.half_note(),
            fmt_num((ratio * 100.0).round() / 100.0)
        )));
    }

    if ctx.marking == Marking::Taped && m > MAX_TAPED_STEPS {
        diags.push(
            Diagnostic::warning(format!(
                "the readings are {} apart, {} to the half chord of {}: a hand survey with taped marks reads every half chord or a few times more often",
                ctx.len(s_nom),
                fmt_num(m),
                ctx.chord_text()
            ))
            .hint(format!(
                "check --chord (a chord of {} reads every half chord at this spacing); for a trolley or vehicle give --marking wire",
                ctx.len(2.0 * s_nom)
            )),
        );
    }
    let mut regular = vec![false; r.len()];
    let mut irregular = 0usize;
    let mut worst: Option<(f64, usize, f64)> = None; // (deviation, index, step)
    let mut gaps = 0usize;
    let mut sum_regular = 0.0;
    let mut n_regular = 0usize;
    let ch_col = Some(ctx.cols.chainage);
    for i in 1..r.len() {
        let d = r[i].chainage - r[i - 1].chainage;
        let x = d / s_nom;
        let k = x.round();
        let dev = (x - k).abs();
        if k >= 1.0 && dev <= PATTERN_TOL {
            if k == 1.0 {
                regular[i] = true;
                sum_regular += d;
                n_regular += 1;
            } else if d > MAX_GAP_CHORDS * ctx.chord {
                return Err(SurveyError::cell(
                    ctx.file,
                    r[i].line,
                    ctx.cols.name(ctx.cols.chainage),
                    ctx.cols.chainage + 1,
                    SurveyErrorKind::GapTooLong {
                        what: format!(
                            "chainage jumps from {} (line {}) to {}, a gap of {} with no readings, more than {} chords",
                            ctx.ch(r[i - 1].chainage),
                            r[i - 1].line,
                            ctx.ch(r[i].chainage),
                            ctx.len(d),
                            fmt_num(MAX_GAP_CHORDS)
                        ),
                        todo: "nothing measured bridges a gap that long: if it is a typing error, correct the chainage; otherwise split the file there and run each part".into(),
                    },
                ));
            } else {
                gaps += 1;
                if gaps <= MAX_LISTED {
                    diags.push(
                        Diagnostic::warning(format!(
                            "gap: no readings between chainage {} (line {}) and {}, {} station(s) missing",
                            ctx.ch(r[i - 1].chainage),
                            r[i - 1].line,
                            ctx.ch(r[i].chainage),
                            k as u64 - 1
                        ))
                        .at(ctx.loc(r[i].line, ch_col))
                        .hint("the alignment is bridged across the gap, less certainly; check that no lines were lost"),
                    );
                }
            }
            if dev > REGULAR_TOL {
                irregular += 1;
                if worst.is_none_or(|(w, _, _)| dev > w) {
                    worst = Some((dev, i, d));
                }
            }
        } else {
            let todo = match ctx.marking {
                Marking::Taped => "check the chainages around it (a typing error or a mis-taped mark?); if the survey restarts on a new pattern, split the file there".to_string(),
                Marking::Wire => "check the chainages around it; if the recording restarts on a new pattern, split the file there".to_string(),
            };
            return Err(SurveyError::cell(
                ctx.file,
                r[i].line,
                ctx.cols.name(ctx.cols.chainage),
                ctx.cols.chainage + 1,
                SurveyErrorKind::SpacingBreak {
                    what: format!(
                        "chainage jumps from {} (line {}) to {}, {} spacings of {}",
                        ctx.ch(r[i - 1].chainage),
                        r[i - 1].line,
                        ctx.ch(r[i].chainage),
                        fmt_num((x * 100.0).round() / 100.0),
                        ctx.len(s_nom)
                    ),
                    todo,
                },
            ));
        }
    }
    if gaps > MAX_LISTED {
        diags.push(Diagnostic::warning(format!(
            "{} more gaps in the chainages are not listed",
            gaps - MAX_LISTED
        )));
    }
    if let Some((dev, i, d)) = worst {
        diags.push(
            Diagnostic::warning(format!(
                "the spacing is irregular at {irregular} place(s), by up to {}% of the {} spacing ({} from line {} to line {})",
                fmt_num((dev * 1000.0).round() / 10.0),
                ctx.len(s_nom),
                ctx.len(d),
                r[i - 1].line,
                r[i].line
            ))
            .at(ctx.loc(r[i].line, ch_col))
            .hint(format!(
                "within the {}% tolerance, so the readings are used as if on the regular pattern; check the chainages",
                fmt_num(PATTERN_TOL * 100.0)
            )),
        );
    }
    if n_regular > 0 {
        let mean = sum_regular / n_regular as f64;
        if (mean - s_nom).abs() > SCALE_TOL * s_nom {
            diags.push(
                Diagnostic::warning(format!(
                    "the readings are on average {} apart rather than {} (the chord of {} over {}): the chainages run {}% {}",
                    ctx.len(mean),
                    ctx.len(s_nom),
                    ctx.chord_text(),
                    fmt_num(2.0 * m),
                    fmt_num(((mean / s_nom - 1.0).abs() * 1000.0).round() / 10.0),
                    if mean > s_nom { "long" } else { "short" }
                ))
                .hint("check the chord length and how the chainages were measured: tape or odometer scale"),
            );
        }
    }
    Ok((regular, s_nom))
}

/// Put a missing reading (no versine) at every station of the regular
/// pattern that a gap in the chainages skips, so that deleted lines take the
/// same path as empty cells: bridged, with the uncertainty that implies,
/// never joined as if neighbours. Returns the readings and their regular
/// flags (`false` for the inserted ones and the reading after them).
pub(crate) fn fill_gaps(
    r: Vec<Reading>,
    regular: Vec<bool>,
    s_nom: f64,
) -> (Vec<Reading>, Vec<bool>) {
    let mut out = Vec::with_capacity(r.len());
    let mut flags = Vec::with_capacity(r.len());
    let mut prev: Option<(f64, crate::survey::Rail)> = None;
    for (x, reg) in r.into_iter().zip(regular) {
        if let Some((c0, rail)) = prev
            && !reg
        {
            let d = x.chainage - c0;
            let k = (d / s_nom).round();
            if k >= 2.0 {
                for j in 1..k as usize {
                    out.push(Reading {
                        chainage: c0 + d * j as f64 / k,
                        versine: None,
                        rail,
                        note: None,
                        line: x.line,
                    });
                    flags.push(false);
                }
            }
        }
        prev = Some((x.chainage, x.rail));
        out.push(x);
        flags.push(reg);
    }
    (out, flags)
}

/// Curve radius implied by a versine `v` (metres) on a chord `c`:
/// `R ≈ c²/8v` (METHODS §1, small-angle form).
fn implied_radius(c: f64, v: f64) -> f64 {
    c * c / (8.0 * v.abs())
}

/// The units a versine column in `u` may really have been written in (the
/// usual mix-ups: millimetres in a metre or inch column, inches in a foot column).
fn smaller_units(u: VersineUnit) -> &'static [VersineUnit] {
    match u {
        VersineUnit::Metre => &[VersineUnit::Millimetre],
        VersineUnit::Foot => &[VersineUnit::Inch, VersineUnit::Millimetre],
        VersineUnit::Inch => &[VersineUnit::Millimetre],
        VersineUnit::Millimetre => &[],
    }
}

/// Check the size of the versines against their unit and the chord.
pub(crate) fn units(
    ctx: &Context<'_>,
    r: &[Reading],
    fine_decimals: usize,
    nonzero: usize,
    diags: &mut Vec<Diagnostic>,
) -> Result<(), SurveyError> {
    let u = ctx.cols.versine_unit;
    let col = ctx.cols.versine;
    let col_name = ctx.cols.name(col).to_string();
    let mut abs: Vec<f64> = r.iter().filter_map(|x| x.versine).map(f64::abs).collect();
    if abs.is_empty() {
        return Ok(());
    }
    let k = ((abs.len() - 1) as f64 * 0.9).round() as usize;
    let (_, p90, _) = abs.select_nth_unstable_by(k, f64::total_cmp);
    let p90 = *p90;
    let c = ctx.chord;
    let in_file = |v: f64| format!("{} {}", fmt_num(u.from_m(v)), u.suffix());

    // The column as a whole: a tenth of the readings or more are too large.
    if p90 > 0.0 && implied_radius(c, p90) < MIN_RADIUS {
        let alt = smaller_units(u).iter().find_map(|&a| {
            let v = u.from_m(p90) * a.metres();
            let radius = implied_radius(c, v);
            (radius >= MIN_RADIUS).then_some((a, radius))
        });
        let what = format!(
            "a tenth of the versines are {} or more, which on a chord of {} would mean curves of radius {} or less; no railway has such curves",
            in_file(p90),
            ctx.chord_text(),
            ctx.radius(implied_radius(c, p90).max(0.0), 0)
        );
        let todo = match alt {
            Some((a, radius)) => format!(
                "the values look like {} (radius about {}): rename the column versine_{}",
                versine_word(a),
                ctx.radius(radius, 0),
                a.suffix()
            ),
            None => "check the unit in the column name and the chord length (--chord)".to_string(),
        };
        return Err(SurveyError {
            file: ctx.file.to_string(),
            line: None,
            column: Some(ColumnRef {
                name: col_name,
                field: col + 1,
            }),
            kind: Box::new(SurveyErrorKind::UnitImplausible { what, todo }),
        });
    }
    // Very sharp, but possible: warn when another unit would make the
    // curves ordinary (e.g. millimetres written in an inch column).
    let ordinary = smaller_units(u).iter().find_map(|&a| {
        let radius = implied_radius(c, u.from_m(p90) * a.metres());
        (radius >= ORDINARY_RADIUS).then_some((a, radius))
    });
    let column_warned = p90 > 0.0 && implied_radius(c, p90) < SHARP_RADIUS && ordinary.is_some();
    if p90 > 0.0
        && implied_radius(c, p90) < SHARP_RADIUS
        && let Some((a, radius)) = ordinary
    {
        diags.push(
            Diagnostic::warning(format!(
                "a tenth of the versines are {} or more, which on a chord of {} means curves of radius {} or less, sharper than almost any railway; as {} they would mean radius about {}",
                in_file(p90),
                ctx.chord_text(),
                ctx.radius(implied_radius(c, p90), 0),
                versine_word(a),
                ctx.radius(radius, 0)
            ))
            .at(Location {
                file: ctx.file.to_string(),
                line: r[0].line,
                column: Some(col_name.clone()),
            })
            .hint(format!(
                "if the values are {}, rename the column versine_{}; check --chord too",
                versine_word(a),
                a.suffix()
            )),
        );
    }
    // Single readings too large for any railway.
    for x in r {
        if let Some(v) = x.versine
            && v != 0.0
            && implied_radius(c, v) < MIN_RADIUS
        {
            return Err(SurveyError::cell(
                ctx.file,
                x.line,
                &col_name,
                col + 1,
                SurveyErrorKind::VersineImpossible {
                    what: format!(
                        "the versine {} would mean a curve of radius {} on a chord of {}, which no railway has",
                        in_file(v),
                        ctx.radius(implied_radius(c, v), 1),
                        ctx.chord_text()
                    ),
                    todo: "check the value for a typing error, or leave the cell empty for a missing reading".to_string(),
                },
            ));
        }
    }
    // The sharpest single reading, possible but found only on tramways.
    let sharpest = r
        .iter()
        .filter_map(|x| x.versine.filter(|v| *v != 0.0).map(|v| (x.line, v)))
        .min_by(|a, b| implied_radius(c, a.1).total_cmp(&implied_radius(c, b.1)));
    if let Some((line, v)) = sharpest
        && implied_radius(c, v) < SHARP_RADIUS
        && !column_warned
    {
        diags.push(
            Diagnostic::warning(format!(
                "the versine {} means a curve of radius {} on a chord of {}, sharper than almost any railway (only tramways and some sidings go below {})",
                in_file(v),
                ctx.radius(implied_radius(c, v), 1),
                ctx.chord_text(),
                ctx.radius(SHARP_RADIUS, 0)
            ))
            .at(Location {
                file: ctx.file.to_string(),
                line,
                column: Some(col_name.clone()),
            })
            .hint("check the value for a typing error, the unit in the column name and --chord"),
        );
    }
    // Millimetre column holding metres: every value under 1 mm, written to
    // three or more decimals, finer than any tape or gauge reads.
    let max = abs.iter().copied().fold(0.0, f64::max);
    if u == VersineUnit::Millimetre
        && nonzero >= 5
        && max < 1e-3
        && fine_decimals as f64 >= 0.8 * nonzero as f64
    {
        let as_metres = max * 1000.0;
        diags.push(
            Diagnostic::warning(format!(
                "every versine in {col_name} is under 1 mm and most are written to {} or more decimals, finer than a tape or gauge reads: these look like metres (as metres the largest, {} m, means a radius of {} m on the chord of {})",
                super::FINE_DECIMALS,
                fmt_num(as_metres),
                fmt_num(implied_radius(c, as_metres).round()),
                ctx.chord_text()
            ))
            .at(Location {
                file: ctx.file.to_string(),
                line: r[0].line,
                column: Some(col_name.clone()),
            })
            .hint("if the values are metres, rename the column versine_m; if they are millimetres on straight track, ignore this"),
        );
    }
    Ok(())
}

/// Warn about isolated outliers: a reading whose second difference is beyond
/// [`OUTLIER_SIGMAS`] robust sigmas with the spike signature (neighbours'
/// second differences of the opposite sign, about half as large).
pub(crate) fn outliers(
    ctx: &Context<'_>,
    r: &[Reading],
    regular: &[bool],
    diags: &mut Vec<Diagnostic>,
) {
    let n = r.len();
    // Second differences where both steps are regular and all three present.
    let mut d2 = vec![f64::NAN; n];
    for i in 1..n.saturating_sub(1) {
        if regular[i]
            && regular[i + 1]
            && let (Some(a), Some(b), Some(c)) = (r[i - 1].versine, r[i].versine, r[i + 1].versine)
        {
            d2[i] = a - 2.0 * b + c;
        }
    }
    let mut vals: Vec<f64> = d2.iter().copied().filter(|x| x.is_finite()).collect();
    if vals.len() < 5 {
        return;
    }
    let med = median(&mut vals);
    for v in vals.iter_mut() {
        *v = (*v - med).abs();
    }
    let sigma = (1.4826 * median(&mut vals)).max(SIGMA_FLOOR);
    let limit = OUTLIER_SIGMAS * sigma;
    let u = ctx.cols.versine_unit;
    let mut found = 0usize;
    for i in 2..n.saturating_sub(2) {
        let (l, c, rr) = (d2[i - 1], d2[i], d2[i + 1]);
        if !(l.is_finite() && c.is_finite() && rr.is_finite()) {
            continue;
        }
        let c0 = c - med;
        if c0.abs() <= limit {
            continue;
        }
        let spike = (l - med) * c0 < 0.0
            && (rr - med) * c0 < 0.0
            && [(l - med).abs(), (rr - med).abs()]
                .iter()
                .all(|x| *x >= 0.25 * c0.abs() && *x <= 0.75 * c0.abs());
        if !spike {
            continue;
        }
        found += 1;
        if found > MAX_LISTED {
            continue;
        }
        let (Some(a), Some(v), Some(b)) = (r[i - 1].versine, r[i].versine, r[i + 1].versine) else {
            continue;
        };
        let expected = 0.5 * (a + b);
        diags.push(
            Diagnostic::warning(format!(
                "the versine {} {} is far from what its neighbours imply (about {} {}): an outlier of {} robust sigmas",
                fmt_num(u.from_m(v)),
                u.suffix(),
                fmt_num((u.from_m(expected) * 10.0).round() / 10.0),
                u.suffix(),
                fmt_num((c0.abs() / sigma).round())
            ))
            .at(ctx.loc(r[i].line, Some(ctx.cols.versine)))
            .hint("check it for a reading or typing error; if it is wrong, correct it or leave the cell empty"),
        );
    }
    if found > MAX_LISTED {
        diags.push(Diagnostic::warning(format!(
            "{} more outliers are not listed",
            found - MAX_LISTED
        )));
    }
}
