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

pub mod advice;
pub mod diag;
pub mod export;
pub mod fit;
pub mod geometry;
pub mod georef;
pub mod integrate;
pub mod pipeline;
pub mod realign;
pub mod report;
pub mod results;
pub mod simulate;
pub mod survey;
pub mod units;
