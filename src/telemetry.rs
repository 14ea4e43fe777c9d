//! Logs and metrics.
//!
//! Logs are structured (tracing; `--log-format json` for one JSON object per line) and carry
//! the request id, route, status, latency, rows, resamples, statistic and outcome of every
//! request, never a data value. Metrics are kept in a Prometheus registry
//! (`prometheus-client`) and served as text exposition at `/metrics`.

use prometheus_client::encoding::EncodeLabelSet;
use prometheus_client::metrics::counter::Counter;
use prometheus_client::metrics::family::Family;
use prometheus_client::metrics::gauge::Gauge;
use prometheus_client::metrics::histogram::{exponential_buckets, Histogram};
use prometheus_client::registry::Registry;

#[derive(Clone, Debug, Hash, PartialEq, Eq, EncodeLabelSet)]
pub struct RouteStatus {
    pub route: String,
    pub status: u16,
}

#[derive(Clone, Debug, Hash, PartialEq, Eq, EncodeLabelSet)]
pub struct Route {
    pub route: String,
}

/// Every metric the service exposes.
pub struct Metrics {
    registry: Registry,
    pub requests: Family<RouteStatus, Counter>,
    pub latency: Family<Route, Histogram>,
    pub queue_depth: Gauge,
    pub jobs_running: Gauge,
    pub jobs_shed: Counter,
    pub jobs_timed_out: Counter,
    pub jobs_cancelled: Counter,
    pub jobs_panicked: Counter,
    pub replicates: Counter,
}

impl Default for Metrics {
    fn default() -> Self {
        Self::new()
    }
}

impl Metrics {
    pub fn new() -> Self {
        let mut registry = Registry::with_prefix("bandsaw");
        let requests = Family::<RouteStatus, Counter>::default();
        // 0.5 ms to about 65 s in factors of two.
        let latency = Family::<Route, Histogram>::new_with_constructor(|| Histogram::new(exponential_buckets(0.0005, 2.0, 18)));
        let queue_depth = Gauge::default();
        let jobs_running = Gauge::default();
        let jobs_shed = Counter::default();
        let jobs_timed_out = Counter::default();
        let jobs_cancelled = Counter::default();
        let jobs_panicked = Counter::default();
        let replicates = Counter::default();
        registry.register("http_requests", "HTTP requests by route and status", requests.clone());
        registry.register("http_request_duration_seconds", "HTTP request latency by route", latency.clone());
        registry.register("queue_depth", "Jobs admitted and waiting for a compute thread", queue_depth.clone());
        registry.register("jobs_running", "Jobs running on the compute pool", jobs_running.clone());
        registry.register(
            "jobs_shed",
            "Jobs refused with 503 overloaded because the queue was full",
            jobs_shed.clone(),
        );
        registry.register("jobs_timed_out", "Jobs stopped at their time limit", jobs_timed_out.clone());
        registry.register(
            "jobs_cancelled",
            "Jobs stopped because the client went away",
            jobs_cancelled.clone(),
        );
        registry.register(
            "jobs_panicked",
            "Jobs that failed with an internal error (the server served on)",
            jobs_panicked.clone(),
        );
        registry.register("replicates", "Bootstrap replicates computed", replicates.clone());
        Metrics {
            registry,
            requests,
            latency,
            queue_depth,
            jobs_running,
            jobs_shed,
            jobs_timed_out,
            jobs_cancelled,
            jobs_panicked,
            replicates,
        }
    }

    /// The Prometheus text exposition of every metric.
    pub fn encode(&self) -> String {
        let mut out = String::new();
        prometheus_client::encoding::text::encode(&mut out, &self.registry).expect("writing to a String cannot fail");
        out
    }
}

/// How log lines are written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum LogFormat {
    /// One line a person reads, coloured only when standard error is a terminal.
    Pretty,
    /// One JSON object per line, for log collectors.
    Json,
}

/// Install the global log subscriber, filtered by `BANDSAW_LOG` (default `info`), written to
/// standard error. Colour codes are written only to a terminal: in a file or a collector they
/// would be noise.
pub fn init_logging(format: LogFormat) {
    use std::io::IsTerminal;
    let filter = tracing_subscriber::EnvFilter::try_from_env("BANDSAW_LOG").unwrap_or_else(|_| "info".into());
    let builder = tracing_subscriber::fmt()
        .with_env_filter(filter)
        .with_writer(std::io::stderr)
        .with_ansi(std::io::stderr().is_terminal());
    let _ = match format {
        LogFormat::Json => builder.json().flatten_event(true).with_current_span(true).try_init(),
        LogFormat::Pretty => builder.try_init(),
    };
}
