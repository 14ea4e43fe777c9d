//! bandsaw: bootstrap intervals as a service.
//!
//! # Layout
//!
//! - [`engine`]: pure computation, which knows nothing of HTTP or JSON. [`engine::wire`] lets
//!   its vocabulary (statistics, methods, schemes, codes, bounded numbers) own its wire names,
//!   ranges and docs; [`engine::data`] the checked samples and their layouts;
//!   [`engine::statistic`] the catalogue, one registration per statistic; [`engine::scheme`] the
//!   resamplers; [`engine::interval`] the five interval methods; [`engine::job`] a job and its
//!   defaults; [`engine::driver`] prepares a job (every refusal) and runs it through
//!   [`engine::plan`], [`engine::executor`] and [`engine::kernel`] to [`engine::summary`],
//!   [`engine::diagnostics`] and [`engine::extras`]; [`engine::cost`] its work.
//! - [`api`]: the HTTP layer (axum): request types that are both the parser and the OpenAPI
//!   schema, every invalid field reported at once as an RFC 9457 problem, the responses, the
//!   catalogue, the replay token and the bounded compute pool.
//! - [`server`]: startup (`Application::build`, which reports the bound address) and graceful
//!   shutdown; [`config`] the limits and flags; [`telemetry`] logs and Prometheus metrics.
//! - [`cli`]: the command line; [`check`] and [`bench`] its larger commands.
//!
//! Dependencies point one way: `api` and `cli` use `engine` and `config`; `engine` uses nothing
//! else of the crate.

pub mod api;
pub mod bench;
pub mod check;
pub mod cli;
pub mod config;
pub mod engine;
pub mod server;
pub mod telemetry;
