//! `POST /v1/interval`: validation (every invalid field at once, each with a JSON Pointer and,
//! where a rule beyond the schema refused it, the rule's name), problem documents, limits, tokens
//! and replay, exact enumeration, constant data, time and work limits.

use std::time::{Duration, Instant};

use bandsaw::api::token::PREFIX;
use serde_json::{json, Value};

use crate::common::{invalid, message_at, ok, pointers, problem, rule_at, without_timing, TestApp};

const MAX_SEED: u64 = (1 << 53) - 1;
const ALL_METHODS: [&str; 5] = ["percentile", "basic", "normal", "bca", "studentized"];

// ---------------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------------

fn warning_codes(v: &Value) -> Vec<String> {
    v["diagnostics"]["warnings"]
        .as_array()
        .map(|a| a.iter().map(|w| w["code"].as_str().unwrap_or("").to_string()).collect())
        .unwrap_or_default()
}

async fn post(app: &TestApp, body: Value) -> (u16, String, Value) {
    app.post("/v1/interval", &body).await
}

async fn post_raw_json(app: &TestApp, body: &str) -> (u16, String, Value) {
    app.post_raw("/v1/interval", "application/json", body.as_bytes().to_vec()).await
}

/// A deterministic, varied (non-constant, few ties) sample of `n` values.
fn sample(n: usize) -> Vec<f64> {
    (0..n).map(|i| ((i * 7919) % 1000) as f64 / 10.0 + (i % 13) as f64 * 0.37).collect()
}

// ---------------------------------------------------------------------------------------------
// a first request
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn healthz_and_a_first_interval() {
    let app = TestApp::spawn().await;
    let (s, _, v) = app.get("/healthz").await;
    assert_eq!(s, 200);
    assert_eq!(v["status"], "ok");
    let v = ok(post(&app, json!({"data": [1.0, 2.0, 3.5, 4.0, 7.5], "seed": 3})).await);
    assert_eq!(v["n"], 5);
    assert_eq!(v["resamples"], 2000);
    assert_eq!(v["seed"], 3);
    assert!(v["token"].as_str().is_some_and(|t| t.starts_with(PREFIX)), "{v}");
}

// ---------------------------------------------------------------------------------------------
// data
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn empty_single_and_missing_data_are_422_at_data() {
    let app = TestApp::spawn().await;
    invalid(post(&app, json!({"data": []})).await, &["/data"]);
    invalid(post(&app, json!({"data": [3.5]})).await, &["/data"]);
    let v = invalid(post(&app, json!({"statistic": "mean"})).await, &["/data"]);
    assert!(message_at(&v, "/data").contains("required"), "{v}");
}

#[tokio::test]
async fn every_non_number_in_data_is_reported_at_once() {
    let app = TestApp::spawn().await;
    invalid(
        post(&app, json!({"data": [1, "x", true, null]})).await,
        &["/data/1", "/data/2", "/data/3"],
    );
}

#[tokio::test]
async fn non_finite_strings_in_data_name_the_index() {
    let app = TestApp::spawn().await;
    for (lit, idx) in [("NaN", 1), ("Infinity", 2), ("-Infinity", 0)] {
        let mut data = vec![json!(1.0), json!(2.0), json!(3.0)];
        data[idx] = json!(lit);
        let ptr = format!("/data/{idx}");
        let v = invalid(post(&app, json!({ "data": data })).await, &[&ptr]);
        let m = message_at(&v, &ptr).to_lowercase();
        assert!(m.contains("finite") || m.contains("nan"), "message for {lit}: {m}");
    }
    // A lone "NaN" is reported at its index (not merely as too few observations).
    invalid(post(&app, json!({"data": ["NaN"]})).await, &["/data/0"]);
}

#[tokio::test]
async fn bare_nan_and_infinity_literals_are_422_at_the_index_not_400() {
    let app = TestApp::spawn().await;
    invalid(post_raw_json(&app, r#"{"data":[1,2,NaN,4]}"#).await, &["/data/2"]);
    invalid(post_raw_json(&app, r#"{"data": [Infinity, 1, 2]}"#).await, &["/data/0"]);
    invalid(post_raw_json(&app, r#"{"data": [1, 2, 3, -Infinity]}"#).await, &["/data/3"]);
    invalid(
        post_raw_json(&app, r#"{"data": [NaN, 2, Infinity, -Infinity]}"#).await,
        &["/data/0", "/data/2", "/data/3"],
    );
}

#[tokio::test]
async fn aggregated_data_with_a_negative_count_points_at_that_count() {
    let app = TestApp::spawn().await;
    invalid(
        post(&app, json!({"data": {"values": [1, 2], "counts": [3, -1]}})).await,
        &["/data/counts/1"],
    );
}

#[tokio::test]
async fn aggregated_data_with_mismatched_lengths_points_at_counts() {
    let app = TestApp::spawn().await;
    let v = invalid(
        post(&app, json!({"data": {"values": [1, 2, 3], "counts": [3, 1]}})).await,
        &["/data/counts"],
    );
    assert_eq!(rule_at(&v, "/data/counts").as_deref(), Some("sample_shape"), "{v}");
}

#[tokio::test]
async fn rows_above_the_server_limit_are_refused_by_the_row_limit_rule() {
    let app = TestApp::spawn_with(|c| c.limits.max_rows = 5).await;
    let v = invalid(post(&app, json!({"data": [1, 2, 3, 4, 5, 6]})).await, &["/data"]);
    assert_eq!(rule_at(&v, "/data").as_deref(), Some("row_limit"), "{v}");
    assert!(message_at(&v, "/data").contains('5'), "the message names the limit: {v}");
    // Aggregated, the limit is on the distinct values, not on the observations.
    let v = ok(post(&app, json!({"data": {"values": [1, 2, 3], "counts": [40, 50, 60]}, "seed": 1})).await);
    assert_eq!(v["n"], 150);
    ok(post(&app, json!({"data": [1, 2, 3, 4, 5], "seed": 1})).await);
}

#[tokio::test]
async fn columns_of_unequal_length_point_under_data_columns() {
    let app = TestApp::spawn().await;
    let v = problem(
        post(&app, json!({"data": {"columns": {"x": [1, 2, 3, 4], "y": [1, 2, 3]}}, "statistic": {"name": "ratio", "numerator": "x", "denominator": "y"}}))
            .await,
        422,
        "invalid-request",
    );
    let ptrs = pointers(&v);
    assert!(!ptrs.is_empty(), "{v}");
    assert!(ptrs.iter().all(|p| p.starts_with("/data/columns/")), "{v}");
    assert!(ptrs.contains(&"/data/columns/y".to_string()), "{v}");
    assert_eq!(rule_at(&v, "/data/columns/y").as_deref(), Some("sample_shape"), "{v}");
}

#[tokio::test]
async fn geometric_mean_points_at_each_non_positive_value() {
    let app = TestApp::spawn().await;
    let v = invalid(
        post(&app, json!({"data": [1.5, 0, 2, -3, 4], "statistic": "geometric_mean"})).await,
        &["/data/1", "/data/3"],
    );
    assert_eq!(rule_at(&v, "/data/1").as_deref(), Some("statistic_domain"), "{v}");
    // Aggregated data: the pointer names the value.
    invalid(
        post(
            &app,
            json!({"data": {"values": [2, -1, 3], "counts": [1, 2, 3]}, "statistic": "geometric_mean"}),
        )
        .await,
        &["/data/values/1"],
    );
}

#[tokio::test]
async fn proportion_points_at_a_value_that_is_not_zero_or_one() {
    let app = TestApp::spawn().await;
    invalid(
        post(&app, json!({"data": [0, 1, 2], "statistic": "proportion"})).await,
        &["/data/2"],
    );
}

#[tokio::test]
async fn ratio_naming_a_missing_column_points_at_the_parameter() {
    let app = TestApp::spawn().await;
    let cols = json!({"columns": {"x": [1, 2, 3, 4], "y": [2, 3, 4, 5]}});
    let v = invalid(
        post(
            &app,
            json!({"data": cols, "statistic": {"name": "ratio", "numerator": "x", "denominator": "z"}}),
        )
        .await,
        &["/statistic/denominator"],
    );
    assert_eq!(rule_at(&v, "/statistic/denominator").as_deref(), Some("column_names"), "{v}");
    invalid(
        post(
            &app,
            json!({"data": cols, "statistic": {"name": "ratio", "numerator": "w", "denominator": "y"}}),
        )
        .await,
        &["/statistic/numerator"],
    );
}

#[tokio::test]
async fn correlation_on_one_column_data_points_at_data() {
    let app = TestApp::spawn().await;
    let v = invalid(
        post(
            &app,
            json!({"data": [1, 2, 3, 4, 5], "statistic": {"name": "correlation", "x": "x", "y": "y"}}),
        )
        .await,
        &["/data"],
    );
    assert_eq!(rule_at(&v, "/data").as_deref(), Some("statistic_shape"), "{v}");
}

#[tokio::test]
async fn aggregated_data_gives_the_same_estimate_as_the_expanded_array() {
    let app = TestApp::spawn().await;
    let values = [1.5, 2.0, 3.25, 7.0];
    let counts = [2u64, 3, 1, 4];
    let expanded: Vec<f64> = values
        .iter()
        .zip(counts)
        .flat_map(|(v, c)| std::iter::repeat_n(*v, c as usize))
        .collect();
    for statistic in ["mean", "median"] {
        let agg = ok(post(
            &app,
            json!({"data": {"values": values, "counts": counts}, "statistic": statistic, "seed": 1}),
        )
        .await);
        let arr = ok(post(&app, json!({"data": expanded, "statistic": statistic, "seed": 1})).await);
        let (a, b) = (agg["estimate"].as_f64().unwrap(), arr["estimate"].as_f64().unwrap());
        assert!(
            (a - b).abs() <= 1e-12 * b.abs().max(1.0),
            "{statistic}: aggregated {a} vs expanded {b}"
        );
        assert_eq!(agg["n"], 10, "n is the sum of the counts: {agg}");
        assert_eq!(arr["n"], 10);
    }
}

// ---------------------------------------------------------------------------------------------
// levels, resamples, statistic, methods, seed, scheme, unknown fields
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn levels_outside_zero_one_are_422_at_their_index() {
    let app = TestApp::spawn().await;
    let data = json!([1, 2, 3, 4, 5]);
    let v = invalid(post(&app, json!({"data": data, "levels": [0.95, 95]})).await, &["/levels/1"]);
    assert!(message_at(&v, "/levels/1").contains("95"), "{v}");
    invalid(post(&app, json!({"data": data, "levels": [0]})).await, &["/levels/0"]);
    invalid(post(&app, json!({"data": data, "levels": [1]})).await, &["/levels/0"]);
    invalid(
        post(&app, json!({"data": data, "levels": [-0.5, 0.9, 1.5]})).await,
        &["/levels/0", "/levels/2"],
    );
    invalid(post(&app, json!({"data": data, "levels": []})).await, &["/levels"]);
}

#[tokio::test]
async fn bad_resamples_are_422_at_resamples() {
    let app = TestApp::spawn_with(|c| c.limits.max_resamples = 1000).await;
    let data = json!([1, 2, 3, 4, 5]);
    // Values the schema refuses: no rule is named.
    for r in [
        json!(0),
        json!(1),
        json!(-5),
        json!(2.5),
        json!("many"),
        json!(null),
        json!([100, 200]),
    ] {
        let v = invalid(post(&app, json!({"data": data, "resamples": r})).await, &["/resamples"]);
        assert_eq!(rule_at(&v, "/resamples"), None, "{r}: {v}");
    }
    // One value in a one-element array (as R sends it) is read as the value, and named there.
    invalid(post(&app, json!({"data": data, "resamples": [1]})).await, &["/resamples/0"]);
    // Above this server's limit: a rule beyond the schema.
    let v = invalid(post(&app, json!({"data": data, "resamples": 1001})).await, &["/resamples"]);
    assert_eq!(rule_at(&v, "/resamples").as_deref(), Some("resample_limit"), "{v}");
    assert!(message_at(&v, "/resamples").contains("1000"), "the message names the limit: {v}");
    // The least number and the limit itself are allowed.
    let v = ok(post(&app, json!({"data": data, "resamples": 2, "seed": 2})).await);
    assert_eq!(v["resamples"], 2);
    let v = ok(post(&app, json!({"data": data, "resamples": 1000, "seed": 2})).await);
    assert_eq!(v["resamples"], 1000);
}

#[tokio::test]
async fn integral_floats_are_accepted_for_whole_number_fields_and_fractions_are_refused() {
    let app = TestApp::spawn().await;
    let data = json!([1.5, 2.25, 3.0, 4.75, 5.5, 7.0]);
    let floats = ok(post(
        &app,
        json!({"data": data, "resamples": 200.0, "seed": 3.0, "inner_resamples": 20.0, "time_limit_ms": 5000.0,
               "methods": ["percentile", "studentized"]}),
    )
    .await);
    let ints = ok(post(
        &app,
        json!({"data": data, "resamples": 200, "seed": 3, "inner_resamples": 20, "time_limit_ms": 5000,
               "methods": ["percentile", "studentized"]}),
    )
    .await);
    assert_eq!(floats["resamples"], 200);
    assert_eq!(floats["seed"], 3);
    assert_eq!(without_timing(floats), without_timing(ints), "200.0 means the same as 200");
    // Aggregated counts, too.
    let v = ok(post(&app, json!({"data": {"values": [1.0, 4.0], "counts": [2.0, 3.0]}, "seed": 1})).await);
    assert_eq!(v["n"], 5);
    assert!((v["estimate"].as_f64().unwrap() - 2.8).abs() < 1e-12, "(2·1 + 3·4) / 5: {v}");
    // A fraction is refused at its pointer, every one at once.
    invalid(
        post(
            &app,
            json!({"data": data, "resamples": 2.5, "seed": 2.5, "inner_resamples": 20.5, "time_limit_ms": 2.5}),
        )
        .await,
        &["/resamples", "/seed", "/inner_resamples", "/time_limit_ms"],
    );
    invalid(
        post(&app, json!({"data": {"values": [1.0, 4.0], "counts": [2.5, 3.0]}})).await,
        &["/data/counts/0"],
    );
}

#[tokio::test]
async fn statistic_errors_point_at_the_name_or_parameter() {
    let app = TestApp::spawn().await;
    let data = json!([1, 2, 3, 4, 5]);
    invalid(post(&app, json!({"data": data, "statistic": "meen"})).await, &["/statistic"]);
    invalid(
        post(&app, json!({"data": data, "statistic": {"name": "meen"}})).await,
        &["/statistic/name"],
    );
    invalid(
        post(&app, json!({"data": data, "statistic": {"name": "quantile"}})).await,
        &["/statistic/p"],
    );
    invalid(
        post(&app, json!({"data": data, "statistic": {"name": "quantile", "p": 1.5}})).await,
        &["/statistic/p"],
    );
    invalid(
        post(&app, json!({"data": data, "statistic": {"name": "trimmed_mean", "trim": "a"}})).await,
        &["/statistic/trim"],
    );
    // An exceedance needs its threshold, a number.
    for threshold in [json!("300ms"), json!(null), json!({"ms": 300})] {
        let v = invalid(
            post(
                &app,
                json!({"data": data, "statistic": {"name": "exceedance", "threshold": threshold}}),
            )
            .await,
            &["/statistic/threshold"],
        );
        assert!(message_at(&v, "/statistic/threshold").contains("number"), "{v}");
    }
    invalid(
        post(&app, json!({"data": data, "statistic": {"name": "exceedance"}})).await,
        &["/statistic/threshold"],
    );
    invalid(
        post(
            &app,
            json!({"data": data, "statistic": {"name": "correlation", "x": "x", "y": "y", "kind": "kendall"}}),
        )
        .await,
        &["/statistic/kind"],
    );
    // A valid quantile is accepted and echoed.
    let v = ok(post(&app, json!({"data": data, "statistic": {"name": "quantile", "p": 0.9}, "seed": 1})).await);
    assert_eq!(v["statistic"], json!({"name": "quantile", "p": 0.9}));
}

/// A parameter the statistic does not take is refused at its own pointer, so that a client can
/// mark the field: `/statistic/p`, not `/statistic/p/p`. The parameters renamed in the
/// restructuring (`ddof`, `scale`) are such parameters now.
#[tokio::test]
async fn an_unknown_statistic_parameter_is_refused_at_its_own_pointer() {
    let app = TestApp::spawn().await;
    let data = json!([1, 2, 3, 4, 5]);
    invalid(
        post(&app, json!({"data": data, "statistic": {"name": "mean", "p": 0.5}})).await,
        &["/statistic/p"],
    );
    invalid(
        post(&app, json!({"data": data, "statistic": {"name": "quantile", "p": 0.5, "q": 1}})).await,
        &["/statistic/q"],
    );
    invalid(
        post(&app, json!({"data": data, "statistic": {"name": "variance", "ddof": 1}})).await,
        &["/statistic/ddof"],
    );
    invalid(
        post(&app, json!({"data": data, "statistic": {"name": "mad", "scale": "normal"}})).await,
        &["/statistic/scale"],
    );
    let (s, _, v) = app
        .post(
            "/v1/batch",
            &json!({"jobs": [{"kind": "interval", "data": data, "statistic": {"name": "mean", "p": 1}}]}),
        )
        .await;
    assert_eq!(s, 200, "{v}");
    assert_eq!(pointers(&v["results"][0]["error"]), ["/jobs/0/statistic/p"], "{v}");
}

#[tokio::test]
async fn variance_takes_a_divisor_and_mad_a_normalized_flag() {
    let app = TestApp::spawn().await;
    let data = json!([1, 2, 3, 4, 5]);
    let estimate = |v: &Value| v["estimate"].as_f64().unwrap();
    // Squared deviations of 1..5 add up to 10: the plug-in variance is 10/5, the unbiased 10/4.
    let plug_in = ok(post(&app, json!({"data": data, "statistic": "variance", "seed": 1})).await);
    assert_eq!(
        plug_in["statistic"],
        json!({"name": "variance", "divisor": "n"}),
        "the default is echoed"
    );
    assert!((estimate(&plug_in) - 2.0).abs() < 1e-12, "{plug_in}");
    let unbiased = ok(post(
        &app,
        json!({"data": data, "statistic": {"name": "variance", "divisor": "n-1"}, "seed": 1}),
    )
    .await);
    assert!((estimate(&unbiased) - 2.5).abs() < 1e-12, "{unbiased}");
    let sd = ok(post(
        &app,
        json!({"data": data, "statistic": {"name": "std_dev", "divisor": "n-1"}, "seed": 1}),
    )
    .await);
    assert!((estimate(&sd) - 2.5f64.sqrt()).abs() < 1e-12, "{sd}");
    // MAD of 1..9 is 2 (median 5, deviations 0,1,1,2,2,3,3,4,4); normalized, times 1.4826.
    let nine = json!([1, 2, 3, 4, 5, 6, 7, 8, 9]);
    let raw = ok(post(&app, json!({"data": nine, "statistic": "mad", "seed": 1})).await);
    assert_eq!(
        raw["statistic"],
        json!({"name": "mad", "normalized": false}),
        "the default is echoed"
    );
    assert!((estimate(&raw) - 2.0).abs() < 1e-12, "{raw}");
    let normal = ok(post(
        &app,
        json!({"data": nine, "statistic": {"name": "mad", "normalized": true}, "seed": 1}),
    )
    .await);
    assert!((estimate(&normal) - 2.0 * 1.4826).abs() < 1e-12, "{normal}");
    // Other values are refused where they stand (the old names: see
    // an_unknown_statistic_parameter_is_refused_at_its_own_pointer).
    for (statistic, at) in [
        (json!({"name": "variance", "divisor": 1}), "/statistic/divisor"),
        (json!({"name": "std_dev", "divisor": "n-2"}), "/statistic/divisor"),
        (json!({"name": "mad", "normalized": "yes"}), "/statistic/normalized"),
    ] {
        let v = invalid(post(&app, json!({"data": data, "statistic": statistic})).await, &[at]);
        assert_eq!(rule_at(&v, at), None, "the schema refuses it: {v}");
    }
}

#[tokio::test]
async fn unknown_or_empty_methods_are_422() {
    let app = TestApp::spawn().await;
    let data = json!([1, 2, 3, 4, 5]);
    invalid(post(&app, json!({"data": data, "methods": ["bootstrap-t"]})).await, &["/methods/0"]);
    invalid(
        post(&app, json!({"data": data, "methods": ["percentile", "bootstrap-t", 7]})).await,
        &["/methods/1", "/methods/2"],
    );
    invalid(post(&app, json!({"data": data, "methods": []})).await, &["/methods"]);
}

#[tokio::test]
async fn seed_range_is_zero_to_two_to_the_53_minus_one() {
    let app = TestApp::spawn().await;
    let data = json!([1, 2, 3, 4, 5]);
    invalid(post(&app, json!({"data": data, "seed": 9007199254740992u64})).await, &["/seed"]);
    invalid(post(&app, json!({"data": data, "seed": -1})).await, &["/seed"]);
    invalid(post(&app, json!({"data": data, "seed": 1.5})).await, &["/seed"]);
    invalid(post(&app, json!({"data": data, "seed": "7"})).await, &["/seed"]);
    let v = ok(post(&app, json!({"data": data, "seed": 9007199254740991u64})).await);
    assert_eq!(v["seed"].as_u64(), Some(MAX_SEED), "{v}");
    let v = ok(post(&app, json!({"data": data, "seed": 0})).await);
    assert_eq!(v["seed"].as_u64(), Some(0), "{v}");
}

#[tokio::test]
async fn several_invalid_fields_are_reported_in_one_problem() {
    let app = TestApp::spawn().await;
    let v = invalid(
        post(
            &app,
            json!({"data": [1, 2, 3, 4], "levels": [95], "methods": ["bootstrap-t"], "seed": -3}),
        )
        .await,
        &["/levels/0", "/methods/0", "/seed"],
    );
    assert!(v["detail"].as_str().unwrap().contains('3'), "the detail counts the fields: {v}");
    // Data errors and parameter errors together, too.
    invalid(
        post(&app, json!({"data": [1, "x"], "statistic": "meen", "resamples": 0, "level": 0.9})).await,
        &["/data/1", "/statistic", "/resamples", "/level"],
    );
}

#[tokio::test]
async fn an_unknown_top_level_field_is_refused() {
    let app = TestApp::spawn().await;
    let v = invalid(post(&app, json!({"data": [1, 2, 3, 4], "level": [0.9]})).await, &["/level"]);
    assert!(
        message_at(&v, "/level").contains("levels"),
        "the message lists the known fields: {v}"
    );
}

#[tokio::test]
async fn unsupported_and_unknown_schemes_point_at_scheme_kind() {
    let app = TestApp::spawn().await;
    let data = json!([1, 2, 3, 4, 5]);
    invalid(
        post(&app, json!({"data": data, "scheme": {"kind": "nonsense"}})).await,
        &["/scheme/kind"],
    );
    invalid(post(&app, json!({"data": data, "scheme": {}})).await, &["/scheme/kind"]);
    // The message lists the schemes there are.
    let v = invalid(
        post(&app, json!({"data": data, "scheme": {"kind": "stationary"}})).await,
        &["/scheme/kind"],
    );
    let m = message_at(&v, "/scheme/kind");
    for kind in ["iid", "bayesian", "moving_block", "circular_block", "stationary_block"] {
        assert!(m.contains(kind), "{m}");
    }
    let v = ok(post(&app, json!({"data": data, "scheme": {"kind": "bayesian"}, "seed": 4})).await);
    assert_eq!(v["scheme"]["kind"], "bayesian");
}

// ---------------------------------------------------------------------------------------------
// body, media type, routes
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn malformed_json_is_400() {
    let app = TestApp::spawn().await;
    let v = problem(post_raw_json(&app, r#"{"data": [1,2"#).await, 400, "malformed-json");
    assert!(v.get("errors").is_none_or(|e| e.as_array().is_some_and(|a| a.is_empty())), "{v}");
    problem(post_raw_json(&app, "").await, 400, "malformed-json");
}

/// API.md's error table: 400 `malformed-json` when "the body is not JSON, or not an object".
#[tokio::test]
async fn a_json_body_that_is_not_an_object_is_400_malformed_json() {
    let app = TestApp::spawn().await;
    for body in ["[1,2]", "42", "\"data\"", "null"] {
        problem(post_raw_json(&app, body).await, 400, "malformed-json");
    }
}

#[tokio::test]
async fn a_non_json_content_type_is_415() {
    let app = TestApp::spawn().await;
    problem(
        app.post_raw("/v1/interval", "text/plain", br#"{"data": [1, 2, 3]}"#.to_vec()).await,
        415,
        "unsupported-media-type",
    );
    // A missing content type is not JSON either.
    let resp = app
        .client
        .post(format!("{}/v1/interval", app.base))
        .body(r#"{"data": [1, 2, 3]}"#)
        .send()
        .await
        .expect("request");
    problem(TestApp::read(resp).await, 415, "unsupported-media-type");
    // application/json with parameters is JSON.
    ok(app
        .post_raw(
            "/v1/interval",
            "application/json; charset=utf-8",
            br#"{"data": [1, 2, 3], "seed": 1}"#.to_vec(),
        )
        .await);
}

#[tokio::test]
async fn a_body_over_the_limit_is_413() {
    let app = TestApp::spawn_with(|c| c.max_body_bytes = 1000).await;
    // Valid JSON of at least 5000 bytes.
    let values: Vec<String> = (0..1000).map(|i| format!("{}.5", i % 10)).collect();
    let mut body = format!("{{\"data\": [{}]", values.join(", "));
    while body.len() < 4999 {
        body.push(' ');
    }
    body.push('}');
    assert!(body.len() >= 5000);
    assert!(serde_json::from_str::<Value>(&body).is_ok(), "the oversize body is valid JSON");
    let v = problem(post_raw_json(&app, &body).await, 413, "body-too-large");
    assert!(v["detail"].as_str().unwrap().contains("1000"), "the detail names the limit: {v}");
    // Under the limit the same server answers.
    ok(post(&app, json!({"data": [1, 2, 3, 4], "seed": 1})).await);
}

#[tokio::test]
async fn an_unknown_route_is_a_404_problem() {
    let app = TestApp::spawn().await;
    problem(app.get("/v1/nowhere").await, 404, "not-found");
    problem(app.post("/v2/interval", &json!({"data": [1, 2, 3]})).await, 404, "not-found");
}

// ---------------------------------------------------------------------------------------------
// tokens and replay
// ---------------------------------------------------------------------------------------------

/// Invented: hourly orders of a web shop over 12 days, in time order, with a daily rhythm and
/// slow drift (autocorrelated from hour to hour).
fn hourly_orders() -> Vec<f64> {
    (0..288)
        .map(|h| {
            let hour = (h % 24) as f64;
            let rhythm = 40.0 + 25.0 * (std::f64::consts::PI * (hour - 6.0) / 12.0).sin().max(0.0);
            let drift = 6.0 * ((h as f64) / 37.0).sin();
            (rhythm + drift + ((h * 7919) % 11) as f64 - 5.0).round()
        })
        .collect()
}

#[tokio::test]
async fn every_block_scheme_resolves_auto_and_its_token_replays() {
    let app = TestApp::spawn().await;
    let data = hourly_orders();
    for (kind, field) in [
        ("moving_block", "block_length"),
        ("circular_block", "block_length"),
        ("stationary_block", "mean_block_length"),
    ] {
        let v = ok(post(
            &app,
            json!({"data": data, "scheme": {"kind": kind, field: "auto"}, "seed": 8, "resamples": 500}),
        )
        .await);
        let length = v["scheme"][field]
            .as_f64()
            .unwrap_or_else(|| panic!("{kind}: resolved {}", v["scheme"]));
        assert!(length > 1.0, "autocorrelated hours want blocks: {kind} {length}");
        assert_eq!(v["diagnostics"]["jackknife"]["kind"], "blocks", "{v}");
        let codes: Vec<&Value> = v["diagnostics"]["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|w| &w["code"])
            .collect();
        assert!(!codes.contains(&&json!("serial_correlation")), "{kind}: {v}");
        let again = ok(post(&app, json!({"data": data, "token": v["token"]})).await);
        assert_eq!(without_timing(again), without_timing(v.clone()), "{kind}: replay differs");
        // Omitted, the length is "auto".
        let omitted = ok(post(&app, json!({"data": data, "scheme": {"kind": kind}, "seed": 8, "resamples": 500})).await);
        assert_eq!(omitted["scheme"], v["scheme"]);
    }
    // The same hours under iid: the warning names the scheme to use.
    let v = ok(post(&app, json!({"data": data, "seed": 8})).await);
    let warning = v["diagnostics"]["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|w| w["code"] == "serial_correlation")
        .cloned();
    assert!(
        warning.is_some_and(|w| w["message"].as_str().unwrap().contains("stationary_block")),
        "{v}"
    );
}

#[tokio::test]
async fn block_schemes_refuse_what_does_not_fit_them() {
    let app = TestApp::spawn().await;
    let data = json!([3, 5, 4, 6, 5, 7]);
    let refused = |v: &Value, at: &str, rule: &str| assert_eq!(rule_at(v, at).as_deref(), Some(rule), "{v}");
    let v = invalid(
        post(&app, json!({"data": data, "scheme": {"kind": "moving_block", "block_length": 9}})).await,
        &["/scheme"],
    );
    refused(&v, "/scheme", "block_length");
    assert!(message_at(&v, "/scheme").contains("longer than half the series of 6 rows"), "{v}");
    let v = invalid(
        post(
            &app,
            json!({"data": data, "scheme": {"kind": "circular_block", "block_length": 2.5}}),
        )
        .await,
        &["/scheme"],
    );
    refused(&v, "/scheme", "block_length");
    for bad in [json!(0), json!("long"), json!(-2)] {
        invalid(
            post(
                &app,
                json!({"data": data, "scheme": {"kind": "stationary_block", "mean_block_length": bad}}),
            )
            .await,
            &["/scheme/mean_block_length"],
        );
    }
    let agg = json!({"values": [1, 2], "counts": [3, 4]});
    let v = invalid(
        post(&app, json!({"data": agg, "scheme": {"kind": "circular_block", "block_length": 2}})).await,
        &["/scheme"],
    );
    refused(&v, "/scheme", "scheme_needs_rows");
    let v = invalid(
        post(
            &app,
            json!({"data": data, "scheme": {"kind": "moving_block"}, "methods": ["bca", "studentized"]}),
        )
        .await,
        &["/methods/1"],
    );
    refused(&v, "/methods/1", "studentized_not_by_blocks");
    let v = invalid(
        post(
            &app,
            json!({"data": data, "scheme": {"kind": "moving_block"}, "resamples": "exact"}),
        )
        .await,
        &["/resamples"],
    );
    refused(&v, "/resamples", "exact_needs_iid");
}

#[tokio::test]
async fn stratified_and_cluster_schemes_read_labels_beside_the_rows() {
    let app = TestApp::spawn().await;
    // Invented: minutes to first reply on support tickets, by channel (strata) and by
    // customer account (clusters), strings and integers alike.
    let data = json!([12, 30, 8, 45, 22, 17, 60, 9, 14, 33, 27, 41]);
    let strata = json!(["chat", "mail", "chat", "mail", "chat", "phone", "mail", "phone", "chat", "mail", "phone", "phone"]);
    let clusters = json!([101, 101, 102, 102, 103, 103, 104, 104, 105, 105, 106, 106]);
    for scheme in [
        json!({"kind": "stratified", "strata": strata}),
        json!({"kind": "cluster", "clusters": clusters}),
    ] {
        let v = ok(post(&app, json!({"data": data, "scheme": scheme, "seed": 4, "resamples": 800})).await);
        assert_eq!(v["scheme"], scheme, "{v}");
        let again = ok(post(&app, json!({"data": data, "token": v["token"]})).await);
        assert_eq!(without_timing(again), without_timing(v.clone()), "{scheme}: replay differs");
    }
    let v = ok(post(
        &app,
        json!({"data": data, "scheme": {"kind": "cluster", "clusters": clusters}, "seed": 4}),
    )
    .await);
    assert_eq!(v["diagnostics"]["jackknife"], json!({"kind": "clusters", "groups": 6}), "{v}");
}

#[tokio::test]
async fn bad_labels_are_refused_at_their_field_with_a_way_out() {
    let app = TestApp::spawn().await;
    let data = json!([3, 5, 4, 6, 5, 7]);
    let refused = |v: &Value, at: &str, rule: &str| assert_eq!(rule_at(v, at).as_deref(), Some(rule), "{v}");
    let v = invalid(
        post(
            &app,
            json!({"data": data, "scheme": {"kind": "stratified", "strata": [1, 1, 2, 2, 2]}}),
        )
        .await,
        &["/scheme/strata"],
    );
    refused(&v, "/scheme/strata", "scheme_labels");
    assert!(message_at(&v, "/scheme/strata").contains("5 labels for 6 rows"), "{v}");
    let v = invalid(
        post(
            &app,
            json!({"data": data, "scheme": {"kind": "stratified", "strata": ["a", "a", "b", "b", "b", "c"]}}),
        )
        .await,
        &["/scheme/strata"],
    );
    assert!(message_at(&v, "/scheme/strata").contains("a stratum of one row"), "{v}");
    let v = invalid(
        post(
            &app,
            json!({"data": data, "scheme": {"kind": "cluster", "clusters": [7, 7, 7, 7, 7, 7]}}),
        )
        .await,
        &["/scheme/clusters"],
    );
    assert!(message_at(&v, "/scheme/clusters").contains("one cluster"), "{v}");
    invalid(
        post(
            &app,
            json!({"data": data, "scheme": {"kind": "cluster", "clusters": [1, 2, true, 2, 1.5, 2]}}),
        )
        .await,
        &["/scheme/clusters/2", "/scheme/clusters/4"],
    );
    invalid(
        post(&app, json!({"data": data, "scheme": {"kind": "cluster"}})).await,
        &["/scheme/clusters"],
    );
    let agg = json!({"values": [1, 2], "counts": [3, 4]});
    let v = invalid(
        post(&app, json!({"data": agg, "scheme": {"kind": "stratified", "strata": [1, 2]}})).await,
        &["/scheme"],
    );
    refused(&v, "/scheme", "scheme_needs_rows");
    // The studentized interval under labels: its inner resamples by the same scheme.
    let v = ok(post(
        &app,
        json!({"data": data, "scheme": {"kind": "cluster", "clusters": [1, 1, 2, 2, 3, 3]}, "methods": ["studentized"], "seed": 2, "resamples": 300}),
    )
    .await);
    assert_eq!(v["diagnostics"]["studentized_standard_error"], "nested", "{v}");
}

#[tokio::test]
async fn a_token_replays_to_an_identical_response() {
    let app = TestApp::spawn().await;
    let data = sample(40);
    let first = ok(post(
        &app,
        json!({"data": data, "seed": 12345, "include": ["replicates"], "methods": ALL_METHODS, "levels": [0.9, 0.95], "resamples": 1000}),
    )
    .await);
    assert_eq!(
        first["intervals"].as_array().unwrap().len(),
        10,
        "five methods × two levels: {first}"
    );
    assert_eq!(first["replicates"].as_array().unwrap().len(), 1000);
    let token = first["token"].as_str().expect("a token").to_string();
    assert!(token.starts_with(PREFIX), "{token}");

    let again = ok(post(&app, json!({"data": data, "token": token})).await);
    assert_eq!(without_timing(again), without_timing(first.clone()), "replay differs");

    // The token on other data is a conflict.
    let mut other = data.clone();
    other[3] += 1.0;
    problem(post(&app, json!({"data": other, "token": token})).await, 409, "data-mismatch");

    // A token with parameters it stands in for is refused at each of them, by the rule.
    let v = invalid(post(&app, json!({"data": data, "token": token, "seed": 1})).await, &["/seed"]);
    assert_eq!(rule_at(&v, "/seed").as_deref(), Some("token_replaces_parameters"), "{v}");
    let v = invalid(
        post(&app, json!({"data": data, "token": token, "seed": 1, "levels": [0.8]})).await,
        &["/seed", "/levels"],
    );
    assert_eq!(rule_at(&v, "/levels").as_deref(), Some("token_replaces_parameters"), "{v}");

    // Garbage tokens break the token rule; a token of the wrong type breaks the schema.
    for garbage in ["abc".to_string(), format!("{PREFIX}!!!"), "bs1.eyJ2IjoxfQ".to_string()] {
        let v = invalid(post(&app, json!({"data": data, "token": garbage})).await, &["/token"]);
        assert_eq!(rule_at(&v, "/token").as_deref(), Some("token_valid"), "{garbage}: {v}");
    }
    let v = invalid(post(&app, json!({"data": data, "token": 42})).await, &["/token"]);
    assert_eq!(rule_at(&v, "/token"), None, "{v}");
}

#[tokio::test]
async fn without_a_seed_the_server_draws_one_and_its_token_replays() {
    let app = TestApp::spawn().await;
    let data = sample(25);
    let first = ok(post(&app, json!({"data": data, "statistic": "median", "resamples": 500})).await);
    let seed = first["seed"].as_u64().expect("a seed in the response");
    assert!(seed <= MAX_SEED, "seed {seed} is above 2^53 − 1");
    let token = first["token"].as_str().unwrap();
    let again = ok(post(&app, json!({"data": data, "token": token})).await);
    assert_eq!(without_timing(again), without_timing(first.clone()));
    // And the same seed given explicitly gives the same result.
    let explicit = ok(post(&app, json!({"data": data, "statistic": "median", "resamples": 500, "seed": seed})).await);
    assert_eq!(explicit["intervals"], first["intervals"]);
    assert_eq!(explicit["standard_error"], first["standard_error"]);
}

#[tokio::test]
async fn tokens_replay_identically_for_auto_exact_bayesian_aggregated_and_columns() {
    let app = TestApp::spawn().await;
    let requests = [
        json!({"data": sample(30), "resamples": "auto", "seed": 3, "methods": ALL_METHODS}),
        json!({"data": [1, 2, 3, 4, 5], "resamples": "exact", "methods": ALL_METHODS, "include": ["replicates", "histogram", "cdf"]}),
        json!({"data": {"values": [1, 2, 3], "counts": [3, 0, 2]}, "statistic": "median", "seed": 5, "scheme": {"kind": "bayesian"}}),
        json!({
            "data": {"columns": {"x": [1, 2, 3, 4, 5, 6], "y": [2, 1, 4, 3, 6, 7]}},
            "statistic": {"name": "correlation", "x": "x", "y": "y", "kind": "spearman"},
            "seed": 5, "methods": ALL_METHODS, "resamples": 200
        }),
    ];
    for req in requests {
        let first = ok(post(&app, req.clone()).await);
        let again = ok(post(&app, json!({"data": req["data"], "token": first["token"]})).await);
        assert_eq!(without_timing(again), without_timing(first), "replay of {req}");
    }
}

// ---------------------------------------------------------------------------------------------
// exact enumeration, constant data
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn exact_mean_standard_error_is_the_plug_in_variance_over_n() {
    let app = TestApp::spawn().await;
    let v = ok(post(&app, json!({"data": [1, 2, 3, 4, 5], "resamples": "exact", "statistic": "mean"})).await);
    // C(2n − 1, n) = C(9, 5) distinct resamples.
    assert_eq!(v["resamples"], 126, "{v}");
    assert_eq!(v["complete"], true);
    let intervals = v["intervals"].as_array().unwrap();
    assert!(!intervals.is_empty());
    for iv in intervals {
        assert_eq!(iv["lower_mc_error"].as_f64(), Some(0.0), "{iv}");
        assert_eq!(iv["upper_mc_error"].as_f64(), Some(0.0), "{iv}");
    }
    // Plug-in variance of 1..5 is 2, so the exact bootstrap SE of the mean is sqrt(2/5).
    let se = v["standard_error"].as_f64().unwrap();
    assert!(
        (se - (2.0f64 / 5.0).sqrt()).abs() < 1e-12,
        "standard_error {se} vs {}",
        (0.4f64).sqrt()
    );
    assert!(
        v["bias"].as_f64().unwrap().abs() < 1e-12,
        "the mean is unbiased under exact enumeration: {v}"
    );
}

#[tokio::test]
async fn exact_is_refused_for_large_samples_and_the_bayesian_scheme() {
    let app = TestApp::spawn().await;
    let v = invalid(post(&app, json!({"data": sample(20), "resamples": "exact"})).await, &["/resamples"]);
    assert!(message_at(&v, "/resamples").contains("exact"), "{v}");
    assert_eq!(rule_at(&v, "/resamples").as_deref(), Some("exact_too_many"), "{v}");
    let v = invalid(
        post(
            &app,
            json!({"data": [1, 2, 3, 4, 5], "resamples": "exact", "scheme": {"kind": "bayesian"}}),
        )
        .await,
        &["/resamples"],
    );
    assert_eq!(rule_at(&v, "/resamples").as_deref(), Some("exact_needs_iid"), "{v}");
}

#[tokio::test]
async fn constant_data_gives_degenerate_intervals_and_a_warning() {
    let app = TestApp::spawn().await;
    let v = ok(post(
        &app,
        json!({"data": vec![5; 12], "methods": ALL_METHODS, "levels": [0.9, 0.95], "seed": 8}),
    )
    .await);
    assert_eq!(v["estimate"].as_f64(), Some(5.0), "{v}");
    assert_eq!(v["standard_error"].as_f64(), Some(0.0), "{v}");
    let intervals = v["intervals"].as_array().unwrap();
    assert_eq!(intervals.len(), 10, "{v}");
    for iv in intervals {
        assert_eq!(iv["lower"].as_f64(), Some(5.0), "{iv}");
        assert_eq!(iv["upper"].as_f64(), Some(5.0), "{iv}");
    }
    assert!(warning_codes(&v).iter().any(|c| c == "constant_data"), "warnings: {v}");
}

// ---------------------------------------------------------------------------------------------
// time and work limits
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn a_time_limit_fails_fast_by_default_and_a_partial_result_is_a_prefix() {
    let app = TestApp::spawn().await;
    let data = sample(2000);
    let heavy = json!({"data": data, "resamples": 1_000_000, "statistic": "median", "seed": 77, "time_limit_ms": 300});

    let began = Instant::now();
    let v = problem(post(&app, heavy.clone()).await, 503, "time-limit");
    assert!(began.elapsed() < Duration::from_secs(2), "the 503 took {:?}", began.elapsed());
    assert!(v["detail"].as_str().unwrap().contains("300 ms"), "{v}");

    let mut partial_req = heavy.clone();
    partial_req["on_time_limit"] = json!("partial");
    let began = Instant::now();
    let partial = ok(post(&app, partial_req).await);
    assert!(
        began.elapsed() < Duration::from_secs(2),
        "the partial result took {:?}",
        began.elapsed()
    );
    assert_eq!(partial["complete"], false, "{partial}");
    assert!(warning_codes(&partial).iter().any(|c| c == "partial_result"), "warnings: {partial}");
    let k = partial["resamples"].as_u64().unwrap();
    assert!((1..1_000_000).contains(&k), "k = {k}");

    // The partial result is the prefix of the same streams: asking for k resamples reproduces it.
    let full = ok(post(&app, json!({"data": data, "resamples": k, "statistic": "median", "seed": 77})).await);
    assert_eq!(full["complete"], true);
    assert_eq!(full["resamples"].as_u64(), Some(k));
    assert_eq!(full["intervals"], partial["intervals"]);
    assert_eq!(full["estimate"], partial["estimate"]);
    assert_eq!(full["standard_error"], partial["standard_error"]);

    // The partial result's token replays to the same partial result.
    let replay = ok(post(&app, json!({"data": data, "token": partial["token"]})).await);
    assert_eq!(without_timing(replay), without_timing(partial));
}

#[tokio::test]
async fn the_work_limit_is_refused_before_any_work() {
    let app = TestApp::spawn_with(|c| c.limits.work_limit = 1e6).await;
    let began = Instant::now();
    let v = problem(
        post(&app, json!({"data": sample(2000), "resamples": 2000, "seed": 1})).await,
        422,
        "work-limit",
    );
    assert!(began.elapsed() < Duration::from_secs(1), "the 422 took {:?}", began.elapsed());
    let detail = v["detail"].as_str().unwrap();
    assert!(
        detail.contains("limit") && detail.contains("1.000e6"),
        "the detail names the limit: {detail}"
    );
    // Within the limit the same server answers.
    ok(post(&app, json!({"data": sample(200), "resamples": 2000, "seed": 1})).await);
}

// ---------------------------------------------------------------------------------------------
// Regressions: server bugs these tests once found
// ---------------------------------------------------------------------------------------------

/// API.md: "Every error is an RFC 9457 problem document". A wrong method on a known route is an
/// error too.
#[tokio::test]
async fn a_wrong_method_on_a_known_route_is_a_405_problem() {
    let app = TestApp::spawn().await;
    problem(app.get("/v1/interval").await, 405, "method-not-allowed");
}

/// Finite JSON numbers are valid data; the answer is a result or a 422, never a 500.
#[tokio::test]
async fn huge_finite_values_give_a_result_or_a_422_never_a_500() {
    let app = TestApp::spawn().await;
    let (s, ct, v) = post(&app, json!({"data": [1e308, -1e308, 1e308], "seed": 1})).await;
    // bandsaw refuses magnitudes above 1e75 (variances of such data would overflow), naming each.
    assert_eq!(s, 422, "{v}");
    assert_eq!(ct, "application/problem+json");
    assert_eq!(pointers(&v), vec!["/data/0", "/data/1", "/data/2"]);
}

/// `target_mc_error` only applies with `"resamples": "auto"`; the server refuses it beside a
/// number of resamples, but silently ignores it when `resamples` is absent (default 2000).
#[tokio::test]
async fn target_mc_error_without_auto_resamples_is_refused() {
    let app = TestApp::spawn().await;
    let data = json!([1, 2, 3, 4, 5]);
    for body in [
        json!({"data": data, "resamples": 2000, "target_mc_error": 0.01}),
        json!({"data": data, "target_mc_error": 0.01}),
    ] {
        let v = invalid(post(&app, body).await, &["/target_mc_error"]);
        assert_eq!(rule_at(&v, "/target_mc_error").as_deref(), Some("target_needs_auto"), "{v}");
    }
    // With "auto" it applies.
    let v = ok(post(&app, json!({"data": data, "resamples": "auto", "target_mc_error": 0.05, "seed": 1})).await);
    assert_eq!(v["complete"], true, "{v}");
}

/// A token is base64 of JSON, so an edited one must meet the same limits as a request.
#[tokio::test]
async fn an_edited_token_is_held_to_the_request_limits() {
    use base64::engine::general_purpose::URL_SAFE_NO_PAD;
    use base64::Engine as _;
    let app = TestApp::spawn_with(|c| c.limits.max_resamples = 5000).await;
    let data = json!([3.0, 1.5, 4.25, 1.0, 5.5, 9.0, 2.75]);
    let first = ok(post(&app, json!({"data": data, "seed": 9})).await);
    let token = first["token"].as_str().unwrap();
    let original: Value = serde_json::from_slice(&URL_SAFE_NO_PAD.decode(token.strip_prefix(PREFIX).unwrap()).unwrap()).unwrap();
    assert_eq!(original["drawn"], 2000, "{original}");
    assert_eq!(original["params"]["resamples"], 2000, "{original}");
    let reencode = |b: &Value| format!("{PREFIX}{}", URL_SAFE_NO_PAD.encode(serde_json::to_vec(b).unwrap()));
    let edits: [(&str, Value); 4] = [
        // One resample (a request needs at least 2).
        ("/params/resamples", json!(1)),
        // More resamples than this server allows.
        ("/params/resamples", json!(6000)),
        // A seed above 2^53 − 1.
        ("/seed", json!(MAX_SEED + 1)),
        // Too few inner resamples (a request needs at least 10).
        ("/params/inner_resamples", json!(5)),
    ];
    for (at, value) in edits {
        let mut body = original.clone();
        *body.pointer_mut(at).unwrap() = value;
        let v = invalid(post(&app, json!({"data": data, "token": reencode(&body)})).await, &["/token"]);
        assert_eq!(rule_at(&v, "/token").as_deref(), Some("token_valid"), "{at}: {v}");
    }
    // Re-encoded as it was, it replays.
    let again = ok(post(&app, json!({"data": data, "token": reencode(&original)})).await);
    assert_eq!(without_timing(again), without_timing(first));
    // A token of an earlier generator is refused, and the message says which generator differs.
    let mut old = original.clone();
    old["generator"] = json!("chacha8-stream-per-replicate-v2");
    let v = invalid(post(&app, json!({"data": data, "token": reencode(&old)})).await, &["/token"]);
    let message = message_at(&v, "/token");
    assert!(message.contains("generator chacha8-stream-per-replicate-v2;"), "{message}");
    assert!(
        message.contains(&format!("generator {})", original["generator"].as_str().unwrap())),
        "{message}"
    );
}

/// The bounds of a request's lists, and the resample limit, hold for a token's parameters and
/// for the number of resamples it says were drawn, too.
#[tokio::test]
async fn an_edited_token_is_held_to_the_list_bounds_and_the_resample_limit() {
    use base64::engine::general_purpose::URL_SAFE_NO_PAD;
    use base64::Engine as _;
    let app = TestApp::spawn_with(|c| c.limits.max_resamples = 5000).await;
    let data = json!([3.0, 1.5, 4.25, 1.0, 5.5, 9.0, 2.75]);
    let first = ok(post(&app, json!({"data": data, "seed": 9})).await);
    let token = first["token"].as_str().unwrap();
    let original: Value = serde_json::from_slice(&URL_SAFE_NO_PAD.decode(token.strip_prefix(PREFIX).unwrap()).unwrap()).unwrap();
    let reencode = |b: &Value| format!("{PREFIX}{}", URL_SAFE_NO_PAD.encode(serde_json::to_vec(b).unwrap()));
    let edits: [(&str, Value); 4] = [
        // 300 levels (a request may ask for 20 at most).
        ("/params/levels", json!((1..=300).map(|i| i as f64 / 301.0).collect::<Vec<_>>())),
        // No method (a request needs at least one).
        ("/params/methods", json!([])),
        // More resamples drawn than this server allows, or fewer than 2.
        ("/drawn", json!(6000)),
        ("/drawn", json!(1)),
    ];
    for (at, value) in edits {
        let mut body = original.clone();
        *body.pointer_mut(at).unwrap() = value;
        let v = invalid(post(&app, json!({"data": data, "token": reencode(&body)})).await, &["/token"]);
        assert_eq!(rule_at(&v, "/token").as_deref(), Some("token_valid"), "{at}: {v}");
    }
}

/// Values with a zero count take no part in a resample, so they do not count towards the
/// number of distinct resamples of "exact" (C(19, 10) = 92 378 for 10 observations).
#[tokio::test]
async fn exact_counts_only_values_that_were_observed() {
    let app = TestApp::spawn().await;
    let values: Vec<f64> = (0..20).map(|i| i as f64).collect();
    let counts: Vec<u64> = (0..20).map(|i| if i % 2 == 0 { 1 } else { 0 }).collect();
    let (s, _, v) = post(
        &app,
        json!({"data": {"values": values, "counts": counts}, "resamples": "exact", "methods": ["percentile"]}),
    )
    .await;
    assert_eq!(s, 200, "{v}");
    assert_eq!(v["resamples"], 92378);
}

/// The columns of a table are a JSON object, whose key order means nothing: a token issued for
/// one order replays on the other.
#[tokio::test]
async fn a_token_replays_whatever_the_order_of_the_columns() {
    let app = TestApp::spawn().await;
    let x = json!([1.0, 2.0, 3.5, 4.0, 6.0, 7.5]);
    let y = json!([2.0, 2.5, 3.0, 5.0, 5.5, 9.0]);
    let stat = json!({"name": "slope", "x": "x", "y": "y"});
    let (s, _, first) = post(&app, json!({"data": {"columns": {"x": x, "y": y}}, "statistic": stat, "seed": 4})).await;
    assert_eq!(s, 200);
    let swapped = serde_json::from_str::<Value>(&format!(r#"{{"columns": {{"y": {y}, "x": {x}}}}}"#)).unwrap();
    let (s, _, again) = post(&app, json!({"data": swapped, "token": first["token"]})).await;
    assert_eq!(s, 200, "{again}");
    assert_eq!(without_timing(again), without_timing(first));
}

/// Numbers are read to the nearest double, as JSON Schema and every JSON writer mean them: the
/// largest double below 1 (printed 0.9999999999999999) is a valid level, not 1 (found by
/// schemathesis when the parser rounded it up).
#[tokio::test]
async fn numbers_are_read_to_the_nearest_double() {
    let app = TestApp::spawn().await;
    let below_one = 1.0 - f64::EPSILON / 2.0;
    assert_eq!(format!("{below_one}"), "0.9999999999999999");
    // Every method answers at such a level with finite endpoints (its normal quantile is read
    // from the lower tail, where 1 − α/2 would round to 1).
    let all = ["percentile", "basic", "normal", "bca", "studentized"];
    let v = ok(post(
        &app,
        json!({"data": [1.5, 2.5, 4.0, 3.0, 7.5], "levels": [below_one], "methods": all, "resamples": 100, "seed": 1}),
    )
    .await);
    assert_eq!(v["intervals"][0]["level"].as_f64(), Some(below_one));
    for iv in v["intervals"].as_array().unwrap() {
        assert!(iv["lower"].is_f64() && iv["upper"].is_f64(), "{iv}");
    }
}

// ---------------------------------------------------------------------------------------------
// large data arrays (read around the JSON tree)
// ---------------------------------------------------------------------------------------------

/// The same request through the lifted path and the ordinary one: escaping a key's first letter
/// (`\u0064` is `d`) reads the same to a JSON parser but keeps the array out of the lift.
async fn both_paths(app: &TestApp, route: &str, body: &Value, key: &str) -> (Value, Value) {
    let text = body.to_string();
    let plain = text.replacen(
        &format!("\"{key}\":"),
        &format!("\"\\u{:04x}{}\":", key.as_bytes()[0], &key[1..]),
        1,
    );
    assert_ne!(text, plain, "the key {key} is in the body");
    let lifted = ok(app.post_raw(route, "application/json", text.into_bytes()).await);
    let ordinary = ok(app.post_raw(route, "application/json", plain.into_bytes()).await);
    (without_timing(lifted), without_timing(ordinary))
}

#[tokio::test]
async fn a_large_array_gives_the_same_response_as_the_ordinary_parser() {
    let app = TestApp::spawn().await;
    let x: Vec<f64> = sample(6000).iter().map(|v| v * 1.000_000_3 - 17.25).collect();
    let y: Vec<f64> = x.iter().map(|v| v * 1.01 + 0.5).collect();
    let cases = [
        (
            "/v1/interval",
            json!({"data": x, "statistic": "median", "seed": 4, "resamples": 400}),
            "data",
        ),
        (
            "/v1/interval",
            json!({"data": {"columns": {"a/b": x, "y": y}}, "statistic": {"name": "correlation", "x": "a/b", "y": "y"}, "seed": 4, "resamples": 200}),
            "a/b",
        ),
        (
            "/v1/interval",
            json!({"data": {"values": x, "counts": vec![3; x.len()]}, "statistic": "mean", "seed": 4, "resamples": 200}),
            "counts",
        ),
        (
            "/v1/compare",
            json!({"baseline": x, "candidate": y, "statistic": "mean", "seed": 4, "resamples": 200}),
            "candidate",
        ),
        (
            "/v1/batch",
            json!({"jobs": [{"kind": "interval", "data": x, "seed": 2, "resamples": 200}, {"kind": "interval", "data": [1.0, 2.0, 4.0], "seed": 1}]}),
            "data",
        ),
    ];
    for (route, body, key) in cases {
        let (lifted, ordinary) = both_paths(&app, route, &body, key).await;
        assert_eq!(lifted, ordinary, "{route} {key}");
    }
}

#[tokio::test]
async fn a_bad_element_of_a_large_array_is_still_named() {
    let app = TestApp::spawn().await;
    let x: Vec<String> = sample(6000).iter().map(f64::to_string).collect();
    let mut items = x.clone();
    items[4321] = "NaN".into();
    let v = invalid(
        post_raw_json(&app, &format!("{{\"data\": [{}]}}", items.join(","))).await,
        &["/data/4321"],
    );
    assert!(message_at(&v, "/data/4321").contains("finite"), "{v}");
    let counts = format!(
        "{{\"data\": {{\"values\": [{}], \"counts\": [{}-1]}}}}",
        x.join(","),
        "1,".repeat(5999)
    );
    invalid(post_raw_json(&app, &counts).await, &["/data/counts/5999"]);
}

#[tokio::test]
async fn a_syntax_error_after_a_large_array_names_its_place_in_the_body_as_sent() {
    let app = TestApp::spawn().await;
    let x: Vec<String> = sample(6000).iter().map(f64::to_string).collect();
    let body = format!("{{\"data\": [{}], \"levels\": tru}}", x.join(","));
    let column = body.find("tru}").unwrap() + 1;
    let v = problem(post_raw_json(&app, &body).await, 400, "malformed-json");
    let detail = v["detail"].as_str().unwrap();
    let at = format!("column {}", column + 3);
    assert!(detail.contains(&at), "{detail} should name {at}");
}

/// One value far out (1e20 among 2199 values from 1 to 143.7): every resample's mean lies
/// within the data's range, and a resample without the far value has a mean and a standard
/// error like those of the other rows. Centred on the sample mean (~4.5e16), such resamples
/// summed thousands of terms near −4.5e16 and their means came out near −170, their standard
/// errors noise or 0.
#[tokio::test]
async fn a_value_far_out_leaves_the_other_resamples_accurate() {
    let app = TestApp::spawn().await;
    let others: Vec<f64> = (0..2199u64).map(|i| 1.0 + ((i * 37) % 1000) as f64 / 7.0).collect();
    let n = others.len() as f64 + 1.0;
    let mean = others.iter().sum::<f64>() / others.len() as f64;
    let sd = (others.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / others.len() as f64).sqrt();
    let mut data = others.clone();
    data.push(1e20);
    let body = json!({"data": data, "statistic": "mean", "resamples": 400, "seed": 1,
        "methods": ["percentile", "studentized"], "include": ["replicates"]});
    let v = ok(post(&app, body).await);
    let values = |key: &str| -> Vec<f64> { v[key].as_array().unwrap().iter().map(|r| r.as_f64().unwrap()).collect() };
    let (reps, ses) = (values("replicates"), values("replicate_standard_errors"));
    assert!(
        reps.iter().all(|r| (1.0..=1e20).contains(r)),
        "{:?}",
        reps.iter().find(|r| !(1.0..=1e20).contains(*r))
    );
    // A resample misses the far value with probability (1 − 1/2200)^2200 ≈ e⁻¹: about 147 of
    // 400 (SD 9.6), so more than 100 surely do. Their means scatter around the others' mean
    // with SD σ/√2200 ≈ 0.88; 8 of those bounds the largest of ~150 with room.
    let se = sd / n.sqrt();
    let without: Vec<(f64, f64)> = reps.iter().zip(&ses).filter(|(r, _)| **r < 1e6).map(|(r, s)| (*r, *s)).collect();
    assert!(without.len() > 100, "{}", without.len());
    for (r, s) in &without {
        assert!((r - mean).abs() < 8.0 * se, "{r} against {mean} ± {se}");
        // The resample's own σ̂*/√n: for these near-uniform rows (kurtosis ≈ 1.8) σ̂* varies by
        // about √((κ − 1)/(4n)) ≈ 1 % between resamples; 10 % is ten of those.
        assert!((s - se).abs() < 0.1 * se, "{s} against {se}");
    }
}
