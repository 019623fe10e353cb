//! Writing results: the only serialisation layer. Every writer takes `impl Write`.

/// `stations.csv`: the plan at every station.
pub mod stations;
