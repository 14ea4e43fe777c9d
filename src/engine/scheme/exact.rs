//! Exact enumeration of every distinct `iid` resample (Fisher, N. I. & Hall, P. (1991),
//! "Bootstrap algorithms for small samples", J. Statist. Plann. Inference 27).
//!
//! A resample of N observations over m units is a composition (k₁, …, k_m) of N; it occurs
//! with multinomial probability N!/∏k_j! · ∏(c_j/N)^{k_j}. There are C(N + m − 1, m − 1) of them
//! (C(2n − 1, n) for n raw rows: 126 for n = 5, 92 378 for n = 10), so this is for small
//! samples only, where it removes Monte Carlo error entirely.

use statrs::function::factorial::ln_factorial;

/// The number of distinct resamples, or `None` if it exceeds `u64`.
pub fn count(size: u64, units: usize) -> Option<u64> {
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

/// Visits every composition of `size` into `mass.len()` parts with its probability, in a fixed
/// (reverse lexicographic) order. `visit` receives the weights and the probability and returns
/// false to stop early (deadline, cancellation).
pub fn enumerate(size: u64, mass: &[f64], total: f64, mut visit: impl FnMut(&[f64], f64) -> bool) {
    let m = mass.len();
    if m == 0 {
        return;
    }
    let ln_p: Vec<f64> = mass.iter().map(|c| (c / total).ln()).collect();
    let ln_n_fact = ln_factorial(size);
    let mut k = vec![0u64; m];
    k[0] = size;
    let mut w = vec![0.0; m];
    loop {
        let mut lp = ln_n_fact;
        for j in 0..m {
            w[j] = k[j] as f64;
            if k[j] > 0 {
                lp += k[j] as f64 * ln_p[j] - ln_factorial(k[j]);
            }
        }
        if !visit(&w, lp.exp()) {
            return;
        }
        // Next composition: move one unit of mass rightwards from the rightmost non-last
        // non-empty part, gathering whatever sat in the last part.
        let t = k[m - 1];
        k[m - 1] = 0;
        let Some(j) = (0..m - 1).rev().find(|&j| k[j] > 0) else { return };
        k[j] -= 1;
        k[j + 1] = t + 1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_match_the_binomial_coefficients() {
        // REFERENCES.md: C(2n − 1, n) is 126 for n = 5, 6435 for 8, 92 378 for 10, 1 352 078 for 12.
        assert_eq!(count(5, 5), Some(126));
        assert_eq!(count(8, 8), Some(6435));
        assert_eq!(count(10, 10), Some(92_378));
        assert_eq!(count(12, 12), Some(1_352_078));
    }

    #[test]
    fn enumeration_visits_each_once_and_probabilities_add_to_one() {
        let mut seen = 0u64;
        let mut total_p = 0.0;
        enumerate(6, &[1.0; 6], 6.0, |w, p| {
            assert_eq!(w.iter().sum::<f64>(), 6.0);
            seen += 1;
            total_p += p;
            true
        });
        assert_eq!(seen, count(6, 6).unwrap());
        assert!((total_p - 1.0).abs() < 1e-12);
    }
}
