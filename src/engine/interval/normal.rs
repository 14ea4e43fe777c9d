//! The normal-approximation interval, bias-corrected: θ̂ − b ∓ z₁₋α/2 · se, with b and se the
//! bootstrap bias and standard error.
//!
//! Davison & Hinkley (1997), §5.2, eq. 5.5; Efron & Tibshirani (1993), §13.2 ("standard"
//! interval, here with the bootstrap bias removed as Davison & Hinkley do).

use super::Endpoints;
use crate::engine::distribution::{normal_dist, ReplicateDistribution};

/// `bias_mc` and `se_mc` are the Monte Carlo standard errors of the bias and of the standard
/// error. The endpoint θ̂ − b ∓ z·se has Monte Carlo variance var(b) + z²·var(se) ± 2z·cov(b, se),
/// where for B replicates cov(mean, sd) ≈ μ₃/(2σB) = γσ²/(2B), γ the skewness of the replicates
/// (delta method on cov(x̄, s²) = μ₃/B); so skewed replicates make one endpoint noisier than the
/// other. Exact enumeration has no Monte Carlo error.
pub fn interval(estimate: f64, bias: f64, se: f64, bias_mc: f64, se_mc: f64, dist: &ReplicateDistribution, level: f64) -> Endpoints {
    let z = normal_dist::upper_quantile((1.0 - level) / 2.0);
    let centre = estimate - bias;
    let (lower_mc_error, upper_mc_error) = if dist.is_exact() {
        (0.0, 0.0)
    } else {
        let errors = |k: f64| {
            let (se, bias_mc, se_mc) = (se / k, bias_mc / k, se_mc / k);
            let cov = dist.skewness() * se * se / (2.0 * dist.len() as f64);
            let base = bias_mc * bias_mc + z * z * se_mc * se_mc;
            // lower = centre − z·se: cov(−b, −z·se) = +z·cov; upper: −z·cov.
            (
                k * (base + 2.0 * z * cov).max(0.0).sqrt(),
                k * (base - 2.0 * z * cov).max(0.0).sqrt(),
            )
        };
        // The squares of a huge contrast's errors (a ratio over a baseline near zero) can
        // overflow: then in units of the largest of the three (only then, so that every other
        // result keeps its bits).
        match errors(1.0) {
            (l, u) if l.is_finite() && u.is_finite() => (l, u),
            _ => errors(se.abs().max(bias_mc).max(se_mc)),
        }
    };
    Endpoints {
        lower: centre - z * se,
        upper: centre + z * se,
        lower_mc_error,
        upper_mc_error,
        quantile_levels: None,
    }
}
