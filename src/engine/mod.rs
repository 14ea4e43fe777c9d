//! The resampling engine: pure computation, with no knowledge of HTTP or JSON.

pub mod data;
pub mod diagnostics;
pub mod interval;
pub mod jackknife;
pub mod montecarlo;
pub mod rng;
pub mod run;
pub mod scheme;
pub mod statistic;
