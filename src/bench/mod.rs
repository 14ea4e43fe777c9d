//! `bandsaw bench`: what this machine can do, for capacity planning. It times real engine jobs
//! in-process and prints four things:
//!
//! 1. the ceiling: how many bounded draws per second one thread takes from the generator
//!    ([`crate::engine::draw::rows`] over ChaCha8 replicate streams, with nothing done with
//!    the rows), the rate no row-drawing kernel can beat;
//! 2. each kernel on one thread: row-draws per second and that rate as a share of the ceiling
//!    (for the order statistics, which draw no rows, resamples per second);
//! 3. scaling: the same job on 1, 2, 4, … threads up to all logical CPUs, as speed-ups;
//! 4. capacity: for common jobs, the most resamples that fit in one second on all threads,
//!    extrapolated from timed runs.
//!
//! Nothing here asserts a speed: the numbers describe the machine they were taken on.
//! `--format json` gives the same numbers for scripts.

pub mod jobs;
pub mod measure;
pub mod report;

use clap::{Args, ValueEnum};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::config::Threads;

/// Seed of the benchmark's data, so that every run times the same values.
pub const DATA_SEED: u64 = 12345;

/// `n` standard normal values by the Box–Muller transform (Box, G. E. P. & Muller, M. E.
/// (1958), Ann. Math. Statist. 29(2)) over a ChaCha8 stream seeded with `seed`, both values
/// of each pair used. Benchmarks time the engine on these; they are not the engine's streams.
pub fn standard_normal(n: usize, seed: u64) -> Vec<f64> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut out = Vec::with_capacity(n + 1);
    while out.len() < n {
        // u1 in (0, 1] so that ln(u1) is finite; u2 in [0, 1).
        let u1: f64 = 1.0 - rng.random::<f64>();
        let u2: f64 = rng.random::<f64>();
        let r = (-2.0 * u1.ln()).sqrt();
        let theta = std::f64::consts::TAU * u2;
        out.push(r * theta.cos());
        out.push(r * theta.sin());
    }
    out.truncate(n);
    out
}

/// The report's form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// Tables for a person.
    Text,
    /// The same numbers as one JSON document, for scripts.
    Json,
}

/// The flags of `bandsaw bench`.
#[derive(Debug, Clone, Args)]
pub struct BenchArgs {
    /// A much shorter run (for tests and CI): the same jobs, timed for a few milliseconds each,
    /// so the numbers are rougher.
    #[arg(long)]
    pub quick: bool,
    /// Target time of each measurement, in seconds (ignored with --quick).
    #[arg(long, default_value_t = 0.5, value_parser = positive_seconds)]
    pub seconds: f64,
    /// The most threads to measure on (0: one per logical CPU); scaling stops and capacity is
    /// given at this count.
    #[arg(long, env = "BANDSAW_THREADS", default_value_t = 0)]
    pub threads: usize,
    /// text or json.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
}

/// Seconds per measurement under `--quick`: long enough to time a few resamples of every job,
/// short enough that the whole run stays within a couple of seconds.
const QUICK_SECONDS: f64 = 0.01;

fn positive_seconds(s: &str) -> Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v.is_finite() && v > 0.0 && v <= 600.0 => Ok(v),
        _ => Err(format!("must be a number of seconds above 0 and at most 600, got {s:?}")),
    }
}

/// What one run of the benchmark is asked to do, resolved from the flags.
#[derive(Debug, Clone, Copy)]
pub struct Settings {
    /// Logical CPUs of the machine.
    pub logical_cpus: usize,
    /// The most threads measured on.
    pub threads: usize,
    /// Target seconds of each measurement.
    pub seconds: f64,
    pub quick: bool,
}

impl Settings {
    /// The settings the flags ask for.
    pub fn from_args(args: &BenchArgs) -> Settings {
        Settings {
            logical_cpus: std::thread::available_parallelism().map_or(1, |n| n.get()),
            threads: Threads { threads: args.threads }.count(),
            seconds: if args.quick { QUICK_SECONDS } else { args.seconds },
            quick: args.quick,
        }
    }
}

/// `bandsaw bench`: measure, then print the report. Returns the process exit status (0, or 2
/// when a job could not run or the report could not be written).
pub fn run(args: &BenchArgs) -> i32 {
    let settings = Settings::from_args(args);
    let report = match measure::everything(&settings) {
        Ok(r) => r,
        Err(e) => {
            eprintln!("bandsaw bench: {e}");
            return 2;
        }
    };
    let text = match args.format {
        Format::Text => report::text(&report),
        Format::Json => serde_json::to_string_pretty(&report).expect("the report is JSON") + "\n",
    };
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Ok(()) => 0,
        Err(e) => {
            eprintln!("bandsaw bench: cannot write the report: {e}");
            2
        }
    }
}
