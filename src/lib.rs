//! bandsaw: bootstrap intervals as a service.
//!
//! # Layout
//!
//! - [`engine`]: pure computation. [`engine::rng`] gives every replicate its own ChaCha
//!   stream; [`engine::data`] holds the validated sample forms; [`engine::statistic`] the
//!   catalogue; [`engine::scheme`] how resamples are drawn; [`engine::interval`] the five
//!   interval methods; [`engine::jackknife`] and [`engine::montecarlo`] the acceleration and
//!   the Monte Carlo errors; [`engine::run`] the parallel, deadline-aware driver.
//! - [`api`]: the HTTP layer (axum): request parsing that reports every invalid field at once
//!   as RFC 9457 problems, and the JSON response.
//! - [`token`]: the reproducibility token.
//! - [`server`]: startup (`Application::build`, which reports the bound address) and graceful
//!   shutdown; [`config`] the limits and flags; [`telemetry`] logs and Prometheus metrics.
//! - [`cli`]: the command line.

pub mod api;
pub mod cli;
pub mod config;
pub mod engine;
pub mod server;
pub mod telemetry;
