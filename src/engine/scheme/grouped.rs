//! Schemes that read a label beside each row:
//!
//! - stratified: rows resampled with replacement within each stratum, each stratum keeping its
//!   size (Davison & Hinkley 1997, §3.7), so that the strata's shares of the sample are fixed as
//!   the design fixed them;
//! - cluster: whole clusters drawn with replacement, every row of a drawn cluster with it
//!   (Davison & Hinkley 1997, §3.8), for rows that are not independent within a cluster
//!   (sessions of one user, orders of one customer).
//!
//! The nested resamples of the studentized interval are drawn by the same scheme from within
//! each outer resample: rows within its strata, or clusters from its clusters.

use std::collections::HashMap;

use crate::engine::draw;
use rand_chacha::ChaCha8Rng;
use serde::{Deserialize, Serialize};
use utoipa::openapi::schema::{ObjectBuilder, Schema, SchemaType, Type};
use utoipa::openapi::RefOr;
use utoipa::{PartialSchema, ToSchema};

use super::{Resampler, SchemeError, Within};

/// A row's stratum or cluster: a string or an integer.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(untagged)]
pub enum Label {
    Integer(i64),
    /// An integer above i64's range (identifiers often are unsigned 64-bit).
    Unsigned(u64),
    Text(String),
}

impl PartialSchema for Label {
    /// One schema for both forms (the integer variants overlap, which `oneOf` forbids).
    fn schema() -> RefOr<Schema> {
        ObjectBuilder::new()
            .schema_type(SchemaType::from_iter([Type::Integer, Type::String]))
            .description(Some("A row's stratum or cluster: a string or an integer."))
            .into()
    }
}

impl ToSchema for Label {}

/// The groups of rows by label, in order of first appearance: the units of each group's rows.
fn groups(labels: &[Label], order: &[u32]) -> Vec<Vec<u32>> {
    let mut index: HashMap<&Label, usize> = HashMap::new();
    let mut out: Vec<Vec<u32>> = Vec::new();
    for (label, unit) in labels.iter().zip(order) {
        let g = *index.entry(label).or_insert_with(|| {
            out.push(Vec::new());
            out.len() - 1
        });
        out[g].push(*unit);
    }
    out
}

/// One label per row, or why not.
/// The stratified scheme's name and the field of its labels.
const STRATIFIED: (&str, &str) = ("stratified", "strata");
/// The cluster scheme's name and the field of its labels.
const CLUSTER: (&str, &str) = ("cluster", "clusters");

fn one_per_row(labels: &[Label], rows: usize, (scheme, field): (&'static str, &'static str)) -> Result<(), SchemeError> {
    match labels.len() == rows {
        true => Ok(()),
        false => Err(SchemeError::Labels {
            scheme,
            field,
            problem: format!(
                "has {} labels for {rows} rows; give one label per row, in the order of the rows",
                labels.len()
            ),
        }),
    }
}

/// As many rows as `rows` holds, drawn from it with replacement, counted in `w` by unit.
fn draw_from(rows: &[u32], rng: &mut ChaCha8Rng, w: &mut [f64]) {
    for _ in 0..rows.len() {
        w[rows[draw::index_below(rng, rows.len())] as usize] += 1.0;
    }
}

/// Rows resampled within their strata.
pub struct Stratified {
    strata: Vec<Vec<u32>>,
    total: f64,
}

impl Stratified {
    /// Every stratum needs two rows or more: a stratum of one row resamples to itself and
    /// carries no variation.
    pub fn new(labels: &[Label], order: &[u32]) -> Result<Self, SchemeError> {
        one_per_row(labels, order.len(), STRATIFIED)?;
        let strata = groups(labels, order);
        if let Some(i) = strata.iter().position(|s| s.len() < 2) {
            let label = labels.iter().zip(order).find(|(_, u)| **u == strata[i][0]).map(|(l, _)| l.clone());
            return Err(SchemeError::Labels {
                scheme: STRATIFIED.0,
                field: STRATIFIED.1,
                problem: format!(
                    "has a stratum of one row ({}); every stratum needs two rows or more to resample, so merge it with a neighbouring stratum",
                    label.map_or(String::new(), |l| format!("{l:?}"))
                ),
            });
        }
        Ok(Stratified {
            strata,
            total: order.len() as f64,
        })
    }
}

impl Resampler for Stratified {
    fn draw(&self, _: u64, rng: &mut ChaCha8Rng, w: &mut [f64]) -> Option<f64> {
        w.fill(0.0);
        for stratum in &self.strata {
            draw_from(stratum, rng, w);
        }
        None
    }

    /// The outer resample's rows written out stratum by stratum (each keeps its size).
    fn prepare_within(&self, outer: &[f64], within: &mut Within) {
        within.rows.clear();
        within.bounds.clear();
        within.expanded = true;
        within.total = self.total;
        for stratum in &self.strata {
            for unit in stratum {
                for _ in 0..outer[*unit as usize] as u64 {
                    within.rows.push(*unit);
                }
            }
            within.bounds.push(within.rows.len());
        }
    }

    /// A stratified resample of the outer resample: each stratum's rows drawn from its own.
    fn draw_within(&self, _: &[f64], within: &Within, rng: &mut ChaCha8Rng, w: &mut [f64]) {
        w.fill(0.0);
        let mut start = 0;
        for &end in &within.bounds {
            draw_from(&within.rows[start..end], rng, w);
            start = end;
        }
    }
}

/// Whole clusters drawn with replacement.
pub struct Cluster {
    clusters: Vec<Vec<u32>>,
    total: f64,
}

impl Cluster {
    /// Two clusters or more: one cluster resamples to itself.
    pub fn new(labels: &[Label], order: &[u32]) -> Result<Self, SchemeError> {
        one_per_row(labels, order.len(), CLUSTER)?;
        let clusters = groups(labels, order);
        if clusters.len() < 2 {
            return Err(SchemeError::Labels {
                scheme: CLUSTER.0,
                field: CLUSTER.1,
                problem: "has one cluster; resampling needs two clusters or more (with one, use iid on its rows, whose independence is then yours to vouch for)".into(),
            });
        }
        Ok(Cluster {
            clusters,
            total: order.len() as f64,
        })
    }
}

impl Resampler for Cluster {
    fn draw(&self, _: u64, rng: &mut ChaCha8Rng, w: &mut [f64]) -> Option<f64> {
        w.fill(0.0);
        let c = self.clusters.len();
        for _ in 0..c {
            for unit in &self.clusters[draw::index_below(rng, c)] {
                w[*unit as usize] += 1.0;
            }
        }
        None
    }

    /// The outer resample's clusters written out: cluster j as often as it was drawn (every
    /// row of a drawn cluster carries the cluster's count). `rows` holds cluster indices here.
    fn prepare_within(&self, outer: &[f64], within: &mut Within) {
        within.rows.clear();
        within.bounds.clear();
        within.expanded = true;
        within.total = self.total;
        for (j, cluster) in self.clusters.iter().enumerate() {
            for _ in 0..outer[cluster[0] as usize] as u64 {
                within.rows.push(j as u32);
            }
        }
    }

    /// A cluster resample of the outer resample: as many clusters, drawn from its clusters.
    fn draw_within(&self, _: &[f64], within: &Within, rng: &mut ChaCha8Rng, w: &mut [f64]) {
        w.fill(0.0);
        let drawn = &within.rows;
        for _ in 0..drawn.len() {
            for unit in &self.clusters[drawn[draw::index_below(rng, drawn.len())] as usize] {
                w[*unit as usize] += 1.0;
            }
        }
    }

    /// Rows of one cluster are not independent of each other; the clusters are.
    fn independent_rows(&self) -> bool {
        false
    }

    fn groups(&self) -> Option<&[Vec<u32>]> {
        Some(&self.clusters)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::rng::replicate_stream;

    fn labels(x: &[i64]) -> Vec<Label> {
        x.iter().map(|v| Label::Integer(*v)).collect()
    }

    #[test]
    fn strata_keep_their_sizes_and_clusters_stay_whole() {
        let order: Vec<u32> = (0..7).collect();
        let s = Stratified::new(&labels(&[1, 2, 1, 2, 2, 1, 1]), &order).unwrap();
        let c = Cluster::new(&labels(&[5, 5, 6, 6, 6, 7, 7]), &order).unwrap();
        let mut w = vec![0.0; 7];
        for i in 0..100 {
            s.draw(i, &mut replicate_stream(1, i), &mut w);
            assert_eq!(w[0] + w[2] + w[5] + w[6], 4.0);
            assert_eq!(w[1] + w[3] + w[4], 3.0);
            c.draw(i, &mut replicate_stream(2, i), &mut w);
            assert!(w[0] == w[1] && w[2] == w[3] && w[3] == w[4] && w[5] == w[6], "{w:?}");
        }
    }

    #[test]
    fn bad_labels_are_refused() {
        let order: Vec<u32> = (0..4).collect();
        assert!(Stratified::new(&labels(&[1, 1, 2]), &order).is_err());
        assert!(Stratified::new(&labels(&[1, 1, 1, 2]), &order).is_err());
        assert!(Cluster::new(&labels(&[3, 3, 3, 3]), &order).is_err());
        assert!(Cluster::new(
            &[
                Label::Text("a".into()),
                Label::Integer(1),
                Label::Text("a".into()),
                Label::Integer(1)
            ],
            &order
        )
        .is_ok());
    }
}
