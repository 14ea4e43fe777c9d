//! R's lenient forms: one value sent as a one-element array, a list sent as one item alone,
//! on every field but data (R's usual JSON writer sends a length-one vector either way,
//! depending on `auto_unbox`). Each is accepted with the canonical form's result, bit for bit;
//! an array of two or more where one value goes is refused, naming the field; data is never
//! unboxed; and every pointer in a problem resolves in the body as sent.

use serde_json::{json, Value};

use crate::common::{invalid, message_at, ok, rule_at, without_timing, TestApp};

/// A skewed, varied sample of `n` values (invented: minutes to first reply).
fn minutes(n: usize) -> Vec<f64> {
    (0..n)
        .map(|i| 2.0 + ((i * 37) % 23) as f64 * 0.8 + ((i * i) % 7) as f64 * 1.5)
        .collect()
}

/// The response to `body` at `path`, without its timings.
async fn answer(app: &TestApp, path: &str, body: &Value) -> Value {
    without_timing(ok(app.post(path, body).await))
}

#[tokio::test]
async fn the_r_cases_are_accepted_with_the_canonical_result() {
    let app = TestApp::spawn().await;
    // jsonlite's default writer: every length-one vector boxed.
    let boxed = json!({"data": [1, 2, 3], "statistic": ["mean"], "levels": [0.9], "resamples": [500], "seed": [1]});
    let canonical = json!({"data": [1, 2, 3], "statistic": "mean", "levels": [0.9], "resamples": 500, "seed": 1});
    assert_eq!(
        answer(&app, "/v1/interval", &boxed).await,
        answer(&app, "/v1/interval", &canonical).await
    );

    // jsonlite with auto_unbox = TRUE: every length-one vector bare. Sent literally (no seed),
    // then the canonical form with the seed the server drew and echoed.
    let data = minutes(30);
    let unboxed = json!({"data": data, "statistic": "mean", "levels": 0.9, "methods": "bca"});
    let got = answer(&app, "/v1/interval", &unboxed).await;
    let seed = got["seed"].clone();
    let canonical = json!({"data": data, "statistic": "mean", "levels": [0.9], "methods": ["bca"], "seed": seed});
    assert_eq!(got, answer(&app, "/v1/interval", &canonical).await);
    assert_eq!(got["intervals"].as_array().map(Vec::len), Some(1), "{got}");
}

#[tokio::test]
async fn every_interval_field_takes_its_lenient_form() {
    let app = TestApp::spawn().await;
    let data = minutes(40);
    let canonical = json!({
        "data": data, "statistic": {"name": "quantile", "p": 0.75}, "resamples": "auto",
        "target_mc_error": 0.05, "seed": 11, "levels": [0.9], "methods": ["percentile"],
        "scheme": {"kind": "moving_block", "block_length": 4}, "time_limit_ms": 60000,
        "on_time_limit": "partial", "include": ["replicates"], "inner_resamples": 30,
    });
    let lenient = json!({
        "data": data, "statistic": [{"name": "quantile", "p": 0.75}], "resamples": ["auto"],
        "target_mc_error": [0.05], "seed": [11], "levels": 0.9, "methods": "percentile",
        "scheme": [{"kind": "moving_block", "block_length": 4}], "time_limit_ms": [60000],
        "on_time_limit": ["partial"], "include": "replicates", "inner_resamples": [30],
    });
    let first = answer(&app, "/v1/interval", &canonical).await;
    assert_eq!(first, answer(&app, "/v1/interval", &lenient).await);
    // The token too, with the fields that stay beside it.
    let replay = json!({"data": data, "token": [first["token"]], "time_limit_ms": [60000], "on_time_limit": ["partial"]});
    assert_eq!(first, answer(&app, "/v1/interval", &replay).await);
}

#[tokio::test]
async fn every_compare_field_takes_its_lenient_form() {
    let app = TestApp::spawn().await;
    let (baseline, candidate) = (minutes(12), minutes(14).iter().map(|x| x * 1.1).collect::<Vec<_>>());
    let canonical = json!({
        "baseline": baseline, "candidate": candidate, "contrast": "difference", "paired": false,
        "better": "higher", "tolerance": 0.5, "statistic": "median", "resamples": 400, "seed": 3,
        "levels": [0.9], "methods": ["percentile"],
    });
    let lenient = json!({
        "baseline": baseline, "candidate": candidate, "contrast": ["difference"], "paired": [false],
        "better": ["higher"], "tolerance": [0.5], "statistic": ["median"], "resamples": [400], "seed": [3],
        "levels": 0.9, "methods": "percentile",
    });
    assert_eq!(
        answer(&app, "/v1/compare", &canonical).await,
        answer(&app, "/v1/compare", &lenient).await
    );
}

#[tokio::test]
async fn a_batch_and_each_of_its_jobs_take_their_lenient_forms() {
    let app = TestApp::spawn().await;
    let data = minutes(20);
    let canonical = json!({
        "family_level": 0.9, "multiplicity": "holm", "time_limit_ms": 60000,
        "jobs": [
            {"kind": "interval", "data": data, "statistic": "median", "resamples": 300, "seed": 5, "levels": [0.8]},
            {"kind": "compare", "baseline": data, "candidate": minutes(22), "contrast": "ratio", "seed": 6, "resamples": 300},
        ],
    });
    let lenient = json!({
        "family_level": [0.9], "multiplicity": ["holm"], "time_limit_ms": [60000],
        "jobs": [
            {"kind": ["interval"], "data": data, "statistic": ["median"], "resamples": [300], "seed": [5], "levels": 0.8},
            {"kind": ["compare"], "baseline": data, "candidate": minutes(22), "contrast": ["ratio"], "seed": [6], "resamples": [300]},
        ],
    });
    let got = answer(&app, "/v1/batch", &lenient).await;
    assert!(got["results"].as_array().unwrap().iter().all(|r| r.get("ok").is_some()), "{got}");
    assert_eq!(got, answer(&app, "/v1/batch", &canonical).await);
}

#[tokio::test]
async fn members_of_a_statistic_a_scheme_and_bins_may_come_boxed() {
    let app = TestApp::spawn().await;
    let data = minutes(40);
    // jsonlite with auto_unbox off writes list(name = "quantile", p = 0.75) with every member
    // boxed, the tag included; a list member (strata) stays a list.
    let pairs = [
        (
            json!({"data": data, "statistic": {"name": "quantile", "p": 0.75}, "scheme": {"kind": "stationary_block", "mean_block_length": 4}, "seed": 2, "resamples": 300}),
            json!({"data": data, "statistic": [{"name": ["quantile"], "p": [0.75]}], "scheme": [{"kind": ["stationary_block"], "mean_block_length": [4]}], "seed": [2], "resamples": [300]}),
        ),
        (
            json!({"data": data, "statistic": {"name": "exceedance", "threshold": 12}, "scheme": {"kind": "stratified", "strata": (0..40).map(|i| i % 2).collect::<Vec<_>>()}, "seed": 3, "resamples": 300}),
            json!({"data": data, "statistic": {"name": ["exceedance"], "threshold": [12]}, "scheme": {"kind": ["stratified"], "strata": (0..40).map(|i| i % 2).collect::<Vec<_>>()}, "seed": 3, "resamples": 300}),
        ),
        (
            json!({"data": {"bins": {"edges": [0, 10, 20, 50], "counts": [30, 50, 15], "overflow": 5}}, "statistic": "median", "seed": 4, "resamples": 300}),
            json!({"data": {"bins": {"edges": [0, 10, 20, 50], "counts": [30, 50, 15], "overflow": [5]}}, "statistic": "median", "seed": 4, "resamples": 300}),
        ),
    ];
    for (canonical, boxed) in pairs {
        let got = answer(&app, "/v1/interval", &boxed).await;
        assert_eq!(got, answer(&app, "/v1/interval", &canonical).await, "{boxed}");
    }
    // A boxed member at fault is named at its element, whether the decoder or the engine finds
    // the fault; an array of two (or none) is refused at the member, as a request field is.
    let v = invalid(
        app.post(
            "/v1/interval",
            &json!({"data": data, "statistic": {"name": ["quantile"], "p": [1.5]}, "scheme": {"kind": ["moving_block"], "block_length": [0]}}),
        )
        .await,
        &["/statistic/p/0", "/scheme/block_length/0"],
    );
    assert!(message_at(&v, "/statistic/p/0").contains("1.5"), "{v}");
    for (statistic, at) in [
        (json!({"name": ["nope"]}), "/statistic/name/0"),
        (json!([{"name": "quantile", "p": [[0.9]]}]), "/statistic/0/p/0"),
        (json!({"name": "mean", "bogus": [1]}), "/statistic/bogus"),
        (json!({"name": "mean", "a/b": [1]}), "/statistic/a~1b"),
    ] {
        invalid(
            app.post("/v1/interval", &json!({"data": data, "statistic": statistic})).await,
            &[at],
        );
    }
    for p in [json!([0.5, 0.9]), json!([])] {
        let v = invalid(
            app.post("/v1/interval", &json!({"data": data, "statistic": {"name": "quantile", "p": p}}))
                .await,
            &["/statistic/p"],
        );
        assert!(message_at(&v, "/statistic/p").contains("one value (or a one-element array)"), "{v}");
    }
    // Faults the engine finds after decoding: a column the data lack, an overflow with the mean.
    let columns = json!({"columns": {"orders": [3, 4, 5, 6], "visits": [30, 41, 52, 58]}});
    invalid(
        app.post(
            "/v1/interval",
            &json!({"data": columns, "statistic": {"name": ["ratio"], "numerator": ["orders"], "denominator": ["sessions"]}}),
        )
        .await,
        &["/statistic/denominator/0"],
    );
    let binned = json!({"bins": {"edges": [0, 1, 2], "counts": [3, 4], "overflow": [2]}});
    let v = invalid(
        app.post("/v1/interval", &json!({"data": binned, "statistic": "mean"})).await,
        &["/data/bins/overflow/0"],
    );
    assert!(message_at(&v, "/data/bins/overflow/0").contains("above the last edge"), "{v}");
    invalid(
        app.post(
            "/v1/interval",
            &json!({"data": {"bins": {"edges": [0, 1, 2], "counts": [3, 4], "overflow": [-1]}}}),
        )
        .await,
        &["/data/bins/overflow/0"],
    );
}

#[tokio::test]
async fn an_array_of_two_where_one_value_goes_is_refused_naming_the_field() {
    let app = TestApp::spawn().await;
    let data = minutes(10);
    let v = invalid(
        app.post(
            "/v1/interval",
            &json!({"data": data, "statistic": ["mean", "median"], "resamples": [], "seed": [1, 2]}),
        )
        .await,
        &["/statistic", "/resamples", "/seed"],
    );
    for at in ["/statistic", "/resamples", "/seed"] {
        assert!(message_at(&v, at).contains("one value (or a one-element array)"), "{v}");
    }
    assert!(message_at(&v, "/statistic").contains("2 items"), "{v}");
    let v = invalid(
        app.post(
            "/v1/compare",
            &json!({"baseline": data, "candidate": data, "tolerance": [0.1, 0.2]}),
        )
        .await,
        &["/tolerance"],
    );
    assert!(message_at(&v, "/tolerance").contains("one value (or a one-element array)"), "{v}");
    let (_, _, v) = app
        .post(
            "/v1/batch",
            &json!({"jobs": [{"kind": ["interval", "compare"], "data": data}], "family_level": [0.9, 0.95]}),
        )
        .await;
    assert_eq!(v["errors"][0]["pointer"], "/family_level", "{v}");
}

#[tokio::test]
async fn pointers_resolve_in_the_body_as_sent() {
    let app = TestApp::spawn().await;
    let data = minutes(10);
    // Inside a one-element array, the element is at fault.
    invalid(
        app.post("/v1/interval", &json!({"data": data, "statistic": ["nope"]})).await,
        &["/statistic/0"],
    );
    invalid(
        app.post("/v1/interval", &json!({"data": data, "statistic": [{"name": "quantile", "p": 2}]}))
            .await,
        &["/statistic/0/p"],
    );
    // A list's lone item is the field itself.
    let v = invalid(app.post("/v1/interval", &json!({"data": data, "levels": 95})).await, &["/levels"]);
    assert!(message_at(&v, "/levels").contains("95"), "{v}");
    // Rules decided after decoding point the same way.
    let blocks = json!({"kind": "moving_block", "block_length": 3});
    let v = invalid(
        app.post("/v1/interval", &json!({"data": data, "methods": "studentized", "scheme": blocks}))
            .await,
        &["/methods"],
    );
    assert_eq!(rule_at(&v, "/methods").as_deref(), Some("studentized_not_by_blocks"));
    invalid(
        app.post(
            "/v1/interval",
            &json!({"data": data, "methods": ["studentized"], "scheme": [blocks]}),
        )
        .await,
        &["/methods/0"],
    );
    let v = invalid(
        app.post(
            "/v1/interval",
            &json!({"data": data, "scheme": [{"kind": "stratified", "strata": [1, 2]}]}),
        )
        .await,
        &["/scheme/0/strata"],
    );
    assert_eq!(rule_at(&v, "/scheme/0/strata").as_deref(), Some("scheme_labels"));
    // In a batch, under the job.
    let (_, _, v) = app
        .post(
            "/v1/batch",
            &json!({"jobs": [{"kind": ["interval"], "data": data, "statistic": ["nope"]}]}),
        )
        .await;
    assert_eq!(v["results"][0]["error"]["errors"][0]["pointer"], "/jobs/0/statistic/0", "{v}");
}

#[tokio::test]
async fn data_is_never_unboxed() {
    let app = TestApp::spawn().await;
    // A bare number is no sample; a one-element array is a sample of one, as before.
    invalid(app.post("/v1/interval", &json!({"data": 5})).await, &["/data"]);
    let one = app.post("/v1/interval", &json!({"data": [5]})).await;
    let two = app.post("/v1/interval", &json!({"data": [5, 6], "seed": 1})).await;
    assert_ne!(one.0, 200, "a sample of one has no bootstrap interval: {}", one.2);
    assert!(
        one.2["errors"][0]["pointer"].as_str().is_some_and(|p| p.starts_with("/data")),
        "{}",
        one.2
    );
    assert_eq!(two.0, 200, "{}", two.2);
    invalid(
        app.post("/v1/compare", &json!({"baseline": 1.5, "candidate": [1.5, 2.0]})).await,
        &["/baseline"],
    );
}
