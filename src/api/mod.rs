//! The HTTP layer: routes, request parsing and validation, responses and problem documents.

pub mod interval;
pub mod problem;
pub mod request;
pub mod response;

use std::panic::AssertUnwindSafe;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Instant;

use axum::body::Body;
use axum::extract::State;
use axum::http::{header, HeaderMap, StatusCode, Uri};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use axum::{Json, Router};
use http_body_util::{BodyExt, LengthLimitError, Limited};

use self::interval::Settings;
use self::problem::Problem;

/// Shared state of every handler.
#[derive(Clone)]
pub struct AppState {
    pub pool: Arc<rayon::ThreadPool>,
    pub settings: Arc<Settings>,
    pub max_body_bytes: usize,
}

pub fn router(state: AppState) -> Router {
    Router::new()
        .route("/healthz", get(healthz))
        .route("/v1/interval", post(interval_route))
        .fallback(not_found)
        .with_state(state)
}

async fn healthz() -> Json<serde_json::Value> {
    Json(serde_json::json!({ "status": "ok" }))
}

async fn not_found(uri: Uri) -> Problem {
    Problem::not_found(uri.path())
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

/// Read the whole body under the byte limit.
pub async fn read_body(body: Body, limit: usize) -> Result<axum::body::Bytes, Problem> {
    match Limited::new(body, limit).collect().await {
        Ok(c) => Ok(c.to_bytes()),
        Err(e) if e.downcast_ref::<LengthLimitError>().is_some() => Err(Problem::body_too_large(limit)),
        Err(_) => Err(Problem::malformed_json("the body could not be read to its end")),
    }
}

/// Run `f` on the compute pool and wait for it without blocking the runtime; a panic inside
/// becomes a 500 problem for this request only.
pub async fn on_pool<T: Send + 'static>(pool: &rayon::ThreadPool, f: impl FnOnce() -> Result<T, Problem> + Send + 'static) -> Result<T, Problem> {
    let (tx, rx) = tokio::sync::oneshot::channel();
    pool.spawn(move || {
        let r = std::panic::catch_unwind(AssertUnwindSafe(f));
        let _ = tx.send(r);
    });
    match rx.await {
        Ok(Ok(r)) => r,
        Ok(Err(_panic)) => Err(Problem::internal("the computation failed unexpectedly; the server is still serving. Please report the request's parameters (not its data) if this repeats")),
        Err(_) => Err(Problem::internal("the compute pool dropped the job")),
    }
}

async fn interval_route(State(app): State<AppState>, headers: HeaderMap, body: Body) -> Response {
    let started = Instant::now();
    let result = async {
        if !is_json(&headers) {
            return Err(Problem::unsupported_media_type());
        }
        let bytes = read_body(body, app.max_body_bytes).await?;
        let cancel = Arc::new(AtomicBool::new(false));
        let _guard = CancelOnDrop(cancel.clone());
        let settings = app.settings.clone();
        on_pool(&app.pool, move || interval::compute(&bytes, &settings, cancel, started)).await
    }
    .await;
    let latency_ms = started.elapsed().as_secs_f64() * 1e3;
    match result {
        Ok(v) => {
            tracing::info!(
                route = "/v1/interval",
                status = 200,
                latency_ms,
                n = v.get("n").and_then(|x| x.as_u64()).unwrap_or(0),
                resamples = v.get("resamples").and_then(|x| x.as_u64()).unwrap_or(0),
                statistic = v.pointer("/statistic/name").and_then(|x| x.as_str()).unwrap_or(""),
                "request"
            );
            (StatusCode::OK, Json(v)).into_response()
        }
        Err(p) => {
            tracing::info!(route = "/v1/interval", status = p.status, latency_ms, problem = p.slug(), "request");
            p.into_response()
        }
    }
}
