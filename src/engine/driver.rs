//! The driver: from a [`Job`] to its [`Outcome`], in two steps. [`prepare`] checks the job
//! against its data and limits and lays it out (every refusal happens here, before any
//! resampling); [`Prepared::run`] computes the jackknife, draws the replicates as the plan says,
//! and builds the summary, the diagnostics and the extras.

use crate::engine::cost::{self, Work};
use crate::engine::data::{DataError, Form, Sample};
use crate::engine::diagnostics::{self, Facts, Warning};
use crate::engine::executor::{self, Budget, Replicates};
use crate::engine::extras::{self, Extras};
use crate::engine::interval::{bca, Method};
use crate::engine::jackknife::{self, JackknifeKind};
use crate::engine::job::{Contrast, Include, Job, Resampled, Samples};
use crate::engine::kernel::{contrast_se, Arm, Kernel, Pair, SeSource, Target};
use crate::engine::plan::{self, Ended, Plan, Resamples, Source, Stop};
use crate::engine::scheme::{SchemeError, SchemeSpec};
use crate::engine::statistic::shortcut::Shortcut;
use crate::engine::statistic::Estimator;
use crate::engine::statistic::Weighted;
use crate::engine::summary::{self, IntervalResult, Reader, Summary, SummaryInput};

/// Which sample of a job a problem is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Which {
    /// The sample of a one-sample job.
    Only,
    Baseline,
    Candidate,
}

/// What is wrong with one sample's data.
#[derive(Debug, Clone, PartialEq)]
pub struct SampleProblems {
    pub which: Which,
    pub problems: Vec<DataError>,
}

impl RunError {
    /// The refusal of one sample's data.
    pub fn data(which: Which, problems: Vec<DataError>) -> RunError {
        RunError::Data(vec![SampleProblems { which, problems }])
    }
}

/// Why a job produced no result.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RunError {
    /// Each refused sample with its problems (both samples of a comparison at once).
    #[error("the data cannot be used")]
    Data(Vec<SampleProblems>),
    #[error("{0}")]
    Scheme(SchemeError),
    #[error("the estimated work is {needed:.3e} row-draws, above the limit of {limit:.3e}")]
    WorkLimit { needed: f64, limit: f64 },
    /// `partial` tells whether a partial result could have been given instead (not for an
    /// enumeration, whose part is no distribution).
    #[error("only {done} of {requested} resamples finished within the time limit")]
    TimeLimit { done: u64, requested: u64, partial: bool },
    #[error("the caller went away")]
    Cancelled,
    #[error("the statistic is undefined on every resample")]
    NoDefinedReplicates,
}

/// Diagnostics of the replicate distribution and of the run.
#[derive(Debug, Clone, PartialEq)]
pub struct Diagnostics {
    pub z0: f64,
    pub acceleration: Option<f64>,
    pub replicate_skewness: f64,
    pub distinct_replicate_values: usize,
    pub undefined_replicates: u64,
    /// How the jackknife was computed, and its number of groups when grouped.
    pub jackknife: Option<(JackknifeKind, Option<usize>)>,
    pub studentized_standard_error: Option<SeSource>,
    pub inner_resamples: Option<u64>,
    pub warnings: Vec<Warning>,
}

/// The result of a job.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    pub estimate: f64,
    /// For a two-sample job: the statistic of the baseline and of the candidate.
    pub sample_estimates: Option<(f64, f64)>,
    pub standard_error: f64,
    pub standard_error_mc_error: f64,
    pub bias: f64,
    pub bias_mc_error: f64,
    pub bias_corrected_estimate: f64,
    /// Observations of each sample.
    pub n: Vec<u64>,
    pub resamples: u64,
    pub complete: bool,
    pub stop: Stop,
    pub intervals: Vec<IntervalResult>,
    pub diagnostics: Diagnostics,
    pub extras: Extras,
    /// What the intervals were read from, to read more at other levels (a verdict, a family).
    pub reader: Reader,
}

/// A job checked against its data and limits, laid out, ready to run.
pub struct Prepared {
    pub job: Job,
    target: Target,
    estimate: f64,
    sample_estimates: Option<(f64, f64)>,
    work: Work,
}

/// The shortcut that computes a part's replicates, if any: only under `iid` with drawn (not
/// enumerated) resamples, and where the job allows shortcuts. Each shortcut reproduces the
/// distribution of an `iid` resample only, and an enumeration must visit every resample itself;
/// tests turn them off to hold them against the plain path.
pub fn shortcut_for(job: &Job, part: &Resampled, estimator: &Estimator) -> Option<Shortcut> {
    let iid = part.scheme == SchemeSpec::Iid {} && job.resamples != Resamples::Exact;
    (job.shortcuts && iid).then(|| estimator.shortcut()).flatten()
}

/// Bind the statistic to one sample and check that it is defined there.
fn arm(job: &Job, part: &Resampled, which: Which, stream: u8) -> Result<Bound, RunError> {
    let data = |problems| RunError::data(which, problems);
    let estimator = job.statistic.build(&part.sample).map_err(data)?;
    let estimate = estimator.estimate();
    if !estimate.is_finite() {
        return Err(data(vec![DataError::Undefined {
            statistic: job.statistic.name(),
        }]));
    }
    let units = estimator.units();
    let resampler = match job.resamples {
        Resamples::Exact => part.scheme.enumerator(units, job.max_resamples).map_err(RunError::Scheme)?,
        _ => {
            // Only schemes that read rows in order get them (a copy of 4 bytes a row).
            let order = part.scheme.reads_rows().then(|| estimator.unit_of_row(&part.sample)).flatten();
            part.scheme.resampler(units, order).map_err(RunError::Scheme)?
        }
    };
    let shortcut = shortcut_for(job, part, &estimator);
    Ok((
        Arm {
            estimator,
            resampler,
            stream,
            shortcut,
        },
        estimate,
    ))
}

/// A sample's arm with the statistic's estimate on it.
type Bound = (Arm, f64);

/// Bind the statistic to both samples of a comparison, refusing the problems of both at once.
fn arms(job: &Job, baseline: &Resampled, candidate: &Resampled) -> Result<(Bound, Bound), RunError> {
    match (arm(job, baseline, Which::Baseline, 0), arm(job, candidate, Which::Candidate, 1)) {
        (Ok(b), Ok(c)) => Ok((b, c)),
        (Err(RunError::Data(mut b)), Err(RunError::Data(c))) => {
            b.extend(c);
            Err(RunError::Data(b))
        }
        (Err(e), _) | (_, Err(e)) => Err(e),
    }
}

/// What is resampled, the estimate, and for two samples each one's estimate.
type Laid = (Target, f64, Option<(f64, f64)>);

/// Bind the statistic to two samples whose rows are pairs, resampled together by the
/// baseline's scheme.
fn paired(job: &Job, baseline: &Resampled, candidate: &Resampled, contrast: Contrast) -> Result<Laid, RunError> {
    let ((b, eb), (c, ec)) = arms(job, baseline, candidate)?;
    let (nb, nc) = (baseline.sample.rows(), candidate.sample.rows());
    // The refusal points at the sample to fix: an aggregated one, else the candidate.
    let which = if b.estimator.has_rows() {
        Which::Candidate
    } else {
        Which::Baseline
    };
    let pair = Pair::new([(b.estimator, &baseline.sample), (c.estimator, &candidate.sample)], contrast).ok_or_else(|| {
        RunError::data(
            which,
            vec![DataError::NotPaired {
                baseline: nb,
                candidate: nc,
            }],
        )
    })?;
    let units = pair.units();
    let rows = match job.resamples {
        Resamples::Exact => baseline.scheme.enumerator(units, job.max_resamples).map_err(RunError::Scheme)?,
        // The pairs' rows are the units, in time order.
        _ => baseline
            .scheme
            .resampler(units, Some((0..units.base.len() as u32).collect()))
            .map_err(RunError::Scheme)?,
    };
    Ok((Target::Paired { pair, rows }, contrast.of(ec, eb), Some((eb, ec))))
}

/// A ratio reads as "candidate over baseline" only for a positive baseline and a candidate of
/// 0 or more, and needs an estimate that is defined (a baseline of almost 0 has none).
fn check_ratio(job: &Job, estimate: f64, sample_estimates: Option<(f64, f64)>) -> Result<(), RunError> {
    let ratio = matches!(
        job.samples,
        Samples::Two {
            contrast: Contrast::Ratio,
            ..
        }
    );
    match sample_estimates {
        Some((baseline, candidate)) if ratio && !(baseline > 0.0 && candidate >= 0.0 && crate::engine::summary::defined(estimate)) => {
            Err(RunError::data(
                Which::Baseline,
                vec![DataError::RatioNotPositive {
                    statistic: job.statistic.name(),
                    baseline,
                    candidate,
                }],
            ))
        }
        _ => Ok(()),
    }
}

/// Check a job against its data and its limits and lay it out.
pub fn prepare(job: Job) -> Result<Prepared, RunError> {
    let (target, estimate, sample_estimates) = match &job.samples {
        Samples::One(sample) => {
            let (a, e) = arm(&job, sample, Which::Only, 0)?;
            (Target::One(a), e, None)
        }
        Samples::Two {
            baseline,
            candidate,
            contrast,
            paired: false,
        } => {
            let ((b, eb), (c, ec)) = arms(&job, baseline, candidate)?;
            let target = Target::Two {
                baseline: b,
                candidate: c,
                contrast: *contrast,
            };
            (target, contrast.of(ec, eb), Some((eb, ec)))
        }
        Samples::Two {
            baseline,
            candidate,
            contrast,
            paired: true,
        } => paired(&job, baseline, candidate, *contrast)?,
    };
    check_ratio(&job, estimate, sample_estimates)?;
    let enumerated = enumerated(&target, job.max_resamples)?;
    let work = cost::estimate(&job, &target, enumerated).map_err(|o| RunError::WorkLimit {
        needed: o.needed,
        limit: o.limit,
    })?;
    Ok(Prepared {
        job,
        target,
        estimate,
        sample_estimates,
        work,
    })
}

/// The number of distinct resamples of an enumeration over every sample (pairs, for two).
fn enumerated(target: &Target, limit: u64) -> Result<Option<u64>, RunError> {
    let counts: Option<Vec<u64>> = target.resamplers().iter().map(|r| r.enumerated()).collect();
    let Some(counts) = counts else { return Ok(None) };
    let count = counts.iter().try_fold(1u64, |a, c| a.checked_mul(*c));
    match count {
        Some(c) if c <= limit => Ok(Some(c)),
        _ => Err(RunError::Scheme(SchemeError::TooManyToEnumerate { count, limit })),
    }
}

/// A job being run: what the plan needs to draw and to judge the replicates.
struct Run<'a> {
    prepared: &'a Prepared,
    budget: &'a Budget,
    kernel: Kernel<'a>,
    acceleration: Option<f64>,
}

impl Source for Run<'_> {
    type Error = RunError;

    fn fill(&self, reps: &mut Replicates, goal: u64) -> Result<bool, RunError> {
        executor::fill(
            reps,
            goal,
            self.budget,
            || self.kernel.worker(),
            |i, wk, stop| self.kernel.replicate(i, wk, stop),
        )
        .map_err(|_| RunError::Cancelled)
    }

    fn meets_target(&self, reps: &Replicates, target: f64) -> bool {
        self.summarize(reps).is_ok_and(|s| {
            let worst = s
                .intervals
                .iter()
                .map(|iv| iv.endpoints.lower_mc_error.max(iv.endpoints.upper_mc_error))
                .fold(0.0, f64::max);
            worst <= target * s.reader.standard_error
        })
    }
}

impl Run<'_> {
    fn summarize(&self, reps: &Replicates) -> Result<Summary, RunError> {
        let p = self.prepared;
        let levels: Vec<f64> = p.job.levels.iter().map(|l| l.get()).collect();
        summary::summarize(&SummaryInput {
            estimate: p.estimate,
            replicates: reps,
            exact: p.enumerated().is_some(),
            acceleration: self.acceleration,
            methods: &p.job.methods,
            levels: &levels,
            analytic_se: p.analytic_se(),
        })
        .map_err(|_| RunError::NoDefinedReplicates)
    }
}

impl Prepared {
    /// The estimated work, in row-draws.
    pub fn work(&self) -> f64 {
        self.work.total
    }

    /// The most resamples the plan may draw.
    pub fn max_resamples(&self) -> u64 {
        self.work.max_resamples
    }

    /// The number of distinct resamples, for an enumeration.
    pub fn enumerated(&self) -> Option<u64> {
        enumerated(&self.target, u64::MAX).ok().flatten()
    }

    /// The analytic standard error of the estimate, where the statistic has one and the scheme
    /// draws rows independently, as it assumes.
    fn analytic_se(&self) -> Option<f64> {
        if !self.job.analytic_se_applies() {
            return None;
        }
        let se = |a: &Arm| a.estimator.analytic_se(a.estimator.units().base);
        match &self.target {
            Target::One(a) => se(a),
            Target::Two {
                baseline,
                candidate,
                contrast,
            } => {
                let (b, c) = self.sample_estimates.expect("two samples");
                Some(contrast_se(*contrast, (c, se(candidate)?), (b, se(baseline)?)))
            }
            Target::Paired { .. } => None,
        }
    }

    /// Run the job within `budget` on the current rayon pool.
    pub fn run(&self, budget: &Budget) -> Result<Outcome, RunError> {
        let jack = if self.job.wants(Method::Bca) {
            self.jackknife(budget)?
        } else {
            None
        };
        let run = Run {
            prepared: self,
            budget,
            kernel: Kernel {
                target: &self.target,
                seed: self.job.seed,
                studentized: self.job.wants(Method::Studentized),
                inner: self.job.inner_resamples.get() as usize,
                analytic: self.job.analytic_se_applies(),
            },
            acceleration: jack.as_ref().map(|j| j.acceleration),
        };
        let plan = Plan {
            resamples: self.job.resamples,
            on_time_limit: self.job.on_time_limit,
            recorded_stop: self.job.recorded_stop,
            max_resamples: self.max_resamples(),
            enumerated: self.enumerated(),
        };
        let (reps, stop) = plan.draw(&run).map_err(|e| match e {
            Ended::TimeLimit { done, requested, partial } => RunError::TimeLimit { done, requested, partial },
            Ended::Source(e) => e,
        })?;
        let summary = run.summarize(&reps)?;
        Ok(self.outcome(&reps, summary, stop, jack))
    }

    /// BCa's jackknife: the acceleration and how it was computed. A leave-out value the
    /// statistic does not define (a ratio whose baseline mean is zero without one of its
    /// observations) leaves the acceleration undefined: BCa then goes without it, as when no
    /// jackknife can be had, and the warning says so.
    fn jackknife(&self, budget: &Budget) -> Result<Option<JackknifeFacts>, RunError> {
        Ok(self.jackknife_facts(budget)?.filter(|j| j.acceleration.is_finite()))
    }

    fn jackknife_facts(&self, budget: &Budget) -> Result<Option<JackknifeFacts>, RunError> {
        let stop = || budget.exhausted();
        let stopped = |_| {
            if budget.cancelled() {
                RunError::Cancelled
            } else {
                RunError::TimeLimit {
                    done: 0,
                    requested: self.requested(),
                    partial: false,
                }
            }
        };
        match &self.target {
            Target::One(a) => {
                let j = jackknife::of_part(&a.estimator, a.resampler.as_ref(), &stop).map_err(stopped)?;
                Ok(j.map(|j| JackknifeFacts {
                    acceleration: bca::acceleration(&j.values, &j.multiplicity),
                    kind: j.kind,
                    groups: j.groups,
                }))
            }
            Target::Two {
                baseline,
                candidate,
                contrast,
            } => self.jackknife_of_two(baseline, candidate, *contrast, &stop).map_err(stopped),
            Target::Paired { pair, rows } => {
                let j = jackknife::of_part(pair, rows.as_ref(), &stop).map_err(stopped)?;
                Ok(j.map(|j| JackknifeFacts {
                    acceleration: bca::acceleration(&j.values, &j.multiplicity),
                    kind: j.kind,
                    groups: j.groups,
                }))
            }
        }
    }

    /// The two-sample jackknife: each sample's observations left out in turn, the other kept
    /// whole, and the acceleration of several samples.
    fn jackknife_of_two(
        &self,
        baseline: &Arm,
        candidate: &Arm,
        contrast: Contrast,
        stop: &(dyn Fn() -> bool + Sync),
    ) -> Result<Option<JackknifeFacts>, jackknife::Stopped> {
        let (eb, ec) = self.sample_estimates.expect("two samples");
        let jb = jackknife::of_part(&baseline.estimator, baseline.resampler.as_ref(), stop)?;
        let jc = jackknife::of_part(&candidate.estimator, candidate.resampler.as_ref(), stop)?;
        let (Some(jb), Some(jc)) = (jb, jc) else { return Ok(None) };
        let vb: Vec<f64> = jb.values.iter().map(|b| contrast.of(ec, *b)).collect();
        let vc: Vec<f64> = jc.values.iter().map(|c| contrast.of(*c, eb)).collect();
        let samples = [(&vb[..], &jb.multiplicity[..]), (&vc[..], &jc.multiplicity[..])];
        // The coarser of the two ways stands for both.
        let (kind, groups) = if jb.kind != JackknifeKind::LeaveOneOut && jb.kind != JackknifeKind::ClosedForm {
            (jb.kind, jb.groups)
        } else {
            (jc.kind, jc.groups)
        };
        Ok(Some(JackknifeFacts {
            acceleration: bca::acceleration_of_samples(&samples),
            kind,
            groups,
        }))
    }

    /// The resamples the job asks for, for time-limit messages.
    fn requested(&self) -> u64 {
        match self.job.resamples {
            Resamples::Fixed(b) => b,
            Resamples::Auto { .. } => plan::AUTO_START,
            Resamples::Exact => self.enumerated().unwrap_or(0),
        }
    }
}

/// What BCa's jackknife gave.
struct JackknifeFacts {
    acceleration: f64,
    kind: JackknifeKind,
    groups: Option<usize>,
}

impl Prepared {
    /// Assemble the outcome: the summary's numbers, the diagnostics and the extras.
    fn outcome(&self, reps: &Replicates, s: Summary, stop: Stop, jack: Option<JackknifeFacts>) -> Outcome {
        let job = &self.job;
        let mut warnings = diagnostics::assess(&self.facts(reps, &s, jack.is_none()));
        // What reading the statistic from each sample assumed (binned data), once per code.
        for w in self.target.estimators().iter().flat_map(|e| e.notes()).map(diagnostics::of_note) {
            if !warnings.iter().any(|seen| seen.code == w.code) {
                warnings.push(w);
            }
        }
        match stop {
            Stop::TimeLimit => warnings.push(diagnostics::partial_result(reps.len() as u64)),
            Stop::AutoLimit => warnings.push(diagnostics::auto_resample_limit(reps.len() as u64)),
            Stop::AutoTime => warnings.push(diagnostics::auto_time_limit(reps.len() as u64)),
            Stop::Done | Stop::AutoTarget => {}
        }
        let nested = job.nested_studentized();
        let diagnostics = Diagnostics {
            z0: s.reader.bca.z0,
            acceleration: job.wants(Method::Bca).then(|| jack.as_ref().map_or(0.0, |j| j.acceleration)),
            replicate_skewness: s.reader.dist.skewness(),
            distinct_replicate_values: s.reader.dist.distinct(),
            undefined_replicates: (reps.len() - s.kept.len()) as u64,
            jackknife: jack.as_ref().map(|j| (j.kind, j.groups)),
            studentized_standard_error: job.wants(Method::Studentized).then_some(if nested {
                SeSource::Nested
            } else {
                SeSource::Analytic
            }),
            inner_resamples: nested.then_some(job.inner_resamples.get()),
            warnings,
        };
        let extras = self.extras(reps, &s);
        Outcome {
            extras,
            estimate: self.estimate,
            sample_estimates: self.sample_estimates,
            standard_error: s.reader.standard_error,
            standard_error_mc_error: s.reader.standard_error_mc_error,
            bias: s.reader.bias,
            bias_mc_error: s.reader.bias_mc_error,
            bias_corrected_estimate: self.estimate - s.reader.bias,
            n: self.samples().iter().map(|x| x.n()).collect(),
            resamples: reps.len() as u64,
            complete: stop != Stop::TimeLimit,
            stop,
            intervals: s.intervals,
            diagnostics,
            reader: s.reader,
        }
    }

    /// The optional parts of the result that the job asks for.
    fn extras(&self, reps: &Replicates, s: &Summary) -> Extras {
        let job = &self.job;
        let all = job.includes(Include::Replicates);
        let kept = || s.kept.iter().map(|&i| reps[i]);
        Extras {
            histogram: job.includes(Include::Histogram).then(|| extras::histogram(&s.reader.dist)),
            cdf: job.includes(Include::Cdf).then(|| extras::cdf(&s.reader.dist)),
            replicates: all.then(|| kept().map(|r| r.value).collect()),
            replicate_standard_errors: (all && job.wants(Method::Studentized))
                .then(|| kept().map(|r| if r.se.is_finite() { r.se } else { 0.0 }).collect()),
            replicate_probabilities: (all && self.enumerated().is_some()).then(|| kept().map(|r| r.probability).collect()),
        }
    }

    fn samples(&self) -> Vec<&Sample> {
        self.job.samples.all().into_iter().map(|r| &r.sample).collect()
    }

    /// What the warnings are decided from.
    fn facts<'a>(&'a self, reps: &Replicates, s: &'a Summary, no_acceleration: bool) -> Facts<'a> {
        let job = &self.job;
        let n = self
            .target
            .estimators()
            .iter()
            .map(|e| e.units().total)
            .fold(f64::INFINITY, f64::min);
        let independent = self.target.resamplers().iter().all(|r| r.independent_rows());
        let lag1 = self
            .samples()
            .iter()
            .filter(|_| independent)
            .filter_map(|sample| match sample.form() {
                Form::Column(x) => diagnostics::lag1_autocorrelation(x),
                _ => None,
            })
            .reduce(f64::max);
        Facts {
            n,
            dist: &s.reader.dist,
            bias: s.reader.bias,
            standard_error: s.reader.standard_error,
            levels: &job.levels,
            methods: &job.methods,
            undefined: (reps.len() - s.kept.len()) as u64,
            reads_extremes: job.statistic.reads_extremes(n),
            constant_data: self.samples().iter().all(|x| x.is_constant()),
            lag1,
            bca_z0_clamped: s.z0_clamped && job.wants(Method::Bca),
            bca_levels: s.bca_levels.clone(),
            bca_no_acceleration: job.wants(Method::Bca) && no_acceleration,
            studentized_dropped: s.studentized_dropped,
            inexact_nested: self.enumerated().is_some() && job.nested_studentized(),
        }
    }
}
