//! The work a job costs, known before any work starts, in *row-draws*: units × resamples × the
//! statistic's relative cost (× the nested bootstrap's size where studentized intervals need
//! one), plus the jackknife of BCa. The limit on it keeps one request from holding the pool for
//! long, and lets `"auto"` know how far it may grow.

use crate::engine::interval::Method;
use crate::engine::jackknife;
use crate::engine::job::Job;
use crate::engine::kernel::Target;
use crate::engine::plan::{Resamples, AUTO_START};
use crate::engine::statistic::{Estimator, Weighted};

/// The estimated work of a job, and how many resamples it may draw within its limits.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Work {
    /// Row-draws in all.
    pub total: f64,
    /// The most resamples (for `"auto"`, as many as the work limit affords).
    pub max_resamples: u64,
}

/// The job needs more work than its limit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OverLimit {
    pub needed: f64,
    pub limit: f64,
}

/// Row-draws of one replicate, over every sample: a sample whose replicates take a shortcut
/// costs what the shortcut says, any other its units times the statistic's relative cost.
fn per_resample(job: &Job, target: &Target) -> f64 {
    let nested = job.nested_studentized();
    let factor = job.statistic.relative_cost() * if nested { 1.0 + job.inner_resamples.get() as f64 } else { 1.0 };
    let plain = |e: &Estimator| e.units().base.len() as f64 * factor;
    let arms = target.arms();
    if arms.is_empty() {
        return target.estimators().into_iter().map(plain).sum();
    }
    let studentized = job.wants(Method::Studentized);
    let analytic = job.analytic_se_applies();
    arms.iter()
        .map(|a| match a.shortcut(studentized, analytic) {
            Some((s, c)) => s.cost(c.x.len()),
            None => plain(&a.estimator),
        })
        .sum()
}

/// Row-draws of BCa's jackknife, which runs once per job before the resamples.
fn jackknife_work(job: &Job, target: &Target) -> f64 {
    if !job.wants(Method::Bca) {
        return 0.0;
    }
    let cost = job.statistic.relative_cost();
    // A block or cluster scheme's jackknife leaves out blocks or clusters, closed form or not.
    let blocks: Vec<f64> = target
        .resamplers()
        .iter()
        .filter_map(|r| {
            let clusters = r
                .groups()
                .map(|c| c.len().min(jackknife::GROUPS) as f64 * c.iter().map(Vec::len).sum::<usize>() as f64);
            clusters.or_else(|| r.blocks().map(|(order, block)| jackknife::block_cost_in_units(order.len(), block)))
        })
        .collect();
    if !blocks.is_empty() {
        return cost * blocks.iter().sum::<f64>();
    }
    match target {
        // Pairs leave out a row of both samples at a time, with no closed form.
        Target::Paired { pair, .. } => 2.0 * cost * jackknife::cost_in_units(false, pair.units().base.len(), true),
        _ => {
            let closed = job.statistic.has_closed_jackknife();
            let per: f64 = target
                .estimators()
                .iter()
                .map(|e| jackknife::cost_in_units(e.closed_jackknife(closed), e.units().base.len(), e.units().raw))
                .sum();
            cost * per
        }
    }
}

/// The work of a job whose samples are laid out as `target`; `enumerated` is the number of
/// distinct resamples of an exact job.
pub fn estimate(job: &Job, target: &Target, enumerated: Option<u64>) -> Result<Work, OverLimit> {
    let per = per_resample(job, target);
    let limit = job.max_work;
    let over = |needed: f64| if needed > limit { Err(OverLimit { needed, limit }) } else { Ok(()) };
    let (resamples, max_resamples) = match job.resamples {
        Resamples::Fixed(b) => (b, job.max_resamples),
        Resamples::Exact => {
            let count = enumerated.expect("an exact job enumerates");
            (count, job.max_resamples)
        }
        Resamples::Auto { .. } => {
            let affordable = (limit / per).floor() as u64;
            if affordable < AUTO_START {
                over(per * AUTO_START as f64)?;
            }
            let max = job.max_resamples.min(affordable);
            (max, max)
        }
    };
    let draws = per * resamples as f64;
    over(draws)?;
    let total = draws + jackknife_work(job, target);
    over(total)?;
    Ok(Work { total, max_resamples })
}
