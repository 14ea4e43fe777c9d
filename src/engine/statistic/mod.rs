//! The statistics catalogue.
//!
//! Every statistic is evaluated on a *weighted* view of one sample: weights over the units of
//! its [`Layout`](crate::engine::data::Layout) that add up to the resample size. The sample itself
//! is the case where every weight is the unit's base count. One implementation per statistic
//! therefore serves the estimate, `iid` resamples (integer weights), Bayesian resamples
//! (Dirichlet weights), exact enumeration and the jackknife (one weight lowered by one).
//!
//! A statistic is defined once, in its family file: a spec type (its parameters, with their
//! ranges, defaults and docs, which the wire format, the OpenAPI document and the catalogue are
//! derived from), what it needs of the data, and its evaluation. [`statistics!`] below registers
//! each one with a single line. Families:
//!
//! - [`location`]: mean, trimmed mean, geometric mean, proportion;
//! - [`quantile`]: median, quantile (Hyndman–Fan definition 7), interquartile range, MAD;
//! - [`spread`]: variance, standard deviation, coefficient of variation;
//! - [`association`]: ratio of sums, Pearson and Spearman correlation, least-squares slope;
//! - [`binned`]: the statistics that a binned histogram gives (quantiles, mean, exceedance),
//!   read under the assumptions it states.

pub mod association;
pub mod binned;
pub mod location;
pub mod quantile;
pub mod shortcut;
pub mod spread;

use crate::engine::data::{BinLayout, ColumnLayout, DataError, Form, Layout, Sample, TableLayout};
use crate::engine::statistic::shortcut::Shortcut;
use binned::{BinStatistic, Note};

/// A statistic of one column, evaluated on a weighted view of it.
pub trait ColumnStatistic: Send + Sync {
    /// The value on a weighted resample; weights add up to the resample size. May be non-finite
    /// where the statistic is undefined on that resample; the driver counts and drops those.
    fn evaluate(&self, c: &ColumnLayout, w: &[f64], scratch: &mut Scratch) -> f64;

    /// The value on the sample itself: [`ColumnStatistic::evaluate`] at the base weights, or a
    /// quicker way to the same number.
    fn estimate(&self, c: &ColumnLayout, scratch: &mut Scratch) -> f64 {
        self.evaluate(c, &c.base, scratch)
    }

    /// Closed-form leave-one-out values, one per unit (leaving out one observation of that
    /// unit), in O(units) or O(units log units). `None` sends the jackknife to the generic path.
    fn jackknife_closed(&self, _c: &ColumnLayout) -> Option<Vec<f64>> {
        None
    }

    /// An analytic (delta-method or plug-in) standard error on a weighted sample, for the
    /// studentized interval; `None` means a nested bootstrap is needed.
    fn analytic_se(&self, _c: &ColumnLayout, _w: &[f64]) -> Option<f64> {
        None
    }

    /// How an `iid` replicate is computed straight from its stream without weights, where that
    /// changes the cost class (see [`crate::engine::statistic::shortcut`]); `None` for the plain path.
    fn shortcut(&self, _c: &ColumnLayout) -> Option<Shortcut> {
        None
    }
}

/// A statistic of named columns read together as rows, evaluated on a weighted view of them.
pub trait TableStatistic: Send + Sync {
    /// See [`ColumnStatistic::evaluate`].
    fn evaluate(&self, t: &TableLayout, w: &[f64], scratch: &mut Scratch) -> f64;

    /// See [`ColumnStatistic::jackknife_closed`].
    fn jackknife_closed(&self, _t: &TableLayout) -> Option<Vec<f64>> {
        None
    }

    /// See [`ColumnStatistic::analytic_se`].
    fn analytic_se(&self, _t: &TableLayout, _w: &[f64]) -> Option<f64> {
        None
    }
}

/// The parameters of a statistic of one column: what it says about itself before it sees data,
/// and how it is built for a sample.
pub trait ColumnSpec {
    /// True when the built statistic has an analytic standard error.
    const ANALYTIC_SE: bool = false;

    /// Check the sample (every problem at once) and build the statistic.
    fn build(&self, c: &ColumnLayout, values: &[f64]) -> Result<Box<dyn ColumnStatistic>, Vec<DataError>>;

    /// Work per unit per evaluation relative to the mean, for the work estimate.
    fn relative_cost(&self) -> f64 {
        1.0
    }

    /// True when the built statistic has a closed-form jackknife.
    fn closed_jackknife(&self) -> bool {
        true
    }

    /// True for a statistic of the extremes of a sample of `n`, whose bootstrap distribution is
    /// known to be unreliable.
    fn reads_extremes(&self, _n: f64) -> bool {
        false
    }

    /// True when the statistic can be read from binned data: then [`ColumnSpec::build_bins`]
    /// builds it.
    const ON_BINS: bool = false;

    /// Check binned data (every problem at once) and build the statistic of it; `None` for a
    /// statistic that bins cannot give.
    fn build_bins(&self, _b: &BinLayout) -> Option<Result<Box<dyn BinStatistic>, Vec<DataError>>> {
        None
    }
}

/// The parameters of a statistic of named columns. See [`ColumnSpec`].
pub trait TableSpec {
    const ANALYTIC_SE: bool = false;

    /// The columns it reads, each with the parameter that names it.
    fn columns(&self) -> [(&'static str, &str); 2];

    fn build(&self, t: &TableLayout, columns: [usize; 2]) -> Result<Box<dyn TableStatistic>, Vec<DataError>>;

    fn relative_cost(&self) -> f64 {
        1.0
    }

    fn closed_jackknife(&self) -> bool {
        true
    }

    fn reads_extremes(&self, _n: f64) -> bool {
        false
    }
}

/// What a statistic reads: one column, or named columns read together as rows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shape {
    Column,
    Table,
}

/// The registry: one line per statistic, `shape "wire name" Variant(spec type)`. It defines
/// [`StatisticSpec`], the tagged union the wire format and the OpenAPI document are derived
/// from, and its dispatch to each spec.
macro_rules! statistics {
    ($( $shape:ident $wire:tt $variant:ident($spec:ty), )+) => {
        /// A statistic with its parameters: `{"name": ..., parameters}`. Responses echo it
        /// normalised, every parameter given.
        #[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize, utoipa::ToSchema)]
        #[serde(tag = "name")]
        pub enum StatisticSpec {
            $( #[serde(rename = $wire)] $variant(#[schema(inline)] $spec), )+
        }

        impl StatisticSpec {
            /// Every statistic's name, in catalogue order.
            pub const NAMES: &'static [&'static str] = &[$($wire),+];

            /// The catalogue name.
            pub fn name(&self) -> &'static str {
                match self { $(Self::$variant(_) => $wire),+ }
            }

            /// What the statistic reads.
            pub fn shape(&self) -> Shape {
                match self { $(Self::$variant(_) => Shape::$shape),+ }
            }

            /// The names of the statistics that can be read from binned data, in catalogue order.
            pub fn on_bins() -> Vec<&'static str> {
                let on = [$(statistics!(@bins $shape, $spec)),+];
                Self::NAMES.iter().zip(on).filter(|(_, on)| *on).map(|(name, _)| *name).collect()
            }

            /// The shape and analytic-standard-error fact of the statistic called `name`.
            pub fn facts_of(name: &str) -> Option<(Shape, bool)> {
                match name { $($wire => Some((Shape::$shape, statistics!(@analytic $shape, $spec))),)+ _ => None }
            }

            /// True when the statistic has an analytic standard error (studentized intervals
            /// need no nested bootstrap).
            pub fn has_analytic_se(&self) -> bool {
                match self { $(Self::$variant(_) => statistics!(@analytic $shape, $spec)),+ }
            }

            /// Work per unit per evaluation relative to the mean.
            pub fn relative_cost(&self) -> f64 {
                match self { $(Self::$variant(s) => s.relative_cost()),+ }
            }

            /// True when the statistic has a closed-form jackknife.
            pub fn has_closed_jackknife(&self) -> bool {
                match self { $(Self::$variant(s) => s.closed_jackknife()),+ }
            }

            /// True for a statistic of the extremes of a sample of `n`.
            pub fn reads_extremes(&self, n: f64) -> bool {
                match self { $(Self::$variant(s) => s.reads_extremes(n)),+ }
            }

            /// Check the statistic against the sample (every problem at once) and bind it to
            /// the sample's layout.
            pub fn build(&self, sample: &Sample) -> Result<Estimator, Vec<DataError>> {
                match self { $(Self::$variant(s) => statistics!(@build $shape, s, sample, $wire)),+ }
            }

            /// Read the parameters of the statistic called `name` (the object without its
            /// name); `None` for a name that is not in the catalogue.
            pub fn deserialize_params<'de, D: serde::Deserializer<'de>>(name: &str, d: D) -> Option<Result<Self, D::Error>> {
                match name {
                    $($wire => Some(<$spec as serde::Deserialize>::deserialize(d).map(Self::$variant)),)+
                    _ => None,
                }
            }
        }
    };
    (@analytic Column, $spec:ty) => { <$spec as ColumnSpec>::ANALYTIC_SE };
    (@analytic Table, $spec:ty) => { <$spec as TableSpec>::ANALYTIC_SE };
    (@bins Column, $spec:ty) => { <$spec as ColumnSpec>::ON_BINS };
    (@bins Table, $spec:ty) => { false };
    (@build Column, $s:ident, $sample:ident, $wire:tt) => { build_column($s, $sample, $wire) };
    (@build Table, $s:ident, $sample:ident, $wire:tt) => { build_table($s, $sample, $wire) };
}

statistics! {
    Column "mean" Mean(location::MeanSpec),
    Column "median" Median(quantile::MedianSpec),
    Column "quantile" Quantile(quantile::QuantileSpec),
    Column "trimmed_mean" TrimmedMean(location::TrimmedMeanSpec),
    Column "variance" Variance(spread::VarianceSpec),
    Column "std_dev" StdDev(spread::StdDevSpec),
    Column "mad" Mad(quantile::MadSpec),
    Column "iqr" Iqr(quantile::IqrSpec),
    Column "geometric_mean" GeometricMean(location::GeometricMeanSpec),
    Column "coefficient_of_variation" CoefficientOfVariation(spread::CoefficientOfVariationSpec),
    Column "proportion" Proportion(location::ProportionSpec),
    Column "exceedance" Exceedance(location::ExceedanceSpec),
    Table "ratio" Ratio(association::RatioSpec),
    Table "correlation" Correlation(association::CorrelationSpec),
    Table "slope" Slope(association::SlopeSpec),
}

impl Default for StatisticSpec {
    /// The mean: the statistic of a request that names none.
    fn default() -> Self {
        StatisticSpec::Mean(location::MeanSpec {})
    }
}

fn build_column(spec: &impl ColumnSpec, sample: &Sample, name: &'static str) -> Result<Estimator, Vec<DataError>> {
    let values = match sample.form() {
        Form::Column(x) => x.as_slice(),
        Form::Aggregated { values, .. } => values.as_slice(),
        Form::Columns { .. } => return Err(vec![DataError::NeedsOneColumn { statistic: name }]),
        Form::Bins { .. } => return build_bins(spec, sample, name),
    };
    let Layout::Column(data) = Layout::of(sample) else {
        return Err(vec![DataError::NeedsOneColumn { statistic: name }]);
    };
    let stat = spec.build(&data, values)?;
    Ok(Estimator::Column { data, stat })
}

fn build_bins(spec: &impl ColumnSpec, sample: &Sample, name: &'static str) -> Result<Estimator, Vec<DataError>> {
    let Layout::Bins(data) = Layout::of(sample) else {
        unreachable!("bins lay out as bins")
    };
    let refused = || {
        vec![DataError::NotOnBins {
            statistic: name,
            usable: StatisticSpec::on_bins(),
        }]
    };
    let stat = spec.build_bins(&data).ok_or_else(refused)??;
    Ok(Estimator::Bins { data, stat })
}

fn build_table(spec: &impl TableSpec, sample: &Sample, name: &'static str) -> Result<Estimator, Vec<DataError>> {
    let Layout::Table(data) = Layout::of(sample) else {
        return Err(vec![DataError::NeedsColumns { statistic: name }]);
    };
    let mut problems = Vec::new();
    let mut index = [0; 2];
    for (k, (parameter, column)) in spec.columns().into_iter().enumerate() {
        match data.names.iter().position(|n| n == column) {
            Some(i) => index[k] = i,
            None => problems.push(DataError::MissingColumn {
                parameter,
                name: column.to_string(),
                available: data.names.clone(),
            }),
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    if data.rows < 2 {
        return Err(vec![DataError::TooFewRows {
            statistic: name,
            needed: 2,
        }]);
    }
    let stat = spec.build(&data, index)?;
    Ok(Estimator::Table { data, stat })
}

/// A statistic bound to the layout of its sample: everything the driver evaluates.
pub enum Estimator {
    Column {
        data: ColumnLayout,
        stat: Box<dyn ColumnStatistic>,
    },
    Table {
        data: TableLayout,
        stat: Box<dyn TableStatistic>,
    },
    Bins {
        data: BinLayout,
        stat: Box<dyn BinStatistic>,
    },
}

/// What a resampler needs to know of a sample's units.
#[derive(Debug, Clone, Copy)]
pub struct Units<'a> {
    /// The base weight of every unit (its count in the sample).
    pub base: &'a [f64],
    /// The sample size, Σ base.
    pub total: f64,
    /// True when every unit is one row.
    pub raw: bool,
}

impl Estimator {
    pub fn evaluate(&self, w: &[f64], scratch: &mut Scratch) -> f64 {
        match self {
            Estimator::Column { data, stat } => stat.evaluate(data, w, scratch),
            Estimator::Table { data, stat } => stat.evaluate(data, w, scratch),
            Estimator::Bins { data, stat } => stat.evaluate(data, w, scratch),
        }
    }

    pub fn jackknife_closed(&self) -> Option<Vec<f64>> {
        match self {
            Estimator::Column { data, stat } => stat.jackknife_closed(data),
            Estimator::Table { data, stat } => stat.jackknife_closed(data),
            Estimator::Bins { data, stat } => stat.jackknife_closed(data),
        }
    }

    /// True when the jackknife has a closed form, given what the statistic's spec says of its
    /// statistic on raw or aggregated data (on bins the built statistic says).
    pub fn closed_jackknife(&self, spec: bool) -> bool {
        match self {
            Estimator::Bins { stat, .. } => stat.closed_jackknife(),
            _ => spec,
        }
    }

    pub fn analytic_se(&self, w: &[f64]) -> Option<f64> {
        match self {
            Estimator::Column { data, stat } => stat.analytic_se(data, w),
            Estimator::Table { data, stat } => stat.analytic_se(data, w),
            Estimator::Bins { data, stat } => stat.analytic_se(data, w),
        }
    }

    /// The shortcut for `iid` replicates of a statistic of one column, where it has one.
    pub fn shortcut(&self) -> Option<Shortcut> {
        match self {
            Estimator::Column { data, stat } => stat.shortcut(data),
            _ => None,
        }
    }

    /// The layout of a statistic of one column.
    pub fn column(&self) -> Option<&ColumnLayout> {
        match self {
            Estimator::Column { data, .. } => Some(data),
            _ => None,
        }
    }

    /// What reading the statistic from this data assumed that the caller should know.
    pub fn notes(&self) -> Vec<Note> {
        match self {
            Estimator::Bins { data, stat } => stat.notes(data),
            _ => Vec::new(),
        }
    }

    /// The units a resample puts weight on.
    pub fn units(&self) -> Units<'_> {
        match self {
            Estimator::Column { data, .. } => Units {
                base: &data.base,
                total: data.total,
                raw: data.raw,
            },
            Estimator::Table { data, .. } => Units {
                base: &data.base,
                total: data.rows as f64,
                raw: true,
            },
            Estimator::Bins { data, .. } => Units {
                base: &data.base,
                total: data.total,
                raw: false,
            },
        }
    }

    /// The statistic on the sample itself.
    pub fn estimate(&self) -> f64 {
        let units = self.units();
        let scratch = &mut Scratch::with_units(units.base.len());
        match self {
            Estimator::Column { data, stat } => stat.estimate(data, scratch),
            _ => self.evaluate(units.base, scratch),
        }
    }

    /// True when the units are rows (raw rows of a column, or the rows of named columns), not
    /// aggregated or binned data, which have no rows.
    pub fn has_rows(&self) -> bool {
        match self {
            Estimator::Column { data, .. } => data.raw,
            Estimator::Bins { .. } => false,
            Estimator::Table { .. } => true,
        }
    }

    /// The unit of every row of `sample` (the sample this was built from) in the order sent,
    /// when the units are rows; `None` for aggregated and binned data.
    pub fn unit_of_row(&self, sample: &Sample) -> Option<Vec<u32>> {
        match (self, sample.form()) {
            (Estimator::Column { data, .. }, Form::Column(x)) if data.raw => Some(data.units_of_rows(x)),
            (Estimator::Table { data, .. }, _) => Some((0..data.rows as u32).collect()),
            _ => None,
        }
    }
}

/// Anything evaluated on weights over units: a statistic bound to its sample, or a contrast of
/// two statistics bound to the rows their samples share. The jackknife and the nested bootstrap
/// work on it.
pub trait Weighted: Sync {
    /// The units a resample puts weight on.
    fn units(&self) -> Units<'_>;
    /// The value on weighted units.
    fn evaluate(&self, w: &[f64], scratch: &mut Scratch) -> f64;
    /// Closed-form leave-one-out values, where there is a closed form.
    fn jackknife_closed(&self) -> Option<Vec<f64>> {
        None
    }
    /// An analytic standard error on weighted units, where there is one.
    fn analytic_se(&self, _w: &[f64]) -> Option<f64> {
        None
    }
}

impl Weighted for Estimator {
    fn units(&self) -> Units<'_> {
        Estimator::units(self)
    }
    fn evaluate(&self, w: &[f64], scratch: &mut Scratch) -> f64 {
        Estimator::evaluate(self, w, scratch)
    }
    fn jackknife_closed(&self) -> Option<Vec<f64>> {
        Estimator::jackknife_closed(self)
    }
    fn analytic_se(&self, w: &[f64]) -> Option<f64> {
        Estimator::analytic_se(self, w)
    }
}

/// Per-worker scratch space, so that evaluating a statistic on a replicate never allocates.
#[derive(Debug, Default, Clone)]
pub struct Scratch {
    pub a: Vec<f64>,
    pub b: Vec<f64>,
    /// The two samples' weights of a paired resample.
    pub pair: [Vec<f64>; 2],
}

impl Scratch {
    pub fn with_units(units: usize) -> Self {
        Scratch {
            a: Vec::with_capacity(units),
            b: Vec::with_capacity(units),
            pair: [Vec::new(), Vec::new()],
        }
    }
}

/// a + frac·(b − a), exactly a when frac is 0 (the interpolation of definition 7 quantiles).
#[inline]
pub(crate) fn interpolate(a: f64, b: f64, frac: f64) -> f64 {
    if frac == 0.0 {
        a
    } else {
        a + frac * (b - a)
    }
}

pub(crate) fn weighted_mean(x: &[f64], w: &[f64]) -> f64 {
    let (mut sw, mut sx) = (0.0, 0.0);
    for (xi, wi) in x.iter().zip(w) {
        sw += wi;
        sx += wi * xi;
    }
    sx / sw
}

/// Plug-in (divide by Σw) variance of a weighted column, two-pass.
pub(crate) fn weighted_plugin_variance(x: &[f64], w: &[f64]) -> f64 {
    let m = weighted_mean(x, w);
    let (mut sw, mut ss) = (0.0, 0.0);
    for (xi, wi) in x.iter().zip(w) {
        let d = xi - m;
        sw += wi;
        ss += wi * d * d;
    }
    ss / sw
}

/// Leave-one-out means in O(n): removing one observation of unit j gives (S − x_j)/(N − 1).
/// Computed on centred values so that large offsets do not cancel. The centred sum is
/// compensated: when one value dwarfs the rest (10¹⁹ among values near 100), the plain centred
/// sum's rounding (thousands) swamps what is left when the large value is left out, which came
/// out negative for positive data. What remains is the rounding of x_j − m over N − 1 and a
/// rounding of m itself (half an ulp of the large value over N, and ulp(m)), which exceeds the
/// others' mean once the large value reaches about 10²⁰–10²¹ for N in the thousands; so each
/// result is also held within the values' range, where a mean of some of them lies.
pub(crate) fn jackknife_means(x: &[f64], base: &[f64]) -> Vec<f64> {
    let n: f64 = base.iter().sum();
    let m = weighted_mean(x, base);
    let s = compensated_sum(x.iter().zip(base).map(|(xi, wi)| wi * (xi - m)));
    let (lo, hi) = x
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| (lo.min(*v), hi.max(*v)));
    x.iter().map(|xi| (m + (s - (xi - m)) / (n - 1.0)).clamp(lo, hi)).collect()
}

/// A sum with Neumaier's compensation (Neumaier 1974, ZAMM 54, from memory; the improved
/// Kahan–Babuška summation): the rounding error of each addition is carried and added back at
/// the end. Its error is about 2ε|S| plus a term of order nε²Σ|tᵢ|, so a sum that cancels (as
/// a centred sum does) keeps what the large terms would otherwise hide, up to that second term.
pub(crate) fn compensated_sum(terms: impl Iterator<Item = f64>) -> f64 {
    let (mut sum, mut carry) = (0.0_f64, 0.0_f64);
    for t in terms {
        let next = sum + t;
        carry += if sum.abs() >= t.abs() { (sum - next) + t } else { (t - next) + sum };
        sum = next;
    }
    sum + carry
}

/// Weighted sums over two columns, centred for numerical stability: returns
/// (W, mean x, mean y, Sxx, Syy, Sxy) with S the weighted sums of centred products.
pub(crate) fn weighted_moments2(x: &[f64], y: &[f64], w: &[f64]) -> (f64, f64, f64, f64, f64, f64) {
    let (mut sw, mut sx, mut sy) = (0.0, 0.0, 0.0);
    for i in 0..w.len() {
        let wi = w[i];
        if wi != 0.0 {
            sw += wi;
            sx += wi * x[i];
            sy += wi * y[i];
        }
    }
    let (mx, my) = (sx / sw, sy / sw);
    let (mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0);
    for i in 0..w.len() {
        let wi = w[i];
        if wi != 0.0 {
            let dx = x[i] - mx;
            let dy = y[i] - my;
            sxx += wi * dx * dx;
            syy += wi * dy * dy;
            sxy += wi * dx * dy;
        }
    }
    (sw, mx, my, sxx, syy, sxy)
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    #[test]
    fn a_compensated_sum_keeps_what_large_terms_hide() {
        // Exact: 1 survives between two terms that cancel, which a plain sum loses.
        assert_eq!([1e100, 1.0, -1e100].iter().sum::<f64>(), 0.0);
        assert_eq!(compensated_sum([1e100, 1.0, -1e100].into_iter()), 1.0);
    }

    #[test]
    fn leaving_out_a_dominant_value_gives_the_others_mean() {
        let mut x: Vec<f64> = (0..2199).map(|i| 1.0 + ((i * 37) % 1000) as f64 / 7.0).collect();
        let others = x.iter().sum::<f64>() / x.len() as f64;
        x.push(8.3e18);
        let jack = jackknife_means(&x, &vec![1.0; x.len()]);
        // The result is m + q with m ≈ 3.8e15, so it comes in steps of ulp(m) = 0.5, and three
        // roundings of at most about 0.25 each reach it (the centred terms, s − (x_j − m) with
        // half an ulp of 8.3e18 over n − 1 = 2199, and the division): under 1 in all. The
        // others' mean summed alone is good to ~1e-11.
        assert!((jack[2199] - others).abs() < 1.0, "{} vs {others}", jack[2199]);
        // At 1e22 (ulp 2^21) half an ulp over n − 1 is ~480, and the mean (~4.5e18) has an ulp
        // of 512: both dwarf the others' mean, and the result is held within the data's range,
        // never negative for positive data.
        x[2199] = 1e22;
        let jack = jackknife_means(&x, &vec![1.0; x.len()]);
        assert!(jack.iter().all(|v| (1.0..=1e22).contains(v)), "{:?}", jack[2199]);
    }

    /// One valid spec of every statistic, for tests that go through the whole catalogue.
    pub fn every_statistic() -> Vec<StatisticSpec> {
        let spec = |v: serde_json::Value| serde_json::from_value::<StatisticSpec>(v).unwrap();
        let examples = [
            serde_json::json!({"name": "mean"}),
            serde_json::json!({"name": "median"}),
            serde_json::json!({"name": "quantile", "p": 0.3}),
            serde_json::json!({"name": "trimmed_mean", "trim": 0.2}),
            serde_json::json!({"name": "variance", "divisor": "n-1"}),
            serde_json::json!({"name": "std_dev"}),
            serde_json::json!({"name": "mad", "normalized": true}),
            serde_json::json!({"name": "iqr"}),
            serde_json::json!({"name": "geometric_mean"}),
            serde_json::json!({"name": "coefficient_of_variation"}),
            serde_json::json!({"name": "proportion"}),
            serde_json::json!({"name": "exceedance", "threshold": 3.5}),
            serde_json::json!({"name": "ratio", "numerator": "y", "denominator": "x"}),
            serde_json::json!({"name": "correlation", "x": "x", "y": "y"}),
            serde_json::json!({"name": "correlation", "x": "x", "y": "y", "kind": "spearman"}),
            serde_json::json!({"name": "slope", "x": "x", "y": "y"}),
        ];
        examples.into_iter().map(spec).collect()
    }

    /// The spec's promises agree with what the built statistics do.
    #[test]
    fn spec_facts_match_the_built_statistics() {
        let one = Sample::column(vec![1.0, 2.0, 4.0, 8.0, 9.0]).unwrap();
        let binary = Sample::column(vec![1.0, 0.0, 0.0, 1.0, 1.0]).unwrap();
        let cols = Sample::columns(
            vec!["x".into(), "y".into()],
            vec![vec![1.0, 2.0, 4.0, 8.0, 9.0], vec![2.0, 1.0, 5.0, 7.0, 9.5]],
        )
        .unwrap();
        let specs = every_statistic();
        let mut names: Vec<&str> = specs.iter().map(|s| s.name()).collect();
        names.dedup();
        assert_eq!(names, StatisticSpec::NAMES, "every registered statistic is exercised here");
        for spec in specs {
            let sample = match (spec.shape(), spec.name()) {
                (Shape::Table, _) => &cols,
                (_, "proportion") => &binary,
                _ => &one,
            };
            let est = spec.build(sample).unwrap();
            let base = est.units().base.to_vec();
            assert_eq!(est.analytic_se(&base).is_some(), spec.has_analytic_se(), "{spec:?}");
            assert_eq!(est.jackknife_closed().is_some(), spec.has_closed_jackknife(), "{spec:?}");
            assert_eq!(StatisticSpec::facts_of(spec.name()), Some((spec.shape(), spec.has_analytic_se())));
        }
    }

    /// Exactly the statistics listed as on bins build on bins, and their facts hold there.
    #[test]
    fn the_statistics_on_bins_are_those_that_build_on_bins() {
        let bins = Sample::bins(vec![0.0, 1.0, 2.0, 4.0], vec![3, 1, 2], 0).unwrap();
        for spec in every_statistic() {
            let on = StatisticSpec::on_bins().contains(&spec.name());
            match spec.build(&bins) {
                Ok(est) => {
                    assert!(on && matches!(est, Estimator::Bins { .. }), "{spec:?}");
                    let base = est.units().base.to_vec();
                    assert_eq!(est.analytic_se(&base).is_some(), spec.has_analytic_se(), "{spec:?}");
                    let closed = est.closed_jackknife(spec.has_closed_jackknife());
                    assert_eq!(est.jackknife_closed().is_some(), closed, "{spec:?}");
                }
                Err(e) => assert!(
                    !on && matches!(e[0], DataError::NotOnBins { .. } | DataError::NeedsColumns { .. }),
                    "{spec:?}"
                ),
            }
        }
    }

    #[test]
    fn a_statistic_refuses_data_of_the_other_shape() {
        let one = Sample::column(vec![1.0, 2.0, 4.0]).unwrap();
        let slope = every_statistic().into_iter().find(|s| s.name() == "slope").unwrap();
        assert!(matches!(
            slope.build(&one).err().unwrap()[0],
            DataError::NeedsColumns { statistic: "slope" }
        ));
    }
}
