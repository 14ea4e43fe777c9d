//! `POST /v1/interval`, from body bytes to response JSON. Runs entirely on the compute pool
//! (parsing a large body is compute too), so the async runtime only moves bytes.

use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::{Duration, Instant};

use rand::Rng;
use serde_json::Value;

use super::problem::{escape_token, FieldError, Problem};
use super::request::{self, Errors, IntervalParams, Limits, MAX_SEED};
use super::response::{find_null, IntervalResponse};
use crate::engine::data::Sample;
use crate::engine::interval::Method;
use crate::engine::jackknife;
use crate::engine::montecarlo::AUTO_START;
use crate::engine::run::{self, Include, Job, Resamples, RunError, Stop};
use crate::engine::scheme::exact;
use crate::engine::statistic::{DataLocation, DataProblem};
use crate::token::{self, TokenBody, TokenError};

/// What the interval route needs to know about the server.
#[derive(Debug, Clone)]
pub struct Settings {
    pub limits: Limits,
    /// The most row-draws (units × resamples × the statistic's relative cost) one job may take.
    pub work_limit: f64,
}

/// Parse a body as JSON, accepting bare `NaN`/`Infinity` only so as to name them in a 422.
pub fn parse_json(body: &[u8]) -> Result<Value, Problem> {
    match serde_json::from_slice::<Value>(body) {
        Ok(v) => Ok(v),
        Err(e) => {
            if let Ok(text) = std::str::from_utf8(body) {
                if let Some(quoted) = request::quote_non_finite_literals(text) {
                    if let Ok(v) = serde_json::from_str::<Value>(&quoted) {
                        return Ok(v);
                    }
                }
            }
            // serde_json's message names a line and column and the kind of mistake, never the
            // content, so it is safe to return and to log.
            Err(Problem::malformed_json(format!(
                "the body is not valid JSON ({e}); send a JSON object such as {{\"data\": [1.5, 2.25, 3.0]}}"
            )))
        }
    }
}

/// Map the engine's data problems to pointers into the request.
pub fn data_problems(sample: &Sample, problems: Vec<DataProblem>, data_ptr: &str, statistic_ptr: &str) -> Problem {
    let errors = problems
        .into_iter()
        .map(|p| {
            let pointer = match p.location {
                DataLocation::Whole => data_ptr.to_string(),
                DataLocation::Value(i) => match sample {
                    Sample::Aggregated { .. } => format!("{data_ptr}/values/{i}"),
                    _ => format!("{data_ptr}/{i}"),
                },
                DataLocation::Column(name) => format!("{data_ptr}/columns/{}", escape_token(&name)),
                DataLocation::Parameter(param) => format!("{statistic_ptr}/{param}"),
            };
            FieldError::new(pointer, p.message)
        })
        .collect();
    Problem::invalid(errors)
}

fn include_names(inc: Include) -> Vec<String> {
    let mut v = Vec::new();
    if inc.histogram {
        v.push("histogram".to_string());
    }
    if inc.cdf {
        v.push("cdf".to_string());
    }
    if inc.replicates {
        v.push("replicates".to_string());
    }
    v
}

/// Rebuild the parameters recorded in a token. They go through the same validation as a
/// request's (a token is only base64 of JSON, so an edited one must not get past the limits).
fn params_from_token(body: &TokenBody, limits: &Limits) -> Result<(IntervalParams, Option<Stop>), Problem> {
    let damaged = || {
        Problem::invalid(vec![FieldError::new(
            "/token",
            "this token is damaged or outside this server's limits; send the parameters instead",
        )])
    };
    let resamples = match body.mode.as_str() {
        "exact" => Value::from("exact"),
        "fixed" | "auto" => Value::from(body.resamples),
        _ => return Err(damaged()),
    };
    let fields = serde_json::json!({
        "statistic": body.statistic,
        "scheme": body.scheme,
        "resamples": resamples,
        "seed": body.seed,
        "levels": body.levels,
        "methods": body.methods,
        "include": body.include,
        "inner_resamples": body.inner_resamples,
    });
    let Value::Object(obj) = fields else {
        unreachable!("built as an object")
    };
    let mut errs = Errors::default();
    let params = request::parse_params(&obj, limits, &mut errs)
        .filter(|_| errs.is_empty())
        .ok_or_else(damaged)?;
    let stop = Stop::from_name(&body.stop).ok_or_else(damaged)?;
    Ok((params, if body.mode == "exact" { None } else { Some(stop) }))
}

/// A validated interval job with its estimated work, ready to run.
#[derive(Debug, Clone)]
pub struct PreparedJob {
    pub job: Job,
    pub sample_digest: [u8; 32],
    pub params: IntervalParams,
    pub mode: String,
    pub target: Option<f64>,
    pub time_limit_ms: u64,
    /// Estimated row-draws (units × resamples × relative cost × nested factor).
    pub work: f64,
}

/// Compute an interval response from a request body.
pub fn compute(
    body: &[u8],
    settings: &Settings,
    cancel: Arc<AtomicBool>,
    started: Instant,
    replicate_cap: Option<u64>,
) -> Result<Value, Problem> {
    let json = parse_json(body)?;
    if !json.is_object() {
        return Err(Problem::malformed_json(
            "the body must be a JSON object such as {\"data\": [1.5, 2.25, 3.0]}",
        ));
    }
    let mut prepared = prepare(&json, settings, started, None)?;
    prepared.job.replicate_cap = replicate_cap;
    execute(prepared, cancel, started)
}

/// Validate a request (or replay its token), estimate its work and build the engine job; every
/// refusal here happens before any resampling. `deadline_cap` bounds the job's own deadline
/// (a batch's time limit).
pub fn prepare(json: &Value, settings: &Settings, started: Instant, deadline_cap: Option<Instant>) -> Result<PreparedJob, Problem> {
    let req = request::parse_interval(json, &settings.limits).map_err(Problem::invalid)?;

    let (params, recorded_stop, mode, target) = match &req.token {
        Some(t) => {
            let body = token::decode(t).map_err(|e| match e {
                TokenError::Malformed => Problem::invalid(vec![FieldError::new("/token", "is not a token issued by this service (it starts with \"bs1.\"); copy it whole from an earlier response")]),
                TokenError::Version { format, engine, generator } => Problem::invalid(vec![FieldError::new(
                    "/token",
                    format!("was issued by format {format}, engine {engine}, generator {generator}; this server (format {}, engine {}) cannot promise the same bits, so send the parameters instead", token::FORMAT_VERSION, token::ENGINE_VERSION),
                )]),
            })?;
            if body.data != token::hex(&req.sample.digest()) {
                return Err(Problem::data_mismatch());
            }
            let (params, stop) = params_from_token(&body, &settings.limits)?;
            (params, stop, body.mode.clone(), body.target_mc_error)
        }
        None => {
            let p = req.params.clone().expect("parameters without a token");
            let (mode, target) = match p.resamples {
                Resamples::Fixed(_) => ("fixed", None),
                Resamples::Auto { target } => ("auto", Some(target)),
                Resamples::Exact => ("exact", None),
            };
            (p, None, mode.to_string(), target)
        }
    };
    let seed = params.seed.unwrap_or_else(|| rand::rng().random_range(0..=MAX_SEED));

    // Work estimate, before any work: units × resamples × relative cost, times the nested
    // bootstrap's inner size when studentized intervals need one.
    let units = req.sample.units() as f64;
    let nested = params.methods.contains(&Method::Studentized) && !params.statistic.has_analytic_se();
    let per_resample = units * params.statistic.relative_cost() * if nested { 1.0 + params.inner_resamples as f64 } else { 1.0 };
    let mut max_resamples = settings.limits.max_resamples;
    let mut work;
    match params.resamples {
        Resamples::Fixed(b) => {
            work = per_resample * b as f64;
            if work > settings.work_limit {
                return Err(Problem::work_limit(work, settings.work_limit));
            }
        }
        Resamples::Exact => {
            let count = exact::count(req.sample.n(), req.sample.units_with_weight());
            match count {
                Some(c) if c <= settings.limits.max_resamples => {
                    work = per_resample * c as f64;
                    if work > settings.work_limit {
                        return Err(Problem::work_limit(work, settings.work_limit));
                    }
                }
                _ => {
                    return Err(Problem::invalid(vec![FieldError::new(
                        "/resamples",
                        format!(
                            "\"exact\" would enumerate {} distinct resamples, above this server's limit of {}; it suits samples of up to about 10 observations. Give a number of resamples instead",
                            count.map_or("more than 1.8e19".to_string(), |c| c.to_string()),
                            settings.limits.max_resamples
                        ),
                    )]))
                }
            }
        }
        Resamples::Auto { .. } => {
            let affordable = (settings.work_limit / per_resample).floor() as u64;
            if affordable < AUTO_START {
                return Err(Problem::work_limit(per_resample * AUTO_START as f64, settings.work_limit));
            }
            max_resamples = max_resamples.min(affordable);
            work = per_resample * max_resamples as f64;
        }
    }

    // The limit that applies: the job's own, or what is left of its batch's.
    let effective_ms = deadline_cap.map_or(req.time_limit_ms, |cap| {
        req.time_limit_ms.min(cap.saturating_duration_since(started).as_millis() as u64)
    });

    // BCa's jackknife runs once per job, before the resamples.
    if params.methods.contains(&Method::Bca) {
        let raw = !matches!(req.sample, Sample::Aggregated { .. });
        let units = req.sample.units_with_weight();
        work += params.statistic.relative_cost() * jackknife::cost_in_units(params.statistic.has_closed_jackknife(), units, raw);
        if work > settings.work_limit {
            return Err(Problem::work_limit(work, settings.work_limit));
        }
    }

    let job = Job {
        sample: req.sample.clone(),
        statistic: params.statistic.clone(),
        resamples: params.resamples,
        seed,
        levels: params.levels.clone(),
        methods: params.methods.clone(),
        scheme: params.scheme,
        include: params.include,
        inner_resamples: params.inner_resamples,
        max_resamples,
        deadline: Some({
            let own = started + Duration::from_millis(req.time_limit_ms);
            deadline_cap.map_or(own, |cap| cap.min(own))
        }),
        on_time_limit: req.on_time_limit,
        cancel: None,
        recorded_stop,
        replicate_cap: None,
    };
    Ok(PreparedJob {
        sample_digest: req.sample.digest(),
        job,
        params,
        mode,
        target,
        time_limit_ms: effective_ms,
        work,
    })
}

/// Run a prepared job and build its response JSON.
pub fn execute(prepared: PreparedJob, cancel: Arc<AtomicBool>, started: Instant) -> Result<Value, Problem> {
    let PreparedJob {
        mut job,
        sample_digest,
        params,
        mode,
        target,
        time_limit_ms,
        ..
    } = prepared;
    job.cancel = Some(cancel);
    let outcome = run::run(&job).map_err(|e| match e {
        RunError::Data(problems) => data_problems(&job.sample, problems, "/data", "/statistic"),
        RunError::TimeLimit { done, requested } => Problem::time_limit(done, requested, time_limit_ms),
        RunError::Cancelled => Problem::cancelled(),
        RunError::ExactTooLarge { count, limit } => Problem::invalid(vec![FieldError::new(
            "/resamples",
            format!("\"exact\" would enumerate {count:?} resamples, above the limit of {limit}"),
        )]),
        RunError::NoDefinedReplicates => Problem::invalid(vec![FieldError::new(
            "/statistic",
            "the statistic is undefined on every resample of this data (for example a correlation where resamples repeat one row); choose another statistic or send more varied data",
        )]),
    })?;

    let statistic_json = request::statistic_json(&params.statistic);
    let scheme_json = request::scheme_json(params.scheme);
    let mut tb = TokenBody::new_for(job.seed, &sample_digest);
    tb.mode = mode;
    tb.resamples = outcome.resamples;
    tb.stop = outcome.stop.name().to_string();
    tb.target_mc_error = target;
    tb.statistic = statistic_json.clone();
    tb.scheme = scheme_json.clone();
    tb.methods = params.methods.iter().map(|m| m.name().to_string()).collect();
    tb.levels = params.levels.clone();
    tb.include = include_names(params.include);
    tb.inner_resamples = params.inner_resamples;
    let elapsed_ms = (started.elapsed().as_secs_f64() * 1e3 * 1000.0).round() / 1000.0;
    let resp = IntervalResponse::from_outcome(outcome, statistic_json, scheme_json, job.seed, tb.encode(), elapsed_ms);
    let value = serde_json::to_value(&resp).map_err(|e| Problem::internal(format!("could not encode the result: {e}")))?;
    let mut at = String::new();
    if find_null(&value, &mut at) {
        return Err(Problem::internal(format!(
            "the result had an undefined number at {at}; this is a bug, please report it with the request's parameters"
        )));
    }
    Ok(value)
}
