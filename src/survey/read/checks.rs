//! Checks on the whole survey once it is read: spacing against the chord,
//! the size of the versines against their unit, isolated outliers.

use super::error::{ColumnRef, SurveyError, SurveyErrorKind};
use super::header::Columns;
use super::{fmt_num, versine_word};
use crate::diag::{Diagnostic, Location};
use crate::survey::{Marking, Reading};
use crate::units::VersineUnit;

mod arms;

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
    /// The chord's arms (both half the chord when it is read at its middle).
    pub arms: crate::survey::Arms,
    pub marking: Marking,
    /// Every chainage is written like `1.010` in a file with decimal commas
    /// (the '.' may separate thousands).
    pub thousands_like: bool,
}

impl Context<'_> {
    /// An error at the chainage cell of `line`.
    fn chainage_error(&self, line: usize, kind: SurveyErrorKind) -> SurveyError {
        let col = self.cols.chainage;
        SurveyError::cell(self.file, line, self.cols.name(col), col + 1, kind)
    }

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
        if !self.arms.is_symmetric() {
            return String::new();
        }
        match self.cols.chainage_unit {
            crate::units::LengthUnit::Metre => String::new(),
            crate::units::LengthUnit::Foot => format!(", that is {},", self.len(0.5 * self.chord)),
        }
    }

    /// The chord as the user most likely gave it: metres for a metric file;
    /// for a feet file, feet when the chord is a whole number of thousandths
    /// of a foot (62 ft), else metres with the feet beside ("20 m (65.617 ft)").
    fn chord_text(&self) -> String {
        if !self.arms.is_symmetric() {
            return self.arms_text();
        }
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
    /// The arms of a chord not read at its middle, `4 m + 6.5 m`, in the
    /// file's chainage unit.
    fn arms_text(&self) -> String {
        format!(
            "{} + {}",
            self.len(self.arms.behind),
            self.len(self.arms.ahead)
        )
    }
    /// The chord whose circle relation the versine checks use: the chord, or
    /// for arms `a₁`, `a₂` the symmetric chord `2√(a₁a₂)` that reads the
    /// same versine on a circle.
    fn versine_chord(&self) -> f64 {
        self.arms.equivalent_chord()
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

/// Check the spacing of the chainages against the chord. Returns, for each
/// reading, whether the step from the previous one is one regular spacing
/// (within the pattern tolerance; `false` for the first reading), and the
/// regular spacing, metres.
pub(crate) fn spacing(
    ctx: &Context<'_>,
    r: &[Reading],
    diags: &mut Vec<Diagnostic>,
) -> Result<(Vec<bool>, f64), SurveyError> {
    let nominal = nominal_spacing(ctx, r)?;
    let (m, s_nom) = (nominal.steps_per_half_chord, nominal.spacing);
    if ctx.marking == Marking::Taped && m > MAX_TAPED_STEPS && ctx.arms.is_symmetric() {
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
    let scan = scan_steps(ctx, r, s_nom, diags)?;
    warn_irregular(ctx, r, &scan, s_nom, diags);
    warn_scale(ctx, &scan, &nominal, diags);
    Ok((scan.regular, s_nom))
}

/// The regular spacing the readings follow: the median step, fitted to a
/// whole fraction of the half chord.
struct Nominal {
    /// Steps to the half chord.
    steps_per_half_chord: f64,
    /// The nominal step (m).
    spacing: f64,
}

/// The nominal spacing, or why the readings cannot be on one for this chord
/// (closer than any survey reads, longer than the half chord, not a whole
/// fraction of it).
fn nominal_spacing(ctx: &Context<'_>, r: &[Reading]) -> Result<Nominal, SurveyError> {
    let mut steps: Vec<f64> = r
        .windows(2)
        .map(|w| w[1].chainage - w[0].chainage)
        .collect();
    let s_med = crate::numeric::median_in_place(&mut steps).unwrap_or(0.0);
    if s_med < MIN_SPACING {
        return Err(too_close(ctx, r, s_med));
    }
    if !ctx.arms.is_symmetric() {
        return arms::spacing(ctx, s_med);
    }
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
    Ok(Nominal {
        steps_per_half_chord: m,
        spacing: s_nom,
    })
}

/// Readings closer than any chord survey reads: most likely chainages in
/// kilometres, or a '.' that separates thousands.
fn too_close(ctx: &Context<'_>, r: &[Reading], s_med: f64) -> SurveyError {
    let second = ctx.cols.chainage_unit.from_m(r[1].chainage);
    let todo = if ctx.thousands_like {
        format!(
            "the chainages are written like {second:.3}, where '.' separates thousands in this file: write them without it ({})",
            fmt_num((second * 1000.0).round())
        )
    } else {
        format!(
            "if the chainages are kilometres (like {} for {} m), write them in {} in the column {}",
            fmt_num(second),
            fmt_num((second * 1000.0).round()),
            if ctx.cols.chainage_unit == crate::units::LengthUnit::Foot {
                "feet"
            } else {
                "metres"
            },
            ctx.cols.name(ctx.cols.chainage)
        )
    };
    let what = format!(
        "the readings are {} apart, closer than any chord survey reads (every {} at the closest)",
        ctx.len(s_med),
        ctx.len(MIN_SPACING)
    );
    SurveyError::file(ctx.file, SurveyErrorKind::SpacingTooSmall { what, todo })
}

/// Each step against the nominal spacing.
struct StepScan {
    /// Whether the step to reading `i` is one nominal spacing.
    regular: Vec<bool>,
    /// Steps within the pattern tolerance but off it by more than 1 %.
    irregular: usize,
    /// The worst of them: (deviation in spacings, index, step).
    worst: Option<(f64, usize, f64)>,
    /// Sum and count of the regular steps (for the scale check).
    sum_regular: f64,
    n_regular: usize,
}

/// Classify every step: one spacing (regular), several (a gap, warned;
/// refused beyond `MAX_GAP_CHORDS` chords), or off the pattern (refused).
fn scan_steps(
    ctx: &Context<'_>,
    r: &[Reading],
    s_nom: f64,
    diags: &mut Vec<Diagnostic>,
) -> Result<StepScan, SurveyError> {
    let mut scan = StepScan {
        regular: vec![false; r.len()],
        irregular: 0,
        worst: None,
        sum_regular: 0.0,
        n_regular: 0,
    };
    let mut gaps = 0usize;
    for i in 1..r.len() {
        let d = r[i].chainage - r[i - 1].chainage;
        let x = d / s_nom;
        let k = x.round();
        let dev = (x - k).abs();
        if !(k >= 1.0 && dev <= PATTERN_TOL) {
            return Err(spacing_break(ctx, r, i, x, s_nom));
        }
        if k == 1.0 {
            scan.regular[i] = true;
            scan.sum_regular += d;
            scan.n_regular += 1;
        } else if d > MAX_GAP_CHORDS * ctx.chord {
            return Err(gap_too_long(ctx, r, i));
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
                    .at(ctx.loc(r[i].line, Some(ctx.cols.chainage)))
                    .hint("the alignment is bridged across the gap, less certainly; check that no lines were lost"),
                );
            }
        }
        if dev > REGULAR_TOL {
            scan.irregular += 1;
            if scan.worst.is_none_or(|(w, _, _)| dev > w) {
                scan.worst = Some((dev, i, d));
            }
        }
    }
    if gaps > MAX_LISTED {
        diags.push(Diagnostic::warning(format!(
            "{} more gaps in the chainages are not listed",
            gaps - MAX_LISTED
        )));
    }
    Ok(scan)
}

/// A gap longer than anything measured can bridge.
fn gap_too_long(ctx: &Context<'_>, r: &[Reading], i: usize) -> SurveyError {
    let what = format!(
        "chainage jumps from {} (line {}) to {}, a gap of {} with no readings, more than {} chords",
        ctx.ch(r[i - 1].chainage),
        r[i - 1].line,
        ctx.ch(r[i].chainage),
        ctx.len(r[i].chainage - r[i - 1].chainage),
        fmt_num(MAX_GAP_CHORDS)
    );
    let todo = "nothing measured bridges a gap that long: if it is a typing error, correct the chainage; otherwise split the file there and run each part".into();
    ctx.chainage_error(r[i].line, SurveyErrorKind::GapTooLong { what, todo })
}

/// A step of `x` nominal spacings, off the regular pattern.
fn spacing_break(ctx: &Context<'_>, r: &[Reading], i: usize, x: f64, s_nom: f64) -> SurveyError {
    let todo = match ctx.marking {
        Marking::Taped => "check the chainages around it (a typing error or a mis-taped mark?); if the survey restarts on a new pattern, split the file there".to_string(),
        Marking::Wire => "check the chainages around it; if the recording restarts on a new pattern, split the file there".to_string(),
    };
    let what = format!(
        "chainage jumps from {} (line {}) to {}, {} spacings of {}",
        ctx.ch(r[i - 1].chainage),
        r[i - 1].line,
        ctx.ch(r[i].chainage),
        fmt_num((x * 100.0).round() / 100.0),
        ctx.len(s_nom)
    );
    ctx.chainage_error(r[i].line, SurveyErrorKind::SpacingBreak { what, todo })
}

/// One warning for the steps off the pattern by more than 1 %, at the worst.
fn warn_irregular(
    ctx: &Context<'_>,
    r: &[Reading],
    scan: &StepScan,
    s_nom: f64,
    diags: &mut Vec<Diagnostic>,
) {
    let Some((dev, i, d)) = scan.worst else {
        return;
    };
    diags.push(
        Diagnostic::warning(format!(
            "the spacing is irregular at {} place(s), by up to {}% of the {} spacing ({} from line {} to line {})",
            scan.irregular,
            fmt_num((dev * 1000.0).round() / 10.0),
            ctx.len(s_nom),
            ctx.len(d),
            r[i - 1].line,
            r[i].line
        ))
        .at(ctx.loc(r[i].line, Some(ctx.cols.chainage)))
        .hint(format!(
            "within the {}% tolerance, so the readings are used as if on the regular pattern; check the chainages",
            fmt_num(PATTERN_TOL * 100.0)
        )),
    );
}

/// A warning when the regular steps run long or short on average (a chord
/// or chainage scale error).
fn warn_scale(ctx: &Context<'_>, scan: &StepScan, nominal: &Nominal, diags: &mut Vec<Diagnostic>) {
    if scan.n_regular == 0 {
        return;
    }
    let s_nom = nominal.spacing;
    let mean = scan.sum_regular / scan.n_regular as f64;
    if (mean - s_nom).abs() > SCALE_TOL * s_nom {
        diags.push(
            Diagnostic::warning(format!(
                "the readings are on average {} apart rather than {} (the chord of {} over {}): the chainages run {}% {}",
                ctx.len(mean),
                ctx.len(s_nom),
                ctx.chord_text(),
                fmt_num(2.0 * nominal.steps_per_half_chord),
                fmt_num(((mean / s_nom - 1.0).abs() * 1000.0).round() / 10.0),
                if mean > s_nom { "long" } else { "short" }
            ))
            .hint("check the chord length and how the chainages were measured: tape or odometer scale"),
        );
    }
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
    // Most surveys skip no station: keep their readings where they are (a
    // copy would double a long survey's memory while it is read).
    let skips = |(w, &reg): (&[Reading], &bool)| {
        !reg && ((w[1].chainage - w[0].chainage) / s_nom).round() >= 2.0
    };
    if !r.windows(2).zip(regular.iter().skip(1)).any(skips) {
        return (r, regular);
    }
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
    let mut abs: Vec<f64> = r.iter().filter_map(|x| x.versine).map(f64::abs).collect();
    let Some(p90) = crate::numeric::quantile_in_place(&mut abs, 0.9) else {
        return Ok(());
    };
    // The column as a whole: a tenth of the readings or more are too large.
    if p90 > 0.0 && implied_radius(ctx.versine_chord(), p90) < MIN_RADIUS {
        return Err(column_implausible(ctx, p90));
    }
    let column_warned = warn_column_sharp(ctx, r, p90, diags);
    if let Some(e) = single_reading_impossible(ctx, r) {
        return Err(e);
    }
    if !column_warned {
        warn_sharpest(ctx, r, diags);
    }
    let max = abs.iter().copied().fold(0.0, f64::max);
    let tally = (fine_decimals, nonzero);
    warn_metres_in_millimetres(ctx, r, max, tally, diags);
    Ok(())
}

/// A versine as written in the file, with its unit.
fn in_file(ctx: &Context<'_>, v: f64) -> String {
    let u = ctx.cols.versine_unit;
    format!("{} {}", fmt_num(u.from_m(v)), u.suffix())
}

/// The versine column, for a warning's location.
fn versine_loc(ctx: &Context<'_>, line: usize) -> Location {
    Location {
        file: ctx.file.to_string(),
        line,
        column: Some(ctx.cols.name(ctx.cols.versine).to_string()),
    }
}

/// A tenth of the versines mean curves no railway has: the error names the
/// smaller unit that would make them plausible.
fn column_implausible(ctx: &Context<'_>, p90: f64) -> SurveyError {
    let (u, c, col) = (ctx.cols.versine_unit, ctx.versine_chord(), ctx.cols.versine);
    let alt = smaller_units(u).iter().find_map(|&a| {
        let v = u.from_m(p90) * a.metres();
        let radius = implied_radius(c, v);
        (radius >= MIN_RADIUS).then_some((a, radius))
    });
    let what = format!(
        "a tenth of the versines are {} or more, which on a chord of {} would mean curves of radius {} or less; no railway has such curves",
        in_file(ctx, p90),
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
    SurveyError {
        file: ctx.file.to_string(),
        line: None,
        column: Some(ColumnRef {
            name: ctx.cols.name(col).to_string(),
            field: col + 1,
        }),
        kind: Box::new(SurveyErrorKind::UnitImplausible { what, todo }),
    }
}

/// Very sharp, but possible: warn when another unit would make the curves
/// ordinary (e.g. millimetres written in an inch column). Whether it warned.
fn warn_column_sharp(
    ctx: &Context<'_>,
    r: &[Reading],
    p90: f64,
    diags: &mut Vec<Diagnostic>,
) -> bool {
    let (u, c) = (ctx.cols.versine_unit, ctx.versine_chord());
    let ordinary = smaller_units(u).iter().find_map(|&a| {
        let radius = implied_radius(c, u.from_m(p90) * a.metres());
        (radius >= ORDINARY_RADIUS).then_some((a, radius))
    });
    let Some((a, radius)) = ordinary.filter(|_| p90 > 0.0 && implied_radius(c, p90) < SHARP_RADIUS)
    else {
        return false;
    };
    diags.push(
        Diagnostic::warning(format!(
            "a tenth of the versines are {} or more, which on a chord of {} means curves of radius {} or less, sharper than almost any railway; as {} they would mean radius about {}",
            in_file(ctx, p90),
            ctx.chord_text(),
            ctx.radius(implied_radius(c, p90), 0),
            versine_word(a),
            ctx.radius(radius, 0)
        ))
        .at(versine_loc(ctx, r[0].line))
        .hint(format!(
            "if the values are {}, rename the column versine_{}; check --chord too",
            versine_word(a),
            a.suffix()
        )),
    );
    true
}

/// The first single reading too large for any railway.
fn single_reading_impossible(ctx: &Context<'_>, r: &[Reading]) -> Option<SurveyError> {
    let c = ctx.versine_chord();
    let (x, v) = r
        .iter()
        .filter_map(|x| x.versine.map(|v| (x, v)))
        .find(|&(_, v)| v != 0.0 && implied_radius(c, v) < MIN_RADIUS)?;
    let what = format!(
        "the versine {} would mean a curve of radius {} on a chord of {}, which no railway has",
        in_file(ctx, v),
        ctx.radius(implied_radius(c, v), 1),
        ctx.chord_text()
    );
    let todo =
        "check the value for a typing error, or leave the cell empty for a missing reading".into();
    let col = ctx.cols.versine;
    let kind = SurveyErrorKind::VersineImpossible { what, todo };
    Some(SurveyError::cell(
        ctx.file,
        x.line,
        ctx.cols.name(col),
        col + 1,
        kind,
    ))
}

/// The sharpest single reading, possible but found only on tramways.
fn warn_sharpest(ctx: &Context<'_>, r: &[Reading], diags: &mut Vec<Diagnostic>) {
    let c = ctx.versine_chord();
    let sharpest = r
        .iter()
        .filter_map(|x| x.versine.filter(|v| *v != 0.0).map(|v| (x.line, v)))
        .min_by(|a, b| implied_radius(c, a.1).total_cmp(&implied_radius(c, b.1)));
    let Some((line, v)) = sharpest.filter(|&(_, v)| implied_radius(c, v) < SHARP_RADIUS) else {
        return;
    };
    diags.push(
        Diagnostic::warning(format!(
            "the versine {} means a curve of radius {} on a chord of {}, sharper than almost any railway (only tramways and some sidings go below {})",
            in_file(ctx, v),
            ctx.radius(implied_radius(c, v), 1),
            ctx.chord_text(),
            ctx.radius(SHARP_RADIUS, 0)
        ))
        .at(versine_loc(ctx, line))
        .hint("check the value for a typing error, the unit in the column name and --chord"),
    );
}

/// Millimetre column holding metres: every value under 1 mm, written to
/// three or more decimals, finer than any tape or gauge reads. `tally`:
/// readings written finely, readings not zero.
fn warn_metres_in_millimetres(
    ctx: &Context<'_>,
    r: &[Reading],
    max: f64,
    (fine_decimals, nonzero): (usize, usize),
    diags: &mut Vec<Diagnostic>,
) {
    if !(ctx.cols.versine_unit == VersineUnit::Millimetre
        && nonzero >= 5
        && max < 1e-3
        && fine_decimals as f64 >= 0.8 * nonzero as f64)
    {
        return;
    }
    let as_metres = max * 1000.0;
    let col_name = ctx.cols.name(ctx.cols.versine);
    diags.push(
        Diagnostic::warning(format!(
            "every versine in {col_name} is under 1 mm and most are written to {} or more decimals, finer than a tape or gauge reads: these look like metres (as metres the largest, {} m, means a radius of {} m on the chord of {})",
            super::FINE_DECIMALS,
            fmt_num(as_metres),
            fmt_num(implied_radius(ctx.versine_chord(), as_metres).round()),
            ctx.chord_text()
        ))
        .at(versine_loc(ctx, r[0].line))
        .hint("if the values are metres, rename the column versine_m; if they are millimetres on straight track, ignore this"),
    );
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
    let med = crate::numeric::median_in_place(&mut vals).unwrap_or(0.0);
    for v in vals.iter_mut() {
        *v = (*v - med).abs();
    }
    let sigma =
        (1.4826 * crate::numeric::median_in_place(&mut vals).unwrap_or(0.0)).max(SIGMA_FLOOR);
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
