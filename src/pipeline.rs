//! The whole job, stage after stage: read the survey, integrate, fit, place,
//! and write the output folder.
//!
//! [`process`] is the pure part (no file system): a [`Survey`] in, every
//! result out. [`run`] adds the edges: it reads the survey file and writes the
//! output folder through [`OutputDir`], so that nothing is half-written and an
//! earlier folder survives a failed run.

use crate::diag::Diagnostic;
use crate::export::elements::{ElementPlacement, write_elements_csv_placed};
use crate::export::geojson::{ElementProps, GeoJsonInput, build_layers, write_layer};
use crate::export::landxml::{LandXmlError, LandXmlFrame, LandXmlOptions, write_landxml};
use crate::export::output_dir::{OutputDir, OutputError};
use crate::export::stations::{
    DesignColumns, GeoAtStation, GridCoords, StationExtras, write_stations_with,
};
use crate::fit::{FitOptions, FitResult, fit};
use crate::geometry::{Pose, bearing_to_heading};
use crate::georef::{Georef, GeorefArgs, GeorefError, leave_one_out, prepare};
use crate::integrate::{IntegrateError, IntegrateOptions, Plan, integrate};
pub use crate::results::{Results, StageTimes};
use crate::survey::read::{ReadOptions, SurveyError, read_survey_bytes, read_survey_source};
use crate::survey::{Rail, Setup, Survey};
use std::path::{Path, PathBuf};
use std::time::Instant;

/// Everything a run needs besides the survey itself.
#[derive(Debug, Clone, PartialEq)]
pub struct Options {
    /// Chord, gauge, marking, reading noise. `setup.rail` is the rail used
    /// when the file has no `side` column.
    pub setup: Setup,
    /// Whether the rail was stated by the user (`--rail`); the reader then
    /// checks it against a `side` column.
    pub rail_stated: bool,
    /// Bearing of the track at the first station, degrees clockwise from north.
    pub start_bearing_deg: f64,
    /// Options of the element fit; `None` skips the fit.
    pub fit: Option<FitOptions>,
    /// Placing the survey on the Earth: start point and bearing, or control
    /// points (all empty: a local frame, oriented by `start_bearing_deg`).
    pub georef: GeorefArgs,
    /// Time stamp written into LandXML (its schema requires one). `None`:
    /// the survey file's modification time, so that the same input gives the
    /// same bytes.
    pub created: Option<(std::time::SystemTime, String)>,
    /// Slews onto the fitted design (`None`: not computed). The fixed
    /// chainages are in the survey's chainage unit (as written in the file).
    pub slew: Option<crate::realign::SlewOptions>,
    /// Cant and speed advice on the fitted curves (`None`: none; advisory
    /// only, see [`crate::advice`]). Written as `advice.csv`.
    pub advice: Option<crate::advice::AdviceOptions>,
    /// The command that asked for the run, as words, for the report (empty:
    /// not recorded). Leave out what does not change the results (the output
    /// folder, threads) so that the same input gives the same report.
    pub command_line: Vec<String>,
}

impl Options {
    /// Options for a chord of `chord` metres read on `rail`.
    pub fn new(chord: f64, rail: Rail) -> Self {
        Options {
            setup: Setup::new(chord, rail),
            rail_stated: true,
            start_bearing_deg: 0.0,
            fit: Some(FitOptions::default()),
            georef: GeorefArgs::default(),
            created: None,
            slew: None,
            advice: None,
            command_line: Vec::new(),
        }
    }
}

/// Why a run failed.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The survey file could not be read or is not a usable survey.
    #[error(transparent)]
    Survey(#[from] SurveyError),
    /// The integration could not run.
    #[error(transparent)]
    Integrate(#[from] IntegrateError),
    /// The georeferencing options or the control-point file are unusable.
    #[error(transparent)]
    Georef(#[from] GeorefError),
    /// The output folder could not be written.
    #[error(transparent)]
    Output(#[from] OutputError),
    /// The realignment asked for cannot be done (a constraint no slews meet,
    /// a fixed point or section outside the survey).
    #[error(transparent)]
    Slews(#[from] crate::realign::SlewError),
    /// An option does not fit the survey (e.g. a fixed point outside it).
    #[error("{0}")]
    Options(String),
    /// An error of the integration or the realignment, worded in feet and
    /// inches for a survey in feet (the stages word their figures in SI).
    #[error("{0}")]
    InSurveyUnits(String),
}

impl RunError {
    /// Whether this is a fault of the program or its environment rather than
    /// of the input or the options (exit code 2 rather than 1).
    pub fn is_internal(&self) -> bool {
        match self {
            RunError::Output(e) => e.is_internal(),
            RunError::Slews(e) => matches!(e, crate::realign::SlewError::Solver { .. }),
            RunError::Survey(_)
            | RunError::Integrate(_)
            | RunError::Georef(_)
            | RunError::Options(_)
            | RunError::InSurveyUnits(_) => false,
        }
    }

    /// This error as a survey in `unit` should show it: an input error of
    /// the integration or the realignment in feet and inches for a survey in
    /// feet; any other error as it is (the reader and the control-file
    /// reader already word theirs in their file's units).
    pub fn in_survey_units(self, unit: crate::units::LengthUnit) -> RunError {
        match self {
            RunError::Integrate(_) | RunError::Slews(_)
                if unit == crate::units::LengthUnit::Foot && !self.is_internal() =>
            {
                RunError::InSurveyUnits(crate::report::in_feet(&self.to_string()))
            }
            other => other,
        }
    }
}

/// Run every stage on a survey already in memory (no file system).
///
/// # Errors
/// [`RunError`] from the stage that failed.
pub fn process(survey: Survey, opts: &Options) -> Result<Results, RunError> {
    let mut times = StageTimes::default();
    let mut clock = Instant::now();
    let mut lap = |times: &mut StageTimes, stage| {
        times.push(stage, clock.elapsed().as_secs_f64());
        clock = Instant::now();
    };
    let mut setup = opts.setup.clone();
    if let Some(r) = survey.readings.first()
        && (!opts.rail_stated || survey.has_side_column)
    {
        setup.rail = r.rail;
    }
    if let Some(s) = &opts.slew {
        check_fixed(&survey, &s.fixed)?;
    }
    let (georef, mut diagnostics) = prepare(&opts.georef, &survey)?;
    let iopts = match &georef {
        Some(g) => IntegrateOptions {
            start: g.start,
            position_obs: g.position_obs.clone(),
        },
        None => IntegrateOptions {
            start: Pose {
                x: 0.0,
                y: 0.0,
                heading: bearing_to_heading(opts.start_bearing_deg),
            },
            position_obs: Vec::new(),
        },
    };
    let (mut plan, mut d) = integrate(&survey, &setup, &iopts)?;
    lap(&mut times, "integrate");
    if !iopts.position_obs.is_empty() {
        // The control-point verdicts come from `assess` below, which singles
        // out the culprit; the integrator's per-point warnings would blame all.
        d.retain(|x| !(x.location.is_none() && x.message.starts_with("control point '")));
    }
    diagnostics.append(&mut d);
    let control_checks = match &georef {
        Some(g) => judge_controls(g, &survey, &setup, &iopts, &plan, &mut diagnostics)?,
        None => Vec::new(),
    };
    let (mut fitted, mut design, mut slews) = (None, None, None);
    if let Some(fopts) = &opts.fit {
        // One reading-noise figure: the plan's, which the fit reads from it.
        let fitted_now = fit(&plan, fopts);
        lap(&mut times, "fit");
        match fitted_now {
            Ok((f, mut d)) => {
                diagnostics.append(&mut d);
                if f.outliers.iter().any(|o| o.excluded) {
                    plan = bridge_outliers(&survey, &setup, &iopts, &f, plan, &mut diagnostics)?;
                    lap(&mut times, "integrate, bridged");
                }
                let ctx = Stage {
                    survey: &survey,
                    setup: &setup,
                    opts,
                    fit: &f,
                    plan: &plan,
                    controls: &iopts.position_obs,
                };
                let (placed, s) = place_and_realign(&ctx, &mut diagnostics)?;
                diagnostics.extend(crate::place::notes(&placed));
                lap(&mut times, "place");
                let xy = placed.station_xy(&f);
                let versine = placed.design_versines(&f, &plan, &setup);
                lap(&mut times, "design at stations");
                design = Some((placed.alignment, xy, versine));
                slews = s;
                fitted = Some(f);
            }
            // The plan is still useful without elements: say why they are missing.
            Err(e) => diagnostics.push(
                Diagnostic::warning(format!("no element fit: {e}"))
                    .hint("stations.csv is written; elements.csv is not"),
            ),
        }
    }
    if slews.is_none() && !slews_onto_placed(opts) {
        slews = realign_stage(&survey, &setup, opts, fitted.as_ref(), &mut diagnostics)?;
    }
    if slews.is_some() {
        lap(&mut times, "slews");
    }
    let advice = match (&opts.advice, &fitted) {
        (Some(a), Some(f)) => Some(crate::advice::advise(f, a)),
        (Some(_), None) => {
            diagnostics.push(
                Diagnostic::warning("no cant and speed advice: there is no element fit")
                    .hint("advice.csv is written only with fitted elements"),
            );
            None
        }
        _ => None,
    };
    Ok(Results {
        advice,
        slews,
        survey,
        setup,
        plan,
        fit: fitted,
        design,
        georef,
        control_checks,
        diagnostics,
        stage_times: times,
    })
}

/// The verdict on each control point: its residual and, where affordable,
/// the leave-one-out check of it.
fn judge_controls(
    g: &Georef,
    survey: &Survey,
    setup: &Setup,
    iopts: &IntegrateOptions,
    plan: &Plan,
    diagnostics: &mut Vec<Diagnostic>,
) -> Result<Vec<crate::georef::ControlCheck>, RunError> {
    // Leave-one-out costs one integration per point: skip it on long routes.
    let affordable = iopts.position_obs.len() * survey.readings.len() <= 2_000_000;
    if !affordable {
        diagnostics.push(Diagnostic::note(format!(
            "the leave-one-out check of the {} control points was skipped on this long survey; their residuals are still reported",
            iopts.position_obs.len()
        )));
    }
    let obs_for_loo: &[_] = if affordable { &iopts.position_obs } else { &[] };
    let loo = leave_one_out(obs_for_loo, |obs| {
        let o = IntegrateOptions {
            start: iopts.start,
            position_obs: obs.to_vec(),
        };
        integrate(survey, setup, &o).map(|(p, _)| p)
    })?;
    let (checks, mut d) = g.assess(&plan.position_residuals, &loo);
    diagnostics.append(&mut d);
    Ok(checks)
}

/// What the placement and the realignment of a fitted design work on.
struct Stage<'a> {
    survey: &'a Survey,
    setup: &'a Setup,
    opts: &'a Options,
    fit: &'a FitResult,
    plan: &'a Plan,
    controls: &'a [crate::integrate::PositionObs],
}

/// Whether the slews asked for are onto the fitted design, which is then
/// the placed one ([`crate::realign::slews_onto_placed`]); slews onto the
/// engineer's or an optimised design stay in versine space.
fn slews_onto_placed(opts: &Options) -> bool {
    opts.slew
        .as_ref()
        .is_some_and(|s| s.design == crate::realign::DesignChoice::Fitted)
}

/// The placed design and, with slews onto it, the slews: one design for
/// both (the realignment places it with its holds). A realignment that
/// cannot be done as asked ends the run; one the data cannot support leaves
/// the slews out with a warning and the design placed without holds.
fn place_and_realign(
    c: &Stage,
    diagnostics: &mut Vec<Diagnostic>,
) -> Result<(crate::place::PlacedDesign, Option<crate::realign::Slews>), RunError> {
    let place = || crate::place::place_design(c.fit, c.plan, c.controls);
    let Some(sopts) = c.opts.slew.as_ref().filter(|_| slews_onto_placed(c.opts)) else {
        return Ok((place(), None));
    };
    let sopts = sopts.in_metres(c.survey.chainage_unit.metres());
    match crate::realign::slews_onto_placed(c.survey, c.setup, c.fit, c.plan, c.controls, &sopts) {
        Ok((s, placed, mut d)) => {
            diagnostics.append(&mut d);
            Ok((placed, Some(s)))
        }
        Err(why @ crate::realign::SlewError::Infeasible { .. }) => {
            // The element chain cannot meet the limits: the versine-space
            // solve, whose design may change reading by reading, may.
            let placed = place();
            let s = realign_stage(c.survey, c.setup, c.opts, Some(c.fit), diagnostics)?;
            if let Some(s) = &s {
                diagnostics.push(versine_space_note(s, &placed, c, &why));
            }
            Ok((placed, s))
        }
        Err(e) => {
            leave_slews_out(e, diagnostics)?;
            Ok((place(), None))
        }
    }
}

/// A realignment that failed: the error itself when it cannot be done as
/// asked (a request the data cannot meet, or a solver fault), else a warning
/// that the slews are left out and the run goes on.
fn leave_slews_out(
    e: crate::realign::SlewError,
    diagnostics: &mut Vec<Diagnostic>,
) -> Result<(), RunError> {
    if e.is_request() || matches!(e, crate::realign::SlewError::Solver { .. }) {
        return Err(e.into());
    }
    diagnostics.push(
        Diagnostic::warning(format!("no slews: {e}"))
            .hint("stations.csv is written without the slew columns"),
    );
    Ok(())
}

/// The note of slews solved in versine space because the placed design
/// cannot meet the limits: why, and how far they are from the distances to
/// the written design.
fn versine_space_note(
    s: &crate::realign::Slews,
    placed: &crate::place::PlacedDesign,
    c: &Stage,
    why: &crate::realign::SlewError,
) -> Diagnostic {
    let gap = s
        .slew
        .iter()
        .zip(&c.plan.stations[s.first..])
        .map(|(v, st)| (v - placed.slew_at(c.fit, st)).abs())
        .fold(0.0, f64::max);
    Diagnostic::warning(format!(
        "the placed design (the one written with coordinates) cannot meet the slew limits ({why}); the slews are onto the fitted design changed reading by reading in versine space, and differ from the sideways distances to the written design by up to {:.1} mm",
        gap * 1e3
    ))
    .hint("the slews hold; the coordinates, alignment.xml and alignment.ifc are not the design they move the track onto")
}

/// Slews onto the design asked for (`None` without `opts.slew` or a fit).
/// A realignment that cannot be done as asked ends the run; one the data
/// cannot support leaves the slews out with a warning.
fn realign_stage(
    survey: &Survey,
    setup: &Setup,
    opts: &Options,
    fitted: Option<&crate::fit::FitResult>,
    diagnostics: &mut Vec<Diagnostic>,
) -> Result<Option<crate::realign::Slews>, RunError> {
    let (Some(sopts), Some(f)) = (&opts.slew, fitted) else {
        return Ok(None);
    };
    let sopts = sopts.in_metres(survey.chainage_unit.metres());
    match crate::realign::slews_for_fit(survey, setup, f, &sopts) {
        Ok((s, mut d)) => {
            diagnostics.append(&mut d);
            Ok(Some(s))
        }
        Err(e) => {
            leave_slews_out(e, diagnostics)?;
            Ok(None)
        }
    }
}

/// Refuse fixed points (in the survey's chainage unit) that are not finite
/// or lie outside the survey: their slews would be silently dropped.
fn check_fixed(survey: &Survey, fixed: &[f64]) -> Result<(), RunError> {
    let unit = survey.chainage_unit;
    let (Some(first), Some(last)) = (survey.readings.first(), survey.readings.last()) else {
        return Ok(());
    };
    let (a, b) = (unit.from_m(first.chainage), unit.from_m(last.chainage));
    for &c in fixed {
        if !(c.is_finite() && c >= a && c <= b) {
            return Err(RunError::Options(format!(
                "--fixed {c}: the chainage is outside the survey, which runs from {a} to {b} {u}; give fixed points within the survey (in its chainage unit, or with m or ft)",
                u = unit.suffix()
            )));
        }
    }
    Ok(())
}

/// Integrate again with the readings the fit set aside as blunders treated
/// as missing: the plan bridges them with the larger uncertainty a gap has.
fn bridge_outliers(
    survey: &Survey,
    setup: &Setup,
    iopts: &IntegrateOptions,
    f: &FitResult,
    plan: Plan,
    diagnostics: &mut Vec<Diagnostic>,
) -> Result<Plan, RunError> {
    let mut cleaned = survey.clone();
    for o in f.outliers.iter().filter(|o| o.excluded) {
        cleaned.readings[o.index].versine = None;
    }
    let mut s2 = setup.clone();
    // Keep the one reading-noise figure already decided.
    s2.reading_sd = Some(plan.reading_sd);
    let (mut bridged, _) = integrate(&cleaned, &s2, iopts)?;
    bridged.noise_source = plan.noise_source;
    for (st, orig) in bridged.stations.iter_mut().zip(&plan.stations) {
        st.versine = orig.versine;
    }
    let end = |p: &Plan| p.stations.last().map_or(0.0, |s| s.position_sd);
    diagnostics.push(Diagnostic::note(format!(
        "the plan bridges the {} reading{} set aside as blunders like missing readings (position sd at the end {:.3} m instead of {:.3} m)",
        f.outliers.iter().filter(|o| o.excluded).count(),
        if f.outliers.iter().filter(|o| o.excluded).count() == 1 { "" } else { "s" },
        end(&bridged),
        end(&plan)
    )));
    Ok(bridged)
}

/// What [`run`] produced.
#[derive(Debug)]
pub struct Outcome {
    /// The results, for a summary.
    pub results: Results,
    /// The output folder, now in place.
    pub folder: PathBuf,
    /// Names of the files in it.
    pub files: Vec<String>,
}

/// Read `survey_path`, run every stage and write the output folder `out`.
///
/// Warnings from reading come first in the diagnostics. Nothing is written
/// unless every stage succeeded; an existing `out` is replaced only with `force`.
///
/// # Errors
/// [`RunError`] from the stage that failed; the earlier folder, if any, is intact.
pub fn run(
    survey_path: &Path,
    opts: &Options,
    out: &Path,
    force: bool,
) -> Result<Outcome, RunError> {
    // Refuse an unusable output folder before doing any work.
    let mut inputs = vec![survey_path];
    inputs.extend(opts.georef.control.as_ref().and_then(|c| c.path.as_deref()));
    let mut dir = OutputDir::create_for_inputs(out, force, &inputs)?;
    let clock = Instant::now();
    let ropts = ReadOptions {
        rail: opts.rail_stated.then_some(opts.setup.rail),
        chord: opts.setup.chord,
        behind: opts.setup.behind,
        marking: opts.setup.marking,
    };
    let (name, bytes) = read_survey_source(survey_path)?;
    let (survey, mut diags) = read_survey_bytes(&name, &bytes, &ropts)?;
    let (created, created_basis) = match &opts.created {
        Some((t, basis)) => (*t, basis.clone()),
        None => stamp(survey_path),
    };
    let record = crate::report::RunRecord {
        command_line: opts.command_line.clone(),
        header_comments: crate::report::header_comments(&String::from_utf8_lossy(&bytes)),
        date: Some((created, created_basis)),
    };
    // The file's text is not needed again: free it before the stages.
    drop(bytes);
    let mut read_time = StageTimes::default();
    read_time.push("read", clock.elapsed().as_secs_f64());
    let unit = survey.chainage_unit;
    let mut results = process(survey, opts).map_err(|e| e.in_survey_units(unit))?;
    read_time.stages.append(&mut results.stage_times.stages);
    results.stage_times = read_time;
    let mut clock = Instant::now();
    let mut lap = |results: &mut Results, stage| {
        results
            .stage_times
            .push(stage, clock.elapsed().as_secs_f64());
        clock = Instant::now();
    };
    // The stages word their figures in SI; the reader already in the file's units.
    crate::report::localise_diagnostics(&mut results.diagnostics, unit);
    diags.extend(dir.notes().iter().map(Diagnostic::note));
    diags.append(&mut results.diagnostics);
    results.diagnostics = diags;
    write_tables(&mut dir, &results)?;
    lap(&mut results, "write tables");
    // Written as it is drawn (a long survey's report is hundreds of MB).
    dir.write_file("report.html", |w| {
        crate::report::write_html_report(w, &results, &record)
    })?;
    lap(&mut results, "write report");
    let props: Vec<ElementProps> = results
        .fit
        .iter()
        .flat_map(|f| f.elements.iter().map(ElementProps::from_fitted))
        .collect();
    write_map_layers(&mut dir, &results, &props)?;
    if let Some((placed, ..)) = &results.design {
        let lopts = LandXmlOptions {
            name: survey_path
                .file_stem()
                .map_or("alignment".into(), |s| s.to_string_lossy().into_owned()),
            unit: results.survey.chainage_unit,
            created,
        };
        write_design_exchange(&mut dir, &results, placed, &props, &lopts)?;
    }
    lap(&mut results, "write map and exchange");
    let files = dir.files().to_vec();
    let folder = dir.commit()?;
    lap(&mut results, "commit folder");
    Ok(Outcome {
        results,
        folder,
        files,
    })
}

/// Longitude, latitude and true bearing at every station of a placed survey.
fn geo_columns(results: &Results) -> Option<Vec<GeoAtStation>> {
    let g = results.georef.as_ref()?;
    let at = |s: &crate::integrate::Station| {
        let (lon, lat) = g.lonlat(s.x, s.y);
        let pose = Pose {
            x: s.x,
            y: s.y,
            heading: s.heading,
        };
        GeoAtStation {
            lon,
            lat,
            true_bearing: g.true_bearing(pose),
        }
    };
    Some(results.plan.stations.iter().map(at).collect())
}

/// The tables: `stations.csv`, `elements.csv`, the slew sheet, `outliers.csv`
/// and `advice.csv`, each where its results exist.
fn write_tables(dir: &mut OutputDir, results: &Results) -> Result<(), RunError> {
    let unit = results.survey.chainage_unit;
    let geo = geo_columns(results);
    let slew_cols = results.slews.as_ref().map(|s| s.at_stations());
    let design = match (&results.fit, &results.design) {
        (Some(fit), Some((_, xy, versine))) => Some(DesignColumns::Fit { fit, xy, versine }),
        _ => None,
    };
    let grid = match &results.georef {
        Some(g) => GridCoords::of(g, &results.plan, design).map_err(GeorefError::from)?,
        None => None,
    };
    let extras = StationExtras {
        grid: grid.as_ref().map(GridCoords::columns),
        design,
        geo: geo.as_deref(),
        slews: slew_cols.as_deref(),
    };
    dir.write_file("stations.csv", |w| {
        write_stations_with(w, &results.plan, unit, &extras)
    })?;
    if let Some(f) = &results.fit {
        let placed = match &results.design {
            Some((al, ..)) => Some(
                ElementPlacement::of(al, results.georef.as_ref(), unit)
                    .map_err(GeorefError::from)?,
            ),
            None => None,
        };
        dir.write_file("elements.csv", |w| {
            write_elements_csv_placed(f, unit, placed.as_ref(), w)
        })?;
    }
    if let Some(s) = &results.slews {
        crate::export::slews::write_slew_files(dir, s, &results.survey)?;
    }
    if let Some(f) = results.fit.as_ref().filter(|f| !f.outliers.is_empty()) {
        let vunit = results.survey.versine_unit;
        dir.write_file("outliers.csv", |w| {
            crate::export::outliers::write_outliers_csv(w, &f.outliers, unit, vunit)
        })?;
    }
    if let Some(a) = &results.advice {
        dir.write_file("advice.csv", |w| {
            crate::export::advice::write_advice_csv(w, a, unit)
        })?;
    }
    Ok(())
}

/// The GeoJSON layers and `controls.csv` of a placed survey.
fn write_map_layers(
    dir: &mut OutputDir,
    results: &Results,
    props: &[ElementProps],
) -> Result<(), RunError> {
    let Some(g) = &results.georef else {
        return Ok(());
    };
    let input = GeoJsonInput {
        placement: &g.placement,
        stations: &results.plan.stations,
        design: results.design.as_ref().map(|(a, ..)| (a, props)),
        controls: g
            .controls
            .as_ref()
            .map(|c| (c, results.control_checks.as_slice())),
    };
    match build_layers(&input) {
        Ok(layers) => {
            for layer in &layers {
                dir.write_file(layer.file, |w| write_layer(w, layer))?;
            }
        }
        // Reported as a failure to write the first layer; nothing is committed.
        Err(e) => dir.write_file("alignment.geojson", |_| Err(e.into_io()))?,
    }
    if g.controls.is_some() {
        dir.write_file("controls.csv", |w| {
            crate::export::controls::write_checks_csv(w, &results.control_checks)
        })?;
    }
    Ok(())
}

/// `alignment.xml` (LandXML) and `alignment.ifc` of the placed design, in
/// the grid with `--crs`, else in the local frame.
fn write_design_exchange(
    dir: &mut OutputDir,
    results: &Results,
    placed: &crate::geometry::Alignment,
    props: &[ElementProps],
    lopts: &LandXmlOptions,
) -> Result<(), RunError> {
    let frame = match &results.georef {
        Some(Georef {
            placement,
            crs: Some(crs),
            ..
        }) => LandXmlFrame::Grid { placement, crs },
        Some(g) => LandXmlFrame::Local {
            placement: Some(&g.placement),
        },
        None => LandXmlFrame::Local { placement: None },
    };
    dir.write_file("alignment.xml", |w| {
        write_landxml(w, placed, props, frame, lopts).map_err(LandXmlError::into_io)
    })?;
    dir.write_file("alignment.ifc", |w| {
        let o = crate::export::ifc::IfcOptions::from(lopts);
        crate::export::ifc::write_ifc(w, placed, props, frame, &o)
            .map_err(crate::export::ifc::IfcError::into_io)
    })?;
    Ok(())
}

/// A reproducible time stamp for a run when the caller gives none: the
/// survey file's modification time, and where it comes from.
fn stamp(survey_path: &Path) -> (std::time::SystemTime, String) {
    let t = std::fs::metadata(survey_path)
        .and_then(|m| m.modified())
        .unwrap_or(std::time::UNIX_EPOCH);
    (t, "the survey file's modification time".to_string())
}
