//! Samples as the caller gave them, and their resampling-ready layout.
//!
//! A [`Sample`] keeps the rows in the order they were sent: a block scheme reads that order as
//! time, and a paired comparison reads it as the pairing. Its constructors check what the
//! engine needs of any sample (at least two observations, equal lengths, magnitudes whose sums
//! of squares stay finite) and report every problem at once, each with its [`Place`].
//!
//! Every resample is a vector of non-negative weights over *units* that add up to the sample
//! size. A [`Layout`] says what the units are: for one column, its values sorted once (raw rows
//! each have base weight 1; the distinct values of aggregated data their counts), with the unit
//! of every row kept so that row order is never lost; for named columns, the rows in the order
//! sent. Sorting once lets order statistics of any weighted resample be read in one pass, and
//! working with weights resamples aggregated data in O(distinct values).
//!
//! Group labels (strata, clusters) are per-row data of a sample read by the scheme that uses
//! them, so they travel with the sample and its scheme
//! ([`Resampled`](crate::engine::job::Resampled)).

use std::sync::Arc;

use rayon::prelude::*;
use sha2::{Digest, Sha256};

/// The largest magnitude accepted in data. A variance of such data is at most about 1e150, so
/// the squared deviations of its replicates, summed over a million of them, stay finite.
pub const MAX_MAGNITUDE: f64 = 1e75;

/// The fewest observations a bootstrap can work with.
pub const MIN_OBSERVATIONS: u64 = 2;

/// Where in a sample (or in the statistic's parameters) a problem lies.
#[derive(Debug, Clone, PartialEq)]
pub enum Place {
    /// The sample as a whole.
    Whole,
    /// The i-th value of one column (for aggregated data, of its distinct values).
    Value(usize),
    /// The i-th count of aggregated data.
    Count(usize),
    /// The counts of aggregated data as a whole.
    Counts,
    /// A named column as a whole.
    Column(String),
    /// The i-th value of a named column.
    ColumnValue(String, usize),
    /// A parameter of the statistic that names a column.
    Parameter(&'static str),
    /// The statistic as a whole.
    Statistic,
    /// The i-th edge of binned data.
    Edge(usize),
    /// The edges of binned data as a whole.
    Edges,
    /// The overflow of binned data.
    Overflow,
}

/// Why a sample cannot be used, or why a statistic cannot be computed on it. The texts speak of
/// the data and the statistic; the service adds where in its request the problem lies.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DataError {
    #[error("has {n} observation(s); a bootstrap needs at least {MIN_OBSERVATIONS}")]
    TooFew { n: u64 },
    #[error("has magnitude above {MAX_MAGNITUDE:e}, where sums of squares overflow double precision; rescale the data (other units)")]
    TooLarge { at: Place },
    #[error("has {len} entries but {other} has {expected}; they must be the same length")]
    LengthMismatch {
        at: Place,
        len: usize,
        other: String,
        expected: usize,
    },
    #[error("the counts add up to more than can be resampled")]
    CountsOverflow,
    #[error("must be above the edge before it ({previous}); got {edge}: edges are strictly increasing, one more than there are bins")]
    EdgeNotIncreasing { index: usize, previous: f64, edge: f64 },
    #[error("has {len} edge(s); k bins need k + 1 edges, so at least 2")]
    TooFewEdges { len: usize },
    #[error("has {counts} count(s) for {bins} bin(s); k + 1 edges bound k bins, so send one count per bin (one fewer count than edges)")]
    BinCounts { counts: usize, bins: usize },
    #[error("the counts and the overflow add up to {n} observation(s); a bootstrap needs at least {MIN_OBSERVATIONS}")]
    TooFewBinned { n: u64 },
    #[error("the {statistic} cannot be read from binned data (only the bins' counts are known, not the values inside them); on bins use {}", usable.join(", "))]
    NotOnBins {
        statistic: &'static str,
        usable: Vec<&'static str>,
    },
    #[error("{overflow} observation(s) lie above the last edge at unknown values, so the mean of these bins is undefined; add a bin up to a bound on the largest value, or use the median, a quantile or the exceedance of a threshold")]
    OverflowMean { overflow: u64 },
    #[error("{overflow} observation(s) lie above the last edge ({last_edge}) at unknown values, so the share above a threshold of {threshold} is unknown (anywhere from 0 to the overflow's share); add an edge at the threshold, or choose a threshold at or below the last edge")]
    OverflowExceedance { overflow: u64, threshold: f64, last_edge: f64 },
    #[error("needs at least one column")]
    NoColumns,
    #[error("the statistic {statistic} reads named columns, and this sample is one column")]
    NeedsColumns { statistic: &'static str },
    #[error("the statistic {statistic} reads one column, and this sample is named columns")]
    NeedsOneColumn { statistic: &'static str },
    #[error("the geometric mean needs positive values; {value} is not (drop or shift non-positive values, or use the median)")]
    NotPositive { index: usize, value: f64 },
    #[error("a proportion needs data of 0 and 1 only; {value} is neither (code successes as 1 and failures as 0)")]
    NotBinary { index: usize, value: f64 },
    #[error("the coefficient of variation divides by the mean, which is 0 for this data; use the standard deviation instead")]
    ZeroMean,
    #[error("dividing by n - 1 needs more than one observation")]
    TooFewForDivisor,
    #[error("column \"{name}\" is not in the data; the data has {}", quoted(available))]
    MissingColumn {
        parameter: &'static str,
        name: String,
        available: Vec<String>,
    },
    #[error("this column is constant, so {why}")]
    ConstantColumn { column: String, why: &'static str },
    #[error("the denominator column sums to 0, so the ratio of sums is undefined")]
    ZeroSum { column: String },
    #[error("the {statistic} needs at least {needed} rows")]
    TooFewRows { statistic: &'static str, needed: usize },
    #[error("the {statistic} of this data is undefined")]
    Undefined { statistic: &'static str },
    #[error("paired samples are rows given one by one (not aggregated), the same number on both sides; the baseline has {baseline} rows (or distinct values) and the candidate {candidate}")]
    NotPaired { baseline: usize, candidate: usize },
    #[error("the {statistic} of the baseline is {baseline} and of the candidate {candidate}: a ratio needs the baseline's above 0 and the candidate's 0 or more (a ratio of negative numbers reads backwards); compare with \"contrast\": \"difference\"")]
    RatioNotPositive {
        statistic: &'static str,
        baseline: f64,
        candidate: f64,
    },
}

fn quoted(names: &[String]) -> String {
    names.iter().map(|n| format!("\"{n}\"")).collect::<Vec<_>>().join(", ")
}

impl DataError {
    /// Where the problem lies.
    pub fn place(&self) -> Place {
        match self {
            DataError::TooLarge { at } | DataError::LengthMismatch { at, .. } => at.clone(),
            DataError::CountsOverflow => Place::Counts,
            DataError::NotPositive { index, .. } | DataError::NotBinary { index, .. } => Place::Value(*index),
            DataError::MissingColumn { parameter, .. } => Place::Parameter(parameter),
            DataError::ConstantColumn { column, .. } | DataError::ZeroSum { column } => Place::Column(column.clone()),
            DataError::EdgeNotIncreasing { index, .. } => Place::Edge(*index),
            DataError::BinCounts { .. } | DataError::TooFewBinned { .. } => Place::Counts,
            DataError::TooFewEdges { .. } => Place::Edges,
            DataError::NotOnBins { .. } => Place::Statistic,
            DataError::OverflowMean { .. } | DataError::OverflowExceedance { .. } => Place::Overflow,
            _ => Place::Whole,
        }
    }
}

/// A sample as the caller gave it. Only its constructors make one, so every `Sample` has been
/// checked. Shared, not copied: a job holds the request's sample without a second copy of
/// data that may run to millions of values.
#[derive(Debug, Clone, PartialEq)]
pub struct Sample(Arc<Form>);

/// The three forms a sample comes in.
#[derive(Debug, Clone, PartialEq)]
pub enum Form {
    /// One column of observations, in the order given.
    Column(Vec<f64>),
    /// Distinct values with how often each was observed.
    Aggregated { values: Vec<f64>, counts: Vec<u64> },
    /// Equal-length named columns read together as rows, in the order given.
    Columns { names: Vec<String>, columns: Vec<Vec<f64>> },
    /// A binned histogram: `counts[i]` observations in (edges[i], edges[i + 1]], and
    /// `overflow` above the last edge.
    Bins { edges: Vec<f64>, counts: Vec<u64>, overflow: u64 },
}

impl Sample {
    /// Each column of the sample in the order observed (none for aggregated or binned data,
    /// whose order is lost): what a block scheme reads as a series.
    pub fn series(&self) -> Vec<&[f64]> {
        match self.form() {
            Form::Column(x) => vec![x.as_slice()],
            Form::Columns { columns, .. } => columns.iter().map(Vec::as_slice).collect(),
            Form::Aggregated { .. } | Form::Bins { .. } => vec![],
        }
    }
}

/// Every value above [`MAX_MAGNITUDE`], placed by `at`.
fn too_large(x: &[f64], at: impl Fn(usize) -> Place, errors: &mut Vec<DataError>) {
    for (i, v) in x.iter().enumerate() {
        if v.abs() > MAX_MAGNITUDE || !v.is_finite() {
            errors.push(DataError::TooLarge { at: at(i) });
        }
    }
}

fn checked(form: Form, mut errors: Vec<DataError>) -> Result<Sample, Vec<DataError>> {
    let sample = Sample(Arc::new(form));
    if errors.is_empty() && sample.n() < MIN_OBSERVATIONS {
        errors.push(DataError::TooFew { n: sample.n() });
    }
    if errors.is_empty() {
        Ok(sample)
    } else {
        Err(errors)
    }
}

impl Sample {
    /// One column of observations.
    pub fn column(x: Vec<f64>) -> Result<Sample, Vec<DataError>> {
        let mut errors = Vec::new();
        too_large(&x, Place::Value, &mut errors);
        checked(Form::Column(x), errors)
    }

    /// Distinct values with their counts.
    pub fn aggregated(values: Vec<f64>, counts: Vec<u64>) -> Result<Sample, Vec<DataError>> {
        let mut errors = Vec::new();
        too_large(&values, Place::Value, &mut errors);
        if values.len() != counts.len() {
            errors.push(DataError::LengthMismatch {
                at: Place::Counts,
                len: counts.len(),
                other: "values".into(),
                expected: values.len(),
            });
        } else if counts.iter().try_fold(0u64, |a, c| a.checked_add(*c)).is_none() {
            errors.push(DataError::CountsOverflow);
        }
        checked(Form::Aggregated { values, counts }, errors)
    }

    /// A binned histogram: k + 1 strictly increasing edges (at least 2), k counts, and the
    /// observations above the last edge.
    pub fn bins(edges: Vec<f64>, counts: Vec<u64>, overflow: u64) -> Result<Sample, Vec<DataError>> {
        let mut errors = Vec::new();
        too_large(&edges, Place::Edge, &mut errors);
        for (i, pair) in edges.windows(2).enumerate() {
            if pair[1] <= pair[0] {
                errors.push(DataError::EdgeNotIncreasing {
                    index: i + 1,
                    previous: pair[0],
                    edge: pair[1],
                });
            }
        }
        let bins = edges.len().saturating_sub(1);
        if edges.len() < 2 {
            errors.push(DataError::TooFewEdges { len: edges.len() });
        } else if counts.len() != bins {
            errors.push(DataError::BinCounts {
                counts: counts.len(),
                bins,
            });
        }
        let n = counts.iter().try_fold(overflow, |a, c| a.checked_add(*c));
        match n {
            None => errors.push(DataError::CountsOverflow),
            Some(n) if errors.is_empty() && n < MIN_OBSERVATIONS => errors.push(DataError::TooFewBinned { n }),
            Some(_) => {}
        }
        checked(Form::Bins { edges, counts, overflow }, errors)
    }

    /// Named columns of equal length.
    pub fn columns(names: Vec<String>, columns: Vec<Vec<f64>>) -> Result<Sample, Vec<DataError>> {
        let mut errors = Vec::new();
        if columns.is_empty() {
            return Err(vec![DataError::NoColumns]);
        }
        for (name, c) in names.iter().zip(&columns) {
            too_large(c, |i| Place::ColumnValue(name.clone(), i), &mut errors);
            if c.len() != columns[0].len() {
                errors.push(DataError::LengthMismatch {
                    at: Place::Column(name.clone()),
                    len: c.len(),
                    other: format!("column \"{}\"", names[0]),
                    expected: columns[0].len(),
                });
            }
        }
        checked(Form::Columns { names, columns }, errors)
    }

    /// The form the sample came in.
    pub fn form(&self) -> &Form {
        &self.0
    }

    /// The number of observations (rows, or the sum of the counts).
    pub fn n(&self) -> u64 {
        match self.0.as_ref() {
            Form::Column(x) => x.len() as u64,
            Form::Aggregated { counts, .. } => counts.iter().sum(),
            Form::Columns { columns, .. } => columns.first().map_or(0, |c| c.len() as u64),
            Form::Bins { counts, overflow, .. } => counts.iter().sum::<u64>() + overflow,
        }
    }

    /// The number of rows as sent (for aggregated data, of distinct values; for bins, of bins):
    /// what the server's row limit bounds.
    pub fn rows(&self) -> usize {
        match self.0.as_ref() {
            Form::Column(x) => x.len(),
            Form::Aggregated { values, .. } => values.len(),
            Form::Columns { columns, .. } => columns.first().map_or(0, |c| c.len()),
            Form::Bins { counts, .. } => counts.len(),
        }
    }

    /// True when every observation has the same value (in every column).
    pub fn is_constant(&self) -> bool {
        let constant = |x: &[f64]| x.iter().all(|v| *v == x[0]);
        match self.0.as_ref() {
            Form::Column(x) => constant(x),
            Form::Aggregated { values, counts } => {
                let seen: Vec<f64> = values.iter().zip(counts).filter(|(_, c)| **c > 0).map(|(v, _)| *v).collect();
                constant(&seen)
            }
            Form::Columns { columns, .. } => columns.iter().all(|c| constant(c)),
            // Values inside a bin are spread over it, so no histogram is constant.
            Form::Bins { .. } => false,
        }
    }

    /// SHA-256 over a canonical encoding of the sample (form tag, lengths, names and the IEEE
    /// bits of every value), so a token can tell whether it is replayed on the same data.
    pub fn digest(&self) -> [u8; 32] {
        let mut h = Sha256::new();
        let values = |h: &mut Sha256, x: &[f64]| {
            h.update((x.len() as u64).to_le_bytes());
            // The same bytes as one update a value, handed over 8 KiB at a time (an update per
            // 8 bytes cost a quarter of the hashing).
            let mut buf = [0u8; 8 * 1024];
            for part in x.chunks(1024) {
                for (slot, v) in buf.chunks_exact_mut(8).zip(part) {
                    slot.copy_from_slice(&v.to_bits().to_le_bytes());
                }
                h.update(&buf[..8 * part.len()]);
            }
        };
        match self.0.as_ref() {
            Form::Column(x) => {
                h.update(b"column");
                values(&mut h, x);
            }
            Form::Aggregated { values, counts } => {
                h.update(b"aggregated");
                h.update((values.len() as u64).to_le_bytes());
                for (v, c) in values.iter().zip(counts) {
                    h.update(v.to_bits().to_le_bytes());
                    h.update(c.to_le_bytes());
                }
            }
            Form::Columns { names, columns } => {
                h.update(b"columns");
                h.update((names.len() as u64).to_le_bytes());
                // Columns by name: a JSON object's key order carries no meaning.
                let mut by_name: Vec<(&String, &Vec<f64>)> = names.iter().zip(columns).collect();
                by_name.sort_by(|a, b| a.0.cmp(b.0));
                for (name, col) in by_name {
                    h.update((name.len() as u64).to_le_bytes());
                    h.update(name.as_bytes());
                    values(&mut h, col);
                }
            }
            Form::Bins { edges, counts, overflow } => {
                h.update(b"bins");
                values(&mut h, edges);
                h.update((counts.len() as u64).to_le_bytes());
                for c in counts {
                    h.update(c.to_le_bytes());
                }
                h.update(overflow.to_le_bytes());
            }
        }
        h.finalize().into()
    }
}

/// One column laid out for resampling: units sorted by value, each with its base weight, and
/// for raw rows the unit of every row in the order sent.
#[derive(Debug, Clone)]
pub struct ColumnLayout {
    /// Unit values, ascending.
    pub x: Vec<f64>,
    /// How often each unit occurs in the sample (1 for raw rows).
    pub base: Vec<f64>,
    /// The sample size, Σ base.
    pub total: f64,
    /// True when every base weight is 1 (raw rows), so that rows can be drawn uniformly.
    pub raw: bool,
}

impl ColumnLayout {
    /// Raw rows: their values sorted once (a parallel sort of the values themselves, which reads
    /// memory in order; where each row went is worked out only for the schemes that read rows
    /// in order, by [`ColumnLayout::units_of_rows`]).
    pub fn rows(x: &[f64]) -> ColumnLayout {
        let mut sorted = x.to_vec();
        sorted.par_sort_unstable_by(f64::total_cmp);
        ColumnLayout {
            x: sorted,
            base: vec![1.0; x.len()],
            total: x.len() as f64,
            raw: true,
        }
    }

    /// For raw rows laid out from `rows` (the values in the order sent): the unit (sorted
    /// position) of each row, ties in the order sent. Sorts row numbers by their values, 4 bytes
    /// a row beside the data.
    pub fn units_of_rows(&self, rows: &[f64]) -> Vec<u32> {
        let mut order: Vec<u32> = (0..rows.len() as u32).collect();
        order.par_sort_unstable_by(|a, b| rows[*a as usize].total_cmp(&rows[*b as usize]).then(a.cmp(b)));
        let mut unit_of_row = vec![0u32; rows.len()];
        for (unit, row) in order.iter().enumerate() {
            unit_of_row[*row as usize] = unit as u32;
        }
        unit_of_row
    }

    /// Aggregated data: the observed distinct values, sorted, with their counts.
    pub fn aggregated(values: &[f64], counts: &[u64]) -> ColumnLayout {
        let mut pairs: Vec<(f64, u64)> = values.iter().copied().zip(counts.iter().copied()).filter(|p| p.1 > 0).collect();
        pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
        ColumnLayout {
            x: pairs.iter().map(|p| p.0).collect(),
            base: pairs.iter().map(|p| p.1 as f64).collect(),
            total: pairs.iter().map(|p| p.1 as f64).sum(),
            raw: false,
        }
    }
}

/// A binned histogram laid out for resampling. Its units are its cells that hold observations:
/// the bins with a count above 0, in order, then the overflow when it holds any (empty cells
/// can never be drawn, and leaving them out keeps an enumeration to the cells that can). A
/// resample's weights are counts per cell, so `iid` redraws them as a multinomial.
#[derive(Debug, Clone)]
pub struct BinLayout {
    /// The lower edge of each unit (the last edge for the overflow).
    pub lower: Vec<f64>,
    /// The upper edge of each unit (the last edge for the overflow).
    pub upper: Vec<f64>,
    /// The count of each unit.
    pub base: Vec<f64>,
    /// The sample size, Σ base, the overflow included.
    pub total: f64,
    /// True when the last unit is the overflow.
    pub overflow: bool,
    /// The last edge: where a quantile that falls in the overflow is reported.
    pub last_edge: f64,
}

impl BinLayout {
    pub fn of(edges: &[f64], counts: &[u64], overflow: u64) -> BinLayout {
        let last_edge = *edges.last().expect("checked: at least two edges");
        let mut b = BinLayout {
            lower: Vec::new(),
            upper: Vec::new(),
            base: Vec::new(),
            total: 0.0,
            overflow: overflow > 0,
            last_edge,
        };
        let cells = counts.iter().enumerate().map(|(i, c)| (edges[i], edges[i + 1], *c));
        for (lo, hi, c) in cells
            .chain(std::iter::once((last_edge, last_edge, overflow)))
            .filter(|cell| cell.2 > 0)
        {
            b.lower.push(lo);
            b.upper.push(hi);
            b.base.push(c as f64);
            b.total += c as f64;
        }
        b
    }

    /// The units that are bins (all but the overflow).
    pub fn bins(&self) -> usize {
        self.base.len() - usize::from(self.overflow)
    }
}

/// Named columns laid out for resampling; units are rows, in the order sent.
#[derive(Debug, Clone)]
pub struct TableLayout {
    pub names: Vec<String>,
    pub columns: Vec<Vec<f64>>,
    pub rows: usize,
    /// Every row's base weight, 1.
    pub base: Vec<f64>,
}

impl TableLayout {
    pub fn column(&self, name: &str) -> Option<&[f64]> {
        self.names.iter().position(|n| n == name).map(|i| self.columns[i].as_slice())
    }
}

/// The resampling-ready layout of a sample.
#[derive(Debug, Clone)]
pub enum Layout {
    Column(ColumnLayout),
    Table(TableLayout),
    Bins(BinLayout),
}

impl Layout {
    pub fn of(sample: &Sample) -> Layout {
        match sample.form() {
            Form::Column(x) => Layout::Column(ColumnLayout::rows(x)),
            Form::Aggregated { values, counts } => Layout::Column(ColumnLayout::aggregated(values, counts)),
            Form::Columns { names, columns } => {
                let rows = columns.first().map_or(0, |c| c.len());
                Layout::Table(TableLayout {
                    names: names.clone(),
                    columns: columns.clone(),
                    rows,
                    base: vec![1.0; rows],
                })
            }
            Form::Bins { edges, counts, overflow } => Layout::Bins(BinLayout::of(edges, counts, *overflow)),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn digest_tells_forms_and_values_apart() {
        let a = Sample::column(vec![1.0, 2.0]).unwrap();
        let b = Sample::column(vec![1.0, 2.000000000000001]).unwrap();
        let c = Sample::aggregated(vec![1.0, 2.0], vec![1, 1]).unwrap();
        assert_eq!(a.digest(), Sample::column(vec![1.0, 2.0]).unwrap().digest());
        assert_ne!(a.digest(), b.digest());
        assert_ne!(a.digest(), c.digest());
    }

    #[test]
    fn aggregated_is_sorted_and_drops_zero_counts() {
        let c = ColumnLayout::aggregated(&[3.0, 1.0, 2.0], &[2, 5, 0]);
        assert_eq!(c.x, vec![1.0, 3.0]);
        assert_eq!(c.base, vec![5.0, 2.0]);
        assert_eq!(c.total, 7.0);
    }

    #[test]
    fn raw_rows_keep_their_order_beside_the_sorted_units() {
        let x = [5.0, 1.0, 4.0, 1.0, 3.0];
        let c = ColumnLayout::rows(&x);
        assert_eq!(c.x, vec![1.0, 1.0, 3.0, 4.0, 5.0]);
        let units = c.units_of_rows(&x);
        assert_eq!(units, vec![4, 0, 3, 1, 2], "ties keep the order sent");
        let back: Vec<f64> = units.iter().map(|u| c.x[*u as usize]).collect();
        assert_eq!(back, x);
    }

    #[test]
    fn constructors_report_every_problem_with_its_place() {
        let e = Sample::column(vec![1.0, 2e75, -3e80]).unwrap_err();
        assert_eq!(
            e.iter().map(DataError::place).collect::<Vec<_>>(),
            [Place::Value(1), Place::Value(2)]
        );
        assert_eq!(Sample::column(vec![1.0]).unwrap_err(), [DataError::TooFew { n: 1 }]);
        let e = Sample::aggregated(vec![1.0, 2.0], vec![3]).unwrap_err();
        assert_eq!(e[0].place(), Place::Counts);
        let e = Sample::columns(vec!["x".into(), "y".into()], vec![vec![1.0, 2.0], vec![1.0]]).unwrap_err();
        assert_eq!(e[0].place(), Place::Column("y".into()));
        assert!(Sample::aggregated(vec![1.0, 2.0], vec![0, 1]).is_err(), "one observation in all");
        let e = Sample::bins(vec![0.0, 1.0, 1.0, 0.5], vec![1, 2], 0).unwrap_err();
        assert_eq!(
            e.iter().map(DataError::place).collect::<Vec<_>>(),
            [Place::Edge(2), Place::Edge(3), Place::Counts]
        );
        assert_eq!(
            Sample::bins(vec![0.0, 1.0], vec![0], 1).unwrap_err(),
            [DataError::TooFewBinned { n: 1 }]
        );
    }

    #[test]
    fn bins_keep_the_cells_that_hold_observations() {
        let s = Sample::bins(vec![0.0, 1.0, 2.0, 4.0], vec![3, 0, 2], 5).unwrap();
        assert_eq!(s.n(), 10);
        assert_eq!(s.rows(), 3);
        let Layout::Bins(b) = Layout::of(&s) else { panic!("bins") };
        assert_eq!(
            (b.lower, b.upper, b.base),
            (vec![0.0, 2.0, 4.0], vec![1.0, 4.0, 4.0], vec![3.0, 2.0, 5.0])
        );
        assert!(b.overflow);
        assert_eq!((b.total, b.last_edge), (10.0, 4.0));
        let other = Sample::bins(vec![0.0, 1.0, 2.0, 4.0], vec![3, 0, 2], 4).unwrap();
        assert_ne!(s.digest(), other.digest());
    }
}
