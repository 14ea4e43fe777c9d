//! Configuration: every limit has a safe default, written once here (or in the engine, for the
//! engine's own), and can be set by flag or `BANDSAW_*` environment variable.

use clap::Args;

use crate::engine::job::{DEFAULT_MAX_RESAMPLES, DEFAULT_MAX_WORK};
use crate::telemetry::LogFormat;

pub const DEFAULT_LISTEN: &str = "127.0.0.1:8080";
pub const DEFAULT_MAX_BODY_BYTES: usize = 32 * 1024 * 1024;
pub const DEFAULT_MAX_ROWS: u64 = 1_000_000;
pub const DEFAULT_TIME_LIMIT_MS: u64 = 10_000;
pub const DEFAULT_MAX_TIME_LIMIT_MS: u64 = 60_000;
pub const DEFAULT_MAX_BATCH_JOBS: usize = 1000;
pub const DEFAULT_SHUTDOWN_GRACE_MS: u64 = 30_000;
/// How long a client may take to send a request's headers, and again its body: long enough for
/// a full-size body over a slow link, short enough that a client trickling bytes lets go of its
/// connection. (The header timer also closes a kept-alive connection idle this long.)
pub const DEFAULT_REQUEST_READ_TIMEOUT_MS: u64 = 30_000;
/// Connections served at once; further ones wait in the listen backlog. Each may hold one body
/// of up to `max_body_bytes` while it is read, so this times the body limit bounds that memory.
pub const DEFAULT_MAX_CONNECTIONS: usize = 256;
/// Jobs that may wait per compute thread when no queue depth is set.
pub const QUEUE_PER_THREAD: usize = 4;

/// What one request may ask of the engine: the same whether it is served or run in-process.
#[derive(Debug, Clone, Args)]
pub struct Limits {
    /// Most rows (or distinct values) in one sample.
    // The engine numbers rows in 32 bits.
    #[arg(long, env = "BANDSAW_MAX_ROWS", default_value_t = DEFAULT_MAX_ROWS, value_parser = clap::value_parser!(u64).range(1..=u64::from(u32::MAX)))]
    pub max_rows: u64,
    /// Most resamples in one job (also the limit on distinct resamples for "exact").
    #[arg(long, env = "BANDSAW_MAX_RESAMPLES", default_value_t = DEFAULT_MAX_RESAMPLES)]
    pub max_resamples: u64,
    /// Most row-draws (rows × resamples × the statistic's relative cost, or a shortcut's own cost
    /// per resample) in one job (or, served, in one batch).
    #[arg(long, env = "BANDSAW_WORK_LIMIT", default_value_t = DEFAULT_MAX_WORK)]
    pub work_limit: f64,
    /// Time limit of a request that sets none, in milliseconds.
    #[arg(long, env = "BANDSAW_DEFAULT_TIME_LIMIT_MS", default_value_t = DEFAULT_TIME_LIMIT_MS)]
    pub default_time_limit_ms: u64,
    /// Largest time limit a request may ask for, in milliseconds.
    #[arg(long, env = "BANDSAW_MAX_TIME_LIMIT_MS", default_value_t = DEFAULT_MAX_TIME_LIMIT_MS)]
    pub max_time_limit_ms: u64,
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            max_rows: DEFAULT_MAX_ROWS,
            max_resamples: DEFAULT_MAX_RESAMPLES,
            work_limit: DEFAULT_MAX_WORK,
            default_time_limit_ms: DEFAULT_TIME_LIMIT_MS,
            max_time_limit_ms: DEFAULT_MAX_TIME_LIMIT_MS,
        }
    }
}

/// Compute threads (0: one per core).
#[derive(Debug, Clone, Copy, Default, Args)]
pub struct Threads {
    /// Compute threads (0: one per core).
    #[arg(long, env = "BANDSAW_THREADS", default_value_t = 0)]
    pub threads: usize,
}

impl Threads {
    pub fn count(self) -> usize {
        if self.threads == 0 {
            std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1)
        } else {
            self.threads
        }
    }
}

/// The settings of the server.
#[derive(Debug, Clone, Args)]
pub struct Config {
    /// Address to listen on.
    #[arg(long, env = "BANDSAW_LISTEN", default_value = DEFAULT_LISTEN)]
    pub listen: String,
    #[command(flatten)]
    pub threads: Threads,
    #[command(flatten)]
    pub limits: Limits,
    /// Most jobs in one batch request.
    #[arg(long, env = "BANDSAW_MAX_BATCH_JOBS", default_value_t = DEFAULT_MAX_BATCH_JOBS)]
    pub max_batch_jobs: usize,
    /// Largest request body in bytes.
    #[arg(long, env = "BANDSAW_MAX_BODY_BYTES", default_value_t = DEFAULT_MAX_BODY_BYTES)]
    pub max_body_bytes: usize,
    /// How long a client may take to send a request's headers, and again its body, in
    /// milliseconds; past it the connection is closed (headers) or answered 408 (body).
    #[arg(long, env = "BANDSAW_REQUEST_READ_TIMEOUT_MS", default_value_t = DEFAULT_REQUEST_READ_TIMEOUT_MS, value_parser = clap::value_parser!(u64).range(1..))]
    pub request_read_timeout_ms: u64,
    /// Connections served at once; further ones wait to be accepted. With `--max-body-bytes`
    /// it bounds the memory held by bodies being read.
    #[arg(long, env = "BANDSAW_MAX_CONNECTIONS", default_value_t = DEFAULT_MAX_CONNECTIONS, value_parser = clap::builder::RangedU64ValueParser::<usize>::new().range(1..))]
    pub max_connections: usize,
    /// Jobs that may wait for a compute thread (0: four per thread); beyond them requests are
    /// answered 503 overloaded at once.
    #[arg(long, env = "BANDSAW_QUEUE", default_value_t = 0)]
    pub queue: usize,
    /// API keys accepted as `Authorization: Bearer <key>` on /v1/* (comma-separated; none: open).
    #[arg(long, env = "BANDSAW_API_KEYS", default_value = "", hide_env_values = true)]
    pub api_keys: String,
    /// A file with one API key per line (blank lines and lines starting with # are ignored).
    #[arg(long, env = "BANDSAW_API_KEY_FILE")]
    pub api_key_file: Option<String>,
    /// Origins allowed to call the API from a browser (comma-separated, or "*"; none: CORS off).
    #[arg(long, env = "BANDSAW_CORS_ORIGINS", default_value = "")]
    pub cors_origins: String,
    /// How long shutdown waits for requests in flight, in milliseconds.
    #[arg(long, env = "BANDSAW_SHUTDOWN_GRACE_MS", default_value_t = DEFAULT_SHUTDOWN_GRACE_MS)]
    pub shutdown_grace_ms: u64,
    /// How log lines are written.
    #[arg(long, env = "BANDSAW_LOG_FORMAT", value_enum, default_value_t = LogFormat::Pretty)]
    pub log_format: LogFormat,
    /// Test hooks (request headers that make a job panic, or stop it early); never set from the
    /// command line.
    #[arg(skip)]
    pub test_hooks: bool,
}

impl Default for Config {
    fn default() -> Self {
        Config {
            listen: DEFAULT_LISTEN.into(),
            threads: Threads::default(),
            limits: Limits::default(),
            max_batch_jobs: DEFAULT_MAX_BATCH_JOBS,
            max_body_bytes: DEFAULT_MAX_BODY_BYTES,
            request_read_timeout_ms: DEFAULT_REQUEST_READ_TIMEOUT_MS,
            max_connections: DEFAULT_MAX_CONNECTIONS,
            queue: 0,
            api_keys: String::new(),
            api_key_file: None,
            cors_origins: String::new(),
            shutdown_grace_ms: DEFAULT_SHUTDOWN_GRACE_MS,
            log_format: LogFormat::Pretty,
            test_hooks: false,
        }
    }
}

impl Config {
    /// Queue depth: the configured one, or [`QUEUE_PER_THREAD`] per thread.
    pub fn queue_depth(&self) -> usize {
        if self.queue == 0 {
            QUEUE_PER_THREAD * self.threads.count()
        } else {
            self.queue
        }
    }

    /// Every accepted API key, from the list and the key file.
    pub fn keys(&self) -> std::io::Result<Vec<String>> {
        let mut keys: Vec<String> = split_list(&self.api_keys);
        if let Some(path) = &self.api_key_file {
            let text = std::fs::read_to_string(path)?;
            keys.extend(
                text.lines()
                    .map(str::trim)
                    .filter(|l| !l.is_empty() && !l.starts_with('#'))
                    .map(String::from),
            );
        }
        Ok(keys)
    }

    pub fn cors(&self) -> Vec<String> {
        split_list(&self.cors_origins)
    }
}

/// The non-empty items of a comma-separated list.
fn split_list(s: &str) -> Vec<String> {
    s.split(',').map(str::trim).filter(|x| !x.is_empty()).map(String::from).collect()
}
