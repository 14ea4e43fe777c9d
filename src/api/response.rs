//! The JSON response of `POST /v1/interval`.

use serde::Serialize;
use serde_json::Value;
use utoipa::ToSchema;

use crate::engine::jackknife::JackknifeKind;
use crate::engine::run::{Cdf, Histogram, Outcome};

/// One interval: a method at a level.
#[derive(Debug, Clone, Serialize, ToSchema)]
#[schema(as = Interval)]
pub struct IntervalJson {
    #[schema(value_type = crate::api::openapi::Method)]
    pub method: &'static str,
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
    #[schema(value_type = crate::api::openapi::WarningCode)]
    pub code: &'static str,
    /// What the warning means and what to do, for a person.
    pub message: String,
}

/// How the BCa acceleration's jackknife was computed.
#[derive(Debug, Clone, Serialize, ToSchema)]
#[schema(as = Jackknife)]
pub struct JackknifeJson {
    #[schema(value_type = crate::api::openapi::JackknifeKind, inline)]
    pub kind: &'static str,
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
    #[schema(nullable = false, value_type = Option<crate::api::openapi::StandardErrorSource>, inline)]
    pub studentized_standard_error: Option<&'static str>,
    /// With nested studentized intervals: the inner bootstrap size.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub inner_resamples: Option<usize>,
    /// Why drawing stopped: "done", "time_limit", "auto_target", "auto_limit", "auto_time".
    #[schema(value_type = crate::api::openapi::Stop, inline)]
    pub stop: &'static str,
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
    #[schema(value_type = crate::api::openapi::StatisticObject)]
    pub statistic: Value,
    /// The scheme, with `"auto"` block lengths resolved.
    #[schema(value_type = crate::api::openapi::Scheme)]
    pub scheme: Value,
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
    #[schema(pattern = "^bs1\\.")]
    pub token: String,
    /// Milliseconds from receiving the request to the response.
    #[schema(minimum = 0)]
    pub elapsed_ms: f64,
}

impl IntervalResponse {
    pub fn from_outcome(o: Outcome, statistic: Value, scheme: Value, seed: u64, token: String, elapsed_ms: f64) -> Self {
        let jackknife = o.diagnostics.jackknife.map(|k| JackknifeJson {
            kind: k.name(),
            groups: match k {
                JackknifeKind::Grouped { groups } => Some(groups),
                _ => None,
            },
        });
        IntervalResponse {
            estimate: o.estimate,
            standard_error: o.standard_error,
            standard_error_mc_error: o.standard_error_mc_error,
            bias: o.bias,
            bias_mc_error: o.bias_mc_error,
            bias_corrected_estimate: o.bias_corrected_estimate,
            n: o.n,
            resamples: o.resamples,
            complete: o.complete,
            intervals: o
                .intervals
                .iter()
                .map(|iv| IntervalJson {
                    method: iv.method.name(),
                    level: iv.level,
                    lower: iv.endpoints.lower,
                    upper: iv.endpoints.upper,
                    lower_mc_error: iv.endpoints.lower_mc_error,
                    upper_mc_error: iv.endpoints.upper_mc_error,
                    quantile_levels: iv.endpoints.quantile_levels.map(|(a, b)| [a, b]),
                })
                .collect(),
            statistic,
            scheme,
            seed,
            diagnostics: DiagnosticsJson {
                z0: o.diagnostics.z0,
                acceleration: o.diagnostics.acceleration,
                replicate_skewness: o.diagnostics.replicate_skewness,
                distinct_replicate_values: o.diagnostics.distinct_replicate_values,
                undefined_replicates: o.diagnostics.undefined_replicates,
                jackknife,
                studentized_standard_error: o.diagnostics.studentized_standard_error,
                inner_resamples: o.diagnostics.inner_resamples,
                stop: o.stop.name(),
                warnings: o
                    .diagnostics
                    .warnings
                    .into_iter()
                    .map(|w| WarningJson {
                        code: w.code,
                        message: w.message,
                    })
                    .collect(),
            },
            histogram: o
                .histogram
                .map(|Histogram { edges, counts, mass }| HistogramJson { edges, counts, mass }),
            cdf: o.cdf.map(|Cdf { values, probabilities }| CdfJson { values, probabilities }),
            replicates: o.replicates,
            replicate_standard_errors: o.replicate_standard_errors,
            replicate_probabilities: o.replicate_probabilities,
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
