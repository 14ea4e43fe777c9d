//! The bias-corrected and accelerated (BCa) interval.
//!
//! Efron, B. (1987), "Better bootstrap confidence intervals", JASA 82(397); Efron & Tibshirani
//! (1993), ch. 14, eqs. 14.9–14.15. The endpoints are replicate quantiles at the adjusted
//! levels α_q = Φ(z₀ + (z₀ + z_q)/(1 − a(z₀ + z_q))), where z₀ = Φ⁻¹(share of replicates below
//! θ̂, ties split) corrects for median bias and the acceleration a, from the jackknife,
//! corrects for a standard error that changes with θ. Second-order accurate.

use super::Endpoints;
use crate::engine::distribution::{normal_dist, ReplicateDistribution};
use crate::engine::montecarlo::quantile_mc_error;

/// The two BCa constants and whether either had to be clamped.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BcaConstants {
    pub z0: f64,
    pub acceleration: f64,
    /// True when every replicate fell on one side of the estimate, so z₀ was clamped to the
    /// value for half a replicate.
    pub z0_clamped: bool,
}

/// z₀ from the replicates, clamped to the share of half a replicate when every replicate lies
/// on one side of the estimate (otherwise it would be infinite).
pub fn z0(dist: &ReplicateDistribution, estimate: f64) -> (f64, bool) {
    let share = dist.share_below(estimate);
    let floor = 0.5 / dist.len() as f64;
    let clamped = share.clamp(floor, 1.0 - floor);
    (normal_dist::quantile(clamped), clamped != share)
}

/// Acceleration from jackknife values θ₍ᵢ₎ with multiplicities cᵢ (Efron & Tibshirani 1993,
/// eq. 14.15): a = Σcᵢdᵢ³ / (6 (Σcᵢdᵢ²)^{3/2}), dᵢ = θ₍·₎ − θ₍ᵢ₎. Zero when the jackknife values
/// do not vary; undefined (NaN) when one of them is, so that the caller goes without it.
///
/// a does not change when every dᵢ is scaled, so the dᵢ are divided by the largest |dᵢ| first:
/// cubes of large influences would otherwise overflow.
pub fn acceleration(values: &[f64], multiplicity: &[f64]) -> f64 {
    if values.iter().any(|v| !v.is_finite()) {
        return f64::NAN;
    }
    let total: f64 = multiplicity.iter().sum();
    let mean = values.iter().zip(multiplicity).map(|(v, c)| v * c).sum::<f64>() / total;
    let scale = values.iter().map(|v| (mean - v).abs()).fold(0.0, f64::max);
    if !scale.is_finite() {
        // Influences past the largest float (values near it): undefined, like a NaN value.
        return f64::NAN;
    }
    if scale == 0.0 {
        return 0.0;
    }
    let (mut s2, mut s3) = (0.0, 0.0);
    for (v, c) in values.iter().zip(multiplicity) {
        let d = (mean - v) / scale;
        s2 += c * d * d;
        s3 += c * d * d * d;
    }
    if s2 <= 0.0 {
        0.0
    } else {
        s3 / (6.0 * s2.powf(1.5))
    }
}

/// Acceleration of a statistic of several independent samples, from each sample's jackknife
/// values (each sample's left out in turn, the others kept whole) with multiplicities:
/// a = Σ_k n_k⁻³ Σ_i c_ki U_ki³ / (6 (Σ_k n_k⁻² Σ_i c_ki U_ki²)^{3/2}), where
/// U_ki = (n_k − 1)(θ̄_k − θ_k(i)) estimates the empirical influence of observation i of
/// sample k and n_k = Σ_i c_ki (Davison & Hinkley 1997, §3.2 and §5.3, the several-sample form
/// of the acceleration; Efron & Tibshirani 1993, ch. 14; from memory). With one sample it is
/// [`acceleration`]. The influences of all samples are divided by their largest magnitude
/// first, as there (a does not change), so no cube overflows. [`acceleration`] is not written
/// as this with one sample: the two agree to rounding (a unit test holds them together), but
/// not bit for bit, and one-sample responses are pinned bit for bit. Undefined (NaN) when a
/// jackknife value is, as there.
pub fn acceleration_of_samples(samples: &[(&[f64], &[f64])]) -> f64 {
    if samples.iter().any(|(values, _)| values.iter().any(|v| !v.is_finite())) {
        return f64::NAN;
    }
    // U/n = (n − 1)/n · (θ̄ − θ₍ᵢ₎) for every observation of every sample.
    let influence: Vec<(Vec<f64>, &[f64])> = samples
        .iter()
        .map(|(values, multiplicity)| {
            let n: f64 = multiplicity.iter().sum();
            let mean = values.iter().zip(*multiplicity).map(|(v, c)| v * c).sum::<f64>() / n;
            (values.iter().map(|v| (mean - v) * (n - 1.0) / n).collect(), *multiplicity)
        })
        .collect();
    let scale = influence.iter().flat_map(|(u, _)| u.iter()).fold(0.0_f64, |m, u| m.max(u.abs()));
    if !scale.is_finite() {
        // Influences past the largest float (values near it): undefined, like a NaN value.
        return f64::NAN;
    }
    if scale == 0.0 {
        return 0.0;
    }
    let (mut s2, mut s3) = (0.0, 0.0);
    for (u, multiplicity) in &influence {
        for (ui, c) in u.iter().zip(*multiplicity) {
            let d = ui / scale;
            s2 += c * d * d;
            s3 += c * d * d * d;
        }
    }
    if s2 <= 0.0 {
        0.0
    } else {
        s3 / (6.0 * s2.powf(1.5))
    }
}

/// The adjusted quantile level for the nominal level whose normal quantile is `zq`. When
/// 1 − a(z₀ + z_q) ≤ 0 the formula breaks down; the level is then pushed to the end of the
/// range on the side of the nominal level.
pub fn adjusted_level(zq: f64, c: &BcaConstants) -> f64 {
    let denom = 1.0 - c.acceleration * (c.z0 + zq);
    if denom <= 0.0 {
        return if zq < 0.0 { 0.0 } else { 1.0 };
    }
    normal_dist::cdf(c.z0 + (c.z0 + zq) / denom)
}

/// The Monte Carlo standard error of a BCa endpoint: the order-statistic error of the quantile
/// at α_q plus, by the delta method, the error that the Monte Carlo error of z₀ carries into
/// α_q (var z₀ ≈ P(1 − P)/(B φ(z₀)²), P the share below θ̂). The two are treated as
/// uncorrelated.
fn endpoint_mc_error(dist: &ReplicateDistribution, zq: f64, level: f64, c: &BcaConstants) -> f64 {
    if dist.is_exact() {
        return 0.0;
    }
    let b = dist.len() as f64;
    let quantile_part = quantile_mc_error(dist, level);
    // Slope of the replicate quantile function at `level`, from the same order statistics.
    let s = (level * (1.0 - level) / b).sqrt().max(0.5 / b);
    let (lo, hi) = ((level - s).max(0.0), (level + s).min(1.0));
    let slope = if hi > lo {
        (dist.quantile(hi) - dist.quantile(lo)) / (hi - lo)
    } else {
        0.0
    };
    let u = c.z0 + zq;
    let denom = 1.0 - c.acceleration * u;
    if denom <= 0.0 {
        return quantile_part;
    }
    let w = c.z0 + u / denom;
    let dw_dz0 = 1.0 + 1.0 / (denom * denom);
    let p = normal_dist::cdf(c.z0);
    let var_z0 = p * (1.0 - p) / (b * normal_dist::density(c.z0).powi(2));
    let z0_part = slope * normal_dist::density(w) * dw_dz0 * var_z0.sqrt();
    let error = (quantile_part * quantile_part + z0_part * z0_part).sqrt();
    // The squares of a huge contrast's errors (a ratio over a baseline near zero) can overflow:
    // then hypot, which does not (only then, so that every other result keeps its bits).
    if error.is_finite() {
        error
    } else {
        quantile_part.hypot(z0_part)
    }
}

pub fn interval(dist: &ReplicateDistribution, c: &BcaConstants, level: f64) -> Endpoints {
    let tail = (1.0 - level) / 2.0;
    let (zl, zu) = (normal_dist::quantile(tail), normal_dist::upper_quantile(tail));
    let (al, au) = (adjusted_level(zl, c), adjusted_level(zu, c));
    Endpoints {
        lower: dist.quantile(al),
        upper: dist.quantile(au),
        lower_mc_error: endpoint_mc_error(dist, zl, al, c),
        upper_mc_error: endpoint_mc_error(dist, zu, au, c),
        quantile_levels: Some((al, au)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn no_bias_no_acceleration_is_the_percentile_interval() {
        let c = BcaConstants {
            z0: 0.0,
            acceleration: 0.0,
            z0_clamped: false,
        };
        // Φ(Φ⁻¹(q)) round-trips in statrs 0.18 to about 2e-12.
        let d = adjusted_level(normal_dist::quantile(0.05), &c) - 0.05;
        assert!(d.abs() < 1e-10, "{d}");
        assert!((adjusted_level(normal_dist::quantile(0.975), &c) - 0.975).abs() < 1e-10);
    }

    #[test]
    fn acceleration_of_symmetric_jackknife_is_zero() {
        assert_eq!(acceleration(&[1.0, 2.0, 3.0], &[1.0, 1.0, 1.0]), 0.0);
        assert_eq!(acceleration(&[2.0, 2.0], &[1.0, 1.0]), 0.0);
    }

    #[test]
    fn the_several_sample_acceleration_of_one_sample_is_the_one_sample_one() {
        let v = [1.0, 2.0, 7.0, 3.0];
        let c = [1.0, 2.0, 1.0, 1.0];
        let one = acceleration(&v, &c);
        let several = acceleration_of_samples(&[(&v, &c)]);
        assert!((one - several).abs() < 1e-12 * one.abs(), "{one} vs {several}");
        // A second sample that does not vary adds nothing.
        let flat = [5.0, 5.0, 5.0];
        let both = acceleration_of_samples(&[(&v, &c), (&flat, &[1.0, 1.0, 1.0])]);
        assert!((one - both).abs() < 1e-12 * one.abs());
    }

    #[test]
    fn acceleration_is_scale_free_and_does_not_overflow() {
        let v = [1.0, 2.0, 7.0, 3.0];
        let c = [1.0, 2.0, 1.0, 1.0];
        let a = acceleration(&v, &c);
        assert!(a != 0.0);
        let big: Vec<f64> = v.iter().map(|x| x * 1e140).collect();
        assert!((acceleration(&big, &c) - a).abs() < 1e-12 * a.abs());
        let several = acceleration_of_samples(&[(&big, &c), (&big, &c)]);
        assert!(several.is_finite() && several != 0.0, "{several}");
    }

    #[test]
    fn an_undefined_jackknife_value_leaves_the_acceleration_undefined() {
        let c = [1.0; 4];
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            let v = [1.0, 2.0, bad, 3.0];
            assert!(acceleration(&v, &c).is_nan(), "{bad}");
            assert!(acceleration_of_samples(&[(&[1.0, 2.0, 7.0, 3.0], &c), (&v, &c)]).is_nan(), "{bad}");
        }
        // Finite values whose mean overflows: the influences are not finite either.
        let huge = [f64::MAX, f64::MAX, -f64::MAX, 1.0];
        assert!(acceleration(&huge, &c).is_nan());
        assert!(acceleration_of_samples(&[(&huge, &c), (&[1.0, 2.0, 7.0, 3.0], &c)]).is_nan());
        // Values that do not vary still give 0.
        assert_eq!(acceleration(&[2.0; 4], &c), 0.0);
    }
}
