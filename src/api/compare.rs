//! `POST /v1/compare`: two samples (baseline and candidate), the contrast of one statistic
//! between them with every interval, and a verdict: regression, improvement, equivalent or
//! inconclusive.

use std::sync::atomic::AtomicBool;
use std::sync::Arc;
use std::time::Instant;

use serde::Serialize;
use serde_json::Value;
use utoipa::openapi::schema::Schema;
use utoipa::openapi::RefOr;
use utoipa::ToSchema;

use super::boxed::fitted;
use super::data::{Data, DataForm};
use super::decode::{checked, Errors};
use super::fields::{Methods, Picture, ResampleMode, Resamples};
use super::interval::parse_json;
use super::job::{self, Asked, PreparedJob, Ran};
use super::picture;
use super::problem::Problem;
use super::request::{check_rows, Comparing, Resampling};
use super::response::{IntervalResponse, WarningJson};
use super::rules::Rule;
use super::Drawn;
use crate::config::Limits;
use crate::engine::diagnostics;
use crate::engine::interval::{Method, COMPARISON_METHODS, DEFAULT_METHODS};
use crate::engine::job::Contrast;
use crate::engine::scheme::SchemeSpec;
use crate::engine::verdict::{self, Better, Decision, Evidence, Reading, Tolerance, Verdict, Why};

crate::decode_with_serde!(Contrast, Better, Tolerance, bool);

fn ratio() -> Contrast {
    Contrast::Ratio
}

fn unpaired() -> bool {
    false
}

fn no_tolerance() -> Tolerance {
    Tolerance::new(0.0).expect("in range")
}

crate::wire_object! {
    /// The body of `POST /v1/compare`. `baseline` and `candidate` are required. Unknown fields
    /// are refused (422).
    pub struct CompareRequest {
        required
        /// The baseline's observations (the code before the change), in any data form.
        baseline: Data,
        required
        /// The candidate's observations (the code after the change), in any data form.
        candidate: Data,
        default
        /// `ratio` (candidate / baseline) or `difference` (candidate − baseline).
        contrast: Contrast = ratio,
        default
        /// The runs are pairs (interleaved on one machine), resampled together: both samples
        /// rows given one by one (not aggregated), the same number on both sides.
        paired: bool = unpaired,
        default
        better: Better = Better::default,
        default
        tolerance: Tolerance = no_tolerance,
        flatten
        resampling: Resampling,
        flatten
        picture: Picture,
    }
}

/// The fields holding the samples.
const SAMPLES: [&str; 2] = ["baseline", "candidate"];

/// Without `resamples`, a comparison enumerates every distinct resample when there are at most
/// this many (up to five runs a side, or ten pairs): small suites then carry no Monte Carlo
/// error at all.
pub const EXACT_BY_DEFAULT: u64 = 100_000;

impl CompareRequest {
    /// Every rule between the request's fields and the server's limits.
    pub fn check(&self, raw: &serde_json::Map<String, Value>, limits: &Limits, errs: &mut Errors) {
        self.resampling.check(raw, &Self::fields(), &SAMPLES, limits, errs);
        check_rows(&self.baseline.0, "/baseline", limits, errs);
        check_rows(&self.candidate.0, "/candidate", limits, errs);
    }

    fn comparing(&self) -> Comparing {
        Comparing {
            contrast: self.contrast,
            paired: self.paired,
            better: self.better,
            tolerance: self.tolerance,
        }
    }
}

/// The schema of a comparison request, one flat object: `resamples` defaults to enumerating
/// small comparisons exactly.
pub fn request_schema() -> RefOr<Schema> {
    let mut schema = super::schema::flattened::<CompareRequest>();
    let quoted = |m: &[Method]| m.iter().map(|m| format!("`\"{m}\"`")).collect::<Vec<_>>().join(", ");
    let defaults = [
        ("resamples", format!(
            "How many resamples to draw, `\"auto\"` or `\"exact\"`. Without it (and without a token), `\"exact\"` where both samples have at most {EXACT_BY_DEFAULT} distinct resamples between them (up to five runs a side, or ten pairs), so that a small suite carries no Monte Carlo error; else {}.",
            crate::engine::plan::DEFAULT_RESAMPLES
        )),
        ("methods", format!(
            "The interval methods; the verdict is read from the first. Without it, {} where the contrast has an analytic standard error (a statistic that has one, unpaired, under `iid` or `bayesian`), since the studentized interval's far tails stay near nominal at small n; else {}.",
            quoted(&COMPARISON_METHODS),
            quoted(&DEFAULT_METHODS)
        )),
    ];
    if let RefOr::T(Schema::Object(o)) = &mut schema {
        for (field, description) in defaults {
            if let Some(RefOr::T(Schema::OneOf(r))) = o.properties.get_mut(field) {
                r.default = None;
                r.description = Some(description);
            }
        }
    }
    schema
}

/// Compute a comparison's response from a request body.
pub fn compute(body: &[u8], limits: &Limits, cancel: Arc<AtomicBool>, started: Instant) -> Result<Value, Problem> {
    let (ran, _) = run(body, limits, cancel, started)?;
    let level = ran.params.levels.0[0].get();
    respond(ran, Reading::alone(level), started)
}

/// Draw a comparison's picture from a request body, its verdict read as [`compute`] reads it.
pub fn draw(body: &[u8], limits: &Limits, cancel: Arc<AtomicBool>, started: Instant) -> Result<Drawn, Problem> {
    let (ran, look) = run(body, limits, cancel, started)?;
    let d = decision(&ran, Reading::alone(ran.params.levels.0[0].get()));
    Ok(picture::compare(&ran, &d, &look))
}

fn run(body: &[u8], limits: &Limits, cancel: Arc<AtomicBool>, started: Instant) -> Result<(Ran, Picture), Problem> {
    let parsed = parse_json(body)?;
    let (job, look) = parsed.decoding("", || prepare_looking(&parsed.json, &[], limits, started, None))?;
    Ok((job::run(job, cancel, None)?, look))
}

/// Decode a comparison and check it against every rule; see [`super::interval::prepare`].
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
        |raw, errs| CompareRequest::decode(raw, "", also, errs),
        |r, raw, errs| r.check(raw, limits, errs),
    )
    .map_err(fit)?;
    let look = req.picture.clone();
    let raw = json.as_object().expect("an object");
    let asked = Asked::new(
        &req.resampling,
        vec![
            (req.baseline.0.clone(), "/baseline", DataForm::of(&req.baseline.0)),
            (req.candidate.0.clone(), "/candidate", DataForm::of(&req.candidate.0)),
        ],
        Some(req.comparing()),
    );
    let r = &req.resampling;
    let mut params = r.params();
    // The analytic standard error assumes independent rows: iid or bayesian only.
    if !raw.contains_key("methods") && params.statistic.has_analytic_se() && !req.paired && params.scheme.analytic_se_applies() {
        params.methods = Methods(COMPARISON_METHODS.to_vec());
    }
    // Unless told otherwise, enumerate where that is cheap; else draw the default number.
    if raw.contains_key("resamples") || r.token.is_some() || r.scheme != SchemeSpec::default() {
        return Ok((
            job::prepare(&asked, Some(params), limits, started, deadline_cap).map_err(fit)?,
            look,
        ));
    }
    let drawn = params.clone();
    let mut exact = params;
    exact.resamples = Resamples::Mode(ResampleMode::Exact);
    let small = Limits {
        max_resamples: limits.max_resamples.min(EXACT_BY_DEFAULT),
        ..limits.clone()
    };
    let job = match job::prepare(&asked, Some(exact), &small, started, deadline_cap) {
        Err(p) if p.errors.iter().any(|e| e.rule == Some(Rule::ExactTooMany)) => {
            job::prepare(&asked, Some(drawn), limits, started, deadline_cap)
        }
        other => other,
    }
    .map_err(fit)?;
    Ok((job, look))
}

/// How a verdict was read.
#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct DecisionJson {
    /// The method the verdict was read from: the first one asked for.
    pub method: crate::engine::interval::Method,
    /// The level of the interval the verdict was read from: the first one asked for, or in a
    /// batch with a multiplicity correction the level the correction gave this comparison.
    #[schema(exclusive_minimum = 0, exclusive_maximum = 1)]
    pub level: f64,
    pub lower: f64,
    pub upper: f64,
    /// The contrasts that count as no change: [−t, t] for a difference, [1/(1 + t), 1 + t] for
    /// a ratio.
    pub tolerance_band: [f64; 2],
    /// The smallest α at which the (1 − α) interval lies wholly outside the band (1: never),
    /// but never below `floor` nor, for B drawn resamples read by their quantiles, 2/(B + 1):
    /// what a family's correction orders the comparisons by.
    #[schema(minimum = 0, maximum = 1)]
    pub p_value: f64,
    /// The smallest α at which the (1 − α) interval lies wholly inside the band (1: never),
    /// with the same least value as `p_value`. An interval inside the band is two one-sided
    /// tests at α/2 each, so this is twice the larger one-sided p-value.
    #[schema(minimum = 0, maximum = 1)]
    pub equivalence_p_value: f64,
    /// The smallest two-sided p-value any distribution-free comparison of these runs can reach;
    /// above 1 − level no verdict but `inconclusive` is given.
    #[schema(minimum = 0, maximum = 1)]
    pub floor: f64,
    /// When inconclusive: about how many runs per side (or pairs) would decide: at least
    /// enough for `floor` to reach 1 − level, and with a tolerance, enough to narrow the
    /// interval to the tolerance at the observed noise.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub runs_needed: Option<u64>,
    /// In a batch with a multiplicity correction: this comparison's interval at the level at
    /// which the intervals of every comparison in the batch hold together (Bonferroni's
    /// 1 − (1 − family_level)/m for m comparisons).
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub simultaneous: Option<SimultaneousJson>,
}

/// An interval that holds together with those of the other comparisons of a family.
#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct SimultaneousJson {
    #[schema(exclusive_minimum = 0, exclusive_maximum = 1)]
    pub level: f64,
    pub lower: f64,
    pub upper: f64,
}

/// The response of `POST /v1/compare` (and the `ok` of a batch's compare job).
#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct CompareResponse {
    /// The statistic on the baseline.
    pub baseline_estimate: f64,
    /// The statistic on the candidate.
    pub candidate_estimate: f64,
    /// Observations of the baseline.
    pub baseline_n: u64,
    /// Observations of the candidate.
    pub candidate_n: u64,
    /// What was compared.
    pub comparison: Comparing,
    /// The contrast of the statistic (candidate against baseline), with every part of an
    /// interval response; its `token` replays this comparison.
    pub contrast: IntervalResponse,
    pub verdict: Verdict,
    /// The verdict in words.
    pub verdict_reason: String,
    pub decision: DecisionJson,
}

/// What a comparison that ran is decided from.
fn evidence(ran: &Ran) -> Evidence<'_> {
    let comparing = ran.comparing.expect("a comparison");
    Evidence {
        reader: &ran.outcome.reader,
        method: ran.params.methods.0[0],
        comparison: comparing.comparison(),
        sizes: ran.comparison_sizes(),
        statistic: ran.params.statistic.name(),
    }
}

/// The p-value of a change of a comparison that ran, from its first method (what a family's
/// correction orders the comparisons by).
pub fn p_value(ran: &Ran) -> f64 {
    verdict::p_value(&evidence(ran))
}

/// The decision of a comparison that ran, read at `reading`.
pub fn decision(ran: &Ran, reading: Reading) -> Decision {
    verdict::decide(&evidence(ran), reading)
}

/// The response JSON of a comparison that ran, its verdict read at `reading`.
pub fn respond(ran: Ran, reading: Reading, started: Instant) -> Result<Value, Problem> {
    job::to_json(&response(ran, reading, started))
}

/// The response of a comparison that ran, its verdict read at `reading`.
pub fn response(ran: Ran, reading: Reading, started: Instant) -> CompareResponse {
    let d = decision(&ran, reading);
    let simultaneous = reading.simultaneous_level.map(|level| {
        let e = ran.outcome.reader.interval(d.method, level);
        SimultaneousJson {
            level,
            lower: e.lower,
            upper: e.upper,
        }
    });
    let sizes = ran.comparison_sizes();
    let comparison = ran.comparing.expect("a comparison");
    let (baseline_estimate, candidate_estimate) = ran.outcome.sample_estimates.expect("two samples");
    let mut contrast = IntervalResponse::from_outcome(ran.outcome, &ran.params, ran.seed, ran.token, job::elapsed_ms(started));
    contrast.n = sizes.baseline + sizes.candidate;
    if d.why == Why::TooFewRuns {
        let w = diagnostics::too_few_runs(sizes, d.floor, d.level);
        contrast.diagnostics.warnings.push(WarningJson {
            code: w.code,
            message: w.message,
        });
    }
    CompareResponse {
        baseline_estimate,
        candidate_estimate,
        baseline_n: sizes.baseline,
        candidate_n: sizes.candidate,
        comparison,
        verdict: d.verdict,
        verdict_reason: d.reason.clone(),
        decision: DecisionJson {
            method: d.method,
            level: d.level,
            lower: d.lower,
            upper: d.upper,
            tolerance_band: [d.band.0, d.band.1],
            p_value: d.p_value,
            equivalence_p_value: d.equivalence_p_value,
            floor: d.floor,
            runs_needed: d.runs_needed,
            simultaneous,
        },
        contrast,
    }
}
