//! Exact shortcuts: replicates of an `iid` resample computed straight from the replicate's
//! stream, without writing out the resample's weights.
//!
//! Each gives the same bootstrap distribution as drawing the resample and evaluating the
//! statistic on it; only the cost class changes:
//!
//! - the mean of raw rows: the rows are drawn chunk by chunk ([`draw::rows`]) and their values
//!   summed as they come (centred once per job), so a replicate reads n values and writes
//!   nothing;
//! - a share (proportion, exceedance): the resampled number of successes is one Binomial(n, p̂)
//!   draw, O(1) per replicate;
//! - order statistics (median, quantile, interquartile range): the number of draws that land on
//!   the lower half of the sorted units is binomial, so the unit holding a given rank of the
//!   resample is found by splitting the sorted units in halves, O(log n) binomial draws per
//!   replicate, for raw rows and for aggregated data (whose units carry counts) alike.
//!
//! The tests in `tests/statistics/shortcuts.rs` hold each against the plain path.

use std::sync::Arc;

use rand_chacha::ChaCha8Rng;

use super::interpolate;
use crate::engine::data::ColumnLayout;
use crate::engine::draw;

/// At most this many draws left within a range of units, they are drawn one by one and sorted
/// instead of split further: cheaper than the binomial draws that splitting would take.
const DRAW_BELOW: u64 = 24;

/// What one binomial draw costs, in row-draws: about 40 on the machines measured (`bandsaw
/// bench`: a median replicate of 10⁴ rows, 14 splits of two ranks, against the mean's
/// row-draw rate), rounded up so that the work limit errs on the side of caution.
const BINOMIAL_COST: f64 = 50.0;

/// How a statistic's replicate is computed without weights.
#[derive(Debug, Clone)]
pub enum Shortcut {
    /// The mean of raw rows, summed from a copy of the values centred once per job on a typical
    /// value (`centred[j]` = x_j − centre), so that the sum of squares for the standard error
    /// does not cancel; the same numbers as centring each value as it is drawn.
    Mean { centre: f64, centred: Arc<[f64]> },
    /// A share of successes (`successes` of `total`): one binomial draw.
    Share { successes: f64, total: f64 },
    /// Hyndman–Fan definition 7 quantiles at `p`, read from the resample's order statistics; a
    /// second probability makes it their difference (`p[1]`'s quantile minus `p[0]`'s).
    Order(Order),
}

/// The sorted units of a sample and what the order-statistic path needs of them.
#[derive(Debug, Clone)]
pub struct Order {
    p: Vec<f64>,
    /// Cumulative counts (`cum[j]` = the count of the units before unit j, n + 1 entries), for
    /// aggregated data; `None` for raw rows, where every unit counts 1.
    cum: Option<Vec<f64>>,
}

impl Shortcut {
    /// The mean of raw rows, centred on the middle value of the sorted rows (a median). Not on
    /// the mean: one value far out (1e20 among values near 70) drags the mean to ~4.5e16, and a
    /// resample without that value then sums thousands of terms near −4.5e16 whose roundings
    /// (an ulp of 16 384 at 1e20) leave its mean off by hundreds. Centred on a median, such a
    /// resample's terms are small and each rounds relative to itself, and one with the far
    /// value is dominated by it. A median also keeps Σ|x − c| (the sum's rounding bound) least,
    /// and lies within one SD of the mean (|x̄ − m| ≤ E|X − m| ≤ E|X − x̄| ≤ σ, elementary), so
    /// the sum of squares for the standard error loses at most a bit to the subtraction of the
    /// squared mean.
    pub fn mean(c: &ColumnLayout) -> Option<Shortcut> {
        c.raw.then(|| {
            let centre = c.x.get(c.x.len() / 2).copied().unwrap_or(0.0);
            Shortcut::Mean {
                centre,
                centred: c.x.iter().map(|x| x - centre).collect(),
            }
        })
    }

    /// The share of units whose indicator is 1.
    pub fn share(indicator: &[f64], c: &ColumnLayout) -> Shortcut {
        Shortcut::Share {
            successes: indicator.iter().zip(&c.base).map(|(i, b)| i * b).sum(),
            total: c.total,
        }
    }

    /// Quantiles at `p` (one, or two for their difference).
    pub fn order(c: &ColumnLayout, p: &[f64]) -> Shortcut {
        let cum = (!c.raw).then(|| {
            let mut acc = 0.0;
            std::iter::once(0.0)
                .chain(c.base.iter().map(|b| {
                    acc += b;
                    acc
                }))
                .collect()
        });
        Shortcut::Order(Order { p: p.to_vec(), cum })
    }

    /// The work of one replicate over `units` units, in row-draws (see [`crate::engine::cost`]).
    pub fn cost(&self, units: usize) -> f64 {
        match self {
            Shortcut::Mean { .. } => units as f64,
            Shortcut::Share { .. } => BINOMIAL_COST,
            // Two ranks per probability, each split down about log₂(units) levels.
            Shortcut::Order(o) => 2.0 * o.p.len() as f64 * BINOMIAL_COST * ((units as f64).log2().ceil() + 1.0),
        }
    }

    /// True when the shortcut gives a standard error too (studentized intervals).
    pub fn gives_se(&self) -> bool {
        !matches!(self, Shortcut::Order(_))
    }

    /// One replicate's value, and its analytic standard error when `se` asks (NaN otherwise).
    pub fn replicate(&self, c: &ColumnLayout, rng: &mut ChaCha8Rng, se: bool) -> (f64, f64) {
        match self {
            Shortcut::Mean { centre, centred } => {
                let n = c.x.len() as f64;
                if !se {
                    return (centre + draw::resampled_sum(rng, centred) / n, f64::NAN);
                }
                let (s, q) = draw::resampled_sums(rng, centred);
                let d = s / n;
                // The plug-in variance of the resample, σ̂²/n as the mean's analytic SE.
                let var = (q / n - d * d).max(0.0);
                (centre + d, (var / n).sqrt())
            }
            Shortcut::Share { successes, total } => {
                let k = draw::binomial(rng, *total as u64, successes / total) as f64;
                let p = k / total;
                (p, if se { (p * (1.0 - p) / total).sqrt() } else { f64::NAN })
            }
            Shortcut::Order(o) => (o.replicate(&c.x, c.total as u64, rng), f64::NAN),
        }
    }
}

impl Order {
    /// The quantile (or the difference of two) on one resample of `size` draws.
    fn replicate(&self, x: &[f64], size: u64, rng: &mut ChaCha8Rng) -> f64 {
        // Each probability needs order statistics t and t + 1 (0-based) of the resample.
        let mut ranks = [0u64; 4];
        let mut fracs = [0.0; 2];
        for (k, p) in self.p.iter().enumerate() {
            let h = (size - 1) as f64 * p;
            let t = h.floor();
            fracs[k] = h - t;
            ranks[2 * k] = t as u64;
            ranks[2 * k + 1] = (t as u64 + 1).min(size - 1);
        }
        let wanted = &mut ranks[..2 * self.p.len()];
        // Sorted for the descent; remember where each went by sorting (rank, slot) pairs.
        let mut order: [(u64, usize); 4] = [(0, 0); 4];
        for (slot, r) in wanted.iter().enumerate() {
            order[slot] = (*r, slot);
        }
        let order = &mut order[..wanted.len()];
        order.sort_unstable();
        let sorted: [u64; 4] = std::array::from_fn(|k| order.get(k).map_or(0, |o| o.0));
        let mut units = [0usize; 4];
        self.select(rng, 0, x.len(), size, &sorted[..order.len()], &mut units);
        let mut value = [0.0; 4];
        for (k, (_, slot)) in order.iter().enumerate() {
            value[*slot] = x[units[k]];
        }
        let q = |k: usize| interpolate(value[2 * k], value[2 * k + 1], fracs[k]);
        match self.p.len() {
            1 => q(0),
            _ => q(1) - q(0),
        }
    }

    /// The mass of units `lo..hi`.
    fn mass(&self, lo: usize, hi: usize) -> f64 {
        match &self.cum {
            Some(cum) => cum[hi] - cum[lo],
            None => (hi - lo) as f64,
        }
    }

    /// The units holding ranks `ranks` (ascending, each below `m`) of `m` draws that landed on
    /// units `lo..hi`, written to `out` in the same order.
    fn select(&self, rng: &mut ChaCha8Rng, lo: usize, hi: usize, m: u64, ranks: &[u64], out: &mut [usize]) {
        if ranks.is_empty() {
            return;
        }
        if hi - lo == 1 {
            out[..ranks.len()].fill(lo);
            return;
        }
        if m <= DRAW_BELOW {
            self.by_drawing(rng, lo, hi, m, ranks, out);
            return;
        }
        let mid = lo + (hi - lo) / 2;
        let left = draw::binomial(rng, m, self.mass(lo, mid) / self.mass(lo, hi));
        let split = ranks.partition_point(|r| *r < left);
        let mut shifted = [0u64; 4];
        for (s, r) in shifted.iter_mut().zip(&ranks[split..]) {
            *s = r - left;
        }
        let (out_left, out_right) = out.split_at_mut(split);
        self.select(rng, lo, mid, left, &ranks[..split], out_left);
        self.select(rng, mid, hi, m - left, &shifted[..ranks.len() - split], out_right);
    }

    /// The same by drawing the `m` draws' units one by one (by mass) and sorting them. Raw rows
    /// are drawn as [`draw::rows`] draws them, so that a sample of at most [`DRAW_BELOW`] rows
    /// has exactly the plain path's resamples.
    fn by_drawing(&self, rng: &mut ChaCha8Rng, lo: usize, hi: usize, m: u64, ranks: &[u64], out: &mut [usize]) {
        let mut drawn = [0usize; DRAW_BELOW as usize];
        let mut k = 0;
        match &self.cum {
            None if hi - lo <= draw::CHUNK_ROWS => {
                let _ = draw::within(rng, lo, hi - lo, m, |row, weight, _| {
                    if weight > 0.0 {
                        drawn[k] = row;
                        k += 1;
                    }
                });
            }
            None => drawn[..m as usize].fill_with(|| lo + draw::index_below(rng, hi - lo)),
            Some(cum) => drawn[..m as usize].fill_with(|| unit_at(cum, lo, hi, rng)),
        }
        let drawn = &mut drawn[..m as usize];
        drawn.sort_unstable();
        for (o, r) in out.iter_mut().zip(ranks) {
            *o = drawn[*r as usize];
        }
    }
}

/// A unit of `lo..hi` drawn with probability proportional to its count: a uniform whole
/// position in the units' cumulative counts (exact: counts are whole and below 2^53), then the
/// unit whose range holds it.
fn unit_at(cum: &[f64], lo: usize, hi: usize, rng: &mut ChaCha8Rng) -> usize {
    let span = cum[hi] - cum[lo];
    let pos = if span <= f64::from(u32::MAX) {
        f64::from(draw::below(rng, span as u32))
    } else {
        draw::below_wide(rng, span as u64) as f64
    };
    let target = cum[lo] + pos;
    // The unit j with cum[j] ≤ target < cum[j + 1].
    lo + cum[lo + 1..=hi].partition_point(|c| *c <= target)
}
