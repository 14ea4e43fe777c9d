//! Statistics over named columns resampled together as rows: ratio of sums, Pearson and
//! Spearman correlation, least-squares slope.

use serde::{Deserialize, Serialize};
use utoipa::ToSchema;

use super::{weighted_moments2, Scratch, TableSpec, TableStatistic};
use crate::engine::data::{DataError, TableLayout};

/// The name of a column of the data (`data.columns`), not empty.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(try_from = "String", into = "String")]
pub struct ColumnName(String);

impl ColumnName {
    pub fn as_str(&self) -> &str {
        &self.0
    }
}

impl TryFrom<String> for ColumnName {
    type Error = crate::engine::wire::OutOfRange;
    fn try_from(s: String) -> Result<Self, Self::Error> {
        if s.is_empty() {
            Err(crate::engine::wire::OutOfRange {
                what: "the name of a column of the data, not empty",
                got: "\"\"".into(),
            })
        } else {
            Ok(ColumnName(s))
        }
    }
}

impl From<ColumnName> for String {
    fn from(c: ColumnName) -> String {
        c.0
    }
}

impl utoipa::PartialSchema for ColumnName {
    fn schema() -> utoipa::openapi::RefOr<utoipa::openapi::schema::Schema> {
        utoipa::openapi::ObjectBuilder::new()
            .schema_type(utoipa::openapi::schema::Type::String)
            .min_length(Some(1))
            .description(Some("The name of a column of the data (`data.columns`)."))
            .into()
    }
}

impl utoipa::ToSchema for ColumnName {}

fn constant(c: &[f64]) -> bool {
    c.iter().all(|v| *v == c[0])
}

/// Ratio of column sums (sum over sum); needs named columns.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct RatioSpec {
    /// The column summed on top.
    pub numerator: ColumnName,
    /// The column summed below.
    pub denominator: ColumnName,
}

impl TableSpec for RatioSpec {
    const ANALYTIC_SE: bool = true;
    fn columns(&self) -> [(&'static str, &str); 2] {
        [("numerator", self.numerator.as_str()), ("denominator", self.denominator.as_str())]
    }
    fn build(&self, t: &TableLayout, [x, y]: [usize; 2]) -> Result<Box<dyn TableStatistic>, Vec<DataError>> {
        if t.columns[y].iter().sum::<f64>() == 0.0 {
            return Err(vec![DataError::ZeroSum {
                column: self.denominator.as_str().to_string(),
            }]);
        }
        Ok(Box::new(Ratio { x, y }))
    }
}

crate::wire_enum! {
    /// Which correlation: `pearson` (product-moment) or `spearman` (of ranks).
    pub enum CorrelationKind default Pearson {
        /// Pearson's product-moment correlation.
        Pearson = "pearson",
        /// Spearman's rank correlation.
        Spearman = "spearman",
    }
}

/// Correlation of two columns; needs named columns.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct CorrelationSpec {
    /// The first column.
    pub x: ColumnName,
    /// The second column.
    pub y: ColumnName,
    /// `pearson` or `spearman`. Default `pearson`.
    #[serde(default)]
    #[schema(inline, default = "pearson")]
    pub kind: CorrelationKind,
}

impl TableSpec for CorrelationSpec {
    fn columns(&self) -> [(&'static str, &str); 2] {
        [("x", self.x.as_str()), ("y", self.y.as_str())]
    }
    fn build(&self, t: &TableLayout, [x, y]: [usize; 2]) -> Result<Box<dyn TableStatistic>, Vec<DataError>> {
        let problems: Vec<DataError> = [(&self.x, x), (&self.y, y)]
            .into_iter()
            .filter(|(_, i)| constant(&t.columns[*i]))
            .map(|(name, _)| DataError::ConstantColumn {
                column: name.as_str().to_string(),
                why: "its correlation with anything is undefined",
            })
            .collect();
        if !problems.is_empty() {
            return Err(problems);
        }
        Ok(match self.kind {
            CorrelationKind::Pearson => Box::new(Pearson { x, y }),
            CorrelationKind::Spearman => Box::new(Spearman::new(&t.columns[x], &t.columns[y], x, y)),
        })
    }
    fn relative_cost(&self) -> f64 {
        match self.kind {
            CorrelationKind::Pearson => 4.0,
            CorrelationKind::Spearman => 12.0,
        }
    }
    fn closed_jackknife(&self) -> bool {
        self.kind == CorrelationKind::Pearson
    }
}

/// Least-squares slope of y on x; needs named columns.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, ToSchema)]
#[serde(deny_unknown_fields)]
pub struct SlopeSpec {
    /// The regressor column.
    pub x: ColumnName,
    /// The response column.
    pub y: ColumnName,
}

impl TableSpec for SlopeSpec {
    const ANALYTIC_SE: bool = true;
    fn columns(&self) -> [(&'static str, &str); 2] {
        [("x", self.x.as_str()), ("y", self.y.as_str())]
    }
    fn build(&self, t: &TableLayout, [x, y]: [usize; 2]) -> Result<Box<dyn TableStatistic>, Vec<DataError>> {
        if constant(&t.columns[x]) {
            return Err(vec![DataError::ConstantColumn {
                column: self.x.as_str().to_string(),
                why: "the least-squares slope is undefined",
            }]);
        }
        Ok(Box::new(Slope { x, y }))
    }
    fn relative_cost(&self) -> f64 {
        4.0
    }
}

/// Centred sums of the whole table and the leave-one-row-out sums for row i:
/// (n', Sxx', Syy', Sxy') after removing row i.
fn jackknife_sums(x: &[f64], y: &[f64]) -> Vec<(f64, f64, f64, f64)> {
    let n = x.len() as f64;
    let w = vec![1.0; x.len()];
    let (_, mx, my, sxx, syy, sxy) = weighted_moments2(x, y, &w);
    let sx: f64 = x.iter().map(|v| v - mx).sum();
    let sy: f64 = y.iter().map(|v| v - my).sum();
    let n1 = n - 1.0;
    x.iter()
        .zip(y)
        .map(|(xi, yi)| {
            let (dx, dy) = (xi - mx, yi - my);
            let (tx, ty) = (sx - dx, sy - dy);
            (
                n1,
                sxx - dx * dx - tx * tx / n1,
                syy - dy * dy - ty * ty / n1,
                sxy - dx * dy - tx * ty / n1,
            )
        })
        .collect()
}

/// Σx / Σy over rows (a ratio estimator: revenue per visit, errors per request).
pub struct Ratio {
    x: usize,
    y: usize,
}

impl TableStatistic for Ratio {
    fn evaluate(&self, t: &TableLayout, w: &[f64], _: &mut Scratch) -> f64 {
        let (x, y) = (&t.columns[self.x], &t.columns[self.y]);
        let (mut sx, mut sy) = (0.0, 0.0);
        for i in 0..w.len() {
            sx += w[i] * x[i];
            sy += w[i] * y[i];
        }
        sx / sy
    }
    fn jackknife_closed(&self, t: &TableLayout) -> Option<Vec<f64>> {
        let (x, y) = (&t.columns[self.x], &t.columns[self.y]);
        let sx: f64 = x.iter().sum();
        let sy: f64 = y.iter().sum();
        Some(x.iter().zip(y).map(|(a, b)| (sx - a) / (sy - b)).collect())
    }
    /// Delta method (linearisation) for a ratio of means: se(r) = √(Σw(x − r·y)²/W) / (|ȳ|√W)
    /// (Cochran, W. G. (1977), Sampling Techniques, 3rd ed., §6.3).
    fn analytic_se(&self, t: &TableLayout, w: &[f64]) -> Option<f64> {
        let (x, y) = (&t.columns[self.x], &t.columns[self.y]);
        let (mut sw, mut sx, mut sy) = (0.0, 0.0, 0.0);
        for i in 0..w.len() {
            sw += w[i];
            sx += w[i] * x[i];
            sy += w[i] * y[i];
        }
        let r = sx / sy;
        let mut ss = 0.0;
        for i in 0..w.len() {
            let e = x[i] - r * y[i];
            ss += w[i] * e * e;
        }
        Some((ss / sw).sqrt() / ((sy / sw).abs() * sw.sqrt()))
    }
}

/// Pearson's product-moment correlation.
pub struct Pearson {
    x: usize,
    y: usize,
}

impl TableStatistic for Pearson {
    fn evaluate(&self, t: &TableLayout, w: &[f64], _: &mut Scratch) -> f64 {
        let (_, _, _, sxx, syy, sxy) = weighted_moments2(&t.columns[self.x], &t.columns[self.y], w);
        sxy / (sxx.sqrt() * syy.sqrt())
    }
    fn jackknife_closed(&self, t: &TableLayout) -> Option<Vec<f64>> {
        Some(
            jackknife_sums(&t.columns[self.x], &t.columns[self.y])
                .into_iter()
                .map(|(_, sxx, syy, sxy)| sxy / (sxx.sqrt() * syy.sqrt()))
                .collect(),
        )
    }
}

/// Least-squares slope of y on x.
pub struct Slope {
    x: usize,
    y: usize,
}

impl TableStatistic for Slope {
    fn evaluate(&self, t: &TableLayout, w: &[f64], _: &mut Scratch) -> f64 {
        let (_, _, _, sxx, _, sxy) = weighted_moments2(&t.columns[self.x], &t.columns[self.y], w);
        sxy / sxx
    }
    fn jackknife_closed(&self, t: &TableLayout) -> Option<Vec<f64>> {
        Some(
            jackknife_sums(&t.columns[self.x], &t.columns[self.y])
                .into_iter()
                .map(|(_, sxx, _, sxy)| sxy / sxx)
                .collect(),
        )
    }
    /// Heteroscedasticity-consistent (HC0) standard error, √(Σw·dx²·e²)/Sxx (White, H. (1980),
    /// Econometrica 48(4)), which stays valid when the spread of y changes with x.
    fn analytic_se(&self, t: &TableLayout, w: &[f64]) -> Option<f64> {
        let (x, y) = (&t.columns[self.x], &t.columns[self.y]);
        let (_, mx, my, sxx, _, sxy) = weighted_moments2(x, y, w);
        let b = sxy / sxx;
        let mut s = 0.0;
        for i in 0..w.len() {
            let dx = x[i] - mx;
            let e = (y[i] - my) - b * dx;
            s += w[i] * dx * dx * e * e;
        }
        Some(s.sqrt() / sxx)
    }
}

/// Spearman's rank correlation: Pearson's correlation of the mid-ranks within the resample
/// (tied values, including rows drawn more than once, share the mean of their ranks).
pub struct Spearman {
    x: usize,
    y: usize,
    order_x: Vec<u32>,
    order_y: Vec<u32>,
}

impl Spearman {
    fn new(x: &[f64], y: &[f64], xi: usize, yi: usize) -> Self {
        let order = |c: &[f64]| {
            let mut o: Vec<u32> = (0..c.len() as u32).collect();
            o.sort_by(|a, b| c[*a as usize].total_cmp(&c[*b as usize]));
            o
        };
        Spearman {
            x: xi,
            y: yi,
            order_x: order(x),
            order_y: order(y),
        }
    }
}

/// Weighted mid-ranks of `c` into `out`, walking rows in sorted order.
fn midranks(c: &[f64], order: &[u32], w: &[f64], out: &mut Vec<f64>) {
    out.clear();
    out.resize(c.len(), 0.0);
    let mut cum = 0.0;
    let mut i = 0;
    while i < order.len() {
        let v = c[order[i] as usize];
        let mut j = i;
        let mut g = 0.0;
        while j < order.len() && c[order[j] as usize] == v {
            g += w[order[j] as usize];
            j += 1;
        }
        let rank = cum + (g + 1.0) / 2.0;
        for k in &order[i..j] {
            out[*k as usize] = rank;
        }
        cum += g;
        i = j;
    }
}

impl TableStatistic for Spearman {
    fn evaluate(&self, t: &TableLayout, w: &[f64], scratch: &mut Scratch) -> f64 {
        let mut a = std::mem::take(&mut scratch.a);
        let mut b = std::mem::take(&mut scratch.b);
        midranks(&t.columns[self.x], &self.order_x, w, &mut a);
        midranks(&t.columns[self.y], &self.order_y, w, &mut b);
        let (_, _, _, sxx, syy, sxy) = weighted_moments2(&a, &b, w);
        scratch.a = a;
        scratch.b = b;
        sxy / (sxx.sqrt() * syy.sqrt())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::data::{Layout, Sample};

    fn table(sample: Sample) -> TableLayout {
        match Layout::of(&sample) {
            Layout::Table(t) => t,
            Layout::Column(_) | Layout::Bins(_) => panic!("columns give a table"),
        }
    }

    fn law_school() -> TableLayout {
        // Efron & Tibshirani (1993), Table 3.1.
        let lsat = vec![
            576., 635., 558., 578., 666., 580., 555., 661., 651., 605., 653., 575., 545., 572., 594.,
        ];
        let gpa = vec![
            3.39, 3.30, 2.81, 3.03, 3.44, 3.07, 3.00, 3.43, 3.36, 3.13, 3.12, 2.74, 2.76, 2.88, 2.96,
        ];
        table(Sample::columns(vec!["lsat".into(), "gpa".into()], vec![lsat, gpa]).unwrap())
    }

    #[test]
    fn law_school_correlation_is_0_7764() {
        // docs/references.md: Pearson correlation 0.7764 (Efron & Tibshirani 1993, §3).
        let d = law_school();
        let r = Pearson { x: 0, y: 1 }.evaluate(&d, &d.base.clone(), &mut Scratch::default());
        assert!((r - 0.7764).abs() < 5e-5, "{r}");
    }

    #[test]
    fn spearman_of_monotone_data_is_one_and_closed_jackknives_match() {
        let d = table(
            Sample::columns(
                vec!["x".into(), "y".into()],
                vec![vec![1., 2., 3., 4., 5.], vec![1., 4., 9., 16., 100.]],
            )
            .unwrap(),
        );
        let s = Spearman::new(&[1., 2., 3., 4., 5.], &[1., 4., 9., 16., 100.], 0, 1);
        assert!((s.evaluate(&d, &d.base.clone(), &mut Scratch::default()) - 1.0).abs() < 1e-12);
        let d = law_school();
        let stats: Vec<Box<dyn TableStatistic>> = vec![
            Box::new(Pearson { x: 0, y: 1 }),
            Box::new(Slope { x: 0, y: 1 }),
            Box::new(Ratio { x: 1, y: 0 }),
        ];
        for st in &stats {
            let jack = st.jackknife_closed(&d).unwrap();
            for i in 0..15 {
                let mut w = vec![1.0; 15];
                w[i] = 0.0;
                let direct = st.evaluate(&d, &w, &mut Scratch::default());
                assert!((jack[i] - direct).abs() < 1e-10 * direct.abs().max(1.0), "{} vs {direct}", jack[i]);
            }
        }
    }
}
