//! The driver: draws the replicates in parallel, reduces them in replicate order, and builds
//! the result with its intervals and diagnostics.
//!
//! Replicates are computed in *waves*: each wave is a contiguous range of replicate indices
//! computed in parallel on the current rayon pool, and the deadline and cancel flag are checked
//! between waves. Whatever happens, the replicates done form a prefix 0..k of the same
//! streams, so a partial result equals a full run with k resamples. Wave sizes adapt so that a
//! wave takes about [`WAVE_TARGET`]: long enough to keep every thread busy, short enough that a
//! deadline is noticed within tens of milliseconds.

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

use rand::Rng;
use rayon::prelude::*;

use crate::engine::data::{Prepared, Sample};
use crate::engine::diagnostics::{self, Facts, Warning};
use crate::engine::interval::{self, bca, Endpoints, Method, ReplicateDistribution};
use crate::engine::jackknife::{self, JackknifeKind};
use crate::engine::montecarlo;
use crate::engine::rng::replicate_stream;
use crate::engine::scheme::{self, exact, iid, SchemeSpec};
use crate::engine::statistic::{self, DataLocation, DataProblem, Scratch, Statistic, StatisticSpec};

/// How long a wave of replicates should take.
pub const WAVE_TARGET: Duration = Duration::from_millis(25);
/// Default inner resamples of the nested bootstrap for studentized intervals (Davison &
/// Hinkley 1997 §5.2.1 suggest 25–50 are enough for a standard error; common practice).
pub const DEFAULT_INNER_RESAMPLES: usize = 50;

/// How many resamples to draw.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Resamples {
    Fixed(u64),
    /// Grow (doubling from 1000) until every endpoint's Monte Carlo error is below
    /// `target` × the standard error, or a limit is reached.
    Auto {
        target: f64,
    },
    /// Enumerate every distinct resample with its probability.
    Exact,
}

/// What to do when the deadline passes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OnTimeLimit {
    Fail,
    Partial,
}

/// Optional parts of the result.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Include {
    pub histogram: bool,
    pub cdf: bool,
    pub replicates: bool,
}

/// Why the run stopped drawing.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stop {
    /// The requested (or enumerated) resamples are all done.
    Done,
    /// The deadline passed; the result covers the prefix done (`on_time_limit: "partial"`).
    TimeLimit,
    /// `"auto"` reached its Monte Carlo target.
    AutoTarget,
    /// `"auto"` reached the resample limit before its target.
    AutoLimit,
    /// `"auto"` ran out of time before its target.
    AutoTime,
}

impl Stop {
    pub fn name(&self) -> &'static str {
        match self {
            Stop::Done => "done",
            Stop::TimeLimit => "time_limit",
            Stop::AutoTarget => "auto_target",
            Stop::AutoLimit => "auto_limit",
            Stop::AutoTime => "auto_time",
        }
    }
    pub fn from_name(s: &str) -> Option<Stop> {
        [Stop::Done, Stop::TimeLimit, Stop::AutoTarget, Stop::AutoLimit, Stop::AutoTime]
            .into_iter()
            .find(|x| x.name() == s)
    }
}

/// One interval job: a plain description of the work, built by the API or the CLI.
#[derive(Debug, Clone)]
pub struct Job {
    pub sample: Sample,
    pub statistic: StatisticSpec,
    pub resamples: Resamples,
    pub seed: u64,
    pub levels: Vec<f64>,
    pub methods: Vec<Method>,
    pub scheme: SchemeSpec,
    pub include: Include,
    pub inner_resamples: usize,
    pub max_resamples: u64,
    pub deadline: Option<Instant>,
    pub on_time_limit: OnTimeLimit,
    pub cancel: Option<Arc<AtomicBool>>,
    /// Set when replaying a token: the stop the original run reported, so that the replay
    /// (which draws exactly the recorded number of resamples) reports the same.
    pub recorded_stop: Option<Stop>,
    /// Stop as if the time limit had passed once this many replicates are done (a test hook
    /// that makes partial results deterministic).
    pub replicate_cap: Option<u64>,
}

impl Job {
    /// A job with the service's defaults for everything but the data and statistic.
    pub fn new(sample: Sample, statistic: StatisticSpec, seed: u64) -> Self {
        Job {
            sample,
            statistic,
            resamples: Resamples::Fixed(2000),
            seed,
            levels: vec![0.95],
            methods: vec![Method::Percentile, Method::Bca],
            scheme: SchemeSpec::Iid,
            include: Include::default(),
            inner_resamples: DEFAULT_INNER_RESAMPLES,
            max_resamples: 1_000_000,
            deadline: None,
            on_time_limit: OnTimeLimit::Fail,
            cancel: None,
            recorded_stop: None,
            replicate_cap: None,
        }
    }
}

/// One interval of the result.
#[derive(Debug, Clone, PartialEq)]
pub struct IntervalResult {
    pub method: Method,
    pub level: f64,
    pub endpoints: Endpoints,
}

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

#[derive(Debug, Clone, PartialEq)]
pub struct Diagnostics {
    pub z0: f64,
    pub acceleration: Option<f64>,
    pub replicate_skewness: f64,
    pub distinct_replicate_values: usize,
    pub undefined_replicates: u64,
    pub jackknife: Option<JackknifeKind>,
    /// "analytic" or "nested", when a studentized interval was asked for.
    pub studentized_standard_error: Option<&'static str>,
    pub inner_resamples: Option<usize>,
    pub warnings: Vec<Warning>,
}

/// The result of an interval job.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    pub estimate: f64,
    pub standard_error: f64,
    pub standard_error_mc_error: f64,
    pub bias: f64,
    pub bias_mc_error: f64,
    pub bias_corrected_estimate: f64,
    pub n: u64,
    pub resamples: u64,
    pub complete: bool,
    pub stop: Stop,
    pub intervals: Vec<IntervalResult>,
    pub diagnostics: Diagnostics,
    pub histogram: Option<Histogram>,
    pub cdf: Option<Cdf>,
    pub replicates: Option<Vec<f64>>,
    pub replicate_standard_errors: Option<Vec<f64>>,
    pub replicate_probabilities: Option<Vec<f64>>,
}

/// Why a job produced no result.
#[derive(Debug, Clone, PartialEq)]
pub enum RunError {
    /// The statistic cannot be computed on this data.
    Data(Vec<DataProblem>),
    /// The deadline passed with `on_time_limit: "fail"`.
    TimeLimit { done: u64, requested: u64 },
    /// The caller went away.
    Cancelled,
    /// `"exact"` was asked for but there are too many distinct resamples.
    ExactTooLarge { count: Option<u64>, limit: u64 },
    /// Every replicate was undefined.
    NoDefinedReplicates,
}

/// Everything a replicate needs, shared read-only by the workers.
struct Context<'a> {
    data: &'a Prepared,
    stat: &'a dyn Statistic,
    scheme: SchemeSpec,
    seed: u64,
    studentized: bool,
    inner: usize,
}

/// Per-worker buffers: nothing is allocated per replicate.
struct Worker {
    tick: u32,
    w: Vec<f64>,
    w_inner: Vec<f64>,
    expanded: Vec<u32>,
    inner_values: Vec<f64>,
    scratch: Scratch,
}

impl Worker {
    fn new(units: usize) -> Self {
        Worker {
            tick: 0,
            w: Vec::with_capacity(units),
            w_inner: Vec::with_capacity(units),
            expanded: Vec::new(),
            inner_values: Vec::new(),
            scratch: Scratch::with_units(units),
        }
    }
}

impl Context<'_> {
    /// Replicate `i`: its value and, for studentized intervals, its standard error; `None`
    /// when `stop` said to stop during its nested bootstrap.
    fn replicate(&self, i: u64, wk: &mut Worker, stop: &dyn Fn() -> bool) -> Option<(f64, f64)> {
        let mut rng = replicate_stream(self.seed, i);
        scheme::draw(self.scheme, self.data, &mut rng, &mut wk.w);
        let v = self.stat.evaluate(self.data, &wk.w, &mut wk.scratch);
        let se = if self.studentized {
            self.replicate_se(&mut rng, wk, stop)?
        } else {
            f64::NAN
        };
        Some((v, se))
    }

    /// The standard error of the statistic on the resample in `wk.w`: analytic where the
    /// statistic has one, else the standard deviation of `inner` resamples drawn from the
    /// resample (continuing replicate i's own stream, so it stays reproducible). `None` when
    /// `stop` said to stop.
    fn replicate_se(&self, rng: &mut rand_chacha::ChaCha8Rng, wk: &mut Worker, stop: &dyn Fn() -> bool) -> Option<f64> {
        if let Some(se) = self.stat.analytic_se(self.data, &wk.w) {
            return Some(se);
        }
        let total: f64 = wk.w.iter().sum();
        let size = self.data.total().round() as u64;
        // Drawing from the expanded resample costs O(n) per inner resample; for aggregated data
        // with large counts the multinomial over units (O(units)) is both cheaper and bounded in
        // memory, so expand only when n is small next to the number of units.
        let integer = size <= 8 * wk.w.len() as u64 && wk.w.iter().all(|x| x.fract() == 0.0);
        if integer {
            wk.expanded.clear();
            for (j, c) in wk.w.iter().enumerate() {
                for _ in 0..(*c as u64) {
                    wk.expanded.push(j as u32);
                }
            }
        }
        wk.inner_values.clear();
        for k in 0..self.inner {
            // A nested bootstrap can be long: look at the deadline every few inner resamples.
            if k % 8 == 7 && stop() {
                return None;
            }
            wk.w_inner.clear();
            wk.w_inner.resize(wk.w.len(), 0.0);
            if integer {
                let m = wk.expanded.len();
                for _ in 0..m {
                    let j = wk.expanded[rng.random_range(0..m)] as usize;
                    wk.w_inner[j] += 1.0;
                }
            } else {
                iid::multinomial(rng, size, &wk.w, total, &mut wk.w_inner);
            }
            let v = self.stat.evaluate(self.data, &wk.w_inner, &mut wk.scratch);
            if v.is_finite() {
                wk.inner_values.push(v);
            }
        }
        let k = wk.inner_values.len() as f64;
        if k < 2.0 {
            return Some(f64::NAN);
        }
        let m = wk.inner_values.iter().sum::<f64>() / k;
        Some((wk.inner_values.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / (k - 1.0)).sqrt())
    }
}

/// The resamples a job asks for, for time-limit messages.
fn requested_resamples(job: &Job) -> u64 {
    match job.resamples {
        Resamples::Fixed(b) => b,
        Resamples::Auto { .. } => montecarlo::AUTO_START,
        Resamples::Exact => exact::count(job.sample.n(), job.sample.units()).unwrap_or(0),
    }
}

fn expired(job: &Job) -> bool {
    job.deadline.is_some_and(|d| Instant::now() >= d)
}

fn cancelled(job: &Job) -> bool {
    job.cancel.as_ref().is_some_and(|c| c.load(Ordering::Relaxed))
}

/// Extend `values`/`ses` with replicates up to index `goal`, in waves. Every replicate looks
/// at the deadline and cancel flag before it starts (and a nested bootstrap every few inner
/// resamples), so a stop is noticed within one replicate however large the wave. On a stop the
/// vectors keep the longest run of finished replicates from the start, and `false` is returned.
fn generate(ctx: &Context, job: &Job, wanted: u64, values: &mut Vec<f64>, ses: &mut Vec<f64>) -> Result<bool, RunError> {
    let goal = job.replicate_cap.map_or(wanted, |cap| cap.min(wanted));
    let units = ctx.data.units();
    let threads = rayon::current_num_threads().max(1);
    // Start with a couple of replicates per thread, then grow towards WAVE_TARGET.
    let mut wave = 2 * threads as u64;
    let stopped = AtomicBool::new(false);
    let should_stop = || {
        if stopped.load(Ordering::Relaxed) {
            return true;
        }
        let stop = expired(job) || cancelled(job);
        if stop {
            stopped.store(true, Ordering::Relaxed);
        }
        stop
    };
    while (values.len() as u64) < goal {
        if should_stop() {
            break;
        }
        let start = values.len();
        let len = ((start as u64 + wave).min(goal) - start as u64) as usize;
        values.resize(start + len, 0.0);
        ses.resize(start + len, 0.0);
        let mut done = vec![false; len];
        let began = Instant::now();
        let min_len = (len / (4 * threads)).max(1);
        values[start..]
            .par_iter_mut()
            .zip(ses[start..].par_iter_mut())
            .zip(done.par_iter_mut())
            .enumerate()
            .with_min_len(min_len)
            .for_each_init(
                || Worker::new(units),
                |wk, (k, ((v, se), d))| {
                    // The clock is read before every 16th replicate of each worker (and inside a
                    // nested bootstrap); a plain replicate costs at most O(rows), so a stop is
                    // still noticed within milliseconds.
                    wk.tick = wk.tick.wrapping_add(1);
                    if stopped.load(Ordering::Relaxed) || (wk.tick % 16 == 1 && should_stop()) {
                        return;
                    }
                    if let Some((a, b)) = ctx.replicate((start + k) as u64, wk, &should_stop) {
                        *v = a;
                        *se = b;
                        *d = true;
                    }
                },
            );
        if let Some(first_missing) = done.iter().position(|d| !d) {
            values.truncate(start + first_missing);
            ses.truncate(start + first_missing);
            break;
        }
        let took = began.elapsed().as_secs_f64().max(1e-6);
        let scale = (WAVE_TARGET.as_secs_f64() / took).clamp(0.25, 4.0);
        wave = ((len as f64 * scale) as u64).clamp(threads as u64, 1 << 20);
    }
    if cancelled(job) {
        return Err(RunError::Cancelled);
    }
    Ok(values.len() as u64 >= wanted)
}

/// Run an interval job on the current rayon pool.
pub fn run(job: &Job) -> Result<Outcome, RunError> {
    let data = Prepared::from_sample(&job.sample);
    let stat = statistic::build(&job.statistic, &job.sample, &data).map_err(RunError::Data)?;
    let base = data.base_weights();
    let estimate = stat.evaluate(&data, &base, &mut Scratch::with_units(data.units()));
    if !estimate.is_finite() {
        return Err(RunError::Data(vec![DataProblem::new(
            DataLocation::Whole,
            format!("the {} of this data is undefined", job.statistic.name()),
        )]));
    }
    let studentized = job.methods.contains(&Method::Studentized);
    let ctx = Context {
        data: &data,
        stat: stat.as_ref(),
        scheme: job.scheme,
        seed: job.seed,
        studentized,
        inner: job.inner_resamples,
    };
    let jack = if job.methods.contains(&Method::Bca) {
        match jackknife::jackknife(stat.as_ref(), &data, &|| expired(job) || cancelled(job)) {
            Ok(j) => j,
            Err(jackknife::Stopped) if cancelled(job) => return Err(RunError::Cancelled),
            Err(jackknife::Stopped) => {
                return Err(RunError::TimeLimit {
                    done: 0,
                    requested: requested_resamples(job),
                })
            }
        }
    } else {
        None
    };
    let acceleration = jack.as_ref().map(|j| bca::acceleration(&j.values, &j.multiplicity));

    let mut values = Vec::new();
    let mut ses = Vec::new();
    let mut probs: Option<Vec<f64>> = None;
    let stop;
    match job.resamples {
        Resamples::Exact => {
            let size = data.total() as u64;
            let count = exact::count(size, data.units());
            if count.is_none_or(|c| c > job.max_resamples) {
                return Err(RunError::ExactTooLarge {
                    count,
                    limit: job.max_resamples,
                });
            }
            let mut p = Vec::new();
            let mut wk = Worker::new(data.units());
            let mut index = 0u64;
            let mut timed_out = false;
            exact::enumerate(size, &base, data.total(), |w, prob| {
                if index % 4096 == 0 && (expired(job) || cancelled(job)) {
                    timed_out = true;
                    return false;
                }
                wk.w.clear();
                wk.w.extend_from_slice(w);
                let value = stat.evaluate(&data, &wk.w, &mut wk.scratch);
                let se = if studentized {
                    let mut rng = replicate_stream(job.seed, index);
                    match ctx.replicate_se(&mut rng, &mut wk, &|| expired(job) || cancelled(job)) {
                        Some(se) => se,
                        None => {
                            timed_out = true;
                            return false;
                        }
                    }
                } else {
                    f64::NAN
                };
                values.push(value);
                ses.push(se);
                p.push(prob);
                index += 1;
                true
            });
            if cancelled(job) {
                return Err(RunError::Cancelled);
            }
            if timed_out {
                // A partial enumeration is not a distribution; there is no useful prefix.
                return Err(RunError::TimeLimit {
                    done: index,
                    requested: count.unwrap_or(0),
                });
            }
            probs = Some(p);
            stop = Stop::Done;
        }
        Resamples::Fixed(b) => {
            let finished = generate(&ctx, job, b, &mut values, &mut ses)?;
            if finished {
                stop = job.recorded_stop.unwrap_or(Stop::Done);
            } else if job.on_time_limit == OnTimeLimit::Partial && !values.is_empty() {
                stop = Stop::TimeLimit;
            } else {
                return Err(RunError::TimeLimit {
                    done: values.len() as u64,
                    requested: b,
                });
            }
        }
        Resamples::Auto { target } => {
            let mut goal = montecarlo::AUTO_START.min(job.max_resamples);
            loop {
                let finished = generate(&ctx, job, goal, &mut values, &mut ses)?;
                if !finished {
                    if (values.len() as u64) < montecarlo::AUTO_START.min(job.max_resamples) {
                        if job.on_time_limit == OnTimeLimit::Partial && !values.is_empty() {
                            stop = Stop::TimeLimit;
                            break;
                        }
                        return Err(RunError::TimeLimit {
                            done: values.len() as u64,
                            requested: goal,
                        });
                    }
                    stop = Stop::AutoTime;
                    break;
                }
                let summary = summarize(
                    job,
                    &ctx,
                    estimate,
                    &values,
                    &ses,
                    None,
                    acceleration,
                    jack.as_ref().map(|j| j.kind),
                );
                if let Ok(s) = &summary {
                    let worst = s
                        .intervals
                        .iter()
                        .map(|iv| iv.endpoints.lower_mc_error.max(iv.endpoints.upper_mc_error))
                        .fold(0.0, f64::max);
                    if worst <= target * s.standard_error {
                        stop = Stop::AutoTarget;
                        break;
                    }
                }
                if goal >= job.max_resamples {
                    stop = Stop::AutoLimit;
                    break;
                }
                goal = (goal * 2).min(job.max_resamples);
            }
        }
    }
    let mut out = summarize(
        job,
        &ctx,
        estimate,
        &values,
        &ses,
        probs.as_deref(),
        acceleration,
        jack.as_ref().map(|j| j.kind),
    )?;
    out.stop = stop;
    out.complete = stop != Stop::TimeLimit;
    match stop {
        Stop::TimeLimit => out.diagnostics.warnings.push(Warning::new(
            "partial_result",
            format!(
                "the time limit passed after {} resamples, so this result covers only those (a prefix of the same streams: rerunning with \"resamples\": {} reproduces it). Raise time_limit_ms or lower resamples for the full run.",
                out.resamples, out.resamples
            ),
        )),
        Stop::AutoLimit => out.diagnostics.warnings.push(Warning::new(
            "auto_resample_limit",
            format!("\"auto\" stopped at the server's resample limit ({}) before every endpoint's Monte Carlo error fell below its target share of the standard error.", out.resamples),
        )),
        Stop::AutoTime => out.diagnostics.warnings.push(Warning::new(
            "auto_time_limit",
            format!("\"auto\" stopped at the time limit after {} resamples, before every endpoint's Monte Carlo error fell below its target share of the standard error.", out.resamples),
        )),
        _ => {}
    }
    Ok(out)
}

/// Build the result from the replicates drawn so far.
#[allow(clippy::too_many_arguments)]
fn summarize(
    job: &Job,
    ctx: &Context,
    estimate: f64,
    values: &[f64],
    ses: &[f64],
    probs: Option<&[f64]>,
    acceleration: Option<f64>,
    jack_kind: Option<JackknifeKind>,
) -> Result<Outcome, RunError> {
    // Leave out undefined replicates, keeping stream order among the rest.
    let keep: Vec<usize> = (0..values.len()).filter(|&i| values[i].is_finite()).collect();
    let undefined = (values.len() - keep.len()) as u64;
    if keep.is_empty() {
        return Err(RunError::NoDefinedReplicates);
    }
    let kept_values: Vec<f64> = keep.iter().map(|&i| values[i]).collect();
    let kept_probs: Option<Vec<f64>> = probs.map(|p| keep.iter().map(|&i| p[i]).collect());
    let dist = match &kept_probs {
        None => ReplicateDistribution::sampled(&kept_values),
        Some(p) => ReplicateDistribution::exact(&kept_values, p),
    };
    let standard_error = dist.sd();
    let bias = dist.mean() - estimate;
    let se_mc = montecarlo::standard_error_mc_error(&dist);
    let bias_mc = montecarlo::bias_mc_error(&dist);

    let (z0, z0_clamped) = bca::z0(&dist, estimate);
    let bca_constants = bca::BcaConstants {
        z0,
        acceleration: acceleration.unwrap_or(0.0),
        z0_clamped,
    };

    // Studentized: t* over replicates with a positive, finite se*.
    let mut studentized_dropped = 0;
    let se_hat = ctx.stat.analytic_se(ctx.data, &ctx.data.base_weights()).unwrap_or(standard_error);
    // A resample whose values are all equal has a standard error of 0, which rounding can turn
    // into 1e-17; such a se* would blow t* up to 1e15. Anything below this share of the
    // sample's standard error counts as zero.
    let tiny_se = 1e-9 * se_hat.max(standard_error);
    let t_dist = if ctx.studentized {
        let mut t = Vec::with_capacity(keep.len());
        let mut tp = Vec::new();
        for (k, &i) in keep.iter().enumerate() {
            let se = ses[i];
            if se.is_finite() && se > tiny_se {
                t.push((values[i] - estimate) / se);
                if let Some(p) = &kept_probs {
                    tp.push(p[k]);
                }
            } else {
                studentized_dropped += 1;
            }
        }
        if t.is_empty() {
            None
        } else if kept_probs.is_some() {
            Some(ReplicateDistribution::exact(&t, &tp))
        } else {
            Some(ReplicateDistribution::sampled(&t))
        }
    } else {
        None
    };

    let mut intervals = Vec::new();
    let mut bca_levels = Vec::new();
    for method in &job.methods {
        for &level in &job.levels {
            let endpoints = match method {
                Method::Percentile => interval::percentile::interval(&dist, level),
                Method::Basic => interval::basic::interval(&dist, estimate, level),
                Method::Normal => interval::normal::interval(estimate, bias, standard_error, bias_mc, se_mc, &dist, level),
                Method::Bca => {
                    let e = bca::interval(&dist, &bca_constants, level);
                    if let Some((lo, hi)) = e.quantile_levels {
                        bca_levels.push((level, lo, hi));
                    }
                    e
                }
                Method::Studentized => match &t_dist {
                    Some(t) => interval::studentized::interval(t, estimate, se_hat, level),
                    // Every se* was zero: the resamples do not vary, nor does the interval.
                    None => Endpoints {
                        lower: estimate,
                        upper: estimate,
                        lower_mc_error: 0.0,
                        upper_mc_error: 0.0,
                        quantile_levels: None,
                    },
                },
            };
            intervals.push(IntervalResult {
                method: *method,
                level,
                endpoints,
            });
        }
    }

    let constant_data = match &job.sample {
        Sample::Column(x) => x.iter().all(|v| *v == x[0]),
        Sample::Aggregated { values, counts } => values
            .iter()
            .zip(counts)
            .filter(|(_, c)| **c > 0)
            .map(|(v, _)| *v)
            .collect::<Vec<_>>()
            .windows(2)
            .all(|w| w[0] == w[1]),
        Sample::Columns { columns, .. } => columns.iter().all(|c| c.iter().all(|v| *v == c[0])),
    };
    let lag1 = match (&job.sample, job.scheme) {
        (Sample::Column(x), SchemeSpec::Iid) => diagnostics::lag1_autocorrelation(x),
        _ => None,
    };
    let mut warnings = diagnostics::assess(&Facts {
        n: ctx.data.total(),
        dist: &dist,
        estimate,
        bias,
        standard_error,
        levels: &job.levels,
        methods: &job.methods,
        undefined,
        reads_extremes: job.statistic.reads_extremes(ctx.data.total()),
        constant_data,
        lag1,
        bca_z0_clamped: z0_clamped && job.methods.contains(&Method::Bca),
        bca_levels,
        bca_no_acceleration: job.methods.contains(&Method::Bca) && acceleration.is_none(),
        studentized_dropped,
    });

    if kept_probs.is_some() && ctx.studentized && !ctx.stat.has_analytic_se() {
        warnings.push(Warning::new(
            "inexact_nested_studentized",
            "with \"exact\" the resamples are enumerated, but the studentized interval of this statistic needs a nested bootstrap of each, which is still random: its endpoints carry Monte Carlo error that is not included in lower_mc_error and upper_mc_error (shown as 0). Every other number is exact.",
        ));
    }
    let histogram = job.include.histogram.then(|| histogram(&dist));
    let cdf = job.include.cdf.then(|| cdf(&dist));
    let replicates = job.include.replicates.then(|| kept_values.clone());
    let replicate_standard_errors =
        (job.include.replicates && ctx.studentized).then(|| keep.iter().map(|&i| if ses[i].is_finite() { ses[i] } else { 0.0 }).collect());
    let replicate_probabilities = if job.include.replicates { kept_probs.clone() } else { None };

    Ok(Outcome {
        estimate,
        standard_error,
        standard_error_mc_error: se_mc,
        bias,
        bias_mc_error: bias_mc,
        bias_corrected_estimate: estimate - bias,
        n: job.sample.n(),
        resamples: values.len() as u64,
        complete: true,
        stop: Stop::Done,
        intervals,
        diagnostics: Diagnostics {
            z0,
            acceleration: if job.methods.contains(&Method::Bca) {
                Some(bca_constants.acceleration)
            } else {
                None
            },
            replicate_skewness: dist.skewness(),
            distinct_replicate_values: dist.distinct(),
            undefined_replicates: undefined,
            jackknife: jack_kind,
            studentized_standard_error: ctx
                .studentized
                .then(|| if ctx.stat.has_analytic_se() { "analytic" } else { "nested" }),
            inner_resamples: (ctx.studentized && !ctx.stat.has_analytic_se()).then_some(ctx.inner),
            warnings,
        },
        histogram,
        cdf,
        replicates,
        replicate_standard_errors,
        replicate_probabilities,
    })
}

/// Equal-width bins between the smallest and largest replicate; the Rice rule 2·B^{1/3} for
/// the number of bins (Terrell, G. R. & Scott, D. W. (1985), JASA 80(389)), between 10 and 200.
fn histogram(dist: &ReplicateDistribution) -> Histogram {
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

/// At most 256 points of the replicate distribution function, evenly spaced in rank.
fn cdf(dist: &ReplicateDistribution) -> Cdf {
    let sorted = dist.sorted();
    let n = sorted.len();
    let k = n.min(256);
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
