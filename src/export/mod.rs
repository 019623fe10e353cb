//! Writing results: the only serialisation layer. Every writer takes `impl Write`.

pub mod stations;
