//! How many resamples to draw: a fixed number, `"auto"` (grow until the Monte Carlo error is
//! small enough), or `"exact"` (enumerate every distinct resample), and how each of them ends
//! when the time limit passes.

use crate::engine::driver::{Run, RunError};
use crate::engine::executor::Replicates;
use crate::engine::job::{OnTimeLimit, Stop};

/// Resamples of a request that names none.
pub const DEFAULT_RESAMPLES: u64 = 2000;
/// First size of an `"auto"` run; it doubles from there.
pub const AUTO_START: u64 = 1000;
/// Default target of `"auto"`: every endpoint's Monte Carlo error below this share of the
/// standard error.
pub const DEFAULT_TARGET_MC_ERROR: f64 = 0.02;

crate::whole_number! {
    /// A number of resamples, 2 or more (the standard error divides by B − 1).
    pub struct ResampleCount where 2 <= x <= u64::MAX, "a number of resamples, 2 or more";
}

crate::bounded_number! {
    /// The share of the standard error below which `"resamples": "auto"` stops, strictly
    /// between 0 and 1.
    pub struct McTarget where 0.0 < x < 1.0, "a share of the standard error strictly between 0 and 1";
}

/// How many resamples to draw.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Resamples {
    Fixed(u64),
    /// Grow (doubling from [`AUTO_START`]) until every endpoint's Monte Carlo error is below
    /// `target` × the standard error, or a limit is reached.
    Auto {
        target: f64,
    },
    /// Enumerate every distinct resample with its probability.
    Exact,
}

/// Draw the replicates the plan asks for; returns them with the reason drawing stopped.
pub fn draw(r: &Run) -> Result<(Replicates, Stop), RunError> {
    let mut reps = Replicates::default();
    let stop = match r.prepared.job.resamples {
        Resamples::Exact => exact(r, &mut reps)?,
        Resamples::Fixed(b) => fixed(r, b, &mut reps)?,
        Resamples::Auto { target } => auto(r, target, &mut reps)?,
    };
    Ok((reps, stop))
}

/// A partial enumeration is not a distribution, so there is no partial result to give.
fn exact(r: &Run, reps: &mut Replicates) -> Result<Stop, RunError> {
    let count = r.prepared.enumerated().expect("an exact job enumerates");
    if r.fill(reps, count)? {
        Ok(Stop::Done)
    } else {
        Err(RunError::TimeLimit {
            done: reps.len() as u64,
            requested: count,
        })
    }
}

fn fixed(r: &Run, b: u64, reps: &mut Replicates) -> Result<Stop, RunError> {
    if r.fill(reps, b)? {
        Ok(r.prepared.job.recorded_stop.unwrap_or(Stop::Done))
    } else {
        out_of_time(r, reps, b)
    }
}

/// The time limit passed before the plan's first goal: a partial result when asked for and
/// there is something to show, else an error.
fn out_of_time(r: &Run, reps: &Replicates, requested: u64) -> Result<Stop, RunError> {
    if r.prepared.job.on_time_limit == OnTimeLimit::Partial && !reps.is_empty() {
        Ok(Stop::TimeLimit)
    } else {
        Err(RunError::TimeLimit {
            done: reps.len() as u64,
            requested,
        })
    }
}

fn auto(r: &Run, target: f64, reps: &mut Replicates) -> Result<Stop, RunError> {
    let max = r.prepared.max_resamples();
    let first = AUTO_START.min(max);
    let mut goal = first;
    loop {
        if !r.fill(reps, goal)? {
            if (reps.len() as u64) < first {
                return out_of_time(r, reps, goal);
            }
            return Ok(Stop::AutoTime);
        }
        if r.meets_target(reps, target) {
            return Ok(Stop::AutoTarget);
        }
        if goal >= max {
            return Ok(Stop::AutoLimit);
        }
        goal = (goal * 2).min(max);
    }
}
