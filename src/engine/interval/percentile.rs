//! The percentile interval: the α/2 and 1 − α/2 quantiles of the replicates.
//!
//! Efron, B. (1981), "Nonparametric standard errors and confidence intervals", Canadian
//! Journal of Statistics 9(2); Davison & Hinkley (1997), §5.3.1, eq. 5.18; Efron & Tibshirani
//! (1993), ch. 13. Transformation-respecting, but first-order accurate only: it undercovers for
//! small skewed samples, where BCa or studentized do better.

use super::Endpoints;
use crate::engine::distribution::ReplicateDistribution;
use crate::engine::montecarlo::quantile_mc_error;

pub fn interval(dist: &ReplicateDistribution, level: f64) -> Endpoints {
    let alpha = 1.0 - level;
    let (pl, pu) = (alpha / 2.0, 1.0 - alpha / 2.0);
    Endpoints {
        lower: dist.quantile(pl),
        upper: dist.quantile(pu),
        lower_mc_error: quantile_mc_error(dist, pl),
        upper_mc_error: quantile_mc_error(dist, pu),
        quantile_levels: Some((pl, pu)),
    }
}
