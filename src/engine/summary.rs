//! The summary of the replicates: standard error, bias, every interval, and the Monte Carlo
//! error of each.

use crate::engine::distribution::ReplicateDistribution;
use crate::engine::executor::Replicate;
use crate::engine::interval::{self, bca, Endpoints, Method};
use crate::engine::montecarlo;

/// What the summary is computed from.
pub struct SummaryInput<'a> {
    pub estimate: f64,
    pub replicates: &'a [Replicate],
    /// The replicates are an enumeration, each with its probability.
    pub exact: bool,
    /// The BCa acceleration, when the jackknife gave one.
    pub acceleration: Option<f64>,
    pub methods: &'a [Method],
    pub levels: &'a [f64],
    /// The analytic standard error of the estimate, where the statistic has one: it scales the
    /// studentized interval back (else the bootstrap standard error does).
    pub analytic_se: Option<f64>,
}

/// One interval of the result.
#[derive(Debug, Clone, PartialEq)]
pub struct IntervalResult {
    pub method: Method,
    pub level: f64,
    pub endpoints: Endpoints,
}

/// The summary.
#[derive(Debug, Clone)]
pub struct Summary {
    /// The distribution of the defined replicates.
    pub dist: ReplicateDistribution,
    /// Indices (in stream order) of the replicates whose value is defined.
    pub kept: Vec<usize>,
    pub standard_error: f64,
    pub standard_error_mc_error: f64,
    pub bias: f64,
    pub bias_mc_error: f64,
    pub z0: f64,
    pub z0_clamped: bool,
    pub intervals: Vec<IntervalResult>,
    /// (lower, upper) adjusted quantile levels of each BCa interval.
    pub bca_levels: Vec<(f64, f64)>,
    /// Replicates left out of the studentized interval for a zero standard error.
    pub studentized_dropped: u64,
}

/// Every replicate's value was undefined.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NoDefinedReplicates;

/// Summarise the replicates, leaving out undefined ones (stream order is kept among the rest).
pub fn summarize(input: &SummaryInput) -> Result<Summary, NoDefinedReplicates> {
    let reps = input.replicates;
    let kept: Vec<usize> = (0..reps.len()).filter(|&i| reps[i].value.is_finite()).collect();
    if kept.is_empty() {
        return Err(NoDefinedReplicates);
    }
    let values: Vec<f64> = kept.iter().map(|&i| reps[i].value).collect();
    let dist = if input.exact {
        let probs: Vec<f64> = kept.iter().map(|&i| reps[i].probability).collect();
        ReplicateDistribution::exact(&values, &probs)
    } else {
        ReplicateDistribution::sampled(&values)
    };
    let standard_error = dist.sd();
    let bias = dist.mean() - input.estimate;
    let (z0, z0_clamped) = bca::z0(&dist, input.estimate);
    let mut summary = Summary {
        standard_error,
        standard_error_mc_error: montecarlo::standard_error_mc_error(&dist),
        bias,
        bias_mc_error: montecarlo::bias_mc_error(&dist),
        z0,
        z0_clamped,
        intervals: Vec::new(),
        bca_levels: Vec::new(),
        studentized_dropped: 0,
        dist,
        kept,
    };
    summary.intervals = intervals(input, &mut summary);
    Ok(summary)
}

/// The studentized replicates t* = (θ* − θ̂)/se* over the kept replicates whose se* is positive
/// and finite, with the count of those left out; `None` when none is left.
fn studentized(input: &SummaryInput, s: &Summary, se_hat: f64) -> (Option<ReplicateDistribution>, u64) {
    // A resample whose values are all equal has a standard error of 0, which rounding can turn
    // into 1e-17; such a se* would blow t* up to 1e15. Anything below this share of the
    // sample's standard error counts as zero.
    let tiny_se = 1e-9 * se_hat.max(s.standard_error);
    let (mut t, mut tp, mut dropped) = (Vec::new(), Vec::new(), 0);
    for &i in &s.kept {
        let r = input.replicates[i];
        if r.se.is_finite() && r.se > tiny_se {
            t.push((r.value - input.estimate) / r.se);
            tp.push(r.probability);
        } else {
            dropped += 1;
        }
    }
    let dist = match (t.is_empty(), input.exact) {
        (true, _) => None,
        (false, true) => Some(ReplicateDistribution::exact(&t, &tp)),
        (false, false) => Some(ReplicateDistribution::sampled(&t)),
    };
    (dist, dropped)
}

/// Every requested method at every requested level, methods first.
fn intervals(input: &SummaryInput, s: &mut Summary) -> Vec<IntervalResult> {
    let constants = bca::BcaConstants {
        z0: s.z0,
        acceleration: input.acceleration.unwrap_or(0.0),
        z0_clamped: s.z0_clamped,
    };
    let se_hat = input.analytic_se.unwrap_or(s.standard_error);
    let t_dist = if input.methods.contains(&Method::Studentized) {
        let (dist, dropped) = studentized(input, s, se_hat);
        s.studentized_dropped = dropped;
        dist
    } else {
        None
    };
    let (estimate, dist) = (input.estimate, &s.dist);
    let mut out = Vec::new();
    for &method in input.methods {
        for &level in input.levels {
            let endpoints = match method {
                Method::Percentile => interval::percentile::interval(dist, level),
                Method::Basic => interval::basic::interval(dist, estimate, level),
                Method::Normal => interval::normal::interval(
                    estimate,
                    s.bias,
                    s.standard_error,
                    s.bias_mc_error,
                    s.standard_error_mc_error,
                    dist,
                    level,
                ),
                Method::Bca => {
                    let e = bca::interval(dist, &constants, level);
                    s.bca_levels.extend(e.quantile_levels);
                    e
                }
                Method::Studentized => match &t_dist {
                    Some(t) => interval::studentized::interval(t, estimate, se_hat, level),
                    // Every se* was zero: the resamples do not vary, nor does the interval.
                    None => Endpoints::point(estimate),
                },
            };
            out.push(IntervalResult { method, level, endpoints });
        }
    }
    out
}
