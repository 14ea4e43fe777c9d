//! Diagnostics: warnings that tell a person when not to trust the numbers, and what to do.
//!
//! Each warning has a stable machine-readable code (never renamed; new ones may be added) and
//! a sentence for a person. The thresholds are rules of thumb, named and explained here so that
//! they can be argued with. Every warning's text is written here.

use crate::engine::distribution::ReplicateDistribution;
use crate::engine::interval::{Level, Method};
use crate::engine::statistic::binned::Note;

crate::wire_enum! {
    /// A stable, machine-readable warning code.
    pub enum WarningCode {
        /// Fewer than 10 observations: intervals are rough and usually too narrow.
        SmallSample = "small_sample",
        /// Every value is the same: the standard error is 0 and every interval has zero width.
        ConstantData = "constant_data",
        /// A quantile so far in a tail that fewer than 5 observations lie beyond it.
        ExtremeQuantile = "extreme_quantile",
        /// The replicates take few distinct values, so endpoints jump between them.
        FewDistinctReplicates = "few_distinct_replicates",
        /// The bootstrap bias is more than a quarter of the standard error.
        LargeBias = "large_bias",
        /// The replicate distribution is strongly skewed (|skewness| above 1).
        SkewedReplicates = "skewed_replicates",
        /// Some resamples gave an undefined statistic and were left out.
        UndefinedReplicates = "undefined_replicates",
        /// The BCa correction pushes an endpoint to the end of the replicate range.
        ExtremeBcaAdjustment = "extreme_bca_adjustment",
        /// The jackknife acceleration could not be computed, so BCa used a = 0.
        BcaWithoutAcceleration = "bca_without_acceleration",
        /// A tail of a quantile-based interval holds fewer than 25 replicates.
        TooFewResamples = "too_few_resamples",
        /// The data, in the order given, are serially correlated under a scheme that assumes independent rows.
        SerialCorrelation = "serial_correlation",
        /// Some resamples had a zero standard error and were left out of the studentized interval.
        StudentizedDegenerate = "studentized_degenerate",
        /// The time limit stopped drawing early; the result covers the resamples done.
        PartialResult = "partial_result",
        /// "auto" reached the resample or work limit before its Monte Carlo target.
        AutoResampleLimit = "auto_resample_limit",
        /// "auto" reached the time limit before its Monte Carlo target.
        AutoTimeLimit = "auto_time_limit",
        /// With "exact", the nested bootstrap of a studentized interval is still random.
        InexactNestedStudentized = "inexact_nested_studentized",
        /// A comparison has too few runs for any verdict but "inconclusive" at its level.
        TooFewRuns = "too_few_runs",
        /// A quantile of binned data falls above the last edge (in the data, or in resamples), where it is reported as the last edge.
        QuantileInOverflow = "quantile_in_overflow",
        /// The mean of binned data puts each observation at its bin's midpoint.
        GroupedMean = "grouped_mean",
    }
}

/// A warning about the result.
#[derive(Debug, Clone, PartialEq)]
pub struct Warning {
    pub code: WarningCode,
    pub message: String,
}

impl Warning {
    pub fn new(code: WarningCode, message: impl Into<String>) -> Self {
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
/// The shortest series whose lag-1 autocorrelation is looked at.
pub const SERIAL_MIN_ROWS: usize = 20;

/// What the warnings are decided from.
pub struct Facts<'a> {
    pub n: f64,
    pub dist: &'a ReplicateDistribution,
    pub bias: f64,
    pub standard_error: f64,
    pub levels: &'a [Level],
    pub methods: &'a [Method],
    pub undefined: u64,
    pub reads_extremes: bool,
    pub constant_data: bool,
    /// Lag-1 autocorrelation of the rows in the order given, when the scheme assumes they are
    /// independent and it was measured.
    pub lag1: Option<f64>,
    pub bca_z0_clamped: bool,
    /// (lower, upper) adjusted quantile levels of each BCa interval.
    pub bca_levels: Vec<(f64, f64)>,
    pub bca_no_acceleration: bool,
    pub studentized_dropped: u64,
    /// Exact enumeration with a nested (random) studentized standard error.
    pub inexact_nested: bool,
}

/// Every warning the facts call for, in a fixed order.
pub fn assess(f: &Facts) -> Vec<Warning> {
    let checks: [fn(&Facts) -> Option<Warning>; 12] = [
        sample_size,
        extreme_quantile,
        few_distinct,
        large_bias,
        skewed,
        undefined,
        extreme_bca,
        bca_without_acceleration,
        too_few_resamples,
        serial_correlation,
        studentized_degenerate,
        inexact_nested,
    ];
    checks.iter().filter_map(|check| check(f)).collect()
}

fn sample_size(f: &Facts) -> Option<Warning> {
    if f.constant_data {
        Some(Warning::new(
            WarningCode::ConstantData,
            "every value in the data is the same, so every resample is too: the standard error is 0 and every interval has zero width. That says nothing about the spread of new data; gather more varied data.",
        ))
    } else if f.n < SMALL_SAMPLE {
        Some(Warning::new(
            WarningCode::SmallSample,
            format!(
                "only {} observations: bootstrap intervals from so few are unreliable (they tend to be too narrow). Gather more data; meanwhile prefer bca or studentized and read the interval as rough.",
                f.n
            ),
        ))
    } else {
        None
    }
}

fn extreme_quantile(f: &Facts) -> Option<Warning> {
    f.reads_extremes.then(|| {
        Warning::new(
            WarningCode::ExtremeQuantile,
            "the quantile sits so far in a tail that fewer than 5 observations lie beyond it; the bootstrap cannot see past the most extreme observations, so its intervals for such a quantile are too narrow. Gather more data or report a less extreme quantile.",
        )
    })
}

fn few_distinct(f: &Facts) -> Option<Warning> {
    let b = f.dist.len() as f64;
    let distinct = f.dist.distinct();
    (!f.constant_data && distinct < FEW_DISTINCT.min((b / 4.0) as usize).max(2)).then(|| {
        Warning::new(
            WarningCode::FewDistinctReplicates,
            format!(
                "the {} replicates take only {distinct} distinct values (ties in the data, a small sample, or a median of lumpy data), so interval endpoints jump between a few values; widen the data, or treat the endpoints as coarse.",
                f.dist.len()
            ),
        )
    })
}

fn large_bias(f: &Facts) -> Option<Warning> {
    (f.standard_error > 0.0 && f.bias.abs() > BIAS_SHARE * f.standard_error).then(|| {
        Warning::new(
            WarningCode::LargeBias,
            format!(
                "the bootstrap bias is {:.2} standard errors; the percentile, basic and normal intervals may be off-centre. Prefer bca, and do not simply subtract the bias: bias_corrected_estimate is noisier than the estimate.",
                f.bias / f.standard_error
            ),
        )
    })
}

fn skewed(f: &Facts) -> Option<Warning> {
    let skew = f.dist.skewness();
    (skew.abs() > STRONG_SKEW).then(|| {
        Warning::new(
            WarningCode::SkewedReplicates,
            format!("the replicate distribution is strongly skewed (skewness {skew:.2}); the normal and basic intervals assume symmetry. Prefer bca or studentized."),
        )
    })
}

fn undefined(f: &Facts) -> Option<Warning> {
    (f.undefined > 0).then(|| {
        Warning::new(
            WarningCode::UndefinedReplicates,
            format!(
                "{} resamples gave an undefined statistic (for example a resample with a constant column) and were left out; intervals describe the others. If this is more than a few percent, the statistic is unstable on this data.",
                f.undefined
            ),
        )
    })
}

fn extreme_bca(f: &Facts) -> Option<Warning> {
    let b = f.dist.len() as f64;
    let pushed = f.bca_levels.iter().any(|(lo, hi)| *lo * b < 1.0 || (1.0 - hi) * b < 1.0);
    (f.methods.contains(&Method::Bca) && (f.bca_z0_clamped || pushed)).then(|| {
        Warning::new(
            WarningCode::ExtremeBcaAdjustment,
            "the BCa correction is extreme (the bias-correction z0 or the acceleration pushes an endpoint to the end of the replicate range), so that endpoint is only the most extreme replicate. Use more resamples, check the data for outliers, or compare with the studentized interval.",
        )
    })
}

fn bca_without_acceleration(f: &Facts) -> Option<Warning> {
    (f.methods.contains(&Method::Bca) && f.bca_no_acceleration).then(|| {
        Warning::new(
            WarningCode::BcaWithoutAcceleration,
            "the jackknife acceleration could not be computed (fewer than 3 observations; more than 20 000 distinct values of aggregated data for a statistic without a closed-form jackknife; a leave-out value the statistic does not define, such as a ratio whose baseline mean is zero without one observation; or leave-out values so far apart that their spread overflows), so BCa used a = 0: a bias-corrected percentile interval.",
        )
    })
}

fn too_few_resamples(f: &Facts) -> Option<Warning> {
    if f.dist.is_exact() {
        return None;
    }
    let b = f.dist.len() as f64;
    let (level, tail) = f
        .levels
        .iter()
        .map(|level| (level.get(), b * (1.0 - level.get()) / 2.0))
        .find(|(_, tail)| *tail < TAIL_REPLICATES)?;
    Some(Warning::new(
        WarningCode::TooFewResamples,
        format!(
            "at level {level} each tail holds only {tail:.0} of the {} replicates; the endpoints are noisy (see lower_mc_error and upper_mc_error). Use at least {} resamples, or \"auto\".",
            f.dist.len(),
            (2.0 * TAIL_REPLICATES / (1.0 - level)).ceil()
        ),
    ))
}

fn serial_correlation(f: &Facts) -> Option<Warning> {
    let r = f.lag1.filter(|r| *r > SERIAL_Z / f.n.sqrt())?;
    Some(Warning::new(
        WarningCode::SerialCorrelation,
        format!(
            "the data, in the order given, are serially correlated (lag-1 autocorrelation {r:.2}); resampling single rows then understates the standard error. If the order is time, resample blocks of rows: \"scheme\": {{\"kind\": \"stationary_block\", \"mean_block_length\": \"auto\"}}, or aggregate to independent periods."
        ),
    ))
}

fn studentized_degenerate(f: &Facts) -> Option<Warning> {
    (f.studentized_dropped > 0).then(|| {
        Warning::new(
            WarningCode::StudentizedDegenerate,
            format!(
                "{} resamples had a zero standard error and were left out of the studentized interval (common with ties or tiny samples); treat that interval with care.",
                f.studentized_dropped
            ),
        )
    })
}

fn inexact_nested(f: &Facts) -> Option<Warning> {
    f.inexact_nested.then(|| {
        Warning::new(
            WarningCode::InexactNestedStudentized,
            "with \"exact\" the resamples are enumerated, but the studentized interval of this statistic needs a nested bootstrap of each, which is still random: its endpoints carry Monte Carlo error that is not included in lower_mc_error and upper_mc_error (shown as 0). Every other number is exact.",
        )
    })
}

/// The warning for what reading a statistic from bins assumed.
pub fn of_note(note: Note) -> Warning {
    match note {
        Note::QuantileInOverflow { p, last_edge, in_data } => quantile_in_overflow(p, last_edge, in_data),
        Note::GroupedMean => grouped_mean(),
    }
}

/// The warning for a quantile at `p` of binned data that lies above the last edge `last_edge`
/// (`in_data`), or that resamples can put there.
fn quantile_in_overflow(p: f64, last_edge: f64, in_data: bool) -> Warning {
    let where_ = if in_data {
        "of the data lies in the overflow"
    } else {
        "of the data lies below the last edge, but resamples can put it in the overflow"
    };
    Warning::new(
        WarningCode::QuantileInOverflow,
        format!(
            "the {p} quantile {where_}, above the last edge ({last_edge}) at an unknown value: there it is reported as the last edge, a lower bound, so the estimate or the upper ends of the intervals are too low. Add bins above {last_edge} up to the largest values."
        ),
    )
}

/// The warning for a mean read from bins at their midpoints.
fn grouped_mean() -> Warning {
    Warning::new(
        WarningCode::GroupedMean,
        "the mean of binned data counts every observation at its bin's midpoint, so it is off by as much as the observations lean to one side of their bins (at most half the widest occupied bin); the interval covers the midpoints' mean, not this grouping error. Use narrower bins, or the median or a quantile, which bins give more faithfully.",
    )
}

/// The warning for a run that the time limit cut short after `resamples`.
pub fn partial_result(resamples: u64) -> Warning {
    Warning::new(
        WarningCode::PartialResult,
        format!(
            "the time limit passed after {resamples} resamples, so this result covers only those (a prefix of the same streams: rerunning with \"resamples\": {resamples} reproduces it). Raise time_limit_ms or lower resamples for the full run."
        ),
    )
}

/// The warning for an `"auto"` run stopped by the resample limit at `resamples`.
pub fn auto_resample_limit(resamples: u64) -> Warning {
    Warning::new(
        WarningCode::AutoResampleLimit,
        format!("\"auto\" stopped at the server's resample limit ({resamples}) before every endpoint's Monte Carlo error fell below its target share of the standard error."),
    )
}

/// The warning for an `"auto"` run stopped by the time limit at `resamples`.
pub fn auto_time_limit(resamples: u64) -> Warning {
    Warning::new(
        WarningCode::AutoTimeLimit,
        format!("\"auto\" stopped at the time limit after {resamples} resamples, before every endpoint's Monte Carlo error fell below its target share of the standard error."),
    )
}

/// The warning for a comparison whose runs' most lopsided arrangement (two-sided p-value
/// `floor`) is not rare enough to decide at `level`.
pub fn too_few_runs(sizes: crate::engine::verdict::Sizes, floor: f64, level: f64) -> Warning {
    use crate::engine::verdict::{few_runs, num};
    let needed = sizes.runs_for_floor(1.0 - level);
    let unit = if sizes.paired { "pairs" } else { "runs per side" };
    Warning::new(
        WarningCode::TooFewRuns,
        format!(
            "{} even the most lopsided arrangement has a two-sided p-value of {}, above {} (1 − level): the interval's tails rest on too few runs, so the verdict is \"inconclusive\". At least {needed} {unit} can decide at this level.",
            capitalised(&few_runs(sizes)),
            num(floor),
            num(1.0 - level)
        ),
    )
}

/// `s` with its first letter in capitals, to start a sentence.
fn capitalised(s: &str) -> String {
    let mut c = s.chars();
    c.next().map_or(String::new(), |f| f.to_uppercase().chain(c).collect())
}

/// Lag-1 autocorrelation of a series, or `None` when it is too short or constant.
pub fn lag1_autocorrelation(x: &[f64]) -> Option<f64> {
    if x.len() < SERIAL_MIN_ROWS {
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
