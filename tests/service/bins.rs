//! Binned data (`{"bins": {...}}`) through the service: every bad input with its pointer and
//! rule, the statistics bins refuse, the warnings of what bins assume, tokens, and bins as
//! either sample of a comparison.

use serde_json::{json, Value};

use crate::common::{invalid, message_at, ok, rule_at, TestApp};

/// Invented: checkout latencies (ms) of one hour as a monitoring system's histogram.
fn checkout() -> Value {
    json!({"edges": [0, 50, 100, 250, 500, 1000], "counts": [310, 420, 160, 70, 25], "overflow": 15})
}

fn codes(v: &Value) -> Vec<String> {
    v["diagnostics"]["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w["code"].as_str().unwrap().to_string())
        .collect()
}

async fn interval(app: &TestApp, body: Value) -> (u16, String, Value) {
    app.post("/v1/interval", &body).await
}

#[tokio::test]
async fn every_bad_input_points_at_its_place() {
    let app = TestApp::spawn().await;
    let bins = |b: Value| json!({"data": {"bins": b}, "seed": 1});
    // Edges that do not increase strictly: each offending edge, and the counts one short.
    let v = invalid(
        interval(&app, bins(json!({"edges": [0, 10, 10, 5], "counts": [1, 2]}))).await,
        &["/data/bins/counts", "/data/bins/edges/2", "/data/bins/edges/3"],
    );
    for at in ["/data/bins/edges/2", "/data/bins/counts"] {
        assert_eq!(rule_at(&v, at).as_deref(), Some("sample_shape"), "{v}");
    }
    assert!(message_at(&v, "/data/bins/edges/3").contains("strictly increasing"), "{v}");
    assert!(message_at(&v, "/data/bins/counts").contains("one count per bin"), "{v}");
    // Fewer than two edges: the schema's own bound, so no rule.
    let v = invalid(
        interval(&app, bins(json!({"edges": [3], "counts": []}))).await,
        &["/data/bins/edges"],
    );
    assert_eq!(rule_at(&v, "/data/bins/edges"), None);
    // Negative or fractional counts and overflow, each at its own place, all at once.
    invalid(
        interval(&app, bins(json!({"edges": [0, 1, 2, 3], "counts": [1, -2, 0.5], "overflow": 1.5}))).await,
        &["/data/bins/counts/1", "/data/bins/counts/2", "/data/bins/overflow"],
    );
    invalid(
        interval(&app, bins(json!({"edges": [0, 1], "counts": [4], "overflow": -1}))).await,
        &["/data/bins/overflow"],
    );
    // No observations in all.
    let v = invalid(
        interval(&app, bins(json!({"edges": [0, 1, 2], "counts": [0, 0]}))).await,
        &["/data/bins/counts"],
    );
    assert_eq!(rule_at(&v, "/data/bins/counts").as_deref(), Some("sample_shape"));
    assert!(message_at(&v, "/data/bins/counts").contains("add up to 0"), "{v}");
    // Missing parts, unknown fields, a non-finite edge.
    invalid(interval(&app, bins(json!({"counts": [1, 2]}))).await, &["/data/bins/edges"]);
    invalid(
        interval(&app, bins(json!({"edges": [0, 1, "Infinity"], "counts": [1, 2], "under": 0}))).await,
        &["/data/bins/edges/2", "/data/bins/under"],
    );
}

#[tokio::test]
async fn statistics_that_bins_cannot_give_are_refused_with_those_they_can() {
    let app = TestApp::spawn().await;
    for name in [
        "variance",
        "std_dev",
        "trimmed_mean",
        "geometric_mean",
        "coefficient_of_variation",
        "proportion",
        "mad",
    ] {
        let v = invalid(
            interval(&app, json!({"data": {"bins": checkout()}, "statistic": name, "seed": 1})).await,
            &["/statistic"],
        );
        assert_eq!(rule_at(&v, "/statistic").as_deref(), Some("statistic_shape"), "{v}");
        let message = message_at(&v, "/statistic");
        for usable in ["mean", "median", "quantile", "iqr", "exceedance"] {
            assert!(message.contains(usable), "{name}: {message}");
        }
    }
    let v = invalid(
        interval(
            &app,
            json!({"data": {"bins": checkout()}, "statistic": {"name": "slope", "x": "x", "y": "y"}}),
        )
        .await,
        &["/data"],
    );
    assert_eq!(rule_at(&v, "/data").as_deref(), Some("statistic_shape"));
    // The mean of bins with an overflow has no value.
    let v = invalid(
        interval(&app, json!({"data": {"bins": checkout()}, "statistic": "mean"})).await,
        &["/data/bins/overflow"],
    );
    assert_eq!(rule_at(&v, "/data/bins/overflow").as_deref(), Some("statistic_domain"));
}

#[tokio::test]
async fn bins_give_quantiles_means_and_exceedances_with_their_warnings() {
    let app = TestApp::spawn().await;
    let run = |data: Value, statistic: Value| json!({"data": {"bins": data}, "statistic": statistic, "seed": 3, "resamples": 500});
    // N = 1000. p95: r = 950, cumulative 310, 730, 890, 960: in (250, 500], 250 + 60/70 · 250.
    let v = ok(interval(&app, run(checkout(), json!({"name": "quantile", "p": 0.95}))).await);
    assert!(
        (v["estimate"].as_f64().unwrap() - (250.0 + 60.0 / 70.0 * 250.0)).abs() < 1e-9,
        "{v}"
    );
    assert_eq!(v["n"], 1000);
    assert!(!codes(&v).contains(&"quantile_in_overflow".to_string()), "{v}");
    // p99: r = 990 > 985, in the overflow: the last edge, with the warning.
    let v = ok(interval(&app, run(checkout(), json!({"name": "quantile", "p": 0.99}))).await);
    assert_eq!(v["estimate"], 1000.0);
    assert!(codes(&v).contains(&"quantile_in_overflow".to_string()), "{v}");
    // Share slower than 300 ms: 80 % of (250, 500] is above it, so (0.8 · 70 + 25 + 15)/1000.
    let v = ok(interval(&app, run(checkout(), json!({"name": "exceedance", "threshold": 300}))).await);
    assert!((v["estimate"].as_f64().unwrap() - 0.096).abs() < 1e-12, "{v}");
    // Above the last edge the overflow's values are unknown, so is the share above 2000 ms:
    // refused at the overflow, with a way out. At the last edge, the overflow is all above.
    let v = invalid(
        interval(&app, run(checkout(), json!({"name": "exceedance", "threshold": 2000}))).await,
        &["/data/bins/overflow"],
    );
    assert!(
        message_at(&v, "/data/bins/overflow").contains("add an edge at the threshold"),
        "{v}"
    );
    let v = ok(interval(&app, run(checkout(), json!({"name": "exceedance", "threshold": 1000}))).await);
    assert!((v["estimate"].as_f64().unwrap() - 0.015).abs() < 1e-12, "{v}");
    // The mean without an overflow, at the midpoints, with the grouping warning.
    let no_overflow = json!({"edges": [0, 50, 100], "counts": [30, 10]});
    let v = ok(interval(&app, run(no_overflow, json!("mean"))).await);
    assert!((v["estimate"].as_f64().unwrap() - (30.0 * 25.0 + 10.0 * 75.0) / 40.0).abs() < 1e-12);
    assert!(codes(&v).contains(&"grouped_mean".to_string()), "{v}");
}

#[tokio::test]
async fn bins_replay_their_token_under_iid_and_bayesian() {
    let app = TestApp::spawn().await;
    for scheme in ["iid", "bayesian"] {
        let body = json!({"data": {"bins": checkout()}, "statistic": "median", "scheme": {"kind": scheme}, "seed": 9, "resamples": 300});
        let first = ok(interval(&app, body).await);
        let again = ok(interval(&app, json!({"data": {"bins": checkout()}, "token": first["token"]})).await);
        assert_eq!(first["intervals"], again["intervals"], "{scheme}");
        // Other counts are other data.
        let mut other = checkout();
        other["overflow"] = json!(16);
        let (status, _, _) = interval(&app, json!({"data": {"bins": other}, "token": first["token"]})).await;
        assert_eq!(status, 409, "{scheme}");
    }
}

#[tokio::test]
async fn a_comparison_takes_bins_on_either_side() {
    let app = TestApp::spawn().await;
    // The candidate's histogram has every count of the slowest bins doubled: its p95 is higher.
    let slower = json!({"edges": [0, 50, 100, 250, 500, 1000], "counts": [310, 420, 160, 140, 50], "overflow": 15});
    let body = json!({"baseline": {"bins": checkout()}, "candidate": {"bins": slower},
                      "statistic": {"name": "quantile", "p": 0.95}, "seed": 5, "resamples": 1000});
    let v = ok(app.post("/v1/compare", &body).await);
    assert_eq!(v["verdict"], "regression", "{v}");
    assert_eq!(v["baseline_n"], 1000);
    // Bins against raw runs, too.
    let raw: Vec<f64> = (0..40).map(|i| 20.0 + 10.0 * i as f64).collect();
    let body = json!({"baseline": raw, "candidate": {"bins": checkout()}, "statistic": "median", "contrast": "difference", "seed": 5, "resamples": 500});
    ok(app.post("/v1/compare", &body).await);
    // Bins have no rows to pair.
    let body = json!({"baseline": {"bins": checkout()}, "candidate": {"bins": slower}, "statistic": "median", "paired": true});
    let v = invalid(app.post("/v1/compare", &body).await, &["/baseline"]);
    assert_eq!(rule_at(&v, "/baseline").as_deref(), Some("paired_rows"));
}

#[tokio::test]
async fn counted_observations_of_bins_are_held_to_the_row_limit() {
    let app = TestApp::spawn_with(|c| c.limits.max_rows = 3).await;
    let v = invalid(
        interval(&app, json!({"data": {"bins": {"edges": [0, 1, 2], "counts": [3_000_000, 1]}}})).await,
        &["/data/bins/counts"],
    );
    assert_eq!(rule_at(&v, "/data/bins/counts").as_deref(), Some("row_limit"));
}
