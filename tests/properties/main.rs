//! Property tests of the engine through the service's own job path (`api::interval::compute`,
//! in-process): random samples, statistics, methods and schemes, each property asserting only
//! what is exactly true (derived beside it). Every property runs from a fixed seed with a
//! modest number of cases, so the whole target takes seconds in release mode and never flakes.

mod common;
mod engine;
