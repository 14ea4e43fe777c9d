//! Black-box tests of `POST /v1/interval` over real HTTP: validation (every invalid field at
//! once, each with a JSON Pointer), problem documents, limits, tokens and replay, exact
//! enumeration, constant data, time and work limits.

mod common;

use std::time::{Duration, Instant};

use common::{pointers, without_timing, TestApp};
use serde_json::{json, Value};

const MAX_SEED: u64 = (1 << 53) - 1;
const ALL_METHODS: [&str; 5] = ["percentile", "basic", "normal", "bca", "studentized"];

// ---------------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------------

/// The JSON Pointer of the first `null` anywhere in `v`, if any.
fn first_null(v: &Value, at: &str) -> Option<String> {
    match v {
        Value::Null => Some(at.to_string()),
        Value::Array(items) => items.iter().enumerate().find_map(|(i, it)| first_null(it, &format!("{at}/{i}"))),
        Value::Object(o) => o
            .iter()
            .find_map(|(k, it)| first_null(it, &format!("{at}/{}", k.replace('~', "~0").replace('/', "~1")))),
        _ => None,
    }
}

fn assert_no_nulls(v: &Value) {
    if let Some(at) = first_null(v, "") {
        panic!("the response has a null at {at:?}: {v}");
    }
}

/// Assert a 200 JSON response without nulls and return its body.
fn ok(resp: (u16, String, Value)) -> Value {
    let (status, ct, v) = resp;
    assert_eq!(status, 200, "expected 200, got {status}: {v}");
    assert!(ct.starts_with("application/json"), "content-type {ct:?}");
    assert!(v.is_object(), "the body is not a JSON object: {v}");
    assert_no_nulls(&v);
    v
}

/// Assert a problem document with this status and slug; return it.
fn problem(resp: (u16, String, Value), status: u16, slug: &str) -> Value {
    let (s, ct, v) = resp;
    assert_eq!(s, status, "expected {status} /problems/{slug}, got {s}: {v}");
    assert_eq!(ct, "application/problem+json", "problem content-type for {v}");
    assert_eq!(v["type"], format!("/problems/{slug}"), "problem type: {v}");
    assert_eq!(v["status"], status, "problem status member: {v}");
    assert!(v["title"].as_str().is_some_and(|t| !t.is_empty()), "problem title: {v}");
    assert!(v["detail"].as_str().is_some_and(|t| !t.is_empty()), "problem detail: {v}");
    v
}

/// Assert a 422 invalid-request problem whose pointers are exactly `expected` (in any order).
fn invalid(resp: (u16, String, Value), expected: &[&str]) -> Value {
    let v = problem(resp, 422, "invalid-request");
    let mut got = pointers(&v);
    got.sort();
    let mut want: Vec<String> = expected.iter().map(|s| s.to_string()).collect();
    want.sort();
    assert_eq!(got, want, "pointers of {v}");
    for e in v["errors"].as_array().unwrap() {
        assert!(
            e["message"].as_str().is_some_and(|m| !m.is_empty()),
            "every error has a message: {v}"
        );
    }
    v
}

/// The message of the error at `pointer`.
fn message_at(v: &Value, pointer: &str) -> String {
    v["errors"]
        .as_array()
        .and_then(|a| a.iter().find(|e| e["pointer"] == pointer))
        .and_then(|e| e["message"].as_str())
        .unwrap_or_else(|| panic!("no error at {pointer:?} in {v}"))
        .to_string()
}

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
    invalid(
        post(&app, json!({"data": {"values": [1, 2, 3], "counts": [3, 1]}})).await,
        &["/data/counts"],
    );
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
}

#[tokio::test]
async fn geometric_mean_points_at_each_non_positive_value() {
    let app = TestApp::spawn().await;
    invalid(
        post(&app, json!({"data": [1.5, 0, 2, -3, 4], "statistic": "geometric_mean"})).await,
        &["/data/1", "/data/3"],
    );
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
    invalid(
        post(
            &app,
            json!({"data": cols, "statistic": {"name": "ratio", "numerator": "x", "denominator": "z"}}),
        )
        .await,
        &["/statistic/denominator"],
    );
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
    invalid(
        post(
            &app,
            json!({"data": [1, 2, 3, 4, 5], "statistic": {"name": "correlation", "x": "x", "y": "y"}}),
        )
        .await,
        &["/data"],
    );
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
    let app = TestApp::spawn_with(|c| c.max_resamples = 1000).await;
    let data = json!([1, 2, 3, 4, 5]);
    for r in [
        json!(0),
        json!(-5),
        json!(2.5),
        json!("many"),
        json!(1001),
        json!(null),
        json!([100]),
    ] {
        invalid(post(&app, json!({"data": data, "resamples": r})).await, &["/resamples"]);
    }
    // The limit itself is allowed.
    let v = ok(post(&app, json!({"data": data, "resamples": 1000, "seed": 2})).await);
    assert_eq!(v["resamples"], 1000);
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
        post(&app, json!({"data": data, "statistic": {"name": "mean", "p": 0.5}})).await,
        &["/statistic/p"],
    );
    // A valid quantile is accepted and echoed.
    let v = ok(post(&app, json!({"data": data, "statistic": {"name": "quantile", "p": 0.9}, "seed": 1})).await);
    assert_eq!(v["statistic"], json!({"name": "quantile", "p": 0.9}));
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
        post(&app, json!({"data": data, "scheme": {"kind": "moving_block", "block_length": 2}})).await,
        &["/scheme/kind"],
    );
    invalid(
        post(&app, json!({"data": data, "scheme": {"kind": "nonsense"}})).await,
        &["/scheme/kind"],
    );
    invalid(post(&app, json!({"data": data, "scheme": {}})).await, &["/scheme/kind"]);
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
    assert!(token.starts_with("bs1."), "{token}");

    let again = ok(post(&app, json!({"data": data, "token": token})).await);
    assert_eq!(without_timing(again), without_timing(first.clone()), "replay differs");

    // The token on other data is a conflict.
    let mut other = data.clone();
    other[3] += 1.0;
    problem(post(&app, json!({"data": other, "token": token})).await, 409, "data-mismatch");

    // A token with parameters it stands in for is refused at each of them.
    invalid(post(&app, json!({"data": data, "token": token, "seed": 1})).await, &["/seed"]);
    invalid(
        post(&app, json!({"data": data, "token": token, "seed": 1, "levels": [0.8]})).await,
        &["/seed", "/levels"],
    );

    // Garbage and wrong-typed tokens.
    invalid(post(&app, json!({"data": data, "token": "abc"})).await, &["/token"]);
    invalid(post(&app, json!({"data": data, "token": "bs1.!!!"})).await, &["/token"]);
    invalid(post(&app, json!({"data": data, "token": 42})).await, &["/token"]);
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
    invalid(
        post(
            &app,
            json!({"data": [1, 2, 3, 4, 5], "resamples": "exact", "scheme": {"kind": "bayesian"}}),
        )
        .await,
        &["/resamples"],
    );
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
    let app = TestApp::spawn_with(|c| c.work_limit = 1e6).await;
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
// Server bugs found by these tests (ignored until fixed; run with --ignored)
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
    assert_eq!(common::pointers(&v), vec!["/data/0", "/data/1", "/data/2"]);
}

/// `target_mc_error` only applies with `"resamples": "auto"`; the server refuses it beside a
/// number of resamples, but silently ignores it when `resamples` is absent (default 2000).
#[tokio::test]
async fn target_mc_error_without_auto_resamples_is_refused() {
    let app = TestApp::spawn().await;
    let data = json!([1, 2, 3, 4, 5]);
    invalid(
        post(&app, json!({"data": data, "resamples": 2000, "target_mc_error": 0.01})).await,
        &["/target_mc_error"],
    );
    invalid(
        post(&app, json!({"data": data, "target_mc_error": 0.01})).await,
        &["/target_mc_error"],
    );
}

/// A token is base64 of JSON, so an edited one must meet the same limits as a request.
#[tokio::test]
async fn an_edited_token_is_held_to_the_request_limits() {
    use base64::engine::general_purpose::URL_SAFE_NO_PAD;
    use base64::Engine as _;
    let app = TestApp::spawn().await;
    let data = json!([3.0, 1.5, 4.25, 1.0, 5.5, 9.0, 2.75]);
    let (s, _, first) = post(&app, json!({"data": data, "seed": 9})).await;
    assert_eq!(s, 200);
    let token = first["token"].as_str().unwrap();
    let mut body: Value = serde_json::from_slice(&URL_SAFE_NO_PAD.decode(token.trim_start_matches("bs1.")).unwrap()).unwrap();
    let reencode = |b: &Value| format!("bs1.{}", URL_SAFE_NO_PAD.encode(serde_json::to_vec(b).unwrap()));
    // 300 levels (a request may ask for 20 at most).
    body["levels"] = json!((1..=300).map(|i| i as f64 / 301.0).collect::<Vec<_>>());
    invalid(post(&app, json!({"data": data, "token": reencode(&body)})).await, &["/token"]);
    // One resample (a request needs at least 2).
    body["levels"] = json!([0.95]);
    body["resamples"] = json!(1);
    invalid(post(&app, json!({"data": data, "token": reencode(&body)})).await, &["/token"]);
    // Put back as it was, it replays.
    body["resamples"] = json!(2000);
    let (s, _, again) = post(&app, json!({"data": data, "token": reencode(&body)})).await;
    assert_eq!(s, 200);
    assert_eq!(without_timing(again), without_timing(first));
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
