//! What the compute routes share: turning a checked request (one sample, or two compared) into
//! an engine job, replaying its token, running it within its budget, and telling the caller
//! why the engine refused it. Every refusal happens in [`prepare`], before any resampling.

use std::sync::atomic::AtomicBool;
use std::sync::{Arc, OnceLock};
use std::time::{Duration, Instant};

use rand::Rng;
use serde::Serialize;
use serde_json::Value;

use super::data::{self, DataForm};
use super::decode::Errors;
use super::problem::{FieldError, Problem};
use super::request::{self, Comparing, Params, Replay, Resampling};
use super::rules::Rule;
use super::token::{self, TokenBody, TokenError};
use crate::config::Limits;
use crate::engine::data::Sample;
use crate::engine::driver::{self, Outcome, Prepared, RunError, SampleProblems, Which};
use crate::engine::executor::Budget;
use crate::engine::job::{Resampled, Samples};
use crate::engine::plan::ResampleCount;
use crate::engine::rng::{GENERATOR, MAX_SEED};
use crate::engine::scheme::SchemeError;
use crate::engine::verdict::Sizes;

/// A checked request: its resampling fields, its samples with where they sit in the request,
/// and for a comparison what it compares.
pub struct Asked<'a> {
    pub resampling: &'a Resampling,
    /// Each sample with its pointer (`/data`, `/baseline`, `/candidate`) and form.
    pub samples: Vec<(Sample, &'static str, DataForm)>,
    pub comparing: Option<Comparing>,
    /// The samples' digests, taken once however many times the job is prepared (a comparison
    /// tries exact enumeration first) and whether or not a token is checked against them.
    digests: OnceLock<Vec<[u8; 32]>>,
}

impl<'a> Asked<'a> {
    pub fn new(resampling: &'a Resampling, samples: Vec<(Sample, &'static str, DataForm)>, comparing: Option<Comparing>) -> Self {
        Asked {
            resampling,
            samples,
            comparing,
            digests: OnceLock::new(),
        }
    }

    /// Each sample's SHA-256 ([`Sample::digest`]), baseline first.
    fn digests(&self) -> &[[u8; 32]] {
        self.digests
            .get_or_init(|| self.samples.iter().map(|(s, _, _)| s.digest()).collect())
    }
}

/// A job that passed every check, ready to run.
pub struct PreparedJob {
    prepared: Prepared,
    pub params: Params,
    pub comparing: Option<Comparing>,
    digests: Vec<[u8; 32]>,
    sizes: Vec<u64>,
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

/// A job that ran: its outcome and what its response is built from.
pub struct Ran {
    pub outcome: Outcome,
    pub params: Params,
    pub comparing: Option<Comparing>,
    pub seed: u64,
    pub token: String,
    /// Observations of each sample, baseline first.
    pub sizes: Vec<u64>,
}

impl Ran {
    /// The sizes of a comparison's samples.
    pub fn comparison_sizes(&self) -> Sizes {
        let paired = self.comparing.is_some_and(|c| c.paired);
        Sizes {
            baseline: self.sizes[0],
            candidate: self.sizes.get(1).copied().unwrap_or(self.sizes[0]),
            paired,
        }
    }
}

/// A token's parameters, once it proved to belong to these samples, to this kind of request and
/// to be within this server's limits.
fn replayed(t: &str, asked: &Asked, limits: &Limits) -> Result<(Params, Option<Comparing>, u64, Replay), Problem> {
    let refuse = |message: String| Problem::invalid(vec![FieldError::by_rule("/token", Rule::TokenValid, message)]);
    let body: TokenBody = token::decode(t).map_err(|e| match e {
        TokenError::Malformed => refuse(format!(
            "is not a whole token issued by this service (it starts with \"{}\"); copy it whole from an earlier response",
            token::PREFIX
        )),
        TokenError::Version { format, engine, generator } => refuse(format!(
            "was issued by format {format}, engine {engine}, generator {generator}; this server (format {}, engine {}, generator {}) cannot promise the same bits, so send the parameters instead",
            token::FORMAT_VERSION,
            token::ENGINE_VERSION,
            GENERATOR
        )),
    })?;
    if body.comparing.is_some() != asked.comparing.is_some() {
        return Err(refuse(
            "was issued for the other route (an interval, or a comparison); send it where it came from".into(),
        ));
    }
    let digests: Vec<String> = asked.digests().iter().map(|d| token::hex(d)).collect();
    if body.data != digests {
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
    Ok((body.params, body.comparing, body.seed, replay))
}

/// The engine's samples of a request, each resampled by its scheme.
fn samples(asked: &Asked, params: &Params, comparing: Option<Comparing>) -> Samples {
    let part = |i: usize| Resampled {
        sample: asked.samples[i].0.clone(),
        scheme: params.scheme.clone(),
    };
    match comparing {
        None => Samples::One(part(0)),
        Some(c) => Samples::Two {
            baseline: part(0),
            candidate: part(1),
            contrast: c.contrast,
            paired: c.paired,
        },
    }
}

/// Lay a checked request's job out (replaying its token), with `params` in place of the
/// request's own when given (a comparison's default resamples). `deadline_cap` bounds the job's
/// deadline (a batch's).
pub fn prepare(
    asked: &Asked,
    with: Option<Params>,
    limits: &Limits,
    started: Instant,
    deadline_cap: Option<Instant>,
) -> Result<PreparedJob, Problem> {
    let r = asked.resampling;
    let (mut params, comparing, seed, replay) = match &r.token {
        Some(t) => {
            let (p, c, s, replay) = replayed(t, asked, limits)?;
            (p, c, s, Some(replay))
        }
        None => {
            let seed = r.seed.map_or_else(|| rand::rng().random_range(0..=MAX_SEED), |s| s.get());
            (with.unwrap_or_else(|| r.params()), asked.comparing, seed, None)
        }
    };
    // An "auto" block length is chosen from the data and returned resolved (a token's is
    // resolved already).
    let series: Vec<&[f64]> = asked.samples.iter().flat_map(|(s, _, _)| s.series()).collect();
    params.scheme = params.scheme.resolved(&series);
    let own_ms = r
        .time_limit_ms
        .map_or(limits.default_time_limit_ms, |t| t.get())
        .min(limits.max_time_limit_ms);
    let own = started + Duration::from_millis(own_ms);
    let deadline = deadline_cap.map_or(own, |cap| cap.min(own));
    let job = request::job(&params, samples(asked, &params, comparing), seed, r.on_time_limit, limits, replay);
    let places: Vec<(&str, DataForm)> = asked.samples.iter().map(|(_, at, form)| (*at, *form)).collect();
    // The digests (a pass over the data on one thread) are taken while the layout sorts it.
    let (prepared, digests) = rayon::join(|| driver::prepare(job), || asked.digests().to_vec());
    let prepared = prepared.map_err(|e| refusal(e, own_ms, &places))?;
    Ok(PreparedJob {
        prepared,
        params,
        comparing,
        digests,
        sizes: asked.samples.iter().map(|(s, _, _)| s.n()).collect(),
        deadline,
        time_limit_ms: deadline.saturating_duration_since(started).as_millis() as u64,
    })
}

/// The problem document of an engine refusal; `places` says where each sample sits in the
/// request and in what form (baseline first).
fn refusal(e: RunError, time_limit_ms: u64, places: &[(&str, DataForm)]) -> Problem {
    let invalid = |pointer: &str, rule: Rule, message: String| Problem::invalid(vec![FieldError::by_rule(pointer, rule, message)]);
    match e {
        RunError::Data(samples) => {
            let mut errs = Errors::default();
            for SampleProblems { which, problems } in samples {
                let Some((at, form)) = places.get(usize::from(which == Which::Candidate)).or(places.first()) else {
                    return Problem::internal("the data was refused after it had been accepted; this is a bug, please report it");
                };
                data::report(*form, problems, at, "/statistic", &mut errs);
            }
            Problem::invalid(errs.0)
        }
        RunError::Scheme(e @ SchemeError::TooManyToEnumerate { .. }) => invalid(
            "/resamples",
            Rule::ExactTooMany,
            format!("\"exact\": {e}; it suits samples of up to about 10 observations. Give a number of resamples instead"),
        ),
        RunError::Scheme(e @ SchemeError::NeedsRows { .. }) => invalid("/scheme", Rule::SchemeNeedsRows, format!("{e}")),
        RunError::Scheme(e @ (SchemeError::BlockTooLong { .. } | SchemeError::BlockNotWhole { .. })) => invalid(
            "/scheme",
            Rule::BlockLength,
            format!("{e}: give a block length of whole rows (a mean block length of any number of rows) from 1 up to half the series, or \"auto\""),
        ),
        RunError::Scheme(e @ SchemeError::Labels { field, .. }) => invalid(&format!("/scheme/{field}"), Rule::SchemeLabels, format!("{e}")),
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

/// Run a prepared job within its budget (a test hook may stop it after `replicate_cap`
/// replicates, as if its time ran out).
pub fn run(job: PreparedJob, cancel: Arc<AtomicBool>, replicate_cap: Option<u64>) -> Result<Ran, Problem> {
    let budget = Budget {
        deadline: Some(job.deadline),
        cancel: Some(cancel),
        replicate_cap,
    };
    // Data problems were all found in `prepare`; what running can refuse needs no sample.
    let outcome = job.prepared.run(&budget).map_err(|e| refusal(e, job.time_limit_ms, &[]))?;
    let seed = job.prepared.job.seed;
    let mut body = TokenBody::new(seed, outcome.resamples, outcome.stop, job.params.clone(), &job.digests);
    body.comparing = job.comparing;
    Ok(Ran {
        outcome,
        params: job.params,
        comparing: job.comparing,
        seed,
        token: body.encode(),
        sizes: job.sizes,
    })
}

/// A response as JSON, refused if a number in it is undefined (the contract promises none).
pub fn to_json<T: Serialize>(resp: &T) -> Result<Value, Problem> {
    let value = serde_json::to_value(resp).map_err(|e| Problem::internal(format!("could not encode the result: {e}")))?;
    let mut at = String::new();
    if super::response::find_null(&value, &mut at) {
        return Err(Problem::internal(format!(
            "the result had an undefined number at {at}; this is a bug, please report it with the request's parameters"
        )));
    }
    Ok(value)
}

/// Milliseconds since `started`, to the microsecond.
pub fn elapsed_ms(started: Instant) -> f64 {
    (started.elapsed().as_secs_f64() * 1e6).round() / 1e3
}
