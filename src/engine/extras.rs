//! Optional parts of the result: a histogram and a downsampled distribution function of the
//! replicates.

use crate::engine::distribution::ReplicateDistribution;

/// Equal-width histogram of the replicates.
#[derive(Debug, Clone, PartialEq)]
pub struct Histogram {
    pub edges: Vec<f64>,
    pub counts: Vec<u64>,
    /// Share of the replicate distribution in each bin (probability for exact enumeration).
    pub mass: Vec<f64>,
}

/// A downsampled empirical distribution function of the replicates.
#[derive(Debug, Clone, PartialEq)]
pub struct Cdf {
    pub values: Vec<f64>,
    pub probabilities: Vec<f64>,
}

/// The optional parts of a result that were asked for.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Extras {
    pub histogram: Option<Histogram>,
    pub cdf: Option<Cdf>,
    /// Every defined replicate value, in stream order.
    pub replicates: Option<Vec<f64>>,
    /// With studentized intervals: each replicate's standard error (0 where it had none).
    pub replicate_standard_errors: Option<Vec<f64>>,
    /// For an enumeration: each replicate's probability.
    pub replicate_probabilities: Option<Vec<f64>>,
}

/// The most points of the downsampled distribution function.
pub const CDF_POINTS: usize = 256;

/// Equal-width bins between the smallest and largest replicate; the Rice rule 2·B^{1/3} for
/// the number of bins (Terrell, G. R. & Scott, D. W. (1985), JASA 80(389)), between 10 and 200.
pub fn histogram(dist: &ReplicateDistribution) -> Histogram {
    let sorted = dist.sorted();
    let (lo, hi) = (dist.min(), dist.max());
    let bins = if hi > lo {
        ((2.0 * (sorted.len() as f64).cbrt()).ceil() as usize).clamp(10, 200)
    } else {
        1
    };
    let width = (hi - lo) / bins as f64;
    let edges: Vec<f64> = (0..=bins).map(|k| if k == bins { hi } else { lo + width * k as f64 }).collect();
    let mut counts = vec![0u64; bins];
    let mut mass = vec![0.0; bins];
    let mut prev = 0.0;
    for (i, v) in sorted.iter().enumerate() {
        let k = if width > 0.0 {
            (((v - lo) / width) as usize).min(bins - 1)
        } else {
            0
        };
        counts[k] += 1;
        mass[k] += match dist.cumulative() {
            Some(c) => {
                let p = c[i] - prev;
                prev = c[i];
                p
            }
            None => 1.0 / sorted.len() as f64,
        };
    }
    Histogram { edges, counts, mass }
}

/// At most [`CDF_POINTS`] points of the replicate distribution function, evenly spaced in rank.
pub fn cdf(dist: &ReplicateDistribution) -> Cdf {
    let sorted = dist.sorted();
    let n = sorted.len();
    let k = n.min(CDF_POINTS);
    let mut values = Vec::with_capacity(k);
    let mut probabilities = Vec::with_capacity(k);
    for j in 0..k {
        let i = if k == 1 { n - 1 } else { (j * (n - 1)) / (k - 1) };
        values.push(sorted[i]);
        probabilities.push(match dist.cumulative() {
            Some(c) => c[i].min(1.0),
            None => (i + 1) as f64 / n as f64,
        });
    }
    Cdf { values, probabilities }
}
