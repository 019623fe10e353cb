//! Writing results: the only serialisation layer. Every writer takes `impl Write`.

/// `elements.csv`: the fitted elements, and the terminal element table.
pub mod elements;
pub mod output_dir;
/// `stations.csv`: the plan at every station.
pub mod stations;
