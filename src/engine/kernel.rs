//! The replicate kernel: what one replicate computes, for one sample or for the contrast of two.
//!
//! Replicate `i` of sample `k` draws only from [`sample_stream`]`(seed, k, i)`, so a result
//! depends on (seed, data, parameters) alone. Everything a worker needs per replicate lives in
//! its [`Worker`], so nothing is allocated inside the replicate loop.

use rand_chacha::ChaCha8Rng;

use crate::engine::data::{ColumnLayout, Sample};
use crate::engine::executor::Replicate;
use crate::engine::job::Contrast;
use crate::engine::rng::sample_stream;
use crate::engine::scheme::{Resampler, Within};
use crate::engine::statistic::shortcut::Shortcut;
use crate::engine::statistic::{Estimator, Scratch, Units, Weighted};

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
    /// How its `iid` replicates are computed without weights, where the statistic has a way.
    pub shortcut: Option<Shortcut>,
}

impl Arm {
    fn units(&self) -> usize {
        self.estimator.units().base.len()
    }

    /// The shortcut and the column it reads, when it gives all that a replicate needs: for
    /// `studentized`, a standard error too, which a shortcut gives analytically, so only where
    /// `analytic` standard errors apply (else the nested bootstrap needs the resample itself).
    pub fn shortcut(&self, studentized: bool, analytic: bool) -> Option<(&Shortcut, &ColumnLayout)> {
        let s = self.shortcut.as_ref().filter(|s| !studentized || (analytic && s.gives_se()))?;
        Some((s, self.estimator.column()?))
    }
}

/// Two statistics whose samples share their rows (paired runs), as one function of weights
/// over the rows: each sample's units get the weight of their row.
pub struct Pair {
    pub baseline: Estimator,
    pub candidate: Estimator,
    pub contrast: Contrast,
    /// The unit of each row, per sample.
    unit_of_row: [Vec<u32>; 2],
    /// Every row's base weight, 1.
    rows: Vec<f64>,
}

impl Pair {
    /// Pair two statistics, each with the sample it was built from (baseline first), whose
    /// samples have the same rows; `None` when a sample has no rows (aggregated data) or their
    /// numbers differ.
    pub fn new([(baseline, bs), (candidate, cs)]: [(Estimator, &Sample); 2], contrast: Contrast) -> Option<Pair> {
        let (b, c) = (baseline.unit_of_row(bs)?, candidate.unit_of_row(cs)?);
        (b.len() == c.len()).then(|| Pair {
            rows: vec![1.0; b.len()],
            unit_of_row: [b, c],
            baseline,
            candidate,
            contrast,
        })
    }
}

impl Weighted for Pair {
    fn units(&self) -> Units<'_> {
        Units {
            base: &self.rows,
            total: self.rows.len() as f64,
            raw: true,
        }
    }

    fn evaluate(&self, w: &[f64], scratch: &mut Scratch) -> f64 {
        let [mut wb, mut wc] = std::mem::take(&mut scratch.pair);
        let mut side = |est: &Estimator, map: &[u32], buf: &mut Vec<f64>| {
            buf.clear();
            buf.resize(est.units().base.len(), 0.0);
            for (row, unit) in map.iter().enumerate() {
                buf[*unit as usize] += w[row];
            }
            est.evaluate(buf, scratch)
        };
        let b = side(&self.baseline, &self.unit_of_row[0], &mut wb);
        let c = side(&self.candidate, &self.unit_of_row[1], &mut wc);
        scratch.pair = [wb, wc];
        self.contrast.of(c, b)
    }
}

/// What a job resamples.
pub enum Target {
    One(Arm),
    /// Two samples, each from its own streams.
    Two {
        baseline: Arm,
        candidate: Arm,
        contrast: Contrast,
    },
    /// Two samples whose rows are resampled together, from one stream.
    Paired {
        pair: Pair,
        rows: Box<dyn Resampler>,
    },
}

impl Target {
    /// The arms that resample on their own, baseline first (none for pairs).
    pub fn arms(&self) -> Vec<&Arm> {
        match self {
            Target::One(a) => vec![a],
            Target::Two { baseline, candidate, .. } => vec![baseline, candidate],
            Target::Paired { .. } => vec![],
        }
    }

    /// The statistics, baseline first.
    pub fn estimators(&self) -> Vec<&Estimator> {
        match self {
            Target::Paired { pair, .. } => vec![&pair.baseline, &pair.candidate],
            _ => self.arms().into_iter().map(|a| &a.estimator).collect(),
        }
    }

    /// The resamplers, one per independent part.
    pub fn resamplers(&self) -> Vec<&dyn Resampler> {
        match self {
            Target::Paired { rows, .. } => vec![rows.as_ref()],
            _ => self.arms().into_iter().map(|a| a.resampler.as_ref()).collect(),
        }
    }
}

/// Per-worker buffers, sized on first use: a worker of a job whose replicates all take a
/// shortcut never allocates weights (a median of 10⁷ rows would otherwise hold 80 MB per worker).
pub struct Worker {
    /// One weight vector per arm.
    w: [Vec<f64>; 2],
    /// The size of each arm's weight vector.
    sizes: [usize; 2],
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
    /// True when the statistics' analytic standard errors apply (the scheme draws rows
    /// independently); else every standard error comes from the nested bootstrap.
    pub analytic: bool,
}

impl Kernel<'_> {
    pub fn worker(&self) -> Worker {
        let sizes: Vec<usize> = match self.target {
            Target::Paired { pair, .. } => vec![pair.units().base.len()],
            _ => self.target.arms().iter().map(|a| a.units()).collect(),
        };
        Worker {
            w: [Vec::new(), Vec::new()],
            sizes: [sizes[0], sizes.get(1).copied().unwrap_or(0)],
            w_inner: Vec::new(),
            within: Within::default(),
            inner_values: Vec::new(),
            scratch: Scratch::default(),
        }
    }

    /// Replicate `i`; `None` when `stop` said to stop during its nested bootstrap.
    pub fn replicate(&self, i: u64, wk: &mut Worker, stop: &dyn Fn() -> bool) -> Option<Replicate> {
        match self.target {
            Target::One(arm) => {
                let (value, se, probability) = self.arm_replicate(arm, i, wk, stop)?;
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
                let (b, se_b, p_b) = self.arm_replicate(baseline, ib, wk, stop)?;
                let (c, se_c, p_c) = self.arm_replicate(candidate, ic, wk, stop)?;
                Some(Replicate {
                    value: contrast.of(c, b),
                    se: contrast_se(*contrast, (c, se_c), (b, se_b)),
                    probability: p_b * p_c,
                })
            }
            Target::Paired { pair, rows } => {
                let (value, se, probability) = self.part_replicate(pair, rows.as_ref(), 0, i, wk, stop)?;
                Some(Replicate { value, se, probability })
            }
        }
    }

    /// Replicate `i` of one sample: by its shortcut where it has one, else by the plain path.
    fn arm_replicate(&self, arm: &Arm, i: u64, wk: &mut Worker, stop: &dyn Fn() -> bool) -> Option<(f64, f64, f64)> {
        match arm.shortcut(self.studentized, self.analytic) {
            Some((shortcut, column)) => {
                let mut rng = sample_stream(self.seed, arm.stream, i);
                let (value, se) = shortcut.replicate(column, &mut rng, self.studentized);
                Some((value, se, 1.0))
            }
            None => self.part_replicate(&arm.estimator, arm.resampler.as_ref(), arm.stream, i, wk, stop),
        }
    }

    /// The value, standard error and probability of replicate `i` of one independently
    /// resampled part (a sample, or a pair of samples sharing rows), drawn from stream `stream`
    /// into the weight slot of the same number.
    fn part_replicate(
        &self,
        part: &dyn Weighted,
        resampler: &dyn Resampler,
        stream: u8,
        i: u64,
        wk: &mut Worker,
        stop: &dyn Fn() -> bool,
    ) -> Option<(f64, f64, f64)> {
        let k = usize::from(stream);
        wk.w[k].resize(wk.sizes[k], 0.0);
        let mut rng = sample_stream(self.seed, stream, i);
        let probability = resampler.draw(i, &mut rng, &mut wk.w[k]).unwrap_or(1.0);
        let value = part.evaluate(&wk.w[k], &mut wk.scratch);
        let se = if self.studentized {
            self.standard_error(part, resampler, k, &mut rng, wk, stop)?
        } else {
            f64::NAN
        };
        Some((value, se, probability))
    }

    /// The standard error on the resample in weight slot `k`: analytic where there is one,
    /// else the standard deviation of `inner` resamples drawn from within the resample by the
    /// same scheme (continuing the replicate's own stream, so it stays reproducible). `None`
    /// when `stop` said to stop.
    fn standard_error(
        &self,
        part: &dyn Weighted,
        resampler: &dyn Resampler,
        k: usize,
        rng: &mut ChaCha8Rng,
        wk: &mut Worker,
        stop: &dyn Fn() -> bool,
    ) -> Option<f64> {
        if let Some(se) = self.analytic.then(|| part.analytic_se(&wk.w[k])).flatten() {
            return Some(se);
        }
        let units = part.units().base.len();
        // Sized here, on first use: only a nested bootstrap needs it.
        wk.w_inner.resize(units.max(wk.w_inner.len()), 0.0);
        resampler.prepare_within(&wk.w[k], &mut wk.within);
        wk.inner_values.clear();
        for j in 0..self.inner {
            // A nested bootstrap can be long: look at the deadline every few inner resamples.
            if j % 8 == 7 && stop() {
                return None;
            }
            let inner = &mut wk.w_inner[..units];
            resampler.draw_within(&wk.w[k], &wk.within, rng, inner);
            let v = part.evaluate(inner, &mut wk.scratch);
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
