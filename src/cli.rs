//! The command line: `bandsaw serve` (the default), `bandsaw interval`, which runs the same
//! engine in-process on a request file, `bandsaw check`, which decides a benchmark suite's
//! regressions from files, `bandsaw bench`, which measures what this machine can compute, and
//! `bandsaw openapi`, which prints the API's OpenAPI document. Each command offers only the flags that apply to it.

use std::io::Read;
use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::Instant;

use clap::{Args, Parser, Subcommand};

use crate::config::{Config, Limits, Threads};

#[derive(Debug, Parser)]
#[command(
    name = "bandsaw",
    version,
    about = "Bootstrap intervals for a data array: an HTTP service and an in-process command line.",
    args_conflicts_with_subcommands = true
)]
pub struct Cli {
    /// Without a command, bandsaw serves (the flags of `bandsaw serve` apply).
    #[command(flatten)]
    pub serve: Config,
    #[command(subcommand)]
    pub command: Option<Command>,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Serve the HTTP API (the default).
    Serve(Config),
    /// Compute one interval in-process: read a request body (the JSON of POST /v1/interval)
    /// from a file or standard input and print the response JSON.
    Interval(IntervalArgs),
    /// Compare a benchmark suite's runs before and after a change and decide, per benchmark,
    /// regression, improvement, equivalent or inconclusive, here or on a server (--server).
    /// Exit status: 0 no regression, 1 a regression, 2 (nothing regressed, but) bad input or
    /// usage, a benchmark refused or a server not reached, 3 inconclusive under --strict.
    Check(Box<crate::check::CheckArgs>),
    /// Measure this machine for capacity planning: the generator's draw rate, each kernel's
    /// rate on one thread, scaling over threads, and how many resamples of common jobs fit in
    /// one second on all threads.
    Bench(crate::bench::BenchArgs),
    /// Print the OpenAPI 3.1 document of the HTTP API (the same bytes as GET /openapi.json
    /// and openapi/openapi.json).
    Openapi,
}

/// The flags of `bandsaw interval`.
#[derive(Debug, Clone, Args)]
pub struct IntervalArgs {
    /// The request file; "-" or none reads standard input.
    #[arg(long, short)]
    pub input: Option<String>,
    #[command(flatten)]
    pub threads: Threads,
    #[command(flatten)]
    pub limits: Limits,
}

/// `bandsaw openapi`: print the OpenAPI document.
pub fn openapi() -> i32 {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out
        .write_all(crate::api::openapi::document_json().as_bytes())
        .and_then(|_| out.flush())
    {
        Ok(()) => 0,
        Err(e) => {
            eprintln!("bandsaw: cannot write the document: {e}");
            2
        }
    }
}

/// `bandsaw interval`: returns the process exit code (0 success, 1 a problem, 2 unreadable input).
pub fn interval(args: &IntervalArgs) -> i32 {
    let mut body = Vec::new();
    let read = match args.input.as_deref() {
        None | Some("-") => std::io::stdin().read_to_end(&mut body).map(|_| ()),
        Some(path) => std::fs::read(path).map(|b| body = b),
    };
    if let Err(e) = read {
        eprintln!("bandsaw: cannot read the request: {e}");
        return 2;
    }
    let pool = match rayon::ThreadPoolBuilder::new().num_threads(args.threads.count()).build() {
        Ok(p) => p,
        Err(e) => {
            eprintln!("bandsaw: cannot start the compute threads: {e}");
            return 2;
        }
    };
    let started = Instant::now();
    let cancel = Arc::new(AtomicBool::new(false));
    let result = pool.install(|| crate::api::interval::compute(&body, &args.limits, cancel, started, None));
    match result {
        Ok(v) => {
            println!("{}", serde_json::to_string_pretty(&v).expect("JSON"));
            0
        }
        Err(p) => {
            println!("{}", serde_json::to_string_pretty(&p).expect("JSON"));
            1
        }
    }
}
