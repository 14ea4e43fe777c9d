//! Validated sample forms and their prepared, resampling-ready layout.
//!
//! Every resample in the engine is a vector of non-negative weights over *units*: for a raw
//! column the units are its rows (each observed once), for aggregated data the distinct values
//! (observed `counts[j]` times), for named columns the rows. An `iid` resample gives integer
//! weights (how often each unit was drawn), the Bayesian scheme real Dirichlet weights; in both
//! the weights add up to the resample size. Working with weights means aggregated data is
//! resampled in O(distinct values) rather than O(total count), and one implementation of each
//! statistic serves every scheme.

use sha2::{Digest, Sha256};

/// A sample as the caller gave it, already checked for finiteness and shape.
#[derive(Debug, Clone, PartialEq)]
pub enum Sample {
    /// One column of observations, in the order given.
    Column(Vec<f64>),
    /// Distinct values with how often each was observed.
    Aggregated { values: Vec<f64>, counts: Vec<u64> },
    /// Equal-length named columns resampled together as rows.
    Columns { names: Vec<String>, columns: Vec<Vec<f64>> },
}

impl Sample {
    /// The number of observations (rows, or the sum of the counts).
    pub fn n(&self) -> u64 {
        match self {
            Sample::Column(x) => x.len() as u64,
            Sample::Aggregated { counts, .. } => counts.iter().sum(),
            Sample::Columns { columns, .. } => columns.first().map_or(0, |c| c.len() as u64),
        }
    }

    /// The number of units a resample puts weights on.
    pub fn units(&self) -> usize {
        match self {
            Sample::Column(x) => x.len(),
            Sample::Aggregated { values, .. } => values.len(),
            Sample::Columns { columns, .. } => columns.first().map_or(0, |c| c.len()),
        }
    }

    /// The number of units with a positive count (what a resample spreads weight over).
    pub fn units_with_weight(&self) -> usize {
        match self {
            Sample::Aggregated { counts, .. } => counts.iter().filter(|c| **c > 0).count(),
            _ => self.units(),
        }
    }

    /// SHA-256 over a canonical encoding of the sample (form tag, lengths, names and the IEEE
    /// bits of every value), so a token can tell whether it is replayed on the same data.
    pub fn digest(&self) -> [u8; 32] {
        let mut h = Sha256::new();
        match self {
            Sample::Column(x) => {
                h.update(b"column");
                h.update((x.len() as u64).to_le_bytes());
                for v in x {
                    h.update(v.to_bits().to_le_bytes());
                }
            }
            Sample::Aggregated { values, counts } => {
                h.update(b"aggregated");
                h.update((values.len() as u64).to_le_bytes());
                for (v, c) in values.iter().zip(counts) {
                    h.update(v.to_bits().to_le_bytes());
                    h.update(c.to_le_bytes());
                }
            }
            Sample::Columns { names, columns } => {
                h.update(b"columns");
                h.update((names.len() as u64).to_le_bytes());
                // Columns by name: a JSON object's key order carries no meaning.
                let mut by_name: Vec<(&String, &Vec<f64>)> = names.iter().zip(columns).collect();
                by_name.sort_by(|a, b| a.0.cmp(b.0));
                for (name, col) in by_name {
                    h.update((name.len() as u64).to_le_bytes());
                    h.update(name.as_bytes());
                    h.update((col.len() as u64).to_le_bytes());
                    for v in col {
                        h.update(v.to_bits().to_le_bytes());
                    }
                }
            }
        }
        h.finalize().into()
    }
}

/// One column laid out for resampling: units sorted by value, each with its base weight.
///
/// Sorting once up front lets order statistics of any weighted resample be read in one pass
/// over the cumulative weights, without sorting per replicate.
#[derive(Debug, Clone)]
pub struct SortedColumn {
    /// Unit values, ascending.
    pub x: Vec<f64>,
    /// How often each unit occurs in the sample (1 for raw rows).
    pub base: Vec<f64>,
    /// The sample size, Σ base.
    pub total: f64,
    /// True when every base weight is 1 (raw rows), so `iid` can draw units uniformly.
    pub raw: bool,
}

/// Named columns laid out for resampling; units are rows.
#[derive(Debug, Clone)]
pub struct RowTable {
    pub names: Vec<String>,
    pub columns: Vec<Vec<f64>>,
    pub rows: usize,
}

impl RowTable {
    pub fn column(&self, name: &str) -> Option<&[f64]> {
        self.names.iter().position(|n| n == name).map(|i| self.columns[i].as_slice())
    }
}

/// The resampling-ready layout of a sample.
#[derive(Debug, Clone)]
pub enum Prepared {
    One(SortedColumn),
    Rows(RowTable),
}

impl Prepared {
    pub fn from_sample(sample: &Sample) -> Prepared {
        match sample {
            Sample::Column(x) => {
                let mut v = x.clone();
                v.sort_by(f64::total_cmp);
                let n = v.len();
                Prepared::One(SortedColumn {
                    x: v,
                    base: vec![1.0; n],
                    total: n as f64,
                    raw: true,
                })
            }
            Sample::Aggregated { values, counts } => {
                let mut pairs: Vec<(f64, u64)> = values.iter().copied().zip(counts.iter().copied()).filter(|p| p.1 > 0).collect();
                pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
                let total = pairs.iter().map(|p| p.1 as f64).sum();
                Prepared::One(SortedColumn {
                    x: pairs.iter().map(|p| p.0).collect(),
                    base: pairs.iter().map(|p| p.1 as f64).collect(),
                    total,
                    raw: false,
                })
            }
            Sample::Columns { names, columns } => Prepared::Rows(RowTable {
                names: names.clone(),
                columns: columns.clone(),
                rows: columns.first().map_or(0, |c| c.len()),
            }),
        }
    }

    /// Number of units that carry weights.
    pub fn units(&self) -> usize {
        match self {
            Prepared::One(c) => c.x.len(),
            Prepared::Rows(t) => t.rows,
        }
    }

    /// Base weights: the weights of the sample itself.
    pub fn base_weights(&self) -> Vec<f64> {
        match self {
            Prepared::One(c) => c.base.clone(),
            Prepared::Rows(t) => vec![1.0; t.rows],
        }
    }

    /// Sample size (total base weight).
    pub fn total(&self) -> f64 {
        match self {
            Prepared::One(c) => c.total,
            Prepared::Rows(t) => t.rows as f64,
        }
    }

    /// True when every unit has base weight one.
    pub fn raw_rows(&self) -> bool {
        match self {
            Prepared::One(c) => c.raw,
            Prepared::Rows(_) => true,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn digest_tells_forms_and_values_apart() {
        let a = Sample::Column(vec![1.0, 2.0]);
        let b = Sample::Column(vec![1.0, 2.000000000000001]);
        let c = Sample::Aggregated {
            values: vec![1.0, 2.0],
            counts: vec![1, 1],
        };
        assert_eq!(a.digest(), Sample::Column(vec![1.0, 2.0]).digest());
        assert_ne!(a.digest(), b.digest());
        assert_ne!(a.digest(), c.digest());
    }

    #[test]
    fn aggregated_is_sorted_and_drops_zero_counts() {
        let s = Sample::Aggregated {
            values: vec![3.0, 1.0, 2.0],
            counts: vec![2, 5, 0],
        };
        let Prepared::One(c) = Prepared::from_sample(&s) else {
            panic!("one column")
        };
        assert_eq!(c.x, vec![1.0, 3.0]);
        assert_eq!(c.base, vec![5.0, 2.0]);
        assert_eq!(c.total, 7.0);
        assert_eq!(s.n(), 7);
    }
}
