//! Spread statistics: variance and standard deviation (plug-in, or divided by n − 1),
//! coefficient of variation.

use serde::{Deserialize, Serialize};
use utoipa::ToSchema;

use super::{weighted_mean, weighted_plugin_variance, ColumnSpec, ColumnStatistic, Scratch};
use crate::engine::data::{ColumnLayout, DataError};

crate::wire_enum! {
    /// What the sum of squared deviations is divided by: `n` (the plug-in form, the bootstrap's
    /// own) or `n-1` (the unbiased variance).
    pub enum Divisor default N {
        /// The number of observations: the plug-in variance.
        N = "n",
        /// One less than the number of observations: the unbiased variance.
        NMinusOne = "n-1",
    }
}

impl Divisor {
    /// How much less than n the divisor is.
    fn offset(self) -> f64 {
        match self {
            Divisor::N => 0.0,
            Divisor::NMinusOne => 1.0,
        }
    }
}

fn build_variance(divisor: Divisor, root: bool, c: &ColumnLayout) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
    if c.total <= divisor.offset() {
        return Err(vec![DataError::TooFewForDivisor]);
    }
    Ok(Box::new(Variance {
        ddof: divisor.offset(),
        root,
    }))
}

/// Variance: the plug-in form (divided by n) unless `divisor` is `n-1`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct VarianceSpec {
    /// `n` (plug-in) or `n-1` (unbiased). Default `n`.
    #[serde(default)]
    #[schema(inline, default = "n")]
    pub divisor: Divisor,
}

impl ColumnSpec for VarianceSpec {
    const ANALYTIC_SE: bool = true;
    fn build(&self, c: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        build_variance(self.divisor, false, c)
    }
}

/// Standard deviation: the plug-in form (divided by n) unless `divisor` is `n-1`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct StdDevSpec {
    /// `n` (plug-in) or `n-1` (unbiased variance, then the root). Default `n`.
    #[serde(default)]
    #[schema(inline, default = "n")]
    pub divisor: Divisor,
}

impl ColumnSpec for StdDevSpec {
    const ANALYTIC_SE: bool = true;
    fn build(&self, c: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        build_variance(self.divisor, true, c)
    }
}

/// Plug-in standard deviation over the mean.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct CoefficientOfVariationSpec {}

impl ColumnSpec for CoefficientOfVariationSpec {
    fn build(&self, c: &ColumnLayout, _: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>> {
        if c.total > 0.0 && weighted_mean(&c.x, &c.base) == 0.0 {
            return Err(vec![DataError::ZeroMean]);
        }
        Ok(Box::new(CoefficientOfVariation))
    }
}

/// Leave-one-out (mean, sum of squared deviations, size) for every unit, in O(units), from
/// centred sums: removing one copy of d_j = x_j − x̄ leaves S₁ − d_j and S₂ − d_j².
fn jackknife_moments(c: &ColumnLayout) -> Vec<(f64, f64, f64)> {
    let n = c.total;
    let m = weighted_mean(&c.x, &c.base);
    let s1: f64 = c.x.iter().zip(&c.base).map(|(x, b)| b * (x - m)).sum();
    let s2: f64 = c.x.iter().zip(&c.base).map(|(x, b)| b * (x - m) * (x - m)).sum();
    let n1 = n - 1.0;
    c.x.iter()
        .map(|x| {
            let d = x - m;
            let t1 = s1 - d;
            let t2 = s2 - d * d;
            (m + t1 / n1, (t2 - t1 * t1 / n1).max(0.0), n1)
        })
        .collect()
}

/// Variance (`root: false`) or standard deviation (`root: true`) with divisor n − ddof, where
/// ddof ("delta degrees of freedom") is the divisor's offset from n.
pub struct Variance {
    pub ddof: f64,
    pub root: bool,
}

impl ColumnStatistic for Variance {
    fn evaluate(&self, c: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        let total: f64 = w.iter().sum();
        let v = weighted_plugin_variance(&c.x, w) * total / (total - self.ddof);
        if self.root {
            v.sqrt()
        } else {
            v
        }
    }
    fn jackknife_closed(&self, c: &ColumnLayout) -> Option<Vec<f64>> {
        Some(
            jackknife_moments(c)
                .into_iter()
                .map(|(_, ss, n)| {
                    let v = ss / (n - self.ddof);
                    if self.root {
                        v.sqrt()
                    } else {
                        v
                    }
                })
                .collect(),
        )
    }
    /// Large-sample standard error of the plug-in variance, √((m₄ − m₂²)/n), scaled by
    /// n/(n − ddof); for the standard deviation the delta method divides by 2σ̂
    /// (e.g. Davison & Hinkley 1997, §2.7; common practice).
    fn analytic_se(&self, c: &ColumnLayout, w: &[f64]) -> Option<f64> {
        let total: f64 = w.iter().sum();
        let m = weighted_mean(&c.x, w);
        let m2 = weighted_plugin_variance(&c.x, w);
        if m2 == 0.0 {
            return Some(0.0);
        }
        // Fourth moment in units of m₂ (the kurtosis), so no power of a large deviation is formed.
        let mut kurt = 0.0;
        for (x, wi) in c.x.iter().zip(w) {
            let r = (x - m) * (x - m) / m2;
            kurt += wi * r * r;
        }
        kurt /= total;
        let k = total / (total - self.ddof);
        let se_var = k * m2 * ((kurt - 1.0).max(0.0) / total).sqrt();
        if self.root {
            // se(sd) = se(var)/(2 sd), written so that no product of large numbers is formed.
            Some(k.sqrt() * m2.sqrt() * ((kurt - 1.0).max(0.0) / total).sqrt() / 2.0)
        } else {
            Some(se_var)
        }
    }
}

/// Plug-in standard deviation over the mean.
pub struct CoefficientOfVariation;

impl ColumnStatistic for CoefficientOfVariation {
    fn evaluate(&self, c: &ColumnLayout, w: &[f64], _: &mut Scratch) -> f64 {
        weighted_plugin_variance(&c.x, w).sqrt() / weighted_mean(&c.x, w)
    }
    fn jackknife_closed(&self, c: &ColumnLayout) -> Option<Vec<f64>> {
        Some(jackknife_moments(c).into_iter().map(|(m, ss, n)| (ss / n).sqrt() / m).collect())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_jackknife_matches_direct() {
        let d = ColumnLayout::aggregated(&[1., 2., 3., 7., 9.], &[1, 3, 1, 2, 4]);
        let c = &d;
        let stats: Vec<Box<dyn ColumnStatistic>> = vec![
            Box::new(Variance { ddof: 0.0, root: false }),
            Box::new(Variance { ddof: 1.0, root: true }),
            Box::new(CoefficientOfVariation),
        ];
        for s in &stats {
            let jack = s.jackknife_closed(&d).unwrap();
            for j in 0..c.x.len() {
                let mut w = c.base.clone();
                w[j] -= 1.0;
                let direct = s.evaluate(&d, &w, &mut Scratch::default());
                assert!((jack[j] - direct).abs() < 1e-12 * direct.abs().max(1.0), "{} vs {direct}", jack[j]);
            }
        }
    }

    #[test]
    fn divisor_n_minus_one_is_the_unbiased_variance() {
        // Sample variance of 1..5 divided by n − 1 is 2.5 (numpy 2.4 var with one delta degree
        // of freedom); the plug-in form is 2.
        let d = ColumnLayout::rows(&[1., 2., 3., 4., 5.]);
        let w = d.base.clone();
        let mut s = Scratch::default();
        assert!((Variance { ddof: 1.0, root: false }.evaluate(&d, &w, &mut s) - 2.5).abs() < 1e-12);
        assert!((Variance { ddof: 0.0, root: false }.evaluate(&d, &w, &mut s) - 2.0).abs() < 1e-12);
    }
}
