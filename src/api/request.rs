//! The request of `POST /v1/interval` (and of a batch's interval jobs): its fields, defined
//! once as a typed struct that is both the parser and the OpenAPI schema; the cross-field rules
//! and the server's limits; and the engine job it becomes.

use serde::{Deserialize, Serialize};
use serde_json::{Map, Value};

use super::data::{Data, DataForm};
use super::decode::Errors;
use super::fields::{
    default_levels, default_methods, default_resamples, default_statistic, no_extras, Includes, Levels, Methods, Picture, ResampleMode,
    Resamples, Statistic,
};
use super::rules::Rule;
use crate::config::Limits;
use crate::engine::data::{Place, Sample};
use crate::engine::interval::Method;
use crate::engine::job::{Contrast, InnerResamples, Job, Samples};
use crate::engine::plan::{self, McTarget};
use crate::engine::plan::{OnTimeLimit, Stop};
use crate::engine::rng::Seed;
use crate::engine::scheme::SchemeSpec;
use crate::engine::statistic::StatisticSpec;
use crate::engine::verdict::{Better, Comparison, Tolerance};

crate::whole_number! {
    /// Wall-clock budget in milliseconds, 1 or more, capped by the server's
    /// `limits.max_time_limit_ms`. Default `limits.default_time_limit_ms`.
    pub struct TimeLimitMs where 1 <= x <= crate::engine::wire::MAX_EXACT_INTEGER, "a time limit in milliseconds, a whole number from 1 to 2^53 − 1";
}

crate::decode_with_serde!(TimeLimitMs);

fn fail() -> OnTimeLimit {
    OnTimeLimit::Fail
}

crate::wire_object! {
    /// How to resample and what to report: the fields that an interval request and a comparison
    /// share.
    pub struct Resampling {
        default
        statistic: Statistic = default_statistic,
        default
        resamples: Resamples = default_resamples,
        optional
        /// The share of the standard error below which `"resamples": "auto"` stops, strictly
        /// between 0 and 1; default 0.02. Only with `"resamples": "auto"`.
        target_mc_error: McTarget,
        optional
        /// The seed of the random streams. When absent the server draws one; the response
        /// echoes it and its token carries it.
        seed: Seed,
        default
        levels: Levels = default_levels,
        default
        methods: Methods = default_methods,
        default
        scheme: SchemeSpec = SchemeSpec::default,
        optional
        time_limit_ms: TimeLimitMs,
        default
        on_time_limit: OnTimeLimit = fail,
        default
        include: Includes = no_extras,
        default
        inner_resamples: InnerResamples = InnerResamples::default,
        optional
        /// A token from an earlier response, instead of the parameters it stands in for
        /// (`statistic`, `resamples`, `target_mc_error`, `seed`, `levels`, `methods`, `scheme`,
        /// `include`, `inner_resamples`: sending any of them beside a token is a 422). With the
        /// same `data` the response is identical to the earlier one; with other data the answer
        /// is a 409 problem of type `data-mismatch`.
        token: String,
    }
}

crate::wire_object! {
    /// The body of `POST /v1/interval`. Only `data` is required. Unknown fields are refused
    /// (422), so that a typo (`level` for `levels`) never silently changes a result.
    pub struct IntervalRequest {
        required
        data: Data,
        flatten
        resampling: Resampling,
        flatten
        picture: Picture,
    }
}

/// The fields of a request that a token does not stand in for: those that govern only this
/// run, and the token itself (and the [`Picture`] fields, presentation only).
pub const TOKEN_KEEPS: &[&str] = &["time_limit_ms", "on_time_limit", "token"];

/// Refuse every parameter a token stands in for that a request with a token also gives: its
/// `fields` but its samples, [`TOKEN_KEEPS`] and the [`Picture`] fields.
pub fn check_token(raw: &Map<String, Value>, fields: &[&str], samples: &[&str], errs: &mut Errors) {
    let presentation = Picture::fields();
    let replaced = fields
        .iter()
        .filter(|f| !samples.contains(f) && !TOKEN_KEEPS.contains(f) && !presentation.contains(f));
    for k in replaced.filter(|k| raw.contains_key(**k)) {
        errs.refuse(
            format!("/{k}"),
            Rule::TokenReplacesParameters,
            "a token stands in for this parameter; send either the token or the parameters, not both",
        );
    }
}

/// The parameters of a computation: what a token records.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    pub statistic: StatisticSpec,
    pub resamples: Resamples,
    pub target_mc_error: Option<McTarget>,
    pub levels: Levels,
    pub methods: Methods,
    pub scheme: SchemeSpec,
    pub include: Includes,
    pub inner_resamples: InnerResamples,
}

impl Resampling {
    /// The parameters given in the request's fields.
    pub fn params(&self) -> Params {
        Params {
            statistic: self.statistic.0.clone(),
            resamples: self.resamples,
            target_mc_error: self.target_mc_error,
            levels: self.levels.clone(),
            methods: self.methods.clone(),
            scheme: self.scheme.clone(),
            include: self.include.clone(),
            inner_resamples: self.inner_resamples,
        }
    }

    /// The rules between fields: a token with the parameters it stands in for (every field of
    /// the request `fields` but its `samples`), and the parameters against the server's limits.
    pub fn check(&self, raw: &Map<String, Value>, fields: &[&str], samples: &[&str], limits: &Limits, errs: &mut Errors) {
        if self.token.is_some() {
            check_token(raw, fields, samples, errs);
        } else {
            for (pointer, rule, message) in check_params(&self.params(), limits) {
                errs.refuse(pointer, rule, message);
            }
        }
    }
}

impl IntervalRequest {
    /// Every rule between the request's fields and the server's limits.
    pub fn check(&self, raw: &Map<String, Value>, limits: &Limits, errs: &mut Errors) {
        self.resampling.check(raw, &Self::fields(), &["data"], limits, errs);
        check_rows(&self.data.0, "/data", limits, errs);
    }
}

/// The most observations aggregated counts may add up to, per row the server accepts.
const OBSERVATIONS_PER_ROW: u64 = 1_000_000;

/// True for a sample given as counts (aggregated or binned), whose observations outnumber its rows.
fn counted(sample: &Sample) -> bool {
    matches!(DataForm::of(sample), DataForm::Aggregated | DataForm::Bins)
}

/// A sample against the server's row limit.
pub fn check_rows(sample: &Sample, at: &str, limits: &Limits, errs: &mut Errors) {
    if sample.rows() as u64 > limits.max_rows {
        errs.refuse(
            at,
            Rule::RowLimit,
            format!(
                "has {} rows, above this server's limit of {}; aggregate repeated values as {{\"values\": [...], \"counts\": [...]}} or sample the rows",
                sample.rows(),
                limits.max_rows
            ),
        );
    } else if counted(sample) && sample.n() > limits.max_rows.saturating_mul(OBSERVATIONS_PER_ROW) {
        errs.refuse(
            super::data::pointer(DataForm::of(sample), &Place::Counts, at, ""),
            Rule::RowLimit,
            "the counts add up to more than this server can resample",
        );
    }
}

/// The rules between parameters and the server's limits, as (pointer, rule, message).
pub fn check_params(p: &Params, limits: &Limits) -> Vec<(String, Rule, String)> {
    let mut out = Vec::new();
    let auto = p.resamples == Resamples::Mode(ResampleMode::Auto);
    if p.target_mc_error.is_some() && !auto {
        out.push((
            "/target_mc_error".into(),
            Rule::TargetNeedsAuto,
            "only applies with \"resamples\": \"auto\"".into(),
        ));
    }
    if let Resamples::Count(b) = p.resamples {
        if b.get() > limits.max_resamples {
            out.push((
                "/resamples".into(),
                Rule::ResampleLimit,
                format!("must be at most this server's limit of {}; got {}", limits.max_resamples, b.get()),
            ));
        }
    }
    if p.scheme.block().is_some() {
        if let Some(i) = p.methods.0.iter().position(|m| *m == Method::Studentized) {
            out.push((
                format!("/methods/{i}"),
                Rule::StudentizedNotByBlocks,
                format!(
                    "the studentized interval needs a standard error of each resample drawn by the {} scheme too, and a resample of blocks has no time order left to draw blocks from; use percentile, bca, basic or normal",
                    p.scheme.name()
                ),
            ));
        }
    }
    if p.resamples == Resamples::Mode(ResampleMode::Exact) && p.scheme != SchemeSpec::default() {
        out.push((
            "/resamples".into(),
            Rule::ExactNeedsIid,
            format!(
                "\"exact\" enumerates iid resamples; the {} scheme cannot be enumerated (give a number of resamples)",
                p.scheme.name()
            ),
        ));
    }
    out
}

/// How a job replays a token: the resamples it drew and why it stopped.
#[derive(Debug, Clone, Copy)]
pub struct Replay {
    pub drawn: u64,
    pub stop: Stop,
}

/// The engine job of a computation with these parameters on these samples.
pub fn job(p: &Params, samples: Samples, seed: u64, on_time_limit: OnTimeLimit, limits: &Limits, replay: Option<Replay>) -> Job {
    let resamples = match (p.resamples, replay) {
        (Resamples::Mode(ResampleMode::Exact), _) => plan::Resamples::Exact,
        (_, Some(r)) => plan::Resamples::Fixed(r.drawn),
        (Resamples::Count(b), None) => plan::Resamples::Fixed(b.get()),
        (Resamples::Mode(ResampleMode::Auto), None) => plan::Resamples::Auto {
            target: p.target_mc_error.map_or(plan::DEFAULT_TARGET_MC_ERROR, |t| t.get()),
        },
    };
    Job {
        samples,
        statistic: p.statistic.clone(),
        resamples,
        seed,
        levels: p.levels.0.clone(),
        methods: p.methods.0.clone(),
        include: p.include.0.clone(),
        inner_resamples: p.inner_resamples,
        on_time_limit,
        max_resamples: limits.max_resamples,
        max_work: limits.work_limit,
        recorded_stop: replay
            .filter(|_| p.resamples != Resamples::Mode(ResampleMode::Exact))
            .map(|r| r.stop),
        shortcuts: true,
    }
}

/// What a comparison asks beside its samples: what a token of a comparison also records.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, utoipa::ToSchema)]
#[serde(deny_unknown_fields)]
pub struct Comparing {
    pub contrast: Contrast,
    pub paired: bool,
    pub better: Better,
    pub tolerance: Tolerance,
}

impl Comparing {
    pub fn comparison(&self) -> Comparison {
        Comparison {
            contrast: self.contrast,
            better: self.better,
            tolerance: self.tolerance.get(),
        }
    }
}
