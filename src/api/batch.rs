//! `POST /v1/batch`: many jobs in one request, run together on one compute slot's pool, one
//! `ok` or one `error` per job, in the order of the jobs. A bad job does not sink the batch; its problem's pointers are prefixed
//! with `/jobs/<i>` so they point into the batch request.

use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::{Duration, Instant};

use rayon::prelude::*;
use serde::Serialize;
use serde_json::Value;
use utoipa::openapi::schema::{OneOfBuilder, Schema};
use utoipa::openapi::RefOr;
use utoipa::{PartialSchema, ToSchema};

use super::compare::{self, CompareResponse};
use super::decode::{decode_field, describe, Decode, Errors, Shape};
use super::interval::{self, Parsed};
use super::job::{self, PreparedJob, Ran};
use super::problem::{FieldError, Problem};
use super::request::{IntervalRequest, TimeLimitMs};
use super::response::IntervalResponse;
use super::rules::Rule;
use crate::config::Limits;
use crate::engine::family::{self, Multiplicity};
use crate::engine::interval::{Level, DEFAULT_LEVEL};
use crate::engine::verdict::Reading;

crate::decode_with_serde!(Multiplicity);

crate::wire_enum! {
    /// The kind of a batch job.
    pub enum JobKind {
        /// One sample, one statistic: the fields of `POST /v1/interval`.
        Interval = "interval",
        /// Two samples compared, with a verdict: the fields of `POST /v1/compare`.
        Compare = "compare",
    }
}

/// The jobs of a batch, each read on its own when the batch runs (so that a bad job gets its
/// own error).
#[derive(Debug, Clone)]
pub struct Jobs(pub Vec<Value>);

/// Always an array: a list of jobs is never unboxed by R's writers, and each job's problem
/// points at `/jobs/<i>`.
impl Decode for Jobs {
    const SHAPE: Shape = Shape::AsIs;

    fn decode(v: &Value, at: &str, errs: &mut Errors) -> Option<Self> {
        match v {
            Value::Array(a) if !a.is_empty() => Some(Jobs(a.clone())),
            other => {
                errs.push(at, format!("must be a non-empty array of jobs; got {}", describe(other)));
                None
            }
        }
    }
}

/// A job of a batch: the fields of a request of its route with `kind` first.
fn job_schema(request: RefOr<Schema>, kind: JobKind) -> RefOr<Schema> {
    let mut schema = request;
    if let RefOr::T(Schema::Object(o)) = &mut schema {
        let mut tag = utoipa::openapi::schema::ObjectBuilder::new()
            .schema_type(utoipa::openapi::schema::Type::String)
            .enum_values(Some([kind.name()]))
            .build();
        tag.description = Some(format!("\"{kind}\": {}", kind.doc()));
        o.properties.shift_insert(0, "kind".into(), RefOr::T(Schema::Object(tag)));
        o.required.insert(0, "kind".into());
        o.description = Some(format!(
            "A `{kind}` job of a batch: the fields of `POST /v1/{kind}` with `\"kind\": \"{kind}\"`."
        ));
    }
    schema
}

impl PartialSchema for Jobs {
    fn schema() -> RefOr<Schema> {
        utoipa::openapi::schema::ArrayBuilder::new()
            .items(
                OneOfBuilder::new()
                    .item(utoipa::openapi::Ref::from_schema_name("IntervalJob"))
                    .item(utoipa::openapi::Ref::from_schema_name("CompareJob")),
            )
            .min_items(Some(1))
            .description(Some("1 to the server's `limits.max_batch_jobs` jobs, each told apart by `kind`."))
            .into()
    }
}

impl ToSchema for Jobs {
    fn schemas(schemas: &mut Vec<(String, RefOr<Schema>)>) {
        schemas.push((
            "IntervalJob".into(),
            job_schema(super::schema::flattened::<IntervalRequest>(), JobKind::Interval),
        ));
        schemas.push(("CompareJob".into(), job_schema(compare::request_schema(), JobKind::Compare)));
    }
}

fn default_family_level() -> Level {
    Level::new(DEFAULT_LEVEL).expect("in range")
}

crate::wire_object! {
    /// The body of `POST /v1/batch`. Unknown fields are refused (422).
    pub struct BatchRequest {
        required
        jobs: Jobs,
        default
        /// The level the whole family of results holds at with a multiplicity correction.
        family_level: Level = default_family_level,
        default
        multiplicity: Multiplicity = Multiplicity::default,
        optional
        /// Wall-clock budget for the whole batch in milliseconds, capped by the server's
        /// `limits.max_time_limit_ms`; each job's own `time_limit_ms` applies within it.
        time_limit_ms: TimeLimitMs,
    }
}

/// One job's outcome: `{"ok": result}` or `{"error": problem}`.
#[derive(Debug, Clone, Serialize, ToSchema)]
#[serde(untagged)]
pub enum BatchResult {
    Ok {
        #[schema(schema_with = ok_schema)]
        ok: Value,
    },
    Error {
        /// The job's problem; its pointers start with `/jobs/<index>`.
        error: Problem,
    },
}

/// The `ok` of a job: the response of its route.
fn ok_schema() -> RefOr<Schema> {
    OneOfBuilder::new()
        .item(utoipa::openapi::Ref::from_schema_name(IntervalResponse::name()))
        .item(utoipa::openapi::Ref::from_schema_name(CompareResponse::name()))
        .description(Some(
            "The job's result: an `IntervalResponse` for an `interval` job, a `CompareResponse` (which has `verdict`) for a `compare` job.",
        ))
        .into()
}

/// The response of `POST /v1/batch`.
#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct BatchResponse {
    /// One outcome per job, in the order of the jobs.
    pub results: Vec<BatchResult>,
    pub multiplicity: Multiplicity,
    /// The family level of the request.
    pub family_level: Level,
    /// Milliseconds from receiving the request to the response.
    #[schema(minimum = 0)]
    pub elapsed_ms: f64,
}

fn prefixed(p: Problem, i: usize) -> Problem {
    p.within(&format!("/jobs/{i}"))
}

crate::decode_with_serde!(JobKind);

/// Read and check one job.
fn prepare_job(i: usize, job: &Value, limits: &Limits, started: Instant, deadline: Instant) -> Result<PreparedJob, Problem> {
    let invalid = |pointer: &str, message: String| prefixed(Problem::invalid(vec![FieldError::new(pointer, message)]), i);
    let Value::Object(o) = job else {
        return Err(invalid("", format!("a job must be an object; got {}", describe(job))));
    };
    let mut errs = Errors::default();
    let kind: Option<JobKind> = match o.get("kind") {
        Some(k) => decode_field(k, "/kind", &mut errs),
        None => {
            errs.push("/kind", format!("is required: one of {}", JobKind::quoted()));
            None
        }
    };
    let prepared = match kind {
        Some(JobKind::Interval) => interval::prepare(job, &["kind"], limits, started, Some(deadline)),
        Some(JobKind::Compare) => compare::prepare(job, &["kind"], limits, started, Some(deadline)),
        None => Err(Problem::invalid(errs.0)),
    };
    prepared.map_err(|p| prefixed(p, i))
}

/// Decode a batch and check it against the server's limits.
fn decode(body: &[u8], max_jobs: usize) -> Result<(BatchRequest, Parsed), Problem> {
    let parsed = interval::parse_json(body)?;
    let mut errs = Errors::default();
    let req = BatchRequest::decode(parsed.json.as_object().expect("an object"), "", &[], &mut errs);
    if let Some(r) = &req {
        if r.jobs.0.len() > max_jobs {
            errs.refuse(
                "/jobs",
                Rule::BatchLimit,
                format!("must hold 1 to {max_jobs} jobs; it holds {}", r.jobs.0.len()),
            );
        }
    }
    match req {
        Some(r) if errs.is_empty() => Ok((r, parsed)),
        _ => Err(Problem::invalid(errs.0)),
    }
}

/// Run a batch body.
pub fn compute(body: &[u8], limits: &Limits, max_jobs: usize, cancel: Arc<AtomicBool>, started: Instant) -> Result<Value, Problem> {
    let (req, parsed) = decode(body, max_jobs)?;
    let time_limit_ms = req
        .time_limit_ms
        .map_or(limits.default_time_limit_ms, |t| t.get())
        .min(limits.max_time_limit_ms);
    let deadline = started + Duration::from_millis(time_limit_ms);
    // Check every job and the batch's work before running any of them.
    let prepared: Vec<Result<PreparedJob, Problem>> = req
        .jobs
        .0
        .iter()
        .enumerate()
        .map(|(i, job)| parsed.decoding(&format!("/jobs/{i}"), || prepare_job(i, job, limits, started, deadline)))
        .collect();
    let total_work: f64 = prepared.iter().filter_map(|p| p.as_ref().ok()).map(PreparedJob::work).sum();
    if total_work > limits.work_limit {
        return Err(Problem::work_limit(total_work, limits.work_limit));
    }
    // The jobs run together on the pool (each replicate on its own stream, so the results do
    // not depend on which job ran when): a page of small series keeps every thread busy instead
    // of running job after job in short waves that leave threads idle.
    let ran: Vec<Result<Ran, Problem>> = prepared
        .into_par_iter()
        .enumerate()
        .map(|(i, p)| p.and_then(|job| job::run(job, cancel.clone(), None).map_err(|e| prefixed(e, i))))
        .collect();
    let readings = family_readings(&ran, req.multiplicity, req.family_level.get());
    let results: Vec<BatchResult> = ran
        .into_iter()
        .zip(readings)
        .enumerate()
        .map(
            |(i, (r, reading))| match r.and_then(|ran| respond(ran, reading, started).map_err(|e| prefixed(e, i))) {
                Ok(ok) => BatchResult::Ok { ok },
                Err(error) => BatchResult::Error { error },
            },
        )
        .collect();
    job::to_json(&BatchResponse {
        results,
        multiplicity: req.multiplicity,
        family_level: req.family_level,
        elapsed_ms: job::elapsed_ms(started),
    })
}

/// What each job's verdict is read at: the comparisons that ran form the family (interval jobs
/// and failed jobs decide nothing, so they are not in it); `None` for the others.
fn family_readings(ran: &[Result<Ran, Problem>], multiplicity: Multiplicity, family_level: f64) -> Vec<Option<Reading>> {
    let members: Vec<(usize, &Ran)> = ran
        .iter()
        .enumerate()
        .filter_map(|(i, r)| r.as_ref().ok().filter(|r| r.comparing.is_some()).map(|r| (i, r)))
        .collect();
    let own: Vec<f64> = members.iter().map(|(_, r)| r.params.levels.0[0].get()).collect();
    let p: Vec<f64> = members.iter().map(|(_, r)| compare::p_value(r)).collect();
    let mut out = vec![None; ran.len()];
    for ((i, _), reading) in members.iter().zip(family::readings(multiplicity, family_level, &own, &p)) {
        out[*i] = Some(reading);
    }
    out
}

/// One job's `ok`: an interval, or a comparison read at its reading in the family.
fn respond(ran: Ran, reading: Option<Reading>, started: Instant) -> Result<Value, Problem> {
    match reading {
        None => interval::respond(ran, started),
        Some(reading) => job::to_json(&compare::response(ran, reading, started)),
    }
}
