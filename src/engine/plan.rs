//! How many resamples to draw: a fixed number, `"auto"` (grow until the Monte Carlo error is
//! small enough), or `"exact"` (enumerate every distinct resample), and how each of them ends
//! when the time limit passes.

use crate::engine::executor::Replicates;

/// Resamples of a request that names none.
pub const DEFAULT_RESAMPLES: u64 = 2000;
/// First size of an `"auto"` run; it doubles from there.
pub const AUTO_START: u64 = 1000;
/// Default target of `"auto"`: every endpoint's Monte Carlo error below this share of the
/// standard error.
pub const DEFAULT_TARGET_MC_ERROR: f64 = 0.02;

crate::whole_number! {
    /// A number of resamples, 2 or more (the standard error divides by B − 1); the server's
    /// `limits.max_resamples` caps it.
    pub struct ResampleCount where 2 <= x <= crate::engine::wire::MAX_EXACT_INTEGER, "a number of resamples, from 2 to 2^53 − 1";
}

crate::bounded_number! {
    /// The share of the standard error below which `"resamples": "auto"` stops, strictly
    /// between 0 and 1.
    pub struct McTarget where 0.0 < x < 1.0, "a share of the standard error strictly between 0 and 1";
}

crate::wire_enum! {
    /// What to do when the time limit is reached: `fail` (an error) or `partial` (the result
    /// over the resamples finished, marked incomplete, with a warning).
    pub enum OnTimeLimit {
        /// Give up with a time-limit error.
        Fail = "fail",
        /// Answer with the resamples finished.
        Partial = "partial",
    }
}

crate::wire_enum! {
    /// Why drawing stopped.
    pub enum Stop {
        /// Every resample asked for (or enumerated) was drawn.
        Done = "done",
        /// The time limit passed; the result covers the resamples done.
        TimeLimit = "time_limit",
        /// "auto" reached its Monte Carlo target.
        AutoTarget = "auto_target",
        /// "auto" reached the resample or work limit before its target.
        AutoLimit = "auto_limit",
        /// "auto" reached the time limit before its target.
        AutoTime = "auto_time",
    }
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

/// What the plan draws from: the job's replicates, and a judge of them.
pub trait Source {
    type Error;
    /// Extend `reps` up to `goal` replicates; false when the budget ran out first.
    fn fill(&self, reps: &mut Replicates, goal: u64) -> Result<bool, Self::Error>;
    /// True when every endpoint's Monte Carlo error is at most `target` × the standard error.
    fn meets_target(&self, reps: &Replicates, target: f64) -> bool;
}

/// Why the plan gave up.
#[derive(Debug, Clone, PartialEq)]
pub enum Ended<E> {
    /// The time limit passed before there was a result to give; `partial` tells whether a
    /// partial result could have been given instead.
    TimeLimit { done: u64, requested: u64, partial: bool },
    /// The source failed.
    Source(E),
}

/// A job's plan: how many replicates, and what to do when time runs out.
#[derive(Debug, Clone, Copy)]
pub struct Plan {
    pub resamples: Resamples,
    pub on_time_limit: OnTimeLimit,
    /// The stop a replayed token recorded.
    pub recorded_stop: Option<Stop>,
    /// The most resamples the work limit and the resample limit allow.
    pub max_resamples: u64,
    /// The number of distinct resamples of an enumeration.
    pub enumerated: Option<u64>,
}

impl Plan {
    /// Draw the replicates the plan asks for; returns them with the reason drawing stopped.
    pub fn draw<S: Source>(&self, s: &S) -> Result<(Replicates, Stop), Ended<S::Error>> {
        let mut reps = Replicates::default();
        let stop = match self.resamples {
            Resamples::Exact => self.exact(s, &mut reps)?,
            Resamples::Fixed(b) => self.fixed(s, b, &mut reps)?,
            Resamples::Auto { target } => self.auto(s, target, &mut reps)?,
        };
        Ok((reps, stop))
    }

    /// A partial enumeration is not a distribution, so there is no partial result to give.
    fn exact<S: Source>(&self, s: &S, reps: &mut Replicates) -> Result<Stop, Ended<S::Error>> {
        let count = self.enumerated.expect("an exact job enumerates");
        if s.fill(reps, count).map_err(Ended::Source)? {
            Ok(Stop::Done)
        } else {
            Err(Ended::TimeLimit {
                done: reps.len() as u64,
                requested: count,
                partial: false,
            })
        }
    }

    fn fixed<S: Source>(&self, s: &S, b: u64, reps: &mut Replicates) -> Result<Stop, Ended<S::Error>> {
        if s.fill(reps, b).map_err(Ended::Source)? {
            Ok(self.recorded_stop.unwrap_or(Stop::Done))
        } else {
            self.out_of_time(reps, b)
        }
    }

    /// The time limit passed before the plan's first goal: a partial result when asked for and
    /// there is something to show, else an error.
    fn out_of_time<E>(&self, reps: &Replicates, requested: u64) -> Result<Stop, Ended<E>> {
        if self.on_time_limit == OnTimeLimit::Partial && !reps.is_empty() {
            Ok(Stop::TimeLimit)
        } else {
            Err(Ended::TimeLimit {
                done: reps.len() as u64,
                requested,
                partial: true,
            })
        }
    }

    fn auto<S: Source>(&self, s: &S, target: f64, reps: &mut Replicates) -> Result<Stop, Ended<S::Error>> {
        let max = self.max_resamples;
        let first = AUTO_START.min(max);
        let mut goal = first;
        loop {
            if !s.fill(reps, goal).map_err(Ended::Source)? {
                if (reps.len() as u64) < first {
                    return self.out_of_time(reps, goal);
                }
                return Ok(Stop::AutoTime);
            }
            if s.meets_target(reps, target) {
                return Ok(Stop::AutoTarget);
            }
            if goal >= max {
                return Ok(Stop::AutoLimit);
            }
            goal = (goal * 2).min(max);
        }
    }
}
