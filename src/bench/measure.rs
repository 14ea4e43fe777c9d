//! The measurements: the generator's ceiling, the kernels on one thread, scaling over threads
//! and the capacity of common jobs, each timed around real engine runs in this process.
//!
//! A job is laid out once ([`driver::prepare`], timed on its own) and then run at whatever
//! resample count a measurement needs, so that sizing a run does not sort a million values
//! each time. Run times are wall-clock, on a rayon pool of the measured size, as a request's
//! are.

use std::hint::black_box;
use std::time::Instant;

use rayon::ThreadPool;

use super::jobs::{self, Path, Spec, MOST_ROWS};
use super::report::{Capacity, CapacityRow, Ceiling, Kernel, Machine, Report, Scaling, ScalingRun, Timing};
use super::{standard_normal, Settings, DATA_SEED};
use crate::engine::draw::{rows, Take};
use crate::engine::driver::{self, Prepared};
use crate::engine::executor::Budget;
use crate::engine::plan::Resamples;
use crate::engine::rng::replicate_stream;

/// The range of the ceiling's bounded draws: rows of a sample of 10 000.
pub const CEILING_RANGE: u32 = 10_000;

/// The most resamples of one timed run. The fastest jobs (a proportion is one binomial draw
/// per resample) would otherwise keep hundreds of millions of replicates in memory to fill
/// their time; a shorter run at this size times them well enough.
pub const MOST_RESAMPLES: u64 = 1 << 22;

/// Measure everything, in the order of the report.
pub fn everything(settings: &Settings) -> Result<Report, String> {
    let data = standard_normal(MOST_ROWS, DATA_SEED);
    let one = pool(1)?;
    let ceiling = ceiling(settings.seconds);
    let kernels = jobs::kernels()
        .iter()
        .map(|spec| kernel(spec, Path::of(spec, &data), &data, &one, settings.seconds, &ceiling))
        .collect::<Result<Vec<_>, _>>()?;
    let scaling = scaling(&jobs::scaling(), &data, settings)?;
    let all = pool(settings.threads)?;
    let rows = jobs::capacity()
        .iter()
        .map(|spec| capacity_row(spec, &data, &all, settings.seconds))
        .collect::<Result<Vec<_>, _>>()?;
    Ok(Report {
        bandsaw: env!("CARGO_PKG_VERSION"),
        machine: Machine {
            logical_cpus: settings.logical_cpus,
            threads: settings.threads,
            seconds_per_measurement: settings.seconds,
            quick: settings.quick,
        },
        ceiling,
        kernels,
        scaling,
        capacity: Capacity {
            threads: settings.threads,
            extrapolated: true,
            jobs: rows,
        },
    })
}

/// The cheapest consumer of draws: every candidate row xor-ed in (moved into the drawing loop,
/// so it stays in a register as a kernel's sums do).
struct Fold(u64);

impl Take for Fold {
    #[inline]
    fn take(&mut self, row: usize, _: f64, _: usize) {
        self.0 ^= row as u64;
    }
}

/// A rayon pool of `threads` threads.
fn pool(threads: usize) -> Result<ThreadPool, String> {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| format!("cannot start {threads} compute threads: {e}"))
}

/// Rows drawn below [`CEILING_RANGE`] on this thread for about `seconds`, as the kernels draw
/// them ([`rows`]: Lemire's bounded draw on half-words, k-bit fields in chunks of 2^k rows), a
/// replicate's worth from each stream in turn, with nothing done with them but folding every
/// candidate into an accumulator that goes through `black_box`, so that no draw can be
/// optimised away.
pub fn ceiling(seconds: f64) -> Ceiling {
    let per_stream = u64::from(CEILING_RANGE);
    let mut acc = Fold(0);
    let mut streams = 0u64;
    let started = Instant::now();
    loop {
        let mut rng = replicate_stream(DATA_SEED, streams);
        acc = rows(&mut rng, CEILING_RANGE as usize, acc);
        streams += 1;
        if started.elapsed().as_secs_f64() >= seconds {
            break;
        }
    }
    let elapsed = started.elapsed().as_secs_f64();
    black_box(acc.0);
    let draws = streams * per_stream;
    Ceiling {
        range: CEILING_RANGE,
        draws,
        seconds: elapsed,
        draws_per_second: draws as f64 / elapsed,
    }
}

/// A job laid out, and how long laying it out took.
struct Laid {
    prepared: Prepared,
    prepare_seconds: f64,
}

/// Lay out `spec`'s job over `data`, timing the layout (part of every request's work, but not
/// of any resample's).
fn lay_out(spec: &Spec, data: &[f64]) -> Result<Laid, String> {
    let job = spec.job(data, 1);
    let started = Instant::now();
    let prepared = driver::prepare(job).map_err(|e| format!("the {} job was refused: {e}", spec.statistic))?;
    Ok(Laid {
        prepared,
        prepare_seconds: started.elapsed().as_secs_f64(),
    })
}

/// Run the laid-out job at `b` resamples on `pool`, returning its wall-clock seconds.
fn run_at(laid: &mut Laid, pool: &ThreadPool, b: u64) -> Result<Timing, String> {
    // The resample count is read from the job when it runs, so one layout serves every size.
    laid.prepared.job.resamples = Resamples::Fixed(b);
    let prepared = &laid.prepared;
    let started = Instant::now();
    let out = pool.install(|| prepared.run(&Budget::default()));
    let seconds = started.elapsed().as_secs_f64();
    let out = out.map_err(|e| format!("a {} run failed: {e}", prepared.job.statistic.name()))?;
    if out.resamples != b {
        return Err(format!("a run drew {} resamples, not {b}", out.resamples));
    }
    black_box(out.estimate);
    Ok(Timing { resamples: b, seconds })
}

/// Size a run of the laid-out job to take about `seconds` on `pool` and time it. Pilot runs
/// grow from a few resamples per thread until one takes a quarter of the target; they also
/// warm the pool and the workers' scratch space before the run that counts.
fn calibrated(laid: &mut Laid, pool: &ThreadPool, seconds: f64) -> Result<Timing, String> {
    let threads = pool.current_num_threads() as u64;
    let mut b = (2 * threads).max(4);
    // The first run of a job on a pool starts its threads and faults in their memory; sized
    // from it, the runs after would be far too short.
    run_at(laid, pool, b)?;
    loop {
        let pilot = run_at(laid, pool, b)?;
        let per = pilot.seconds.max(1e-9) / b as f64;
        let wanted = ((seconds / per) as u64).clamp(1, MOST_RESAMPLES);
        if pilot.seconds >= seconds / 4.0 || b >= MOST_RESAMPLES {
            return run_at(laid, pool, wanted);
        }
        // At most 16 times more per step: a pilot this short is dominated by fixed costs.
        b = wanted.min(b * 16).max(b + 1);
    }
}

/// One kernel on one thread.
fn kernel(spec: &Spec, path: Path, data: &[f64], one: &ThreadPool, seconds: f64, ceiling: &Ceiling) -> Result<Kernel, String> {
    let mut laid = lay_out(spec, data)?;
    let t = calibrated(&mut laid, one, seconds)?;
    let per_second = t.resamples as f64 / t.seconds;
    let row_draws = path.draws_rows().then_some(per_second * spec.n as f64);
    Ok(Kernel {
        statistic: spec.statistic,
        n: spec.n,
        path: path.describe(),
        draws_rows: path.draws_rows(),
        resamples: t.resamples,
        seconds: t.seconds,
        resamples_per_second: per_second,
        ns_per_resample: 1e9 / per_second,
        row_draws_per_second: row_draws,
        percent_of_ceiling: row_draws.map(|r| 100.0 * r / ceiling.draws_per_second),
    })
}

/// 1, 2, 4, … up to `most`, and `most` itself when it is no power of two.
pub fn thread_counts(most: usize) -> Vec<usize> {
    let most = most.max(1);
    let mut counts: Vec<usize> = std::iter::successors(Some(1usize), |t| t.checked_mul(2))
        .take_while(|t| *t <= most)
        .collect();
    if counts.last() != Some(&most) {
        counts.push(most);
    }
    counts
}

/// The same job on each thread count, sized to take about the target time on one thread;
/// each count's best of two runs.
fn scaling(spec: &Spec, data: &[f64], settings: &Settings) -> Result<Scaling, String> {
    let mut laid = lay_out(spec, data)?;
    let b = calibrated(&mut laid, &pool(1)?, settings.seconds)?.resamples;
    let mut runs: Vec<ScalingRun> = Vec::new();
    for threads in thread_counts(settings.threads) {
        let p = pool(threads)?;
        let first = run_at(&mut laid, &p, b)?.seconds;
        let seconds = first.min(run_at(&mut laid, &p, b)?.seconds);
        let speedup = runs.first().map_or(1.0, |one| one.seconds / seconds);
        runs.push(ScalingRun { threads, seconds, speedup });
    }
    Ok(Scaling {
        statistic: spec.statistic,
        n: spec.n,
        resamples: b,
        runs,
        note: scaling_note(settings),
    })
}

/// What the scaling run cannot show on this machine, if anything.
fn scaling_note(s: &Settings) -> Option<String> {
    let cpus = s.logical_cpus;
    if s.threads <= 1 {
        Some("one thread only: nothing to scale".into())
    } else if s.threads > cpus {
        Some(format!(
            "{} threads on {cpus} logical CPUs: beyond {cpus} the threads take turns",
            s.threads
        ))
    } else if s.threads < cpus {
        Some(format!("capped at {} of {cpus} logical CPUs by --threads", s.threads))
    } else if cpus == 2 {
        Some("a 2-core machine (2 logical CPUs): this shows only 1 → 2 threads".into())
    } else {
        None
    }
}

/// A time per resample and a fixed time per job fitted to two runs, `t = fixed + B × per`.
/// Noise can tilt the line through two points the wrong way; then the longer run alone says
/// how long a resample takes, and nothing is fixed.
pub fn fit(short: Timing, long: Timing) -> (f64, f64) {
    let db = long.resamples as f64 - short.resamples as f64;
    let per = (long.seconds - short.seconds) / db;
    if db > 0.0 && per > 0.0 && per.is_finite() {
        (per, (long.seconds - per * long.resamples as f64).max(0.0))
    } else {
        (long.seconds / long.resamples as f64, 0.0)
    }
}

/// `x` rounded down to two significant figures (98 765 → 98 000); 0 below 1.
pub fn two_figures_down(x: f64) -> u64 {
    if x.is_nan() || x < 1.0 {
        return 0;
    }
    let whole = x.min(u64::MAX as f64) as u64;
    let mut unit = 1u64;
    while whole / unit >= 100 {
        unit *= 10;
    }
    whole / unit * unit
}

/// One capacity row: the job timed at its calibrated size and at a quarter of it on every
/// thread, a line fitted through the two, and the resamples that fit in one second once the
/// layout and the fixed part of a run are paid.
fn capacity_row(spec: &Spec, data: &[f64], all: &ThreadPool, seconds: f64) -> Result<CapacityRow, String> {
    let mut laid = lay_out(spec, data)?;
    let long = calibrated(&mut laid, all, seconds)?;
    let short = run_at(&mut laid, all, (long.resamples / 4).max(1))?;
    let (per, fixed_in_run) = fit(short, long);
    let fixed = laid.prepare_seconds + fixed_in_run;
    Ok(CapacityRow {
        statistic: spec.statistic,
        n: spec.n,
        scheme: spec.scheme(),
        mean_block_length: spec.mean_block,
        methods: spec.method_names(),
        timed: vec![short, long],
        prepare_seconds: laid.prepare_seconds,
        fixed_seconds: fixed,
        seconds_per_resample: per,
        resamples_per_second: 1.0 / per,
        resamples_in_one_second: two_figures_down((1.0 - fixed) / per),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thread_counts_are_powers_of_two_and_the_most() {
        assert_eq!(thread_counts(1), vec![1]);
        assert_eq!(thread_counts(2), vec![1, 2]);
        assert_eq!(thread_counts(6), vec![1, 2, 4, 6]);
        assert_eq!(thread_counts(8), vec![1, 2, 4, 8]);
        assert_eq!(thread_counts(0), vec![1]);
    }

    #[test]
    fn capacities_round_down_to_two_figures() {
        assert_eq!(two_figures_down(98_765.4), 98_000);
        assert_eq!(two_figures_down(1_999.0), 1_900);
        assert_eq!(two_figures_down(100.0), 100);
        assert_eq!(two_figures_down(99.9), 99);
        assert_eq!(two_figures_down(7.9), 7);
        assert_eq!(two_figures_down(0.5), 0);
        assert_eq!(two_figures_down(-3.0), 0);
        assert_eq!(two_figures_down(f64::NAN), 0);
    }

    /// A line through two exact points gives back its slope and intercept; a line that noise
    /// tilted downwards falls back on the longer run alone.
    #[test]
    fn the_fit_separates_fixed_time_from_time_per_resample() {
        let t = |resamples, seconds| Timing { resamples, seconds };
        let (per, fixed) = fit(t(1000, 0.02 + 1000.0 * 1e-5), t(4000, 0.02 + 4000.0 * 1e-5));
        assert!((per - 1e-5).abs() < 1e-12 && (fixed - 0.02).abs() < 1e-9, "{per} {fixed}");
        let (per, fixed) = fit(t(1000, 0.05), t(4000, 0.04));
        assert!((per - 1e-5).abs() < 1e-12 && fixed == 0.0, "{per} {fixed}");
    }
}
