//! The resampling engine: pure computation. It knows nothing of HTTP or JSON; its vocabulary
//! (statistics, methods, schemes, codes, bounded numbers) describes itself through serde and
//! utoipa derives ([`wire`]), from which the service derives its parser and its documents.
//! Those derives are descriptions, not transport, so they are not put behind a cargo feature:
//! a feature would double every attribute and still be always on.
//!
//! A job flows one way: a [`job::Job`] (plain, validated values) is checked and laid out by
//! [`driver::prepare`] (statistic bound to its [`data::Layout`], a [`scheme::Resampler`] per
//! sample, the work estimate of [`cost`]), then run: [`jackknife`] for BCa, [`plan`] (fixed,
//! auto, exact) drawing replicates through the [`executor`] (waves on the rayon pool, deadline,
//! cancel) and the [`kernel`] (one replicate), then [`summary`] (intervals, with [`montecarlo`]
//! errors), [`diagnostics`] and [`extras`].

pub mod cost;
pub mod data;
pub mod diagnostics;
pub mod distribution;
pub mod draw;
pub mod driver;
pub mod executor;
pub mod extras;
pub mod family;
pub mod interval;
pub mod jackknife;
pub mod job;
pub mod kernel;
pub mod montecarlo;
pub mod plan;
pub mod rng;
pub mod scheme;
pub mod statistic;
pub mod summary;
pub mod verdict;
pub mod wire;
