//! The summary of the replicates: standard error, bias, every interval, and the Monte Carlo
//! error of each. A [`Reader`] keeps what the intervals are read from, so that any method's
//! interval can be read at any level after the run (a family's adjusted level, a p-value by
//! inverting the interval).

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

/// Everything an interval is read from.
#[derive(Debug, Clone, PartialEq)]
pub struct Reader {
    /// The distribution of the defined replicates.
    pub dist: ReplicateDistribution,
    /// The studentized replicates, when asked for and some have a standard error.
    t_dist: Option<ReplicateDistribution>,
    pub estimate: f64,
    pub standard_error: f64,
    pub standard_error_mc_error: f64,
    pub bias: f64,
    pub bias_mc_error: f64,
    /// The standard error that scales the studentized interval back.
    se_hat: f64,
    pub bca: bca::BcaConstants,
}

impl Reader {
    /// The interval of `method` at `level`.
    pub fn interval(&self, method: Method, level: f64) -> Endpoints {
        let (estimate, dist) = (self.estimate, &self.dist);
        match method {
            Method::Percentile => interval::percentile::interval(dist, level),
            Method::Basic => interval::basic::interval(dist, estimate, level),
            Method::Normal => interval::normal::interval(
                estimate,
                self.bias,
                self.standard_error,
                self.bias_mc_error,
                self.standard_error_mc_error,
                dist,
                level,
            ),
            Method::Bca => bca::interval(dist, &self.bca, level),
            Method::Studentized => match &self.t_dist {
                Some(t) => interval::studentized::interval(t, estimate, self.se_hat, level),
                // Every se* was zero: the resamples do not vary, nor does the interval.
                None => Endpoints::point(estimate),
            },
        }
    }
}

/// The summary.
#[derive(Debug, Clone)]
pub struct Summary {
    pub reader: Reader,
    /// Indices (in stream order) of the replicates whose value is defined.
    pub kept: Vec<usize>,
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

/// The largest magnitude of a replicate that counts as defined. Data are bounded (1e75), but a
/// ratio whose denominator resamples to almost 0 is not; beyond this, the sum of millions of
/// replicates (their mean) could overflow, so such replicates count as undefined.
pub const MAX_REPLICATE: f64 = 1e250;

/// Whether a value counts as defined: finite and at most [`MAX_REPLICATE`] in magnitude.
pub fn defined(v: f64) -> bool {
    v.abs() <= MAX_REPLICATE
}

/// Summarise the replicates, leaving out undefined ones (stream order is kept among the rest).
pub fn summarize(input: &SummaryInput) -> Result<Summary, NoDefinedReplicates> {
    let reps = input.replicates;
    let kept: Vec<usize> = (0..reps.len()).filter(|&i| defined(reps[i].value)).collect();
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
    let (z0, z0_clamped) = bca::z0(&dist, input.estimate);
    let se_hat = input.analytic_se.unwrap_or(standard_error);
    let (t_dist, studentized_dropped) = if input.methods.contains(&Method::Studentized) {
        studentized(input, &kept, se_hat.max(standard_error))
    } else {
        (None, 0)
    };
    let reader = Reader {
        standard_error,
        standard_error_mc_error: montecarlo::standard_error_mc_error(&dist),
        bias: dist.mean() - input.estimate,
        bias_mc_error: montecarlo::bias_mc_error(&dist),
        estimate: input.estimate,
        se_hat,
        bca: bca::BcaConstants {
            z0,
            acceleration: input.acceleration.unwrap_or(0.0),
            z0_clamped,
        },
        t_dist,
        dist,
    };
    let intervals: Vec<IntervalResult> = input
        .methods
        .iter()
        .flat_map(|&method| input.levels.iter().map(move |&level| (method, level)))
        .map(|(method, level)| IntervalResult {
            method,
            level,
            endpoints: reader.interval(method, level),
        })
        .collect();
    let bca_levels = intervals
        .iter()
        .filter(|iv| iv.method == Method::Bca)
        .filter_map(|iv| iv.endpoints.quantile_levels)
        .collect();
    Ok(Summary {
        reader,
        kept,
        z0_clamped,
        intervals,
        bca_levels,
        studentized_dropped,
    })
}

/// The studentized replicates t* = (θ* − θ̂)/se* over the kept replicates whose se* is positive
/// and finite, with the count of those left out; `None` when none is left. `scale` is the
/// larger of the sample's two standard errors.
fn studentized(input: &SummaryInput, kept: &[usize], scale: f64) -> (Option<ReplicateDistribution>, u64) {
    // A resample whose values are all equal has a standard error of 0, which rounding can turn
    // into 1e-17; such a se* would blow t* up to 1e15. Anything below this share of the
    // sample's standard error counts as zero.
    let tiny_se = 1e-9 * scale;
    let (mut t, mut tp, mut dropped) = (Vec::new(), Vec::new(), 0);
    for &i in kept {
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
