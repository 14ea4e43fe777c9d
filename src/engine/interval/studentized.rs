//! The studentized (bootstrap-t) interval: (θ̂ − t₁₋α/2 · ŝe, θ̂ − tα/2 · ŝe), with t the
//! quantiles of t* = (θ* − θ̂)/se* over the replicates.
//!
//! Davison & Hinkley (1997), §5.2.1, eq. 5.7; Efron & Tibshirani (1993), ch. 12; DiCiccio &
//! Efron (1996), Statistical Science 11(3). se* is the statistic's analytic standard error on
//! each resample where it has one (mean, proportion, variance, ratio, slope …), otherwise a
//! nested bootstrap of each resample; ŝe is the same estimator on the sample (analytic), or the
//! outer bootstrap standard error when se* is nested. Second-order accurate, but sensitive to a
//! poor se*.

use super::Endpoints;
use crate::engine::distribution::ReplicateDistribution;
use crate::engine::montecarlo::quantile_mc_error;

/// `t` is the distribution of the studentized replicates; `se_hat` the standard error that
/// scales it back.
pub fn interval(t: &ReplicateDistribution, estimate: f64, se_hat: f64, level: f64) -> Endpoints {
    let alpha = 1.0 - level;
    let (pl, pu) = (alpha / 2.0, 1.0 - alpha / 2.0);
    Endpoints {
        lower: estimate - se_hat * t.quantile(pu),
        upper: estimate - se_hat * t.quantile(pl),
        lower_mc_error: se_hat * quantile_mc_error(t, pu),
        upper_mc_error: se_hat * quantile_mc_error(t, pl),
        quantile_levels: Some((pu, pl)),
    }
}
