//! All results of a run as plain data, before anything is written.
//!
//! The type sits in its own module so that the stages that read it (the
//! report, the writers) and the stage that fills it ([`crate::pipeline`])
//! depend on it, not on each other.

use crate::diag::Diagnostic;
use crate::fit::FitResult;
use crate::georef::{ControlCheck, Georef};
use crate::integrate::Plan;
use crate::survey::{Setup, Survey};

/// All results of a run, before anything is written.
#[derive(Debug, Clone)]
pub struct Results {
    /// The survey as read.
    pub survey: Survey,
    /// The set-up used.
    pub setup: Setup,
    /// The reconstructed plan.
    pub plan: Plan,
    /// The element fit, when it ran and succeeded.
    pub fit: Option<FitResult>,
    /// The design placed in the plan frame, its centreline (easting,
    /// northing) abreast of every station and its versine at every station
    /// as the survey read the track (field convention, m); with `fit`, whose
    /// residuals [`Results::station_design`] moves onto this design.
    pub design: Option<PlacedColumns>,
    /// The placement on the Earth, when one was asked for.
    pub georef: Option<Georef>,
    /// The verdict on each control point (empty without control points).
    pub control_checks: Vec<ControlCheck>,
    /// Slews onto the fitted design, when asked for and the fit succeeded.
    pub slews: Option<crate::realign::Slews>,
    /// Cant and speed advice, when asked for and the fit succeeded (advisory only).
    pub advice: Option<crate::advice::Advice>,
    /// Warnings and notes of every stage, in stage order.
    pub diagnostics: Vec<Diagnostic>,
    /// Wall time and peak memory of each stage (a profile, not a result).
    pub stage_times: StageTimes,
}

impl Results {
    /// The design values at station `i` (the design columns of
    /// `stations.csv`), when there is a design and such a station.
    pub fn station_design(&self, i: usize) -> Option<crate::fit::StationDesign> {
        let (f, (_, xy, dv)) = (self.fit.as_ref()?, self.design.as_ref()?);
        let &(x, y) = xy.get(i)?;
        let d = *dv.get(i)?;
        Some(crate::fit::StationDesign {
            chainage: *f.chainages.get(i)?,
            design_versine: d,
            residual: placed_residual(*f.residual.get(i)?, d, *f.design_versine.get(i)?),
            x,
            y,
        })
    }
}

/// How long each stage of a run took, and the largest resident set of the
/// process when it ended: a profile of the run, not a result (it changes from
/// run to run; nothing written to the output folder depends on it). The
/// command line prints it with `CHORDLINE_STAGE_TIMES=1` (see DEVELOPERS.md).
#[derive(Debug, Clone, Default)]
pub struct StageTimes {
    /// In the order the stages ran: the stage, its wall time in seconds, and
    /// the process's peak resident set in bytes when it ended (where the
    /// system tells it).
    pub stages: Vec<(&'static str, f64, Option<u64>)>,
}

impl StageTimes {
    /// Record that `stage` ran for `seconds`.
    pub fn push(&mut self, stage: &'static str, seconds: f64) {
        self.stages.push((stage, seconds, peak_resident_bytes()));
    }

    /// One line per stage: name, seconds, peak resident set in MB so far.
    pub fn lines(&self) -> String {
        let mut s = String::new();
        for (name, secs, peak) in &self.stages {
            let peak = peak.map_or("-".to_string(), |b| format!("{:.0}", b as f64 / 1e6));
            s.push_str(&format!(
                "stage {name:<22} {secs:8.3} s   peak {peak:>6} MB\n"
            ));
        }
        s
    }
}

/// The process's peak resident set so far (`VmHWM` of `/proc/self/status`;
/// `None` where there is no such file).
fn peak_resident_bytes() -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

/// The placed design, its centreline (easting, northing) at each station and
/// its versine there (field convention, m).
pub type PlacedColumns = (crate::geometry::Alignment, Vec<(f64, f64)>, Vec<f64>);

/// A reading's residual about the placed design, from its residual about the
/// fitted elements (`residual`, the reading minus `fitted`) and the placed
/// design's versine `placed` there.
pub fn placed_residual(residual: Option<f64>, placed: f64, fitted: f64) -> Option<f64> {
    residual.map(|r| r - (placed - fitted))
}
