//! The statistics catalogue.
//!
//! Every statistic is evaluated on a *weighted* sample: weights over the units of
//! [`Prepared`](crate::engine::data::Prepared) that add up to the resample size. The sample
//! itself is the case where every weight is the unit's base count. One implementation per
//! statistic therefore serves the estimate, `iid` resamples (integer weights), Bayesian
//! resamples (Dirichlet weights), exact enumeration and the jackknife (one weight lowered by
//! one). Families live in their own files:
//!
//! - [`location`]: mean, trimmed mean, geometric mean, proportion;
//! - [`quantile`]: median, quantile (Hyndman–Fan definition 7), interquartile range, MAD;
//! - [`spread`]: variance, standard deviation, coefficient of variation;
//! - [`association`]: ratio of sums, Pearson and Spearman correlation, least-squares slope.

pub mod association;
pub mod location;
pub mod quantile;
pub mod spread;

use crate::engine::data::{Prepared, RowTable, Sample};

/// Which statistic, with its parameters, as the caller asked for it.
#[derive(Debug, Clone, PartialEq)]
pub enum StatisticSpec {
    Mean,
    Median,
    Quantile { p: f64 },
    TrimmedMean { trim: f64 },
    Variance { ddof: u32 },
    StdDev { ddof: u32 },
    Mad { normal_scale: bool },
    Iqr,
    GeometricMean,
    CoefficientOfVariation,
    Proportion,
    Ratio { numerator: String, denominator: String },
    Correlation { x: String, y: String, spearman: bool },
    Slope { x: String, y: String },
}

/// The factor that makes the MAD a consistent estimator of σ for normal data: 1/Φ⁻¹(3/4),
/// rounded as is customary to 1.4826 (Hampel, F. R. (1974), JASA 69(346); common practice).
pub const MAD_NORMAL_SCALE: f64 = 1.4826;

impl StatisticSpec {
    /// The catalogue name.
    pub fn name(&self) -> &'static str {
        match self {
            StatisticSpec::Mean => "mean",
            StatisticSpec::Median => "median",
            StatisticSpec::Quantile { .. } => "quantile",
            StatisticSpec::TrimmedMean { .. } => "trimmed_mean",
            StatisticSpec::Variance { .. } => "variance",
            StatisticSpec::StdDev { .. } => "std_dev",
            StatisticSpec::Mad { .. } => "mad",
            StatisticSpec::Iqr => "iqr",
            StatisticSpec::GeometricMean => "geometric_mean",
            StatisticSpec::CoefficientOfVariation => "coefficient_of_variation",
            StatisticSpec::Proportion => "proportion",
            StatisticSpec::Ratio { .. } => "ratio",
            StatisticSpec::Correlation { .. } => "correlation",
            StatisticSpec::Slope { .. } => "slope",
        }
    }

    /// True for statistics over named columns.
    pub fn needs_columns(&self) -> bool {
        matches!(
            self,
            StatisticSpec::Ratio { .. } | StatisticSpec::Correlation { .. } | StatisticSpec::Slope { .. }
        )
    }

    /// The column names the statistic reads, with the parameter that names each.
    pub fn column_parameters(&self) -> Vec<(&'static str, &str)> {
        match self {
            StatisticSpec::Ratio { numerator, denominator } => {
                vec![("numerator", numerator.as_str()), ("denominator", denominator.as_str())]
            }
            StatisticSpec::Correlation { x, y, .. } | StatisticSpec::Slope { x, y } => {
                vec![("x", x.as_str()), ("y", y.as_str())]
            }
            _ => vec![],
        }
    }

    /// True for a statistic of the extremes of the sample, whose bootstrap distribution is
    /// known to be unreliable (a quantile whose tail holds fewer than five observations).
    pub fn reads_extremes(&self, n: f64) -> bool {
        match self {
            StatisticSpec::Quantile { p } => n * p.min(1.0 - p) < 5.0,
            _ => false,
        }
    }

    /// Work per unit per evaluation relative to the mean, for the work estimate made before a
    /// job starts.
    pub fn relative_cost(&self) -> f64 {
        match self {
            StatisticSpec::TrimmedMean { .. } => 1.5,
            StatisticSpec::Iqr => 2.0,
            StatisticSpec::Mad { .. } => 3.0,
            StatisticSpec::Correlation { spearman: true, .. } => 12.0,
            StatisticSpec::Correlation { .. } | StatisticSpec::Slope { .. } => 4.0,
            _ => 1.0,
        }
    }

    /// True when the statistic has an analytic standard error (so studentized intervals need no
    /// nested bootstrap); agrees with [`Statistic::has_analytic_se`] of the built statistic.
    pub fn has_analytic_se(&self) -> bool {
        matches!(
            self,
            StatisticSpec::Mean
                | StatisticSpec::Proportion
                | StatisticSpec::GeometricMean
                | StatisticSpec::Variance { .. }
                | StatisticSpec::StdDev { .. }
                | StatisticSpec::Ratio { .. }
                | StatisticSpec::Slope { .. }
        )
    }

    /// True when the statistic has a closed-form jackknife (see `Statistic::jackknife_closed`);
    /// used to estimate the work of BCa before a job starts.
    pub fn has_closed_jackknife(&self) -> bool {
        !matches!(self, StatisticSpec::Mad { .. } | StatisticSpec::Correlation { spearman: true, .. })
    }

    /// True when shifting every value by c shifts the statistic by c (location statistics).
    pub fn shift_equivariant(&self) -> bool {
        matches!(
            self,
            StatisticSpec::Mean | StatisticSpec::Median | StatisticSpec::Quantile { .. } | StatisticSpec::TrimmedMean { .. }
        )
    }
}

/// Where in the data a problem lies, for the API layer to turn into a JSON Pointer.
#[derive(Debug, Clone, PartialEq)]
pub enum DataLocation {
    /// The data as a whole.
    Whole,
    /// The i-th value of a one-column sample (for aggregated data, of `values`).
    Value(usize),
    /// A named column as a whole.
    Column(String),
    /// A parameter of the statistic (e.g. `numerator`).
    Parameter(&'static str),
}

/// A reason the statistic cannot be computed on this sample.
#[derive(Debug, Clone, PartialEq)]
pub struct DataProblem {
    pub location: DataLocation,
    pub message: String,
}

impl DataProblem {
    pub fn new(location: DataLocation, message: impl Into<String>) -> Self {
        DataProblem {
            location,
            message: message.into(),
        }
    }
}

/// Per-worker scratch space, so that evaluating a statistic on a replicate never allocates.
#[derive(Debug, Default, Clone)]
pub struct Scratch {
    pub a: Vec<f64>,
    pub b: Vec<f64>,
}

impl Scratch {
    pub fn with_units(units: usize) -> Self {
        Scratch {
            a: Vec::with_capacity(units),
            b: Vec::with_capacity(units),
        }
    }
}

/// A statistic ready to evaluate on weighted resamples of one prepared sample.
pub trait Statistic: Send + Sync {
    /// The value on a weighted resample; weights add up to the resample size.
    /// May be non-finite where the statistic is undefined on that resample (a constant column
    /// for a correlation); the driver counts and drops such replicates.
    fn evaluate(&self, data: &Prepared, w: &[f64], scratch: &mut Scratch) -> f64;

    /// Closed-form leave-one-out values, one per unit (leaving out one observation of that
    /// unit), in O(units) overall. `None` sends the jackknife to the generic path.
    fn jackknife_closed(&self, _data: &Prepared) -> Option<Vec<f64>> {
        None
    }

    /// An analytic (delta-method or plug-in) standard error of the statistic on a weighted
    /// sample, used by the studentized interval. `None` means a nested bootstrap is needed.
    fn analytic_se(&self, _data: &Prepared, _w: &[f64]) -> Option<f64> {
        None
    }

    /// True when [`Statistic::analytic_se`] returns values.
    fn has_analytic_se(&self) -> bool {
        false
    }
}

/// Check the statistic against the sample (every problem at once) and build it.
pub fn build(spec: &StatisticSpec, sample: &Sample, data: &Prepared) -> Result<Box<dyn Statistic>, Vec<DataProblem>> {
    match (spec.needs_columns(), data) {
        (true, Prepared::Rows(table)) => association::build(spec, table),
        (true, Prepared::One(_)) => Err(vec![DataProblem::new(
            DataLocation::Whole,
            format!(
                "statistic {} needs named columns: send data as {{\"columns\": {{\"x\": [...], \"y\": [...]}}}}",
                spec.name()
            ),
        )]),
        (false, Prepared::Rows(_)) => Err(vec![DataProblem::new(
            DataLocation::Whole,
            format!(
                "statistic {} works on one column: send data as an array of numbers or as {{\"values\": [...], \"counts\": [...]}}",
                spec.name()
            ),
        )]),
        (false, Prepared::One(_)) => {
            let values = match sample {
                Sample::Column(x) => x.as_slice(),
                Sample::Aggregated { values, .. } => values.as_slice(),
                Sample::Columns { .. } => unreachable!("matched on Prepared::One"),
            };
            check_one_column(spec, values, data)?;
            Ok(match spec {
                StatisticSpec::Mean => Box::new(location::Mean),
                StatisticSpec::TrimmedMean { trim } => Box::new(location::TrimmedMean { trim: *trim }),
                StatisticSpec::GeometricMean => Box::new(location::GeometricMean::new(data)),
                StatisticSpec::Proportion => Box::new(location::Proportion),
                StatisticSpec::Median => Box::new(quantile::Quantile { p: 0.5 }),
                StatisticSpec::Quantile { p } => Box::new(quantile::Quantile { p: *p }),
                StatisticSpec::Iqr => Box::new(quantile::Iqr),
                StatisticSpec::Mad { normal_scale } => Box::new(quantile::Mad {
                    scale: if *normal_scale { MAD_NORMAL_SCALE } else { 1.0 },
                }),
                StatisticSpec::Variance { ddof } => Box::new(spread::Variance {
                    ddof: *ddof as f64,
                    root: false,
                }),
                StatisticSpec::StdDev { ddof } => Box::new(spread::Variance {
                    ddof: *ddof as f64,
                    root: true,
                }),
                StatisticSpec::CoefficientOfVariation => Box::new(spread::CoefficientOfVariation),
                _ => unreachable!("column statistics handled above"),
            })
        }
    }
}

fn check_one_column(spec: &StatisticSpec, values: &[f64], data: &Prepared) -> Result<(), Vec<DataProblem>> {
    let mut problems = Vec::new();
    match spec {
        StatisticSpec::GeometricMean => {
            for (i, v) in values.iter().enumerate() {
                if *v <= 0.0 {
                    problems.push(DataProblem::new(
                        DataLocation::Value(i),
                        format!(
                            "the geometric mean needs positive values; {v} is not (drop or shift non-positive values, or use the median)"
                        ),
                    ));
                }
            }
        }
        StatisticSpec::Proportion => {
            for (i, v) in values.iter().enumerate() {
                if *v != 0.0 && *v != 1.0 {
                    problems.push(DataProblem::new(
                        DataLocation::Value(i),
                        format!("a proportion needs data of 0 and 1 only; {v} is neither (code successes as 1 and failures as 0)"),
                    ));
                }
            }
        }
        StatisticSpec::CoefficientOfVariation => {
            let total = data.total();
            let mean = location::weighted_mean_one(data, &data.base_weights());
            if total > 0.0 && mean == 0.0 {
                problems.push(DataProblem::new(
                    DataLocation::Whole,
                    "the coefficient of variation divides by the mean, which is 0 for this data; use std_dev instead",
                ));
            }
        }
        StatisticSpec::Variance { ddof } | StatisticSpec::StdDev { ddof } => {
            if data.total() <= *ddof as f64 {
                problems.push(DataProblem::new(
                    DataLocation::Whole,
                    format!("with ddof = {ddof} the variance needs more than {ddof} observations"),
                ));
            }
        }
        _ => {}
    }
    if problems.is_empty() {
        Ok(())
    } else {
        Err(problems)
    }
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

/// Look up the named columns of an association statistic, reporting every missing one.
pub(crate) fn resolve_columns<'t>(spec: &StatisticSpec, table: &'t RowTable) -> Result<Vec<&'t [f64]>, Vec<DataProblem>> {
    let mut problems = Vec::new();
    let mut cols = Vec::new();
    for (param, name) in spec.column_parameters() {
        match table.column(name) {
            Some(c) => cols.push(c),
            None => problems.push(DataProblem::new(
                DataLocation::Parameter(param),
                format!(
                    "column \"{name}\" is not in the data; the data has {}",
                    table.names.iter().map(|n| format!("\"{n}\"")).collect::<Vec<_>>().join(", ")
                ),
            )),
        }
    }
    if problems.is_empty() {
        Ok(cols)
    } else {
        Err(problems)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The spec's promises agree with what the built statistics do.
    #[test]
    fn spec_flags_match_the_built_statistics() {
        let one = Sample::Column(vec![1.0, 2.0, 4.0, 8.0, 9.0]);
        let cols = Sample::Columns {
            names: vec!["x".into(), "y".into()],
            columns: vec![vec![1.0, 2.0, 4.0, 8.0, 9.0], vec![2.0, 1.0, 5.0, 7.0, 9.5]],
        };
        let specs = [
            StatisticSpec::Mean,
            StatisticSpec::Median,
            StatisticSpec::Quantile { p: 0.3 },
            StatisticSpec::TrimmedMean { trim: 0.2 },
            StatisticSpec::Variance { ddof: 1 },
            StatisticSpec::StdDev { ddof: 0 },
            StatisticSpec::Mad { normal_scale: true },
            StatisticSpec::Iqr,
            StatisticSpec::GeometricMean,
            StatisticSpec::CoefficientOfVariation,
            StatisticSpec::Ratio {
                numerator: "y".into(),
                denominator: "x".into(),
            },
            StatisticSpec::Correlation {
                x: "x".into(),
                y: "y".into(),
                spearman: false,
            },
            StatisticSpec::Correlation {
                x: "x".into(),
                y: "y".into(),
                spearman: true,
            },
            StatisticSpec::Slope {
                x: "x".into(),
                y: "y".into(),
            },
        ];
        for spec in specs {
            let sample = if spec.needs_columns() { &cols } else { &one };
            let data = Prepared::from_sample(sample);
            let stat = build(&spec, sample, &data).unwrap();
            assert_eq!(stat.has_analytic_se(), spec.has_analytic_se(), "{spec:?}");
            assert_eq!(
                stat.analytic_se(&data, &data.base_weights()).is_some(),
                spec.has_analytic_se(),
                "{spec:?}"
            );
            assert_eq!(stat.jackknife_closed(&data).is_some(), spec.has_closed_jackknife(), "{spec:?}");
        }
    }
}
