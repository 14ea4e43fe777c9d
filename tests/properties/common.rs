//! Helpers: the service's interval path in-process, generators of samples and statistics, and
//! the fixed proptest configuration.

use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::Instant;

use bandsaw::api::problem::Problem;
use bandsaw::config::Limits;
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, RngSeed};
use serde_json::{json, Value};

/// A fixed configuration: `cases` cases from a fixed ChaCha seed, nothing persisted, so a run is
/// the same on every machine and CI never meets a case a developer did not.
pub fn config(cases: u32) -> Config {
    Config {
        cases,
        rng_algorithm: RngAlgorithm::ChaCha,
        rng_seed: RngSeed::Fixed(20_261_202),
        failure_persistence: None,
        max_shrink_iters: 200,
        ..Config::default()
    }
}

/// `POST /v1/interval` as the handler runs it (parse, validate, prepare, run, respond), on the
/// current rayon pool, with the server's default limits; `cap` stops the run after that many
/// replicates as if its time ran out (the test hook the HTTP tests reach by a header).
pub fn interval_capped(body: &Value, cap: Option<u64>) -> Result<Value, Problem> {
    let bytes = serde_json::to_vec(body).expect("a body");
    bandsaw::api::interval::compute(&bytes, &Limits::default(), Arc::new(AtomicBool::new(false)), Instant::now(), cap)
}

pub fn interval(body: &Value) -> Result<Value, Problem> {
    interval_capped(body, None)
}

/// The same on a pool of `threads` threads.
pub fn interval_on(threads: usize, body: &Value) -> Result<Value, Problem> {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("a pool")
        .install(|| interval(body))
}

/// A request must either succeed or be refused with a 4xx problem (a statistic undefined on
/// the data, say); anything else fails the property.
pub fn ran(body: &Value) -> Option<Value> {
    match interval(body) {
        Ok(v) => Some(v),
        Err(p) => {
            assert!((400..500).contains(&p.status), "{} {}: {}", p.status, p.title, p.detail);
            None
        }
    }
}

/// One finite value: small integers (many ties), or a signed mantissa times a power of ten from
/// 1e-6 to 1e60 (wide magnitudes, well inside the data limit of 1e75 even scaled by 2^20).
pub fn value() -> impl Strategy<Value = f64> {
    prop_oneof![
        3 => (-5i32..=5).prop_map(f64::from),
        2 => (-1000i32..=1000).prop_map(|k| f64::from(k) / 8.0),
        1 => (-9.99f64..9.99, -6i32..=60).prop_map(|(m, e)| m * 10f64.powi(e)),
    ]
}

/// A sample of 2 to 199 values.
pub fn sample() -> impl Strategy<Value = Vec<f64>> {
    prop::collection::vec(value(), 2..200)
}

/// A sample of moderate magnitudes (|x| < 1e7): for shifts, whose rounding error is relative
/// to the largest magnitude.
pub fn moderate_sample() -> impl Strategy<Value = Vec<f64>> {
    prop::collection::vec(prop_oneof![(-5i32..=5).prop_map(f64::from), -1e6f64..1e6, -1.0f64..1.0], 2..200)
}

/// Statistics of one column that read only the values (not their order) and whose value is a
/// location: x + c shifts it by c, k·x scales it by k.
pub fn location_statistic() -> impl Strategy<Value = Value> {
    prop_oneof![
        Just(json!("mean")),
        Just(json!("median")),
        (0.0f64..=1.0).prop_map(|p| json!({"name": "quantile", "p": p})),
        (0.0f64..0.45).prop_map(|t| json!({"name": "trimmed_mean", "trim": t})),
    ]
}

/// Spread statistics with their degree: k·x scales them by |k|^degree, x + c leaves them.
pub fn spread_statistic() -> impl Strategy<Value = (Value, i32)> {
    prop_oneof![
        prop_oneof![Just("n"), Just("n-1")].prop_map(|d| (json!({"name": "variance", "divisor": d}), 2)),
        prop_oneof![Just("n"), Just("n-1")].prop_map(|d| (json!({"name": "std_dev", "divisor": d}), 1)),
        any::<bool>().prop_map(|z| (json!({"name": "mad", "normalized": z}), 1)),
        Just((json!("iqr"), 1)),
    ]
}

/// Any statistic of one column of these values.
pub fn column_statistic() -> impl Strategy<Value = Value> {
    prop_oneof![
        location_statistic(),
        spread_statistic().prop_map(|(s, _)| s),
        Just(json!("coefficient_of_variation")),
        value().prop_map(|t| json!({"name": "exceedance", "threshold": t})),
    ]
}

pub const METHODS: [&str; 5] = ["percentile", "basic", "normal", "bca", "studentized"];

/// `iid`, or a block scheme (its length chosen from the data, or given).
pub fn scheme() -> impl Strategy<Value = Value> {
    prop_oneof![
        2 => Just(json!({"kind": "iid"})),
        1 => Just(json!({"kind": "moving_block", "block_length": "auto"})),
        1 => Just(json!({"kind": "circular_block", "block_length": 1})),
    ]
}

/// A request for every method at two levels, with a small number of resamples.
pub fn body(data: Value, statistic: &Value, scheme: &Value, seed: u64) -> Value {
    json!({
        "data": data,
        "statistic": statistic,
        "scheme": scheme,
        "resamples": 299,
        "inner_resamples": 20,
        "seed": seed,
        "levels": [0.8, 0.95],
        "methods": METHODS,
    })
}

pub fn f(v: &Value, at: &str) -> f64 {
    v.pointer(at).and_then(Value::as_f64).unwrap_or_else(|| panic!("no number at {at}"))
}

/// Each interval as (method, level, lower, upper).
pub fn intervals(v: &Value) -> Vec<(String, f64, f64, f64)> {
    v["intervals"]
        .as_array()
        .expect("intervals")
        .iter()
        .map(|i| {
            (
                i["method"].as_str().expect("a method").to_string(),
                f(i, "/level"),
                f(i, "/lower"),
                f(i, "/upper"),
            )
        })
        .collect()
}

/// The parts of a response that are numbers of the replicate distribution (not the token,
/// the elapsed time, the warnings or the echoed request).
pub fn numbers(v: &Value) -> Value {
    json!({
        "estimate": v["estimate"],
        "standard_error": v["standard_error"],
        "standard_error_mc_error": v["standard_error_mc_error"],
        "bias": v["bias"],
        "bias_mc_error": v["bias_mc_error"],
        "resamples": v["resamples"],
        "intervals": v["intervals"],
        "z0": v["diagnostics"]["z0"],
        "acceleration": v["diagnostics"]["acceleration"],
    })
}
