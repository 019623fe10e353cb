//! `chordline run`: reconstruct the alignment from a versine survey file.

use super::Failure;
use super::simulate::{MarkingArg, RailArg};
use super::util::{ChainageArg, chainage, gauge, signed_length, small_length};
use chordline::advice::{AdviceOptions, Limit, PROFILE_NAMES, Profile};
use chordline::diag::Diagnostic;
use chordline::georef::{
    ControlFile, Crs, GeorefArgs, GeorefError, LonLat, StartPoint, parse_bearing, parse_grid_point,
};
use chordline::pipeline::{self, Options, Outcome};
use chordline::survey::{Rail, Setup};
use chordline::units::{ChordLength, Length, LengthUnit};
use clap::Args;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Options of `chordline run`.
#[derive(Debug, Args)]
pub struct RunCommand {
    /// Survey file (CSV): chainage and versine columns with units in their names.
    pub survey: PathBuf,
    /// Everything else.
    #[command(flatten)]
    pub args: RunArgs,
}

/// The set-up and output options of `chordline run` (shared with `batch`).
#[derive(Debug, Args)]
pub struct RunArgs {
    /// Chord length with unit, e.g. 20m or 62ft, or its two arms behind and
    /// ahead of the measuring point, e.g. 4m+6.5m (a recording vehicle's chord).
    #[arg(long, allow_hyphen_values = true)]
    pub chord: ChordLength,
    /// Rail measured, facing increasing chainage (needed when the file has no side column).
    #[arg(long, value_enum)]
    pub rail: Option<RailArg>,
    /// Output folder (written all at once; an existing one is replaced only with --force).
    #[arg(long)]
    pub out: PathBuf,
    /// Track gauge between running edges.
    #[arg(long, value_parser = gauge, default_value = "1435mm", allow_hyphen_values = true)]
    pub gauge: f64,
    /// How stations were marked: taped along the rail (hand survey) or a rigid wire or beam (trolley, vehicle).
    #[arg(long, value_enum, default_value = "taped")]
    pub marking: MarkingArg,
    /// Standard deviation of one reading, e.g. 1mm (default: estimated from the readings).
    #[arg(long, value_parser = small_length, allow_hyphen_values = true)]
    pub reading_sd: Option<f64>,
    /// Bearing of the track at the first station, degrees clockwise from (true) north; default 0.
    #[arg(long, allow_negative_numbers = true)]
    pub start_bearing: Option<String>,
    /// Place the first station at this WGS 84 longitude,latitude (decimal degrees), e.g. 9.1234,48.5678.
    #[arg(long, value_name = "LON,LAT", allow_hyphen_values = true)]
    pub start_lonlat: Option<String>,
    /// Place the first station at this grid easting,northing (in the grid of --crs).
    #[arg(long, value_name = "E,N", allow_hyphen_values = true)]
    pub start_grid: Option<String>,
    /// Control points (CSV: chainage and known coordinates of a few points on the track).
    #[arg(long, value_name = "FILE")]
    pub control: Option<PathBuf>,
    /// Grid of --start-grid, of the control file's easting/northing and of the LandXML output, e.g. EPSG:25832.
    #[arg(long, value_name = "EPSG:CODE")]
    pub crs: Option<String>,
    /// Height of the track above the WGS 84 ellipsoid, e.g. 350m or 1150ft (a bare number is metres; scales ground lengths to the ellipsoid).
    #[arg(long, value_parser = height, allow_hyphen_values = true)]
    pub height: Option<f64>,
    /// Accept points outside the --crs grid's area of use (refused by default, naming the likely mistake).
    #[arg(long)]
    pub allow_outside_area: bool,
    /// Replace the output folder if it exists.
    #[arg(long)]
    pub force: bool,
    /// Threads for a long survey's fit and writing, and in a batch in all (default: one per processor; results do not depend on it).
    #[arg(long)]
    pub threads: Option<usize>,
    /// Skip the element fit (stations.csv only).
    #[arg(long)]
    pub no_fit: bool,
    /// Keep readings that look like typing blunders in the fit and the plan (they are still listed).
    #[arg(long)]
    pub keep_outliers: bool,
    /// Do not print warnings (the summary still counts them).
    #[arg(long, short)]
    pub quiet: bool,
    /// How much summary to print: full (with the element table) or short (a few lines, for long routes).
    #[arg(long, value_enum, default_value = "full")]
    pub summary: SummaryLength,
    /// Compute slews onto the fitted design (indicative only; see the README).
    #[arg(long)]
    pub slews: bool,
    /// Survey chainages where the track must not move, comma separated, in
    /// the survey's chainage unit or with m or ft, e.g. 4200,4310 or
    /// 4200m,4310m (implies --slews).
    #[arg(long, value_delimiter = ',', value_name = "CH,CH,..", value_parser = chainage, allow_hyphen_values = true)]
    pub fixed: Vec<ChainageArg>,
    /// Largest slew either way, e.g. 50mm or 5cm: a constraint of the realignment (implies --slews).
    #[arg(long, value_parser = small_length, allow_hyphen_values = true)]
    pub max_slew: Option<f64>,
    /// How far a fixed point may move, e.g. 2mm (default 0: not at all).
    #[arg(long, value_parser = small_length, value_name = "LENGTH")]
    pub fixed_tolerance: Option<f64>,
    /// One-sided limit over a chainage range, repeatable: FROM,TO,DIRECTION,LARGEST with
    /// DIRECTION left, right, in or out, e.g. 12600,12700,in,20mm ("at most 20 mm towards
    /// the curve centre") or 12400,12480,left,0mm ("not to the left"); implies --slews.
    #[arg(long = "limit", value_name = "FROM,TO,DIR,MAX", value_parser = range_limit_text)]
    pub limits_range: Vec<String>,
    /// Work section of the realignment: first and last survey chainage, e.g. 12400,12900
    /// (default: the whole survey); its ends are held in position and direction.
    #[arg(long, value_name = "FROM,TO", value_parser = section_text)]
    pub section: Option<String>,
    /// Largest change of a design versine allowed to hold the held points and meet the
    /// limits, e.g. 1.5mm (default: three reading standard deviations).
    #[arg(long, value_parser = small_length, value_name = "LENGTH")]
    pub versine_tolerance: Option<f64>,
    /// Design to move the track onto: fitted (default), optimised (radii and boundaries
    /// adjusted to move the track least), or the path of an elements.csv (implies --slews).
    #[arg(long, value_name = "fitted|optimised|FILE")]
    pub design: Option<String>,
    /// What an optimised design minimises: squares (sum of squared slews) or largest.
    #[arg(long, value_name = "squares|largest", value_parser = ["squares", "largest"])]
    pub objective: Option<String>,
    /// Round the radii of an optimised design to this step, e.g. 5m.
    #[arg(long, value_name = "LENGTH")]
    pub radius_step: Option<Length>,
    /// Line speed for cant and speed advice, e.g. 120km/h or 75mph (writes advice.csv; advisory only).
    #[arg(long, value_parser = speed_text, help_heading = "Cant and speed advice (advisory only)")]
    pub speed: Option<String>,
    /// Applied cant in the arcs, e.g. 100mm or 4in (writes advice.csv; advisory only).
    #[arg(long, value_parser = small_length, help_heading = "Cant and speed advice (advisory only)")]
    pub applied_cant: Option<f64>,
    /// Limit profile: uk or us-fra (default: us-fra when --speed is in mph, else uk).
    #[arg(
        long,
        value_name = "PROFILE",
        help_heading = "Cant and speed advice (advisory only)"
    )]
    pub limits: Option<String>,
    /// Largest applied cant, e.g. 150mm (replaces the profile's).
    #[arg(long, value_parser = small_length, help_heading = "Cant and speed advice (advisory only)")]
    pub cant_limit: Option<f64>,
    /// Largest cant deficiency, e.g. 110mm (replaces the profile's).
    #[arg(long, value_parser = small_length, help_heading = "Cant and speed advice (advisory only)")]
    pub deficiency_limit: Option<f64>,
    /// Largest rate of change of cant in a transition, e.g. 35mm/s (replaces the profile's).
    #[arg(long, value_parser = chordline::advice::parse_rate, help_heading = "Cant and speed advice (advisory only)")]
    pub cant_rate: Option<f64>,
    /// Largest rate of change of deficiency in a transition, e.g. 35mm/s (replaces the profile's).
    #[arg(long, value_parser = chordline::advice::parse_rate, help_heading = "Cant and speed advice (advisory only)")]
    pub deficiency_rate: Option<f64>,
    /// Largest cant gradient in a transition, e.g. 1:400 or 2.5mm/m (replaces the profile's).
    #[arg(long, value_parser = chordline::advice::parse_gradient, help_heading = "Cant and speed advice (advisory only)")]
    pub cant_gradient: Option<f64>,
}

impl RunArgs {
    /// The cant and speed advice asked for: `None` unless `--speed` or
    /// `--applied-cant` is given.
    pub fn advice(&self) -> Result<Option<AdviceOptions>, Failure> {
        let speed = match &self.speed {
            Some(t) => Some(
                chordline::advice::parse_speed(t)
                    .map_err(|e| Failure::Input(anyhow::anyhow!("--speed: {e}")))?,
            ),
            None => None,
        };
        if self.speed.is_none() && self.applied_cant.is_none() {
            let stray = self.limits.is_some()
                || self.cant_limit.is_some()
                || self.deficiency_limit.is_some()
                || self.cant_rate.is_some()
                || self.deficiency_rate.is_some()
                || self.cant_gradient.is_some();
            if stray {
                return Err(Failure::Input(anyhow::anyhow!(
                    "the cant and speed limits need --speed or --applied-cant (e.g. --speed 120km/h)"
                )));
            }
            return Ok(None);
        }
        let name = match &self.limits {
            Some(n) => n.trim().to_ascii_lowercase(),
            None if self
                .speed
                .as_deref()
                .is_some_and(|s| s.to_ascii_lowercase().contains("mph")) =>
            {
                "us-fra".into()
            }
            None => "uk".into(),
        };
        let mut profile = Profile::named(&name).ok_or_else(|| {
            Failure::Input(anyhow::anyhow!(
                "--limits '{name}' is not a known profile: use one of {} and set any limit with --cant-limit, --deficiency-limit, --cant-rate, --deficiency-rate, --cant-gradient",
                PROFILE_NAMES.join(", ")
            ))
        })?;
        if let Some(v) = self.cant_limit {
            profile.max_cant = Limit::user(v);
        }
        if let Some(v) = self.deficiency_limit {
            profile.max_deficiency = Limit::user(v);
        }
        if let Some(v) = self.cant_rate {
            profile.cant_rate = Some(Limit::user(v));
        }
        if let Some(v) = self.deficiency_rate {
            profile.deficiency_rate = Some(Limit::user(v));
        }
        if let Some(v) = self.cant_gradient {
            profile.cant_gradient = Some(Limit::user(v));
        }
        Ok(Some(AdviceOptions {
            profile,
            speed,
            applied_cant: self.applied_cant,
        }))
    }

    /// The pipeline options these arguments stand for.
    pub fn options(&self) -> Result<Options, Failure> {
        let mut setup = Setup::new(
            self.chord.metres(),
            self.rail.map_or(Rail::Left, Rail::from),
        );
        setup.behind = self.chord.behind();
        setup.gauge = self.gauge;
        setup.marking = self.marking.into();
        setup.reading_sd = self.reading_sd;
        let georef = self.georef_args()?;
        let start_bearing_deg = georef.start_bearing.unwrap_or(0.0);
        Ok(Options {
            setup,
            rail_stated: self.rail.is_some(),
            start_bearing_deg,
            georef,
            created: source_date_epoch(),
            slew: self.slew_options()?,
            advice: self.advice()?,
            command_line: recorded_command_line(),
            fit: (!self.no_fit).then(|| chordline::fit::FitOptions {
                reading_sd: self.reading_sd,
                threads: self.threads,
                keep_outliers: self.keep_outliers,
                ..Default::default()
            }),
        })
    }
}

impl RunArgs {
    /// The georeferencing options parsed, and the control file read: the
    /// pipeline's stages see values, never the words typed or a path to open.
    fn georef_args(&self) -> Result<GeorefArgs, GeorefError> {
        let crs = self
            .crs
            .as_deref()
            .map(str::parse::<Crs>)
            .transpose()
            .map_err(GeorefError::Crs)?;
        let start_bearing = self
            .start_bearing
            .as_deref()
            .map(parse_bearing)
            .transpose()?;
        let start = match (&self.start_lonlat, &self.start_grid) {
            (Some(_), Some(_)) => {
                return Err(GeorefError::Options(
                    "give the start point once: --start-lonlat (WGS 84) or --start-grid (with --crs), not both".into(),
                ));
            }
            (Some(t), None) => Some(StartPoint::LonLat(t.parse::<LonLat>()?)),
            (None, Some(t)) => {
                let (easting, northing) = parse_grid_point(t)?;
                Some(StartPoint::Grid { easting, northing })
            }
            (None, None) => None,
        };
        let control = self.control.as_deref().map(ControlFile::read).transpose()?;
        Ok(GeorefArgs {
            start,
            start_bearing,
            crs,
            control,
            height: self.height,
            allow_outside_area: self.allow_outside_area,
        })
    }

    /// The realignment asked for (`None` without any slew option). Chainages
    /// stay in the survey's chainage unit; the pipeline converts them.
    fn slew_options(&self) -> Result<Option<chordline::realign::SlewOptions>, Failure> {
        let wanted = self.slews
            || !self.fixed.is_empty()
            || self.max_slew.is_some()
            || self.fixed_tolerance.is_some()
            || !self.limits_range.is_empty()
            || self.section.is_some()
            || self.versine_tolerance.is_some()
            || self.design.is_some();
        if !wanted {
            return Ok(None);
        }
        let input = |e: String| Failure::Input(anyhow::anyhow!(e));
        let ranges = self
            .limits_range
            .iter()
            .map(|t| parse_range_limit(t).map_err(|e| input(format!("--limit {t}: {e}"))))
            .collect::<Result<Vec<_>, _>>()?;
        let section = match &self.section {
            Some(t) => Some(parse_section(t).map_err(|e| input(format!("--section {t}: {e}")))?),
            None => None,
        };
        Ok(Some(chordline::realign::SlewOptions {
            fixed: self.fixed.iter().map(|c| c.value).collect(),
            fixed_tolerance: self.fixed_tolerance.unwrap_or(0.0),
            max_slew: self.max_slew,
            ranges,
            section,
            versine_tolerance: self.versine_tolerance,
            design: self.design_choice()?,
        }))
    }

    /// The design of `--design`, `--objective`, `--radius-step`.
    fn design_choice(&self) -> Result<chordline::realign::DesignChoice, Failure> {
        use chordline::realign::{DesignChoice, Objective};
        let input = |e: String| Failure::Input(anyhow::anyhow!(e));
        let optimised = self.design.as_deref() == Some("optimised");
        if !optimised && (self.objective.is_some() || self.radius_step.is_some()) {
            return Err(input(
                "--objective and --radius-step apply to --design optimised".into(),
            ));
        }
        Ok(match self.design.as_deref() {
            None | Some("fitted") => DesignChoice::Fitted,
            Some("optimised") => DesignChoice::Optimised {
                objective: match self.objective.as_deref() {
                    Some("largest") => Objective::Largest,
                    _ => Objective::SumOfSquares,
                },
                radius_step: self.radius_step.map(|l| l.metres()),
            },
            Some(path) => {
                let text = std::fs::read_to_string(path).map_err(|e| {
                    input(format!(
                        "--design {path}: cannot read it ({e}); give fitted, optimised or an elements.csv"
                    ))
                })?;
                let els = chordline::realign::parse_elements_csv(&text, path)
                    .map_err(|e| input(e.to_string()))?;
                DesignChoice::Elements(els)
            }
        })
    }
}

/// Two numbers `FROM,TO` (survey chainage unit), FROM before TO.
fn parse_section(t: &str) -> Result<(f64, f64), String> {
    let parts: Vec<&str> = t.split(',').map(str::trim).collect();
    let [a, b] = parts.as_slice() else {
        return Err("give two survey chainages, FROM,TO, e.g. 12400,12900".into());
    };
    let num = |x: &str| {
        x.parse::<f64>()
            .ok()
            .filter(|v| v.is_finite())
            .ok_or_else(|| format!("'{x}' is not a chainage (a number in the survey's unit)"))
    };
    let (a, b) = (num(a)?, num(b)?);
    if a >= b {
        return Err(format!("FROM ({a}) must come before TO ({b})"));
    }
    Ok((a, b))
}

/// `FROM,TO,DIRECTION,LARGEST` → a range limit (chainages in the survey's
/// unit, LARGEST a length with unit).
fn parse_range_limit(t: &str) -> Result<chordline::realign::RangeLimit, String> {
    let parts: Vec<&str> = t.split(',').map(str::trim).collect();
    let [a, b, dir, max] = parts.as_slice() else {
        return Err("give FROM,TO,DIRECTION,LARGEST, e.g. 12600,12700,in,20mm".into());
    };
    let (from, to) = parse_section(&format!("{a},{b}"))?;
    let toward = chordline::realign::parse_toward(dir)
        .ok_or_else(|| format!("direction '{dir}' is not one of left, right, in, out"))?;
    let max = small_length(max)?;
    if max < 0.0 {
        return Err(format!("LARGEST '{max}' must be 0 or more"));
    }
    Ok(chordline::realign::RangeLimit {
        from,
        to,
        toward,
        max,
    })
}

fn range_limit_text(s: &str) -> Result<String, String> {
    parse_range_limit(s).map(|_| s.to_string())
}

fn section_text(s: &str) -> Result<String, String> {
    parse_section(s).map(|_| s.to_string())
}

/// How much summary `run` prints.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum SummaryLength {
    /// Everything: set-up, noise, plan, the element table and statistics.
    Full,
    /// A few lines: extent, elements counted, sharpest arc, residuals, end.
    Short,
}

/// The command line for the report, without the options that do not change
/// the results (output folder, threads, batch jobs, --force, --quiet,
/// --summary), so that the same input and options give the same report.
fn recorded_command_line() -> Vec<String> {
    const WITH_VALUE: [&str; 4] = ["--out", "--threads", "--jobs", "--summary"];
    const FLAGS: [&str; 3] = ["--force", "--quiet", "-q"];
    let mut out = vec!["chordline".to_string()];
    let mut args = std::env::args_os()
        .skip(1)
        .map(|a| a.to_string_lossy().into_owned());
    while let Some(a) = args.next() {
        if WITH_VALUE.contains(&a.as_str()) {
            args.next();
        } else if !(FLAGS.contains(&a.as_str())
            || WITH_VALUE.iter().any(|w| a.starts_with(&format!("{w}="))))
        {
            out.push(a);
        }
    }
    out
}

/// Parse `--height`: metres, or a length with its unit; may be negative.
fn height(s: &str) -> Result<f64, String> {
    signed_length(s, false)
}

/// Put `--fixed` chainages written with a unit into the survey's chainage
/// unit `unit` (those without one are in it already).
pub fn fixed_in_unit(fixed: &[ChainageArg], unit: LengthUnit) -> Vec<f64> {
    fixed
        .iter()
        .map(|c| match c.unit {
            Some(u) if u != unit => unit.from_m(u.to_m(c.value)),
            _ => c.value,
        })
        .collect()
}

/// Check a `--speed` value and keep its text (the unit chooses the default profile).
fn speed_text(s: &str) -> Result<String, String> {
    chordline::advice::parse_speed(s).map(|_| s.to_string())
}

/// Run `chordline run`.
pub fn run(c: RunCommand) -> Result<(), Failure> {
    let a = &c.args;
    refuse_stdout_folder(&a.out)?;
    let mut opts = a.options()?;
    if a.fixed.iter().any(|f| f.unit.is_some()) {
        let unit = survey_unit(&c.survey, &opts)?;
        if let Some(s) = &mut opts.slew {
            s.fixed = fixed_in_unit(&a.fixed, unit);
        }
    }
    let threads = super::util::thread_pool(a.threads);
    if let Some(f) = &mut opts.fit {
        f.threads = Some(threads);
    }
    // On a thread of the pool, so that the run and its parallel parts use
    // exactly `threads` threads (the calling thread only waits).
    let outcome = rayon::scope(|_| execute(&c.survey, &opts, &a.out, a.force))?;
    match a.summary {
        SummaryLength::Full => print_outcome(&outcome, a.quiet),
        SummaryLength::Short => print_short(&outcome, a.quiet),
    }
    Ok(())
}

/// `--out -`: an output folder cannot go to standard output.
pub fn refuse_stdout_folder(out: &Path) -> Result<(), Failure> {
    if out == Path::new("-") {
        return Err(Failure::Input(anyhow::anyhow!(
            "--out names a folder, and a folder of several files cannot go to standard output (-); give a folder name, e.g. --out results (the summary is printed to standard output anyway)"
        )));
    }
    Ok(())
}

/// The chainage unit of the survey file (read once more, to convert
/// `--fixed` values written with a unit). A file that cannot be read is
/// left for the run to report.
fn survey_unit(survey: &Path, opts: &Options) -> Result<LengthUnit, Failure> {
    if survey == Path::new("-") {
        return Err(Failure::Input(anyhow::anyhow!(
            "with the survey on standard input, write the --fixed chainages without a unit (in the survey's chainage unit)"
        )));
    }
    let ropts = chordline::survey::read::ReadOptions {
        rail: opts.rail_stated.then_some(opts.setup.rail),
        chord: opts.setup.chord,
        behind: opts.setup.behind,
        marking: opts.setup.marking,
    };
    Ok(chordline::survey::read::read_survey_file(survey, &ropts)
        .map_or(LengthUnit::Metre, |(s, _)| s.chainage_unit))
}

/// Run the pipeline, mapping its error to an exit class.
pub fn execute(survey: &Path, opts: &Options, out: &Path, force: bool) -> Result<Outcome, Failure> {
    let outcome = pipeline::run(survey, opts, out, force).map_err(|e| {
        if e.is_internal() {
            Failure::Internal(e.into())
        } else {
            Failure::Input(e.into())
        }
    })?;
    // A profile for developers (DEVELOPERS.md, "Profiling"): stage times on stderr.
    if std::env::var_os("CHORDLINE_STAGE_TIMES").is_some_and(|v| !v.is_empty() && v != "0") {
        eprint!("{}", outcome.results.stage_times.lines());
    }
    Ok(outcome)
}

/// Print the warnings to standard error, and the results (the summary, the
/// slews and advice lines, where it wrote) to standard output, so that
/// `> summary.txt` keeps the results and the terminal still shows warnings.
pub fn print_outcome(o: &Outcome, quiet: bool) {
    if !quiet {
        print_diagnostics(&o.results.diagnostics, " (report.html lists them all)");
    }
    let mut text = chordline::report::summary(&o.results);
    if let Some(s) = &o.results.slews {
        text.push_str(&chordline::realign::summary_line(
            s,
            o.results.survey.chainage_unit,
        ));
        text.push('\n');
    }
    if let Some(a) = &o.results.advice {
        text.push_str(&chordline::report::advice_text(
            a,
            o.results.survey.chainage_unit,
        ));
    }
    print_results(text, o);
}

/// Add where the files went to a summary `text` and print it on stdout.
fn print_results(mut text: String, o: &Outcome) {
    text.push_str(&format!(
        "wrote    {} in {}\n",
        o.files.join(", "),
        o.folder.display()
    ));
    let mut out = std::io::stdout().lock();
    // A closed pipe (e.g. `| head`) is not a failure of the run: the
    // results are already in the folder.
    let _ = out.write_all(text.as_bytes()).and_then(|()| out.flush());
}

/// Most diagnostics printed on the terminal; the rest are counted.
const MAX_PRINTED: usize = 200;

/// Print diagnostics to standard error, at most [`MAX_PRINTED`] of them.
/// `rest` says where the others can be read.
pub fn print_diagnostics(diags: &[Diagnostic], rest: &str) {
    let mut err = std::io::stderr().lock();
    for d in diags.iter().take(MAX_PRINTED) {
        let _ = writeln!(err, "{}", fmt_diag(d));
    }
    if diags.len() > MAX_PRINTED {
        let _ = writeln!(
            err,
            "... and {} more warnings and notes, not printed{rest}",
            diags.len() - MAX_PRINTED
        );
    }
}

/// Print the warnings (stderr) and the short summary (`--summary short`, stdout).
pub fn print_short(o: &Outcome, quiet: bool) {
    if !quiet {
        print_diagnostics(&o.results.diagnostics, " (report.html lists them all)");
    }
    print_results(chordline::report::summary_short(&o.results), o);
}

fn fmt_diag(d: &Diagnostic) -> String {
    d.to_string()
}

/// `SOURCE_DATE_EPOCH` (the reproducible-builds convention) as the run's time
/// stamp, when it is set to whole seconds.
fn source_date_epoch() -> Option<(std::time::SystemTime, String)> {
    let secs = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<u64>().ok())?;
    let t = std::time::UNIX_EPOCH + std::time::Duration::from_secs(secs);
    Some((t, "SOURCE_DATE_EPOCH".to_string()))
}
