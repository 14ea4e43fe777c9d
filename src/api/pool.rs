//! The bounded compute pool: one rayon pool of `threads` workers behind an admission counter of
//! `threads + queue` jobs. Admission is decided at once: a request that finds the pool full is
//! answered `503 overloaded` with `Retry-After` instead of waiting, so latency stays bounded under
//! overload and a load balancer can send the work elsewhere.

use std::panic::AssertUnwindSafe;
use std::sync::atomic::{AtomicBool, AtomicU64, AtomicUsize, Ordering};
use std::sync::Arc;
use std::time::Instant;

use super::problem::Problem;
use crate::telemetry::Metrics;

/// How long `/readyz` stays 503 after the pool last shed a job.
const SHED_MEMORY_MS: u64 = 1000;

pub struct ComputePool {
    pool: rayon::ThreadPool,
    threads: usize,
    capacity: usize,
    admitted: Arc<AtomicUsize>,
    running: Arc<AtomicUsize>,
    draining: AtomicBool,
    born: Instant,
    last_shed_ms: AtomicU64,
    metrics: Arc<Metrics>,
}

impl ComputePool {
    pub fn new(threads: usize, queue: usize, metrics: Arc<Metrics>) -> std::io::Result<Self> {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .thread_name(|i| format!("bandsaw-compute-{i}"))
            .build()
            .map_err(std::io::Error::other)?;
        Ok(ComputePool {
            pool,
            threads,
            capacity: threads + queue,
            admitted: Arc::new(AtomicUsize::new(0)),
            running: Arc::new(AtomicUsize::new(0)),
            draining: AtomicBool::new(false),
            born: Instant::now(),
            last_shed_ms: AtomicU64::new(u64::MAX),
            metrics,
        })
    }

    pub fn threads(&self) -> usize {
        self.threads
    }

    pub fn queue_capacity(&self) -> usize {
        self.capacity - self.threads
    }

    /// Jobs admitted but not yet running.
    pub fn queue_depth(&self) -> usize {
        self.admitted
            .load(Ordering::Relaxed)
            .saturating_sub(self.running.load(Ordering::Relaxed))
    }

    pub fn running(&self) -> usize {
        self.running.load(Ordering::Relaxed)
    }

    /// Mark the pool as draining (shutdown begun): `/readyz` turns 503.
    pub fn start_draining(&self) {
        self.draining.store(true, Ordering::Relaxed);
    }

    /// True while the pool accepts work: not draining, not full, and no job shed in the last
    /// second.
    pub fn ready(&self) -> bool {
        let now = self.born.elapsed().as_millis() as u64;
        let last = self.last_shed_ms.load(Ordering::Relaxed);
        let recently_shed = last != u64::MAX && now.saturating_sub(last) < SHED_MEMORY_MS;
        !self.draining.load(Ordering::Relaxed) && !recently_shed && self.admitted.load(Ordering::Relaxed) < self.capacity
    }

    /// Seconds a shed client should wait: one per round of queued work, at least 1.
    fn retry_after(&self) -> u64 {
        1 + (self.queue_capacity() / self.threads.max(1)) as u64 / 4
    }

    /// True when a job would be refused now. Checked before reading a request body, so that a
    /// shed request costs as little as possible; admission itself is decided in [`Self::run`].
    pub fn full(&self) -> bool {
        self.admitted.load(Ordering::Acquire) >= self.capacity
    }

    /// Record a shed job and build its answer.
    pub fn shed(&self) -> Problem {
        self.last_shed_ms.store(self.born.elapsed().as_millis() as u64, Ordering::Relaxed);
        self.metrics.jobs_shed.inc();
        Problem::overloaded(self.retry_after())
    }

    /// Run `f` on the pool if there is room, without blocking the async runtime. A panic in
    /// `f` becomes a 500 problem for this job only.
    pub async fn run<T: Send + 'static>(&self, f: impl FnOnce() -> Result<T, Problem> + Send + 'static) -> Result<T, Problem> {
        let prev = self.admitted.fetch_add(1, Ordering::AcqRel);
        if prev >= self.capacity {
            self.admitted.fetch_sub(1, Ordering::AcqRel);
            return Err(self.shed());
        }
        let (tx, rx) = tokio::sync::oneshot::channel();
        let (admitted, running, metrics) = (self.admitted.clone(), self.running.clone(), self.metrics.clone());
        self.pool.spawn(move || {
            running.fetch_add(1, Ordering::AcqRel);
            let result = std::panic::catch_unwind(AssertUnwindSafe(f));
            running.fetch_sub(1, Ordering::AcqRel);
            admitted.fetch_sub(1, Ordering::AcqRel);
            let result = match result {
                Ok(r) => r,
                Err(_) => {
                    metrics.jobs_panicked.inc();
                    tracing::error!("a job panicked; answered 500 and serving on");
                    Err(Problem::internal(
                        "the computation failed unexpectedly; the server is still serving. Please report the request's parameters (not its data) if this repeats",
                    ))
                }
            };
            if let Err(p) = &result {
                match p.slug() {
                    "time-limit" => metrics.jobs_timed_out.inc(),
                    "cancelled" => metrics.jobs_cancelled.inc(),
                    _ => 0,
                };
            }
            let _ = tx.send(result);
        });
        rx.await
            .unwrap_or_else(|_| Err(Problem::internal("the compute pool dropped the job")))
    }
}
