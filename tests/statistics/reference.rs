//! The engine against published and exact values (sources in docs/references.md).
//!
//! Monte Carlo tolerances: a bootstrap standard error from B replicates has relative standard
//! deviation √((κ − 1)/(4B)), κ the replicate kurtosis (≈ 1/√(2B) for near-normal replicates;
//! common practice). Each tolerance below is at least 4 such standard deviations, written next
//! to its assertion.

use crate::common::*;
use bandsaw::engine::plan::Resamples;
use serde_json::json;

use statrs::distribution::{Binomial, DiscreteCDF};

fn job(sample: Samples, stat: StatisticSpec, b: u64, seed: u64) -> Job {
    let mut j = Job::new(sample, stat, seed);
    j.resamples = Resamples::Fixed(b);
    j.methods = vec![Method::Percentile];
    j
}

fn plugin_var(x: &[f64]) -> f64 {
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    x.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / n
}

/// Invented: seconds a nightly data export took, 20 nights.
const EXPORT_SECONDS: [f64; 20] = [
    41.2, 38.7, 45.1, 39.9, 52.3, 40.4, 37.8, 44.6, 43.0, 61.7, 39.1, 42.8, 40.0, 47.5, 38.2, 44.1, 41.9, 55.0, 40.7, 43.3,
];

/// Law school data, Efron & Tibshirani (1993), Table 3.1.
fn law_school() -> Samples {
    let lsat = vec![
        576., 635., 558., 578., 666., 580., 555., 661., 651., 605., 653., 575., 545., 572., 594.,
    ];
    let gpa = vec![
        3.39, 3.30, 2.81, 3.03, 3.44, 3.07, 3.00, 3.43, 3.36, 3.13, 3.12, 2.74, 2.76, 2.88, 2.96,
    ];
    columns(vec!["lsat".into(), "gpa".into()], vec![lsat, gpa])
}

fn rel_se_of_se(o: &Outcome, kurtosis_bound: f64) -> f64 {
    ((kurtosis_bound - 1.0) / (4.0 * o.resamples as f64)).sqrt()
}

#[test]
fn exact_enumeration_gives_the_ideal_standard_error_of_the_mean() {
    // Efron & Tibshirani (1993) ch. 5: the ideal bootstrap variance of the mean is σ̂²/n with the
    // plug-in σ̂². Exact enumeration has no Monte Carlo error, so this is an identity (1e-12).
    let x = EXPORT_SECONDS[..8].to_vec();
    let mut j = job(column(x.clone()), stat("mean"), 0, 1);
    j.resamples = Resamples::Exact;
    let o = run(&j);
    assert_eq!(o.resamples, 6435); // C(15, 8), docs/references.md
    let want = (plugin_var(&x) / 8.0).sqrt();
    assert!((o.standard_error - want).abs() < 1e-12 * want, "{} vs {want}", o.standard_error);
    assert!(o.bias.abs() < 1e-12, "the mean is unbiased under the bootstrap: {}", o.bias);
    assert!(o
        .intervals
        .iter()
        .all(|iv| iv.endpoints.lower_mc_error == 0.0 && iv.endpoints.upper_mc_error == 0.0));
}

#[test]
fn sampled_standard_error_of_the_mean_converges_to_sigma_over_root_n() {
    let x = EXPORT_SECONDS.to_vec();
    let o = run(&job(column(x.clone()), stat("mean"), 100_000, 11));
    let want = (plugin_var(&x) / 20.0).sqrt();
    // Replicate means of 20 skewed values: kurtosis below 4, so the relative MC sd of the
    // standard error is at most √(3/(4B)) = 0.27 %; 4 of them is 1.1 %.
    let tol = 4.0 * rel_se_of_se(&o, 4.0) * want;
    assert!((o.standard_error - want).abs() < tol, "{} vs {want} ± {tol}", o.standard_error);
    // The engine's own Monte Carlo error of the standard error should be of that size.
    assert!(o.standard_error_mc_error > 0.0 && o.standard_error_mc_error < tol);
}

#[test]
fn proportion_standard_error_is_binomial() {
    // docs/references.md: the resampled count is Binomial(n, p̂), so se = √(p̂(1 − p̂)/n) exactly for
    // the ideal bootstrap. 40 conversions out of 130 visits (invented).
    let mut x = vec![0.0; 130];
    for v in x.iter_mut().take(40) {
        *v = 1.0;
    }
    let p: f64 = 40.0 / 130.0;
    let want = (p * (1.0 - p) / 130.0).sqrt();
    let o = run(&job(column(x.clone()), stat("proportion"), 100_000, 5));
    // Binomial(130, 0.31) proportions are near normal (kurtosis 3 − 0.02): relative MC sd
    // √(2/(4B)) = 0.22 %; tolerance 4 of them (using κ ≤ 3.1 to be safe).
    let tol = 4.0 * rel_se_of_se(&o, 3.1) * want;
    assert!((o.standard_error - want).abs() < tol, "{} vs {want} ± {tol}", o.standard_error);
    // Aggregated form of the same data: same distribution of replicates, drawn by binomials.
    let agg = aggregated(vec![0.0, 1.0], vec![90, 40]);
    let o2 = run(&job(agg, stat("proportion"), 100_000, 5));
    assert!((o2.standard_error - want).abs() < tol, "{} vs {want} ± {tol}", o2.standard_error);
}

#[test]
fn exceedance_is_the_binomial_share_above_its_threshold() {
    // The share of requests slower than a 300 ms objective (invented: 150 request latencies,
    // 24 of them above 300). Only the indicator of "above" matters, so the resampled count is
    // Binomial(n, p̂) under iid and the ideal standard error is √(p̂(1 − p̂)/n) (docs/references.md,
    // as for a proportion). Values exactly at the threshold do not count.
    let x: Vec<f64> = (0..150)
        .map(|i| {
            if i < 24 {
                301.0 + i as f64 * 17.0
            } else if i < 30 {
                300.0
            } else {
                40.0 + i as f64
            }
        })
        .collect();
    let exceedance = spec(json!({"name": "exceedance", "threshold": 300}));
    let p: f64 = 24.0 / 150.0;
    let want = (p * (1.0 - p) / 150.0).sqrt();
    let o = run(&job(column(x.clone()), exceedance.clone(), 100_000, 8));
    assert_eq!(o.estimate, p);
    // Binomial(150, 0.16) shares: kurtosis 3 + (1 − 6p(1 − p))/(np(1 − p)) = 3.02 < 3.1, so the
    // relative MC sd of the standard error is below √(2.1/(4B)) = 0.23 %; 4 of them 0.92 %.
    let tol = 4.0 * rel_se_of_se(&o, 3.1) * want;
    assert!((o.standard_error - want).abs() < tol, "{} vs {want} ± {tol}", o.standard_error);
    // Exact enumeration of a small sample: an identity (1e-12).
    let small = vec![120.0, 250.0, 310.0, 90.0, 400.0, 280.0, 305.0, 150.0];
    let mut j = job(column(small), exceedance.clone(), 0, 1);
    j.resamples = Resamples::Exact;
    let o = run(&j);
    let want_small = (0.375_f64 * 0.625 / 8.0).sqrt();
    assert!(
        (o.standard_error - want_small).abs() < 1e-12,
        "{} vs {want_small}",
        o.standard_error
    );
    // The same latencies aggregated: the same replicate distribution, so the same se within
    // the same tolerance.
    let agg = aggregated(vec![40.0, 300.0, 301.0], vec![120, 6, 24]);
    let mut j = job(agg, exceedance, 100_000, 8);
    j.methods = vec![Method::Studentized];
    let o = run(&j);
    assert!((o.standard_error - want).abs() < tol, "{} vs {want} ± {tol}", o.standard_error);
    assert_eq!(o.diagnostics.studentized_standard_error.map(|s| s.name()), Some("analytic"));
    // Under a scheme that reads rows in order (clusters of consecutive rows, unsorted values),
    // the exceedance of 300 is the proportion of the rows' 0/1 indicators, resample by
    // resample: the same bits.
    let rows: Vec<f64> = (0..40).map(|i| ((i * 37) % 23) as f64 * 30.0).collect();
    let indicator: Vec<f64> = rows.iter().map(|v| if *v > 300.0 { 1.0 } else { 0.0 }).collect();
    let clusters: Vec<bandsaw::engine::scheme::Label> = (0..40).map(|i| bandsaw::engine::scheme::Label::Integer(i / 4)).collect();
    let by = |x: Vec<f64>, statistic: StatisticSpec| {
        let mut j = job(column(x), statistic, 2000, 3);
        set_scheme(
            &mut j,
            SchemeSpec::Cluster {
                clusters: clusters.clone(),
            },
        );
        run(&j)
    };
    let (a, b) = (
        by(rows, spec(json!({"name": "exceedance", "threshold": 300}))),
        by(indicator, stat("proportion")),
    );
    assert_eq!((a.estimate, a.standard_error), (b.estimate, b.standard_error));
}

#[test]
fn stratified_and_cluster_means_have_their_textbook_bootstrap_variances() {
    use bandsaw::engine::scheme::Label;
    // Invented: basket sizes (items) of 24 orders from three store regions of 6, 8 and 10
    // orders. Resampled within regions, the mean's ideal bootstrap variance is
    // Σ (n_h/n)² σ̂_h²/n_h with each region's plug-in variance (Davison & Hinkley 1997, §3.7; from memory).
    let regions: [&[f64]; 3] = [
        &[3.0, 5.0, 4.0, 6.0, 2.0, 5.0],
        &[7.0, 9.0, 6.0, 8.0, 10.0, 7.0, 9.0, 8.0],
        &[1.0, 2.0, 2.0, 3.0, 1.0, 4.0, 2.0, 3.0, 2.0, 1.0],
    ];
    let x: Vec<f64> = regions.iter().flat_map(|r| r.iter().copied()).collect();
    let strata: Vec<Label> = regions
        .iter()
        .enumerate()
        .flat_map(|(h, r)| r.iter().map(move |_| Label::Text(format!("region-{h}"))))
        .collect();
    let n = x.len() as f64;
    let want = regions
        .iter()
        .map(|r| (r.len() as f64 / n).powi(2) * plugin_var(r) / r.len() as f64)
        .sum::<f64>()
        .sqrt();
    let mut j = job(column(x), stat("mean"), 100_000, 21);
    set_scheme(&mut j, SchemeSpec::Stratified { strata });
    let o = run(&j);
    // A sum of independent resampled means: near normal (kurtosis below 3.2), so the relative
    // MC sd of the standard error is below √(2.2/(4B)) = 0.23 %; 4 of them 0.94 %.
    let tol = 4.0 * rel_se_of_se(&o, 3.2) * want;
    assert!(
        (o.standard_error - want).abs() < tol,
        "stratified {} vs {want} ± {tol}",
        o.standard_error
    );
    // Invented: items per session of 8 shoppers with 4 sessions each (equal cluster sizes).
    // Drawing whole shoppers, the mean is the mean of C shopper means, so its ideal bootstrap
    // variance is the plug-in variance of the shopper means over C (from memory: Davison & Hinkley 1997,
    // §3.8).
    let shoppers: Vec<[f64; 4]> = vec![
        [2.0, 3.0, 2.0, 4.0],
        [7.0, 8.0, 6.0, 9.0],
        [1.0, 1.0, 2.0, 1.0],
        [5.0, 4.0, 6.0, 5.0],
        [3.0, 3.0, 3.0, 2.0],
        [9.0, 7.0, 8.0, 8.0],
        [4.0, 6.0, 5.0, 5.0],
        [2.0, 2.0, 1.0, 3.0],
    ];
    let x: Vec<f64> = shoppers.iter().flat_map(|s| s.iter().copied()).collect();
    let clusters: Vec<Label> = (0..shoppers.len())
        .flat_map(|c| std::iter::repeat_n(Label::Integer(c as i64), 4))
        .collect();
    let means: Vec<f64> = shoppers.iter().map(|s| s.iter().sum::<f64>() / 4.0).collect();
    let want = (plugin_var(&means) / means.len() as f64).sqrt();
    let mut j = job(column(x), stat("mean"), 100_000, 22);
    set_scheme(&mut j, SchemeSpec::Cluster { clusters });
    let o = run(&j);
    // The mean of 8 drawn shopper means: kurtosis of the replicates below 3.2 as well (the
    // shopper means are spread evenly, so their resampled mean is near normal); 0.94 %.
    let tol = 4.0 * rel_se_of_se(&o, 3.2) * want;
    assert!(
        (o.standard_error - want).abs() < tol,
        "cluster {} vs {want} ± {tol}",
        o.standard_error
    );
}

/// Every way to draw `c` clusters from `c` with replacement, as counts, with its multinomial
/// probability c!/(Π k_i!)·c^−c.
fn cluster_draws(c: usize) -> Vec<(Vec<usize>, f64)> {
    fn fill(left: usize, slots: usize, prefix: &mut Vec<usize>, out: &mut Vec<Vec<usize>>) {
        if slots == 1 {
            prefix.push(left);
            out.push(prefix.clone());
            prefix.pop();
            return;
        }
        for k in 0..=left {
            prefix.push(k);
            fill(left - k, slots - 1, prefix, out);
            prefix.pop();
        }
    }
    let mut all = Vec::new();
    fill(c, c, &mut Vec::new(), &mut all);
    let fact = |k: usize| (1..=k).map(|i| i as f64).product::<f64>();
    all.into_iter()
        .map(|k| {
            let p = fact(c) / k.iter().map(|&x| fact(x)).product::<f64>() / (c as f64).powi(c as i32);
            (k, p)
        })
        .collect()
}

#[test]
fn clusters_of_unequal_sizes_resample_as_whole_clusters() {
    use bandsaw::engine::scheme::Label;
    // Invented: items per order of 4 customers with 1, 2, 3 and 5 orders. Drawing whole
    // customers, the resampled mean is Σ k_c·S_c / Σ k_c·m_c (cluster sums S_c, sizes m_c,
    // counts k_c), a ratio whose ideal bootstrap variance is computed here exactly over the 35
    // ways to draw 4 customers (no closed form; this is the definition).
    let customers: [&[f64]; 4] = [&[9.0], &[2.0, 3.0], &[5.0, 6.0, 4.0], &[1.0, 2.0, 1.0, 3.0, 2.0]];
    let (sums, sizes): (Vec<f64>, Vec<f64>) = customers.iter().map(|c| (c.iter().sum::<f64>(), c.len() as f64)).unzip();
    let draws = cluster_draws(4);
    assert_eq!(draws.len(), 35);
    let value = |k: &[usize]| {
        let (s, m) = k
            .iter()
            .enumerate()
            .fold((0.0, 0.0), |(s, m), (c, &kc)| (s + kc as f64 * sums[c], m + kc as f64 * sizes[c]));
        s / m
    };
    let mean: f64 = draws.iter().map(|(k, p)| p * value(k)).sum();
    let want = draws.iter().map(|(k, p)| p * (value(k) - mean).powi(2)).sum::<f64>().sqrt();
    let x: Vec<f64> = customers.iter().flat_map(|c| c.iter().copied()).collect();
    let clusters: Vec<Label> = customers
        .iter()
        .enumerate()
        .flat_map(|(i, c)| c.iter().map(move |_| Label::Integer(i as i64)))
        .collect();
    let mut j = job(column(x), stat("mean"), 100_000, 41);
    set_scheme(&mut j, SchemeSpec::Cluster { clusters });
    let o = run(&j);
    // The replicate distribution has 35 atoms and is far from normal, so the relative MC error
    // of the standard error comes from its exact kurtosis κ: √((κ − 1)/(4B)); 4 of them.
    let kurtosis = draws.iter().map(|(k, p)| p * (value(k) - mean).powi(4)).sum::<f64>() / want.powi(4);
    let tol = 4.0 * ((kurtosis - 1.0) / (4.0 * o.resamples as f64)).sqrt() * want;
    assert!(
        (o.standard_error - want).abs() < tol,
        "unequal clusters {} vs {want} ± {tol} (κ = {kurtosis:.2})",
        o.standard_error
    );
}

#[test]
fn the_nested_standard_error_under_strata_resamples_within_the_strata() {
    use bandsaw::engine::job::Include;
    use bandsaw::engine::scheme::Label;
    // The studentized interval's standard error of each resample comes from resampling it
    // again within its strata. For the mean, the inner variance (divisor k − 1, unbiased) has
    // expectation Σ (n_h/n)² σ̂*_h²/n_h on an outer resample, and an outer stratified resample
    // has E σ̂*_h² = (n_h − 1)/n_h · σ̂_h² (plug-in variances), so the mean of the squared nested
    // standard errors over the outer resamples estimates Σ (n_h/n)² (n_h − 1)/n_h · σ̂_h²/n_h
    // exactly (Davison & Hinkley 1997, §3.7, from memory; the identities of the plug-in variance). Resampled
    // as iid instead, it would estimate the larger unstratified variance.
    let regions: [&[f64]; 2] = [
        &[3.0, 5.0, 4.0, 6.0, 2.0, 5.0, 4.0, 3.0],
        &[17.0, 19.0, 16.0, 18.0, 20.0, 17.0, 19.0, 18.0, 21.0, 16.0],
    ];
    let x: Vec<f64> = regions.iter().flat_map(|r| r.iter().copied()).collect();
    let strata: Vec<Label> = regions
        .iter()
        .enumerate()
        .flat_map(|(h, r)| r.iter().map(move |_| Label::Integer(h as i64)))
        .collect();
    let n = x.len() as f64;
    let want: f64 = regions
        .iter()
        .map(|r| {
            let nh = r.len() as f64;
            (nh / n).powi(2) * (nh - 1.0) / nh * plugin_var(r) / nh
        })
        .sum();
    let mut j = job(column(x), stat("mean"), 4000, 31);
    j.methods = vec![Method::Studentized];
    j.include = vec![Include::Replicates];
    set_scheme(&mut j, SchemeSpec::Stratified { strata });
    let o = run(&j);
    let squares: Vec<f64> = o
        .extras
        .replicate_standard_errors
        .expect("nested standard errors")
        .iter()
        .map(|s| s * s)
        .collect();
    let b = squares.len() as f64;
    let mean = squares.iter().sum::<f64>() / b;
    let sd = (squares.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (b - 1.0)).sqrt();
    // The mean of B independent squared standard errors: its standard error is sd/√B; 4 of them.
    let tol = 4.0 * sd / b.sqrt();
    assert!((mean - want).abs() < tol, "mean nested variance {mean} vs {want} ± {tol}");
    // The unstratified variance of these data is many times larger: the check can tell.
    let all: Vec<f64> = regions.iter().flat_map(|r| r.iter().copied()).collect();
    assert!(plugin_var(&all) / n > 10.0 * want);
}

#[test]
fn bayesian_bootstrap_variance_of_the_mean_is_sigma_squared_over_n_plus_1() {
    // Rubin (1981): under Dirichlet(1,…,1) weights the posterior variance of the mean is
    // σ̂²/(n + 1) (plug-in σ̂²).
    let x = EXPORT_SECONDS.to_vec();
    let mut j = job(column(x.clone()), stat("mean"), 100_000, 9);
    set_scheme(&mut j, SchemeSpec::Bayesian {});
    let o = run(&j);
    let want = (plugin_var(&x) / 21.0).sqrt();
    let tol = 4.0 * rel_se_of_se(&o, 4.0) * want; // as for iid: kurtosis below 4, 1.1 %
    assert!((o.standard_error - want).abs() < tol, "{} vs {want} ± {tol}", o.standard_error);
}

#[test]
fn law_school_correlation_and_its_standard_error() {
    // Efron & Tibshirani (1993) §3 and Table 3.1: r = 0.7764; the bootstrap standard error is
    // 0.1333 (numpy, B = 200 000, docs/references.md) and about 0.132 at B = 3200 (the book, from
    // memory).
    let stat = spec(json!({"name": "correlation", "x": "lsat", "y": "gpa", "kind": "pearson"}));
    let o = run(&job(law_school(), stat, 200_000, 3));
    assert!((o.estimate - 0.7764).abs() < 5e-5, "{}", o.estimate);
    // Replicate correlations are skewed with kurtosis about 5 (measured here: see the engine's
    // own standard_error_mc_error); relative MC sd √(4/(4B)) = 0.22 % for each of our run and
    // numpy's, so 4·√2·0.0003 = 0.0017, plus 0.00005 for the 4-digit rounding.
    assert!(o.standard_error_mc_error < 0.0004, "{}", o.standard_error_mc_error);
    assert!((o.standard_error - 0.1333).abs() < 0.0018, "{}", o.standard_error);
    // Against the book's B = 3200 figure: its MC sd is √(4/12800)·0.132 = 0.0023; 4 of them.
    assert!((o.standard_error - 0.132).abs() < 0.0095, "{}", o.standard_error);
}

#[test]
fn percentile_interval_of_the_median_sits_on_the_order_statistics() {
    // For n = 25 the bootstrap median is the 13th order statistic of the resample, and
    // P(median* ≤ x₍k₎) = P(Binomial(25, k/25) ≥ 13) exactly. The 95 % percentile interval's
    // endpoints are therefore order statistics; Conover (1999) §3.2 gives x₍8₎ and x₍18₎ as the
    // distribution-free 95.67 % interval, and the bootstrap interval should sit there.
    let x: Vec<f64> = (1..=25).map(|k| (k as f64).powf(1.3) + 0.1 * (k % 3) as f64).collect(); // distinct, increasing
    let cdf_at = |k: u64| 1.0 - Binomial::new(k as f64 / 25.0, 25).unwrap().cdf(12);
    // Smallest k with P(median* ≤ x₍k₎) ≥ 0.025, and likewise for 0.975.
    let k_lo = (1..=25).find(|&k| cdf_at(k) >= 0.025).unwrap();
    let k_hi = (1..=25).find(|&k| cdf_at(k) >= 0.975).unwrap();
    assert_eq!((k_lo, k_hi), (8, 18), "matches the order statistics of Conover's interval");
    let b = 40_000u64;
    // The endpoint lands on x₍k₎ when the replicate CDF at the neighbouring order statistics is
    // more than 4 Monte Carlo standard errors (√(p(1 − p)/B)) from the target level.
    for (k, q) in [(k_lo, 0.025), (k_hi, 0.975)] {
        let sd = (q * (1.0 - q) / b as f64).sqrt();
        assert!(cdf_at(k - 1) < q - 4.0 * sd && cdf_at(k) > q + 4.0 * sd, "margins for k = {k}");
    }
    let o = run(&job(column(x.clone()), stat("median"), b, 21));
    let iv = &o.intervals[0].endpoints;
    assert_eq!(iv.lower, x[k_lo as usize - 1]);
    assert_eq!(iv.upper, x[k_hi as usize - 1]);
}

#[test]
fn aggregated_histogram_data_resample_like_the_expanded_rows() {
    // A latency histogram (invented): the same sample as rows and as (value, count). The two
    // draw differently but from the same distribution: their standard errors of the 0.9
    // quantile must agree within the Monte Carlo error of each (4 sd of the difference).
    let values = vec![12.0, 15.0, 18.0, 25.0, 40.0, 80.0, 200.0];
    let counts = vec![310u64, 420, 260, 120, 60, 20, 10];
    let rows: Vec<f64> = values
        .iter()
        .zip(&counts)
        .flat_map(|(v, c)| std::iter::repeat_n(*v, *c as usize))
        .collect();
    let stat = spec(json!({"name": "quantile", "p": 0.9}));
    let a = run(&job(aggregated(values.clone(), counts.clone()), stat.clone(), 20_000, 1));
    let r = run(&job(column(rows), stat, 20_000, 2));
    assert_eq!(a.estimate, r.estimate);
    let tol = 4.0 * (a.standard_error_mc_error.powi(2) + r.standard_error_mc_error.powi(2)).sqrt();
    assert!(
        (a.standard_error - r.standard_error).abs() < tol,
        "{} vs {} ± {tol}",
        a.standard_error,
        r.standard_error
    );
}

/// Mouse survival times (days), Efron & Tibshirani (1993), Table 2.1.
const MOUSE_TREATMENT: [f64; 7] = [94., 197., 16., 38., 99., 141., 23.];
const MOUSE_CONTROL: [f64; 9] = [52., 104., 146., 10., 51., 30., 40., 27., 46.];

#[test]
fn mouse_data_difference_of_means_has_the_exact_standard_error_26_908() {
    // docs/references.md: difference of means 86.86 − 56.22 = 30.63, whose exact bootstrap
    // standard error (plug-in variances) is √(σ̂₁²/n₁ + σ̂₂²/n₂) = 26.908. Each sample is
    // resampled from its own streams.
    let want = (plugin_var(&MOUSE_TREATMENT) / 7.0 + plugin_var(&MOUSE_CONTROL) / 9.0).sqrt();
    assert!((want - 26.908).abs() < 5e-4, "{want}");
    let samples = Samples::Two {
        baseline: Resampled::iid(Sample::column(MOUSE_CONTROL.to_vec()).unwrap()),
        candidate: Resampled::iid(Sample::column(MOUSE_TREATMENT.to_vec()).unwrap()),
        contrast: bandsaw::engine::job::Contrast::Difference,
        paired: false,
    };
    let mut j = Job::new(samples, stat("mean"), 19);
    j.resamples = Resamples::Fixed(100_000);
    j.methods = vec![Method::Percentile, Method::Bca, Method::Studentized];
    let o = run(&j);
    assert!((o.estimate - 30.6349).abs() < 1e-3, "{}", o.estimate);
    assert_eq!(o.sample_estimates.map(|(b, c)| (b.round(), c.round())), Some((56.0, 87.0)));
    // The mean of a resample is exact in its moments: the Monte Carlo error of the standard
    // error is the reported one (relative ≈ 1/√(2B) = 0.22 %); tolerance 4 of them.
    let tol = 4.0 * o.standard_error_mc_error;
    assert!((o.standard_error - want).abs() < tol, "{} vs {want} ± {tol}", o.standard_error);
    // With analytic standard errors on both sides the studentized interval has its ŝe from
    // them: the interval is centred near the estimate and about ±2 ŝe wide.
    let t = o.intervals.iter().find(|iv| iv.method == Method::Studentized).unwrap();
    assert!(t.endpoints.lower < o.estimate && o.estimate < t.endpoints.upper);
    assert!(
        o.diagnostics.acceleration.is_some_and(|a| a.abs() < 0.2),
        "{:?}",
        o.diagnostics.acceleration
    );
}

#[test]
fn two_samples_replay_bit_for_bit_and_each_sample_has_its_own_streams() {
    let two = |seed| {
        let mut j = Job::new(
            Samples::Two {
                baseline: Resampled::iid(Sample::column(MOUSE_CONTROL.to_vec()).unwrap()),
                candidate: Resampled::iid(Sample::column(MOUSE_TREATMENT.to_vec()).unwrap()),
                contrast: bandsaw::engine::job::Contrast::Ratio,
                paired: false,
            },
            stat("median"),
            seed,
        );
        j.resamples = Resamples::Fixed(2000);
        run(&j)
    };
    assert_eq!(two(5), two(5));
    assert_ne!(two(5).standard_error, two(6).standard_error);
    // The same data on both sides: the ratio is 1, but the two sides are drawn from different
    // streams, so the replicates are not all 1.
    let mut j = Job::new(
        Samples::Two {
            baseline: Resampled::iid(Sample::column(MOUSE_CONTROL.to_vec()).unwrap()),
            candidate: Resampled::iid(Sample::column(MOUSE_CONTROL.to_vec()).unwrap()),
            contrast: bandsaw::engine::job::Contrast::Ratio,
            paired: false,
        },
        stat("mean"),
        5,
    );
    j.resamples = Resamples::Fixed(500);
    let o = run(&j);
    assert_eq!(o.estimate, 1.0);
    assert!(o.standard_error > 0.05, "{}", o.standard_error);
}
