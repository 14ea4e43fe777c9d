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
//!   & Hall, P. (1991), J. Statist. Plann. Inference 27;
//! - [`block`]: moving, circular and stationary blocks of a series in time order;
//! - [`grouped`]: rows within strata, or whole clusters, by a label beside each row.

pub mod bayesian;
pub mod block;
pub mod exact;
pub mod grouped;
pub mod iid;

use rand_chacha::ChaCha8Rng;
use serde::{Deserialize, Serialize};
use utoipa::ToSchema;

use crate::engine::statistic::Units;
pub use block::{BlockKind, BlockLength};
pub use grouped::Label;

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

    /// For a block scheme: the units of the rows in time order, and the length of the blocks
    /// a jackknife leaves out.
    fn blocks(&self) -> Option<(&[u32], usize)> {
        None
    }

    /// For the cluster scheme: the units of each cluster, which a jackknife leaves out in turn.
    fn groups(&self) -> Option<&[Vec<u32>]> {
        None
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
    /// For a labelled scheme: where each stratum's (or the clusters') part of `rows` ends.
    pub bounds: Vec<usize>,
}

/// How a resample is drawn.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(tag = "kind", deny_unknown_fields)]
pub enum SchemeSpec {
    /// n rows drawn with replacement (aggregated data: a multinomial over the distinct values).
    #[serde(rename = "iid")]
    Iid {},
    /// Dirichlet(1, …, 1) weights on the rows (Rubin 1981), scaled to add up to n.
    #[serde(rename = "bayesian")]
    Bayesian {},
    /// Blocks of `block_length` consecutive rows (rows in time order as sent), starting
    /// anywhere a whole block fits (Künsch 1989).
    #[serde(rename = "moving_block")]
    MovingBlock {
        #[serde(default)]
        #[schema(value_type = block::BlockLength)]
        block_length: BlockLength,
    },
    /// Blocks of `block_length` consecutive rows of the series wrapped into a circle (Politis &
    /// Romano 1992).
    #[serde(rename = "circular_block")]
    CircularBlock {
        #[serde(default)]
        #[schema(value_type = block::BlockLength)]
        block_length: BlockLength,
    },
    /// Blocks of geometric length with mean `mean_block_length`, the series wrapped into a
    /// circle (Politis & Romano 1994).
    #[serde(rename = "stationary_block")]
    StationaryBlock {
        #[serde(default)]
        #[schema(value_type = block::BlockLength)]
        mean_block_length: BlockLength,
    },
    /// Rows resampled within each stratum, each stratum keeping its size; `strata` gives each
    /// row's stratum (a string or an integer), one per row in order.
    #[serde(rename = "stratified")]
    Stratified { strata: Vec<Label> },
    /// Whole clusters drawn with replacement; `clusters` gives each row's cluster (a string or
    /// an integer), one per row in order.
    #[serde(rename = "cluster")]
    Cluster { clusters: Vec<Label> },
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
    #[error("the {scheme} scheme's resamples cannot be enumerated")]
    NotEnumerable { scheme: &'static str },
    #[error("enumerating would visit {} distinct resamples, above the limit of {limit}", count.map_or("more than 1.8e19".to_string(), |c| c.to_string()))]
    TooManyToEnumerate { count: Option<u64>, limit: u64 },
    #[error(
        "the {scheme} scheme reads each row in the order observed, so it needs rows (an array or columns), not aggregated or binned data"
    )]
    NeedsRows { scheme: &'static str },
    #[error("a block of {length} rows is longer than half the series of {rows} rows, so a resample would hold fewer than two blocks")]
    BlockTooLong { length: f64, rows: usize },
    #[error("a block length of {length} rows is not a whole number")]
    BlockNotWhole { length: f64 },
    #[error("the {scheme} scheme {problem}")]
    Labels {
        scheme: &'static str,
        /// The field holding the labels.
        field: &'static str,
        problem: String,
    },
}

impl SchemeSpec {
    pub fn name(&self) -> &'static str {
        match self {
            SchemeSpec::Iid {} => "iid",
            SchemeSpec::Bayesian {} => "bayesian",
            SchemeSpec::MovingBlock { .. } => "moving_block",
            SchemeSpec::CircularBlock { .. } => "circular_block",
            SchemeSpec::StationaryBlock { .. } => "stationary_block",
            SchemeSpec::Stratified { .. } => "stratified",
            SchemeSpec::Cluster { .. } => "cluster",
        }
    }

    /// The field holding a labelled scheme's labels.
    pub fn labels_field(&self) -> Option<&'static str> {
        match self {
            SchemeSpec::Stratified { .. } => Some("strata"),
            SchemeSpec::Cluster { .. } => Some("clusters"),
            _ => None,
        }
    }

    /// True for `iid` and `bayesian`, which draw each row on its own: only under them do the
    /// statistics' analytic standard errors (which assume it) apply.
    pub fn analytic_se_applies(&self) -> bool {
        matches!(self, SchemeSpec::Iid {} | SchemeSpec::Bayesian {})
    }

    /// True for the schemes that read each row where it was sent (blocks in time order, labels
    /// beside rows): only they need [`SchemeSpec::resampler`]'s `order`.
    pub fn reads_rows(&self) -> bool {
        !matches!(self, SchemeSpec::Iid {} | SchemeSpec::Bayesian {})
    }

    /// A block scheme's kind and length.
    pub fn block(&self) -> Option<(BlockKind, BlockLength)> {
        match *self {
            SchemeSpec::MovingBlock { block_length } => Some((BlockKind::Moving, block_length)),
            SchemeSpec::CircularBlock { block_length } => Some((BlockKind::Circular, block_length)),
            SchemeSpec::StationaryBlock { mean_block_length } => Some((BlockKind::Stationary, mean_block_length)),
            _ => None,
        }
    }

    /// The scheme with an `"auto"` block length chosen from `series` (each a column in time
    /// order): the longest any of them calls for, so that every series keeps its dependence.
    pub fn resolved(&self, series: &[&[f64]]) -> SchemeSpec {
        let Some((kind, BlockLength::Auto)) = self.block() else {
            return self.clone();
        };
        // The longest any series calls for, but within the cap of the shortest, so that every
        // sample of a comparison can be resampled by it.
        let wanted = series.iter().map(|x| block::automatic_length(x, kind)).fold(1.0, f64::max);
        let cap = series.iter().map(|x| block::length_cap(x.len())).fold(f64::INFINITY, f64::min);
        let length = match kind {
            BlockKind::Stationary => wanted.min(cap),
            BlockKind::Moving | BlockKind::Circular => wanted.min(cap.floor()).max(1.0),
        };
        let l = BlockLength::Rows(length);
        match kind {
            BlockKind::Moving => SchemeSpec::MovingBlock { block_length: l },
            BlockKind::Circular => SchemeSpec::CircularBlock { block_length: l },
            BlockKind::Stationary => SchemeSpec::StationaryBlock { mean_block_length: l },
        }
    }

    /// The resampler that draws this scheme's resamples of a sample with these units; `order`
    /// is the unit of each row in time order (none for aggregated data, which block schemes
    /// refuse).
    pub fn resampler(&self, units: Units<'_>, order: Option<Vec<u32>>) -> Result<Box<dyn Resampler>, SchemeError> {
        let needs_rows = || SchemeError::NeedsRows { scheme: self.name() };
        match self {
            SchemeSpec::Iid {} => return Ok(Box::new(iid::Iid::new(units))),
            SchemeSpec::Bayesian {} => return Ok(Box::new(bayesian::Bayesian::new(units))),
            SchemeSpec::Stratified { strata } => return Ok(Box::new(grouped::Stratified::new(strata, &order.ok_or_else(needs_rows)?)?)),
            SchemeSpec::Cluster { clusters } => return Ok(Box::new(grouped::Cluster::new(clusters, &order.ok_or_else(needs_rows)?)?)),
            _ => {}
        }
        let (kind, length) = self.block().expect("a block scheme");
        let order = order.ok_or_else(needs_rows)?;
        // An unresolved "auto" is resolved by the caller; 1 row stands for it defensively.
        let length = length.rows().unwrap_or(1.0);
        let rows = order.len();
        if kind != BlockKind::Stationary && length.fract() != 0.0 {
            return Err(SchemeError::BlockNotWhole { length });
        }
        // At most half the series: a resample strings together two blocks or more.
        if length > (rows as f64 / 2.0).max(1.0) {
            return Err(SchemeError::BlockTooLong { length, rows });
        }
        Ok(Box::new(block::Blocks::new(kind, length, order)))
    }

    /// The resampler that enumerates every distinct resample, when there are at most `limit`.
    pub fn enumerator(&self, units: Units<'_>, limit: u64) -> Result<Box<dyn Resampler>, SchemeError> {
        match self {
            SchemeSpec::Iid {} => Ok(Box::new(exact::Exact::new(units, limit)?)),
            _ => Err(SchemeError::NotEnumerable { scheme: self.name() }),
        }
    }
}
