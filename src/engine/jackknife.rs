//! Leave-one-out (jackknife) values of a statistic, for the BCa acceleration.
//!
//! Quenouille, M. H. (1956), "Notes on bias in estimation", Biometrika 43; Efron & Tibshirani
//! (1993), ch. 11. Three paths, fastest first:
//! - a closed form in O(n) or O(n log n) where the statistic has one (mean, variance,
//!   quantiles, trimmed mean, ratio, correlation, slope …);
//! - leaving out one observation of each unit in turn (O(units) evaluations): up to
//!   [`GENERIC_LIMIT`] raw rows, or [`AGGREGATED_LIMIT`] distinct values of aggregated data;
//! - beyond that, for raw rows, a delete-a-group jackknife over [`GROUPS`] groups of equal
//!   size drawn by a fixed random permutation of the rows. With random groups the sums of
//!   cubes and squares of the per-group influences estimate those of the per-row influences,
//!   so the acceleration is estimated without bias at a fraction of the cost (a fixed
//!   permutation keeps it reproducible). Aggregated data beyond its limit has no jackknife:
//!   BCa then uses a = 0 and says so.
//!
//! The generic paths look at `stop` between evaluations and give up with [`Stopped`].

use std::sync::atomic::{AtomicBool, Ordering};

use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use crate::engine::scheme::Resampler;
use crate::engine::statistic::{Scratch, Weighted};

/// Raw rows up to which the generic jackknife leaves out each row in turn.
pub const GENERIC_LIMIT: usize = 2000;
/// Distinct values of aggregated data up to which each is left out in turn.
pub const AGGREGATED_LIMIT: usize = 20_000;
/// Groups of the delete-a-group jackknife beyond [`GENERIC_LIMIT`] raw rows.
pub const GROUPS: usize = 500;
/// Seed of the fixed permutation that forms the groups.
const GROUP_SEED: u64 = 0x6a61_636b_6b6e_6966;

crate::wire_enum! {
    /// How the jackknife of the BCa acceleration was computed.
    pub enum JackknifeKind {
        /// A closed form in O(n) or O(n log n).
        ClosedForm = "closed_form",
        /// Each observation left out in turn.
        LeaveOneOut = "leave_one_out",
        /// Groups of observations left out in turn (delete-a-group jackknife).
        Grouped = "grouped",
        /// Blocks of consecutive rows left out in turn, under a block scheme (the delete-a-block
        /// jackknife of Künsch 1989).
        Blocks = "blocks",
        /// Clusters left out in turn, under the cluster scheme.
        Clusters = "clusters",
    }
}

/// Jackknife values with how many observations each stands for.
#[derive(Debug, Clone)]
pub struct Jackknife {
    pub values: Vec<f64>,
    pub multiplicity: Vec<f64>,
    pub kind: JackknifeKind,
    /// The number of groups of a grouped jackknife.
    pub groups: Option<usize>,
}

/// The jackknife was stopped (deadline or cancellation).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Stopped;

/// The evaluations the jackknife of this statistic on `units` units of `raw` rows (or
/// aggregated values) costs, in units of one statistic evaluation's work per unit; for the
/// work estimate made before a job starts.
pub fn cost_in_units(closed_form: bool, units: usize, raw: bool) -> f64 {
    let u = units as f64;
    if closed_form {
        u
    } else if raw && units > GENERIC_LIMIT {
        GROUPS as f64 * u
    } else if !raw && units > AGGREGATED_LIMIT {
        0.0
    } else {
        u * u
    }
}

/// The jackknife of a statistic on its sample; `Ok(None)` with fewer than 3 observations, or
/// for aggregated data beyond [`AGGREGATED_LIMIT`] without a closed form.
pub fn jackknife(est: &dyn Weighted, stop: &(dyn Fn() -> bool + Sync)) -> Result<Option<Jackknife>, Stopped> {
    let u = est.units();
    if u.total < 3.0 {
        return Ok(None);
    }
    let base = u.base.to_vec();
    if let Some(values) = est.jackknife_closed() {
        return Ok(Some(Jackknife {
            values,
            multiplicity: base,
            kind: JackknifeKind::ClosedForm,
            groups: None,
        }));
    }
    let units = base.len();
    if (u.raw && units <= GENERIC_LIMIT) || (!u.raw && units <= AGGREGATED_LIMIT) {
        return leave_one_out(est, base, stop);
    }
    if !u.raw {
        return Ok(None);
    }
    grouped(est, base, stop)
}

/// The jackknife of a sample as its scheme resamples it: under a block scheme, blocks of
/// consecutive rows are left out ([`by_blocks`]), else [`jackknife`].
pub fn of_part(est: &dyn Weighted, resampler: &dyn Resampler, stop: &(dyn Fn() -> bool + Sync)) -> Result<Option<Jackknife>, Stopped> {
    if let Some(clusters) = resampler.groups() {
        return by_clusters(est, clusters, stop);
    }
    match resampler.blocks() {
        Some((order, block)) => by_blocks(est, order, block, stop),
        None => jackknife(est, stop),
    }
}

/// Leave out one cluster in turn (the units of each in `clusters`), each counting once: the
/// jackknife of the cluster scheme's unit of independence. Beyond [`GROUPS`] clusters, whole
/// clusters are dealt into [`GROUPS`] groups by a fixed permutation and a group left out at a
/// time, as [`grouped`] does with rows. `Ok(None)` with fewer than 3 clusters.
pub fn by_clusters(est: &dyn Weighted, clusters: &[Vec<u32>], stop: &(dyn Fn() -> bool + Sync)) -> Result<Option<Jackknife>, Stopped> {
    if clusters.len() < 3 {
        return Ok(None);
    }
    let mut order: Vec<usize> = (0..clusters.len()).collect();
    if clusters.len() > GROUPS {
        order.shuffle(&mut ChaCha8Rng::seed_from_u64(GROUP_SEED));
    }
    let count = clusters.len().min(GROUPS);
    let mut members: Vec<Vec<usize>> = vec![Vec::new(); count];
    for (k, c) in order.iter().enumerate() {
        members[k % count].extend(clusters[*c].iter().map(|u| *u as usize));
    }
    let clusters = &members;
    let values = leave_groups_out(est, est.units().base.to_vec(), &members, stop)?;
    Ok(Some(Jackknife {
        values,
        multiplicity: vec![1.0; clusters.len()],
        kind: JackknifeKind::Clusters,
        groups: Some(clusters.len()),
    }))
}

/// Leave out non-overlapping blocks of `block` consecutive rows (`order`: the unit of each row
/// in time order) in turn, each block counting once; for long series the blocks are widened to
/// n/[`GROUPS`] rows, so that at most [`GROUPS`] evaluations are made. `Ok(None)` with fewer
/// than 3 blocks.
pub fn by_blocks(est: &dyn Weighted, order: &[u32], block: usize, stop: &(dyn Fn() -> bool + Sync)) -> Result<Option<Jackknife>, Stopped> {
    let size = block.max(order.len().div_ceil(GROUPS)).max(1);
    let mut members: Vec<Vec<usize>> = order.chunks(size).map(|c| c.iter().map(|u| *u as usize).collect()).collect();
    // A short last block joins the one before it, so that every block left out is whole.
    if members.len() > 1 && members.last().is_some_and(|m| m.len() < size) {
        let last = members.pop().expect("a last block");
        members.last_mut().expect("a block before it").extend(last);
    }
    if members.len() < 3 {
        return Ok(None);
    }
    let count = members.len();
    let values = leave_groups_out(est, est.units().base.to_vec(), &members, stop)?;
    Ok(Some(Jackknife {
        values,
        multiplicity: vec![1.0; count],
        kind: JackknifeKind::Blocks,
        groups: Some(count),
    }))
}

/// The evaluations of a block jackknife of `rows` rows in blocks of `block`.
pub fn block_cost_in_units(rows: usize, block: usize) -> f64 {
    let blocks = rows.div_ceil(block.max(1)).min(GROUPS);
    blocks as f64 * rows as f64
}

/// Flags a stop once it is asked for, so that every worker sees it without asking again.
fn stop_flag(stop: &(dyn Fn() -> bool + Sync)) -> (AtomicBool, impl Fn(&AtomicBool) -> bool + Sync + '_) {
    let check = move |stopped: &AtomicBool| {
        if stopped.load(Ordering::Relaxed) || stop() {
            stopped.store(true, Ordering::Relaxed);
            true
        } else {
            false
        }
    };
    (AtomicBool::new(false), check)
}

/// Leave out one observation of each unit in turn.
fn leave_one_out(est: &dyn Weighted, base: Vec<f64>, stop: &(dyn Fn() -> bool + Sync)) -> Result<Option<Jackknife>, Stopped> {
    let units = base.len();
    let (stopped, check) = stop_flag(stop);
    let values: Vec<f64> = (0..units)
        .into_par_iter()
        .map_init(
            || (base.clone(), Scratch::with_units(units)),
            |(w, scratch), j| {
                if check(&stopped) {
                    return f64::NAN;
                }
                w[j] -= 1.0;
                let v = est.evaluate(w, scratch);
                w[j] += 1.0;
                v
            },
        )
        .collect();
    if stopped.load(Ordering::Relaxed) {
        return Err(Stopped);
    }
    Ok(Some(Jackknife {
        values,
        multiplicity: base,
        kind: JackknifeKind::LeaveOneOut,
        groups: None,
    }))
}

/// The statistic with each group of units left out in turn.
fn leave_groups_out(
    est: &dyn Weighted,
    base: Vec<f64>,
    members: &[Vec<usize>],
    stop: &(dyn Fn() -> bool + Sync),
) -> Result<Vec<f64>, Stopped> {
    let units = base.len();
    let (stopped, check) = stop_flag(stop);
    let values: Vec<f64> = members
        .par_iter()
        .map_init(
            || (base.clone(), Scratch::with_units(units)),
            |(w, scratch), rows| {
                if check(&stopped) {
                    return f64::NAN;
                }
                for r in rows {
                    w[*r] = 0.0;
                }
                let v = est.evaluate(w, scratch);
                for r in rows {
                    w[*r] = base[*r];
                }
                v
            },
        )
        .collect();
    match stopped.load(Ordering::Relaxed) {
        true => Err(Stopped),
        false => Ok(values),
    }
}

/// Leave out groups of rows in turn: [`GROUPS`] groups of (almost) equal size dealt by a fixed
/// permutation.
fn grouped(est: &dyn Weighted, base: Vec<f64>, stop: &(dyn Fn() -> bool + Sync)) -> Result<Option<Jackknife>, Stopped> {
    let units = base.len();
    // Rows dealt into GROUPS groups of (almost) equal size by a fixed permutation.
    let mut order: Vec<usize> = (0..units).collect();
    order.shuffle(&mut ChaCha8Rng::seed_from_u64(GROUP_SEED));
    let mut group_of = vec![0u32; units];
    for (k, row) in order.iter().enumerate() {
        group_of[*row] = (k % GROUPS) as u32;
    }
    let members: Vec<Vec<usize>> = {
        let mut m: Vec<Vec<usize>> = (0..GROUPS).map(|_| Vec::with_capacity(units / GROUPS + 1)).collect();
        for (row, g) in group_of.iter().enumerate() {
            m[*g as usize].push(row);
        }
        m
    };
    let values = leave_groups_out(est, base, &members, stop)?;
    // Each group counts once: with random groups Σ_g (Σ_{i∈g} Uᵢ)ᵏ estimates Σᵢ Uᵢᵏ for k = 2, 3
    // (the cross terms vanish in expectation), and the acceleration is a ratio of those sums.
    Ok(Some(Jackknife {
        values,
        multiplicity: vec![1.0; GROUPS],
        kind: JackknifeKind::Grouped,
        groups: Some(GROUPS),
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::data::ColumnLayout;
    use crate::engine::interval::bca::acceleration;
    use crate::engine::statistic::location::Mean;
    use crate::engine::statistic::{ColumnStatistic, Estimator};
    use rand_distr::{Distribution, StandardNormal};

    /// The mean without its closed form, to send it down the generic paths.
    struct OpaqueMean;
    impl ColumnStatistic for OpaqueMean {
        fn evaluate(&self, c: &ColumnLayout, w: &[f64], s: &mut Scratch) -> f64 {
            Mean.evaluate(c, w, s)
        }
    }

    fn bind(x: &[f64], stat: Box<dyn ColumnStatistic>) -> Estimator {
        Estimator::Column {
            data: ColumnLayout::rows(x),
            stat,
        }
    }

    #[test]
    fn grouped_acceleration_agrees_with_the_exact_one() {
        // Skewed data (lognormal, σ = 1.5), 50 000 rows: the grouped jackknife's acceleration
        // must match the closed form's. For such data numpy 2.4 measured, over 200 random
        // groupings into 500 groups, a mean of 0.01113 against the exact 0.01128 (no bias) and an
        // sd of 0.0020; our grouping is one fixed draw, so the tolerance is 4 sds, 0.008.
        // (Groups taken in sorted order, as an earlier version did, were biased threefold.)
        let mut rng = ChaCha8Rng::seed_from_u64(7);
        let x: Vec<f64> = (0..50_000)
            .map(|_| {
                let z: f64 = StandardNormal.sample(&mut rng);
                (1.5 * z).exp()
            })
            .collect();
        let never = || false;
        let exact = jackknife(&bind(&x, Box::new(Mean)), &never).unwrap().unwrap();
        assert_eq!(exact.kind, JackknifeKind::ClosedForm);
        let grouped = jackknife(&bind(&x, Box::new(OpaqueMean)), &never).unwrap().unwrap();
        assert_eq!((grouped.kind, grouped.groups), (JackknifeKind::Grouped, Some(GROUPS)));
        let a_exact = acceleration(&exact.values, &exact.multiplicity);
        let a_grouped = acceleration(&grouped.values, &grouped.multiplicity);
        assert!((a_exact - a_grouped).abs() < 0.008, "exact {a_exact} grouped {a_grouped}");
        assert!(a_exact > 0.0 && a_grouped > 0.0);
    }

    #[test]
    fn a_stop_request_ends_the_generic_jackknife() {
        let x: Vec<f64> = (0..1500).map(|i| i as f64).collect();
        assert_eq!(jackknife(&bind(&x, Box::new(OpaqueMean)), &|| true).unwrap_err(), Stopped);
    }
}
