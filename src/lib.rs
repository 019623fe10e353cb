//! # chordline
//!
//! Turn chord-offset (versine) readings taken along a railway track into the
//! track's as-built horizontal alignment.
//!
//! Pipeline, one module per stage (each stage depends only on earlier ones):
//!
//! 1. [`survey`]: the readings and the set-up they were taken with; reading survey files.
//! 2. [`integrate`]: versines → curvature, heading and plan coordinates, with standard deviations.
//! 3. [`fit`]: the element list (straights, clothoid transitions, arcs) by least squares.
//! 4. [`georef`]: putting the plan on the Earth; control points.
//! 5. [`export`]: writing CSV, GeoJSON and LandXML.
//! 6. [`realign`]: slews that would bring the track onto the fitted design (indicative).
//!
//! [`pipeline`] runs the stages in order (and [`report`] summarises a run).
//!
//! Supporting modules: [`units`] (the only place units other than SI appear),
//! [`geometry`] (exact evaluation of alignments), [`simulate`] (exact surveys of
//! a known design, the test bed for everything else), [`diag`] (warnings with
//! locations).
//!
//! The library does no terminal I/O; the `chordline` binary is a thin layer over it.
//!
//! # Example
//!
//! Read the bundled demo survey (a 20 m chord on the left rail), integrate it
//! into a plan, fit the elements and write `elements.csv`. The types are
//! re-exported at the root; each stage's function lives in its module
//! ([`pipeline::process`] runs them all):
//!
//! ```
//! use chordline::{
//!     FitOptions, IntegrateOptions, LengthUnit, Marking, Rail, ReadOptions, Setup, fit, integrate,
//!     read_survey_file, write_elements_csv,
//! };
//! use std::path::Path;
//!
//! # fn main() -> Result<(), Box<dyn std::error::Error>> {
//! let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/eastvale-survey.csv");
//! let read = ReadOptions { rail: Some(Rail::Left), chord: 20.0, behind: None, marking: Marking::Taped };
//! let (survey, _warnings) = read_survey_file(&path, &read)?;
//!
//! let setup = Setup::new(20.0, Rail::Left);
//! let (plan, _notes) = integrate::integrate(&survey, &setup, &IntegrateOptions::default())?;
//! let last = plan.stations.last().expect("a survey has stations");
//! println!("plan ends {:.1} m east, {:.1} m north of the start", last.x, last.y);
//!
//! let (elements, _notes) = fit::fit(&plan, &FitOptions::default())?;
//! assert!(elements.elements.len() >= 5, "straights, transitions and arcs");
//!
//! let mut csv = Vec::new();
//! write_elements_csv(&elements, LengthUnit::Metre, &mut csv)?;
//! assert!(String::from_utf8(csv)?.starts_with("element,kind,"));
//! # Ok(())
//! # }
//! ```

pub mod advice;
pub mod chord;
pub mod diag;
pub mod export;
pub mod fit;
pub mod geometry;
pub mod georef;
pub mod integrate;
pub mod numeric;
pub mod pipeline;
pub mod place;
pub mod realign;
pub mod report;
pub mod results;
pub mod simulate;
pub mod survey;
pub mod units;

pub use diag::{Diagnostic, Severity};
pub use export::elements::write_elements_csv;
pub use fit::{FitOptions, FitResult};
pub use geometry::{Alignment, Element, Pose};
pub use integrate::{IntegrateOptions, Plan};
pub use pipeline::Options;
pub use results::Results;
pub use survey::read::{ReadOptions, SurveyError, read_survey_bytes, read_survey_file};
pub use survey::{Arms, Marking, Rail, Setup, Survey};
pub use units::{ChordLength, Length, LengthUnit};
