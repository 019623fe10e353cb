//! Writing results: the only serialisation layer. Every writer takes `impl Write`.

/// `advice.csv`: cant and speed advice (advisory only).
pub mod advice;
/// `controls.csv`: the verdict on each control point.
pub mod controls;
/// `elements.csv`: the fitted elements.
pub mod elements;
/// `alignment.geojson`: the placed survey as RFC 7946 GeoJSON.
pub mod geojson;
/// `alignment.ifc`: the fitted elements as an IFC 4.3 alignment.
pub mod ifc;
/// `alignment.xml`: the fitted elements as LandXML 1.2.
pub mod landxml;
/// `outliers.csv`: readings the fit set aside as blunders.
pub mod outliers;
pub mod output_dir;
/// `slews.csv`: the slew sheet for site.
pub mod slews;
/// One file written whole or not at all.
pub mod staged_file;
/// `stations.csv`: the plan at every station.
pub mod stations;
