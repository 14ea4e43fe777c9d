//! The HTTP layer: routes, request parsing and validation, responses and problem documents.
//!
//! Every route is served by tokio; compute (including parsing large bodies) goes to the
//! bounded [`pool::ComputePool`]. One middleware, [`observe`], gives each request an id, logs
//! one structured line for it and counts it in the metrics; another, [`require_key`], checks API
//! keys on `/v1/*` when keys are configured.

pub mod batch;
pub mod boxed;
pub mod catalog;
pub mod compare;
pub mod data;
pub mod decode;
pub mod fields;
pub mod interval;
pub mod job;
pub mod lift;
pub mod openapi;
pub mod page;
pub mod picture;
pub mod pool;
pub mod problem;
pub mod request;
pub mod response;
pub mod rules;
pub mod schema;
pub mod svg;
pub mod token;

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Instant;

use axum::body::Body;
use axum::extract::{MatchedPath, Request, State};
use axum::http::{header, HeaderMap, HeaderValue, Method, StatusCode, Uri};
use axum::middleware::{self, Next};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use axum::{Json, Router};
use http_body_util::{BodyExt, LengthLimitError, Limited};
use sha2::{Digest, Sha256};
use subtle::ConstantTimeEq;
use tower_http::compression::CompressionLayer;
use tower_http::cors::{AllowOrigin, CorsLayer};

use serde::Serialize;
use utoipa::ToSchema;

use self::pool::ComputePool;
use self::problem::Problem;
use crate::config::Limits;
use crate::engine::data::MAX_MAGNITUDE;
use crate::engine::rng::MAX_SEED;
use crate::telemetry::{Metrics, Route, RouteStatus};

/// Shared state of every handler.
#[derive(Clone)]
pub struct AppState {
    pub pool: Arc<ComputePool>,
    pub limits: Arc<Limits>,
    pub metrics: Arc<Metrics>,
    pub max_body_bytes: usize,
    pub max_batch_jobs: usize,
    /// SHA-256 of every accepted API key; empty: no keys needed.
    pub key_digests: Arc<Vec<[u8; 32]>>,
    pub test_hooks: bool,
    /// How long a client may take to send a body (headers have their own timeout in the
    /// connection, of the same length).
    pub read_timeout: std::time::Duration,
}

/// A compute route's answer: JSON, or a picture when the caller's `Accept` prefers one.
pub enum Answer {
    Json(serde_json::Value),
    Svg(Drawn),
}

/// A picture of a job that ran, with what the job's log line says of it.
pub struct Drawn {
    pub svg: String,
    pub facts: JobFacts,
}

/// What a compute route learned about its job, for the request's log line. Never data values.
#[derive(Debug, Clone, Default)]
pub struct JobFacts {
    pub rows: u64,
    pub resamples: u64,
    pub statistic: String,
    pub jobs: usize,
}

crate::wire_enum! {
    /// The answer of the health and readiness routes.
    pub enum HealthStatus {
        /// From `/healthz`: the process serves.
        Ok = "ok",
        /// From `/readyz`: the pool accepts work.
        Ready = "ready",
    }
}

/// Liveness or readiness.
#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct Health {
    pub status: HealthStatus,
}

/// Header that makes a job panic when test hooks are on (tests of panic isolation only).
pub const TEST_PANIC_HEADER: &str = "x-bandsaw-test-panic";
/// Header that stops an interval job after this many replicates as if its time limit had passed,
/// when test hooks are on (deterministic partial results for tests).
pub const TEST_STOP_AFTER_HEADER: &str = "x-bandsaw-test-stop-after";

pub fn router(state: AppState, cors_origins: &[String]) -> Router {
    let v1 = Router::new()
        .route("/v1/interval", post(interval_route))
        .route("/v1/compare", post(compare_route))
        .route("/v1/batch", post(batch_route))
        .route("/v1/catalog", get(catalog_route))
        .route_layer(middleware::from_fn_with_state(state.clone(), require_key));
    let mut app = Router::new()
        .merge(v1)
        .route("/healthz", get(healthz))
        .route("/readyz", get(readyz))
        .route("/metrics", get(metrics_route))
        .route("/openapi.json", get(openapi_route))
        .route("/", get(page::page_route))
        .fallback(not_found)
        .method_not_allowed_fallback(method_not_allowed)
        .layer(middleware::from_fn_with_state(state.clone(), observe))
        .layer(CompressionLayer::new());
    if !cors_origins.is_empty() {
        let origins = if cors_origins.iter().any(|o| o == "*") {
            AllowOrigin::any()
        } else {
            AllowOrigin::list(cors_origins.iter().filter_map(|o| HeaderValue::from_str(o).ok()))
        };
        app = app.layer(
            CorsLayer::new()
                .allow_origin(origins)
                .allow_methods([Method::GET, Method::POST])
                .allow_headers([
                    header::CONTENT_TYPE,
                    header::AUTHORIZATION,
                    header::ACCEPT,
                    header::HeaderName::from_static("x-request-id"),
                ])
                .expose_headers([header::HeaderName::from_static("x-request-id"), header::RETRY_AFTER]),
        );
    }
    app.with_state(state)
}

/// Liveness
///
/// 200 while the process serves.
#[utoipa::path(
    get,
    path = "/healthz",
    operation_id = "healthz",
    tag = "operations",
    responses(
        (status = 200, description = "The process serves.", body = Health, content_type = "application/json", example = json!({"status": "ok"})),
    ),
)]
pub(crate) async fn healthz() -> Json<Health> {
    Json(Health { status: HealthStatus::Ok })
}

/// Readiness
///
/// 200 while the compute pool accepts work; 503 while it sheds load (and for a second after it
/// last shed a job) or while the server drains for shutdown.
#[utoipa::path(
    get,
    path = "/readyz",
    operation_id = "readyz",
    tag = "operations",
    responses(
        (status = 200, description = "The pool accepts work.", body = Health, content_type = "application/json", example = json!({"status": "ready"})),
        (status = 503, response = openapi::NotReady),
    ),
)]
pub(crate) async fn readyz(State(app): State<AppState>) -> Response {
    if app.pool.ready() {
        (
            StatusCode::OK,
            Json(Health {
                status: HealthStatus::Ready,
            }),
        )
            .into_response()
    } else {
        let mut p = Problem::new(
            StatusCode::SERVICE_UNAVAILABLE,
            "not-ready",
            "Not accepting work",
            "the pool is shedding load or the server is draining for shutdown; send work to another replica",
        );
        p.retry_after = Some(1);
        p.into_response()
    }
}

/// Prometheus metrics
///
/// The Prometheus text exposition (format 0.0.4): requests by route and status, latency,
/// replicates drawn, jobs shed, timed out, cancelled and panicked, queue depth and running jobs.
#[utoipa::path(
    get,
    path = "/metrics",
    operation_id = "metrics",
    tag = "operations",
    responses(
        (status = 200, description = "The metrics.", body = String, content_type = "text/plain; version=0.0.4; charset=utf-8"),
    ),
)]
pub(crate) async fn metrics_route(State(app): State<AppState>) -> Response {
    app.metrics.queue_depth.set(app.pool.queue_depth() as i64);
    app.metrics.jobs_running.set(app.pool.running() as i64);
    let mut resp = app.metrics.encode().into_response();
    resp.headers_mut().insert(
        header::CONTENT_TYPE,
        HeaderValue::from_static("text/plain; version=0.0.4; charset=utf-8"),
    );
    resp
}

/// This document
///
/// The OpenAPI 3.1 document of this API, identical to `openapi/openapi.json` in the repository.
#[utoipa::path(
    get,
    path = "/openapi.json",
    operation_id = "openapi",
    tag = "discovery",
    responses(
        (status = 200, description = "The OpenAPI document.", body = Object, content_type = "application/json"),
    ),
)]
pub(crate) async fn openapi_route() -> Response {
    let mut resp = openapi::document_json().into_response();
    resp.headers_mut()
        .insert(header::CONTENT_TYPE, HeaderValue::from_static("application/json"));
    resp
}

/// What this server computes, and its limits
///
/// Every statistic with its parameters, every resampling scheme, every interval method, the
/// resample modes, the inclusions, the stable warning codes, and this server's limits.
#[utoipa::path(
    get,
    path = "/v1/catalog",
    operation_id = "catalog",
    tag = "discovery",
    responses(
        (status = 200, description = "The catalogue.", body = catalog::CatalogResponse, content_type = "application/json"),
        (status = 401, response = openapi::Unauthorized),
    ),
    security(("bearer" = []), ()),
)]
pub(crate) async fn catalog_route(State(app): State<AppState>) -> Json<catalog::CatalogResponse> {
    let l = &app.limits;
    Json(catalog::catalog(catalog::LimitsEntry {
        max_body_bytes: app.max_body_bytes,
        max_rows: l.max_rows,
        max_resamples: l.max_resamples,
        work_limit: l.work_limit,
        default_time_limit_ms: l.default_time_limit_ms,
        max_time_limit_ms: l.max_time_limit_ms,
        max_batch_jobs: app.max_batch_jobs,
        threads: app.pool.threads(),
        queue: app.pool.queue_capacity(),
        max_seed: MAX_SEED,
        max_magnitude: MAX_MAGNITUDE,
    }))
}

async fn not_found(uri: Uri) -> Problem {
    Problem::not_found(uri.path())
}

async fn method_not_allowed(method: Method, uri: Uri) -> Problem {
    Problem::new(
        StatusCode::METHOD_NOT_ALLOWED,
        "method-not-allowed",
        "Method not allowed",
        format!("{} does not answer {method}; see /openapi.json for each route's method", uri.path()),
    )
}

/// Request id: the caller's `x-request-id` when it is short and plain, else a fresh one.
fn request_id(headers: &HeaderMap) -> String {
    headers
        .get("x-request-id")
        .and_then(|v| v.to_str().ok())
        .filter(|s| !s.is_empty() && s.len() <= 64 && s.bytes().all(|b| b.is_ascii_alphanumeric() || b"-_.:".contains(&b)))
        .map(String::from)
        .unwrap_or_else(|| format!("{:016x}", rand::random::<u64>()))
}

/// Give each request an id, log one line for it (never data values) and count it.
async fn observe(State(app): State<AppState>, req: Request, next: Next) -> Response {
    let started = Instant::now();
    let route = req
        .extensions()
        .get::<MatchedPath>()
        .map(|m| m.as_str().to_string())
        .unwrap_or_else(|| "unmatched".into());
    let id = request_id(req.headers());
    let method = req.method().clone();
    let mut resp = next.run(req).await;
    let status = resp.status().as_u16();
    let latency = started.elapsed().as_secs_f64();
    if let Ok(v) = HeaderValue::from_str(&id) {
        resp.headers_mut().insert("x-request-id", v);
    }
    app.metrics
        .requests
        .get_or_create(&RouteStatus {
            route: route.clone(),
            status,
        })
        .inc();
    app.metrics.latency.get_or_create(&Route { route: route.clone() }).observe(latency);
    let facts = resp.extensions().get::<JobFacts>().cloned().unwrap_or_default();
    let outcome = resp
        .extensions()
        .get::<Outcome>()
        .map(|o| o.0)
        .unwrap_or(if status < 400 { "ok" } else { "error" });
    tracing::info!(
        request_id = %id,
        method = %method,
        route = %route,
        status,
        latency_ms = latency * 1e3,
        rows = facts.rows,
        resamples = facts.resamples,
        statistic = %facts.statistic,
        jobs = facts.jobs,
        outcome,
        "request"
    );
    resp
}

/// The outcome slug of a request for its log line ("ok" or a problem slug).
#[derive(Debug, Clone, Copy)]
struct Outcome(&'static str);

fn outcome_of(p: &Problem) -> &'static str {
    match p.slug() {
        "malformed-json" => "malformed-json",
        "body-too-large" => "body-too-large",
        "request-timeout" => "request-timeout",
        "unsupported-media-type" => "unsupported-media-type",
        "invalid-request" => "invalid-request",
        "work-limit" => "work-limit",
        "data-mismatch" => "data-mismatch",
        "unauthorized" => "unauthorized",
        "overloaded" => "overloaded",
        "time-limit" => "time-limit",
        "cancelled" => "cancelled",
        _ => "internal",
    }
}

/// Refuse `/v1/*` without a valid key when keys are configured. Keys are compared as SHA-256
/// digests in constant time, so neither the key nor its length leaks through timing.
async fn require_key(State(app): State<AppState>, req: Request, next: Next) -> Response {
    if app.key_digests.is_empty() {
        return next.run(req).await;
    }
    let presented = req
        .headers()
        .get(header::AUTHORIZATION)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.strip_prefix("Bearer ").or_else(|| v.strip_prefix("bearer ")))
        .map(|k| -> [u8; 32] { Sha256::digest(k.trim().as_bytes()).into() });
    let ok = presented.is_some_and(|d| app.key_digests.iter().fold(0u8, |acc, k| acc | k.ct_eq(&d).unwrap_u8()) == 1);
    if ok {
        next.run(req).await
    } else {
        let mut resp = Problem::unauthorized().into_response();
        resp.headers_mut()
            .insert(header::WWW_AUTHENTICATE, HeaderValue::from_static("Bearer"));
        resp
    }
}

/// Sets the job's cancel flag when the request future is dropped (the client went away), so
/// the pool stops working for nobody within one wave.
struct CancelOnDrop(Arc<AtomicBool>);

impl Drop for CancelOnDrop {
    fn drop(&mut self) {
        self.0.store(true, Ordering::Relaxed);
    }
}

fn is_json(headers: &HeaderMap) -> bool {
    headers
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .map(|v| {
            let essence = v.split(';').next().unwrap_or("").trim().to_ascii_lowercase();
            essence == "application/json" || (essence.starts_with("application/") && essence.ends_with("+json"))
        })
        .unwrap_or(false)
}

/// The body length the client announced, if any.
fn declared_length(headers: &HeaderMap) -> Option<u64> {
    headers.get(header::CONTENT_LENGTH)?.to_str().ok()?.trim().parse().ok()
}

/// Read the whole body under the byte limit, on the async runtime (never on a compute thread, so
/// a slow sender holds only its connection), within `timeout` in all: a deadline for the whole
/// body rather than between bytes, so that trickling a byte at a time does not keep it open.
pub async fn read_body(body: Body, limit: usize, timeout: std::time::Duration) -> Result<axum::body::Bytes, Problem> {
    match tokio::time::timeout(timeout, Limited::new(body, limit).collect()).await {
        Err(_) => Err(Problem::request_timeout(timeout.as_millis() as u64)),
        Ok(Ok(c)) => Ok(c.to_bytes()),
        Ok(Err(e)) if e.downcast_ref::<LengthLimitError>().is_some() => Err(Problem::body_too_large(limit)),
        Ok(Err(_)) => Err(Problem::malformed_json("the body could not be read to its end")),
    }
}

/// The shared path of the compute routes: media type, body limit, cancel on disconnect, the
/// pool, and the response with its log facts.
async fn compute_route(
    app: AppState,
    headers: HeaderMap,
    body: Body,
    work: impl FnOnce(axum::body::Bytes, Arc<Limits>, Arc<AtomicBool>, Instant) -> Result<Answer, Problem> + Send + 'static,
) -> Response {
    let started = Instant::now();
    let panic_hook = app.test_hooks && headers.contains_key(TEST_PANIC_HEADER);
    let result = async {
        if !is_json(&headers) {
            return Err(Problem::unsupported_media_type());
        }
        // Refused before a byte of the body is read: a client that sent `Expect: 100-continue`
        // then never sends it.
        if declared_length(&headers).is_some_and(|n| n > app.max_body_bytes as u64) {
            return Err(Problem::body_too_large(app.max_body_bytes));
        }
        if app.pool.full() {
            return Err(app.pool.shed());
        }
        let bytes = read_body(body, app.max_body_bytes, app.read_timeout).await?;
        let cancel = Arc::new(AtomicBool::new(false));
        let _guard = CancelOnDrop(cancel.clone());
        let limits = app.limits.clone();
        app.pool
            .run(move || {
                if panic_hook {
                    panic!("test hook: a job that panics");
                }
                work(bytes, limits, cancel, started)
            })
            .await
    }
    .await;
    match result {
        Ok(answer) => {
            let (mut resp, facts) = match answer {
                Answer::Json(v) => {
                    let facts = facts_of(&v);
                    ((StatusCode::OK, Json(v)).into_response(), facts)
                }
                Answer::Svg(d) => (
                    (StatusCode::OK, [(header::CONTENT_TYPE, picture::SVG)], d.svg).into_response(),
                    d.facts,
                ),
            };
            app.metrics.replicates.inc_by(facts.resamples);
            resp.extensions_mut().insert(facts);
            resp.extensions_mut().insert(Outcome("ok"));
            resp
        }
        Err(p) => {
            let outcome = outcome_of(&p);
            let mut resp = p.into_response();
            resp.extensions_mut().insert(Outcome(outcome));
            resp
        }
    }
}

fn facts_of(v: &serde_json::Value) -> JobFacts {
    let one = |r: &serde_json::Value| JobFacts {
        rows: r.get("n").and_then(|x| x.as_u64()).unwrap_or(0),
        resamples: r.get("resamples").and_then(|x| x.as_u64()).unwrap_or(0),
        statistic: r.pointer("/statistic/name").and_then(|x| x.as_str()).unwrap_or("").to_string(),
        jobs: 1,
    };
    match v.get("results").and_then(|r| r.as_array()) {
        None => one(v),
        Some(results) => {
            let mut f = JobFacts {
                jobs: results.len(),
                ..JobFacts::default()
            };
            for r in results.iter().filter_map(|r| r.get("ok")) {
                let g = one(r);
                f.rows += g.rows;
                f.resamples += g.resamples;
            }
            f.statistic = "batch".into();
            f
        }
    }
}

/// One bootstrap interval
///
/// One sample (or one set of columns read together as rows), one statistic: the estimate, its
/// standard error and bias, the intervals of every requested method at every requested level,
/// each endpoint with its Monte Carlo error, diagnostics, and a replay token. With `token`
/// instead of the parameters, the same data gives the identical response again.
#[utoipa::path(
    post,
    path = "/v1/interval",
    operation_id = "interval",
    tag = "intervals",
    request_body(
        content = request::IntervalRequest,
        content_type = "application/json",
        description = "The sample, the statistic and how to resample; only `data` is required.",
        example = json!(openapi::interval_request_example()),
    ),
    responses(
        (status = 200, description = "The result; a picture of it (`image/svg+xml`) when `Accept` prefers one (docs/api.md, Pictures).", content(
            (response::IntervalResponse = "application/json", example = json!(openapi::interval_response_example())),
            (String = "image/svg+xml"),
        )),
        (status = 400, response = openapi::MalformedJson),
        (status = 401, response = openapi::Unauthorized),
        (status = 408, response = openapi::RequestTimeout),
        (status = 409, response = openapi::DataMismatch),
        (status = 413, response = openapi::BodyTooLarge),
        (status = 415, response = openapi::UnsupportedMediaType),
        (status = 422, response = openapi::Unprocessable),
        (status = 500, response = openapi::Internal),
        (status = 503, response = openapi::Unavailable),
    ),
    security(("bearer" = []), ()),
)]
pub(crate) async fn interval_route(State(app): State<AppState>, headers: HeaderMap, body: Body) -> Response {
    let cap = headers
        .get(TEST_STOP_AFTER_HEADER)
        .filter(|_| app.test_hooks)
        .and_then(|v| v.to_str().ok()?.parse().ok());
    let svg = picture::prefers_svg(accept(&headers));
    let resp = compute_route(app, headers, body, move |bytes, limits, cancel, started| match svg {
        true => interval::draw(&bytes, &limits, cancel, started, cap).map(Answer::Svg),
        false => interval::compute(&bytes, &limits, cancel, started, cap).map(Answer::Json),
    })
    .await;
    vary_accept(resp)
}

/// The `Accept` header, when readable.
fn accept(headers: &HeaderMap) -> Option<&str> {
    headers.get(header::ACCEPT).and_then(|v| v.to_str().ok())
}

/// Tell caches that the answer depends on `Accept` (JSON or a picture).
fn vary_accept(mut resp: Response) -> Response {
    resp.headers_mut().append(header::VARY, HeaderValue::from_static("accept"));
    resp
}

/// Two samples compared, with a verdict
///
/// A baseline and a candidate (the runs of a benchmark before and after a change, a metric in
/// two periods): the contrast of one statistic between them (a ratio or a difference) with every
/// part of an interval response, and a verdict read from the first method at the first level
/// against the tolerance band: `regression`, `improvement`, `equivalent` or `inconclusive`.
/// Without `resamples`, a comparison of few runs is enumerated exactly.
#[utoipa::path(
    post,
    path = "/v1/compare",
    operation_id = "compare",
    tag = "intervals",
    request_body(
        content = compare::CompareRequest,
        content_type = "application/json",
        description = "The two samples, the statistic, the contrast and what counts as no change; only `baseline` and `candidate` are required.",
        example = json!(openapi::compare_request_example()),
    ),
    responses(
        (status = 200, description = "The comparison and its verdict; a picture of it (`image/svg+xml`) when `Accept` prefers one (docs/api.md, Pictures).", content(
            (compare::CompareResponse = "application/json", example = json!(openapi::compare_response_example())),
            (String = "image/svg+xml"),
        )),
        (status = 400, response = openapi::MalformedJson),
        (status = 401, response = openapi::Unauthorized),
        (status = 408, response = openapi::RequestTimeout),
        (status = 409, response = openapi::DataMismatch),
        (status = 413, response = openapi::BodyTooLarge),
        (status = 415, response = openapi::UnsupportedMediaType),
        (status = 422, response = openapi::Unprocessable),
        (status = 500, response = openapi::Internal),
        (status = 503, response = openapi::Unavailable),
    ),
    security(("bearer" = []), ()),
)]
pub(crate) async fn compare_route(State(app): State<AppState>, headers: HeaderMap, body: Body) -> Response {
    let svg = picture::prefers_svg(accept(&headers));
    let resp = compute_route(app, headers, body, move |bytes, limits, cancel, started| match svg {
        true => compare::draw(&bytes, &limits, cancel, started).map(Answer::Svg),
        false => compare::compute(&bytes, &limits, cancel, started).map(Answer::Json),
    })
    .await;
    vary_accept(resp)
}

/// Many jobs in one request
///
/// Many jobs in one request, checked together and run together on one compute slot's threads,
/// sharing the request's time limit; the estimated work of all of them together must be within the
/// server's work limit. One `ok` result or one `error` problem per job, in the order of the
/// jobs: a bad job does not sink the batch, and its problem's pointers start with
/// `/jobs/<index>` so that they point into the batch request.
#[utoipa::path(
    post,
    path = "/v1/batch",
    operation_id = "batch",
    tag = "intervals",
    request_body(
        content = batch::BatchRequest,
        content_type = "application/json",
        description = "The jobs, and how their results hold together as a family.",
        example = json!(openapi::batch_request_example()),
    ),
    responses(
        (status = 200, description = "One result or one problem per job, in order.", body = batch::BatchResponse, content_type = "application/json", example = json!(openapi::batch_response_example())),
        (status = 400, response = openapi::MalformedJson),
        (status = 401, response = openapi::Unauthorized),
        (status = 408, response = openapi::RequestTimeout),
        (status = 413, response = openapi::BodyTooLarge),
        (status = 415, response = openapi::UnsupportedMediaType),
        (status = 422, response = openapi::Unprocessable),
        (status = 500, response = openapi::Internal),
        (status = 503, response = openapi::Overloaded),
    ),
    security(("bearer" = []), ()),
)]
pub(crate) async fn batch_route(State(app): State<AppState>, headers: HeaderMap, body: Body) -> Response {
    let max_jobs = app.max_batch_jobs;
    compute_route(app, headers, body, move |bytes, limits, cancel, started| {
        batch::compute(&bytes, &limits, max_jobs, cancel, started).map(Answer::Json)
    })
    .await
}
