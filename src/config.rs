//! Configuration: every limit has a safe default and can be set by flag or `BANDSAW_*`
//! environment variable.

use clap::Args;

#[derive(Debug, Clone, Args)]
pub struct Config {
    /// Address to listen on.
    #[arg(long, global = true, env = "BANDSAW_LISTEN", default_value = "127.0.0.1:8080")]
    pub listen: String,
    /// Compute threads (0: one per core).
    #[arg(long, global = true, env = "BANDSAW_THREADS", default_value_t = 0)]
    pub threads: usize,
    /// Largest request body in bytes.
    #[arg(long, global = true, env = "BANDSAW_MAX_BODY_BYTES", default_value_t = 32 * 1024 * 1024)]
    pub max_body_bytes: usize,
    /// Most rows (or distinct values) in one sample.
    #[arg(long, global = true, env = "BANDSAW_MAX_ROWS", default_value_t = 1_000_000)]
    pub max_rows: u64,
    /// Most resamples in one job (also the limit on distinct resamples for "exact").
    #[arg(long, global = true, env = "BANDSAW_MAX_RESAMPLES", default_value_t = 1_000_000)]
    pub max_resamples: u64,
    /// Most row-draws (rows × resamples × the statistic's relative cost) in one job.
    #[arg(long, global = true, env = "BANDSAW_WORK_LIMIT", default_value_t = 2e10)]
    pub work_limit: f64,
    /// Time limit of a request that sets none, in milliseconds.
    #[arg(long, global = true, env = "BANDSAW_DEFAULT_TIME_LIMIT_MS", default_value_t = 10_000)]
    pub default_time_limit_ms: u64,
    /// Largest time limit a request may ask for, in milliseconds.
    #[arg(long, global = true, env = "BANDSAW_MAX_TIME_LIMIT_MS", default_value_t = 60_000)]
    pub max_time_limit_ms: u64,
    /// Jobs that may wait for a compute thread (0: four per thread); beyond them requests are
    /// answered 503 overloaded at once.
    #[arg(long, global = true, env = "BANDSAW_QUEUE", default_value_t = 0)]
    pub queue: usize,
    /// Most jobs in one batch request.
    #[arg(long, global = true, env = "BANDSAW_MAX_BATCH_JOBS", default_value_t = 1000)]
    pub max_batch_jobs: usize,
    /// API keys accepted as `Authorization: Bearer <key>` on /v1/* (comma-separated; none: open).
    #[arg(long, global = true, env = "BANDSAW_API_KEYS", default_value = "", hide_env_values = true)]
    pub api_keys: String,
    /// A file with one API key per line (blank lines and lines starting with # are ignored).
    #[arg(long, global = true, env = "BANDSAW_API_KEY_FILE")]
    pub api_key_file: Option<String>,
    /// Origins allowed to call the API from a browser (comma-separated, or "*"; none: CORS off).
    #[arg(long, global = true, env = "BANDSAW_CORS_ORIGINS", default_value = "")]
    pub cors_origins: String,
    /// How long shutdown waits for requests in flight, in milliseconds.
    #[arg(long, global = true, env = "BANDSAW_SHUTDOWN_GRACE_MS", default_value_t = 30_000)]
    pub shutdown_grace_ms: u64,
    /// Test hooks (a request header that makes the job panic); never set from the command line.
    #[arg(skip)]
    pub test_hooks: bool,
    /// Log format: "pretty" or "json".
    #[arg(long, global = true, env = "BANDSAW_LOG_FORMAT", default_value = "pretty")]
    pub log_format: String,
}

impl Default for Config {
    fn default() -> Self {
        Config {
            listen: "127.0.0.1:8080".into(),
            threads: 0,
            max_body_bytes: 32 * 1024 * 1024,
            max_rows: 1_000_000,
            max_resamples: 1_000_000,
            work_limit: 2e10,
            default_time_limit_ms: 10_000,
            max_time_limit_ms: 60_000,
            queue: 0,
            max_batch_jobs: 1000,
            api_keys: String::new(),
            api_key_file: None,
            cors_origins: String::new(),
            shutdown_grace_ms: 30_000,
            test_hooks: false,
            log_format: "pretty".into(),
        }
    }
}

impl Config {
    pub fn settings(&self) -> crate::api::interval::Settings {
        crate::api::interval::Settings {
            limits: crate::api::request::Limits {
                max_rows: self.max_rows,
                max_resamples: self.max_resamples,
                default_time_limit_ms: self.default_time_limit_ms,
                max_time_limit_ms: self.max_time_limit_ms,
            },
            work_limit: self.work_limit,
        }
    }

    /// Queue depth: the configured one, or four per thread.
    pub fn queue_depth(&self) -> usize {
        if self.queue == 0 {
            4 * self.thread_count()
        } else {
            self.queue
        }
    }

    /// Every accepted API key, from the list and the key file.
    pub fn keys(&self) -> std::io::Result<Vec<String>> {
        let mut keys: Vec<String> = self
            .api_keys
            .split(',')
            .map(str::trim)
            .filter(|k| !k.is_empty())
            .map(String::from)
            .collect();
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
        self.cors_origins
            .split(',')
            .map(str::trim)
            .filter(|o| !o.is_empty())
            .map(String::from)
            .collect()
    }

    pub fn thread_count(&self) -> usize {
        if self.threads == 0 {
            std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1)
        } else {
            self.threads
        }
    }
}
