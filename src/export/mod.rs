//! Writing results: the only serialisation layer. Every writer takes `impl Write`.

pub mod output_dir;
/// `stations.csv`: the plan at every station.
pub mod stations;
