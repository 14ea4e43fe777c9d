//! Verdicts of comparisons, by simulation: how often each verdict comes out when the truth is
//! known. Every comparison is built and decided as `POST /v1/compare` does it
//! (`src/api/compare.rs`): a two-sample job, its first method's interval at its first level read
//! against the tolerance band by [`verdict::decide`], and in a family the levels from
//! [`family::readings`] and each comparison's [`verdict::p_value`].
//!
//! The scenario (invented): milliseconds one run of a JSON parser takes on a 2 MB document,
//! about 100 ms, measured n times on the baseline build and n times on the candidate build.
//!
//! What to expect, and from where:
//! - A two-sided interval of level L misses the truth on each side (1 − L)/2 of the time, so a
//!   false `regression` (or `improvement`) under no change is nominally 2.5 % at 95 %. The
//!   percentile interval is first-order accurate only and built on plug-in variances, so at n = 30
//!   it misses a little more (Efron & Tibshirani 1993, ch. 13): for a difference of means it is
//!   about x̄ ± z·σ̂/√n with the plug-in σ̂, missing P(T₅₈ > 1.96·√(29/30)) = 2.9 % a side (the
//!   t approximation with 2n − 2 degrees of freedom for equal variances; common practice). The
//!   studentized interval carries the estimated variance's tails into the interval (Efron &
//!   Tibshirani 1993, ch. 12) and stays near nominal.
//! - Holm's step-down keeps the family-wise rate of any false claim at most α (Holm, S. (1979),
//!   Scand. J. Statist. 6(2)), given p-values that are exact; ten independent tests each at 5 %
//!   make one or more false claims with probability 1 − 0.95¹⁰ = 40 %. The percentile
//!   interval's excess grows in the far tail that Holm reads (1.5 times nominal at α/m = 0.005),
//!   so with it the family-wise rate at n = 30 is about 7.5 %, not 5 %.
//! - An interval of level L inside the tolerance band is an equivalence test at (1 − L)/2
//!   (Schuirmann, D. J. (1987), J. Pharmacokinet. Biopharm. 15(6)).
//! - A p-value by inverting the interval (Davison & Hinkley 1997, §4.4) is at most 1 − L exactly
//!   when the interval of level L lies outside the band.
//!
//! Every rate is a share of independent simulated comparisons, so its standard error is
//! binomial, √(p(1 − p)/N); every tolerance is at least 4 of them, derived beside its assertion.
//! Seeds are fixed: the test cannot flake.

use crate::common::*;
use bandsaw::engine::data::DataError;
use bandsaw::engine::driver::Which;
use bandsaw::engine::family::{self, Multiplicity};
use bandsaw::engine::job::Contrast;
use bandsaw::engine::plan::Resamples;
use bandsaw::engine::verdict::{self, Better, Comparison, Decision, Evidence, Reading, Sizes, Verdict};

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use rayon::prelude::*;
use std::sync::OnceLock;

/// The level of every comparison, as a request that names none.
const LEVEL: f64 = 0.95;
/// Resamples of every sampled comparison.
const B: u64 = 1000;
/// The benchmark's typical run, in milliseconds.
const MS: f64 = 100.0;

/// How a comparison is set up.
#[derive(Clone, Copy)]
struct Setup {
    statistic: &'static str,
    tolerance: f64,
    paired: bool,
    resamples: Resamples,
    /// The job's methods; the verdict is read from the first, as the service does.
    methods: &'static [Method],
}

impl Setup {
    fn of(statistic: &'static str, tolerance: f64) -> Setup {
        Setup {
            statistic,
            tolerance,
            paired: false,
            resamples: Resamples::Fixed(B),
            methods: &[Method::Percentile],
        }
    }
}

/// A comparison that ran, with what it is decided from.
struct Compared {
    outcome: Outcome,
    comparison: Comparison,
    sizes: Sizes,
    statistic: &'static str,
    /// The job's first method.
    method: Method,
}

impl Compared {
    /// What the service decides from: the first method, the contrast, the band and the sizes
    /// of the two samples.
    fn evidence(&self) -> Evidence<'_> {
        self.evidence_by(self.method)
    }

    /// What a request naming `method` first would decide from: the same replicates, read by
    /// another method (the reader keeps what every method of the job reads).
    fn evidence_by(&self, method: Method) -> Evidence<'_> {
        Evidence {
            reader: &self.outcome.reader,
            method,
            comparison: self.comparison,
            sizes: self.sizes,
            statistic: self.statistic,
        }
    }

    fn decide(&self, reading: Reading) -> Decision {
        verdict::decide(&self.evidence(), reading)
    }

    fn decide_by(&self, method: Method, reading: Reading) -> Decision {
        verdict::decide(&self.evidence_by(method), reading)
    }

    /// The verdict of the comparison on its own, at its level.
    fn alone(&self) -> Decision {
        self.decide(Reading::alone(LEVEL))
    }

    fn p_value(&self) -> f64 {
        verdict::p_value(&self.evidence())
    }

    fn p_value_by(&self, method: Method) -> f64 {
        verdict::p_value(&self.evidence_by(method))
    }
}

/// The job of a comparison: the ratio of the statistic, candidate over baseline, at 95 %.
fn job(baseline: Vec<f64>, candidate: Vec<f64>, setup: &Setup, seed: u64) -> Job {
    let samples = Samples::Two {
        baseline: Resampled::iid(Sample::column(baseline).expect("a valid column")),
        candidate: Resampled::iid(Sample::column(candidate).expect("a valid column")),
        contrast: Contrast::Ratio,
        paired: setup.paired,
    };
    let mut j = Job::new(samples, stat(setup.statistic), seed);
    j.resamples = setup.resamples;
    j.methods = setup.methods.to_vec();
    j.levels = levels(&[LEVEL]);
    j
}

/// Run a comparison of two samples of timings (lower is better).
fn compare(baseline: Vec<f64>, candidate: Vec<f64>, setup: &Setup, seed: u64) -> Compared {
    let sizes = Sizes {
        baseline: baseline.len() as u64,
        candidate: candidate.len() as u64,
        paired: setup.paired,
    };
    Compared {
        outcome: run(&job(baseline, candidate, setup, seed)),
        comparison: Comparison {
            contrast: Contrast::Ratio,
            better: Better::Lower,
            tolerance: setup.tolerance,
        },
        sizes,
        statistic: setup.statistic,
        method: setup.methods[0],
    }
}

/// The data generator of one simulated comparison (its own stream, so each trial is
/// reproducible on its own and in any order).
fn rng(scenario: u64, trial: u64) -> ChaCha8Rng {
    ChaCha8Rng::seed_from_u64(scenario * 1_000_003 + trial)
}

/// The resampling seed of one simulated comparison.
fn seed(scenario: u64, trial: u64) -> u64 {
    scenario * 7_919_000 + trial
}

/// n runs around `level` with normal noise of relative size `noise`.
fn normal_runs(rng: &mut ChaCha8Rng, n: usize, level: f64, noise: f64) -> Vec<f64> {
    (0..n)
        .map(|_| {
            let z: f64 = StandardNormal.sample(rng);
            level * (1.0 + noise * z)
        })
        .collect()
}

/// n runs with median `level` and lognormal noise of log-scale sd `noise` (right-skewed, as
/// timings are).
fn lognormal_runs(rng: &mut ChaCha8Rng, n: usize, level: f64, noise: f64) -> Vec<f64> {
    (0..n)
        .map(|_| {
            let z: f64 = StandardNormal.sample(rng);
            level * (noise * z).exp()
        })
        .collect()
}

/// `trials` independent simulated comparisons, run in parallel (each seeds itself, so the
/// results do not depend on the order or the number of threads).
fn simulate<T: Send>(trials: u64, f: impl Fn(u64) -> T + Sync + Send) -> Vec<T> {
    (0..trials).into_par_iter().map(f).collect()
}

fn share(verdicts: &[Verdict], which: Verdict) -> f64 {
    verdicts.iter().filter(|v| **v == which).count() as f64 / verdicts.len() as f64
}

/// The binomial standard error of a share p over n trials.
fn binomial_se(p: f64, n: u64) -> f64 {
    (p * (1.0 - p) / n as f64).sqrt()
}

const ALL_VERDICTS: [Verdict; 4] = [
    Verdict::Regression,
    Verdict::Improvement,
    Verdict::Equivalent,
    Verdict::Inconclusive,
];

fn is_change(v: Verdict) -> bool {
    matches!(v, Verdict::Regression | Verdict::Improvement)
}

/// The percentile and studentized intervals: the first method of an interval request's
/// defaults, and the one whose p-values are calibrated at n = 30 (it studentizes each resample,
/// so the t-like tails of an estimated variance are carried into the interval; Efron &
/// Tibshirani 1993, ch. 12), which a comparison of means reads its verdict from by default
/// (`COMPARISON_METHODS`). For the mean the studentized standard error is analytic, so it costs
/// no nested bootstrap. Each verdict is what a request naming that method first would get.
const BOTH: [Method; 2] = [Method::Percentile, Method::Studentized];

/// Families of the no-change study, and comparisons in each.
const FAMILIES: u64 = 1000;
const M: u64 = 10;

/// One simulated family of the no-change study, for each method of [`BOTH`]: each
/// comparison's verdict on its own, and whether any false claim is made under Holm, without a
/// correction, and under Bonferroni.
struct Family {
    alone: Vec<[Verdict; 2]>,
    any: [[bool; 3]; 2],
}

/// A suite of M = 10 parser benchmarks, none changed: 30 runs a side, 2 % noise, no
/// tolerance, the ratio of means. Shared by the false-alarm and the family tests (run once).
fn no_change_study() -> &'static [Family] {
    static STUDY: OnceLock<Vec<Family>> = OnceLock::new();
    STUDY.get_or_init(|| simulate(FAMILIES, no_change_family))
}

fn no_change_family(family: u64) -> Family {
    let (scenario, setup) = (
        3,
        Setup {
            methods: &BOTH,
            ..Setup::of("mean", 0.0)
        },
    );
    let compared: Vec<Compared> = (0..M)
        .map(|k| {
            let t = family * M + k;
            let mut r = rng(scenario, t);
            let (b, c) = (normal_runs(&mut r, 30, MS, 0.02), normal_runs(&mut r, 30, MS, 0.02));
            compare(b, c, &setup, seed(scenario, t))
        })
        .collect();
    let own = vec![LEVEL; M as usize];
    let any = |method: Method| {
        let p: Vec<f64> = compared.iter().map(|c| c.p_value_by(method)).collect();
        let claims = |multiplicity| -> Vec<bool> {
            let readings = family::readings(multiplicity, LEVEL, &own, &p);
            compared
                .iter()
                .zip(readings)
                .map(|(c, r)| is_change(c.decide_by(method, r).verdict))
                .collect()
        };
        let (holm, none, bonferroni) = (
            claims(Multiplicity::Holm),
            claims(Multiplicity::None),
            claims(Multiplicity::Bonferroni),
        );
        // Holm claims at least what Bonferroni does (Holm 1979), comparison by comparison.
        assert!(
            bonferroni.iter().zip(&holm).all(|(b, h)| !b || *h),
            "family {family}: {bonferroni:?} ⊄ {holm:?}"
        );
        [holm, none, bonferroni].map(|c| c.contains(&true))
    };
    Family {
        alone: compared
            .iter()
            .map(|c| BOTH.map(|m| c.decide_by(m, Reading::alone(LEVEL)).verdict))
            .collect(),
        any: BOTH.map(any),
    }
}

/// The chance that at least one of m independent tests at `alpha` rejects.
fn any_of(m: i32, alpha: f64) -> f64 {
    1.0 - (1.0 - alpha).powi(m)
}

#[test]
fn under_no_change_false_regressions_and_improvements_stay_near_the_nominal_rate() {
    // The ratio of means: the study's M·FAMILIES = 10 000 comparisons.
    let n = M * FAMILIES;
    let study = no_change_study();
    let mut rates = Vec::new();
    for (k, method) in BOTH.iter().enumerate() {
        let v: Vec<Verdict> = study.iter().flat_map(|f| f.alone.iter().map(|a| a[k])).collect();
        let (reg, imp) = (share(&v, Verdict::Regression), share(&v, Verdict::Improvement));
        eprintln!("no change, ratio of means, normal runs, {method}: regression {reg:.4}, improvement {imp:.4} of {n}");
        assert_eq!(share(&v, Verdict::Equivalent), 0.0, "no interval fits in a band of width 0");
        rates.push((*method, reg, imp));
    }
    // The ratio of medians of lognormal runs, 2000 comparisons (the median has no analytic
    // standard error, so percentile only).
    const N: u64 = 2000;
    let setup = Setup::of("median", 0.0);
    let verdicts = simulate(N, |t| {
        let mut r = rng(2, t);
        let (b, c) = (lognormal_runs(&mut r, 30, MS, 0.02), lognormal_runs(&mut r, 30, MS, 0.02));
        compare(b, c, &setup, seed(2, t)).alone().verdict
    });
    let (reg, imp) = (share(&verdicts, Verdict::Regression), share(&verdicts, Verdict::Improvement));
    eprintln!("no change, ratio of medians, lognormal runs, percentile: regression {reg:.4}, improvement {imp:.4} of {N}");
    // Each rate against what theory predicts for it, from both sides, and never far above
    // nominal. Studentized: nominal 2.5 % a side. Percentile: P(T₅₈ > 1.96·√(29/30)) = 0.0294
    // a side (the module's note; scipy.stats.t.sf, scipy 1.x). Binomial se over 10 000 at
    // 0.025 is 0.0016, at 0.0294 is 0.0017: 4 of them 0.0062 and 0.0068.
    for (method, reg, imp) in rates {
        let expected = match method {
            Method::Percentile => 0.0294,
            _ => 0.025,
        };
        let tolerance = 4.0 * binomial_se(expected, n);
        for (what, rate) in [("regressions", reg), ("improvements", imp)] {
            assert!(
                (rate - expected).abs() <= tolerance,
                "means, {method}: false {what} {rate}, want {expected} ± {tolerance}"
            );
        }
    }
    // Medians: the median of 30 runs takes few distinct values under resampling, so its
    // percentile interval is conservative (its tails hold whole atoms of probability); only
    // the nominal bound is asserted: se over 2000 at 0.025 is 0.0035, 4 of them 0.014, so at
    // most 3.9 %.
    let limit = 0.025 + 4.0 * binomial_se(0.025, N);
    assert!(reg <= limit, "medians: false regressions {reg} > {limit}");
    assert!(imp <= limit, "medians: false improvements {imp} > {limit}");
}

#[test]
fn holm_keeps_the_family_wise_false_alarm_rate_and_no_correction_does_not() {
    let study = no_change_study();
    let rate = |k: usize, i: usize| study.iter().filter(|f| f.any[k][i]).count() as f64 / FAMILIES as f64;
    for (k, method) in BOTH.iter().enumerate() {
        let (holm, none, bonferroni) = (rate(k, 0), rate(k, 1), rate(k, 2));
        eprintln!(
            "families of {M} without change, {method}: any false claim under holm {holm:.4}, \
             bonferroni {bonferroni:.4}, none {none:.4} of {FAMILIES}"
        );
    }
    // Studentized: Holm 1979 bounds the family-wise rate by 5 %; binomial se
    // √(0.05·0.95/1000) = 0.0069, 4 of them 0.028: at most 7.8 %.
    let limit = 0.05 + 4.0 * binomial_se(0.05, FAMILIES);
    assert!(
        rate(1, 0) <= limit,
        "holm's family-wise rate (studentized) {} > {limit}",
        rate(1, 0)
    );
    // Percentile: Holm is only as good as the p-values it orders. The percentile interval's
    // p-value at n = 30 is 2·P(T₅₈ > z·√(29/30)) rather than α (plug-in variances and normal
    // quantiles; Efron & Tibshirani 1993, ch. 13): 0.0077 at α = 0.005, 1.5 times nominal, so
    // even Bonferroni's α/m reading makes a false claim in 1 − (1 − 0.0077)¹⁰ = 7.5 % of
    // families. That excess over 5 % is the percentile interval's, not Holm's; asserted here
    // against the 7.5 % it should be, se √(0.075·0.925/1000) = 0.0083, 4 of them 0.033.
    let percentile = any_of(M as i32, 0.0077);
    let limit = percentile + 4.0 * binomial_se(percentile, FAMILIES);
    assert!(rate(0, 0) <= limit, "holm's family-wise rate (percentile) {} > {limit}", rate(0, 0));
    // Without a correction: 1 − 0.95¹⁰ = 0.40 (more by the percentile interval); se at 0.40 is
    // √(0.4·0.6/1000) = 0.015, 4 of them 0.062: at least 0.34, far above 0.20.
    let uncorrected = any_of(M as i32, 0.05);
    let floor = uncorrected - 4.0 * binomial_se(uncorrected, FAMILIES);
    assert!(floor > 0.20);
    for (k, method) in BOTH.iter().enumerate() {
        assert!(
            rate(k, 1) >= floor,
            "uncorrected family-wise rate ({method}) {} < {floor}",
            rate(k, 1)
        );
    }
}

#[test]
fn a_ten_percent_slowdown_is_a_regression_every_time() {
    // The candidate parser is 10 % slower; 2 % noise, 30 runs a side. The ratio of means has
    // standard error √2·0.02/√30 = 0.0052, so the slowdown is 19 standard errors and the 95 %
    // interval's lower end (≈ 1.10 − 1.96·0.0052) stays above 1 unless the estimate falls 17
    // standard errors short: probability 4e-65 for normal errors, 4e-24 even with the t₅₈ tails
    // of a plug-in variance. So every one of the N comparisons must say `regression` (a
    // threshold such as 99 % would be far weaker than the theory allows).
    const N: u64 = 300;
    let setup = Setup::of("mean", 0.0);
    let verdicts = simulate(N, |t| {
        let mut r = rng(4, t);
        let (b, c) = (normal_runs(&mut r, 30, MS, 0.02), normal_runs(&mut r, 30, 1.10 * MS, 0.02));
        compare(b, c, &setup, seed(4, t)).alone().verdict
    });
    let reg = share(&verdicts, Verdict::Regression);
    eprintln!("10 % slowdown: regression {reg:.4} of {N}");
    assert_eq!(reg, 1.0);
}

#[test]
fn three_runs_a_side_are_always_inconclusive() {
    // Three runs a side: the most extreme of the C(6, 3) = 20 arrangements has two-sided
    // probability 2/20 = 0.1 > 0.05 (Mann & Whitney 1947), so no verdict but `inconclusive`,
    // whatever the data. A 50 % slowdown at 2 % noise puts every interval far above 1; a band
    // of ±50 % around no change puts every no-change interval inside it: neither is claimed.
    const N: u64 = 200;
    let exact = Setup {
        resamples: Resamples::Exact,
        ..Setup::of("mean", 0.0)
    };
    let cases = [
        ("50 % slowdown, exact", 1.5, exact),
        ("50 % slowdown, sampled", 1.5, Setup::of("mean", 0.0)),
        ("no change, tolerance 50 %", 1.0, Setup { tolerance: 0.5, ..exact }),
    ];
    for (k, (name, factor, setup)) in cases.into_iter().enumerate() {
        let scenario = 5 + k as u64;
        let decisions = simulate(N, |t| {
            let mut r = rng(scenario, t);
            let (b, c) = (normal_runs(&mut r, 3, MS, 0.02), normal_runs(&mut r, 3, factor * MS, 0.02));
            let d = compare(b, c, &setup, seed(scenario, t)).alone();
            (
                d.verdict,
                d.floor,
                d.p_value,
                d.lower > d.band.1 || (d.lower >= d.band.0 && d.upper <= d.band.1),
            )
        });
        let decided_otherwise = decisions.iter().filter(|d| d.3).count();
        eprintln!("3 runs a side, {name}: {decided_otherwise} of {N} intervals would decide without the floor; all inconclusive");
        for (verdict, floor, p, _) in &decisions {
            assert_eq!(*verdict, Verdict::Inconclusive, "{name}");
            assert!((floor - 0.1).abs() < 1e-12, "{name}: floor {floor}");
            assert!(*p >= 0.1, "{name}: p-value {p} below the floor");
        }
        // The floor is what binds: the intervals alone would decide every time.
        assert_eq!(decided_otherwise as u64, N, "{name}");
    }
}

#[test]
fn a_half_percent_change_within_a_two_percent_tolerance_is_equivalent() {
    // The candidate is 0.5 % slower, noise 1 %, 30 runs a side, tolerance 2 % (band
    // [1/1.02, 1.02]). The ratio's standard error is √2·0.01/√30 = 0.0026; the 95 % interval
    // ≈ 1.005 ± 0.0051 leaves the band only if the estimate lands (0.015 − 0.0051)/0.0026 = 3.8
    // standard errors high (the lower edge is 9.6 away): p ≈ 6e-5 normal, 1.5e-4 with the t₅₈
    // tails of plug-in variances. Bound it generously by p = 1e-3; over N = 1000 the
    // binomial se is √(1e-3/1000) = 0.001, so at least 1 − 0.001 − 4·0.001 = 0.995 must be
    // `equivalent`.
    const N: u64 = 1000;
    let setup = Setup::of("mean", 0.02);
    let verdicts = simulate(N, |t| {
        let mut r = rng(8, t);
        let (b, c) = (normal_runs(&mut r, 30, MS, 0.01), normal_runs(&mut r, 30, 1.005 * MS, 0.01));
        compare(b, c, &setup, seed(8, t)).alone().verdict
    });
    let eq = share(&verdicts, Verdict::Equivalent);
    eprintln!("0.5 % change, tolerance 2 %: equivalent {eq:.4} of {N}");
    let p_miss = 1e-3;
    let least = 1.0 - p_miss - 4.0 * binomial_se(p_miss, N);
    assert!(eq >= least, "equivalent {eq} < {least}");
    assert_eq!(share(&verdicts, Verdict::Regression) + share(&verdicts, Verdict::Improvement), 0.0);
}

/// Interleaved runs on a machine whose speed wanders between pairs: speed 1 + 0.05·Z per pair,
/// run noise 0.5 %; the candidate `factor` slower.
fn drifting_pairs(rng: &mut ChaCha8Rng, n: usize, factor: f64) -> (Vec<f64>, Vec<f64>) {
    (0..n)
        .map(|_| {
            let (d, e1, e2): (f64, f64, f64) = (StandardNormal.sample(rng), StandardNormal.sample(rng), StandardNormal.sample(rng));
            let speed = 1.0 + 0.05 * d;
            (MS * speed * (1.0 + 0.005 * e1), factor * MS * speed * (1.0 + 0.005 * e2))
        })
        .unzip()
}

#[test]
fn pairing_removes_machine_drift() {
    // Predicted from the simulation's variances: unpaired, each run varies by drift and noise,
    // se of the ratio ≈ √2·√(0.05² + 0.005²)/√30 = 0.0130; paired, the drift cancels within a
    // pair, se ≈ √2·0.005/√30 = 0.0013. Width ratio ≈ 0.005/√(0.05² + 0.005²) = 0.0995.
    const N: u64 = 300;
    let unpaired = Setup::of("mean", 0.0);
    let paired = Setup { paired: true, ..unpaired };
    let runs = simulate(N, |t| {
        let (b, c) = drifting_pairs(&mut rng(9, t), 30, 1.02);
        let p = compare(b.clone(), c.clone(), &paired, seed(9, t)).alone();
        let u = compare(b, c, &unpaired, seed(9, t)).alone();
        (p.verdict, u.verdict, (p.upper - p.lower) / (u.upper - u.lower))
    });
    let ratios: Vec<f64> = runs.iter().map(|r| r.2).collect();
    let mean_ratio = ratios.iter().sum::<f64>() / N as f64;
    let worst = ratios.iter().copied().fold(0.0, f64::max);
    let paired_v: Vec<Verdict> = runs.iter().map(|r| r.0).collect();
    let unpaired_v: Vec<Verdict> = runs.iter().map(|r| r.1).collect();
    let (pr, ur) = (share(&paired_v, Verdict::Regression), share(&unpaired_v, Verdict::Regression));
    let ui = share(&unpaired_v, Verdict::Inconclusive);
    eprintln!(
        "drift, 2 % slowdown: width ratio paired/unpaired mean {mean_ratio:.4}, largest {worst:.4}; \
         regression paired {pr:.4}, unpaired {ur:.4} (inconclusive {ui:.4}) of {N}"
    );
    // Each ratio: ≈ 0.0995 with a log-scale sd of about 0.19 (the plug-in sds of 30 differences
    // and of 30 runs, 0.13 each, and the B = 1000 quantiles, 0.03 a width); 0.5 is
    // ln(0.5/0.0995)/0.19 = 8.5 sds above.
    assert!(worst < 0.5, "paired interval not much narrower: width ratio {worst}");
    // Paired: the 2 % slowdown is 0.02/0.0013 = 15 standard errors, detected every time (a
    // miss needs the estimate 13.5 se short: probability 6e-39 normal, 1e-13 with t₂₉ tails).
    assert_eq!(pr, 1.0, "paired runs must find the 2 % slowdown");
    // Unpaired: the two samples share the speeds, so the ratio of means itself stays within
    // ≈ 0.0013 of 1.02 (the drift cancels in it), but resampling the samples independently counts
    // the drift twice: the interval's half-width is ≈ 1.96·0.0130·√(29/30) = 0.025 > 0.02, and
    // it clears 1 only when the runs' plug-in sd comes out 20 % low (ŝe < 0.02/1.96 = 0.0102
    // against 0.0128). That sd, of 30 near-normal values, has relative sd 1/√(2·29) = 0.13 (the
    // two samples' sds move together, sharing the speeds): P ≈ Φ(−0.20/0.13) = 0.06, a little
    // more with the B = 1000 quantiles' noise. Bounded generously by 0.10: se over 300 at 0.10
    // is 0.017, 4 of them 0.069, so at least 1 − 0.10 − 0.069 = 0.83 of the unpaired verdicts
    // stay inconclusive.
    let detect = 0.10;
    let least = 1.0 - detect - 4.0 * binomial_se(detect, N);
    assert!(ui >= least, "unpaired inconclusive {ui} < {least}");
}

#[test]
fn paired_samples_of_unequal_lengths_are_refused() {
    let (b, mut c) = drifting_pairs(&mut rng(10, 0), 30, 1.0);
    c.pop();
    let setup = Setup {
        paired: true,
        ..Setup::of("mean", 0.0)
    };
    let refused = driver::prepare(job(b, c, &setup, 1)).err();
    assert_eq!(
        refused,
        Some(RunError::data(
            Which::Candidate,
            vec![DataError::NotPaired {
                baseline: 30,
                candidate: 29
            }],
        ))
    );
}

#[test]
fn the_p_value_agrees_with_the_verdict_and_never_falls_below_the_floor() {
    // Shifts of 0, ±0.4, ±0.8 and +1.2 % at 2 % noise and 30 runs a side (se 0.52 %), with no
    // tolerance (every other trial) or 2 %: every kind of outcome. The floor 2/C(60, 30) ≈
    // 1.7e-17 does not bind.
    const N: u64 = 600;
    let factors = [1.0, 1.004, 0.996, 1.008, 0.992, 1.012];
    let decisions = simulate(N, |t| {
        let mut r = rng(11, t);
        let f = factors[(t / 2 % factors.len() as u64) as usize];
        let setup = Setup::of("mean", if t % 2 == 0 { 0.0 } else { 0.02 });
        let (b, c) = (normal_runs(&mut r, 30, MS, 0.02), normal_runs(&mut r, 30, f * MS, 0.02));
        let compared = compare(b, c, &setup, seed(11, t));
        let d = compared.alone();
        assert_eq!(d.p_value, compared.p_value(), "the p-value a family orders by is the decision's");
        d
    });
    let mut counts = [0u64; 4];
    for d in &decisions {
        let (p, q, v) = (d.p_value, d.equivalence_p_value, d.verdict);
        // Interval inversion: the 95 % interval lies outside the band exactly when p ≤ 0.05,
        // and inside it exactly when the equivalence p-value is.
        assert_eq!(p <= 1.0 - LEVEL, is_change(v), "p-value {p} with verdict {v:?}");
        assert_eq!(
            q <= 1.0 - LEVEL,
            v == Verdict::Equivalent,
            "equivalence p-value {q} with verdict {v:?}"
        );
        assert!(p >= d.floor && q >= d.floor, "p-values {p}, {q} below the floor {}", d.floor);
        counts[ALL_VERDICTS.iter().position(|x| *x == v).expect("a verdict")] += 1;
    }
    eprintln!("p-value consistency, of {N}: {counts:?} (regression, improvement, equivalent, inconclusive)");
    assert!(counts.iter().all(|c| *c >= 10), "every verdict exercised: {counts:?}");
}

#[test]
fn with_few_runs_the_p_value_is_the_floor() {
    // A 30 % slowdown at 2 % noise: every resample says slower, so the interval's own p-value is
    // as small as it gets, and the floor of the runs is what is reported. Enumerated exactly, as
    // the service does for small samples. Floors: 2/C(8, 4) = 1/35 for 4 a side, 2/C(10, 5) =
    // 1/126 for 5 a side, 2·2⁻⁶ = 1/32 for 6 pairs (the sign test's).
    let exact = Setup {
        resamples: Resamples::Exact,
        ..Setup::of("mean", 0.0)
    };
    let cases = [(4, false, 1.0 / 35.0), (5, false, 1.0 / 126.0), (6, true, 1.0 / 32.0)];
    for (k, (n, paired, floor)) in cases.into_iter().enumerate() {
        let setup = Setup { paired, ..exact };
        for t in 0..20 {
            let mut r = rng(12 + k as u64, t);
            let (b, c) = (normal_runs(&mut r, n, MS, 0.02), normal_runs(&mut r, n, 1.3 * MS, 0.02));
            let d = compare(b, c, &setup, seed(12, t)).alone();
            assert!((d.floor - floor).abs() < 1e-12 * floor, "n = {n}: floor {}", d.floor);
            assert_eq!(d.p_value, d.floor, "n = {n}, paired {paired}");
            assert_eq!(d.verdict, Verdict::Regression, "n = {n}: floor {floor} ≤ 0.05");
        }
    }
}
