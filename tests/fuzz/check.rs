//! One case through the handlers' functions, and what its answer must be.

use std::collections::BTreeMap;
use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::{Duration, Instant};

use bandsaw::api::problem::Problem;
use bandsaw::api::{batch, compare, interval};
use bandsaw::config::Limits;
use serde_json::Value;

use crate::alloc::peak_of;
use crate::mutate::{Case, Target};
use crate::{MAX_JOBS, MAX_RESAMPLES, MAX_ROWS, TIME_LIMIT_MS, WORK_LIMIT};

pub fn limits() -> Limits {
    Limits {
        max_rows: MAX_ROWS,
        max_resamples: MAX_RESAMPLES,
        work_limit: WORK_LIMIT,
        default_time_limit_ms: TIME_LIMIT_MS,
        max_time_limit_ms: TIME_LIMIT_MS,
    }
}

/// The most bytes one request may hold at once. What a body can make the service hold is
/// (1) the body read into a JSON tree: the lifted text is a copy (1×), and each byte of text
/// makes at most one JSON value; the densest case, `{"":0}` objects in an array or `[[]]`
/// nests, costs a `Value` in its parent's vector (doubling growth: 2×) and the smallest
/// non-empty map or vector of its own (with `preserve_order`, an index table and an entries
/// vector of four slots), under 64 × size_of::<Value>() bytes for 6 bytes of text; the
/// decoded request (floats, labels, messages naming fields) is smaller than the tree it
/// came from; so 16 × size_of::<Value>() per byte of body; and (2) per job, what the limits
/// allow whatever the body: per row, the sorted values, the unit of each row, and a weight
/// vector, a nested buffer and a statistic's scratch on each worker thread (8 + 4·threads
/// floats); per replicate, its value, its standard error, the sorted copy, the jackknife and
/// the response's `replicates` as JSON (16 floats and two `Value`s); the jobs of a batch are
/// all prepared before any runs, so this is taken MAX_JOBS times; and (3) 4 MiB for the
/// fixed costs (the normal tables, a rayon job's stacks are not heap, the response's
/// catalogue-sized parts). A bound that scaled with a number in the body rather than its
/// size (`resamples: 1e9` allocating before it is refused) breaks this at once.
pub fn bound(body_len: usize) -> usize {
    let value = std::mem::size_of::<Value>();
    let threads = rayon::current_num_threads();
    let per_row = 8 * (8 + 4 * threads);
    let per_replicate = 16 * 8 + 2 * value;
    let per_job = per_row * MAX_ROWS as usize + per_replicate * MAX_RESAMPLES as usize;
    16 * value * body_len + MAX_JOBS * per_job + (4 << 20)
}

/// What one case came to.
pub struct Outcome {
    pub status: u16,
    pub slug: String,
    pub peak: usize,
}

/// How an allocation-bound failure starts, so the run can tell it from the others.
pub const HELD: &str = "held";

/// Handle a body as the route of `target` would, and check the answer.
pub fn handle(target: Target, body: &[u8]) -> Result<Outcome, String> {
    let limits = limits();
    let cancel = Arc::new(AtomicBool::new(false));
    let (result, peak) = peak_of(|| {
        let started = Instant::now();
        match target {
            Target::Interval => interval::compute(body, &limits, cancel, started, None),
            Target::Compare => compare::compute(body, &limits, cancel, started),
            Target::Batch => batch::compute(body, &limits, MAX_JOBS, cancel, started),
        }
    });
    let limit = bound(body.len());
    if peak > limit {
        return Err(format!(
            "{HELD} {peak} bytes at once, above the bound of {limit} for a body of {} bytes",
            body.len()
        ));
    }
    match result {
        Ok(v) if v.is_object() => Ok(Outcome {
            status: 200,
            slug: String::new(),
            peak,
        }),
        Ok(_) => Err("a response that is not a JSON object".into()),
        Err(p) => {
            valid_problem(&p, body)?;
            Ok(Outcome {
                status: p.status,
                slug: p.slug().to_string(),
                peak,
            })
        }
    }
}

/// An RFC 9457 document as the contract describes it: a 4xx (or the documented 503 of a time
/// limit), a `type` of `/problems/<slug>`, a title and a detail, and each field error's pointer
/// a valid JSON Pointer that exists in the request, or whose parent does (a missing field).
fn valid_problem(p: &Problem, body: &[u8]) -> Result<(), String> {
    let documented_5xx = p.status == 503 && p.slug() == "time-limit";
    if !(400..500).contains(&p.status) && !documented_5xx {
        return Err(format!("status {}: {} ({})", p.status, p.title, p.detail));
    }
    let slug = p.slug();
    let slug_ok = p.kind.starts_with("/problems/")
        && slug.starts_with(|c: char| c.is_ascii_lowercase())
        && slug.chars().all(|c| c.is_ascii_lowercase() || c == '-');
    if !slug_ok || p.title.is_empty() || p.detail.is_empty() {
        return Err(format!("an incomplete problem: {p:?}"));
    }
    let request = parsed(body);
    for e in &p.errors {
        if !is_pointer(&e.pointer) {
            return Err(format!("{:?} is not a JSON Pointer", e.pointer));
        }
        if let Some(req) = &request {
            let parent = e.pointer.rsplit_once('/').map_or("", |(head, _)| head);
            if req.pointer(&e.pointer).is_none() && req.pointer(parent).is_none() {
                return Err(format!(
                    "{:?} names nothing in the request, nor a field of something in it ({})",
                    e.pointer, e.message
                ));
            }
        }
        if e.message.is_empty() {
            return Err(format!("no message for {:?}", e.pointer));
        }
    }
    Ok(())
}

/// The request as JSON, read as the service reads it (bare NaN and Infinity quoted), when it is.
fn parsed(body: &[u8]) -> Option<Value> {
    serde_json::from_slice(body).ok().or_else(|| {
        let q = interval::quote_non_finite_literals(std::str::from_utf8(body).ok()?)?;
        serde_json::from_str(&q).ok()
    })
}

/// RFC 6901: empty, or `/`-separated tokens in which `~` is followed only by 0 or 1.
fn is_pointer(p: &str) -> bool {
    (p.is_empty() || p.starts_with('/')) && p.split('~').skip(1).all(|rest| rest.starts_with('0') || rest.starts_with('1'))
}

/// Counts of the run, by target, by kind of input and by answer.
#[derive(Default)]
pub struct Tally {
    pub cases: u64,
    targets: BTreeMap<String, u64>,
    kinds: BTreeMap<&'static str, u64>,
    answers: BTreeMap<String, u64>,
    max_peak: usize,
    max_ratio: f64,
    biggest: usize,
}

impl Tally {
    pub fn add(&mut self, case: &Case, o: Outcome) {
        self.cases += 1;
        *self.targets.entry(format!("{:?}", case.target)).or_default() += 1;
        *self.kinds.entry(case.kind()).or_default() += 1;
        let answer = if o.status == 200 {
            "200".to_string()
        } else {
            format!("{} {}", o.status, o.slug)
        };
        *self.answers.entry(answer).or_default() += 1;
        let len = case.body().len();
        self.max_peak = self.max_peak.max(o.peak);
        self.max_ratio = self.max_ratio.max(o.peak as f64 / bound(len) as f64);
        self.biggest = self.biggest.max(len);
    }

    pub fn by_target(&self, t: Target) -> u64 {
        self.targets.get(&format!("{t:?}")).copied().unwrap_or(0)
    }

    pub fn summary(&self, seed: u64, took: Duration) -> String {
        let list = |m: Vec<(String, u64)>| m.into_iter().map(|(k, v)| format!("{k}: {v}")).collect::<Vec<_>>().join(", ");
        format!(
            "fuzz: {} cases in {:.1} s (seed {seed}), all answered or refused with a valid problem\n  targets: {}\n  inputs: {}\n  answers: {}\n  largest body {} bytes; most held at once {} bytes; highest share of the allocation bound {:.3}",
            self.cases,
            took.as_secs_f64(),
            list(self.targets.clone().into_iter().collect()),
            list(self.kinds.iter().map(|(k, v)| (k.to_string(), *v)).collect()),
            list(self.answers.clone().into_iter().collect()),
            self.biggest,
            self.max_peak,
            self.max_ratio,
        )
    }
}

/// The checks themselves refuse what they guard against, so a clean run means something. Run
/// at the start of the fuzz run, not as a test of its own: the allocation counter is
/// process-wide, and a second test running beside the fuzz run saw its frees (in CI it counted
/// 1048488 of the 1048576 bytes it held).
pub fn the_checks_refuse_bad_problems() {
    assert!(is_pointer("") && is_pointer("/data/0") && is_pointer("/a~0b~1c"));
    assert!(!is_pointer("data") && !is_pointer("/a~2") && !is_pointer("/a~"));
    let body = br#"{"data": [1, 2], "levels": [95]}"#;
    let at = |pointer: &str| Problem::invalid(vec![bandsaw::api::problem::FieldError::new(pointer, "wrong")]);
    assert!(valid_problem(&at("/levels/0"), body).is_ok());
    assert!(valid_problem(&at("/statistic"), body).is_ok(), "a missing field of the body");
    assert!(
        valid_problem(&at("/scheme/strata"), body).is_err(),
        "neither it nor its parent exists"
    );
    assert!(valid_problem(&Problem::internal("a bug"), body).is_err());
    assert!(bound(0) < bound(1 << 20), "the bound grows with the body");
    let (v, held) = peak_of(|| std::hint::black_box(vec![1u8; 1 << 20]).len());
    assert!(v == 1 << 20 && held >= 1 << 20, "the allocator counts what a case holds: {held}");
}
