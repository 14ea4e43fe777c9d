//! Binned histograms: the quantile rule by hand, and the multinomial bootstrap of a binned
//! quantile against its ideal (exactly enumerated) standard error, computed here from the
//! multinomial probabilities without the engine.

use crate::common::*;
use bandsaw::engine::plan::Resamples;
use serde_json::json;
use statrs::function::factorial::ln_factorial;

/// Invented: checkout latencies (ms) in two bins and an overflow: 6 in (0, 100], 7 in
/// (100, 250], 2 above 250.
const EDGES: [f64; 3] = [0.0, 100.0, 250.0];
const COUNTS: [u64; 2] = [6, 7];
const OVERFLOW: u64 = 2;

fn bins() -> Samples {
    Samples::One(Resampled::iid(
        Sample::bins(EDGES.to_vec(), COUNTS.to_vec(), OVERFLOW).expect("valid bins"),
    ))
}

/// The rule of docs/api.md written out for two bins and an overflow with counts `k`: position
/// r = p·N, the first occupied bin whose cumulative count reaches r, linear inside it; past the
/// bins, the last edge.
fn by_hand(k: [u64; 3], p: f64) -> f64 {
    let n = (k[0] + k[1] + k[2]) as f64;
    let r = p * n;
    let (k1, k2) = (k[0] as f64, k[1] as f64);
    if k1 > 0.0 && k1 >= r {
        EDGES[0] + r / k1 * (EDGES[1] - EDGES[0])
    } else if k2 > 0.0 && k1 + k2 >= r {
        EDGES[1] + (r - k1) / k2 * (EDGES[2] - EDGES[1])
    } else {
        EDGES[2]
    }
}

/// Every resample of the counts with its multinomial probability.
fn resamples() -> Vec<([u64; 3], f64)> {
    let n = COUNTS[0] + COUNTS[1] + OVERFLOW;
    let share = [COUNTS[0], COUNTS[1], OVERFLOW].map(|c| c as f64 / n as f64);
    let mut out = Vec::new();
    for a in 0..=n {
        for b in 0..=n - a {
            let k = [a, b, n - a - b];
            let ln_p = ln_factorial(n) + (0..3).map(|j| k[j] as f64 * share[j].ln() - ln_factorial(k[j])).sum::<f64>();
            out.push((k, ln_p.exp()));
        }
    }
    out
}

/// Mean, standard deviation and kurtosis of the ideal bootstrap distribution of the p-quantile.
fn ideal(p: f64) -> (f64, f64, f64) {
    let all = resamples();
    let mean: f64 = all.iter().map(|(k, w)| w * by_hand(*k, p)).sum();
    let moment = |m: i32| all.iter().map(|(k, w)| w * (by_hand(*k, p) - mean).powi(m)).sum::<f64>();
    let var = moment(2);
    (mean, var.sqrt(), moment(4) / (var * var))
}

fn job(p: f64, resamples: Resamples, seed: u64) -> Job {
    let mut j = Job::new(bins(), spec(json!({"name": "quantile", "p": p})), seed);
    j.resamples = resamples;
    j.methods = vec![Method::Percentile];
    j
}

#[test]
fn the_binned_quantile_of_the_data_is_the_rule_by_hand() {
    // N = 15. p = 0.3: r = 4.5 in the first bin, 4.5/6 · 100 = 75. p = 0.6: r = 9, 100 +
    // 3/7 · 150 = 164.29. p = 0.9: r = 13.5 > 13, in the overflow: the last edge, 250.
    for (p, want) in [(0.3, 75.0), (0.6, 100.0 + 3.0 / 7.0 * 150.0), (0.9, 250.0)] {
        assert!((by_hand([6, 7, 2], p) - want).abs() < 1e-12);
        let est = run(&job(p, Resamples::Fixed(10), 1)).estimate;
        assert!((est - want).abs() < 1e-12, "p = {p}: {est} vs {want}");
    }
}

#[test]
fn exact_enumeration_of_bins_gives_the_ideal_standard_error() {
    for p in [0.5, 0.8] {
        let (mean, sd, _) = ideal(p);
        let out = run(&job(p, Resamples::Exact, 1));
        assert_eq!(out.resamples, 136, "C(17, 2) count vectors of 15 over three cells");
        // Both sum the same 136 terms in another order: rounding only.
        assert!(
            (out.standard_error - sd).abs() < 1e-9 * sd,
            "p = {p}: {} vs {sd}",
            out.standard_error
        );
        assert!((out.bias - (mean - out.estimate)).abs() < 1e-9 * sd, "p = {p}");
    }
}

#[test]
fn the_multinomial_bootstrap_of_a_binned_quantile_has_the_ideal_standard_error() {
    // The standard error of B resamples has relative standard deviation √((κ − 1)/(4B)), κ the
    // kurtosis of the replicates (taken from the exact distribution above); the tolerance is 4
    // of them. p = 0.8 puts the quantile near the overflow, which resamples cross (capped at
    // the last edge), so the cap is exercised too.
    let b = 40_000;
    for (p, seed) in [(0.5, 11), (0.8, 12)] {
        let (_, sd, kurtosis) = ideal(p);
        let out = run(&job(p, Resamples::Fixed(b), seed));
        let tolerance = 4.0 * sd * ((kurtosis - 1.0) / (4.0 * b as f64)).sqrt();
        assert!(
            (out.standard_error - sd).abs() < tolerance,
            "p = {p}: {} vs {sd} ± {tolerance}",
            out.standard_error
        );
    }
}
