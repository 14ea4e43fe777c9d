//! Exact enumeration of every distinct `iid` resample (Fisher, N. I. & Hall, P. (1991),
//! "Bootstrap algorithms for small samples", J. Statist. Plann. Inference 27).
//!
//! A resample of N observations over m units is a composition (k₁, …, k_m) of N; it occurs
//! with multinomial probability N!/∏k_j! · ∏(c_j/N)^{k_j}. There are C(N + m − 1, m − 1) of them
//! (C(2n − 1, n) for n raw rows: 126 for n = 5, 92 378 for n = 10), so this is for small
//! samples only, where it removes Monte Carlo error entirely.

use rand_chacha::ChaCha8Rng;
use statrs::function::factorial::ln_factorial;

use super::{iid, Resampler, SchemeError, Within};
use crate::engine::statistic::Units;

/// The number of distinct resamples, or `None` if it exceeds `u64`.
pub fn count(size: u64, units: usize) -> Option<u64> {
    if units == 0 {
        return Some(u64::from(size == 0));
    }
    // C(size + units − 1, units − 1), multiplied up exactly in u128.
    let k = (units as u64).saturating_sub(1).min(size);
    let top = size + units as u64 - 1;
    let mut c: u128 = 1;
    for i in 0..k as u128 {
        c = c * (top as u128 - i) / (i + 1);
        if c > u64::MAX as u128 {
            return None;
        }
    }
    Some(c as u64)
}

/// Enumeration of every distinct resample of one sample. Replicate `index` is the index-th
/// composition of the sample size over the units in descending lexicographic order (the first
/// puts every draw on the first unit), found directly by unranking, so replicates can be
/// computed in any order and in parallel like sampled ones.
pub struct Exact {
    size: u64,
    ln_p: Vec<f64>,
    ln_size_factorial: f64,
    count: u64,
    total: f64,
}

impl Exact {
    /// The enumeration of a sample with these units, when it has at most `limit` resamples.
    pub fn new(units: Units<'_>, limit: u64) -> Result<Exact, SchemeError> {
        let size = units.total as u64;
        let m = units.base.len();
        let whole = count(size, m);
        match whole {
            Some(c) if c <= limit => Ok(Exact {
                size,
                ln_p: units.base.iter().map(|c| (c / units.total).ln()).collect(),
                ln_size_factorial: ln_factorial(size),
                count: c,
                total: units.total,
            }),
            _ => Err(SchemeError::TooManyToEnumerate { count: whole, limit }),
        }
    }

    /// Write composition `index` into `w`, in O(units² · log size).
    fn unrank(&self, mut index: u64, w: &mut [f64]) {
        let m = w.len();
        let mut left = self.size;
        for (j, wj) in w.iter_mut().enumerate().take(m - 1) {
            // With `left` draws over this unit and the u = m − j − 1 after it, the compositions
            // whose part here exceeds k number Σ_{v>k} C(left − v + u − 1, u − 1), which is
            // C(left − k − 1 + u, u) by the hockey-stick identity: compositions of left − k − 1
            // over u + 1 units. Larger parts come first, so the part of composition `index` is
            // the smallest k with no more than `index` compositions above it.
            let above = |k: u64| {
                if k >= left {
                    0
                } else {
                    count(left - k - 1, m - j).unwrap_or(u64::MAX)
                }
            };
            let (mut lo, mut hi) = (0, left);
            while lo < hi {
                let mid = lo + (hi - lo) / 2;
                if above(mid) <= index {
                    hi = mid;
                } else {
                    lo = mid + 1;
                }
            }
            index -= above(lo);
            *wj = lo as f64;
            left -= lo;
        }
        w[m - 1] = left as f64;
    }

    /// The multinomial probability N!/∏k_j! · ∏(c_j/N)^{k_j} of the composition in `w`.
    fn probability(&self, w: &[f64]) -> f64 {
        let mut lp = self.ln_size_factorial;
        for (k, ln_p) in w.iter().zip(&self.ln_p) {
            if *k > 0.0 {
                lp += k * ln_p - ln_factorial(*k as u64);
            }
        }
        lp.exp()
    }
}

impl Resampler for Exact {
    fn draw(&self, index: u64, _: &mut ChaCha8Rng, w: &mut [f64]) -> Option<f64> {
        self.unrank(index, w);
        Some(self.probability(w))
    }

    /// The nested bootstrap of an enumerated resample is an `iid` one (it is still random).
    fn prepare_within(&self, outer: &[f64], within: &mut Within) {
        iid::prepare_within(self.total, outer, within);
    }

    fn draw_within(&self, outer: &[f64], within: &Within, rng: &mut ChaCha8Rng, w: &mut [f64]) {
        iid::draw_within(self.total, outer, within, rng, w);
    }

    fn enumerated(&self) -> Option<u64> {
        Some(self.count)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_match_the_binomial_coefficients() {
        // docs/references.md: C(2n − 1, n) is 126 for n = 5, 6435 for 8, 92 378 for 10, 1 352 078 for 12.
        assert_eq!(count(5, 5), Some(126));
        assert_eq!(count(8, 8), Some(6435));
        assert_eq!(count(10, 10), Some(92_378));
        assert_eq!(count(12, 12), Some(1_352_078));
    }

    fn units(base: &[f64]) -> Units<'_> {
        Units {
            base,
            total: base.iter().sum(),
            raw: base.iter().all(|b| *b == 1.0),
        }
    }

    #[test]
    fn unranking_visits_each_composition_once_in_descending_order() {
        let base = [2.0, 1.0, 3.0, 1.0];
        let e = Exact::new(units(&base), 1000).unwrap();
        assert_eq!(e.enumerated(), count(7, 4));
        let mut rng = crate::engine::rng::replicate_stream(0, 0);
        let mut previous: Option<Vec<f64>> = None;
        let mut total_p = 0.0;
        for i in 0..e.count {
            let mut w = vec![0.0; 4];
            total_p += e.draw(i, &mut rng, &mut w).unwrap();
            assert_eq!(w.iter().sum::<f64>(), 7.0);
            if let Some(p) = &previous {
                assert!(
                    w.iter().zip(p).find(|(a, b)| a != b).is_some_and(|(a, b)| a < b),
                    "{w:?} after {p:?}"
                );
            }
            previous = Some(w);
        }
        assert_eq!(previous.unwrap(), [0.0, 0.0, 0.0, 7.0], "the last composition");
        // The multinomial probabilities add up to one (rounding of about 1e-15 per term).
        assert!((total_p - 1.0).abs() < 1e-12, "{total_p}");
    }

    #[test]
    fn unranking_a_large_sample_over_few_units_is_quick_and_exact() {
        // Two units with half a million observations each: a million and one compositions, the
        // last of which puts every draw on the second unit.
        let base = [500_000.0, 500_000.0];
        let e = Exact::new(units(&base), 2_000_000).unwrap();
        assert_eq!(e.enumerated(), Some(1_000_001));
        let mut rng = crate::engine::rng::replicate_stream(0, 0);
        let mut w = [0.0; 2];
        for (i, first) in [(0, 1_000_000.0), (1, 999_999.0), (500_000, 500_000.0), (1_000_000, 0.0)] {
            e.draw(i, &mut rng, &mut w);
            assert_eq!(w, [first, 1_000_000.0 - first], "composition {i}");
        }
    }

    #[test]
    fn too_many_resamples_are_refused_with_their_count() {
        assert_eq!(
            Exact::new(units(&[1.0; 12]), 1_000_000).err(),
            Some(SchemeError::TooManyToEnumerate {
                count: Some(1_352_078),
                limit: 1_000_000
            })
        );
    }
}
