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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::rng::replicate_stream;

    #[test]
    fn a_nested_draw_keeps_the_size_and_the_empty_units_and_centres_on_the_resample() {
        // Outer weights with an empty unit, as a resample can have.
        let outer = [2.5, 0.0, 1.0, 4.5, 2.0];
        let n: f64 = outer.iter().sum();
        let b = Bayesian {
            base: vec![1.0; 5],
            total: n,
            raw: true,
        };
        let mut within = Within::default();
        b.prepare_within(&outer, &mut within);
        let (draws, mut mean) = (20_000, [0.0; 5]);
        let mut rng = replicate_stream(3, 0);
        let mut w = [0.0; 5];
        for _ in 0..draws {
            b.draw_within(&outer, &within, &mut rng, &mut w);
            assert!((w.iter().sum::<f64>() - n).abs() < 1e-9, "the weights add up to n");
            assert_eq!(w[1], 0.0, "a unit the resample left out stays out");
            for (m, x) in mean.iter_mut().zip(&w) {
                *m += x / draws as f64;
            }
        }
        // Dirichlet(α) has mean α/Σα, so the weights average to the outer ones. Their sd is
        // n·√(p(1 − p)/(Σα + 1)) ≤ 10·√(0.25/11) = 1.51 each, so the mean of 20 000 draws is
        // within 4 × 1.51/√20 000 = 0.043 of its expectation.
        for (m, o) in mean.iter().zip(&outer) {
            assert!((m - o).abs() < 0.043, "{m} vs {o}");
        }
    }
}
