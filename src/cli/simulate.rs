//! `chordline simulate`: write the survey a chord would measure on a known design.

use super::Failure;
use super::util::{gauge, same_file, small_length};
use anyhow::Context;
use chordline::export::staged_file::StagedFile;
use chordline::simulate::{Design, simulate, write_survey_csv};
use chordline::survey::{Marking, Rail};
use chordline::units::{ChordLength, Length, LengthUnit, VersineUnit};
use clap::{Args, ValueEnum};
use std::io::Write;
use std::path::{Path, PathBuf};

/// Which rail, on the command line.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum RailArg {
    /// The left rail facing increasing chainage (also: L).
    #[value(alias = "L", alias = "l")]
    Left,
    /// The right rail facing increasing chainage (also: R).
    #[value(alias = "R", alias = "r")]
    Right,
}

impl From<RailArg> for Rail {
    fn from(r: RailArg) -> Rail {
        match r {
            RailArg::Left => Rail::Left,
            RailArg::Right => Rail::Right,
        }
    }
}

/// How stations were marked, on the command line.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum MarkingArg {
    /// Marks taped at equal distances along the rail, wire between marks (hand survey).
    Taped,
    /// A rigid wire or beam of the chord length read at its middle (trolleys, vehicles).
    Wire,
}

impl From<MarkingArg> for Marking {
    fn from(m: MarkingArg) -> Marking {
        match m {
            MarkingArg::Taped => Marking::Taped,
            MarkingArg::Wire => Marking::Wire,
        }
    }
}

/// Options of `chordline simulate`. Values given here override the design file's.
#[derive(Debug, Args)]
pub struct SimulateArgs {
    /// Design file (JSON): the elements in order and, optionally, the survey set-up.
    pub design: PathBuf,
    /// Where to write the survey CSV (or give it with --out).
    #[arg(value_name = "OUT")]
    pub out_positional: Option<PathBuf>,
    /// Where to write the survey CSV.
    #[arg(
        long,
        conflicts_with = "out_positional",
        required_unless_present = "out_positional"
    )]
    pub out: Option<PathBuf>,
    /// Chord length with unit, e.g. 20m or 62ft, or its two arms behind and
    /// ahead of the measuring point, e.g. 4m+6.5m (a recording vehicle's chord).
    #[arg(long, allow_hyphen_values = true)]
    pub chord: Option<ChordLength>,
    /// Distance between marks along the rail, e.g. 10m (default: half the chord;
    /// for two arms the longest spacing dividing both).
    #[arg(long, allow_hyphen_values = true)]
    pub spacing: Option<Length>,
    /// Rail measured, facing increasing chainage.
    #[arg(long, value_enum)]
    pub rail: Option<RailArg>,
    /// How stations are marked.
    #[arg(long, value_enum)]
    pub marking: Option<MarkingArg>,
    /// Track gauge between running edges, e.g. 1435mm.
    #[arg(long, value_parser = gauge, allow_hyphen_values = true)]
    pub gauge: Option<f64>,
    /// Standard deviation of the random reading noise, e.g. 1mm.
    #[arg(long, value_parser = small_length, allow_hyphen_values = true)]
    pub noise: Option<f64>,
    /// Readings are rounded to this step, e.g. 1mm or 0.125in.
    #[arg(long, value_parser = small_length, allow_hyphen_values = true)]
    pub resolution: Option<f64>,
    /// RMS of a lateral irregularity of the track (3–70 m wavelengths), e.g. 1.5mm.
    #[arg(long, value_parser = small_length, allow_hyphen_values = true)]
    pub irregularity: Option<f64>,
    /// Seed for the noise and the irregularity.
    #[arg(long)]
    pub seed: Option<u64>,
    /// Also write the exact geometry at every mark to this CSV.
    #[arg(long)]
    pub truth: Option<PathBuf>,
    /// Replace output files that already exist.
    #[arg(long)]
    pub force: bool,
}

/// Run `chordline simulate`.
pub fn run(a: SimulateArgs) -> Result<(), Failure> {
    let Some(out) = a.out.clone().or(a.out_positional.clone()) else {
        return Err(Failure::Input(anyhow::anyhow!(
            "say where to write the survey: chordline simulate DESIGN.json --out SURVEY.csv"
        )));
    };
    let name = a.design.display().to_string();
    let text = std::fs::read_to_string(&a.design)
        .with_context(|| format!("could not read the design file {name}"))?;
    let mut design = Design::from_json(&name, &text)?;
    let s = &mut design.setup;
    if let Some(c) = a.chord {
        s.chord = c.metres();
        s.behind = c.behind();
        if c.unit() == LengthUnit::Foot {
            s.chainage_unit = LengthUnit::Foot;
            s.versine_unit = VersineUnit::Inch;
        }
        if a.spacing.is_none() {
            s.spacing = chordline::simulate::default_spacing(s.arms(), s.chainage_unit);
        }
    }
    if let Some(x) = a.spacing {
        s.spacing = x.metres();
    }
    if let Some(r) = a.rail {
        s.rail = r.into();
    }
    if let Some(m) = a.marking {
        s.marking = m.into();
    }
    if let Some(g) = a.gauge {
        s.gauge = g;
    }
    if let Some(n) = a.noise {
        s.noise_sd = n;
    }
    if let Some(r) = a.resolution {
        s.resolution = r;
    }
    if let Some(i) = a.irregularity {
        s.irregularity_rms = i;
    }
    if let Some(seed) = a.seed {
        s.seed = seed;
    }
    let setup = design.setup.clone();
    check_paths(&a.design, &out, a.truth.as_deref())?;
    let sim = simulate(&design.alignment(), &setup)?;
    let comment = header_comment(&name, &setup);
    let survey = |w: &mut dyn Write| write_survey_csv(w, &sim.survey, setup.resolution, &comment);
    let truth = |w: &mut dyn Write| write_truth_csv(w, &sim.truth, setup.chainage_unit);
    // Both files are written in full before either is put in place, so a
    // failure leaves neither half-written nor one without the other.
    let staged_survey = (out != Path::new("-"))
        .then(|| StagedFile::write(&out, a.force, survey))
        .transpose()?;
    let staged_truth = match a.truth.as_deref() {
        Some(t) if t != Path::new("-") => Some(StagedFile::write(t, a.force, truth)?),
        _ => None,
    };
    if out == Path::new("-") {
        write_stdout(survey)?;
    }
    if a.truth.as_deref() == Some(Path::new("-")) {
        write_stdout(truth)?;
    }
    if let Some(f) = staged_survey {
        f.commit()?;
    }
    if let Some(f) = staged_truth {
        f.commit()?;
    }
    eprintln!(
        "wrote {} readings to {}",
        sim.survey
            .readings
            .iter()
            .filter(|r| r.versine.is_some())
            .count(),
        if out == Path::new("-") {
            "standard output".to_string()
        } else {
            out.display().to_string()
        }
    );
    Ok(())
}

/// Refuse outputs that would overwrite the design or each other, and two
/// outputs on standard output.
fn check_paths(design: &Path, out: &Path, truth: Option<&Path>) -> Result<(), Failure> {
    let refuse = |msg: String| Err(Failure::Input(anyhow::anyhow!(msg)));
    let stdout = Path::new("-");
    for (what, p) in [("--out", Some(out)), ("--truth", truth)] {
        if let Some(p) = p
            && p != stdout
            && same_file(p, design)
        {
            return refuse(format!(
                "{what} {} is the design file itself, which writing would overwrite; name another file (e.g. survey.csv)",
                p.display()
            ));
        }
    }
    if let Some(t) = truth {
        if t == stdout && out == stdout {
            return refuse(
                "the survey and --truth cannot both go to standard output (-); write one of them to a file".into(),
            );
        }
        if t != stdout && same_file(t, out) {
            return refuse(format!(
                "--truth {} is the survey file too; give the truth its own file (e.g. truth.csv)",
                t.display()
            ));
        }
    }
    Ok(())
}

/// Write one output to standard output.
fn write_stdout(f: impl FnOnce(&mut dyn Write) -> std::io::Result<()>) -> Result<(), Failure> {
    let stdout = std::io::stdout();
    let mut w = std::io::BufWriter::new(stdout.lock());
    f(&mut w)
        .and_then(|()| w.flush())
        .context("could not write to standard output")?;
    Ok(())
}

/// The survey file's comment: the set-up in the units of the survey.
fn header_comment(name: &str, s: &chordline::simulate::SimSetup) -> String {
    let imperial = s.chainage_unit == LengthUnit::Foot;
    let len = |m: f64| {
        if imperial {
            format!("{} ft", round6(m / chordline::units::FOOT))
        } else {
            format!("{} m", round6(m))
        }
    };
    let small = |m: f64| {
        if imperial {
            format!("{} in", round6(m / chordline::units::INCH))
        } else {
            format!("{} mm", round6(m * 1e3))
        }
    };
    let arms = s.arms();
    let chord = if arms.is_symmetric() {
        len(s.chord)
    } else {
        format!(
            "{} ({} behind the measuring point, {} ahead)",
            len(s.chord),
            len(arms.behind),
            len(arms.ahead)
        )
    };
    format!(
        "Simulated survey of {name} (chordline simulate)\nchord {}, marks every {} on the {} rail, {:?} marking, gauge {}\nreading noise sd {}, bias {}, resolution {}, track irregularity {} RMS, seed {}",
        chord,
        len(s.spacing),
        s.rail.name(),
        s.marking,
        small(s.gauge),
        small(s.noise_sd),
        small(s.bias),
        small(s.resolution),
        small(s.irregularity_rms),
        s.seed
    )
}

/// A number to six decimals without trailing zeros (20, 18.8976, 1.27).
fn round6(v: f64) -> String {
    let t = format!("{v:.6}");
    let t = t.trim_end_matches('0').trim_end_matches('.');
    if t == "-0" { "0".into() } else { t.into() }
}

/// The exact geometry at every mark, in the survey's units (feet and inches
/// for an imperial survey, which also gets the turn per 100 ft).
fn write_truth_csv(
    w: &mut dyn Write,
    truth: &[chordline::simulate::Truth],
    cu: LengthUnit,
) -> std::io::Result<()> {
    let vu = cu.versine_unit();
    let imperial = cu == LengthUnit::Foot;
    writeln!(
        w,
        "chainage_{u},centre_distance_{u},easting_{u},northing_{u},bearing_deg,curvature_1_per_km,irregularity_{v},exact_versine_{v}{}",
        if imperial {
            ",curvature_deg_per_100ft"
        } else {
            ""
        },
        u = cu.suffix(),
        v = vu.suffix(),
    )?;
    let dp = if imperial { 5 } else { 4 };
    for t in truth {
        write!(
            w,
            "{:.4},{:.4},{:.4},{:.4},{:.8},{:.6},{:.dp$},{}",
            cu.from_m(t.chainage),
            cu.from_m(t.centre_s),
            cu.from_m(t.centre.x),
            cu.from_m(t.centre.y),
            chordline::geometry::heading_to_bearing(t.centre.heading),
            t.centre_curvature * 1e3,
            vu.from_m(t.irregularity),
            t.versine
                .map_or(String::new(), |v| format!("{:.dp$}", vu.from_m(v)))
        )?;
        if imperial {
            write!(
                w,
                ",{:.6}",
                (t.centre_curvature * cu.to_m(100.0)).to_degrees()
            )?;
        }
        writeln!(w)?;
    }
    Ok(())
}
