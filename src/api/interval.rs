//! `POST /v1/interval`, from body bytes to response JSON. Runs entirely on the compute pool
//! (parsing a large body is compute too), so the async runtime only moves bytes.

use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::Instant;

use serde_json::Value;

use super::boxed::fitted;
use super::data::DataForm;
use super::decode::checked;
use super::fields::Picture;
use super::job::{self, Asked, PreparedJob, Ran};
use super::lift::{self, Lifted};
use super::picture;
use super::problem::Problem;
use super::request::IntervalRequest;
use super::response::IntervalResponse;
use super::Drawn;
use crate::config::Limits;

/// A body parsed: the JSON tree, and the large data arrays read around it (see [`lift`]).
pub struct Parsed {
    pub json: Value,
    pub lifted: Arc<Lifted>,
}

impl Parsed {
    /// Run a decoder of the value at `prefix` (empty for the whole body) with the lifted arrays
    /// within its reach.
    pub fn decoding<R>(&self, prefix: &str, f: impl FnOnce() -> R) -> R {
        lift::within(&self.lifted, prefix, f)
    }
}

/// Parse a body as a JSON object, accepting bare `NaN`/`Infinity` only so as to name them in a
/// 422.
pub fn parse_json(body: &[u8]) -> Result<Parsed, Problem> {
    let (text, lifted) = lift::lift(body);
    match parse_tree(&text) {
        Ok(json) => Ok(Parsed { json, lifted }),
        // The error's line and column must be those of the body as sent.
        Err(e) if !lifted.is_empty() => Err(parse_tree(body).err().unwrap_or(e)),
        Err(e) => Err(e),
    }
}

fn parse_tree(body: &[u8]) -> Result<Value, Problem> {
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
    let (ran, _) = run(body, limits, cancel, started, replicate_cap)?;
    respond(ran, started)
}

/// Draw an interval's picture from a request body.
pub fn draw(body: &[u8], limits: &Limits, cancel: Arc<AtomicBool>, started: Instant, replicate_cap: Option<u64>) -> Result<Drawn, Problem> {
    let (ran, look) = run(body, limits, cancel, started, replicate_cap)?;
    Ok(picture::interval(&ran, &look))
}

fn run(
    body: &[u8],
    limits: &Limits,
    cancel: Arc<AtomicBool>,
    started: Instant,
    replicate_cap: Option<u64>,
) -> Result<(Ran, Picture), Problem> {
    let parsed = parse_json(body)?;
    let (job, look) = parsed.decoding("", || prepare_looking(&parsed.json, &[], limits, started, None))?;
    Ok((job::run(job, cancel, replicate_cap)?, look))
}

/// Decode an interval request and check it against every rule; `also` lists fields allowed
/// besides the request's own (a batch job's `kind`), `deadline_cap` bounds the job's deadline.
pub fn prepare(
    json: &Value,
    also: &[&str],
    limits: &Limits,
    started: Instant,
    deadline_cap: Option<Instant>,
) -> Result<PreparedJob, Problem> {
    prepare_looking(json, also, limits, started, deadline_cap).map(|(job, _)| job)
}

/// [`prepare`], with how a picture of the result is to look; a problem's pointers resolve in
/// the body as sent (a field sent in R's other form).
fn prepare_looking(
    json: &Value,
    also: &[&str],
    limits: &Limits,
    started: Instant,
    deadline_cap: Option<Instant>,
) -> Result<(PreparedJob, Picture), Problem> {
    let fit = |p| fitted(p, json);
    let req = checked(
        json,
        |raw, errs| IntervalRequest::decode(raw, "", also, errs),
        |r, raw, errs| r.check(raw, limits, errs),
    )
    .map_err(fit)?;
    let form = DataForm::of(&req.data.0);
    let asked = Asked::new(&req.resampling, vec![(req.data.0, "/data", form)], None);
    Ok((job::prepare(&asked, None, limits, started, deadline_cap).map_err(fit)?, req.picture))
}

/// The response JSON of an interval job that ran.
pub fn respond(ran: Ran, started: Instant) -> Result<Value, Problem> {
    let resp = IntervalResponse::from_outcome(ran.outcome, &ran.params, ran.seed, ran.token, job::elapsed_ms(started));
    job::to_json(&resp)
}
