//! The distribution of the replicate values, sorted once, from which every interval, Monte Carlo
//! error and diagnostic is read; and the standard normal distribution.

/// Relative distance within which a replicate counts as equal to the estimate (see
/// [`ReplicateDistribution::share_below`]).
pub const TIE_TOLERANCE: f64 = 1e-12;

/// The distribution of replicate values: sorted, with equal weights (sampled resamples) or
/// with the exact probability of each distinct resample (exact enumeration).
#[derive(Debug, Clone, PartialEq)]
pub struct ReplicateDistribution {
    sorted: Vec<f64>,
    /// Cumulative probabilities aligned with `sorted`, for exact enumeration.
    cumulative: Option<Vec<f64>>,
    mean: f64,
    sd: f64,
}

/// √(Σ wᵢ(vᵢ − mean)² / divisor). When the plain sum of squares overflows (replicates near
/// [`crate::engine::summary::MAX_REPLICATE`], a ratio whose denominator resampled to almost 0),
/// the deviations are scaled by the largest first; otherwise the plain sum is kept, bit for bit.
fn spread(values: &[f64], weight: impl Fn(usize) -> f64, mean: f64, divisor: f64) -> f64 {
    let ss: f64 = values.iter().enumerate().map(|(i, v)| weight(i) * (v - mean) * (v - mean)).sum();
    if ss.is_finite() {
        return (ss / divisor).sqrt();
    }
    let scale = values.iter().map(|v| (v - mean).abs()).fold(0.0, f64::max);
    let scaled: f64 = values
        .iter()
        .enumerate()
        .map(|(i, v)| weight(i) * ((v - mean) / scale).powi(2))
        .sum();
    scale * (scaled / divisor).sqrt()
}

impl ReplicateDistribution {
    /// Equally weighted replicates (sampled). `sd` uses divisor B − 1.
    pub fn sampled(values: &[f64]) -> Self {
        let mut sorted = values.to_vec();
        sorted.sort_by(f64::total_cmp);
        let b = sorted.len() as f64;
        // Sum in replicate order so the result does not depend on sorting.
        let mean = values.iter().sum::<f64>() / b;
        let sd = if sorted.len() > 1 {
            spread(values, |_| 1.0, mean, b - 1.0)
        } else {
            0.0
        };
        ReplicateDistribution {
            sorted,
            cumulative: None,
            mean,
            sd,
        }
    }

    /// Exactly enumerated replicates with probabilities (adding up to one). `sd` is the
    /// standard deviation of that distribution (the ideal bootstrap standard error).
    pub fn exact(values: &[f64], probs: &[f64]) -> Self {
        let mut idx: Vec<usize> = (0..values.len()).collect();
        idx.sort_by(|a, b| values[*a].total_cmp(&values[*b]));
        let total: f64 = probs.iter().sum();
        let mean = values.iter().zip(probs).map(|(v, p)| v * p).sum::<f64>() / total;
        let sd = spread(values, |i| probs[i], mean, total);
        let mut cum = 0.0;
        let mut cumulative = Vec::with_capacity(values.len());
        let mut sorted = Vec::with_capacity(values.len());
        for i in idx {
            cum += probs[i] / total;
            cumulative.push(cum);
            sorted.push(values[i]);
        }
        ReplicateDistribution {
            sorted,
            cumulative: Some(cumulative),
            mean,
            sd,
        }
    }

    pub fn len(&self) -> usize {
        self.sorted.len()
    }

    pub fn is_empty(&self) -> bool {
        self.sorted.is_empty()
    }

    pub fn is_exact(&self) -> bool {
        self.cumulative.is_some()
    }

    pub fn mean(&self) -> f64 {
        self.mean
    }

    pub fn sd(&self) -> f64 {
        self.sd
    }

    pub fn min(&self) -> f64 {
        self.sorted[0]
    }

    pub fn max(&self) -> f64 {
        self.sorted[self.sorted.len() - 1]
    }

    pub fn sorted(&self) -> &[f64] {
        &self.sorted
    }

    pub fn cumulative(&self) -> Option<&[f64]> {
        self.cumulative.as_deref()
    }

    /// The p-quantile of the replicates: Hyndman–Fan definition 7 for sampled replicates
    /// (numpy's default, common practice for percentile intervals), the inverse of the exact
    /// distribution function, inf{x : G(x) ≥ p}, for exact enumeration.
    pub fn quantile(&self, p: f64) -> f64 {
        let p = p.clamp(0.0, 1.0);
        match &self.cumulative {
            None => {
                let h = (self.sorted.len() as f64 - 1.0) * p;
                let lo = h.floor();
                let i = lo as usize;
                let frac = h - lo;
                if frac == 0.0 || i + 1 >= self.sorted.len() {
                    self.sorted[i.min(self.sorted.len() - 1)]
                } else {
                    self.sorted[i] + frac * (self.sorted[i + 1] - self.sorted[i])
                }
            }
            Some(cum) => {
                // Tolerate rounding in the running sum of probabilities.
                let target = p - 1e-12;
                let i = cum.partition_point(|c| *c < target);
                self.sorted[i.min(self.sorted.len() - 1)]
            }
        }
    }

    /// P(replicate < x) + ½·P(replicate = x): the share below x with ties split, as BCa's z0
    /// needs (Efron & Tibshirani 1993, eq. 14.14, with the usual tie correction).
    ///
    /// Replicates within [`TIE_TOLERANCE`] (relative to max(|x|, sd), and at most 1e-6 sd) of x
    /// count as ties: a
    /// resample that reproduces the estimate mathematically (a permutation of the sample, or
    /// a different multiset with the same variance) may differ from it in the last bits
    /// because its sums ran in another order, and such rounding must not move z0.
    pub fn share_below(&self, x: f64) -> f64 {
        // Capped at a millionth of the spread, so that data with a large offset and a small
        // spread never count genuine replicates as ties.
        let tol = (TIE_TOLERANCE * x.abs().max(self.sd)).min(1e-6 * self.sd);
        let below = self.sorted.partition_point(|v| *v < x - tol);
        let upto = self.sorted.partition_point(|v| *v <= x + tol);
        match &self.cumulative {
            None => (below as f64 + 0.5 * (upto - below) as f64) / self.sorted.len() as f64,
            Some(cum) => {
                let at = |i: usize| if i == 0 { 0.0 } else { cum[i - 1] };
                let pb = at(below);
                pb + 0.5 * (at(upto) - pb)
            }
        }
    }

    /// The number of distinct replicate values.
    pub fn distinct(&self) -> usize {
        if self.sorted.is_empty() {
            return 0;
        }
        1 + self.sorted.windows(2).filter(|w| w[0] != w[1]).count()
    }

    /// Sample skewness of the replicates (0 when they do not vary).
    pub fn skewness(&self) -> f64 {
        if self.sd == 0.0 || self.sorted.len() < 3 {
            return 0.0;
        }
        let (m2, m3, _) = self.standardized_moments();
        if m2 == 0.0 {
            0.0
        } else {
            m3 / m2.powf(1.5)
        }
    }

    /// Kurtosis m₄/m₂² of the replicates (3 for a normal distribution; not the excess).
    pub fn kurtosis(&self) -> f64 {
        let (m2, _, m4) = self.standardized_moments();
        if m2 == 0.0 {
            3.0
        } else {
            m4 / (m2 * m2)
        }
    }

    /// Central moments 2 to 4 of (replicate − mean)/sd. Standardising first keeps the powers
    /// finite whatever the scale of the statistic; skewness and kurtosis do not depend on it.
    fn standardized_moments(&self) -> (f64, f64, f64) {
        if self.sd == 0.0 || !self.sd.is_finite() {
            return (0.0, 0.0, 0.0);
        }
        let (mut m2, mut m3, mut m4, mut prev) = (0.0, 0.0, 0.0, 0.0);
        let n = self.sorted.len() as f64;
        for (i, v) in self.sorted.iter().enumerate() {
            let p = match &self.cumulative {
                None => 1.0 / n,
                Some(cum) => {
                    let p = cum[i] - prev;
                    prev = cum[i];
                    p
                }
            };
            let z = (v - self.mean) / self.sd;
            m2 += p * z * z;
            m3 += p * z * z * z;
            m4 += p * z * z * z * z;
        }
        (m2, m3, m4)
    }
}

/// Standard normal quantile and distribution function (statrs).
pub mod normal_dist {
    use statrs::distribution::{Continuous, ContinuousCDF, Normal};

    fn std() -> Normal {
        Normal::new(0.0, 1.0).expect("standard normal")
    }

    pub fn quantile(p: f64) -> f64 {
        std().inverse_cdf(p)
    }

    /// The z with P(Z > z) = `tail`. For a tail so small that 1 − tail rounds to 1 (a level
    /// within 1e-16 of 1), it is read from the lower tail by symmetry, so it stays finite.
    pub fn upper_quantile(tail: f64) -> f64 {
        if 1.0 - tail < 1.0 {
            quantile(1.0 - tail)
        } else {
            -quantile(tail)
        }
    }

    pub fn cdf(z: f64) -> f64 {
        std().cdf(z)
    }

    pub fn density(z: f64) -> f64 {
        std().pdf(z)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn normal_quantiles_match_the_nist_table() {
        // NIST/SEMATECH e-Handbook §1.3.6.7.1; digits from scipy 1.17 norm.ppf (docs/references.md).
        assert!((normal_dist::quantile(0.95) - 1.6448536269514722).abs() < 1e-12);
        assert!((normal_dist::quantile(0.975) - 1.959963984540054).abs() < 1e-12);
        assert!((normal_dist::quantile(0.995) - 2.5758293035489004).abs() < 1e-12);
        // One standard error either side covers 68.27 % (same handbook).
        assert!((normal_dist::cdf(1.0) - normal_dist::cdf(-1.0) - 0.6827).abs() < 5e-5);
    }

    #[test]
    fn exact_quantile_inverts_the_distribution_function() {
        let d = ReplicateDistribution::exact(&[3.0, 1.0, 2.0], &[0.5, 0.25, 0.25]);
        assert_eq!(d.quantile(0.1), 1.0);
        assert_eq!(d.quantile(0.25), 1.0);
        assert_eq!(d.quantile(0.3), 2.0);
        assert_eq!(d.quantile(0.75), 3.0);
        assert_eq!(d.share_below(2.0), 0.25 + 0.125);
    }
}
