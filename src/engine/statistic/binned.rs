//! Statistics read from a binned histogram (`bins`): only the count of each bin is known, so
//! each is read under a stated assumption about where the observations lie inside a bin.
//!
//! - Quantiles assume the observations of a bin are spread evenly across it, so the cumulative
//!   distribution rises linearly across each bin. With cumulative counts C₀ = 0,
//!   Cᵢ = c₁ + … + cᵢ and N the total count (the overflow included), the p-quantile sits at
//!   position r = p·N: in the first bin i with cᵢ > 0 and Cᵢ ≥ r, at
//!   eᵢ₋₁ + (r − Cᵢ₋₁)/cᵢ · (eᵢ − eᵢ₋₁). For p > 0 that is the smallest value at which the
//!   interpolated distribution function reaches p; for p = 0 it is the lower edge of the first
//!   bin that holds observations. Where r > C_k the quantile lies in the overflow, above the
//!   last edge at an unknown value, and is reported as the last edge (a lower bound). The
//!   position p·N (not (N − 1)p as for raw data) is the grouped-data convention, the rank that
//!   Prometheus's `histogram_quantile` also uses (from memory).
//! - The mean puts every observation at the midpoint of its bin (Sheppard's grouping error
//!   remains); overflow observations have no value, so a mean of bins with overflow is refused.
//! - The exceedance of a threshold t counts the share of each bin above t under the same even
//!   spread: all of a bin whose lower edge is t or more, none of one whose upper edge is t or
//!   less, (eᵢ − t)/(eᵢ − eᵢ₋₁) of the bin that holds t; the overflow always counts as above.
//!
//! Weights over the cells take the place of the counts on a resample, so every formula holds
//! for `iid` (multinomial counts), Bayesian (Dirichlet) weights and the jackknife alike.

use super::{jackknife_means, weighted_mean, weighted_plugin_variance, Scratch};
use crate::engine::data::BinLayout;

/// What reading a statistic from bins assumed that the caller should know; the driver words it
/// as a warning.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Note {
    /// The quantile at `p` lies above the last edge in the data (`in_data`), or a resample can
    /// put it there; it is reported as `last_edge`.
    QuantileInOverflow { p: f64, last_edge: f64, in_data: bool },
    /// The mean counts each observation at its bin's midpoint.
    GroupedMean,
}

/// A resample can put a quantile in the overflow when the overflow's resampled count can reach
/// the (1 − p)·N observations above the quantile: when its mean plus this many binomial
/// standard deviations does (beyond that the chance is below about 3e-5 per resample).
pub const OVERFLOW_REACH_SD: f64 = 4.0;

/// A statistic of a binned histogram, evaluated on weights over its cells.
pub trait BinStatistic: Send + Sync {
    /// See [`super::ColumnStatistic::evaluate`].
    fn evaluate(&self, b: &BinLayout, w: &[f64], scratch: &mut Scratch) -> f64;

    /// See [`super::ColumnStatistic::jackknife_closed`].
    fn jackknife_closed(&self, _b: &BinLayout) -> Option<Vec<f64>> {
        None
    }

    /// True when [`BinStatistic::jackknife_closed`] gives the jackknife (for the work estimate).
    fn closed_jackknife(&self) -> bool {
        false
    }

    /// See [`super::ColumnStatistic::analytic_se`].
    fn analytic_se(&self, _b: &BinLayout, _w: &[f64]) -> Option<f64> {
        None
    }

    /// What reading the statistic from these bins assumed that the caller should know.
    fn notes(&self, _b: &BinLayout) -> Vec<Note> {
        Vec::new()
    }
}

/// The p-quantile of weighted cells (see the module's rule).
pub fn binned_quantile(b: &BinLayout, w: &[f64], p: f64) -> f64 {
    let total: f64 = w.iter().sum();
    let r = p * total;
    let mut before = 0.0;
    let cells = w.iter().zip(&b.lower).zip(&b.upper).take(b.bins());
    for ((wj, lo), hi) in cells {
        let cum = before + wj;
        if *wj > 0.0 && cum >= r {
            return lo + (r - before) / wj * (hi - lo);
        }
        before = cum;
    }
    b.last_edge
}

/// The warning for a quantile at `p` that falls in the overflow of the data, or that a resample
/// can put there.
fn overflow_note(b: &BinLayout, p: f64) -> Option<Note> {
    let overflow = *b.base.last().filter(|_| b.overflow)?;
    let n = b.total;
    let in_data = p * n > n - overflow;
    let reach = overflow + OVERFLOW_REACH_SD * (overflow * (1.0 - overflow / n)).sqrt();
    (in_data || reach > (1.0 - p) * n).then_some(Note::QuantileInOverflow {
        p,
        last_edge: b.last_edge,
        in_data,
    })
}

/// The p-quantile of bins (the median is p = 0.5).
pub struct BinQuantile {
    pub p: f64,
}

impl BinStatistic for BinQuantile {
    fn evaluate(&self, b: &BinLayout, w: &[f64], _: &mut Scratch) -> f64 {
        binned_quantile(b, w, self.p)
    }
    fn notes(&self, b: &BinLayout) -> Vec<Note> {
        overflow_note(b, self.p).into_iter().collect()
    }
}

/// The interquartile range of bins, Q(0.75) − Q(0.25).
pub struct BinIqr;

impl BinStatistic for BinIqr {
    fn evaluate(&self, b: &BinLayout, w: &[f64], _: &mut Scratch) -> f64 {
        binned_quantile(b, w, 0.75) - binned_quantile(b, w, 0.25)
    }
    fn notes(&self, b: &BinLayout) -> Vec<Note> {
        overflow_note(b, 0.75).into_iter().collect()
    }
}

/// A mean over the cells of one value per cell: each bin's midpoint (the mean), or its share
/// above a threshold (the exceedance). Its bootstrap is the mean's, with the mean's closed-form
/// jackknife and analytic standard error.
pub struct CellMean {
    value: Vec<f64>,
    grouped: bool,
}

impl CellMean {
    /// The mean at the bins' midpoints; `None` for bins with an overflow, whose values are unknown.
    pub fn midpoints(b: &BinLayout) -> Option<CellMean> {
        (!b.overflow).then(|| CellMean {
            value: b.lower.iter().zip(&b.upper).map(|(lo, hi)| lo + (hi - lo) / 2.0).collect(),
            grouped: true,
        })
    }

    /// The share of each cell strictly above `t`, the observations spread evenly in each bin.
    pub fn exceedance(b: &BinLayout, t: f64) -> CellMean {
        let share = |j: usize| {
            let (lo, hi) = (b.lower[j], b.upper[j]);
            if j >= b.bins() || t <= lo {
                1.0
            } else if t >= hi {
                0.0
            } else {
                (hi - t) / (hi - lo)
            }
        };
        CellMean {
            value: (0..b.base.len()).map(share).collect(),
            grouped: false,
        }
    }
}

impl BinStatistic for CellMean {
    fn evaluate(&self, _: &BinLayout, w: &[f64], _: &mut Scratch) -> f64 {
        weighted_mean(&self.value, w)
    }
    fn jackknife_closed(&self, b: &BinLayout) -> Option<Vec<f64>> {
        Some(jackknife_means(&self.value, &b.base))
    }
    fn closed_jackknife(&self) -> bool {
        true
    }
    /// σ̂/√n of the cell values, as for the mean of raw data: exact for the bootstrap of a mean.
    fn analytic_se(&self, _: &BinLayout, w: &[f64]) -> Option<f64> {
        let total: f64 = w.iter().sum();
        Some((weighted_plugin_variance(&self.value, w) / total).sqrt())
    }
    fn notes(&self, _: &BinLayout) -> Vec<Note> {
        self.grouped.then_some(Note::GroupedMean).into_iter().collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::data::{Layout, Sample};

    fn layout(edges: &[f64], counts: &[u64], overflow: u64) -> BinLayout {
        match Layout::of(&Sample::bins(edges.to_vec(), counts.to_vec(), overflow).unwrap()) {
            Layout::Bins(b) => b,
            _ => unreachable!("bins lay out as bins"),
        }
    }

    #[test]
    fn quantiles_interpolate_within_a_bin_at_position_p_times_n() {
        // Edges 0, 10, 20, 50, 100; counts 4, 0, 6, 10; overflow 0; N = 20; cumulative 4, 4, 10, 20.
        // By hand: p = 0.1: r = 2, bin (0, 10], 0 + 2/4 · 10 = 5. p = 0.2: r = 4 = C₁, the upper
        // edge of the first bin, 10 (the empty bin holds nothing). p = 0.35: r = 7, bin
        // (20, 50], 20 + (7 − 4)/6 · 30 = 35. p = 0.5: r = 10 = C₃, 50. p = 0.95: r = 19, bin
        // (50, 100], 50 + 9/10 · 50 = 95. p = 0: the lower edge of the first bin, 0. p = 1: 100.
        let b = layout(&[0.0, 10.0, 20.0, 50.0, 100.0], &[4, 0, 6, 10], 0);
        for (p, want) in [
            (0.1, 5.0),
            (0.2, 10.0),
            (0.35, 35.0),
            (0.5, 50.0),
            (0.95, 95.0),
            (0.0, 0.0),
            (1.0, 100.0),
        ] {
            let got = binned_quantile(&b, &b.base, p);
            assert!((got - want).abs() < 1e-12, "p = {p}: {got} vs {want}");
        }
        // Leading empty bins: p = 0 is the lower edge of the first bin that holds observations.
        let b = layout(&[0.0, 1.0, 2.0, 3.0], &[0, 2, 2], 0);
        assert_eq!(binned_quantile(&b, &b.base, 0.0), 1.0);
    }

    #[test]
    fn a_quantile_in_the_overflow_is_the_last_edge_with_a_warning() {
        // N = 20 with 3 above the last edge: C = 17, so p = 0.85 (r = 17) is the last edge
        // itself and p = 0.9 (r = 18) is in the overflow.
        let b = layout(&[0.0, 100.0, 200.0], &[10, 7], 3);
        assert_eq!(binned_quantile(&b, &b.base, 0.85), 200.0);
        assert_eq!(binned_quantile(&b, &b.base, 0.9), 200.0);
        let notes = BinQuantile { p: 0.9 }.notes(&b);
        assert!(matches!(notes[..], [Note::QuantileInOverflow { in_data: true, .. }]));
        // At p = 0.85 the data's quantile is the last edge, and resamples can cross it.
        let notes = BinQuantile { p: 0.85 }.notes(&b);
        assert!(matches!(notes[..], [Note::QuantileInOverflow { in_data: false, .. }]));
        // The median needs 10 observations in the overflow, beyond its reach of 3 + 4·√(3·0.85) = 9.4.
        assert!(BinQuantile { p: 0.5 }.notes(&b).is_empty());
    }

    #[test]
    fn exceedance_is_exact_on_an_edge_and_linear_inside_a_bin() {
        // Counts 10, 30, 50 in (0, 100], (100, 200], (200, 400]; 10 above 400; N = 100.
        let b = layout(&[0.0, 100.0, 200.0, 400.0], &[10, 30, 50], 10);
        let share = |t: f64| CellMean::exceedance(&b, t).evaluate(&b, &b.base, &mut Scratch::default());
        // On the edge 200: 50 + 10 of 100. At 300, half the last bin: 25 + 10. At or past 400:
        // the overflow only. Below the first edge: everything.
        for (t, want) in [(200.0, 0.6), (300.0, 0.35), (400.0, 0.1), (1e6, 0.1), (-5.0, 1.0), (50.0, 0.95)] {
            assert!((share(t) - want).abs() < 1e-12, "t = {t}: {} vs {want}", share(t));
        }
    }

    #[test]
    fn the_mean_uses_midpoints_and_its_closed_jackknife_is_the_direct_one() {
        let b = layout(&[0.0, 2.0, 6.0, 10.0], &[1, 3, 2], 0);
        let m = CellMean::midpoints(&b).unwrap();
        // (1·1 + 3·4 + 2·8)/6 = 29/6.
        assert!((m.evaluate(&b, &b.base, &mut Scratch::default()) - 29.0 / 6.0).abs() < 1e-12);
        let jack = m.jackknife_closed(&b).unwrap();
        for (j, v) in jack.iter().enumerate() {
            let mut w = b.base.clone();
            w[j] -= 1.0;
            assert!((v - m.evaluate(&b, &w, &mut Scratch::default())).abs() < 1e-12);
        }
        assert!(
            CellMean::midpoints(&layout(&[0.0, 1.0], &[2], 1)).is_none(),
            "overflow has no midpoint"
        );
    }
}
