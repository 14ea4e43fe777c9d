//! Location statistics: mean, trimmed mean, geometric mean, proportion.

use serde::{Deserialize, Serialize};
use utoipa::ToSchema;

use super::binned::{BinStatistic, CellMean};
use super::{jackknife_means, weighted_mean, weighted_plugin_variance, ColumnSpec, ColumnStatistic, Scratch};
use crate::engine::data::{BinLayout, ColumnLayout, DataError};
use crate::engine::statistic::shortcut::Shortcut;

/// Arithmetic mean.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct MeanSpec {}

impl ColumnSpec for MeanSpec {
    const ANALYTIC_SE: bool = true;
    fn build(&self, _: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        Ok(Box::new(Mean))
    }
    const ON_BINS: bool = true;
    /// At the bins' midpoints; refused with an overflow, whose values are unknown.
    fn build_bins(&self, b: &BinLayout) -> Option<Result<Box<dyn BinStatistic>, Vec<DataError>>> {
        let overflow = || {
            vec![DataError::OverflowMean {
                overflow: b.base.last().map_or(0, |c| *c as u64),
            }]
        };
        Some(
            CellMean::midpoints(b)
                .map(|m| Box::new(m) as Box<dyn BinStatistic>)
                .ok_or_else(overflow),
        )
    }
}

crate::bounded_number! {
    /// The share of observations cut from each end, from 0 up to (not including) 0.5.
    pub struct TrimShare where 0.0 <= x < 0.5, "a share from 0 up to (not including) 0.5";
}

/// The default trim: 10 % from each end (common practice).
pub const DEFAULT_TRIM: f64 = 0.1;

fn default_trim() -> TrimShare {
    TrimShare::new(DEFAULT_TRIM).expect("in range")
}

/// Mean after cutting ⌊trim·n⌋ observations from each end.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct TrimmedMeanSpec {
    /// Share cut from each end, in [0, 0.5). Default 0.1.
    #[serde(default = "default_trim")]
    #[schema(default = default_trim)]
    pub trim: TrimShare,
}

impl ColumnSpec for TrimmedMeanSpec {
    fn build(&self, _: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        Ok(Box::new(TrimmedMean { trim: self.trim.get() }))
    }
    fn relative_cost(&self) -> f64 {
        1.5
    }
}

/// Exp of the mean log; positive data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct GeometricMeanSpec {}

impl ColumnSpec for GeometricMeanSpec {
    const ANALYTIC_SE: bool = true;
    fn build(&self, c: &ColumnLayout, values: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        let problems: Vec<DataError> = values
            .iter()
            .enumerate()
            .filter(|(_, v)| **v <= 0.0)
            .map(|(index, value)| DataError::NotPositive { index, value: *value })
            .collect();
        if !problems.is_empty() {
            return Err(problems);
        }
        Ok(Box::new(GeometricMean {
            ln_x: c.x.iter().map(|v| v.ln()).collect(),
        }))
    }
}

/// Share of values equal to 1 in data of 0s and 1s.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct ProportionSpec {}

impl ColumnSpec for ProportionSpec {
    const ANALYTIC_SE: bool = true;
    fn build(&self, _: &ColumnLayout, values: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        let problems: Vec<DataError> = values
            .iter()
            .enumerate()
            .filter(|(_, v)| **v != 0.0 && **v != 1.0)
            .map(|(index, value)| DataError::NotBinary { index, value: *value })
            .collect();
        if !problems.is_empty() {
            return Err(problems);
        }
        Ok(Box::new(Proportion))
    }
}

crate::bounded_number! {
    /// A threshold in the data's units: any number of at most 1e300 in magnitude.
    pub struct Threshold where -1e300 <= x <= 1e300, "a number of at most 1e300 in magnitude";
}

/// The share of values above a threshold.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct ExceedanceSpec {
    /// Values strictly above it count (the share of requests slower than an objective of 300
    /// ms: `"threshold": 300`). Required.
    #[schema(value_type = f64)]
    pub threshold: Threshold,
}

impl ColumnSpec for ExceedanceSpec {
    const ANALYTIC_SE: bool = true;
    /// The indicator of each unit (the layout's units, which weights index: not the rows as
    /// sent, whose order differs).
    fn build(&self, c: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        let t = self.threshold.get();
        Ok(Box::new(Exceedance {
            above: c.x.iter().map(|v| if *v > t { 1.0 } else { 0.0 }).collect(),
        }))
    }
    const ON_BINS: bool = true;
    /// Above the last edge, the overflow's values are unknown, so its share there is too.
    fn build_bins(&self, b: &BinLayout) -> Option<Result<Box<dyn BinStatistic>, Vec<DataError>>> {
        let (t, last_edge) = (self.threshold.get(), b.upper[b.bins() - 1]);
        let overflow = b.base.get(b.bins()).copied().unwrap_or(0.0) as u64;
        if b.overflow && t > last_edge {
            return Some(Err(vec![DataError::OverflowExceedance {
                overflow,
                threshold: t,
                last_edge,
            }]));
        }
        Some(Ok(Box::new(CellMean::exceedance(b, t))))
    }
}

/// The share of values above a threshold: the mean of each unit's indicator, so its resampled
/// count is binomial under `iid` and its standard error √(p̂(1 − p̂)/n).
pub struct Exceedance {
    /// 1 for a unit above the threshold, else 0.
    above: Vec<f64>,
}

impl ColumnStatistic for Exceedance {
    fn evaluate(&self, _: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        weighted_mean(&self.above, w)
    }
    fn jackknife_closed(&self, c: &ColumnLayout) -> Option<Vec<f64>> {
        Some(jackknife_means(&self.above, &c.base))
    }
    fn analytic_se(&self, _: &ColumnLayout, w: &[f64]) -> Option<f64> {
        binomial_se(&self.above, w)
    }
    fn shortcut(&self, c: &ColumnLayout) -> Option<Shortcut> {
        Some(Shortcut::share(&self.above, c))
    }
}

/// √(p̂(1 − p̂)/n) for the weighted share p̂ of indicators.
fn binomial_se(indicator: &[f64], w: &[f64]) -> Option<f64> {
    let p = weighted_mean(indicator, w);
    let total: f64 = w.iter().sum();
    Some((p * (1.0 - p) / total).sqrt())
}

/// The arithmetic mean.
pub struct Mean;

impl ColumnStatistic for Mean {
    fn evaluate(&self, c: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        weighted_mean(&c.x, w)
    }
    fn jackknife_closed(&self, c: &ColumnLayout) -> Option<Vec<f64>> {
        Some(jackknife_means(&c.x, &c.base))
    }
    /// σ̂/√n with the plug-in σ̂ (Efron & Tibshirani 1993, eq. 5.4 and ch. 12).
    fn analytic_se(&self, c: &ColumnLayout, w: &[f64]) -> Option<f64> {
        let total: f64 = w.iter().sum();
        Some((weighted_plugin_variance(&c.x, w) / total).sqrt())
    }
    fn shortcut(&self, c: &ColumnLayout) -> Option<Shortcut> {
        Shortcut::mean(c)
    }
}

/// The share of values equal to 1 in data of 0s and 1s.
pub struct Proportion;

impl ColumnStatistic for Proportion {
    fn evaluate(&self, c: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        weighted_mean(&c.x, w)
    }
    fn jackknife_closed(&self, c: &ColumnLayout) -> Option<Vec<f64>> {
        Some(jackknife_means(&c.x, &c.base))
    }
    /// √(p̂(1 − p̂)/n), the binomial standard error.
    fn analytic_se(&self, c: &ColumnLayout, w: &[f64]) -> Option<f64> {
        binomial_se(&c.x, w)
    }
    fn shortcut(&self, c: &ColumnLayout) -> Option<Shortcut> {
        Some(Shortcut::share(&c.x, c))
    }
}

/// exp of the mean of the logarithms; needs positive data.
pub struct GeometricMean {
    ln_x: Vec<f64>,
}

impl ColumnStatistic for GeometricMean {
    fn evaluate(&self, _: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        weighted_mean(&self.ln_x, w).exp()
    }
    fn jackknife_closed(&self, c: &ColumnLayout) -> Option<Vec<f64>> {
        Some(jackknife_means(&self.ln_x, &c.base).into_iter().map(f64::exp).collect())
    }
    /// Delta method: g · σ̂(ln x)/√n.
    fn analytic_se(&self, _: &ColumnLayout, w: &[f64]) -> Option<f64> {
        let total: f64 = w.iter().sum();
        let g = weighted_mean(&self.ln_x, w).exp();
        Some(g * (weighted_plugin_variance(&self.ln_x, w) / total).sqrt())
    }
}

/// The mean after dropping ⌊trim·n⌋ observations at each end (the convention of
/// `scipy.stats.trim_mean`). With real (Bayesian) weights the same cut is applied to the
/// cumulative weight, so units straddling a cut count in part.
pub struct TrimmedMean {
    pub trim: f64,
}

impl ColumnStatistic for TrimmedMean {
    fn evaluate(&self, c: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        let total: f64 = w.iter().sum();
        let g = (self.trim * total).floor();
        let (lo, hi) = (g, total - g);
        let (mut acc, mut kept, mut start) = (0.0, 0.0, 0.0);
        for (xi, wi) in c.x.iter().zip(w) {
            if *wi == 0.0 {
                continue;
            }
            let end = start + wi;
            let overlap = end.min(hi) - start.max(lo);
            if overlap > 0.0 {
                acc += overlap * xi;
                kept += overlap;
            }
            start = end;
            if start >= hi {
                break;
            }
        }
        acc / kept
    }

    /// Leave-one-out trimmed means in O(n log n). Deleting one copy of unit j (whose copies end
    /// at cumulative count C_j) maps order position t of the reduced sample to t when
    /// t < C_j − 1 and to t + 1 otherwise (see `quantile::jackknife_quantiles`), so the kept
    /// positions [g′, n − 1 − g′) of the reduced sample are original positions
    /// [g′, min(C_j − 1, n − 1 − g′)) ∪ [max(g′, C_j − 1) + 1, n − g′), summed with prefix sums
    /// of the order statistics.
    fn jackknife_closed(&self, c: &ColumnLayout) -> Option<Vec<f64>> {
        let n1 = c.total - 1.0;
        let g = (self.trim * n1).floor();
        let (lo, hi) = (g, n1 - g);
        let mut cum = Vec::with_capacity(c.x.len());
        let mut pre = Vec::with_capacity(c.x.len());
        let (mut cc, mut ss) = (0.0, 0.0);
        for (x, b) in c.x.iter().zip(&c.base) {
            cc += b;
            ss += b * x;
            cum.push(cc);
            pre.push(ss);
        }
        // Sum of the first p order statistics (p a whole number in 0..=n).
        let prefix = |p: f64| -> f64 {
            if p <= 0.0 {
                return 0.0;
            }
            let k = cum.partition_point(|cj| *cj < p);
            let (before_c, before_s) = if k == 0 { (0.0, 0.0) } else { (cum[k - 1], pre[k - 1]) };
            before_s + (p - before_c) * c.x[k]
        };
        let span = |a: f64, b: f64| if b > a { prefix(b) - prefix(a) } else { 0.0 };
        Some(
            cum.iter()
                .map(|cj| {
                    let r = cj - 1.0;
                    (span(lo, r.min(hi)) + span(r.max(lo) + 1.0, hi + 1.0)) / (hi - lo)
                })
                .collect(),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn prep(x: &[f64]) -> ColumnLayout {
        ColumnLayout::rows(x)
    }

    #[test]
    fn trimmed_mean_matches_scipy_convention() {
        // scipy.stats.trim_mean(range(10), 0.1) == 4.5 (cuts int(0.1*10) = 1 from each end);
        // trim_mean([1,2,3,4,100], 0.2) == 3.0 (cuts 1 from each end). scipy 1.17.
        let d = prep(&[0., 1., 2., 3., 4., 5., 6., 7., 8., 9.]);
        let w = d.base.clone();
        assert_eq!(TrimmedMean { trim: 0.1 }.evaluate(&d, &w, &mut Scratch::default()), 4.5);
        let d = prep(&[1., 2., 3., 4., 100.]);
        let w = d.base.clone();
        assert_eq!(TrimmedMean { trim: 0.2 }.evaluate(&d, &w, &mut Scratch::default()), 3.0);
    }

    #[test]
    fn closed_jackknife_of_trimmed_mean_matches_direct() {
        let samples = [
            ColumnLayout::aggregated(&[1., 2., 3., 7., 9., 12.], &[1, 3, 1, 2, 4, 2]),
            prep(&[5.0, 1.0, 9.0, 2.0, 2.0, 8.0, 3.0, 7.0, 4.0, 6.0, 10.0]),
        ];
        for c in &samples {
            let d = c;
            for trim in [0.0, 0.1, 0.2, 0.25, 0.4] {
                let t = TrimmedMean { trim };
                let jack = t.jackknife_closed(d).unwrap();
                for j in 0..c.x.len() {
                    let mut w = c.base.clone();
                    w[j] -= 1.0;
                    let direct = t.evaluate(d, &w, &mut Scratch::default());
                    assert!((jack[j] - direct).abs() < 1e-12, "trim {trim} unit {j}: {} vs {direct}", jack[j]);
                }
            }
        }
    }

    #[test]
    fn closed_jackknife_of_mean_matches_direct() {
        let x = [3.0, 1.0, 4.0, 1.0, 5.0, 9.0];
        let d = prep(&x);
        let jack = Mean.jackknife_closed(&d).unwrap();
        let c = &d;
        for (j, v) in jack.iter().enumerate() {
            let mut w = c.base.clone();
            w[j] -= 1.0;
            let direct = Mean.evaluate(&d, &w, &mut Scratch::default());
            assert!((v - direct).abs() < 1e-12, "{v} vs {direct}");
        }
    }
}
