//! Location statistics: mean, trimmed mean, geometric mean, proportion.

use super::{Scratch, Statistic};
use crate::engine::data::{Prepared, SortedColumn};

fn one(data: &Prepared) -> &SortedColumn {
    match data {
        Prepared::One(c) => c,
        Prepared::Rows(_) => unreachable!("location statistics are built for one column only"),
    }
}

/// Σ w x / Σ w over a one-column sample.
pub(crate) fn weighted_mean_one(data: &Prepared, w: &[f64]) -> f64 {
    let c = one(data);
    weighted_mean(&c.x, w)
}

pub(crate) fn weighted_mean(x: &[f64], w: &[f64]) -> f64 {
    let (mut sw, mut sx) = (0.0, 0.0);
    for (xi, wi) in x.iter().zip(w) {
        sw += wi;
        sx += wi * xi;
    }
    sx / sw
}

/// Plug-in (divide by Σw) variance of a weighted column, two-pass.
pub(crate) fn weighted_plugin_variance(x: &[f64], w: &[f64]) -> f64 {
    let m = weighted_mean(x, w);
    let (mut sw, mut ss) = (0.0, 0.0);
    for (xi, wi) in x.iter().zip(w) {
        let d = xi - m;
        sw += wi;
        ss += wi * d * d;
    }
    ss / sw
}

/// Leave-one-out means in O(n): removing one observation of unit j gives (S − x_j)/(N − 1).
/// Computed on centred values so that large offsets do not cancel.
pub(crate) fn jackknife_means(x: &[f64], base: &[f64]) -> Vec<f64> {
    let n: f64 = base.iter().sum();
    let m = weighted_mean(x, base);
    let s: f64 = x.iter().zip(base).map(|(xi, wi)| wi * (xi - m)).sum();
    x.iter().map(|xi| m + (s - (xi - m)) / (n - 1.0)).collect()
}

/// The arithmetic mean.
pub struct Mean;

impl Statistic for Mean {
    fn evaluate(&self, data: &Prepared, w: &[f64], _: &mut Scratch) -> f64 {
        weighted_mean_one(data, w)
    }
    fn jackknife_closed(&self, data: &Prepared) -> Option<Vec<f64>> {
        let c = one(data);
        Some(jackknife_means(&c.x, &c.base))
    }
    /// σ̂/√n with the plug-in σ̂ (Efron & Tibshirani 1993, eq. 5.4 and ch. 12).
    fn analytic_se(&self, data: &Prepared, w: &[f64]) -> Option<f64> {
        let c = one(data);
        let total: f64 = w.iter().sum();
        Some((weighted_plugin_variance(&c.x, w) / total).sqrt())
    }
    fn has_analytic_se(&self) -> bool {
        true
    }
}

/// The share of values equal to 1 in data of 0s and 1s.
pub struct Proportion;

impl Statistic for Proportion {
    fn evaluate(&self, data: &Prepared, w: &[f64], _: &mut Scratch) -> f64 {
        weighted_mean_one(data, w)
    }
    fn jackknife_closed(&self, data: &Prepared) -> Option<Vec<f64>> {
        let c = one(data);
        Some(jackknife_means(&c.x, &c.base))
    }
    /// √(p̂(1 − p̂)/n), the binomial standard error.
    fn analytic_se(&self, data: &Prepared, w: &[f64]) -> Option<f64> {
        let p = weighted_mean_one(data, w);
        let total: f64 = w.iter().sum();
        Some((p * (1.0 - p) / total).sqrt())
    }
    fn has_analytic_se(&self) -> bool {
        true
    }
}

/// exp of the mean of the logarithms; needs positive data.
pub struct GeometricMean {
    ln_x: Vec<f64>,
}

impl GeometricMean {
    pub fn new(data: &Prepared) -> Self {
        GeometricMean {
            ln_x: one(data).x.iter().map(|v| v.ln()).collect(),
        }
    }
}

impl Statistic for GeometricMean {
    fn evaluate(&self, _: &Prepared, w: &[f64], _: &mut Scratch) -> f64 {
        weighted_mean(&self.ln_x, w).exp()
    }
    fn jackknife_closed(&self, data: &Prepared) -> Option<Vec<f64>> {
        let c = one(data);
        Some(jackknife_means(&self.ln_x, &c.base).into_iter().map(f64::exp).collect())
    }
    /// Delta method: g · σ̂(ln x)/√n.
    fn analytic_se(&self, _: &Prepared, w: &[f64]) -> Option<f64> {
        let total: f64 = w.iter().sum();
        let g = weighted_mean(&self.ln_x, w).exp();
        Some(g * (weighted_plugin_variance(&self.ln_x, w) / total).sqrt())
    }
    fn has_analytic_se(&self) -> bool {
        true
    }
}

/// The mean after dropping ⌊trim·n⌋ observations at each end (the convention of
/// `scipy.stats.trim_mean`). With real (Bayesian) weights the same cut is applied to the
/// cumulative weight, so units straddling a cut count in part.
pub struct TrimmedMean {
    pub trim: f64,
}

impl Statistic for TrimmedMean {
    fn evaluate(&self, data: &Prepared, w: &[f64], _: &mut Scratch) -> f64 {
        let c = one(data);
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
    fn jackknife_closed(&self, data: &Prepared) -> Option<Vec<f64>> {
        let c = one(data);
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
    use crate::engine::data::Sample;

    fn prep(x: &[f64]) -> Prepared {
        Prepared::from_sample(&Sample::Column(x.to_vec()))
    }

    #[test]
    fn trimmed_mean_matches_scipy_convention() {
        // scipy.stats.trim_mean(range(10), 0.1) == 4.5 (cuts int(0.1*10) = 1 from each end);
        // trim_mean([1,2,3,4,100], 0.2) == 3.0 (cuts 1 from each end). scipy 1.17.
        let d = prep(&[0., 1., 2., 3., 4., 5., 6., 7., 8., 9.]);
        let w = d.base_weights();
        assert_eq!(TrimmedMean { trim: 0.1 }.evaluate(&d, &w, &mut Scratch::default()), 4.5);
        let d = prep(&[1., 2., 3., 4., 100.]);
        let w = d.base_weights();
        assert_eq!(TrimmedMean { trim: 0.2 }.evaluate(&d, &w, &mut Scratch::default()), 3.0);
    }

    #[test]
    fn closed_jackknife_of_trimmed_mean_matches_direct() {
        let samples = [
            Prepared::from_sample(&Sample::Aggregated {
                values: vec![1., 2., 3., 7., 9., 12.],
                counts: vec![1, 3, 1, 2, 4, 2],
            }),
            prep(&[5.0, 1.0, 9.0, 2.0, 2.0, 8.0, 3.0, 7.0, 4.0, 6.0, 10.0]),
        ];
        for d in &samples {
            let Prepared::One(c) = d else { unreachable!() };
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
        let Prepared::One(c) = &d else { unreachable!() };
        for (j, v) in jack.iter().enumerate() {
            let mut w = c.base.clone();
            w[j] -= 1.0;
            let direct = Mean.evaluate(&d, &w, &mut Scratch::default());
            assert!((v - direct).abs() < 1e-12, "{v} vs {direct}");
        }
    }
}
