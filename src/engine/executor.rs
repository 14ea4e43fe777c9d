//! The executor: computes replicates in parallel on the current rayon pool, within a budget.
//!
//! Replicates are computed in *waves*: each wave is a contiguous range of replicate indices
//! computed in parallel, and the budget (deadline, cancel flag) is looked at before every wave
//! and inside it. Whatever happens, the replicates kept form a prefix 0..k of the same streams,
//! so a partial result equals a full run with k resamples. Wave sizes adapt so that a wave takes
//! about [`WAVE_TARGET`]: long enough to keep every thread busy, short enough that a deadline is
//! noticed within tens of milliseconds.

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

use rayon::prelude::*;

/// How long a wave of replicates should take.
pub const WAVE_TARGET: Duration = Duration::from_millis(25);
/// Each worker reads the clock before every this-many-th replicate: a plain replicate costs at
/// most O(rows), so a stop is still noticed within milliseconds.
const CLOCK_EVERY: u32 = 16;

/// When a job must stop: its deadline, its caller going away, or (a test hook) a number of
/// replicates after which it stops as if its deadline had passed.
#[derive(Debug, Clone, Default)]
pub struct Budget {
    pub deadline: Option<Instant>,
    pub cancel: Option<Arc<AtomicBool>>,
    pub replicate_cap: Option<u64>,
}

impl Budget {
    pub fn expired(&self) -> bool {
        self.deadline.is_some_and(|d| Instant::now() >= d)
    }

    pub fn cancelled(&self) -> bool {
        self.cancel.as_ref().is_some_and(|c| c.load(Ordering::Relaxed))
    }

    /// True when the job should stop now.
    pub fn exhausted(&self) -> bool {
        self.expired() || self.cancelled()
    }
}

/// One replicate: its value, its standard error (studentized intervals only, else NaN) and its
/// probability (enumerations only, else 1).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Replicate {
    pub value: f64,
    pub se: f64,
    pub probability: f64,
}

/// Replicates in stream order.
pub type Replicates = Vec<Replicate>;

/// The caller went away.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Cancelled;

/// A stop flag shared by the workers of a wave: set once the budget runs out, so that the
/// others see it without reading the clock.
struct Stopper<'a> {
    budget: &'a Budget,
    stopped: AtomicBool,
}

impl Stopper<'_> {
    fn stop(&self) -> bool {
        if self.stopped.load(Ordering::Relaxed) {
            return true;
        }
        let stop = self.budget.exhausted();
        if stop {
            self.stopped.store(true, Ordering::Relaxed);
        }
        stop
    }
}

/// Extend `reps` with replicates up to index `wanted`, in waves. `replicate(i, worker, stop)`
/// computes replicate i with a worker's scratch space (made by `worker`), giving up with `None`
/// when `stop` says so. Returns whether all `wanted` are done.
pub fn fill<W>(
    reps: &mut Replicates,
    wanted: u64,
    budget: &Budget,
    worker: impl Fn() -> W + Sync + Send,
    replicate: impl Fn(u64, &mut W, &dyn Fn() -> bool) -> Option<Replicate> + Sync + Send,
) -> Result<bool, Cancelled> {
    let goal = budget.replicate_cap.map_or(wanted, |cap| cap.min(wanted));
    let threads = rayon::current_num_threads().max(1);
    // Start with a couple of replicates per thread, then grow towards WAVE_TARGET.
    let mut wave = 2 * threads as u64;
    let stopper = Stopper {
        budget,
        stopped: AtomicBool::new(false),
    };
    while (reps.len() as u64) < goal && !stopper.stop() {
        let start = reps.len();
        let len = ((start as u64 + wave).min(goal) - start as u64) as usize;
        let began = Instant::now();
        let done = run_wave(reps, start, len, threads, &stopper, &worker, &replicate);
        if !done {
            break;
        }
        let took = began.elapsed().as_secs_f64().max(1e-6);
        let scale = (WAVE_TARGET.as_secs_f64() / took).clamp(0.25, 4.0);
        wave = ((len as f64 * scale) as u64).clamp(threads as u64, 1 << 20);
    }
    if budget.cancelled() {
        return Err(Cancelled);
    }
    Ok(reps.len() as u64 >= wanted)
}

/// One wave of `len` replicates from index `start`. On a stop, `reps` keeps the longest run of
/// finished replicates from the start, and `false` is returned.
fn run_wave<W>(
    reps: &mut Replicates,
    start: usize,
    len: usize,
    threads: usize,
    stopper: &Stopper,
    worker: &(impl Fn() -> W + Sync + Send),
    replicate: &(impl Fn(u64, &mut W, &dyn Fn() -> bool) -> Option<Replicate> + Sync + Send),
) -> bool {
    reps.resize(start + len, Replicate::default());
    let mut done = vec![false; len];
    let min_len = (len / (4 * threads)).max(1);
    let stop = || stopper.stop();
    reps[start..]
        .par_iter_mut()
        .zip(done.par_iter_mut())
        .enumerate()
        .with_min_len(min_len)
        .for_each_init(
            || (0u32, worker()),
            |(tick, wk), (k, (slot, d))| {
                *tick = tick.wrapping_add(1);
                if stopper.stopped.load(Ordering::Relaxed) || (*tick % CLOCK_EVERY == 1 && stop()) {
                    return;
                }
                if let Some(r) = replicate((start + k) as u64, wk, &stop) {
                    *slot = r;
                    *d = true;
                }
            },
        );
    match done.iter().position(|d| !d) {
        Some(first_missing) => {
            reps.truncate(start + first_missing);
            false
        }
        None => true,
    }
}
