//! `POST /v1/interval`, from body bytes to response JSON. Runs entirely on the compute pool
//! (parsing a large body is compute too), so the async runtime only moves bytes.

use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::{Duration, Instant};

use rand::Rng;
use serde_json::Value;

use super::data::DataForm;
use super::decode::Errors;
use super::problem::{FieldError, Problem};
use super::request::{self, IntervalRequest, Params, Replay};
use super::response::{find_null, IntervalResponse};
use super::rules::Rule;
use super::token::{self, TokenBody, TokenError};
use crate::config::Limits;
use crate::engine::data::Sample;
use crate::engine::driver::{self, Prepared, RunError, Which};
use crate::engine::executor::Budget;
use crate::engine::job::{Resampled, Samples};
use crate::engine::plan::ResampleCount;
use crate::engine::rng::MAX_SEED;
use crate::engine::scheme::SchemeError;

/// Parse a body as a JSON object, accepting bare `NaN`/`Infinity` only so as to name them in a
/// 422.
pub fn parse_json(body: &[u8]) -> Result<Value, Problem> {
    let value = match serde_json::from_slice::<Value>(body) {
        Ok(v) => v,
        Err(e) => {
            let quoted = std::str::from_utf8(body).ok().and_then(quote_non_finite_literals);
            match quoted.and_then(|q| serde_json::from_str::<Value>(&q).ok()) {
                Some(v) => v,
                // serde_json's message names a line and column and the kind of mistake, never
                // the content, so it is safe to return and to log.
                None => {
                    return Err(Problem::malformed_json(format!(
                        "the body is not valid JSON ({e}); send a JSON object such as {{\"data\": [1.5, 2.25, 3.0]}}"
                    )))
                }
            }
        }
    };
    if !value.is_object() {
        return Err(Problem::malformed_json(
            "the body must be a JSON object such as {\"data\": [1.5, 2.25, 3.0]}",
        ));
    }
    Ok(value)
}

/// Replace the bare tokens `NaN`, `Infinity` and `-Infinity` outside strings (which some JSON
/// writers emit, though JSON has no such literals) by strings, so that validation can name the
/// element instead of refusing the whole body as malformed.
pub fn quote_non_finite_literals(text: &str) -> Option<String> {
    let bytes = text.as_bytes();
    let mut out = String::with_capacity(text.len() + 16);
    let (mut i, mut last, mut in_string) = (0, 0, false);
    while i < bytes.len() {
        let c = bytes[i];
        if in_string {
            match c {
                b'\\' => i += 2,
                b'"' => {
                    in_string = false;
                    i += 1
                }
                _ => i += 1,
            }
            continue;
        }
        if c == b'"' {
            in_string = true;
            i += 1;
            continue;
        }
        // Literals start with an ASCII byte, so `i` and `last` are always char boundaries.
        match ["-Infinity", "Infinity", "NaN"]
            .into_iter()
            .find(|lit| bytes[i..].starts_with(lit.as_bytes()))
        {
            Some(lit) => {
                out.push_str(&text[last..i]);
                out.push_str(&format!("\"{lit}\""));
                i += lit.len();
                last = i;
            }
            None => i += 1,
        }
    }
    if last == 0 {
        return None;
    }
    out.push_str(&text[last..]);
    Some(out)
}

/// Compute an interval response from a request body.
pub fn compute(
    body: &[u8],
    limits: &Limits,
    cancel: Arc<AtomicBool>,
    started: Instant,
    replicate_cap: Option<u64>,
) -> Result<Value, Problem> {
    let json = parse_json(body)?;
    let job = prepare(&json, &[], limits, started, None)?;
    execute(job, cancel, replicate_cap, started)
}

/// An interval job that passed every check, ready to run.
pub struct PreparedJob {
    prepared: Prepared,
    params: Params,
    digest: [u8; 32],
    deadline: Instant,
    /// The time limit in force, for the time-limit problem.
    time_limit_ms: u64,
}

impl PreparedJob {
    /// The estimated work, in row-draws.
    pub fn work(&self) -> f64 {
        self.prepared.work()
    }
}

/// A token's parameters, once it proved to belong to this data and to be within this server's
/// limits.
fn replayed(t: &str, sample: &Sample, limits: &Limits) -> Result<(Params, u64, Replay), Problem> {
    let refuse = |message: String| Problem::invalid(vec![FieldError::by_rule("/token", Rule::TokenValid, message)]);
    let body: TokenBody = token::decode(t).map_err(|e| match e {
        TokenError::Malformed => refuse(format!(
            "is not a whole token issued by this service (it starts with \"{}\"); copy it whole from an earlier response",
            token::PREFIX
        )),
        TokenError::Version { format, engine } => refuse(format!(
            "was issued by format {format}, engine {engine}; this server (format {}, engine {}) cannot promise the same bits, so send the parameters instead",
            token::FORMAT_VERSION,
            token::ENGINE_VERSION
        )),
    })?;
    if body.data != [token::hex(&sample.digest())] {
        return Err(Problem::data_mismatch());
    }
    // A token is only base64 of JSON: an edited one is held to the same limits as a request
    // (its parameters' own ranges were checked as they were read).
    let drawn_ok = (ResampleCount::MIN..=limits.max_resamples).contains(&body.drawn);
    if !request::check_params(&body.params, limits).is_empty() || body.seed > MAX_SEED || !drawn_ok {
        return Err(refuse(
            "this token is outside this server's limits; send the parameters instead".into(),
        ));
    }
    let replay = Replay {
        drawn: body.drawn,
        stop: body.stop,
    };
    Ok((body.params, body.seed, replay))
}

/// Decode a request body, check it against every rule, and lay its job out; every refusal
/// happens here, before any resampling. `also` lists fields allowed besides the request's own
/// (a batch job's `kind`); `deadline_cap` bounds the job's deadline (a batch's).
pub fn prepare(
    json: &Value,
    also: &[&str],
    limits: &Limits,
    started: Instant,
    deadline_cap: Option<Instant>,
) -> Result<PreparedJob, Problem> {
    let raw = json.as_object().expect("an object");
    let mut errs = Errors::default();
    let req = IntervalRequest::decode(raw, "", also, &mut errs);
    if let Some(r) = &req {
        r.check(raw, limits, &mut errs);
    }
    let req = match req {
        Some(r) if errs.is_empty() => r,
        _ => return Err(Problem::invalid(errs.0)),
    };
    let sample = req.data.0.clone();
    let (params, seed, replay) = match &req.token {
        Some(t) => {
            let (p, s, r) = replayed(t, &sample, limits)?;
            (p, s, Some(r))
        }
        None => (
            req.params(),
            req.seed.map_or_else(|| rand::rng().random_range(0..=MAX_SEED), |s| s.get()),
            None,
        ),
    };
    let own_ms = req
        .time_limit_ms
        .map_or(limits.default_time_limit_ms, |t| t.get())
        .min(limits.max_time_limit_ms);
    let own = started + Duration::from_millis(own_ms);
    let deadline = deadline_cap.map_or(own, |cap| cap.min(own));
    let digest = sample.digest();
    let part = Resampled {
        sample,
        scheme: params.scheme,
    };
    let job = request::job(&params, Samples::One(part), seed, req.on_time_limit, limits, replay);
    let form = DataForm::of(&req.data.0);
    let prepared = driver::prepare(job).map_err(|e| refusal(e, own_ms, &|_| form))?;
    Ok(PreparedJob {
        prepared,
        params,
        digest,
        deadline,
        time_limit_ms: deadline.saturating_duration_since(started).as_millis() as u64,
    })
}

/// The problem document of an engine refusal; `form` tells the form each sample was sent in.
pub fn refusal(e: RunError, time_limit_ms: u64, form: &dyn Fn(Which) -> DataForm) -> Problem {
    let invalid = |pointer: &str, rule: Rule, message: String| Problem::invalid(vec![FieldError::by_rule(pointer, rule, message)]);
    match e {
        RunError::Data { which, problems } => {
            let data_at = match which {
                Which::Only => "/data",
                Which::Baseline => "/baseline",
                Which::Candidate => "/candidate",
            };
            let mut errs = Errors::default();
            super::data::report(form(which), problems, data_at, "/statistic", &mut errs);
            Problem::invalid(errs.0)
        }
        RunError::Scheme(e @ SchemeError::TooManyToEnumerate { .. }) => invalid(
            "/resamples",
            Rule::ExactTooMany,
            format!("\"exact\": {e}; it suits samples of up to about 10 observations. Give a number of resamples instead"),
        ),
        RunError::Scheme(e) => invalid("/resamples", Rule::ExactNeedsIid, format!("\"exact\": {e}; give a number of resamples")),
        RunError::WorkLimit { needed, limit } => Problem::work_limit(needed, limit),
        RunError::TimeLimit { done, requested, partial } => Problem::time_limit(done, requested, time_limit_ms, partial),
        RunError::Cancelled => Problem::cancelled(),
        RunError::NoDefinedReplicates => invalid(
            "/statistic",
            Rule::StatisticDomain,
            "the statistic is undefined on every resample of this data (for example a correlation where resamples repeat one row); choose another statistic or send more varied data".into(),
        ),
    }
}

/// Run a prepared job and build its response JSON.
pub fn execute(job: PreparedJob, cancel: Arc<AtomicBool>, replicate_cap: Option<u64>, started: Instant) -> Result<Value, Problem> {
    let budget = Budget {
        deadline: Some(job.deadline),
        cancel: Some(cancel),
        replicate_cap,
    };
    // Data problems were all found in `prepare`; what running can refuse needs no sample.
    let outcome = job
        .prepared
        .run(&budget)
        .map_err(|e| refusal(e, job.time_limit_ms, &|_| DataForm::Column))?;
    let seed = job.prepared.job.seed;
    let token = TokenBody::new(seed, outcome.resamples, outcome.stop, job.params.clone(), &[job.digest]).encode();
    let elapsed_ms = (started.elapsed().as_secs_f64() * 1e6).round() / 1e3;
    let resp = IntervalResponse::from_outcome(outcome, &job.params, seed, token, elapsed_ms);
    let value = serde_json::to_value(&resp).map_err(|e| Problem::internal(format!("could not encode the result: {e}")))?;
    let mut at = String::new();
    if find_null(&value, &mut at) {
        return Err(Problem::internal(format!(
            "the result had an undefined number at {at}; this is a bug, please report it with the request's parameters"
        )));
    }
    Ok(value)
}
