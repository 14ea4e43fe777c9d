//! Coverage study: on many simulated samples with known truth, how often each method's 90 %
//! interval for the mean covers it.
//!
//! The expectations were computed by an independent numpy 2.4.6 implementation of the same
//! five methods (scripts/reference/coverage_expectation.py, B = 1000 resamples per sample):
//!
//! | method      | normal, n = 50 (40 000 trials) | exponential, n = 10 (100 000 trials) |
//! |-------------|--------------------------------|--------------------------------------|
//! | percentile  | 0.8897 ± 0.0016                | 0.8086 ± 0.0012                      |
//! | basic       | 0.8905 ± 0.0016                | 0.7956 ± 0.0013                      |
//! | normal      | 0.8915 ± 0.0016                | 0.8054 ± 0.0013                      |
//! | bca         | 0.8893 ± 0.0016                | 0.8192 ± 0.0012                      |
//! | studentized | 0.9001 ± 0.0015                | 0.8896 ± 0.0010                      |
//!
//! For normal data the percentile interval is close to x̄ ± z·σ̂/√n with the plug-in σ̂, whose
//! coverage is 2·T₄₉(1.6449·√(49/50)) − 1 = 0.8901 (computed below with statrs): slightly under
//! 90 % because σ̂ is estimated. For small skewed samples the percentile interval is known to
//! undercover (Efron & Tibshirani 1993, ch. 14; DiCiccio & Efron 1996); studentized intervals
//! do much better for the mean.
//!
//! Every tolerance is 4 standard errors of the difference between our binomial estimate and
//! numpy's, √(c(1 − c)/T + se_numpy²); with fixed seeds the test cannot flake.

use crate::common::*;
use bandsaw::engine::plan::Resamples;

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Exp1, StandardNormal};
use statrs::distribution::{ContinuousCDF, StudentsT};

const METHODS: [Method; 5] = [Method::Percentile, Method::Basic, Method::Normal, Method::Bca, Method::Studentized];

/// Coverage of each method over `trials` samples drawn by `draw`, true mean `truth`.
fn coverage(trials: u64, n: usize, truth: f64, seed: u64, draw: impl Fn(&mut ChaCha8Rng) -> f64) -> [f64; 5] {
    let mut hits = [0u64; 5];
    for t in 0..trials {
        let mut rng = ChaCha8Rng::seed_from_u64(seed * 1_000_003 + t);
        let x: Vec<f64> = (0..n).map(|_| draw(&mut rng)).collect();
        let mut job = Job::new(column(x), stat("mean"), seed + t);
        job.resamples = Resamples::Fixed(1000);
        job.levels = levels(&[0.90]);
        job.methods = METHODS.to_vec();
        let o = run(&job);
        for (k, iv) in o.intervals.iter().enumerate() {
            if iv.endpoints.lower <= truth && truth <= iv.endpoints.upper {
                hits[k] += 1;
            }
        }
    }
    hits.map(|h| h as f64 / trials as f64)
}

fn check(name: &str, got: [f64; 5], want: [f64; 5], want_se: [f64; 5], trials: u64) -> [f64; 5] {
    eprintln!("{name}: coverage {got:?} (numpy {want:?}, {trials} trials)");
    let mut tols = [0.0; 5];
    for k in 0..5 {
        let se = (want[k] * (1.0 - want[k]) / trials as f64 + want_se[k] * want_se[k]).sqrt();
        tols[k] = 4.0 * se;
        assert!(
            (got[k] - want[k]).abs() < tols[k],
            "{name} {}: coverage {} vs numpy {} ± {}",
            METHODS[k].name(),
            got[k],
            want[k],
            tols[k]
        );
    }
    tols
}

#[test]
fn normal_samples_of_50_cover_near_90_percent() {
    let trials = 3000;
    let got = coverage(trials, 50, 0.0, 1, |r| StandardNormal.sample(r));
    check("normal n=50", got, [0.8897, 0.8905, 0.8915, 0.8893, 0.9001], [0.0016; 5], trials);
    // The analytic figure for the percentile interval (see the module comment).
    let t49 = StudentsT::new(0.0, 1.0, 49.0).unwrap();
    let analytic = 2.0 * t49.cdf(1.6448536269514722 * (49.0f64 / 50.0).sqrt()) - 1.0;
    assert!((analytic - 0.8901).abs() < 1e-4);
    let se = (analytic * (1.0 - analytic) / trials as f64).sqrt();
    assert!((got[0] - analytic).abs() < 4.0 * se, "percentile {} vs analytic {analytic}", got[0]);
}

#[test]
fn small_skewed_samples_undercover_with_percentile_and_less_with_studentized() {
    let trials = 4000;
    let got = coverage(trials, 10, 1.0, 2, |r| Exp1.sample(r));
    let tols = check(
        "exponential n=10",
        got,
        [0.8086, 0.7956, 0.8054, 0.8192, 0.8896],
        [0.0012, 0.0013, 0.0013, 0.0012, 0.0010],
        trials,
    );
    // Percentile is below nominal by far more than its sampling error, and studentized is
    // closer to nominal than percentile by more than both errors together.
    let se_pct = (got[0] * (1.0 - got[0]) / trials as f64).sqrt();
    assert!(got[0] < 0.90 - 4.0 * se_pct, "percentile {}", got[0]);
    assert!(
        got[4] - got[0] > tols[0] + tols[4],
        "studentized {} vs percentile {}",
        got[4],
        got[0]
    );
}
