//! Exact properties of the engine: determinism across thread counts, prefixes, equivariance,
//! sane answers on degenerate data, and calibrated Monte Carlo errors.

use crate::common::*;
use bandsaw::engine::plan::Resamples;
use bandsaw::engine::scheme::{BlockLength, Label};
use serde_json::json;

const ALL: [Method; 5] = [Method::Percentile, Method::Basic, Method::Normal, Method::Bca, Method::Studentized];

/// Invented: basket sizes (items) of 40 checkouts.
const BASKETS: [f64; 40] = [
    3., 1., 7., 2., 2., 12., 4., 1., 5., 3., 2., 9., 1., 6., 3., 2., 18., 4., 2., 1., 3., 5., 2., 8., 1., 4., 2., 3., 11., 2., 1., 6., 3.,
    2., 4., 7., 1., 2., 5., 3.,
];

fn on_threads(threads: usize, job: &Job) -> Outcome {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
        .install(|| run(job))
}

fn job(sample: Samples, stat: StatisticSpec, b: u64) -> Job {
    let mut j = Job::new(sample, stat, 424242);
    j.resamples = Resamples::Fixed(b);
    j.methods = ALL.to_vec();
    j.levels = levels(&[0.8, 0.95]);
    j.include = Include::ALL.to_vec();
    j
}

fn sales() -> Samples {
    let x: Vec<f64> = (0..60).map(|i| (i as f64 * 0.37).sin() * 10.0 + i as f64).collect();
    let y: Vec<f64> = x.iter().enumerate().map(|(i, v)| 2.0 * v + ((i * 7919) % 13) as f64).collect();
    columns(vec!["visits".into(), "revenue".into()], vec![x, y])
}

#[test]
fn results_are_identical_on_one_and_two_threads() {
    let cases = vec![
        job(column(BASKETS.to_vec()), stat("mean"), 5000),
        job(column(BASKETS.to_vec()), stat("median"), 3000), // nested studentized
        job(
            aggregated(vec![1., 2., 5., 9.], vec![40, 25, 9, 2]),
            spec(json!({"name": "quantile", "p": 0.9})),
            3000,
        ),
        job(
            sales(),
            spec(json!({"name": "correlation", "x": "visits", "y": "revenue", "kind": "spearman"})),
            2000,
        ),
        job(
            sales(),
            spec(json!({"name": "ratio", "numerator": "revenue", "denominator": "visits"})),
            2000,
        ),
        {
            let mut j = job(column(BASKETS.to_vec()), spec(json!({"name": "trimmed_mean", "trim": 0.1})), 2000);
            set_scheme(&mut j, SchemeSpec::Bayesian {});
            j
        },
    ];
    // Every block and labelled scheme, with BCa (its jackknife leaves out blocks or clusters).
    let blocks = [
        SchemeSpec::MovingBlock {
            block_length: BlockLength::Rows(4.0),
        },
        SchemeSpec::CircularBlock {
            block_length: BlockLength::Rows(3.0),
        },
        SchemeSpec::StationaryBlock {
            mean_block_length: BlockLength::Rows(3.5),
        },
        SchemeSpec::Stratified {
            strata: (0..BASKETS.len()).map(|i| Label::Integer((i % 3) as i64)).collect(),
        },
        SchemeSpec::Cluster {
            clusters: (0..BASKETS.len()).map(|i| Label::Text(format!("c{}", i / 2))).collect(),
        },
    ];
    let cases: Vec<Job> = cases
        .into_iter()
        .chain(blocks.into_iter().map(|scheme| {
            let mut j = job(column(BASKETS.to_vec()), stat("median"), 2000);
            j.methods = vec![Method::Percentile, Method::Bca];
            set_scheme(&mut j, scheme);
            j
        }))
        .collect();
    for j in &cases {
        let one = on_threads(1, j);
        let two = on_threads(2, j);
        assert_eq!(one, two, "{:?}", j.statistic);
    }
}

#[test]
fn a_shorter_run_is_a_prefix_of_a_longer_one() {
    let short = run(&job(column(BASKETS.to_vec()), stat("mean"), 1234));
    let long = run(&job(column(BASKETS.to_vec()), stat("mean"), 5000));
    assert_eq!(
        short.extras.replicates.as_ref().unwrap()[..],
        long.extras.replicates.as_ref().unwrap()[..1234]
    );
}

#[test]
fn auto_equals_a_fixed_run_of_the_size_it_chose() {
    let mut a = job(column(BASKETS.to_vec()), stat("mean"), 0);
    a.resamples = Resamples::Auto { target: 0.05 };
    let auto = run(&a);
    assert!(
        auto.resamples >= 1000 && auto.resamples.is_power_of_two() || auto.resamples.is_multiple_of(1000),
        "{}",
        auto.resamples
    );
    let fixed = run(&job(column(BASKETS.to_vec()), stat("mean"), auto.resamples));
    assert_eq!(auto.intervals, fixed.intervals);
    assert_eq!(auto.standard_error, fixed.standard_error);
    // And it met its target: every endpoint's Monte Carlo error at most 5 % of the standard error.
    for iv in &auto.intervals {
        assert!(iv.endpoints.lower_mc_error <= 0.05 * auto.standard_error && iv.endpoints.upper_mc_error <= 0.05 * auto.standard_error);
    }
}

#[test]
fn a_partial_result_is_the_full_result_of_its_prefix() {
    let mut j = job(
        column((0..3000).map(|i| ((i * 7) % 101) as f64).collect()),
        stat("median"),
        1_000_000,
    );
    j.methods = vec![Method::Percentile, Method::Bca];
    j.include = Vec::new();
    j.on_time_limit = OnTimeLimit::Partial;
    let budget = Budget {
        deadline: Some(std::time::Instant::now() + std::time::Duration::from_millis(300)),
        ..Budget::default()
    };
    let partial = try_run_within(&j, &budget).unwrap();
    assert!(!partial.complete && partial.resamples < 1_000_000);
    let mut f = j.clone();
    f.resamples = Resamples::Fixed(partial.resamples);
    let full = run(&f);
    assert_eq!(partial.intervals, full.intervals);
    assert_eq!(partial.standard_error, full.standard_error);
}

fn with(sample_x: Vec<f64>, stat: StatisticSpec) -> Outcome {
    run(&job(column(sample_x), stat, 3000))
}

#[test]
fn shifting_the_data_shifts_location_intervals() {
    let c = 1000.25;
    for stat in [
        stat("mean"),
        stat("median"),
        spec(json!({"name": "quantile", "p": 0.8})),
        spec(json!({"name": "trimmed_mean", "trim": 0.2})),
    ] {
        let a = with(BASKETS.to_vec(), stat.clone());
        let b = with(BASKETS.iter().map(|v| v + c).collect(), stat.clone());
        // Same seed, same resamples: only rounding of the shifted values differs (1e-9 of the
        // magnitude ~1000 is far above double rounding, far below any statistical effect).
        let close = |x: f64, y: f64| (x - y).abs() < 1e-9 * y.abs().max(1.0);
        assert!(close(a.estimate + c, b.estimate), "{stat:?}");
        assert!(
            close(a.standard_error, b.standard_error),
            "{stat:?}: {} vs {}",
            a.standard_error,
            b.standard_error
        );
        for (ia, ib) in a.intervals.iter().zip(&b.intervals) {
            assert!(close(ia.endpoints.lower + c, ib.endpoints.lower), "{stat:?} {:?}", ia.method);
            assert!(close(ia.endpoints.upper + c, ib.endpoints.upper), "{stat:?} {:?}", ia.method);
        }
    }
}

#[test]
fn scaling_the_data_scales_the_intervals() {
    // Scaling by a power of two is exact in binary floating point, so percentile and basic
    // endpoints scale bit for bit; methods that go through Φ, powers or square roots agree to
    // 1e-12.
    for (stat, power) in [
        (stat("mean"), 1),
        (stat("median"), 1),
        (spec(json!({"name": "std_dev", "divisor": "n-1"})), 1),
        (spec(json!({"name": "mad", "normalized": true})), 1),
        (stat("iqr"), 1),
        (spec(json!({"name": "variance"})), 2),
    ] {
        let k = 2f64.powi(power);
        let a = with(BASKETS.to_vec(), stat.clone());
        let b = with(BASKETS.iter().map(|v| v * 2.0).collect(), stat.clone());
        assert_eq!(a.estimate * k, b.estimate, "{stat:?}");
        for (ia, ib) in a.intervals.iter().zip(&b.intervals) {
            match ia.method {
                Method::Percentile | Method::Basic => {
                    assert_eq!(ia.endpoints.lower * k, ib.endpoints.lower, "{stat:?} {:?}", ia.method);
                    assert_eq!(ia.endpoints.upper * k, ib.endpoints.upper, "{stat:?} {:?}", ia.method);
                }
                _ => {
                    let close = |x: f64, y: f64| (x - y).abs() <= 1e-12 * y.abs().max(1e-300);
                    assert!(close(ia.endpoints.lower * k, ib.endpoints.lower), "{stat:?} {:?}", ia.method);
                    assert!(close(ia.endpoints.upper * k, ib.endpoints.upper), "{stat:?} {:?}", ia.method);
                }
            }
        }
    }
}

fn assert_all_finite(o: &Outcome, what: &str) {
    let mut nums = vec![
        o.estimate,
        o.standard_error,
        o.standard_error_mc_error,
        o.bias,
        o.bias_mc_error,
        o.bias_corrected_estimate,
    ];
    nums.extend([
        o.diagnostics.z0,
        o.diagnostics.replicate_skewness,
        o.diagnostics.acceleration.unwrap_or(0.0),
    ]);
    for iv in &o.intervals {
        nums.extend([
            iv.endpoints.lower,
            iv.endpoints.upper,
            iv.endpoints.lower_mc_error,
            iv.endpoints.upper_mc_error,
        ]);
    }
    if let Some(h) = &o.extras.histogram {
        nums.extend(h.edges.iter().copied());
        nums.extend(h.mass.iter().copied());
    }
    if let Some(c) = &o.extras.cdf {
        nums.extend(c.values.iter().chain(&c.probabilities).copied());
    }
    assert!(nums.iter().all(|v| v.is_finite()), "{what}: non-finite number in {o:?}");
}

#[test]
fn constant_data_gives_zero_width_intervals_and_a_warning() {
    let stats = [
        stat("mean"),
        stat("median"),
        spec(json!({"name": "quantile", "p": 0.95})),
        spec(json!({"name": "trimmed_mean", "trim": 0.1})),
        spec(json!({"name": "variance", "divisor": "n-1"})),
        spec(json!({"name": "std_dev"})),
        spec(json!({"name": "mad", "normalized": false})),
        stat("iqr"),
        stat("geometric_mean"),
        stat("coefficient_of_variation"),
        stat("proportion"),
        spec(json!({"name": "exceedance", "threshold": 0.5})),
    ];
    for stat in stats {
        let o = run(&job(column(vec![1.0; 30]), stat.clone(), 500));
        assert_all_finite(&o, &format!("{stat:?}"));
        assert_eq!(o.standard_error, 0.0, "{stat:?}");
        for iv in &o.intervals {
            assert_eq!(iv.endpoints.lower, o.estimate, "{stat:?} {:?}", iv.method);
            assert_eq!(iv.endpoints.upper, o.estimate, "{stat:?} {:?}", iv.method);
        }
        assert!(o.diagnostics.warnings.iter().any(|w| w.code.name() == "constant_data"), "{stat:?}");
    }
}

#[test]
fn tiny_and_lumpy_samples_give_finite_answers_with_warnings() {
    for x in [vec![3.0, 4.0], vec![1.0, 1.0, 1.0, 2.0], vec![0.0, 0.0, 0.0, 1.0, 0.0, 0.0]] {
        for stat in [
            stat("mean"),
            stat("median"),
            spec(json!({"name": "mad", "normalized": false})),
            spec(json!({"name": "std_dev"})),
        ] {
            let o = run(&job(column(x.clone()), stat.clone(), 400));
            assert_all_finite(&o, &format!("{stat:?} on {x:?}"));
            let codes: Vec<&str> = o.diagnostics.warnings.iter().map(|w| w.code.name()).collect();
            assert!(codes.contains(&"small_sample"), "{stat:?} on {x:?}: {codes:?}");
            assert!(codes.contains(&"few_distinct_replicates"), "{stat:?} on {x:?}: {codes:?}");
        }
    }
}

#[test]
fn diagnostics_flag_extremes_skew_bias_tails_and_serial_correlation() {
    let codes = |o: &Outcome| o.diagnostics.warnings.iter().map(|w| w.code.name()).collect::<Vec<_>>();
    // A 0.99 quantile of 60 values reads the extremes.
    let x: Vec<f64> = (0..60).map(|i| (i as f64).powf(1.5)).collect();
    let o = with(x.clone(), spec(json!({"name": "quantile", "p": 0.99})));
    assert!(codes(&o).contains(&"extreme_quantile"));
    // One huge value among 20 ones: the resampled geometric mean is 2^k, k ~ Binomial(20, 1/20)
    // copies of it drawn, a strongly skewed and upward-biased replicate distribution.
    let mut heavy = vec![1.0; 20];
    heavy[7] = 2f64.powi(20);
    let o = with(heavy, stat("geometric_mean"));
    assert!(codes(&o).contains(&"skewed_replicates"), "{:?}", codes(&o));
    // The plug-in variance of n values has bootstrap bias −σ̂²/n against a standard error of
    // about σ̂²·√(2/n) (for light tails): 1/√(2n) = 0.32 standard errors for n = 5.
    let o = with(vec![1.0, 2.0, 3.0, 4.0, 5.0], spec(json!({"name": "variance"})));
    assert!(
        codes(&o).contains(&"large_bias"),
        "{:?} bias {} se {}",
        codes(&o),
        o.bias,
        o.standard_error
    );
    // 200 resamples leave 5 replicates in each tail of a 95 % interval.
    let o = run(&job(column(BASKETS.to_vec()), stat("mean"), 200));
    assert!(codes(&o).contains(&"too_few_resamples"));
    // A trending series, in time order, is serially correlated.
    let trend: Vec<f64> = (0..100).map(|i| i as f64 + ((i * 37) % 11) as f64).collect();
    let o = with(trend, stat("mean"));
    assert!(codes(&o).contains(&"serial_correlation"));
    // Independent-looking data raises none of these.
    let o = with(BASKETS.to_vec(), stat("median"));
    for c in ["extreme_quantile", "too_few_resamples", "serial_correlation", "constant_data"] {
        assert!(!codes(&o).contains(&c), "{c} on baskets: {:?}", codes(&o));
    }
}

#[test]
fn reported_monte_carlo_errors_match_the_spread_across_seeds() {
    // 200 independent runs of B = 1000 on one sample: the standard deviation of each endpoint
    // across runs is what lower_mc_error estimates. An sd from 200 runs has relative standard
    // error 1/√(2·199) = 5 %, so the mean reported error must lie within 4 × 5 % = 20 % of it.
    let x: Vec<f64> = (0..30).map(|i| ((i * 2654435761u64 as usize) % 1000) as f64 / 100.0).collect();
    let runs = 200;
    let mut lower = vec![Vec::new(); 3];
    let mut reported = [0.0f64; 3];
    let mut ses = Vec::new();
    let mut se_mc = 0.0;
    for seed in 0..runs {
        let mut j = Job::new(column(x.clone()), stat("mean"), 1000 + seed);
        j.resamples = Resamples::Fixed(1000);
        j.methods = vec![Method::Percentile, Method::Normal, Method::Bca];
        let o = run(&j);
        for k in 0..3 {
            lower[k].push(o.intervals[k].endpoints.lower);
            reported[k] += o.intervals[k].endpoints.lower_mc_error / runs as f64;
        }
        ses.push(o.standard_error);
        se_mc += o.standard_error_mc_error / runs as f64;
    }
    let sd = |v: &[f64]| {
        let m = v.iter().sum::<f64>() / v.len() as f64;
        (v.iter().map(|a| (a - m) * (a - m)).sum::<f64>() / (v.len() - 1) as f64).sqrt()
    };
    for k in 0..3 {
        let empirical = sd(&lower[k]);
        let ratio = reported[k] / empirical;
        assert!(
            (0.8..1.2).contains(&ratio),
            "method {k}: reported {} vs empirical {empirical}",
            reported[k]
        );
    }
    let ratio = se_mc / sd(&ses);
    assert!(
        (0.8..1.2).contains(&ratio),
        "standard error: reported {se_mc} vs empirical {}",
        sd(&ses)
    );
}

#[test]
fn the_largest_accepted_magnitudes_give_finite_answers() {
    // Found by schemathesis: values near the accepted bound once overflowed the cubes in the
    // BCa acceleration. 1e75 is the API's bound (request::MAX_MAGNITUDE).
    let x = vec![0.99999, 0.0, 8.4e74, -5.6e16, -2.2e74, -5.4e16, -6.2e74, 1e75, -1e75, 3.3e74];
    for stat in [
        stat("mean"),
        spec(json!({"name": "variance", "divisor": "n-1"})),
        spec(json!({"name": "std_dev"})),
        stat("median"),
    ] {
        let o = run(&job(column(x.clone()), stat.clone(), 500));
        assert_all_finite(&o, &format!("{stat:?}"));
    }
}

#[test]
fn aggregated_data_with_huge_counts_stays_in_o_of_distinct_values() {
    // A latency histogram of a hundred billion requests: every path (iid draws, the jackknife,
    // the nested bootstrap of studentized) must work on the 4 distinct values, never on the
    // expanded rows, or this test would run out of memory.
    let sample = aggregated(
        vec![5.0, 12.0, 40.0, 250.0],
        vec![60_000_000_000, 30_000_000_000, 9_000_000_000, 1_000_000_000],
    );
    let mut j = job(sample, stat("median"), 300);
    j.include = Vec::new();
    let o = run(&j);
    assert_eq!(o.n, [100_000_000_000]);
    assert_eq!(o.estimate, 5.0);
    assert_all_finite(&o, "huge counts");
}

#[test]
fn a_deadline_is_noticed_inside_a_long_first_wave_and_inside_the_jackknife() {
    use std::time::{Duration, Instant};
    // One replicate here is a 1000-deep nested bootstrap of 20 000 rows (about 2e7 row-draws):
    // the deadline must still be noticed within a few inner resamples.
    let x: Vec<f64> = (0..20_000).map(|i| ((i * 7919) % 10007) as f64).collect();
    let mut j = job(column(x.clone()), stat("median"), 256);
    j.methods = vec![Method::Studentized];
    j.inner_resamples = bandsaw::engine::job::InnerResamples::new(1000).unwrap();
    j.include = Vec::new();
    let started = Instant::now();
    let within = |ms| Budget {
        deadline: Some(Instant::now() + Duration::from_millis(ms)),
        ..Budget::default()
    };
    assert!(matches!(try_run_within(&j, &within(100)), Err(RunError::TimeLimit { .. })));
    assert!(
        started.elapsed() < Duration::from_millis(1500),
        "a hang guard: {:?}",
        started.elapsed()
    );
    // The generic jackknife of the MAD over 300 000 rows (500 groups × 300 000) stops too.
    let big: Vec<f64> = (0..300_000).map(|i| ((i * 7919) % 100_003) as f64).collect();
    let mut j = job(column(big), spec(json!({"name": "mad", "normalized": false})), 1000);
    j.methods = vec![Method::Bca];
    j.include = Vec::new();
    let started = Instant::now();
    assert!(matches!(try_run_within(&j, &within(50)), Err(RunError::TimeLimit { .. })));
    assert!(
        started.elapsed() < Duration::from_millis(1500),
        "a hang guard: {:?}",
        started.elapsed()
    );
}

#[test]
fn studentized_intervals_ignore_standard_errors_that_are_zero_up_to_rounding() {
    // A resample of three copies of 0.1 has a standard error of exactly 0 in exact arithmetic but
    // about 1e-17 in floating point; t* would be 1e15 if it were used.
    for x in [vec![0.1, 0.1, 0.7], vec![0.1, 0.2, 0.3, 0.7, 0.1, 0.2]] {
        let o = run(&job(column(x.clone()), stat("mean"), 2000));
        let st = o.intervals.iter().find(|iv| iv.method == Method::Studentized).unwrap();
        assert!(st.endpoints.lower > -10.0 && st.endpoints.upper < 10.0, "{x:?}: {:?}", st.endpoints);
        assert!(o.diagnostics.warnings.iter().any(|w| w.code.name() == "studentized_degenerate"));
    }
}

#[test]
fn correlation_of_huge_values_equals_that_of_the_same_values_scaled_down() {
    let x: Vec<f64> = (0..500).map(|i| (i as f64 * 0.37).sin() + i as f64 / 500.0).collect();
    let y: Vec<f64> = x.iter().enumerate().map(|(i, v)| v + ((i * 31) % 7) as f64 / 20.0).collect();
    let stat = spec(json!({"name": "correlation", "x": "x", "y": "y", "kind": "pearson"}));
    let small = columns(vec!["x".into(), "y".into()], vec![x.clone(), y.clone()]);
    let huge = columns(
        vec!["x".into(), "y".into()],
        vec![x.iter().map(|v| v * 4e74).collect(), y.iter().map(|v| v * 4e74).collect()],
    );
    let a = run(&job(small, stat.clone(), 500));
    let b = run(&job(huge, stat, 500));
    assert!(
        (a.estimate - b.estimate).abs() < 1e-12 && a.estimate > 0.5,
        "{} vs {}",
        a.estimate,
        b.estimate
    );
    assert!((a.standard_error - b.standard_error).abs() < 1e-9 * a.standard_error);
}
