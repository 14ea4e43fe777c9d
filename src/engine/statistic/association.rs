//! Statistics over named columns resampled together as rows: ratio of sums, Pearson and
//! Spearman correlation, least-squares slope.

use super::{resolve_columns, weighted_moments2, DataLocation, DataProblem, Scratch, Statistic, StatisticSpec};
use crate::engine::data::{Prepared, RowTable};

fn table(data: &Prepared) -> &RowTable {
    match data {
        Prepared::Rows(t) => t,
        Prepared::One(_) => unreachable!("association statistics are built for named columns only"),
    }
}

pub fn build(spec: &StatisticSpec, t: &RowTable) -> Result<Box<dyn Statistic>, Vec<DataProblem>> {
    let cols = resolve_columns(spec, t)?;
    let index = |name: &str| t.names.iter().position(|n| n == name).expect("resolved above");
    let mut problems = Vec::new();
    let constant = |c: &[f64]| c.iter().all(|v| *v == c[0]);
    if t.rows < 2 {
        problems.push(DataProblem::new(
            DataLocation::Whole,
            format!("{} needs at least 2 rows", spec.name()),
        ));
        return Err(problems);
    }
    let stat: Box<dyn Statistic> = match spec {
        StatisticSpec::Ratio { numerator, denominator } => {
            if cols[1].iter().sum::<f64>() == 0.0 {
                problems.push(DataProblem::new(
                    DataLocation::Column(denominator.clone()),
                    "the denominator column sums to 0, so the ratio of sums is undefined",
                ));
            }
            Box::new(Ratio {
                x: index(numerator),
                y: index(denominator),
            })
        }
        StatisticSpec::Correlation { x, y, spearman } => {
            for (name, c) in [(x, cols[0]), (y, cols[1])] {
                if constant(c) {
                    problems.push(DataProblem::new(
                        DataLocation::Column(name.clone()),
                        "this column is constant, so its correlation with anything is undefined",
                    ));
                }
            }
            if *spearman {
                Box::new(Spearman::new(cols[0], cols[1], index(x), index(y)))
            } else {
                Box::new(Pearson { x: index(x), y: index(y) })
            }
        }
        StatisticSpec::Slope { x, y } => {
            if constant(cols[0]) {
                problems.push(DataProblem::new(
                    DataLocation::Column(x.clone()),
                    "the x column is constant, so the least-squares slope is undefined",
                ));
            }
            Box::new(Slope { x: index(x), y: index(y) })
        }
        _ => unreachable!("one-column statistics are built elsewhere"),
    };
    if problems.is_empty() {
        Ok(stat)
    } else {
        Err(problems)
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

impl Statistic for Ratio {
    fn evaluate(&self, data: &Prepared, w: &[f64], _: &mut Scratch) -> f64 {
        let t = table(data);
        let (x, y) = (&t.columns[self.x], &t.columns[self.y]);
        let (mut sx, mut sy) = (0.0, 0.0);
        for i in 0..w.len() {
            sx += w[i] * x[i];
            sy += w[i] * y[i];
        }
        sx / sy
    }
    fn jackknife_closed(&self, data: &Prepared) -> Option<Vec<f64>> {
        let t = table(data);
        let (x, y) = (&t.columns[self.x], &t.columns[self.y]);
        let sx: f64 = x.iter().sum();
        let sy: f64 = y.iter().sum();
        Some(x.iter().zip(y).map(|(a, b)| (sx - a) / (sy - b)).collect())
    }
    /// Delta method (linearisation) for a ratio of means: se(r) = √(Σw(x − r·y)²/W) / (|ȳ|√W)
    /// (Cochran, W. G. (1977), Sampling Techniques, 3rd ed., §6.3).
    fn analytic_se(&self, data: &Prepared, w: &[f64]) -> Option<f64> {
        let t = table(data);
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
    fn has_analytic_se(&self) -> bool {
        true
    }
}

/// Pearson's product-moment correlation.
pub struct Pearson {
    x: usize,
    y: usize,
}

impl Statistic for Pearson {
    fn evaluate(&self, data: &Prepared, w: &[f64], _: &mut Scratch) -> f64 {
        let t = table(data);
        let (_, _, _, sxx, syy, sxy) = weighted_moments2(&t.columns[self.x], &t.columns[self.y], w);
        sxy / (sxx.sqrt() * syy.sqrt())
    }
    fn jackknife_closed(&self, data: &Prepared) -> Option<Vec<f64>> {
        let t = table(data);
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

impl Statistic for Slope {
    fn evaluate(&self, data: &Prepared, w: &[f64], _: &mut Scratch) -> f64 {
        let t = table(data);
        let (_, _, _, sxx, _, sxy) = weighted_moments2(&t.columns[self.x], &t.columns[self.y], w);
        sxy / sxx
    }
    fn jackknife_closed(&self, data: &Prepared) -> Option<Vec<f64>> {
        let t = table(data);
        Some(
            jackknife_sums(&t.columns[self.x], &t.columns[self.y])
                .into_iter()
                .map(|(_, sxx, _, sxy)| sxy / sxx)
                .collect(),
        )
    }
    /// Heteroscedasticity-consistent (HC0) standard error, √(Σw·dx²·e²)/Sxx (White, H. (1980),
    /// Econometrica 48(4)), which stays valid when the spread of y changes with x.
    fn analytic_se(&self, data: &Prepared, w: &[f64]) -> Option<f64> {
        let t = table(data);
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
    fn has_analytic_se(&self) -> bool {
        true
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

impl Statistic for Spearman {
    fn evaluate(&self, data: &Prepared, w: &[f64], scratch: &mut Scratch) -> f64 {
        let t = table(data);
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
    use crate::engine::data::Sample;

    fn law_school() -> Prepared {
        // Efron & Tibshirani (1993), Table 3.1.
        let lsat = vec![
            576., 635., 558., 578., 666., 580., 555., 661., 651., 605., 653., 575., 545., 572., 594.,
        ];
        let gpa = vec![
            3.39, 3.30, 2.81, 3.03, 3.44, 3.07, 3.00, 3.43, 3.36, 3.13, 3.12, 2.74, 2.76, 2.88, 2.96,
        ];
        Prepared::from_sample(&Sample::Columns {
            names: vec!["lsat".into(), "gpa".into()],
            columns: vec![lsat, gpa],
        })
    }

    #[test]
    fn law_school_correlation_is_0_7764() {
        // REFERENCES.md: Pearson correlation 0.7764 (Efron & Tibshirani 1993, §3).
        let d = law_school();
        let r = Pearson { x: 0, y: 1 }.evaluate(&d, &d.base_weights(), &mut Scratch::default());
        assert!((r - 0.7764).abs() < 5e-5, "{r}");
    }

    #[test]
    fn spearman_of_monotone_data_is_one_and_closed_jackknives_match() {
        let d = Prepared::from_sample(&Sample::Columns {
            names: vec!["x".into(), "y".into()],
            columns: vec![vec![1., 2., 3., 4., 5.], vec![1., 4., 9., 16., 100.]],
        });
        let s = Spearman::new(&[1., 2., 3., 4., 5.], &[1., 4., 9., 16., 100.], 0, 1);
        assert!((s.evaluate(&d, &d.base_weights(), &mut Scratch::default()) - 1.0).abs() < 1e-12);
        let d = law_school();
        let stats: Vec<Box<dyn Statistic>> = vec![
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
