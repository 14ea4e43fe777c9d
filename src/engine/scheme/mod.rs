//! Resampling schemes: how one resample's weights over the units are drawn.
//!
//! Every scheme implements [`Resampler`]: given a replicate's own random stream it fills the
//! resample's weights, and given a resample it draws a resample from within it (the nested
//! bootstrap of the studentized interval, by the same scheme). Schemes:
//!
//! - [`iid`]: n draws with replacement (integer weights), Efron, B. (1979), "Bootstrap
//!   methods: another look at the jackknife", Annals of Statistics 7(1);
//! - [`bayesian`]: Dirichlet(1, …, 1) weights, Rubin, D. B. (1981), "The Bayesian bootstrap",
//!   Annals of Statistics 9(1);
//! - [`exact`]: every distinct `iid` resample with its multinomial probability, Fisher, N. I.
//!   & Hall, P. (1991), J. Statist. Plann. Inference 27.

pub mod bayesian;
pub mod exact;
pub mod iid;

use rand_chacha::ChaCha8Rng;
use serde::{Deserialize, Serialize};
use utoipa::ToSchema;

use crate::engine::statistic::Units;

/// Draws resamples of one sample.
pub trait Resampler: Send + Sync {
    /// Fill `w` (one weight per unit; it arrives holding the previous resample's weights) with
    /// replicate `index`, drawing only from `rng`, that replicate's own stream. Returns the
    /// replicate's probability for an enumeration, `None` for a sampled replicate.
    fn draw(&self, index: u64, rng: &mut ChaCha8Rng, w: &mut [f64]) -> Option<f64>;

    /// Prepare `within` to draw resamples from within the resample `outer` (for the nested
    /// bootstrap), once per outer resample.
    fn prepare_within(&self, outer: &[f64], within: &mut Within);

    /// Fill `w` with a resample drawn from within the resample `outer` by the same scheme.
    fn draw_within(&self, outer: &[f64], within: &Within, rng: &mut ChaCha8Rng, w: &mut [f64]);

    /// The number of distinct resamples, for an enumeration.
    fn enumerated(&self) -> Option<u64> {
        None
    }

    /// True when the scheme treats rows as independent draws, so that serial correlation in the
    /// data makes it understate the standard error.
    fn independent_rows(&self) -> bool {
        true
    }
}

/// Per-worker scratch space of the nested bootstrap: an outer resample's rows written out.
#[derive(Debug, Default)]
pub struct Within {
    /// The units of the outer resample's rows, when they are written out.
    pub rows: Vec<u32>,
    /// True when `rows` holds the outer resample's rows.
    pub expanded: bool,
    /// The outer resample's total weight.
    pub total: f64,
}

/// How a resample is drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, ToSchema)]
#[serde(tag = "kind", deny_unknown_fields)]
pub enum SchemeSpec {
    /// n rows drawn with replacement (aggregated data: a multinomial over the distinct values).
    #[serde(rename = "iid")]
    Iid {},
    /// Dirichlet(1, …, 1) weights on the rows (Rubin 1981), scaled to add up to n.
    #[serde(rename = "bayesian")]
    Bayesian {},
}

impl Default for SchemeSpec {
    /// `iid`: the scheme of a request that names none.
    fn default() -> Self {
        SchemeSpec::Iid {}
    }
}

/// Why a scheme cannot draw the resamples asked for.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SchemeError {
    #[error("the {scheme} scheme has continuous weights, so its resamples cannot be enumerated")]
    NotEnumerable { scheme: &'static str },
    #[error("enumerating would visit {} distinct resamples, above the limit of {limit}", count.map_or("more than 1.8e19".to_string(), |c| c.to_string()))]
    TooManyToEnumerate { count: Option<u64>, limit: u64 },
}

impl SchemeSpec {
    pub fn name(&self) -> &'static str {
        match self {
            SchemeSpec::Iid {} => "iid",
            SchemeSpec::Bayesian {} => "bayesian",
        }
    }

    /// The resampler that draws this scheme's resamples of a sample with these units.
    pub fn resampler(&self, units: Units<'_>) -> Box<dyn Resampler> {
        match self {
            SchemeSpec::Iid {} => Box::new(iid::Iid::new(units)),
            SchemeSpec::Bayesian {} => Box::new(bayesian::Bayesian::new(units)),
        }
    }

    /// The resampler that enumerates every distinct resample, when there are at most `limit`.
    pub fn enumerator(&self, units: Units<'_>, limit: u64) -> Result<Box<dyn Resampler>, SchemeError> {
        match self {
            SchemeSpec::Iid {} => Ok(Box::new(exact::Exact::new(units, limit)?)),
            SchemeSpec::Bayesian {} => Err(SchemeError::NotEnumerable { scheme: self.name() }),
        }
    }
}
