//! `POST /v1/batch`: many jobs in one request, run in order on one compute slot, one `ok` or
//! one `error` per job. A bad job does not sink the batch; its problem's pointers are prefixed
//! with `/jobs/<i>` so they point into the batch request.

use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::{Duration, Instant};

use serde_json::{json, Map, Value};

use super::interval::{self, PreparedJob, Settings};
use super::problem::{FieldError, Problem};
use super::request::describe;

const BATCH_FIELDS: &[&str] = &["jobs", "family_level", "adjust", "time_limit_ms"];

fn prefixed(mut p: Problem, i: usize) -> Value {
    for e in &mut p.errors {
        e.pointer = format!("/jobs/{i}{}", e.pointer);
    }
    serde_json::to_value(&p).expect("a problem serialises")
}

/// Run a batch body. `max_jobs` bounds the number of jobs.
pub fn compute(body: &[u8], settings: &Settings, max_jobs: usize, cancel: Arc<AtomicBool>, started: Instant) -> Result<Value, Problem> {
    let json = interval::parse_json(body)?;
    let Value::Object(obj) = &json else {
        return Err(Problem::malformed_json(
            "the body must be a JSON object such as {\"jobs\": [{\"kind\": \"interval\", \"data\": [1, 2, 3]}]}",
        ));
    };
    let mut errs = Vec::new();
    for k in obj.keys() {
        if !BATCH_FIELDS.contains(&k.as_str()) {
            errs.push(FieldError::new(
                format!("/{}", super::problem::escape_token(k)),
                "unknown field; the fields here are \"jobs\", \"family_level\", \"adjust\", \"time_limit_ms\"",
            ));
        }
    }
    let jobs = match obj.get("jobs") {
        Some(Value::Array(a)) if !a.is_empty() && a.len() <= max_jobs => Some(a),
        Some(Value::Array(a)) => {
            errs.push(FieldError::new(
                "/jobs",
                format!("must hold 1 to {max_jobs} jobs; it holds {}", a.len()),
            ));
            None
        }
        Some(v) => {
            errs.push(FieldError::new("/jobs", format!("must be an array of jobs; got {}", describe(v))));
            None
        }
        None => {
            errs.push(FieldError::new(
                "/jobs",
                "is required: an array of {\"kind\": \"interval\", ...} jobs",
            ));
            None
        }
    };
    let family_level = match obj.get("family_level") {
        None => 0.95,
        Some(v) => match v.as_f64() {
            Some(x) if x > 0.0 && x < 1.0 => x,
            _ => {
                errs.push(FieldError::new(
                    "/family_level",
                    format!("must be a level strictly between 0 and 1; got {}", describe(v)),
                ));
                0.95
            }
        },
    };
    let adjust = match obj.get("adjust") {
        None => "none",
        Some(Value::String(s)) if s == "none" => "none",
        Some(Value::String(s)) if s == "bonferroni" => "bonferroni",
        Some(Value::String(s)) if s == "holm" => "holm",
        Some(v) => {
            errs.push(FieldError::new(
                "/adjust",
                format!("must be \"none\", \"bonferroni\" or \"holm\"; got {}", describe(v)),
            ));
            "none"
        }
    };
    let time_limit_ms = match obj.get("time_limit_ms") {
        None => settings.limits.default_time_limit_ms,
        Some(v) => match v.as_u64() {
            Some(t) if t >= 1 => t.min(settings.limits.max_time_limit_ms),
            _ => {
                errs.push(FieldError::new(
                    "/time_limit_ms",
                    format!("must be a whole number of milliseconds, 1 or more; got {}", describe(v)),
                ));
                0
            }
        },
    };
    if !errs.is_empty() {
        return Err(Problem::invalid(errs));
    }
    let jobs = jobs.expect("checked");
    let deadline = started + Duration::from_millis(time_limit_ms);

    // Validate every job and estimate the batch's work before running any of them.
    let mut prepared: Vec<Result<PreparedJob, Value>> = Vec::with_capacity(jobs.len());
    for (i, job) in jobs.iter().enumerate() {
        let entry = match job {
            Value::Object(o) => match o.get("kind").and_then(Value::as_str) {
                Some("interval") => {
                    let mut rest: Map<String, Value> = o.clone();
                    rest.remove("kind");
                    interval::prepare(&Value::Object(rest), settings, started, Some(deadline)).map_err(|p| prefixed(p, i))
                }
                Some("compare") => Err(prefixed(
                    Problem::invalid(vec![FieldError::new(
                        "/kind",
                        "compare jobs are part of the contract but this server version does not run them yet; send interval jobs",
                    )]),
                    i,
                )),
                _ => Err(prefixed(
                    Problem::invalid(vec![FieldError::new("/kind", "is required: \"interval\" or \"compare\"")]),
                    i,
                )),
            },
            other => Err(prefixed(
                Problem::invalid(vec![FieldError::new(
                    "",
                    format!("a job must be an object; got {}", describe(other)),
                )]),
                i,
            )),
        };
        prepared.push(entry);
    }
    let total_work: f64 = prepared.iter().filter_map(|p| p.as_ref().ok()).map(|p| p.work).sum();
    if total_work > settings.work_limit {
        return Err(Problem::work_limit(total_work, settings.work_limit));
    }
    let results: Vec<Value> = prepared
        .into_iter()
        .enumerate()
        .map(|(i, p)| match p {
            Ok(job) => match interval::execute(job, cancel.clone(), started) {
                Ok(v) => json!({ "ok": v }),
                Err(problem) => json!({ "error": prefixed(problem, i) }),
            },
            Err(problem) => json!({ "error": problem }),
        })
        .collect();
    let elapsed_ms = (started.elapsed().as_secs_f64() * 1e6).round() / 1e3;
    Ok(json!({ "results": results, "adjust": adjust, "family_level": family_level, "elapsed_ms": elapsed_ms }))
}
