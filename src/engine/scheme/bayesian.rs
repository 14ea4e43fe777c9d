//! The Bayesian bootstrap: Dirichlet(1, …, 1) weights on the observations (Rubin 1981).
//! Weights are scaled to add up to the sample size n so that statistics which use the
//! resample size (trimming, ddof) read the same n as under `iid`.

use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Exp1, Gamma};

use super::{Resampler, Within};
use crate::engine::statistic::Units;

/// The Bayesian bootstrap of one sample.
pub struct Bayesian {
    base: Vec<f64>,
    total: f64,
    raw: bool,
}

impl Bayesian {
    pub fn new(units: Units<'_>) -> Self {
        Bayesian {
            base: units.base.to_vec(),
            total: units.total,
            raw: units.raw,
        }
    }
}

impl Resampler for Bayesian {
    fn draw(&self, _: u64, rng: &mut ChaCha8Rng, w: &mut [f64]) -> Option<f64> {
        if self.raw {
            draw_rows(rng, w);
        } else {
            draw_counts(rng, &self.base, self.total, w);
        }
        None
    }

    fn prepare_within(&self, outer: &[f64], within: &mut Within) {
        within.total = outer.iter().sum();
    }

    /// The Bayesian bootstrap of the resample: its weights act as counts, as aggregated data's
    /// do, so each unit gets a Gamma(weight, 1) share, scaled to add up to n.
    fn draw_within(&self, outer: &[f64], _: &Within, rng: &mut ChaCha8Rng, w: &mut [f64]) {
        draw_counts(rng, outer, self.total, w);
    }
}

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
/// so each distinct value needs one variate (none for a unit of weight 0).
pub fn draw_counts(rng: &mut ChaCha8Rng, counts: &[f64], total: f64, w: &mut [f64]) {
    let mut s = 0.0;
    for (wi, c) in w.iter_mut().zip(counts) {
        let g: f64 = if *c == 1.0 {
            Exp1.sample(rng)
        } else if *c > 0.0 {
            Gamma::new(*c, 1.0).expect("c > 0").sample(rng)
        } else {
            0.0
        };
        *wi = g;
        s += g;
    }
    let scale = total / s;
    for wi in w.iter_mut() {
        *wi *= scale;
    }
}
