//! Monte Carlo error: how much the reported numbers would move with another set of B resamples.
//!
//! - A replicate quantile: the sample p-quantile of B draws has standard error
//!   √(p(1 − p)/B) / f(q_p). The density is not needed explicitly: the quantiles at p ± s,
//!   s = √(p(1 − p)/B), lie about one standard error either side, so
//!   mc(q_p) ≈ (Q(p + s) − Q(p − s)) / 2 (a difference-quotient or "sparsity" estimate from the
//!   order statistics; Siddiqui, M. M. (1960), J. Res. NBS 64B, and Bloch, D. A. & Gastwirth,
//!   J. L. (1968), Ann. Math. Statist. 39; the binomial argument is common practice).
//! - The standard error: var(ŝ) ≈ ŝ²(κ − 1)/(4B), κ the kurtosis m₄/m₂² of the replicates; for
//!   normal replicates κ = 3 and the relative error is 1/√(2B) (common practice).
//! - The bias (mean of replicates minus estimate): ŝ/√B.

use crate::engine::distribution::ReplicateDistribution;

/// Monte Carlo standard error of the p-quantile of the replicates; zero for an enumeration.
pub fn quantile_mc_error(dist: &ReplicateDistribution, p: f64) -> f64 {
    let b = dist.len() as f64;
    if dist.is_exact() || b < 2.0 {
        return 0.0;
    }
    // At p = 0 or 1 the binomial spread vanishes; half a replicate's worth keeps the estimate
    // honest there.
    let s = (p * (1.0 - p) / b).sqrt().max(0.5 / b);
    let lo = (p - s).max(0.0);
    let hi = (p + s).min(1.0);
    if hi <= lo {
        return 0.0;
    }
    (dist.quantile(hi) - dist.quantile(lo)) * s / (hi - lo)
}

/// Monte Carlo standard error of the bootstrap standard error.
pub fn standard_error_mc_error(dist: &ReplicateDistribution) -> f64 {
    if dist.is_exact() || dist.len() < 2 {
        return 0.0;
    }
    let b = dist.len() as f64;
    let k = dist.kurtosis();
    dist.sd() * ((k - 1.0).max(0.0) / (4.0 * b)).sqrt()
}

/// Monte Carlo standard error of the bootstrap bias.
pub fn bias_mc_error(dist: &ReplicateDistribution) -> f64 {
    if dist.is_exact() || dist.is_empty() {
        return 0.0;
    }
    dist.sd() / (dist.len() as f64).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn uniform_quantile_error_matches_the_binomial_formula() {
        // For B equally spaced replicates on [0, 1] (density 1), mc(q_p) = √(p(1 − p)/B).
        let b = 10_001;
        let v: Vec<f64> = (0..b).map(|i| i as f64 / (b - 1) as f64).collect();
        let d = ReplicateDistribution::sampled(&v);
        for p in [0.025, 0.5, 0.975] {
            let want = (p * (1.0 - p) / b as f64).sqrt();
            let got = quantile_mc_error(&d, p);
            assert!((got - want).abs() < 1e-3 * want, "p {p}: {got} vs {want}");
        }
    }
}
