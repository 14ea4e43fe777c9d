//! The basic (reverse percentile) interval: (2θ̂ − q₁₋α/2, 2θ̂ − qα/2).
//!
//! Davison & Hinkley (1997), §5.2, eq. 5.6: it treats θ* − θ̂ as a pivot for θ̂ − θ.

use super::Endpoints;
use crate::engine::distribution::ReplicateDistribution;
use crate::engine::montecarlo::quantile_mc_error;

pub fn interval(dist: &ReplicateDistribution, estimate: f64, level: f64) -> Endpoints {
    let alpha = 1.0 - level;
    let (pl, pu) = (alpha / 2.0, 1.0 - alpha / 2.0);
    Endpoints {
        lower: 2.0 * estimate - dist.quantile(pu),
        upper: 2.0 * estimate - dist.quantile(pl),
        lower_mc_error: quantile_mc_error(dist, pu),
        upper_mc_error: quantile_mc_error(dist, pl),
        quantile_levels: Some((pu, pl)),
    }
}
