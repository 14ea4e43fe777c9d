//! `bandsaw check`: compare the runs of a benchmark suite before and after a change and decide,
//! per benchmark, regression, improvement, equivalent or inconclusive, as `POST /v1/batch` with
//! `compare` jobs does, in-process or against a server (`--server`), with the same numbers
//! either way for the same seed.
//!
//! Exit status: 0 no regression, 1 a regression, 2 (when nothing regressed) bad input, usage,
//! a benchmark refused or a server that cannot be reached, 3 an inconclusive benchmark under
//! `--strict`.

pub mod input;
pub mod report;

use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::Instant;

use clap::{Args, ValueEnum};
use serde_json::{json, Map, Value};

use crate::config::{Limits, Threads};
use crate::engine::verdict::Verdict;
use input::{InputError, Runs};

/// How a check ended: the process exit status.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Exit {
    /// No regression.
    Clear = 0,
    /// At least one regression.
    Regression = 1,
    /// Bad input or usage, a refused job, or no answer from the server.
    Unusable = 2,
    /// Something inconclusive, under `--strict`.
    Undecided = 3,
}

/// The report's form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A compact report for a CI log.
    Text,
    /// The batch response, with the benchmarks' names.
    Json,
    /// A table for a pull-request comment or a CI job summary.
    Markdown,
    /// JUnit XML: one test case per benchmark.
    Junit,
}

/// The flags of `bandsaw check`. Each comparison option is sent only when given, so the
/// service's defaults apply otherwise.
#[derive(Debug, Clone, Args)]
pub struct CheckArgs {
    /// The baseline's runs (before the change): one number per line, a CSV file with
    /// --column, a JSON array, or a JSON object of benchmark name → runs. "-" reads standard
    /// input.
    pub baseline: String,
    /// The candidate's runs (after the change), in the same form.
    pub candidate: String,
    /// Read the runs from this column of CSV files (with a header row).
    #[arg(long)]
    pub column: Option<String>,
    /// The benchmark's name when the files hold one benchmark (default: the candidate file's
    /// stem).
    #[arg(long)]
    pub name: Option<String>,
    /// The statistic: a name (mean, median, …) or a JSON object with its parameters.
    #[arg(long)]
    pub statistic: Option<String>,
    /// ratio (candidate / baseline) or difference (candidate − baseline).
    #[arg(long)]
    pub contrast: Option<String>,
    /// lower (timings) or higher (throughput) is better.
    #[arg(long)]
    pub better: Option<String>,
    /// The change that still counts as none: relative for a ratio (0.02 = 2 %), in data units
    /// for a difference.
    #[arg(long, allow_negative_numbers = true)]
    pub tolerance: Option<f64>,
    /// A confidence level (repeat or separate by commas; the verdict reads the first, and
    /// under a correction the suite holds at it unless --family-level says otherwise).
    #[arg(long = "level", value_delimiter = ',', allow_negative_numbers = true)]
    pub levels: Vec<f64>,
    /// An interval method (repeat or separate by commas; the verdict reads the first).
    #[arg(long = "method", value_delimiter = ',')]
    pub methods: Vec<String>,
    /// Resamples per comparison: a number, "auto" or "exact".
    #[arg(long)]
    pub resamples: Option<String>,
    /// The seed of every comparison (default: one drawn now, printed in the report).
    #[arg(long)]
    pub seed: Option<u64>,
    /// The runs are pairs, interleaved on one machine, resampled together.
    #[arg(long)]
    pub paired: bool,
    /// How a suite's verdicts hold together: none, bonferroni or holm.
    #[arg(long, default_value = "holm")]
    pub multiplicity: String,
    /// The level the whole suite holds at under a correction (default: the first --level, else
    /// the service's default).
    #[arg(long, allow_negative_numbers = true)]
    pub family_level: Option<f64>,
    /// The report's form.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
    /// Exit 3 when any benchmark is inconclusive (and none regressed).
    #[arg(long)]
    pub strict: bool,
    /// Ask this bandsaw server (e.g. http://bandsaw.internal:8080) instead of computing here.
    #[arg(long)]
    pub server: Option<String>,
    /// The bearer token for --server.
    #[arg(long, env = "BANDSAW_API_KEY", hide_env_values = true)]
    pub api_key: Option<String>,
    #[command(flatten)]
    pub threads: Threads,
    #[command(flatten)]
    pub limits: Limits,
}

/// The benchmarks to compare, in order: name, baseline runs, candidate runs.
#[derive(Debug, Clone, PartialEq)]
pub struct Suite(pub Vec<(String, Value, Value)>);

/// Pair the two files' benchmarks by name (the baseline's order); a benchmark in one file
/// only is an error naming it.
pub fn pair(args: &CheckArgs, baseline: Runs, candidate: Runs) -> Result<Suite, InputError> {
    let (b, c) = (&args.baseline, &args.candidate);
    let refuse = |file: &str, message: String| InputError {
        place: file.to_string(),
        message,
    };
    match (baseline, candidate) {
        (Runs::One(x), Runs::One(y)) => Ok(Suite(vec![(single_name(args), x, y)])),
        (Runs::Suite(x), Runs::Suite(mut y)) => {
            let missing = |from: &Map<String, Value>, of: &Map<String, Value>| -> Vec<String> {
                of.keys().filter(|k| !from.contains_key(*k)).map(|k| format!("{k:?}")).collect()
            };
            let (only_candidate, only_baseline) = (missing(&x, &y), missing(&y, &x));
            if !only_candidate.is_empty() {
                return Err(refuse(
                    b,
                    format!("has no benchmark {} (the candidate {c} has)", only_candidate.join(", ")),
                ));
            }
            if !only_baseline.is_empty() {
                return Err(refuse(
                    c,
                    format!("has no benchmark {} (the baseline {b} has)", only_baseline.join(", ")),
                ));
            }
            Ok(Suite(
                x.into_iter()
                    .map(|(name, runs)| {
                        let other = y.remove(&name).expect("both files name it");
                        (name, runs, other)
                    })
                    .collect(),
            ))
        }
        (Runs::Suite(_), Runs::One(_)) => Err(refuse(
            c,
            format!("holds one benchmark's runs, but the baseline {b} is a suite of named benchmarks"),
        )),
        (Runs::One(_), Runs::Suite(_)) => Err(refuse(
            c,
            format!("is a suite of named benchmarks, but the baseline {b} holds one benchmark's runs"),
        )),
    }
}

/// The name of a single benchmark: `--name`, else the candidate file's stem.
fn single_name(args: &CheckArgs) -> String {
    args.name.clone().unwrap_or_else(|| {
        std::path::Path::new(&args.candidate)
            .file_stem()
            .and_then(|s| s.to_str())
            .filter(|s| !s.is_empty() && *s != "-")
            .unwrap_or("benchmark")
            .to_string()
    })
}

/// A flag's text as JSON: an object or a number as such, anything else as a string.
fn loose(text: &str) -> Value {
    match serde_json::from_str::<Value>(text) {
        Ok(v @ (Value::Object(_) | Value::Number(_))) => v,
        _ => Value::String(text.to_string()),
    }
}

/// The fields every comparison of the check shares: those given on the command line.
fn shared_fields(args: &CheckArgs, seed: u64) -> Map<String, Value> {
    let mut f = Map::new();
    let mut put = |k: &str, v: Option<Value>| {
        if let Some(v) = v {
            f.insert(k.to_string(), v);
        }
    };
    put("statistic", args.statistic.as_deref().map(loose));
    put("contrast", args.contrast.clone().map(Value::from));
    put("better", args.better.clone().map(Value::from));
    put("tolerance", args.tolerance.map(Value::from));
    put("levels", (!args.levels.is_empty()).then(|| Value::from(args.levels.clone())));
    put("methods", (!args.methods.is_empty()).then(|| Value::from(args.methods.clone())));
    put("resamples", args.resamples.as_deref().map(loose));
    put("paired", args.paired.then_some(Value::Bool(true)));
    put("seed", Some(Value::from(seed)));
    f
}

/// The body of the batch that decides the suite.
pub fn batch_body(args: &CheckArgs, suite: &Suite, seed: u64) -> Value {
    let shared = shared_fields(args, seed);
    let jobs: Vec<Value> = suite
        .0
        .iter()
        .map(|(_, baseline, candidate)| {
            let mut job = Map::new();
            job.insert("kind".into(), json!("compare"));
            job.insert("baseline".into(), baseline.clone());
            job.insert("candidate".into(), candidate.clone());
            job.extend(shared.clone());
            Value::Object(job)
        })
        .collect();
    let mut body = json!({"jobs": jobs, "multiplicity": loose(&args.multiplicity)});
    // The level asked for is the suite's, under a correction, unless one is given for it.
    if let Some(l) = args.family_level.or(args.levels.first().copied()) {
        body["family_level"] = json!(l);
    }
    body
}

/// The batch's answer: its response, or the problem document that refused it.
pub type Answer = Result<Value, Value>;

/// Decide in this process, on a pool of `--threads`.
fn local(args: &CheckArgs, body: &Value) -> Result<Answer, String> {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(args.threads.count())
        .build()
        .map_err(|e| format!("cannot start the compute threads: {e}"))?;
    let bytes = serde_json::to_vec(body).expect("JSON");
    let jobs = body["jobs"].as_array().map_or(1, Vec::len);
    let cancel = Arc::new(AtomicBool::new(false));
    let answer = pool.install(|| crate::api::batch::compute(&bytes, &args.limits, jobs, cancel, Instant::now()));
    Ok(answer.map_err(|p| serde_json::to_value(p).expect("JSON")))
}

/// The largest response body read from a server (a suite's batch of 1000 comparisons with
/// every interval fits many times over).
const MAX_RESPONSE_BYTES: u64 = 256 << 20;

/// Ask a bandsaw server: POST /v1/batch.
fn remote(server: &str, api_key: Option<&str>, body: &Value) -> Result<Answer, String> {
    let url = format!("{}/v1/batch", server.trim_end_matches('/'));
    let agent: ureq::Agent = ureq::Agent::config_builder().http_status_as_error(false).build().into();
    let mut request = agent.post(&url).header("Content-Type", "application/json");
    if let Some(key) = api_key {
        request = request.header("Authorization", &format!("Bearer {key}"));
    }
    let hint = match server.contains("://") {
        true => "",
        false => " (a server is a URL such as http://host:8080)",
    };
    let mut response = request
        .send(serde_json::to_vec(body).expect("JSON"))
        .map_err(|e| format!("cannot reach the server at {url}: {e}{hint}"))?;
    let status = response.status().as_u16();
    let text = response
        .body_mut()
        .with_config()
        .limit(MAX_RESPONSE_BYTES)
        .read_to_string()
        .map_err(|e| format!("cannot read the server's answer from {url}: {e}"))?;
    let value: Value = serde_json::from_str(&text).map_err(|_| format!("the server at {url} answered {status} without JSON"))?;
    Ok(if status == 200 { Ok(value) } else { Err(value) })
}

/// The exit status of a batch that answered, from its rows (so that an answer the report
/// cannot read counts as a benchmark not compared). A regression outranks a benchmark that
/// could not be compared: both fail a pipeline, and the regression is what to act on.
pub fn exit_of(rows: &[report::Row], strict: bool) -> Exit {
    let is = |v: Verdict| rows.iter().any(|r| matches!(r, report::Row::Decided(_, c) if c.verdict == v));
    if is(Verdict::Regression) {
        Exit::Regression
    } else if rows.iter().any(|r| matches!(r, report::Row::Failed(..))) {
        Exit::Unusable
    } else if strict && is(Verdict::Inconclusive) {
        Exit::Undecided
    } else {
        Exit::Clear
    }
}

/// `bandsaw check`: returns the process exit status.
pub fn run(args: &CheckArgs) -> i32 {
    if args.baseline == "-" && args.candidate == "-" {
        eprintln!("bandsaw check: only one of the two files can be standard input (\"-\")");
        return Exit::Unusable as i32;
    }
    let read = |path: &str| input::read(path, args.column.as_deref());
    let suite = match read(&args.baseline)
        .and_then(|b| Ok((b, read(&args.candidate)?)))
        .and_then(|(b, c)| pair(args, b, c))
    {
        Ok(s) => s,
        Err(e) => {
            eprintln!("bandsaw check: {e}");
            return Exit::Unusable as i32;
        }
    };
    let seed = args.seed.unwrap_or_else(|| rand::random_range(0..=crate::engine::rng::MAX_SEED));
    let body = batch_body(args, &suite, seed);
    let answer = match &args.server {
        Some(s) => remote(s, args.api_key.as_deref(), &body),
        None => local(args, &body),
    };
    let names: Vec<&str> = suite.0.iter().map(|(n, _, _)| n.as_str()).collect();
    let (text, exit) = match answer {
        Err(e) => {
            eprintln!("bandsaw check: {e}");
            return Exit::Unusable as i32;
        }
        Ok(Err(problem)) => (report::refused(args.format, &problem, &names), Exit::Unusable),
        Ok(Ok(response)) => {
            let exit = exit_of(&report::rows(&response, &names), args.strict);
            (report::render(args.format, &response, &names, seed, exit), exit)
        }
    };
    print!("{text}");
    exit as i32
}
