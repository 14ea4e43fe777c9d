//! Checks of details that broader tests can miss: the z0 tie split, the studentized interval's
//! ŝe, the B − 1 divisor, the MAD's normal scale, Bayesian weight totals, the normal interval's
//! one-sided Monte Carlo errors, and the pool's admission bound. Each was written against a
//! deliberately broken engine (a mutant) that every other test let through.

use crate::common::*;
use bandsaw::engine::plan::Resamples;
use serde_json::json;

use bandsaw::engine::rng::replicate_stream;

const EXPORT8: [f64; 8] = [41.2, 38.7, 45.1, 39.9, 52.3, 40.4, 37.8, 44.6];

// z0 with ties split. For the median of 9 distinct values, P(med* < x5) = 0.36551 and
// P(med* = x5) = 0.26899 (binomial, exact), so the tie-split share is exactly 1/2 and z0 = 0;
// counting ties as above gives Φ⁻¹(0.3655) = −0.344. MC sd of z0 at B = 20 000:
// √(0.25/B)/φ(0) = 0.0089; tolerance 4 sd.
#[test]
fn z0_splits_ties_with_the_estimate() {
    let x: Vec<f64> = (1..=9).map(|k| k as f64 * 1.7).collect();
    let mut j = Job::new(column(x), stat("median"), 5);
    j.resamples = Resamples::Fixed(20_000);
    j.methods = vec![Method::Bca];
    let o = run(&j);
    assert!(o.diagnostics.z0.abs() < 0.036, "z0 = {}", o.diagnostics.z0);
}

// ŝe of the studentized interval is the analytic se on the sample, √((m4 − m2²)/n) for
// the plug-in variance (10.449 here, python), not the bootstrap standard error. Exact
// enumeration makes everything deterministic; the t* quantiles are recomputed from the
// returned replicates by the definition (inf{t : G(t) ≥ p}).
#[test]
fn studentized_scales_by_the_analytic_standard_error() {
    let x = EXPORT8.to_vec();
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    let m2 = x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / n;
    let m4 = x.iter().map(|v| (v - m).powi(4)).sum::<f64>() / n;
    let se_hat = ((m4 - m2 * m2) / n).sqrt();
    assert!((se_hat - 10.449181935682805).abs() < 1e-9);
    let mut j = Job::new(column(x), spec(json!({"name": "variance"})), 1);
    j.resamples = Resamples::Exact;
    j.methods = vec![Method::Studentized];
    j.levels = levels(&[0.9]);
    j.include = vec![Include::Replicates];
    let o = run(&j);
    let v = o.extras.replicates.as_ref().unwrap();
    let s = o.extras.replicate_standard_errors.as_ref().unwrap();
    let p = o.extras.replicate_probabilities.as_ref().unwrap();
    let mut t: Vec<(f64, f64)> = (0..v.len())
        .filter(|&i| s[i] > 1e-9 * se_hat)
        .map(|i| ((v[i] - o.estimate) / s[i], p[i]))
        .collect();
    t.sort_by(|a, b| a.0.total_cmp(&b.0));
    let total: f64 = t.iter().map(|a| a.1).sum();
    let q = |prob: f64| {
        let mut c = 0.0;
        for (ti, pi) in &t {
            c += pi / total;
            if c >= prob - 1e-12 {
                return *ti;
            }
        }
        t.last().unwrap().0
    };
    let e = &o.intervals[0].endpoints;
    let want_lo = o.estimate - se_hat * q(0.95);
    let want_hi = o.estimate - se_hat * q(0.05);
    assert!((e.lower - want_lo).abs() < 1e-9 * want_lo.abs(), "{} vs {want_lo}", e.lower);
    assert!((e.upper - want_hi).abs() < 1e-9 * want_hi.abs(), "{} vs {want_hi}", e.upper);
}

// docs/api.md: standard_error is the sd of the replicates with divisor B − 1.
#[test]
fn standard_error_uses_divisor_b_minus_one() {
    let mut j = Job::new(column(EXPORT8.to_vec()), stat("mean"), 3);
    j.resamples = Resamples::Fixed(10);
    j.include = vec![Include::Replicates];
    let o = run(&j);
    let r = o.extras.replicates.unwrap();
    let b = r.len() as f64;
    let m = r.iter().sum::<f64>() / b;
    let want = (r.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (b - 1.0)).sqrt();
    assert!((o.standard_error - want).abs() < 1e-12 * want, "{} vs {want}", o.standard_error);
}

// "normalized": true multiplies by 1.4826 (docs/api.md). MAD of 1..9 is 2 (median 5, deviations
// 0,1,1,2,2,3,3,4,4), so 2.9652; the estimate has no Monte Carlo error.
#[test]
fn normalized_mad_is_scaled_by_1_4826() {
    let x: Vec<f64> = (1..=9).map(|k| k as f64).collect();
    let o = run(&Job::new(column(x), spec(json!({"name": "mad", "normalized": true})), 1));
    assert!((o.estimate - 2.0 * 1.4826).abs() < 1e-12, "{}", o.estimate);
}

// Bayesian weights add up to n (scheme/bayesian.rs doc).
#[test]
fn bayesian_weights_add_up_to_the_sample_size() {
    let x: Vec<f64> = (0..17).map(|k| k as f64).collect();
    let est = stat("mean").build(&Sample::column(x).unwrap()).unwrap();
    let resampler = SchemeSpec::Bayesian {}.resampler(est.units(), None).expect("no rows needed");
    let mut w = vec![0.0; 17];
    for i in 0..50 {
        let mut rng = replicate_stream(9, i);
        resampler.draw(i, &mut rng, &mut w);
        let s: f64 = w.iter().sum();
        assert!((s - 17.0).abs() < 1e-9, "replicate {i}: weights add up to {s}");
    }
}

// The normal interval's MC errors on skewed replicates, upper and lower separately. As in
// engine_properties: an sd from 200 runs has relative standard error 1/√(2·199) = 5 %, so the
// mean reported error must lie within 4 × 5 % = 20 % of the empirical sd on each side.
#[test]
fn normal_mc_errors_are_calibrated_on_both_sides_for_skewed_replicates() {
    let x = vec![1.0, 1.0, 2.0, 2.0, 3.0, 3.0, 4.0, 5.0, 6.0, 40.0]; // one outlier: replicate means skewed
    let runs = 200;
    let (mut lo, mut hi, mut rlo, mut rhi) = (Vec::new(), Vec::new(), 0.0, 0.0);
    for seed in 0..runs {
        let mut j = Job::new(column(x.clone()), stat("mean"), 50_000 + seed * 7);
        j.resamples = Resamples::Fixed(1000);
        j.methods = vec![Method::Normal];
        let o = run(&j);
        let e = &o.intervals[0].endpoints;
        lo.push(e.lower);
        hi.push(e.upper);
        rlo += e.lower_mc_error / runs as f64;
        rhi += e.upper_mc_error / runs as f64;
    }
    let sd = |v: &[f64]| {
        let m = v.iter().sum::<f64>() / v.len() as f64;
        (v.iter().map(|a| (a - m) * (a - m)).sum::<f64>() / (v.len() - 1) as f64).sqrt()
    };
    eprintln!(
        "lower: reported {rlo} empirical {}; upper: reported {rhi} empirical {}",
        sd(&lo),
        sd(&hi)
    );
    assert!((0.8..1.2).contains(&(rlo / sd(&lo))), "lower: reported {rlo} vs {}", sd(&lo));
    assert!((0.8..1.2).contains(&(rhi / sd(&hi))), "upper: reported {rhi} vs {}", sd(&hi));
}
