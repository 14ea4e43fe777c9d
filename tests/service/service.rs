//! The service around the engine: catalogue, batch, readiness, metrics, load shedding and the
//! pool's admission bound, time limits, cancellation, API keys, panics, request ids, CORS and
//! compression.

use std::sync::Arc;
use std::time::{Duration, Instant};

use bandsaw::api::pool::ComputePool;
use bandsaw::config::Threads;
use bandsaw::engine::statistic::StatisticSpec;
use bandsaw::telemetry::Metrics;
use serde_json::{json, Value};

use crate::common::{invalid, message_at, metric, pointers, problem, rule_at, without_timing, TestApp};

/// Invented page load times (ms) of 200 visits.
fn page_loads(n: usize) -> Vec<f64> {
    (0..n)
        .map(|i| 350.0 + ((i * 7919) % 400) as f64 + if i % 37 == 0 { 900.0 } else { 0.0 })
        .collect()
}

/// The Prometheus text of `/metrics`.
async fn metrics_text(app: &TestApp) -> String {
    app.client
        .get(format!("{}/metrics", app.base))
        .send()
        .await
        .unwrap()
        .text()
        .await
        .unwrap()
}

/// A request that keeps one compute thread busy for a while (median, nested studentized).
fn slow_body() -> Value {
    json!({"data": page_loads(4000), "statistic": "median", "resamples": 400, "methods": ["studentized"], "seed": 1, "inner_resamples": 50})
}

#[tokio::test]
async fn catalog_lists_the_catalogue_and_the_limits_in_force() {
    let app = TestApp::spawn_with(|c| {
        c.limits.max_rows = 5000;
        c.limits.max_resamples = 7000;
        c.limits.work_limit = 3e9;
        c.limits.default_time_limit_ms = 4000;
        c.limits.max_time_limit_ms = 9000;
        c.max_batch_jobs = 17;
        c.max_body_bytes = 123_456;
        c.queue = 3;
    })
    .await;
    let (s, _, v) = app.get("/v1/catalog").await;
    assert_eq!(s, 200);
    let names: Vec<&str> = v["statistics"]
        .as_array()
        .unwrap()
        .iter()
        .map(|e| e["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, StatisticSpec::NAMES, "every statistic, in the order of the catalogue");
    let methods: Vec<&str> = v["methods"]
        .as_array()
        .unwrap()
        .iter()
        .map(|e| e["name"].as_str().unwrap())
        .collect();
    assert_eq!(methods, ["percentile", "basic", "normal", "bca", "studentized"]);
    let schemes = v["schemes"].as_array().unwrap();
    let kinds: Vec<&str> = schemes.iter().map(|e| e["kind"].as_str().unwrap()).collect();
    assert_eq!(
        kinds,
        [
            "iid",
            "bayesian",
            "moving_block",
            "circular_block",
            "stationary_block",
            "stratified",
            "cluster"
        ]
    );
    for e in schemes {
        let keys: Vec<&String> = e.as_object().unwrap().keys().collect();
        assert_eq!(keys, ["kind", "description"], "{e}");
        assert!(e["description"].as_str().is_some_and(|d| !d.is_empty()), "{e}");
    }
    let l = &v["limits"];
    assert_eq!(l["max_rows"], 5000);
    assert_eq!(l["max_resamples"], 7000);
    assert_eq!(l["work_limit"].as_f64(), Some(3e9));
    assert_eq!(l["default_time_limit_ms"], 4000);
    assert_eq!(l["max_time_limit_ms"], 9000);
    assert_eq!(l["max_batch_jobs"], 17);
    assert_eq!(l["max_body_bytes"], 123_456);
    assert_eq!(l["threads"], 2);
    assert_eq!(l["queue"], 3);
    assert_eq!(l["max_seed"], 9007199254740991u64);
    assert_eq!(l["max_magnitude"].as_f64(), Some(1e75));
    // The quantile's parameter is documented with its type.
    let q = v["statistics"]
        .as_array()
        .unwrap()
        .iter()
        .find(|e| e["name"] == "quantile")
        .unwrap();
    assert_eq!(q["parameters"][0]["name"], "p");
    assert_eq!(q["parameters"][0]["required"], true);
}

#[tokio::test]
async fn batch_answers_each_job_in_order_and_a_bad_job_does_not_sink_it() {
    let app = TestApp::spawn().await;
    let body = json!({"jobs": [
        {"kind": "interval", "data": [1, 2, 3, 4, 5, 6], "seed": 1},
        {"kind": "interval", "data": [1, "x", 3], "seed": 2},
        {"kind": "compare", "baseline": [1, 2], "candidate": [2, 3]},
        {"kind": "interval", "data": {"values": [1, 2], "counts": [5, 5]}, "statistic": "median", "seed": 3},
        {"data": [1, 2]},
        7,
        {"kind": "median", "data": [1, 2]}
    ]});
    let (s, _, v) = app.post("/v1/batch", &body).await;
    assert_eq!(s, 200, "{v}");
    let r = v["results"].as_array().unwrap();
    assert_eq!(r.len(), 7);
    assert_eq!(r[0]["ok"]["n"], 6);
    assert_eq!(r[1]["error"]["status"], 422);
    assert_eq!(pointers(&r[1]["error"]), vec!["/jobs/1/data/1"]);
    // Two runs a side cannot decide anything (floor 2 / C(4, 2) = 1/3).
    assert_eq!(r[2]["ok"]["verdict"], "inconclusive", "{}", r[2]);
    let codes = r[2]["ok"]["contrast"]["diagnostics"]["warnings"].as_array().unwrap();
    assert!(codes.iter().any(|w| w["code"] == "too_few_runs"), "{}", r[2]);
    assert_eq!(r[3]["ok"]["estimate"], 1.5);
    assert_eq!(pointers(&r[4]["error"]), vec!["/jobs/4/kind"]);
    assert_eq!(pointers(&r[5]["error"]), vec!["/jobs/5"]);
    assert_eq!(pointers(&r[6]["error"]), vec!["/jobs/6/kind"]);
    assert!(message_at(&r[6]["error"], "/jobs/6/kind").contains("\"compare\""), "{}", r[6]);
    assert_eq!(v["multiplicity"], "none");
    // The same job alone gives the same answer as inside the batch (apart from timing).
    let (_, _, alone) = app.post("/v1/interval", &json!({"data": [1, 2, 3, 4, 5, 6], "seed": 1})).await;
    assert_eq!(without_timing(alone), without_timing(r[0]["ok"].clone()));
}

#[tokio::test]
async fn batch_refuses_bad_envelopes_and_too_much_work_before_starting() {
    let app = TestApp::spawn_with(|c| {
        c.limits.work_limit = 1e6;
        c.max_batch_jobs = 3;
    })
    .await;
    invalid(
        app.post("/v1/batch", &json!({"jobs": [], "multiplicity": "sideways", "extra": 1}))
            .await,
        &["/multiplicity", "/extra", "/jobs"],
    );
    // The old name of the multiplicity field is an unknown field.
    invalid(
        app.post(
            "/v1/batch",
            &json!({"jobs": [{"kind": "interval", "data": [1, 2]}], "adjust": "none"}),
        )
        .await,
        &["/adjust"],
    );
    let v = invalid(app.post("/v1/batch", &json!({"jobs": [{}, {}, {}, {}]})).await, &["/jobs"]);
    assert_eq!(rule_at(&v, "/jobs").as_deref(), Some("batch_limit"), "{v}");
    // Each job alone fits (300 rows × 2000 resamples = 6e5) but the three together do not.
    let job = json!({"kind": "interval", "data": page_loads(300), "resamples": 2000});
    let started = Instant::now();
    problem(app.post("/v1/batch", &json!({"jobs": [job, job, job]})).await, 422, "work-limit");
    assert!(started.elapsed() < Duration::from_secs(1), "a hang guard, not a speed test");
}

#[tokio::test]
async fn a_flood_against_a_one_thread_two_deep_server_is_shed_with_retry_after() {
    let app = TestApp::spawn_with(|c| {
        c.threads = Threads { threads: 1 };
        c.queue = 2;
    })
    .await;
    let mut tasks = Vec::new();
    for _ in 0..12 {
        let client = app.client.clone();
        let url = format!("{}/v1/interval", app.base);
        tasks.push(tokio::spawn(async move {
            let r = client.post(url).json(&slow_body()).send().await.unwrap();
            let retry = r.headers().get("retry-after").map(|h| h.to_str().unwrap().to_string());
            (r.status().as_u16(), retry)
        }));
    }
    // While the flood is queued, readiness says to send work elsewhere.
    tokio::time::sleep(Duration::from_millis(100)).await;
    let (ready, _, _) = app.get("/readyz").await;
    let mut ok = 0;
    let mut shed = 0;
    for t in tasks {
        match t.await.unwrap() {
            (200, _) => ok += 1,
            (503, Some(retry)) => {
                assert!(retry.parse::<u64>().unwrap() >= 1);
                shed += 1
            }
            other => panic!("only 200 or 503 with Retry-After expected, got {other:?}"),
        }
    }
    // 1 running + 2 queued are admitted at most at any moment; the rest are shed at once.
    assert!(ok >= 3 && shed >= 1, "ok {ok}, shed {shed}");
    assert_eq!(ready, 503);
    assert_eq!(metric(&metrics_text(&app).await, "bandsaw_jobs_shed_total"), shed as f64);
    // Once the flood is over and a second has passed, the server is ready again.
    tokio::time::sleep(Duration::from_millis(1100)).await;
    assert_eq!(app.get("/readyz").await.0, 200);
}

#[tokio::test]
async fn a_300_ms_time_limit_is_answered_well_within_a_second() {
    let app = TestApp::spawn().await;
    let body = json!({"data": page_loads(20000), "statistic": "median", "resamples": 900000, "time_limit_ms": 300});
    let started = Instant::now();
    let (s, _, v) = app.post("/v1/interval", &body).await;
    let took = started.elapsed();
    assert_eq!(s, 503, "{v}");
    assert_eq!(v["type"], "/problems/time-limit");
    assert!(took < Duration::from_millis(900), "answered after {took:?}");
}

#[tokio::test]
async fn a_client_that_disconnects_cancels_its_job() {
    let app = TestApp::spawn_with(|c| c.threads = Threads { threads: 1 }).await;
    let big = json!({"data": page_loads(20000), "statistic": "median", "resamples": 900000, "time_limit_ms": 60000});
    let r = app
        .client
        .post(format!("{}/v1/interval", app.base))
        .json(&big)
        .timeout(Duration::from_millis(300))
        .send()
        .await;
    assert!(r.is_err(), "the client gave up");
    // The one compute thread is free again within about one wave, not after a minute.
    let started = Instant::now();
    loop {
        let cancelled = metric(&metrics_text(&app).await, "bandsaw_jobs_cancelled_total");
        if cancelled == 1.0 {
            break;
        }
        assert!(started.elapsed() < Duration::from_secs(5), "job not cancelled: {cancelled}");
        tokio::time::sleep(Duration::from_millis(20)).await;
    }
    let (s, _, _) = app.post("/v1/interval", &json!({"data": [1, 2, 3, 4], "seed": 1})).await;
    assert_eq!(s, 200);
}

#[tokio::test]
async fn api_keys_guard_v1_but_not_health_readiness_or_metrics() {
    let dir = std::env::temp_dir().join(format!("bandsaw-keys-{}", std::process::id()));
    std::fs::write(&dir, "# team keys\nfile-key-1\n\n").unwrap();
    let path = dir.to_string_lossy().to_string();
    let app = TestApp::spawn_with(move |c| {
        c.api_keys = "alpha-key, beta-key".into();
        c.api_key_file = Some(path);
    })
    .await;
    let url = format!("{}/v1/interval", app.base);
    let body = json!({"data": [1, 2, 3, 4], "seed": 1});
    for auth in [None, Some("Bearer wrong"), Some("Basic alpha-key"), Some("Bearer alpha-ke")] {
        let mut rq = app.client.post(&url).json(&body);
        if let Some(a) = auth {
            rq = rq.header("authorization", a);
        }
        let (s, ct, v) = TestApp::read(rq.send().await.unwrap()).await;
        assert_eq!(
            (s, ct.as_str(), v["type"].as_str()),
            (401, "application/problem+json", Some("/problems/unauthorized")),
            "{auth:?}"
        );
    }
    for key in ["alpha-key", "beta-key", "file-key-1"] {
        let r = app
            .client
            .post(&url)
            .json(&body)
            .header("authorization", format!("Bearer {key}"))
            .send()
            .await
            .unwrap();
        assert_eq!(r.status().as_u16(), 200, "{key}");
    }
    let r = app.client.get(format!("{}/v1/catalog", app.base)).send().await.unwrap();
    assert_eq!(r.status().as_u16(), 401);
    for open in ["/healthz", "/readyz", "/metrics", "/openapi.json"] {
        assert_eq!(
            app.client
                .get(format!("{}{open}", app.base))
                .send()
                .await
                .unwrap()
                .status()
                .as_u16(),
            200,
            "{open}"
        );
    }
    let _ = std::fs::remove_file(dir);
}

#[tokio::test]
async fn a_panic_inside_a_job_is_a_500_for_that_request_only() {
    let app = TestApp::spawn_with(|c| c.test_hooks = true).await;
    let url = format!("{}/v1/interval", app.base);
    let body = json!({"data": [1, 2, 3, 4], "seed": 1});
    let r = app
        .client
        .post(&url)
        .json(&body)
        .header(bandsaw::api::TEST_PANIC_HEADER, "1")
        .send()
        .await
        .unwrap();
    let (s, ct, v) = TestApp::read(r).await;
    assert_eq!((s, ct.as_str()), (500, "application/problem+json"));
    assert_eq!(v["type"], "/problems/internal");
    // The server serves on, on the same pool.
    for _ in 0..3 {
        assert_eq!(app.post("/v1/interval", &body).await.0, 200);
    }
    assert_eq!(metric(&metrics_text(&app).await, "bandsaw_jobs_panicked_total"), 1.0);
}

#[tokio::test]
async fn the_hook_needs_test_hooks_switched_on() {
    let app = TestApp::spawn().await;
    let r = app
        .client
        .post(format!("{}/v1/interval", app.base))
        .json(&json!({"data": [1, 2, 3, 4], "seed": 1}))
        .header(bandsaw::api::TEST_PANIC_HEADER, "1")
        .send()
        .await
        .unwrap();
    assert_eq!(r.status().as_u16(), 200);
}

#[tokio::test]
async fn metrics_count_requests_by_route_and_status_in_prometheus_text() {
    let app = TestApp::spawn().await;
    app.post("/v1/interval", &json!({"data": [1, 2, 3, 4], "seed": 1, "resamples": 500}))
        .await;
    app.post("/v1/interval", &json!({"data": []})).await;
    app.get("/nowhere").await;
    let r = app.client.get(format!("{}/metrics", app.base)).send().await.unwrap();
    assert!(r.headers()["content-type"].to_str().unwrap().starts_with("text/plain"));
    let text = r.text().await.unwrap();
    for line in [
        "bandsaw_http_requests_total{route=\"/v1/interval\",status=\"200\"} 1",
        "bandsaw_http_requests_total{route=\"/v1/interval\",status=\"422\"} 1",
        "bandsaw_http_requests_total{route=\"unmatched\",status=\"404\"} 1",
        "bandsaw_replicates_total 500",
        "bandsaw_queue_depth 0",
        "bandsaw_jobs_running 0",
    ] {
        assert!(text.lines().any(|l| l == line), "missing {line:?} in\n{text}");
    }
    assert!(text.contains("bandsaw_http_request_duration_seconds_bucket{"));
    assert!(text.trim_end().ends_with("# EOF"));
}

#[tokio::test]
async fn request_ids_are_taken_from_the_caller_or_made() {
    let app = TestApp::spawn().await;
    let r = app
        .client
        .get(format!("{}/healthz", app.base))
        .header("x-request-id", "dash-42.a")
        .send()
        .await
        .unwrap();
    assert_eq!(r.headers()["x-request-id"], "dash-42.a");
    for unfit in ["has spaces".to_string(), "x".repeat(65), "quote\"d".to_string()] {
        let r = app
            .client
            .get(format!("{}/healthz", app.base))
            .header("x-request-id", unfit.as_str())
            .send()
            .await
            .unwrap();
        let made = r.headers()["x-request-id"].to_str().unwrap().to_string();
        assert_eq!(made.len(), 16, "{unfit:?} replaced by {made:?}");
        assert!(made.bytes().all(|b| b.is_ascii_hexdigit()));
    }
}

#[tokio::test]
async fn cors_answers_preflights_for_configured_origins_only() {
    let app = TestApp::spawn_with(|c| c.cors_origins = "https://dash.example".into()).await;
    let pre = |origin: &'static str| {
        app.client
            .request(reqwest::Method::OPTIONS, format!("{}/v1/interval", app.base))
            .header("origin", origin)
            .header("access-control-request-method", "POST")
            .header("access-control-request-headers", "content-type")
            .send()
    };
    let r = pre("https://dash.example").await.unwrap();
    assert_eq!(r.headers()["access-control-allow-origin"], "https://dash.example");
    let r = pre("https://elsewhere.example").await.unwrap();
    assert!(r.headers().get("access-control-allow-origin").is_none());
}

#[tokio::test]
async fn responses_are_compressed_when_the_client_asks() {
    let app = TestApp::spawn().await;
    let body = json!({"data": page_loads(200), "seed": 1, "include": ["replicates"]});
    let r = app
        .client
        .post(format!("{}/v1/interval", app.base))
        .header("accept-encoding", "gzip")
        .json(&body)
        .send()
        .await
        .unwrap();
    assert_eq!(r.status().as_u16(), 200);
    assert_eq!(r.headers()["content-encoding"], "gzip");
    let r = app
        .client
        .post(format!("{}/v1/interval", app.base))
        .json(&body)
        .send()
        .await
        .unwrap();
    assert!(r.headers().get("content-encoding").is_none());
}

#[tokio::test]
async fn one_and_two_compute_threads_give_identical_responses() {
    let one = TestApp::spawn_with(|c| c.threads = Threads { threads: 1 }).await;
    let two = TestApp::spawn_with(|c| c.threads = Threads { threads: 2 }).await;
    let bodies = [
        json!({"data": page_loads(300), "statistic": "median", "seed": 11, "resamples": 3000,
               "methods": ["percentile", "basic", "normal", "bca", "studentized"], "levels": [0.9, 0.99],
               "include": ["histogram", "cdf", "replicates"]}),
        json!({"data": {"columns": {"x": page_loads(80), "y": page_loads(80).iter().rev().cloned().collect::<Vec<_>>()}},
               "statistic": {"name": "slope", "x": "x", "y": "y"}, "seed": 12, "methods": ["bca", "studentized"]}),
        json!({"data": page_loads(50), "scheme": {"kind": "bayesian"}, "statistic": {"name": "trimmed_mean", "trim": 0.2}, "seed": 13}),
    ];
    for body in bodies {
        let (s1, _, a) = one.post("/v1/interval", &body).await;
        let (s2, _, b) = two.post("/v1/interval", &body).await;
        assert_eq!((s1, s2), (200, 200));
        assert_eq!(without_timing(a), without_timing(b));
    }
}

/// The pool itself, without HTTP: at most threads + queue jobs are admitted at once, and the
/// next is shed at once as `overloaded` rather than made to wait.
#[tokio::test]
async fn the_pool_admits_exactly_threads_plus_queue() {
    let pool = Arc::new(ComputePool::new(1, 2, Arc::new(Metrics::new())).unwrap());
    let (tx, rx) = std::sync::mpsc::channel::<()>();
    let rx = Arc::new(std::sync::Mutex::new(rx));
    let mut held = Vec::new();
    for _ in 0..3 {
        let (pool, rx) = (pool.clone(), rx.clone());
        held.push(tokio::spawn(async move {
            pool.run(move || {
                let _ = rx.lock().unwrap().recv_timeout(Duration::from_secs(5));
                Ok(())
            })
            .await
        }));
    }
    for _ in 0..200 {
        if pool.full() {
            break;
        }
        tokio::time::sleep(Duration::from_millis(5)).await;
    }
    assert!(pool.full(), "three jobs fill a 1 + 2 pool");
    let fourth = tokio::time::timeout(Duration::from_millis(500), pool.run(|| Ok(()))).await;
    match fourth {
        Ok(Err(p)) => assert_eq!(p.slug(), "overloaded"),
        other => panic!("the fourth job must be shed at once, got {:?}", other.map(|r| r.is_ok())),
    }
    for _ in 0..3 {
        tx.send(()).unwrap();
    }
    for h in held {
        assert!(h.await.unwrap().is_ok());
    }
}

#[tokio::test]
async fn the_page_is_served_with_a_strict_policy_and_revalidated_by_its_etag() {
    // The page needs no key even where /v1/* does (it asks for one to send).
    let app = TestApp::spawn_with(|c| c.api_keys = "page-key".into()).await;
    let resp = app.client.get(format!("{}/", app.base)).send().await.unwrap();
    let headers = resp.headers().clone();
    let header = |name: &str| headers.get(name).and_then(|v| v.to_str().ok()).unwrap_or("").to_string();
    let (status, ct, _) = TestApp::read(resp).await;
    assert_eq!(status, 200);
    assert_eq!(ct, "text/html; charset=utf-8");
    let policy = header("content-security-policy");
    assert!(policy.starts_with("default-src 'self';"), "{policy}");
    assert!(policy.contains("script-src 'sha256-"), "{policy}");
    assert!(!policy.contains("unsafe-inline") && !policy.contains("unsafe-eval"), "{policy}");
    assert_eq!(header("cache-control"), "no-cache");
    assert_eq!(header("x-content-type-options"), "nosniff");
    let etag = header("etag");
    assert!(etag.starts_with("W/\"") && etag.ends_with('"') && etag.len() > 4, "{etag:?}");
    let again = app
        .client
        .get(format!("{}/", app.base))
        .header("if-none-match", &etag)
        .send()
        .await
        .unwrap();
    let (status, _, _) = TestApp::read(again).await;
    assert_eq!(status, 304);
    let other = app
        .client
        .get(format!("{}/", app.base))
        .header("if-none-match", "\"something-else\"")
        .send()
        .await
        .unwrap();
    assert_eq!(other.status().as_u16(), 200);
    assert!(other.text().await.unwrap().contains("<form id=\"form\""));
}
