//! The normal-approximation interval, bias-corrected: θ̂ − b ∓ z₁₋α/2 · se, with b and se the
//! bootstrap bias and standard error.
//!
//! Davison & Hinkley (1997), §5.2, eq. 5.5; Efron & Tibshirani (1993), §13.2 ("standard"
//! interval, here with the bootstrap bias removed as Davison & Hinkley do).

use super::{normal_dist, Endpoints};

/// `bias_mc` and `se_mc` are the Monte Carlo standard errors of the bias and of the standard
/// error; they combine into the endpoint's (treating the two as uncorrelated, which holds
/// exactly for symmetric replicate distributions).
pub fn interval(estimate: f64, bias: f64, se: f64, bias_mc: f64, se_mc: f64, level: f64) -> Endpoints {
    let z = normal_dist::quantile(1.0 - (1.0 - level) / 2.0);
    let centre = estimate - bias;
    let mc = (bias_mc * bias_mc + z * z * se_mc * se_mc).sqrt();
    Endpoints {
        lower: centre - z * se,
        upper: centre + z * se,
        lower_mc_error: mc,
        upper_mc_error: mc,
        quantile_levels: None,
    }
}
