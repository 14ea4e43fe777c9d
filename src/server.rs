//! Startup and shutdown: bind the listener, build the compute pool, serve until a signal, then
//! drain.
//!
//! The accept loop is our own (hyper's HTTP/1 connection under a tokio timer) rather than
//! `axum::serve`, for three things that one does not offer: a header-read timeout (hyper applies
//! it only with a timer), a limit on connections served at once, and both under the same
//! graceful shutdown.

use std::net::SocketAddr;
use std::sync::Arc;
use std::time::Duration;

use hyper_util::rt::{TokioIo, TokioTimer};
use hyper_util::server::graceful::GracefulShutdown;
use hyper_util::service::TowerToHyperService;
use sha2::{Digest, Sha256};
use tokio::net::TcpListener;
use tokio::sync::Semaphore;

use crate::api::pool::ComputePool;
use crate::api::{self, AppState};
use crate::config::Config;
use crate::telemetry::Metrics;

/// A bound, ready-to-run server.
pub struct Application {
    listener: TcpListener,
    router: axum::Router,
    address: SocketAddr,
    pool: Arc<ComputePool>,
    grace: Duration,
    read_timeout: Duration,
    max_connections: usize,
}

impl Application {
    /// Bind the listener (port 0 picks a free port) and build the pool and routes.
    pub async fn build(config: Config) -> std::io::Result<Application> {
        let keys = config.keys()?;
        let listener = TcpListener::bind(&config.listen).await?;
        let address = listener.local_addr()?;
        let metrics = Arc::new(Metrics::new());
        let pool = Arc::new(ComputePool::new(config.threads.count(), config.queue_depth(), metrics.clone())?);
        let state = AppState {
            pool: pool.clone(),
            limits: Arc::new(config.limits.clone()),
            metrics,
            max_body_bytes: config.max_body_bytes,
            max_batch_jobs: config.max_batch_jobs,
            key_digests: Arc::new(keys.iter().map(|k| Sha256::digest(k.as_bytes()).into()).collect()),
            test_hooks: config.test_hooks,
            read_timeout: Duration::from_millis(config.request_read_timeout_ms),
        };
        let router = api::router(state, &config.cors());
        Ok(Application {
            listener,
            router,
            address,
            pool,
            grace: Duration::from_millis(config.shutdown_grace_ms),
            read_timeout: Duration::from_millis(config.request_read_timeout_ms),
            max_connections: config.max_connections,
        })
    }

    /// The address actually bound.
    pub fn address(&self) -> SocketAddr {
        self.address
    }

    /// Serve until Ctrl-C or SIGTERM; then stop accepting, mark the pool draining (so
    /// `/readyz` turns 503), let requests in flight finish within the grace period, and return.
    pub async fn run_until_stopped(self) -> std::io::Result<()> {
        let mut http = hyper::server::conn::http1::Builder::new();
        http.timer(TokioTimer::new()).header_read_timeout(self.read_timeout);
        let graceful = GracefulShutdown::new();
        let connections = Arc::new(Semaphore::new(self.max_connections));
        let signal = shutdown_signal();
        tokio::pin!(signal);
        loop {
            // A connection slot first, then the connection: past the limit, clients wait in the
            // listen backlog instead of each holding a task and a body buffer here.
            let permit = tokio::select! {
                p = connections.clone().acquire_owned() => p.expect("the semaphore is never closed"),
                () = &mut signal => break,
            };
            let stream = tokio::select! {
                r = self.listener.accept() => match r {
                    Ok((stream, _)) => stream,
                    Err(e) => {
                        // Out of file descriptors and the like: wait instead of spinning.
                        tracing::warn!(error = %e, "accept failed; retrying shortly");
                        tokio::time::sleep(Duration::from_millis(50)).await;
                        continue;
                    }
                },
                () = &mut signal => break,
            };
            let _ = stream.set_nodelay(true);
            let service = TowerToHyperService::new(self.router.clone());
            let conn = graceful.watch(http.serve_connection(TokioIo::new(stream), service));
            tokio::spawn(async move {
                if let Err(e) = conn.await {
                    tracing::debug!(error = %e, "connection ended with an error");
                }
                drop(permit);
            });
        }
        drop(self.listener);
        self.pool.start_draining();
        tokio::select! {
            () = graceful.shutdown() => Ok(()),
            () = tokio::time::sleep(self.grace) => {
                tracing::warn!(grace_ms = self.grace.as_millis() as u64, "requests still in flight at the end of the grace period; exiting");
                Ok(())
            }
        }
    }
}

async fn shutdown_signal() {
    let ctrl_c = async {
        let _ = tokio::signal::ctrl_c().await;
    };
    #[cfg(unix)]
    let terminate = async {
        match tokio::signal::unix::signal(tokio::signal::unix::SignalKind::terminate()) {
            Ok(mut s) => {
                s.recv().await;
            }
            Err(_) => std::future::pending::<()>().await,
        }
    };
    #[cfg(not(unix))]
    let terminate = std::future::pending::<()>();
    tokio::select! {
        _ = ctrl_c => {},
        _ = terminate => {},
    }
    tracing::info!("shutdown signal received; finishing requests in flight");
}
