//! The JSON response of `POST /v1/interval`.

use serde::Serialize;
use serde_json::Value;
use utoipa::ToSchema;

use super::request::Params;
use crate::engine::diagnostics::WarningCode;
use crate::engine::driver::Outcome;
use crate::engine::extras::{Cdf, Histogram};
use crate::engine::interval::Method;
use crate::engine::jackknife::JackknifeKind;
use crate::engine::kernel::SeSource;
use crate::engine::plan::Stop;
use crate::engine::scheme::SchemeSpec;
use crate::engine::statistic::StatisticSpec;

/// One interval: a method at a level.
#[derive(Debug, Clone, Serialize, ToSchema)]
#[schema(as = Interval)]
pub struct IntervalJson {
    pub method: Method,
    #[schema(exclusive_minimum = 0, exclusive_maximum = 1)]
    pub level: f64,
    pub lower: f64,
    pub upper: f64,
    /// Monte Carlo standard error of `lower` due to finite resamples (zero for `"exact"`).
    #[schema(minimum = 0)]
    pub lower_mc_error: f64,
    /// Monte Carlo standard error of `upper` due to finite resamples (zero for `"exact"`).
    #[schema(minimum = 0)]
    pub upper_mc_error: f64,
    /// The replicate quantile levels read for the lower and upper endpoint (percentile, basic,
    /// bca: of the replicates; studentized: of the studentized replicates).
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false, value_type = Option<Vec<f64>>, min_items = 2, max_items = 2)]
    pub quantile_levels: Option<[f64; 2]>,
}

/// A diagnostic warning.
#[derive(Debug, Clone, Serialize, ToSchema)]
#[schema(as = Warning)]
pub struct WarningJson {
    pub code: WarningCode,
    /// What the warning means and what to do, for a person.
    pub message: String,
}

/// How the BCa acceleration's jackknife was computed.
#[derive(Debug, Clone, Serialize, ToSchema)]
#[schema(as = Jackknife)]
pub struct JackknifeJson {
    pub kind: JackknifeKind,
    /// The number of groups of a grouped jackknife.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub groups: Option<usize>,
}

/// Diagnostics of the replicate distribution and of the run.
#[derive(Debug, Clone, Serialize, ToSchema)]
#[schema(as = Diagnostics)]
pub struct DiagnosticsJson {
    /// The BCa bias correction.
    pub z0: f64,
    /// The BCa acceleration (absent where it is not computed).
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub acceleration: Option<f64>,
    pub replicate_skewness: f64,
    pub distinct_replicate_values: usize,
    /// Resamples on which the statistic was undefined (left out of the replicates).
    pub undefined_replicates: u64,
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub jackknife: Option<JackknifeJson>,
    /// With studentized intervals: how each resample's standard error was had, "analytic" or "nested".
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub studentized_standard_error: Option<SeSource>,
    /// With nested studentized intervals: the inner bootstrap size.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub inner_resamples: Option<u64>,
    /// Why drawing stopped.
    pub stop: Stop,
    pub warnings: Vec<WarningJson>,
}

/// The replicate histogram (`"include": ["histogram"]`): `counts[i]` replicates (of weight
/// `mass[i]`) lie between `edges[i]` and `edges[i + 1]`.
#[derive(Debug, Clone, Serialize, ToSchema)]
#[schema(as = Histogram)]
pub struct HistogramJson {
    pub edges: Vec<f64>,
    pub counts: Vec<u64>,
    pub mass: Vec<f64>,
}

/// A downsampled empirical CDF of the replicates (`"include": ["cdf"]`).
#[derive(Debug, Clone, Serialize, ToSchema)]
#[schema(as = Cdf)]
pub struct CdfJson {
    pub values: Vec<f64>,
    pub probabilities: Vec<f64>,
}

/// The response of `POST /v1/interval` (and the `ok` of a batch job).
#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct IntervalResponse {
    /// The statistic on the data.
    pub estimate: f64,
    /// Standard deviation of the replicates (divisor B − 1).
    #[schema(minimum = 0)]
    pub standard_error: f64,
    #[schema(minimum = 0)]
    pub standard_error_mc_error: f64,
    /// Mean of the replicates minus the estimate.
    pub bias: f64,
    #[schema(minimum = 0)]
    pub bias_mc_error: f64,
    /// The estimate minus the bias.
    pub bias_corrected_estimate: f64,
    /// Observations (for aggregated data, the sum of the counts; for columns, the rows).
    pub n: u64,
    /// Resamples drawn (or enumerated, for `"exact"`).
    pub resamples: u64,
    /// False when the time limit stopped drawing early with `"on_time_limit": "partial"`.
    pub complete: bool,
    /// One per method and level.
    pub intervals: Vec<IntervalJson>,
    /// The statistic, normalised: its name and every parameter.
    pub statistic: StatisticSpec,
    /// The scheme.
    pub scheme: SchemeSpec,
    /// The seed used: the request's, or the one the server drew.
    #[schema(maximum = 9007199254740991_u64)]
    pub seed: u64,
    pub diagnostics: DiagnosticsJson,
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub histogram: Option<HistogramJson>,
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub cdf: Option<CdfJson>,
    /// Every replicate value in stream order (`"include": ["replicates"]`).
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub replicates: Option<Vec<f64>>,
    /// With `replicates` and studentized intervals: each replicate's standard error.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub replicate_standard_errors: Option<Vec<f64>>,
    /// With `replicates` and `"exact"` or `"bayesian"`: each replicate's probability weight.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub replicate_probabilities: Option<Vec<f64>>,
    /// Replays this response: send it with the same data instead of the parameters.
    #[schema(pattern = "^rt2\\.")]
    pub token: String,
    /// Milliseconds from receiving the request to the response.
    #[schema(minimum = 0)]
    pub elapsed_ms: f64,
}

impl IntervalJson {
    fn of(iv: &crate::engine::summary::IntervalResult) -> Self {
        IntervalJson {
            method: iv.method,
            level: iv.level,
            lower: iv.endpoints.lower,
            upper: iv.endpoints.upper,
            lower_mc_error: iv.endpoints.lower_mc_error,
            upper_mc_error: iv.endpoints.upper_mc_error,
            quantile_levels: iv.endpoints.quantile_levels.map(|(a, b)| [a, b]),
        }
    }
}

impl DiagnosticsJson {
    fn of(o: &Outcome) -> Self {
        let d = &o.diagnostics;
        DiagnosticsJson {
            z0: d.z0,
            acceleration: d.acceleration,
            replicate_skewness: d.replicate_skewness,
            distinct_replicate_values: d.distinct_replicate_values,
            undefined_replicates: d.undefined_replicates,
            jackknife: d.jackknife.map(|(kind, groups)| JackknifeJson { kind, groups }),
            studentized_standard_error: d.studentized_standard_error,
            inner_resamples: d.inner_resamples,
            stop: o.stop,
            warnings: d
                .warnings
                .iter()
                .map(|w| WarningJson {
                    code: w.code,
                    message: w.message.clone(),
                })
                .collect(),
        }
    }
}

impl IntervalResponse {
    pub fn from_outcome(o: Outcome, params: &Params, seed: u64, token: String, elapsed_ms: f64) -> Self {
        let diagnostics = DiagnosticsJson::of(&o);
        let e = o.extras;
        IntervalResponse {
            estimate: o.estimate,
            standard_error: o.standard_error,
            standard_error_mc_error: o.standard_error_mc_error,
            bias: o.bias,
            bias_mc_error: o.bias_mc_error,
            bias_corrected_estimate: o.bias_corrected_estimate,
            n: o.n[0],
            resamples: o.resamples,
            complete: o.complete,
            intervals: o.intervals.iter().map(IntervalJson::of).collect(),
            statistic: params.statistic.clone(),
            scheme: params.scheme.clone(),
            seed,
            diagnostics,
            histogram: e
                .histogram
                .map(|Histogram { edges, counts, mass }| HistogramJson { edges, counts, mass }),
            cdf: e.cdf.map(|Cdf { values, probabilities }| CdfJson { values, probabilities }),
            replicates: e.replicates,
            replicate_standard_errors: e.replicate_standard_errors,
            replicate_probabilities: e.replicate_probabilities,
            token,
            elapsed_ms,
        }
    }
}

/// The first JSON Pointer in `v` at which a number is missing (serde_json writes NaN and
/// infinities as `null`), or `None` when every number is finite. The contract promises no null
/// numbers; the service checks before answering.
pub fn find_null(v: &Value, at: &mut String) -> bool {
    match v {
        Value::Null => true,
        Value::Array(items) => {
            for (i, it) in items.iter().enumerate() {
                let len = at.len();
                at.push_str(&format!("/{i}"));
                if find_null(it, at) {
                    return true;
                }
                at.truncate(len);
            }
            false
        }
        Value::Object(o) => {
            for (k, it) in o {
                let len = at.len();
                at.push('/');
                at.push_str(k);
                if find_null(it, at) {
                    return true;
                }
                at.truncate(len);
            }
            false
        }
        _ => false,
    }
}
