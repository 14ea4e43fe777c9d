//! Order statistics: quantile (and median), interquartile range, median absolute deviation.
//!
//! Quantiles follow Hyndman, R. J. & Fan, Y. (1996), "Sample quantiles in statistical
//! packages", The American Statistician 50(4), definition 7: with n observations sorted,
//! h = (n − 1)p, Q(p) = x₍⌊h⌋₎ + (h − ⌊h⌋)(x₍⌊h⌋+1₎ − x₍⌊h⌋₎) (0-based order statistics). It is
//! numpy's default `method="linear"`. On a weighted sample the k-th order statistic is the unit
//! whose cumulative weight range [C_{j−1}, C_j) holds k, which is exact for integer
//! (resample-count) weights and extends smoothly to real (Bayesian) weights.

use serde::{Deserialize, Serialize};
use utoipa::ToSchema;

use super::binned::{BinIqr, BinQuantile, BinStatistic};
use super::{interpolate, ColumnSpec, ColumnStatistic, Scratch};
use crate::engine::data::{BinLayout, ColumnLayout, DataError};
use crate::engine::statistic::shortcut::Shortcut;

/// A tail holding fewer observations than this makes a quantile a statistic of the extremes,
/// whose bootstrap distribution cannot see past the most extreme observations (common practice).
pub const EXTREME_TAIL: f64 = 5.0;

crate::bounded_number! {
    /// A probability, from 0 to 1.
    pub struct Probability where 0.0 <= x <= 1.0, "a probability from 0 to 1";
}

/// Median (Hyndman–Fan definition 7 at p = 0.5).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct MedianSpec {}

impl ColumnSpec for MedianSpec {
    fn build(&self, _: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        Ok(Box::new(Quantile { p: 0.5 }))
    }
    const ON_BINS: bool = true;
    fn build_bins(&self, _: &BinLayout) -> Option<Result<Box<dyn BinStatistic>, Vec<DataError>>> {
        Some(Ok(Box::new(BinQuantile { p: 0.5 })))
    }
}

/// Sample quantile, Hyndman–Fan definition 7 (numpy's linear).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct QuantileSpec {
    /// Probability in [0, 1].
    pub p: Probability,
}

impl ColumnSpec for QuantileSpec {
    fn build(&self, _: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        Ok(Box::new(Quantile { p: self.p.get() }))
    }
    const ON_BINS: bool = true;
    fn build_bins(&self, _: &BinLayout) -> Option<Result<Box<dyn BinStatistic>, Vec<DataError>>> {
        Some(Ok(Box::new(BinQuantile { p: self.p.get() })))
    }
    /// A quantile whose smaller tail holds fewer than [`EXTREME_TAIL`] observations.
    fn reads_extremes(&self, n: f64) -> bool {
        let p = self.p.get();
        n * p.min(1.0 - p) < EXTREME_TAIL
    }
}

/// Interquartile range Q(0.75) − Q(0.25).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct IqrSpec {}

impl ColumnSpec for IqrSpec {
    fn build(&self, _: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        Ok(Box::new(Iqr))
    }
    const ON_BINS: bool = true;
    fn build_bins(&self, _: &BinLayout) -> Option<Result<Box<dyn BinStatistic>, Vec<DataError>>> {
        Some(Ok(Box::new(BinIqr)))
    }
    fn relative_cost(&self) -> f64 {
        2.0
    }
}

/// The factor that makes the MAD a consistent estimator of σ for normal data: 1/Φ⁻¹(3/4),
/// rounded as is customary to 1.4826 (Hampel, F. R. (1974), JASA 69(346); common practice).
pub const MAD_NORMAL_SCALE: f64 = 1.4826;

/// Median absolute deviation from the median.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct MadSpec {
    /// `true` multiplies by 1.4826, which makes the MAD estimate σ for normal data. Default `false`
    /// (the raw median absolute deviation).
    #[serde(default)]
    #[schema(default = false)]
    pub normalized: bool,
}

impl ColumnSpec for MadSpec {
    fn build(&self, _: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        Ok(Box::new(Mad {
            scale: if self.normalized { MAD_NORMAL_SCALE } else { 1.0 },
        }))
    }
    fn relative_cost(&self) -> f64 {
        3.0
    }
    fn closed_jackknife(&self) -> bool {
        false
    }
}

/// The values at 0-based order positions `t` and `t + 1` of a weighted, sorted sample.
pub(crate) fn order_pair(x: &[f64], w: &[f64], t: f64) -> (f64, f64) {
    let mut cum = 0.0;
    let mut first = None;
    let mut last = f64::NAN;
    for (xi, wi) in x.iter().zip(w) {
        if *wi == 0.0 {
            continue;
        }
        cum += wi;
        last = *xi;
        if first.is_none() && t < cum {
            first = Some(*xi);
        }
        if let Some(a) = first {
            if t + 1.0 < cum {
                return (a, *xi);
            }
        }
    }
    (first.unwrap_or(last), last)
}

/// Definition 7 quantile of a weighted, sorted sample with total weight `total`.
pub(crate) fn weighted_quantile(x: &[f64], w: &[f64], total: f64, p: f64) -> f64 {
    let h = (total - 1.0) * p;
    let t = h.floor();
    let (a, b) = order_pair(x, w, t);
    interpolate(a, b, h - t)
}

/// A definition 7 quantile of raw rows at their base weights (each 1), read straight from the
/// sorted values in O(1): what [`weighted_quantile`] finds by a pass over every weight.
fn raw_quantile(x: &[f64], p: f64) -> f64 {
    // No rows (refused before a statistic is built): undefined, as the weighted pass has it.
    let Some(last) = x.len().checked_sub(1) else {
        return f64::NAN;
    };
    let h = last as f64 * p;
    let t = h.floor();
    let i = t as usize;
    interpolate(x[i], x[(i + 1).min(last)], h - t)
}

/// Leave-one-out definition 7 quantiles in O(units): deleting one copy of unit j from the
/// sorted sample leaves order statistic t equal to the original x₍t₎ when t < C_j − 1 and to
/// x₍t+1₎ otherwise (C_j the cumulative count through unit j), so only three original order
/// statistics are needed.
pub(crate) fn jackknife_quantiles(c: &ColumnLayout, p: f64) -> Vec<f64> {
    let n = c.total;
    let h = (n - 2.0) * p;
    let t = h.floor();
    let frac = h - t;
    let (o0, o1) = order_pair(&c.x, &c.base, t);
    let (_, o2) = order_pair(&c.x, &c.base, t + 1.0);
    let mut cum = 0.0;
    c.base
        .iter()
        .map(|wj| {
            cum += wj;
            let a = if t < cum - 1.0 { o0 } else { o1 };
            let b = if t + 1.0 < cum - 1.0 { o1 } else { o2 };
            interpolate(a, b, frac)
        })
        .collect()
}

/// The p-quantile (the median is p = 0.5).
pub struct Quantile {
    pub p: f64,
}

impl ColumnStatistic for Quantile {
    fn evaluate(&self, c: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        let total: f64 = w.iter().sum();
        weighted_quantile(&c.x, w, total, self.p)
    }
    fn estimate(&self, c: &ColumnLayout, scratch: &mut Scratch) -> f64 {
        match c.raw {
            true => raw_quantile(&c.x, self.p),
            false => self.evaluate(c, &c.base, scratch),
        }
    }
    fn jackknife_closed(&self, c: &ColumnLayout) -> Option<Vec<f64>> {
        Some(jackknife_quantiles(c, self.p))
    }
    fn shortcut(&self, c: &ColumnLayout) -> Option<Shortcut> {
        Some(Shortcut::order(c, &[self.p]))
    }
}

/// The interquartile range Q(0.75) − Q(0.25).
pub struct Iqr;

impl ColumnStatistic for Iqr {
    fn evaluate(&self, c: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        let total: f64 = w.iter().sum();
        weighted_quantile(&c.x, w, total, 0.75) - weighted_quantile(&c.x, w, total, 0.25)
    }
    fn estimate(&self, c: &ColumnLayout, scratch: &mut Scratch) -> f64 {
        match c.raw {
            true => raw_quantile(&c.x, 0.75) - raw_quantile(&c.x, 0.25),
            false => self.evaluate(c, &c.base, scratch),
        }
    }
    fn jackknife_closed(&self, c: &ColumnLayout) -> Option<Vec<f64>> {
        let hi = jackknife_quantiles(c, 0.75);
        let lo = jackknife_quantiles(c, 0.25);
        Some(hi.iter().zip(&lo).map(|(h, l)| h - l).collect())
    }
    fn shortcut(&self, c: &ColumnLayout) -> Option<Shortcut> {
        Some(Shortcut::order(c, &[0.25, 0.75]))
    }
}

/// Median absolute deviation from the median, times `scale` (1, or 1.4826 for the normal
/// consistency factor).
pub struct Mad {
    pub scale: f64,
}

impl ColumnStatistic for Mad {
    /// The deviations |x − m| of a sorted sample form two sorted runs, walking outward from the
    /// median; merging them finds the median deviation in one pass without sorting.
    fn evaluate(&self, c: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        let x = &c.x;
        let total: f64 = w.iter().sum();
        let med = weighted_quantile(x, w, total, 0.5);
        let h = (total - 1.0) * 0.5;
        let t = h.floor();
        let split = x.partition_point(|v| *v <= med);
        let mut left = split as isize - 1;
        let mut right = split;
        let mut cum = 0.0;
        let mut first: Option<f64> = None;
        let mut last = 0.0;
        loop {
            while left >= 0 && w[left as usize] == 0.0 {
                left -= 1;
            }
            while right < x.len() && w[right] == 0.0 {
                right += 1;
            }
            let dl = if left >= 0 { Some(med - x[left as usize]) } else { None };
            let dr = if right < x.len() { Some(x[right] - med) } else { None };
            let (dev, weight) = match (dl, dr) {
                (Some(a), Some(b)) if a <= b => {
                    let wt = w[left as usize];
                    left -= 1;
                    (a, wt)
                }
                (Some(a), None) => {
                    let wt = w[left as usize];
                    left -= 1;
                    (a, wt)
                }
                (_, Some(b)) => {
                    let wt = w[right];
                    right += 1;
                    (b, wt)
                }
                (None, None) => break,
            };
            cum += weight;
            last = dev;
            if first.is_none() && t < cum {
                first = Some(dev);
            }
            if let Some(a) = first {
                if t + 1.0 < cum {
                    return self.scale * interpolate(a, dev, h - t);
                }
            }
        }
        self.scale * interpolate(first.unwrap_or(last), last, h - t)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn prep(x: &[f64]) -> ColumnLayout {
        ColumnLayout::rows(x)
    }

    #[test]
    fn definition_7_matches_numpy_linear() {
        // docs/references.md: numpy 2.4 quantile(method="linear") of [2,5,7,7,3,9,4,6]
        // gives 0.10 → 2.7, 0.25 → 3.75, 0.50 → 5.5, 0.90 → 7.6.
        let d = prep(&[2., 5., 7., 7., 3., 9., 4., 6.]);
        let w = d.base.clone();
        for (p, want) in [(0.10, 2.7), (0.25, 3.75), (0.50, 5.5), (0.90, 7.6)] {
            let got = Quantile { p }.evaluate(&d, &w, &mut Scratch::default());
            assert!((got - want).abs() < 1e-12, "p = {p}: {got} vs {want}");
        }
    }

    #[test]
    fn aggregated_equals_expanded() {
        let agg = ColumnLayout::aggregated(&[5., 1., 3.], &[2, 3, 4]);
        let raw = prep(&[5., 5., 1., 1., 1., 3., 3., 3., 3.]);
        for p in [0.0, 0.1, 0.33, 0.5, 0.77, 1.0] {
            let a = Quantile { p }.evaluate(&agg, &agg.base.clone(), &mut Scratch::default());
            let b = Quantile { p }.evaluate(&raw, &raw.base.clone(), &mut Scratch::default());
            assert_eq!(a, b, "p = {p}");
        }
        let a = Mad { scale: 1.0 }.evaluate(&agg, &agg.base.clone(), &mut Scratch::default());
        let b = Mad { scale: 1.0 }.evaluate(&raw, &raw.base.clone(), &mut Scratch::default());
        assert_eq!(a, b);
    }

    #[test]
    fn mad_matches_brute_force() {
        // Brute force: sort |x − median| and take the definition 7 median.
        let x = [1.0, 4.0, 4.5, 7.0, 10.0, 2.0, 2.5, 30.0, 8.0];
        let d = prep(&x);
        let w = d.base.clone();
        let med = Quantile { p: 0.5 }.evaluate(&d, &w, &mut Scratch::default());
        let mut dev: Vec<f64> = x.iter().map(|v| (v - med).abs()).collect();
        dev.sort_by(f64::total_cmp);
        let dd = prep(&dev);
        let want = Quantile { p: 0.5 }.evaluate(&dd, &dd.base.clone(), &mut Scratch::default());
        assert_eq!(Mad { scale: 1.0 }.evaluate(&d, &w, &mut Scratch::default()), want);
    }

    /// The estimate read straight from the sorted rows is the weighted pass's, bit for bit.
    #[test]
    fn raw_estimates_equal_the_weighted_pass() {
        for n in [2usize, 3, 7, 10, 101] {
            // Ties and a spread of magnitudes.
            let x: Vec<f64> = (0..n).map(|i| ((i * 37) % 11) as f64 * 0.3 + (i % 3) as f64 * 1e3).collect();
            let d = prep(&x);
            let s = &mut Scratch::default();
            for p in [0.0, 0.1, 0.25, 0.5, 0.77, 0.9, 1.0] {
                let q = Quantile { p };
                assert_eq!(q.estimate(&d, s).to_bits(), q.evaluate(&d, &d.base, s).to_bits(), "n {n} p {p}");
            }
            assert_eq!(Iqr.estimate(&d, s).to_bits(), Iqr.evaluate(&d, &d.base, s).to_bits(), "n {n}");
        }
        assert!(Quantile { p: 0.5 }.estimate(&prep(&[]), &mut Scratch::default()).is_nan());
    }

    #[test]
    fn closed_jackknife_matches_direct() {
        let d = ColumnLayout::aggregated(&[1., 2., 3., 7., 9.], &[1, 3, 1, 2, 4]);
        let c = &d;
        for p in [0.1, 0.25, 0.5, 0.9] {
            let jack = jackknife_quantiles(c, p);
            for j in 0..c.x.len() {
                let mut w = c.base.clone();
                w[j] -= 1.0;
                let direct = Quantile { p }.evaluate(&d, &w, &mut Scratch::default());
                assert!((jack[j] - direct).abs() < 1e-12, "p {p} unit {j}: {} vs {direct}", jack[j]);
            }
        }
    }
}
