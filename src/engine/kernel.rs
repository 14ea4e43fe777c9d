//! The replicate kernel: what one replicate computes, for one sample or for the contrast of two.
//!
//! Replicate `i` of sample `k` draws only from [`sample_stream`]`(seed, k, i)`, so a result
//! depends on (seed, data, parameters) alone. Everything a worker needs per replicate lives in
//! its [`Worker`], so nothing is allocated inside the replicate loop.

use rand_chacha::ChaCha8Rng;

use crate::engine::executor::Replicate;
use crate::engine::job::Contrast;
use crate::engine::rng::sample_stream;
use crate::engine::scheme::{Resampler, Within};
use crate::engine::statistic::{Estimator, Scratch};

crate::wire_enum! {
    /// How a studentized interval had each resample's standard error.
    pub enum SeSource {
        /// The statistic's analytic (delta-method or plug-in) standard error.
        Analytic = "analytic",
        /// A nested bootstrap of each resample, of `inner_resamples` resamples.
        Nested = "nested",
    }
}

/// One sample of a job, ready to resample.
pub struct Arm {
    pub estimator: Estimator,
    pub resampler: Box<dyn Resampler>,
    /// The sample's number, which picks its streams.
    pub stream: u8,
}

impl Arm {
    fn units(&self) -> usize {
        self.estimator.units().base.len()
    }
}

/// What a job resamples.
pub enum Target {
    One(Arm),
    Two { baseline: Arm, candidate: Arm, contrast: Contrast },
}

impl Target {
    /// The arms, baseline first.
    pub fn arms(&self) -> Vec<&Arm> {
        match self {
            Target::One(a) => vec![a],
            Target::Two { baseline, candidate, .. } => vec![baseline, candidate],
        }
    }
}

/// Per-worker buffers.
pub struct Worker {
    /// One weight vector per arm.
    w: [Vec<f64>; 2],
    w_inner: Vec<f64>,
    within: Within,
    inner_values: Vec<f64>,
    scratch: Scratch,
}

/// The replicate kernel of a job.
pub struct Kernel<'a> {
    pub target: &'a Target,
    pub seed: u64,
    /// Compute a standard error per replicate (studentized intervals).
    pub studentized: bool,
    /// Inner resamples of the nested bootstrap.
    pub inner: usize,
}

impl Kernel<'_> {
    pub fn worker(&self) -> Worker {
        let units = self.target.arms().iter().map(|a| a.units()).max().unwrap_or(0);
        let arms = self.target.arms();
        Worker {
            w: [vec![0.0; arms[0].units()], arms.get(1).map_or(Vec::new(), |a| vec![0.0; a.units()])],
            w_inner: vec![0.0; units],
            within: Within::default(),
            inner_values: Vec::new(),
            scratch: Scratch::with_units(units),
        }
    }

    /// Replicate `i`; `None` when `stop` said to stop during its nested bootstrap.
    pub fn replicate(&self, i: u64, wk: &mut Worker, stop: &dyn Fn() -> bool) -> Option<Replicate> {
        match self.target {
            Target::One(arm) => {
                let (value, se, probability) = self.arm_replicate(arm, i, 0, wk, stop)?;
                Some(Replicate { value, se, probability })
            }
            Target::Two {
                baseline,
                candidate,
                contrast,
            } => {
                // An enumeration of two samples visits every pair: baseline-major order.
                let per_baseline = candidate.resampler.enumerated().unwrap_or(1);
                let (ib, ic) = match candidate.resampler.enumerated() {
                    Some(_) => (i / per_baseline, i % per_baseline),
                    None => (i, i),
                };
                let (b, se_b, p_b) = self.arm_replicate(baseline, ib, 0, wk, stop)?;
                let (c, se_c, p_c) = self.arm_replicate(candidate, ic, 1, wk, stop)?;
                Some(Replicate {
                    value: contrast.of(c, b),
                    se: contrast_se(*contrast, (c, se_c), (b, se_b)),
                    probability: p_b * p_c,
                })
            }
        }
    }

    /// One arm's value, standard error and probability for its replicate `i`, in weight slot `k`.
    fn arm_replicate(&self, arm: &Arm, i: u64, k: usize, wk: &mut Worker, stop: &dyn Fn() -> bool) -> Option<(f64, f64, f64)> {
        let mut rng = sample_stream(self.seed, arm.stream, i);
        let probability = arm.resampler.draw(i, &mut rng, &mut wk.w[k]).unwrap_or(1.0);
        let value = arm.estimator.evaluate(&wk.w[k], &mut wk.scratch);
        let se = if self.studentized {
            self.standard_error(arm, k, &mut rng, wk, stop)?
        } else {
            f64::NAN
        };
        Some((value, se, probability))
    }

    /// The standard error of the statistic on the resample in weight slot `k`: analytic where
    /// the statistic has one, else the standard deviation of `inner` resamples drawn from within
    /// the resample by the same scheme (continuing the replicate's own stream, so it stays
    /// reproducible). `None` when `stop` said to stop.
    fn standard_error(&self, arm: &Arm, k: usize, rng: &mut ChaCha8Rng, wk: &mut Worker, stop: &dyn Fn() -> bool) -> Option<f64> {
        if let Some(se) = arm.estimator.analytic_se(&wk.w[k]) {
            return Some(se);
        }
        let units = arm.units();
        arm.resampler.prepare_within(&wk.w[k], &mut wk.within);
        wk.inner_values.clear();
        for j in 0..self.inner {
            // A nested bootstrap can be long: look at the deadline every few inner resamples.
            if j % 8 == 7 && stop() {
                return None;
            }
            let inner = &mut wk.w_inner[..units];
            arm.resampler.draw_within(&wk.w[k], &wk.within, rng, inner);
            let v = arm.estimator.evaluate(inner, &mut wk.scratch);
            if v.is_finite() {
                wk.inner_values.push(v);
            }
        }
        Some(sd(&wk.inner_values))
    }
}

/// Standard deviation with divisor k − 1; NaN with fewer than two values.
fn sd(values: &[f64]) -> f64 {
    let k = values.len() as f64;
    if k < 2.0 {
        return f64::NAN;
    }
    let m = values.iter().sum::<f64>() / k;
    (values.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / (k - 1.0)).sqrt()
}

/// The standard error of a contrast of two independent estimates c (candidate) and b
/// (baseline) with standard errors: √(se_c² + se_b²) for a difference, and by the delta method
/// √(se_c² + r²·se_b²)/|b| with r = c/b for a ratio (common practice).
pub fn contrast_se(contrast: Contrast, (c, se_c): (f64, f64), (b, se_b): (f64, f64)) -> f64 {
    match contrast {
        Contrast::Difference => se_c.hypot(se_b),
        Contrast::Ratio => se_c.hypot(c / b * se_b) / b.abs(),
    }
}
