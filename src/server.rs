//! Startup and shutdown: bind the listener, build the compute pool, serve until a signal.

use std::net::SocketAddr;
use std::sync::Arc;

use tokio::net::TcpListener;

use crate::api::{self, AppState};
use crate::config::Config;

/// A bound, ready-to-run server.
pub struct Application {
    listener: TcpListener,
    router: axum::Router,
    address: SocketAddr,
}

impl Application {
    /// Bind the listener (port 0 picks a free port) and build the pool and routes.
    pub async fn build(config: Config) -> std::io::Result<Application> {
        let listener = TcpListener::bind(&config.listen).await?;
        let address = listener.local_addr()?;
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(config.thread_count())
            .thread_name(|i| format!("bandsaw-compute-{i}"))
            .build()
            .map_err(std::io::Error::other)?;
        let state = AppState { pool: Arc::new(pool), settings: Arc::new(config.settings()), max_body_bytes: config.max_body_bytes };
        Ok(Application { listener, router: api::router(state), address })
    }

    /// The address actually bound.
    pub fn address(&self) -> SocketAddr {
        self.address
    }

    /// Serve until Ctrl-C or SIGTERM, then finish the requests in flight and return.
    pub async fn run_until_stopped(self) -> std::io::Result<()> {
        axum::serve(self.listener, self.router).with_graceful_shutdown(shutdown_signal()).await
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
