//! Diagnostics: warnings that tell a person when not to trust the numbers, and what to do.
//!
//! Each warning has a stable machine-readable `code` (never renamed; new ones may be added)
//! and a sentence for a person. The thresholds are rules of thumb, named and explained here so
//! that they can be argued with.

use crate::engine::interval::{Method, ReplicateDistribution};

/// A warning about the result.
#[derive(Debug, Clone, PartialEq)]
pub struct Warning {
    pub code: &'static str,
    pub message: String,
}

impl Warning {
    pub fn new(code: &'static str, message: impl Into<String>) -> Self {
        Warning {
            code,
            message: message.into(),
        }
    }
}

/// Below this many observations any bootstrap interval is rough: the resamples can only
/// reproduce what the few observations show (common practice; Efron & Tibshirani 1993 ch. 6
/// discuss the small-sample limits).
pub const SMALL_SAMPLE: f64 = 10.0;
/// Fewer distinct replicate values than this makes the replicate distribution lumpy, so
/// quantile-based endpoints jump between a few values.
pub const FEW_DISTINCT: usize = 100;
/// |bias| above this share of the standard error is worth acting on (Efron & Tibshirani 1993,
/// §10.3: a bias below 0.25 standard errors can usually be ignored; from memory).
pub const BIAS_SHARE: f64 = 0.25;
/// |skewness| of the replicates above this means the sampling distribution is far from
/// normal, so the normal and basic intervals are suspect (common practice).
pub const STRONG_SKEW: f64 = 1.0;
/// Each tail of a quantile-based interval should hold at least this many replicates
/// (about 1000 resamples for a 95 % interval, Efron & Tibshirani 1993 ch. 19, from memory).
pub const TAIL_REPLICATES: f64 = 25.0;
/// A lag-1 autocorrelation above this many standard errors (1/√n under independence) flags
/// serial correlation; three standard errors keep false alarms near one in 700.
pub const SERIAL_Z: f64 = 3.0;

pub struct Facts<'a> {
    pub n: f64,
    pub dist: &'a ReplicateDistribution,
    pub estimate: f64,
    pub bias: f64,
    pub standard_error: f64,
    pub levels: &'a [f64],
    pub methods: &'a [Method],
    pub undefined: u64,
    pub reads_extremes: bool,
    pub constant_data: bool,
    /// Lag-1 autocorrelation of a one-column sample in the order given, when it was measured.
    pub lag1: Option<f64>,
    pub bca_z0_clamped: bool,
    /// (level, lower adjusted level, upper adjusted level) of each BCa interval.
    pub bca_levels: Vec<(f64, f64, f64)>,
    pub bca_no_acceleration: bool,
    pub studentized_dropped: u64,
}

pub fn assess(f: &Facts) -> Vec<Warning> {
    let mut w = Vec::new();
    let b = f.dist.len() as f64;
    if f.constant_data {
        w.push(Warning::new(
            "constant_data",
            "every value in the data is the same, so every resample is too: the standard error is 0 and every interval has zero width. That says nothing about the spread of new data; gather more varied data.",
        ));
    } else if f.n < SMALL_SAMPLE {
        w.push(Warning::new(
            "small_sample",
            format!(
                "only {} observations: bootstrap intervals from so few are unreliable (they tend to be too narrow). Gather more data; meanwhile prefer bca or studentized and read the interval as rough.",
                f.n
            ),
        ));
    }
    if f.reads_extremes {
        w.push(Warning::new(
            "extreme_quantile",
            "the quantile sits so far in a tail that fewer than 5 observations lie beyond it; the bootstrap cannot see past the most extreme observations, so its intervals for such a quantile are too narrow. Gather more data or report a less extreme quantile.",
        ));
    }
    let distinct = f.dist.distinct();
    if !f.constant_data && distinct < FEW_DISTINCT.min((b / 4.0) as usize).max(2) {
        w.push(Warning::new(
            "few_distinct_replicates",
            format!(
                "the {} replicates take only {distinct} distinct values (ties in the data, a small sample, or a median of lumpy data), so interval endpoints jump between a few values; widen the data, or treat the endpoints as coarse.",
                f.dist.len()
            ),
        ));
    }
    if f.standard_error > 0.0 && f.bias.abs() > BIAS_SHARE * f.standard_error {
        w.push(Warning::new(
            "large_bias",
            format!(
                "the bootstrap bias is {:.2} standard errors; the percentile, basic and normal intervals may be off-centre. Prefer bca, and do not simply subtract the bias: bias_corrected_estimate is noisier than the estimate.",
                f.bias / f.standard_error
            ),
        ));
    }
    let skew = f.dist.skewness();
    if skew.abs() > STRONG_SKEW {
        w.push(Warning::new(
            "skewed_replicates",
            format!("the replicate distribution is strongly skewed (skewness {skew:.2}); the normal and basic intervals assume symmetry. Prefer bca or studentized."),
        ));
    }
    if f.undefined > 0 {
        w.push(Warning::new(
            "undefined_replicates",
            format!(
                "{} resamples gave an undefined statistic (for example a resample with a constant column) and were left out; intervals describe the others. If this is more than a few percent, the statistic is unstable on this data.",
                f.undefined
            ),
        ));
    }
    if f.methods.contains(&Method::Bca) {
        let pushed = f.bca_levels.iter().any(|(_, lo, hi)| *lo * b < 1.0 || (1.0 - hi) * b < 1.0);
        if f.bca_z0_clamped || pushed {
            w.push(Warning::new(
                "extreme_bca_adjustment",
                "the BCa correction is extreme (the bias-correction z0 or the acceleration pushes an endpoint to the end of the replicate range), so that endpoint is only the most extreme replicate. Use more resamples, check the data for outliers, or compare with the studentized interval.",
            ));
        }
        if f.bca_no_acceleration {
            w.push(Warning::new(
                "bca_without_acceleration",
                "the jackknife acceleration could not be computed (fewer than 3 observations, or more than 20 000 distinct values of aggregated data for a statistic without a closed-form jackknife), so BCa used a = 0: a bias-corrected percentile interval.",
            ));
        }
    }
    if !f.dist.is_exact() {
        for level in f.levels {
            let tail = b * (1.0 - level) / 2.0;
            if tail < TAIL_REPLICATES {
                w.push(Warning::new(
                    "too_few_resamples",
                    format!(
                        "at level {level} each tail holds only {tail:.0} of the {} replicates; the endpoints are noisy (see lower_mc_error and upper_mc_error). Use at least {} resamples, or \"auto\".",
                        f.dist.len(),
                        (2.0 * TAIL_REPLICATES / (1.0 - level)).ceil()
                    ),
                ));
                break;
            }
        }
    }
    if let Some(r) = f.lag1 {
        if r > SERIAL_Z / f.n.sqrt() {
            w.push(Warning::new(
                "serial_correlation",
                format!(
                    "the data, in the order given, are serially correlated (lag-1 autocorrelation {r:.2}); resampling single rows then understates the standard error. If the order is time, use a block bootstrap scheme, or aggregate to independent periods."
                ),
            ));
        }
    }
    if f.studentized_dropped > 0 {
        w.push(Warning::new(
            "studentized_degenerate",
            format!(
                "{} resamples had a zero standard error and were left out of the studentized interval (common with ties or tiny samples); treat that interval with care.",
                f.studentized_dropped
            ),
        ));
    }
    w
}

/// Lag-1 autocorrelation of a series, or `None` when it is too short or constant.
pub fn lag1_autocorrelation(x: &[f64]) -> Option<f64> {
    if x.len() < 20 {
        return None;
    }
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    let den: f64 = x.iter().map(|v| (v - m) * (v - m)).sum();
    if den == 0.0 {
        return None;
    }
    let num: f64 = x.windows(2).map(|p| (p[0] - m) * (p[1] - m)).sum();
    Some(num / den)
}
