//! Spread statistics: variance and standard deviation (plug-in, or with `ddof`), coefficient
//! of variation.

use super::location::{weighted_mean, weighted_plugin_variance};
use super::{Scratch, Statistic};
use crate::engine::data::{Prepared, SortedColumn};

fn one(data: &Prepared) -> &SortedColumn {
    match data {
        Prepared::One(c) => c,
        Prepared::Rows(_) => unreachable!("spread statistics are built for one column only"),
    }
}

/// Leave-one-out (mean, sum of squared deviations, size) for every unit, in O(units), from
/// centred sums: removing one copy of d_j = x_j − x̄ leaves S₁ − d_j and S₂ − d_j².
fn jackknife_moments(c: &SortedColumn) -> Vec<(f64, f64, f64)> {
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

/// Variance (`root: false`) or standard deviation (`root: true`) with divisor n − ddof.
pub struct Variance {
    pub ddof: f64,
    pub root: bool,
}

impl Statistic for Variance {
    fn evaluate(&self, data: &Prepared, w: &[f64], _: &mut Scratch) -> f64 {
        let c = one(data);
        let total: f64 = w.iter().sum();
        let v = weighted_plugin_variance(&c.x, w) * total / (total - self.ddof);
        if self.root {
            v.sqrt()
        } else {
            v
        }
    }
    fn jackknife_closed(&self, data: &Prepared) -> Option<Vec<f64>> {
        Some(
            jackknife_moments(one(data))
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
    fn analytic_se(&self, data: &Prepared, w: &[f64]) -> Option<f64> {
        let c = one(data);
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
    fn has_analytic_se(&self) -> bool {
        true
    }
}

/// Plug-in standard deviation over the mean.
pub struct CoefficientOfVariation;

impl Statistic for CoefficientOfVariation {
    fn evaluate(&self, data: &Prepared, w: &[f64], _: &mut Scratch) -> f64 {
        let c = one(data);
        weighted_plugin_variance(&c.x, w).sqrt() / weighted_mean(&c.x, w)
    }
    fn jackknife_closed(&self, data: &Prepared) -> Option<Vec<f64>> {
        Some(
            jackknife_moments(one(data))
                .into_iter()
                .map(|(m, ss, n)| (ss / n).sqrt() / m)
                .collect(),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::data::Sample;

    #[test]
    fn closed_jackknife_matches_direct() {
        let d = Prepared::from_sample(&Sample::Aggregated {
            values: vec![1., 2., 3., 7., 9.],
            counts: vec![1, 3, 1, 2, 4],
        });
        let Prepared::One(c) = &d else { unreachable!() };
        let stats: Vec<Box<dyn Statistic>> = vec![
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
    fn ddof_one_is_the_unbiased_variance() {
        // Sample variance of 1..5 with divisor n − 1 is 2.5 (numpy var(ddof=1)); plug-in is 2.
        let d = Prepared::from_sample(&Sample::Column(vec![1., 2., 3., 4., 5.]));
        let w = d.base_weights();
        let mut s = Scratch::default();
        assert!((Variance { ddof: 1.0, root: false }.evaluate(&d, &w, &mut s) - 2.5).abs() < 1e-12);
        assert!((Variance { ddof: 0.0, root: false }.evaluate(&d, &w, &mut s) - 2.0).abs() < 1e-12);
    }
}
