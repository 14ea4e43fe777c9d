//! The Bayesian bootstrap: Dirichlet(1, …, 1) weights on the observations (Rubin 1981).
//! Weights are scaled to add up to the sample size n so that statistics which use the
//! resample size (trimming, ddof) read the same n as under `iid`.

use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Exp1, Gamma};

/// One Exp(1) per row, normalised: a Dirichlet(1, …, 1) draw.
pub fn draw_rows(rng: &mut ChaCha8Rng, w: &mut [f64]) {
    let mut s = 0.0;
    for wi in w.iter_mut() {
        let e: f64 = Exp1.sample(rng);
        *wi = e;
        s += e;
    }
    let scale = w.len() as f64 / s;
    for wi in w.iter_mut() {
        *wi *= scale;
    }
}

/// Aggregated data: the Dirichlet weight of c identical observations summed is Gamma(c, 1),
/// so each distinct value needs one variate.
pub fn draw_counts(rng: &mut ChaCha8Rng, counts: &[f64], total: f64, w: &mut [f64]) {
    let mut s = 0.0;
    for (wi, c) in w.iter_mut().zip(counts) {
        let g: f64 = if *c == 1.0 {
            Exp1.sample(rng)
        } else {
            Gamma::new(*c, 1.0).expect("c > 0").sample(rng)
        };
        *wi = g;
        s += g;
    }
    let scale = total / s;
    for wi in w.iter_mut() {
        *wi *= scale;
    }
}
