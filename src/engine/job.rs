//! A job: a plain description of the work, built by the service or the command line, with every
//! default written once here.

use crate::engine::data::Sample;
use crate::engine::interval::{Level, Method, DEFAULT_LEVEL, DEFAULT_METHODS};
use crate::engine::plan::{OnTimeLimit, Resamples, Stop, DEFAULT_RESAMPLES};
use crate::engine::scheme::SchemeSpec;
use crate::engine::statistic::StatisticSpec;

/// Default inner resamples of the nested bootstrap for studentized intervals (Davison &
/// Hinkley 1997 §5.2.1 suggest 25–50 are enough for a standard error; common practice).
pub const DEFAULT_INNER_RESAMPLES: u64 = 50;

crate::whole_number! {
    /// The nested bootstrap size for studentized intervals of statistics without an analytic
    /// standard error: 10 to 1000.
    pub struct InnerResamples where 10 <= x <= 1000, "the nested bootstrap size, a whole number from 10 to 1000";
}

impl Default for InnerResamples {
    fn default() -> Self {
        InnerResamples::new(DEFAULT_INNER_RESAMPLES).expect("in range")
    }
}

crate::wire_enum! {
    /// An optional part of the result.
    pub enum Include {
        /// Edges, counts and mass of the replicate distribution.
        Histogram = "histogram",
        /// A downsampled empirical distribution function of the replicates.
        Cdf = "cdf",
        /// Every replicate value, in stream order.
        Replicates = "replicates",
    }
}

crate::wire_enum! {
    /// How a two-sample job compares its samples.
    pub enum Contrast {
        /// The candidate's statistic minus the baseline's.
        Difference = "difference",
        /// The candidate's statistic over the baseline's.
        Ratio = "ratio",
    }
}

impl Contrast {
    /// The contrast of the candidate's value `c` with the baseline's `b`. A ratio reads as
    /// "candidate over baseline" only for a positive baseline and a candidate of 0 or more:
    /// otherwise it is undefined (NaN), so that a resample whose baseline crosses 0 is counted
    /// undefined rather than read as a huge change of the opposite sign.
    pub fn of(self, c: f64, b: f64) -> f64 {
        match self {
            Contrast::Difference => c - b,
            Contrast::Ratio if b > 0.0 && c >= 0.0 => c / b,
            Contrast::Ratio => f64::NAN,
        }
    }
}

/// A sample with the scheme that resamples it. Whatever a scheme reads beside the values (the
/// group labels of strata or clusters) is per-row data of this sample, so it travels here.
#[derive(Debug, Clone)]
pub struct Resampled {
    pub sample: Sample,
    pub scheme: SchemeSpec,
}

impl Resampled {
    /// A sample resampled by the default scheme.
    pub fn iid(sample: Sample) -> Self {
        Resampled {
            sample,
            scheme: SchemeSpec::default(),
        }
    }
}

/// The samples of a job.
#[derive(Debug, Clone)]
pub enum Samples {
    /// One sample and the statistic of it.
    One(Resampled),
    /// Two samples, each resampled by its own scheme from its own streams, and a contrast of the
    /// statistic between them.
    Two {
        baseline: Resampled,
        candidate: Resampled,
        contrast: Contrast,
        /// The samples' rows are pairs (runs interleaved on one machine), resampled together
        /// from one stream by the baseline's scheme.
        paired: bool,
    },
}

impl Samples {
    /// The samples, baseline first.
    pub fn all(&self) -> Vec<&Resampled> {
        match self {
            Samples::One(s) => vec![s],
            Samples::Two { baseline, candidate, .. } => vec![baseline, candidate],
        }
    }
}

/// One job.
#[derive(Debug, Clone)]
pub struct Job {
    pub samples: Samples,
    pub statistic: StatisticSpec,
    pub resamples: Resamples,
    pub seed: u64,
    pub levels: Vec<Level>,
    pub methods: Vec<Method>,
    pub include: Vec<Include>,
    pub inner_resamples: InnerResamples,
    pub on_time_limit: OnTimeLimit,
    /// The most resamples the job may draw (and enumerate).
    pub max_resamples: u64,
    /// The most work (row-draws, see [`crate::engine::cost`]) the job may take.
    pub max_work: f64,
    /// Set when replaying a token: the stop the original run reported, so that the replay
    /// (which draws exactly the recorded number of resamples) reports the same.
    pub recorded_stop: Option<Stop>,
    /// Compute `iid` replicates by the exact shortcuts of [`crate::engine::statistic::shortcut`] where a
    /// statistic has one (always, but for tests that hold them against the plain path).
    pub shortcuts: bool,
}

/// The default most resamples of a job.
pub const DEFAULT_MAX_RESAMPLES: u64 = 1_000_000;
/// The default most work of a job, in row-draws.
pub const DEFAULT_MAX_WORK: f64 = 2e10;

impl Job {
    /// A job with the defaults for everything but the samples, the statistic and the seed.
    pub fn new(samples: Samples, statistic: StatisticSpec, seed: u64) -> Self {
        Job {
            samples,
            statistic,
            resamples: Resamples::Fixed(DEFAULT_RESAMPLES),
            seed,
            levels: vec![Level::new(DEFAULT_LEVEL).expect("in range")],
            methods: DEFAULT_METHODS.to_vec(),
            include: Vec::new(),
            inner_resamples: InnerResamples::default(),
            on_time_limit: OnTimeLimit::Fail,
            max_resamples: DEFAULT_MAX_RESAMPLES,
            max_work: DEFAULT_MAX_WORK,
            recorded_stop: None,
            shortcuts: true,
        }
    }

    /// True when the job asks for this method.
    pub fn wants(&self, method: Method) -> bool {
        self.methods.contains(&method)
    }

    /// True when studentized intervals are asked for and need a nested bootstrap: the statistic
    /// has no analytic standard error, or paired samples (whose covariance no analytic form
    /// here knows) are compared.
    pub fn nested_studentized(&self) -> bool {
        let paired = matches!(self.samples, Samples::Two { paired: true, .. });
        self.wants(Method::Studentized) && (paired || !self.statistic.has_analytic_se() || !self.analytic_se_applies())
    }

    /// True when every sample's scheme draws rows independently (`iid`, `bayesian`): only then
    /// do the statistics' analytic standard errors, which assume it, apply.
    pub fn analytic_se_applies(&self) -> bool {
        self.samples.all().iter().all(|s| s.scheme.analytic_se_applies())
    }

    /// True when the job asks for this part of the result.
    pub fn includes(&self, part: Include) -> bool {
        self.include.contains(&part)
    }
}
