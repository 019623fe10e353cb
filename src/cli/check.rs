//! `chordline check`: read and check survey files, report what was found,
//! write nothing. Useful on site before leaving the track.

use super::Failure;
use super::simulate::{MarkingArg, RailArg};
use chordline::diag::{Diagnostic, Severity};
use chordline::survey::read::{ReadOptions, SurveyErrorKind, read_survey_input};
use chordline::survey::{Rail, Survey};
use chordline::units::{ChordLength, LengthUnit};
use clap::Args;
use std::fmt::Write as _;
use std::io::Write as _;
use std::path::PathBuf;

/// Options of `chordline check`.
#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Survey files (CSV), or - for standard input.
    #[arg(required = true)]
    pub surveys: Vec<PathBuf>,
    /// Chord length with unit, e.g. 20m or 62ft, or its two arms, e.g. 4m+6.5m
    /// (default: twice the spacing, readings every half chord).
    #[arg(long, allow_hyphen_values = true)]
    pub chord: Option<ChordLength>,
    /// Rail measured, facing increasing chainage (checked against a side column).
    #[arg(long, value_enum)]
    pub rail: Option<RailArg>,
    /// How stations were marked.
    #[arg(long, value_enum, default_value = "taped")]
    pub marking: MarkingArg,
    /// Do not print the warnings (the report still counts them).
    #[arg(long, short)]
    pub quiet: bool,
}

/// Run `chordline check`.
pub fn run(a: CheckArgs) -> Result<(), Failure> {
    let mut refused = 0usize;
    let mut out = String::new();
    for (i, path) in a.surveys.iter().enumerate() {
        if i > 0 {
            out.push('\n');
        }
        match check_one(path, &a) {
            Ok((text, diags)) => {
                if !a.quiet {
                    super::run::print_diagnostics(&diags, "");
                }
                out.push_str(&text);
            }
            Err(e) => {
                refused += 1;
                let _ = writeln!(out, "refused  {e}");
            }
        }
    }
    let mut stdout = std::io::stdout().lock();
    let _ = stdout
        .write_all(out.as_bytes())
        .and_then(|()| stdout.flush());
    if refused > 0 {
        return Err(Failure::Input(anyhow::anyhow!(
            "{refused} of {} survey(s) cannot be run as they are (see above); nothing was written",
            a.surveys.len()
        )));
    }
    Ok(())
}

/// Read one survey and describe it; `Err` with the reader's message when
/// it is refused.
fn check_one(path: &std::path::Path, a: &CheckArgs) -> Result<(String, Vec<Diagnostic>), String> {
    let chord = match a.chord {
        Some(c) => c.metres(),
        None => guess_chord(path).unwrap_or(20.0),
    };
    let opts = ReadOptions {
        rail: a.rail.map(Rail::from),
        chord,
        behind: a.chord.and_then(|c| c.behind()),
        marking: a.marking.into(),
    };
    let mut notes = Vec::new();
    let read = match read_survey_input(path, &opts) {
        Err(e)
            if matches!(*e.kind, SurveyErrorKind::NoRail) && path != std::path::Path::new("-") =>
        {
            notes.push(
                "no side column and no --rail: read as the left rail (give --rail for the run)",
            );
            read_survey_input(
                path,
                &ReadOptions {
                    rail: Some(Rail::Left),
                    ..opts
                },
            )
        }
        r => r,
    };
    let (survey, diags) = read.map_err(|e| e.to_string())?;
    Ok((
        describe(
            &survey,
            &diags,
            chordline::survey::arms_of(chord, a.chord.and_then(|c| c.behind())),
            a.chord.is_some(),
            &notes,
        ),
        diags,
    ))
}

/// Twice the median step between the first lines of the file (the chord
/// read every half chord), when no --chord is given.
fn guess_chord(path: &std::path::Path) -> Option<f64> {
    if path == std::path::Path::new("-") {
        return None;
    }
    // The reader needs a chord to check the spacing against, so the steps
    // are taken from the first column of the first lines here.
    let bytes = std::fs::read(path).ok()?;
    let text = String::from_utf8_lossy(&bytes);
    let mut steps: Vec<f64> = Vec::new();
    let mut last: Option<f64> = None;
    let unit = if text.to_ascii_lowercase().contains("chainage_ft") {
        LengthUnit::Foot
    } else {
        LengthUnit::Metre
    };
    for line in text
        .lines()
        .filter(|l| !l.trim_start().starts_with('#'))
        .skip(1)
        .take(2000)
    {
        let first = line
            .split([',', ';', '\t'])
            .next()?
            .trim()
            .replace(',', ".");
        if let Ok(c) = first.parse::<f64>() {
            if let Some(l) = last {
                steps.push(c - l);
            }
            last = Some(c);
        }
    }
    steps.retain(|s| *s > 0.0);
    if steps.is_empty() {
        return None;
    }
    steps.sort_by(f64::total_cmp);
    Some(2.0 * unit.to_m(steps[steps.len() / 2]))
}

/// The report for one survey read.
fn describe(
    s: &Survey,
    diags: &[Diagnostic],
    arms: chordline::survey::Arms,
    chord_given: bool,
    notes: &[&str],
) -> String {
    let u = s.chainage_unit;
    let len = |m: f64| format!("{} {}", trim(u.from_m(m)), u.suffix());
    let r = &s.readings;
    let missing = r.iter().filter(|x| x.versine.is_none()).count();
    let gaps = r
        .windows(2)
        .filter(|w| w[0].versine.is_some() && w[1].versine.is_none())
        .count()
        + usize::from(r.first().is_some_and(|x| x.versine.is_none()));
    let mut steps: Vec<f64> = r
        .windows(2)
        .map(|w| w[1].chainage - w[0].chainage)
        .collect();
    steps.sort_by(f64::total_cmp);
    let spacing = steps.get(steps.len() / 2).copied().unwrap_or(0.0);
    let chord = arms.chord();
    let per_half = (0.5 * chord / spacing).round().max(1.0);
    let outliers = diags
        .iter()
        .filter(|d| d.message.contains("is far from what its neighbours imply"))
        .count();
    let warnings = diags
        .iter()
        .filter(|d| d.severity == Severity::Warning)
        .count();
    let (first, last) = (
        r.first().map_or(0.0, |x| x.chainage),
        r.last().map_or(0.0, |x| x.chainage),
    );
    let mut t = String::new();
    let _ = writeln!(t, "survey   {}: can be run", s.source);
    let _ = writeln!(
        t,
        "readings {} from {} to {} ({} long), {} missing",
        r.len() - missing,
        trim(u.from_m(first)),
        len(last),
        len(last - first),
        missing
    );
    let pattern = if !arms.is_symmetric() {
        format!(
            "{} behind and {} ahead of the measuring point",
            trim((arms.behind / spacing).round()),
            trim((arms.ahead / spacing).round())
        )
    } else if per_half == 1.0 {
        "every half chord".to_string()
    } else {
        format!("{} per half chord", trim(per_half))
    };
    let _ = writeln!(t, "spacing  {} ({pattern})", len(spacing));
    if chord_given {
        if arms.is_symmetric() {
            let _ = writeln!(t, "chord    {} fits the spacing", len(chord));
        } else {
            let _ = writeln!(
                t,
                "chord    {} + {} (behind + ahead of the measuring point) fits the spacing",
                len(arms.behind),
                len(arms.ahead)
            );
        }
    } else {
        let _ = writeln!(
            t,
            "chord    not given: readings every {} fit a chord of {} read every half chord (or {} read every quarter chord); give --chord for the run",
            len(spacing),
            len(2.0 * spacing),
            len(4.0 * spacing)
        );
    }
    let _ = writeln!(
        t,
        "gaps     {gaps} ({missing} missing readings, bridged in a run)"
    );
    let _ = writeln!(t, "outliers {outliers}");
    for n in notes {
        let _ = writeln!(t, "note     {n}");
    }
    let _ = writeln!(
        t,
        "warnings {warnings}{}",
        if warnings > 0 {
            " (listed on standard error)"
        } else {
            ""
        }
    );
    t
}

/// A number without trailing zeros (at most 3 decimals).
fn trim(v: f64) -> String {
    let t = format!("{v:.3}");
    let t = t.trim_end_matches('0').trim_end_matches('.');
    if t == "-0" { "0".into() } else { t.into() }
}
