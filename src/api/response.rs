//! The JSON response of `POST /v1/interval`.

use serde::Serialize;
use serde_json::Value;

use crate::engine::jackknife::JackknifeKind;
use crate::engine::run::{Cdf, Histogram, Outcome};

#[derive(Debug, Clone, Serialize)]
pub struct IntervalJson {
    pub method: &'static str,
    pub level: f64,
    pub lower: f64,
    pub upper: f64,
    pub lower_mc_error: f64,
    pub upper_mc_error: f64,
    /// The replicate quantile levels read for the lower and upper endpoint (percentile, basic,
    /// bca: of the replicates; studentized: of the studentized replicates).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub quantile_levels: Option<[f64; 2]>,
}

#[derive(Debug, Clone, Serialize)]
pub struct WarningJson {
    pub code: &'static str,
    pub message: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct JackknifeJson {
    pub kind: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub groups: Option<usize>,
}

#[derive(Debug, Clone, Serialize)]
pub struct DiagnosticsJson {
    pub z0: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub acceleration: Option<f64>,
    pub replicate_skewness: f64,
    pub distinct_replicate_values: usize,
    pub undefined_replicates: u64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub jackknife: Option<JackknifeJson>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub studentized_standard_error: Option<&'static str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub inner_resamples: Option<usize>,
    /// Why drawing stopped: "done", "time_limit", "auto_target", "auto_limit", "auto_time".
    pub stop: &'static str,
    pub warnings: Vec<WarningJson>,
}

#[derive(Debug, Clone, Serialize)]
pub struct HistogramJson {
    pub edges: Vec<f64>,
    pub counts: Vec<u64>,
    pub mass: Vec<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct CdfJson {
    pub values: Vec<f64>,
    pub probabilities: Vec<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct IntervalResponse {
    pub estimate: f64,
    pub standard_error: f64,
    pub standard_error_mc_error: f64,
    pub bias: f64,
    pub bias_mc_error: f64,
    pub bias_corrected_estimate: f64,
    pub n: u64,
    pub resamples: u64,
    pub complete: bool,
    pub intervals: Vec<IntervalJson>,
    pub statistic: Value,
    pub scheme: Value,
    pub seed: u64,
    pub diagnostics: DiagnosticsJson,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub histogram: Option<HistogramJson>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cdf: Option<CdfJson>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub replicates: Option<Vec<f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub replicate_standard_errors: Option<Vec<f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub replicate_probabilities: Option<Vec<f64>>,
    pub token: String,
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
