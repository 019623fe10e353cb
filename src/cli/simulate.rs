//! `chordline simulate`: write the survey a chord would measure on a known design.

use super::Failure;
use super::util::{small_length, write_file_atomic};
use anyhow::Context;
use chordline::simulate::{Design, simulate, write_survey_csv};
use chordline::survey::{Marking, Rail};
use chordline::units::{Length, LengthUnit, VersineUnit};
use clap::{Args, ValueEnum};
use std::path::PathBuf;

/// Which rail, on the command line.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum RailArg {
    /// The left rail facing increasing chainage.
    Left,
    /// The right rail facing increasing chainage.
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
    /// Chord length with unit, e.g. 20m or 62ft.
    #[arg(long)]
    pub chord: Option<Length>,
    /// Distance between marks along the rail, e.g. 10m (default: half the chord).
    #[arg(long)]
    pub spacing: Option<Length>,
    /// Rail measured, facing increasing chainage.
    #[arg(long, value_enum)]
    pub rail: Option<RailArg>,
    /// How stations are marked.
    #[arg(long, value_enum)]
    pub marking: Option<MarkingArg>,
    /// Track gauge between running edges, e.g. 1435mm.
    #[arg(long, value_parser = small_length)]
    pub gauge: Option<f64>,
    /// Standard deviation of the random reading noise, e.g. 1mm.
    #[arg(long, value_parser = small_length)]
    pub noise: Option<f64>,
    /// Readings are rounded to this step, e.g. 1mm or 0.125in.
    #[arg(long, value_parser = small_length)]
    pub resolution: Option<f64>,
    /// RMS of a lateral irregularity of the track (3–70 m wavelengths), e.g. 1.5mm.
    #[arg(long, value_parser = small_length)]
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
        if a.spacing.is_none() {
            s.spacing = 0.5 * s.chord;
        }
        if c.unit() == LengthUnit::Foot {
            s.chainage_unit = LengthUnit::Foot;
            s.versine_unit = VersineUnit::Inch;
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
    let sim = simulate(&design.alignment(), &setup)?;
    let comment = format!(
        "Simulated survey of {name} (chordline simulate)\nchord {} m, marks every {} m on the {} rail, {:?} marking, gauge {} m\nreading noise sd {} mm, bias {} mm, resolution {} mm, track irregularity {} mm RMS, seed {}",
        setup.chord,
        setup.spacing,
        setup.rail.name(),
        setup.marking,
        setup.gauge,
        setup.noise_sd * 1e3,
        setup.bias * 1e3,
        setup.resolution * 1e3,
        setup.irregularity_rms * 1e3,
        setup.seed
    );
    write_file_atomic(&out, a.force, |w| {
        write_survey_csv(w, &sim.survey, setup.resolution, &comment)
    })?;
    if let Some(t) = &a.truth {
        let cu = setup.chainage_unit;
        write_file_atomic(t, a.force, |w| {
            writeln!(
                w,
                "chainage_{u},centre_distance_{u},easting_{u},northing_{u},bearing_deg,curvature_1_per_km,irregularity_mm,exact_versine_mm",
                u = cu.suffix()
            )?;
            for t in &sim.truth {
                writeln!(
                    w,
                    "{:.4},{:.4},{:.4},{:.4},{:.8},{:.6},{:.4},{}",
                    cu.from_m(t.chainage),
                    cu.from_m(t.centre_s),
                    cu.from_m(t.centre.x),
                    cu.from_m(t.centre.y),
                    chordline::geometry::heading_to_bearing(t.centre.heading),
                    t.centre_curvature * 1e3,
                    t.irregularity * 1e3,
                    t.versine
                        .map_or(String::new(), |v| format!("{:.4}", v * 1e3))
                )?;
            }
            Ok(())
        })?;
    }
    eprintln!(
        "wrote {} readings to {}",
        sim.survey
            .readings
            .iter()
            .filter(|r| r.versine.is_some())
            .count(),
        out.display()
    );
    Ok(())
}
