//! BCa against a published worked example: Efron & Tibshirani (1993), An Introduction to the
//! Bootstrap, ch. 14, the spatial test data (Table 14.1, column A, 26 children), statistic the
//! plug-in variance. The book reports (from memory) θ̂ = 171.5, a = 0.061, z0 = 0.146 and, with
//! B = 2000, the 90 % BCa interval (115.8, 259.6) and percentile interval (100.8, 233.9).
//!
//! The same computation in numpy 2.4.6 (scripts/reference/spatial_bca.py, B = 200 000) gave
//! θ̂ = 171.534, a = 0.06124 (exact, jackknife), z0 = 0.177, BCa (115.4, 261.0), percentile
//! (97.8, 235.5), and Monte Carlo standard deviations at B = 2000 (from 200 repeats) of
//! 2.0 / 4.0 for the BCa endpoints, 1.8 / 2.0 for the percentile ones and 0.029 for z0.
//! Monte Carlo sds scale as 1/√B, which sets every tolerance below (4 sds of the difference).

use crate::common::*;
use bandsaw::engine::plan::Resamples;
use serde_json::json;

const SPATIAL_A: [f64; 26] = [
    48., 36., 20., 29., 42., 42., 20., 42., 22., 41., 45., 14., 6., 0., 33., 28., 34., 4., 32., 24., 47., 41., 24., 26., 30., 41.,
];

/// Monte Carlo sd at `b` resamples from the sd measured at 2000.
fn sd_at(sd_2000: f64, b: f64) -> f64 {
    sd_2000 * (2000.0 / b).sqrt()
}

#[test]
fn spatial_test_data_variance_matches_the_book_and_numpy() {
    let b = 40_000.0;
    let mut job = Job::new(column(SPATIAL_A.to_vec()), spec(json!({"name": "variance"})), 2026);
    job.resamples = Resamples::Fixed(b as u64);
    job.levels = levels(&[0.90]);
    job.methods = vec![Method::Bca, Method::Percentile];
    let o = run(&job);

    // θ̂ and the acceleration have no Monte Carlo error.
    assert!((o.estimate - 171.534).abs() < 5e-4, "θ̂ = {}", o.estimate);
    let a = o.diagnostics.acceleration.unwrap();
    assert!((a - 0.06124).abs() < 5e-6, "a = {a} (numpy 0.06124)");
    assert!((a - 0.061).abs() < 5e-4, "a = {a} (book 0.061, to its 3 decimals)");

    // z0 against numpy at B = 200 000: 4·√(sd_ours² + sd_numpy²).
    let tol_z0 = 4.0 * (sd_at(0.029, b).powi(2) + sd_at(0.029, 200_000.0).powi(2)).sqrt();
    assert!((o.diagnostics.z0 - 0.177).abs() < tol_z0, "z0 = {} ± {tol_z0}", o.diagnostics.z0);

    let bca = &o.intervals[0].endpoints;
    let pct = &o.intervals[1].endpoints;
    // Against numpy at B = 200 000.
    for (got, want, sd2000, name) in [
        (bca.lower, 115.4, 2.0, "bca lower"),
        (bca.upper, 261.0, 4.0, "bca upper"),
        (pct.lower, 97.8, 1.8, "pct lower"),
        (pct.upper, 235.5, 2.0, "pct upper"),
    ] {
        // + 0.05 for numpy's figures being rounded to one decimal.
        let tol = 4.0 * (sd_at(sd2000, b).powi(2) + sd_at(sd2000, 200_000.0).powi(2)).sqrt() + 0.05;
        assert!((got - want).abs() < tol, "{name}: {got} vs numpy {want} ± {tol}");
    }
    // Against the book at B = 2000 (its Monte Carlo error dominates).
    for (got, want, sd2000, name) in [(bca.lower, 115.8, 2.0, "bca lower"), (bca.upper, 259.6, 4.0, "bca upper")] {
        let tol = 4.0 * (sd_at(sd2000, b).powi(2) + sd2000 * sd2000).sqrt() + 0.05;
        assert!((got - want).abs() < tol, "{name}: {got} vs book {want} ± {tol}");
    }
    // The calibration of the reported Monte Carlo errors (BCa included) is tested across seeds
    // in tests/engine_properties.rs.
}
