//! The jobs the benchmark times, written once: the kernels of one thread, the job of the
//! scaling run, and the common jobs of the capacity table.

use serde_json::json;

use crate::engine::data::Sample;
use crate::engine::driver::shortcut_for;
use crate::engine::interval::{Level, Method};
use crate::engine::job::{Job, Resampled, Samples};
use crate::engine::plan::Resamples;
use crate::engine::scheme::{BlockLength, SchemeSpec};
use crate::engine::statistic::shortcut::Shortcut;
use crate::engine::statistic::StatisticSpec;

/// Seed of every timed job's streams (fixed, so that runs of the same job draw the same rows).
const JOB_SEED: u64 = 1000;

/// The most rows of any job here; the data are drawn once at this size and every job reads a
/// prefix of them.
pub const MOST_ROWS: usize = 1_000_000;

/// What a job's data are.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Values {
    /// Standard normal values.
    Normal,
    /// 1 where the standard normal value is above 0, else 0 (for a proportion).
    Indicator,
}

/// How a kernel computes a replicate, which decides what its rate is counted in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Path {
    /// The mean's shortcut: the resample's rows drawn and their values summed as they come.
    Summed,
    /// The plain path of a statistic without a shortcut: the resample's weights drawn, then
    /// the weighted statistic evaluated.
    Weighted,
    /// The order-statistic shortcut: O(log n) binomial draws, no rows drawn.
    Order,
    /// A share's shortcut: one binomial draw.
    Counted,
}

impl Path {
    /// The path the engine takes for `spec`'s job, asked of the engine's own rule
    /// ([`shortcut_for`]) on the job's data.
    pub fn of(spec: &Spec, normal: &[f64]) -> Path {
        let job = spec.job(normal, 2);
        let Samples::One(one) = &job.samples else {
            unreachable!("a benchmark job has one sample")
        };
        let estimator = job.statistic.build(&one.sample).expect("the benchmark's data suit its statistic");
        match shortcut_for(&job, one, &estimator) {
            Some(Shortcut::Mean { .. }) => Path::Summed,
            Some(Shortcut::Order(_)) => Path::Order,
            Some(Shortcut::Share { .. }) => Path::Counted,
            None => Path::Weighted,
        }
    }

    /// True when a replicate draws its n rows one by one, so that row-draws per second can be
    /// held against the generator's ceiling.
    pub fn draws_rows(self) -> bool {
        !matches!(self, Path::Order | Path::Counted)
    }

    /// A few words on the path, for the report.
    pub fn describe(self) -> &'static str {
        match self {
            Path::Summed => "rows summed as drawn",
            Path::Weighted => "weights, then weighted statistic",
            Path::Order => "binomial splits, O(log n)",
            Path::Counted => "one binomial draw",
        }
    }
}

/// One timed job: its statistic, its data and how it is resampled.
#[derive(Debug, Clone)]
pub struct Spec {
    /// The statistic's wire name (the job's name in the report).
    pub statistic: &'static str,
    /// Rows of data.
    pub n: usize,
    pub values: Values,
    /// The stationary bootstrap's mean block length, for a block job; `None` for `iid`.
    pub mean_block: Option<f64>,
    pub methods: &'static [Method],
}

const PERCENTILE: &[Method] = &[Method::Percentile];
const PERCENTILE_BCA: &[Method] = &[Method::Percentile, Method::Bca];

impl Spec {
    /// An `iid` job with a 95 % percentile interval, on standard normal values.
    const fn iid(statistic: &'static str, n: usize) -> Spec {
        Spec {
            statistic,
            n,
            values: Values::Normal,
            mean_block: None,
            methods: PERCENTILE,
        }
    }

    /// The scheme's wire name.
    pub fn scheme(&self) -> &'static str {
        if self.mean_block.is_some() {
            "stationary_block"
        } else {
            "iid"
        }
    }

    /// The methods' wire names.
    pub fn method_names(&self) -> Vec<&'static str> {
        self.methods.iter().map(|m| m.name()).collect()
    }

    /// The job over the first `n` of `normal` (at least [`Spec::n`] values), drawing `b`
    /// resamples. Its limits are lifted, since the benchmark sizes its own runs.
    pub fn job(&self, normal: &[f64], b: u64) -> Job {
        let rows = &normal[..self.n];
        let x = match self.values {
            Values::Normal => rows.to_vec(),
            Values::Indicator => rows.iter().map(|v| f64::from(u8::from(*v > 0.0))).collect(),
        };
        let sample = Sample::column(x).expect("finite data");
        let scheme = match self.mean_block {
            Some(l) => SchemeSpec::StationaryBlock {
                mean_block_length: BlockLength::Rows(l),
            },
            None => SchemeSpec::Iid {},
        };
        let statistic: StatisticSpec = serde_json::from_value(json!({ "name": self.statistic })).expect("a statistic of the catalogue");
        let mut job = Job::new(Samples::One(Resampled { sample, scheme }), statistic, JOB_SEED);
        job.resamples = Resamples::Fixed(b);
        job.methods = self.methods.to_vec();
        job.levels = vec![Level::new(0.95).expect("a level")];
        job.max_resamples = u64::MAX;
        job.max_work = f64::MAX;
        job
    }
}

/// The kernels timed on one thread: the mean's and the median's shortcuts at two sizes, and two
/// statistics of the plain path (how each computes a replicate is [`Path::of`]).
pub fn kernels() -> Vec<Spec> {
    vec![
        Spec::iid("mean", 10_000),
        Spec::iid("mean", MOST_ROWS),
        Spec::iid("variance", 10_000),
        Spec::iid("trimmed_mean", 10_000),
        Spec::iid("median", 10_000),
        Spec::iid("median", MOST_ROWS),
    ]
}

/// The job of the scaling run: the mean of 10 000 values.
pub fn scaling() -> Spec {
    Spec::iid("mean", 10_000)
}

/// The common jobs of the capacity table.
pub fn capacity() -> Vec<Spec> {
    vec![
        Spec::iid("mean", 10_000),
        Spec::iid("median", 10_000),
        Spec::iid("median", MOST_ROWS),
        Spec {
            values: Values::Indicator,
            ..Spec::iid("proportion", 10_000)
        },
        Spec {
            mean_block: Some(50.0),
            ..Spec::iid("mean", 100_000)
        },
        Spec {
            methods: PERCENTILE_BCA,
            ..Spec::iid("mean", 10_000)
        },
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The paths the report names are the engine's own choices on the benchmark's jobs.
    #[test]
    fn each_job_takes_the_path_the_engine_chooses() {
        let normal: Vec<f64> = (0..MOST_ROWS).map(|i| ((i * 7919) % 1000) as f64 / 100.0 - 5.0).collect();
        let paths: Vec<Path> = kernels().iter().map(|s| Path::of(s, &normal)).collect();
        use Path::*;
        assert_eq!(paths, [Summed, Summed, Weighted, Weighted, Order, Order]);
        let share = Spec {
            values: Values::Indicator,
            ..Spec::iid("proportion", 1000)
        };
        assert_eq!(Path::of(&share, &normal), Counted);
        let blocks = Spec {
            mean_block: Some(50.0),
            ..Spec::iid("mean", 1000)
        };
        assert_eq!(Path::of(&blocks, &normal), Weighted, "a block scheme takes no shortcut");
    }
}
