//! Wall-clock benchmark of the engine: the same work as one `/v1/interval` call (iid
//! resampling of `n` values, `B` resamples, the statistic of each resample, a 95 % percentile
//! interval), timed around `run(&job)` only, best of `repeats`.
//!
//! This is a plain program (`harness = false`), not a criterion bench, so that its output can
//! be compared line for line with `scripts/bench/numpy_baseline.py`:
//!
//! ```text
//! cargo bench --bench engine -- [n] [B] [mean|median|all] [repeats] [threads]
//!   defaults: 10000 10000 all 3 1; threads = 0 (or "all") means one per logical CPU.
//! ```
//!
//! Prints one JSON line per statistic:
//! `{"impl":"bandsaw","statistic":..,"n":..,"resamples":..,"threads":..,"seconds":..,..}`
//! with the percentile interval's `lower`/`upper` endpoints for a sanity check.
//!
//! Data: `n` standard normal values, drawn once outside the timed region by Box–Muller over a
//! fixed-seed ChaCha8 stream (`bandsaw::bench::standard_normal`, shared with `bandsaw bench`).
//! They are not numpy's values (numpy has its own generator), so endpoints agree with the
//! baseline only statistically: for the mean, both intervals are about `±1.96/sqrt(n)` wide.
//!
//! Repeat `r` uses seed `1000 + r`, like the numpy baseline. Cargo runs bench targets with an
//! extra `--bench` argument; arguments starting with `--` are ignored.

use std::time::Instant;

use bandsaw::bench::standard_normal;
use bandsaw::engine::data::Sample;
use bandsaw::engine::driver;
use bandsaw::engine::executor::Budget;
use bandsaw::engine::interval::{Level, Method};
use bandsaw::engine::job::{Job, Resampled, Samples};
use bandsaw::engine::plan::Resamples;
use bandsaw::engine::statistic::StatisticSpec;

/// Seed of the data (the numpy baseline uses 12345 for its own generator too).
const DATA_SEED: u64 = 12345;

fn usage(msg: &str) -> ! {
    eprintln!("engine bench: {msg}");
    eprintln!("usage: cargo bench --bench engine -- [n] [B] [mean|median|all] [repeats] [threads]");
    eprintln!("  defaults: 10000 10000 all 3 1; threads 0 or \"all\" = one per logical CPU");
    std::process::exit(2);
}

fn parse<T: std::str::FromStr>(args: &[String], i: usize, default: T, what: &str) -> T {
    match args.get(i) {
        None => default,
        Some(s) => s.parse().unwrap_or_else(|_| usage(&format!("{what} must be a number, got {s:?}"))),
    }
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).filter(|a| !a.starts_with("--")).collect();
    let n: usize = parse(&args, 0, 10_000, "n");
    let b: u64 = parse(&args, 1, 10_000, "B");
    let which = args.get(2).map(String::as_str).unwrap_or("all");
    let repeats: usize = parse(&args, 3, 3, "repeats");
    let threads: usize = match args.get(4).map(String::as_str) {
        None => 1,
        Some("all") => 0,
        Some(_) => parse(&args, 4, 1, "threads"),
    };
    if n < 2 || b < 1 || repeats < 1 {
        usage("need n >= 2, B >= 1, repeats >= 1");
    }
    let threads = if threads == 0 {
        std::thread::available_parallelism().map_or(1, |p| p.get())
    } else {
        threads
    };
    let names = match which {
        "mean" | "median" => vec![which],
        "all" => vec!["mean", "median"],
        other => usage(&format!("statistic must be mean, median or all, got {other:?}")),
    };
    let stats: Vec<(&str, StatisticSpec)> = names
        .into_iter()
        .map(|name| {
            (
                name,
                serde_json::from_value(serde_json::json!({ "name": name })).expect("a statistic"),
            )
        })
        .collect();

    let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("rayon pool");

    for (name, spec) in stats {
        let mut best = f64::INFINITY;
        let mut times = Vec::with_capacity(repeats);
        let (mut lower, mut upper) = (f64::NAN, f64::NAN);
        for r in 0..repeats {
            // Build the job outside the timed region; preparing it lays the data out (that is
            // part of a request's work, as drawing the data is not part of numpy's).
            // Drawn afresh each time and moved into the job, so that the process holds one copy
            // of the data and its peak memory reads against the data's size.
            let sample = Sample::column(standard_normal(n, DATA_SEED)).expect("finite data");
            let mut job = Job::new(Samples::One(Resampled::iid(sample)), spec.clone(), 1000 + r as u64);
            job.resamples = Resamples::Fixed(b);
            job.methods = vec![Method::Percentile];
            job.levels = vec![Level::new(0.95).expect("a level")];
            let t0 = Instant::now();
            let out = pool.install(|| driver::prepare(job).and_then(|p| p.run(&Budget::default())));
            let secs = t0.elapsed().as_secs_f64();
            let out = out.unwrap_or_else(|e| {
                eprintln!("engine bench: run failed for {name}: {e:?}");
                std::process::exit(1)
            });
            assert_eq!(out.resamples, b, "the run drew {} resamples, not {b}", out.resamples);
            let iv = &out.intervals[0].endpoints;
            (lower, upper) = (iv.lower, iv.upper);
            times.push(secs);
            best = best.min(secs);
        }
        let times: Vec<String> = times.iter().map(|t| format!("{t:.6}")).collect();
        println!(
            "{{\"impl\":\"bandsaw\",\"statistic\":\"{name}\",\"n\":{n},\"resamples\":{b},\"threads\":{threads},\"seconds\":{best:.6},\"repeats\":{repeats},\"times\":[{}],\"lower\":{lower},\"upper\":{upper}}}",
            times.join(",")
        );
    }
}
