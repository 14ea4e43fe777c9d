//! Startup and shutdown: bind the listener, build the compute pool, serve until a signal, then
//! drain.

use std::net::SocketAddr;
use std::sync::Arc;
use std::time::Duration;

use sha2::{Digest, Sha256};
use tokio::net::TcpListener;

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
        };
        let router = api::router(state, &config.cors());
        Ok(Application {
            listener,
            router,
            address,
            pool,
            grace: Duration::from_millis(config.shutdown_grace_ms),
        })
    }

    /// The address actually bound.
    pub fn address(&self) -> SocketAddr {
        self.address
    }

    /// Serve until Ctrl-C or SIGTERM; then stop accepting, mark the pool draining (so
    /// `/readyz` turns 503), let requests in flight finish within the grace period, and return.
    pub async fn run_until_stopped(self) -> std::io::Result<()> {
        let (tx, mut rx) = tokio::sync::watch::channel(false);
        let pool = self.pool.clone();
        let signal = async move {
            shutdown_signal().await;
            pool.start_draining();
            let _ = tx.send(true);
        };
        let serve = axum::serve(self.listener, self.router).with_graceful_shutdown(signal);
        let grace = self.grace;
        let deadline = async move {
            let _ = rx.wait_for(|stopping| *stopping).await;
            tokio::time::sleep(grace).await;
        };
        tokio::select! {
            r = serve => r,
            _ = deadline => {
                tracing::warn!(grace_ms = grace.as_millis() as u64, "requests still in flight at the end of the grace period; exiting");
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
