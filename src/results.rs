//! All results of a run as plain data, before anything is written.
//!
//! The type sits in its own module so that the stages that read it (the
//! report, the writers) and the stage that fills it ([`crate::pipeline`])
//! depend on it, not on each other.

use crate::diag::Diagnostic;
use crate::fit::FitResult;
use crate::fit::StationDesign;
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
    /// The design placed in the plan frame and its values at every station
    /// (with `fit`).
    pub design: Option<(crate::geometry::Alignment, Vec<StationDesign>)>,
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
}
