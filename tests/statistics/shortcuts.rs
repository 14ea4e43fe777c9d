//! The exact `iid` shortcuts of `src/engine/statistic/shortcut.rs` (the mean summed as rows are
//! drawn, a share as one binomial draw, order statistics by binomial splitting) held against the
//! plain path (`Job.shortcuts = false`: the resample's weights drawn, the statistic evaluated on
//! them), against the exact bootstrap distribution of the median, for determinism, and the
//! chunked row draw against the plug-in standard error of the mean.
//!
//! The two paths read a replicate's stream differently, so their replicates differ one by one;
//! what must agree is their distribution. For the mean they draw the same rows from the same
//! words, so there the replicates agree one by one up to rounding.
//!
//! Two runs of B = 20 000 replicates (same seed, one per path) are compared three ways:
//! - a chi-square test of homogeneity of the 2 × K table of counts over classes of the pooled
//!   replicates (each class at least 200 pooled replicates, never splitting an atom, so every
//!   expected count is at least 100 and the chi-square approximation is sound), against the
//!   critical value χ²_{K−1}(1 − α) at α = 10⁻⁴ per comparison (statrs' inverse CDF);
//! - the means, within 4 standard errors of their difference, √(s₁²/B + s₂²/B);
//! - the variances, within 4 standard errors of their difference, √(2·Var(s²)) with
//!   Var(s²) = (μ₄ − σ⁴(B − 3)/(B − 1))/B, the variance of the unbiased sample variance of B
//!   values (the standard result, e.g. Cramér, H. (1946), Mathematical Methods of Statistics,
//!   ch. 27; from memory), with μ₄ and σ² from the pooled replicates. This form stays right for distributions of two atoms, where the
//!   large-B formula (κ − 1)σ⁴/B goes to 0.
//!
//! Seeds are fixed: the tests cannot flake. The measured values are printed (`--nocapture`).

use crate::common::*;
use bandsaw::engine::draw::CHUNK_ROWS;
use bandsaw::engine::plan::Resamples;
use bandsaw::engine::rng::replicate_stream;
use rand_distr::{Distribution, LogNormal};
use serde_json::json;
use statrs::distribution::{ChiSquared, ContinuousCDF};

/// Replicates per path in the comparisons of distributions.
const B: u64 = 20_000;
/// The level of each chi-square test of homogeneity.
const ALPHA: f64 = 1e-4;
/// The fewest pooled replicates in a class of the chi-square test: every expected count at
/// least 100, where the chi-square approximation of the statistic is sound.
const MIN_CLASS: usize = 200;

/// Invented: `n` request latencies (ms), log-normal with median e⁴ ≈ 55 ms and σ = 0.6,
/// rounded to 0.1 ms (so the larger samples hold ties), from a fixed stream.
fn latencies(n: usize, seed: u64) -> Vec<f64> {
    let mut rng = replicate_stream(seed, 0);
    let d = LogNormal::<f64>::new(4.0, 0.6).expect("valid parameters");
    (0..n).map(|_| (d.sample(&mut rng) * 10.0).round() / 10.0).collect()
}

/// Invented: a latency histogram of 245 requests as (value, count), given out of order. The
/// median's rank (122, 0-based) is the last of the 22s, and the 0.1 and 0.9 quantiles sit
/// within about two standard deviations of a boundary between values, so that every
/// quantile's replicates spread over several values.
fn small_histogram() -> Samples {
    aggregated(
        vec![25., 12., 15., 18., 22., 31., 40., 55., 80., 120., 200., 450.],
        vec![30, 22, 23, 52, 26, 25, 20, 17, 12, 8, 6, 4],
    )
}

/// Invented: five billion requests in a handful of values. The big units' cumulative counts
/// sit near N·p for p = 0.1, 0.25, 0.5, 0.75, 0.9 (within a standard deviation √(Np(1 − p)) of
/// the rank, as noted beside each; the small units move them by at most 6), so that each
/// quantile's replicates fall on both sides of a boundary; units of 1–3 counts sit below and
/// between the big ones. The total is above 2³², every big count above 2²⁸.
fn huge_histogram() -> Samples {
    let big = [
        499_987_272u64, // 0.1·N − 0.6·√(N·0.09)
        750_012_728,    // to 0.25·N exactly
        1_250_021_213,  // to 0.5·N + 0.6·√(N/4)
        1_249_969_601,  // to 0.75·N − 0.3·√(N·0.1875)
        750_019_793,    // to 0.9·N + 0.5·√(N·0.09)
        499_989_387,    // the rest, with the small units, to N = 5·10⁹
    ];
    let values = vec![0.5, 1.0, 1.5, 2.0, 3.0, 3.5, 4.0, 5.0, 6.0];
    let counts = vec![2, big[0], 3, big[1], big[2], 1, big[3], big[4], big[5]];
    assert_eq!(counts.iter().sum::<u64>(), 5_000_000_000);
    aggregated(values, counts)
}

/// A job of `b` replicates with percentile intervals only (a studentized interval would send
/// the order statistics, which have no analytic standard error, to the plain path), by the
/// shortcuts or by the plain path.
fn job(sample: Samples, stat: StatisticSpec, b: u64, seed: u64, shortcuts: bool) -> Job {
    let mut j = Job::new(sample, stat, seed);
    j.resamples = Resamples::Fixed(b);
    j.methods = vec![Method::Percentile];
    j.include = vec![Include::Replicates];
    j.shortcuts = shortcuts;
    j
}

fn replicates(o: &Outcome) -> Vec<f64> {
    o.extras.replicates.clone().expect("replicates asked for")
}

/// The replicates of both paths, same seed: (shortcut, plain).
fn both(sample: &Samples, stat: &StatisticSpec, b: u64, seed: u64) -> (Vec<f64>, Vec<f64>) {
    let by = |shortcuts| replicates(&run(&job(sample.clone(), stat.clone(), b, seed, shortcuts)));
    (by(true), by(false))
}

/// Upper ends of classes of the pooled values (sorted), each class holding at least `min` of
/// them and every copy of a value; the last class is open above and takes the remainder.
fn class_uppers(pooled: &[f64], min: usize) -> Vec<f64> {
    let mut uppers = Vec::new();
    let (mut held, mut i) = (0, 0);
    while i < pooled.len() {
        let v = pooled[i];
        let end = i + pooled[i..].partition_point(|w| *w <= v);
        held += end - i;
        i = end;
        if held >= min {
            uppers.push(v);
            held = 0;
        }
    }
    match uppers.last_mut() {
        Some(u) => *u = f64::INFINITY,
        None => uppers.push(f64::INFINITY),
    }
    uppers
}

/// The counts of `x` in the classes with upper ends `uppers`.
fn class_counts(x: &[f64], uppers: &[f64]) -> Vec<f64> {
    let mut c = vec![0.0; uppers.len()];
    for v in x {
        c[uppers.partition_point(|u| *u < *v)] += 1.0;
    }
    c
}

/// The chi-square statistic of homogeneity of two samples of equal size over classes of their
/// pooled values, and its degrees of freedom. With equal totals the expected count of each cell
/// is (a + b)/2, so Σ (a − E)²/E + (b − E)²/E = Σ (a − b)²/(a + b).
fn homogeneity(a: &[f64], b: &[f64]) -> (f64, usize) {
    let mut pooled: Vec<f64> = a.iter().chain(b).copied().collect();
    pooled.sort_by(f64::total_cmp);
    let uppers = class_uppers(&pooled, MIN_CLASS);
    let (ca, cb) = (class_counts(a, &uppers), class_counts(b, &uppers));
    let chi2 = ca.iter().zip(&cb).map(|(x, y)| (x - y) * (x - y) / (x + y)).sum();
    (chi2, uppers.len() - 1)
}

/// Mean and variance (divisor n − 1).
fn mean_var(x: &[f64]) -> (f64, f64) {
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    (m, x.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / (n - 1.0))
}

/// The variance of the sample variance of `b` values from the distribution of `pooled`
/// (its plug-in σ² and μ₄): (μ₄ − σ⁴(b − 3)/(b − 1))/b.
fn var_of_sample_variance(pooled: &[f64], b: f64) -> f64 {
    let n = pooled.len() as f64;
    let m = pooled.iter().sum::<f64>() / n;
    let s2 = pooled.iter().map(|v| (v - m).powi(2)).sum::<f64>() / n;
    let m4 = pooled.iter().map(|v| (v - m).powi(4)).sum::<f64>() / n;
    (m4 - s2 * s2 * (b - 3.0) / (b - 1.0)).max(0.0) / b
}

/// How the shortcut of a case reads its stream against the plain path.
#[derive(Clone, Copy, PartialEq)]
enum Draws {
    /// Differently: its replicates differ one by one, which shows that it was taken (the plain
    /// path on the same seed repeats itself exactly).
    Own,
    /// As the plain path does, so that the replicates are the same bit for bit: at most 24 raw
    /// rows, which `Order::by_drawing` draws one by one by `draw::within` as `draw::rows`
    /// does; and a share of two units, where the plain path's one conditional
    /// binomial (rand_distr flips p > ½ to 1 − p and returns n minus the draw) is the
    /// shortcut's.
    Shared,
}

/// The shortcut's replicates `s` and the plain path's `p` (same seed, same size) come from one
/// distribution: chi-square of homogeneity below χ²_{K−1}(1 − α), means and variances within 4
/// standard errors of their differences (see the module's notes).
fn assert_same_distribution(what: &str, draws: Draws, s: &[f64], p: &[f64]) {
    assert_eq!(s.len(), p.len(), "{what}");
    match draws {
        Draws::Own => assert!(s != p, "{what}: the same replicates one by one: was the shortcut taken?"),
        Draws::Shared => assert!(s == p, "{what}: the shortcut was to draw the plain path's resamples"),
    }
    let b = s.len() as f64;
    let (chi2, df) = homogeneity(s, p);
    assert!(df >= 1, "{what}: one class only, the comparison says nothing");
    let critical = ChiSquared::new(df as f64).expect("df ≥ 1").inverse_cdf(1.0 - ALPHA);
    assert!(
        chi2 < critical,
        "{what}: chi-square {chi2:.2} on {df} df ≥ {critical:.2} (α = {ALPHA})"
    );
    let ((ms, vs), (mp, vp)) = (mean_var(s), mean_var(p));
    let mean_tol = 4.0 * ((vs + vp) / b).sqrt();
    assert!((ms - mp).abs() <= mean_tol, "{what}: means {ms} vs {mp} ± {mean_tol}");
    let pooled: Vec<f64> = s.iter().chain(p).copied().collect();
    let var_tol = 4.0 * (2.0 * var_of_sample_variance(&pooled, b)).sqrt();
    assert!((vs - vp).abs() <= var_tol, "{what}: variances {vs} vs {vp} ± {var_tol}");
    eprintln!(
        "{what}: chi2 {chi2:.2} / {df} df (critical {critical:.2}); mean diff {:.3e} (tol {mean_tol:.3e}); \
         var diff {:.3e} (tol {var_tol:.3e})",
        ms - mp,
        vs - vp
    );
}

fn quantile(p: f64) -> StatisticSpec {
    spec(json!({"name": "quantile", "p": p}))
}

#[test]
fn order_statistics_of_raw_rows_take_the_plain_paths_distribution() {
    let odd = column(latencies(301, 1));
    let even = column(latencies(300, 2));
    // Fewer rows than the 24 draws below which a range is drawn one by one instead of split.
    let tiny = column(latencies(20, 3));
    let cases = [
        ("median, 301 rows", &odd, stat("median"), Draws::Own),
        ("median, 300 rows (ties)", &even, stat("median"), Draws::Own),
        ("quantile 0.1, 301 rows", &odd, quantile(0.1), Draws::Own),
        ("quantile 0.9, 300 rows", &even, quantile(0.9), Draws::Own),
        ("quantile 0.9, 20 rows", &tiny, quantile(0.9), Draws::Shared),
        ("iqr, 301 rows", &odd, stat("iqr"), Draws::Own),
        ("iqr, 300 rows", &even, stat("iqr"), Draws::Own),
    ];
    for (k, (what, sample, stat, draws)) in cases.into_iter().enumerate() {
        let (s, p) = both(sample, &stat, B, 100 + k as u64);
        assert_same_distribution(what, draws, &s, &p);
    }
}

#[test]
fn order_statistics_of_aggregated_data_take_the_plain_paths_distribution() {
    let small = small_histogram();
    let huge = huge_histogram();
    // 20 observations: fewer than 24, so the shortcut draws them one by one, each unit by its
    // count (`unit_at`), where the plain path draws a multinomial by conditional binomials.
    let tiny = aggregated(vec![8., 1., 2., 3., 5.], vec![2, 3, 5, 4, 6]);
    let cases = [
        ("median, 20 in 5 values", &tiny, stat("median")),
        ("quantile 0.1, 20 in 5 values", &tiny, quantile(0.1)),
        ("median, 245 in 12 values", &small, stat("median")),
        ("quantile 0.1, 245 in 12 values", &small, quantile(0.1)),
        ("quantile 0.9, 245 in 12 values", &small, quantile(0.9)),
        ("iqr, 245 in 12 values", &small, stat("iqr")),
        ("median, 5e9 in 9 values", &huge, stat("median")),
        ("quantile 0.1, 5e9 in 9 values", &huge, quantile(0.1)),
        ("quantile 0.9, 5e9 in 9 values", &huge, quantile(0.9)),
        ("iqr, 5e9 in 9 values", &huge, stat("iqr")),
    ];
    for (k, (what, sample, stat)) in cases.into_iter().enumerate() {
        let (s, p) = both(sample, &stat, B, 200 + k as u64);
        assert_same_distribution(what, Draws::Own, &s, &p);
    }
}

#[test]
fn shares_take_the_plain_paths_distribution() {
    // Invented: 250 visits, 75 of them converting, in a scattered order.
    let visits = column((0..250).map(|i| f64::from((i * 37) % 100 < 30)).collect());
    let slow = spec(json!({"name": "exceedance", "threshold": 80}));
    let cases = [
        ("proportion, 250 rows", visits, stat("proportion"), Draws::Own),
        ("exceedance of 80 ms, 301 rows", column(latencies(301, 1)), slow.clone(), Draws::Own),
        ("exceedance of 80 ms, 245 in 12 values", small_histogram(), slow, Draws::Own),
        (
            "proportion, 5e9 in 2 values",
            aggregated(vec![1.0, 0.0], vec![1_999_999_983, 3_000_000_017]),
            stat("proportion"),
            Draws::Shared,
        ),
        (
            "exceedance of 2.5, 5e9 in 9 values",
            huge_histogram(),
            spec(json!({"name": "exceedance", "threshold": 2.5})),
            Draws::Own,
        ),
    ];
    for (k, (what, sample, stat, draws)) in cases.into_iter().enumerate() {
        let (s, p) = both(&sample, &stat, B, 300 + k as u64);
        assert_same_distribution(what, draws, &s, &p);
    }
}

#[test]
fn a_difference_of_medians_of_two_samples_takes_the_plain_paths_distribution() {
    // Each sample of a comparison takes its own shortcut from its own streams (sample 1 from
    // the candidate's key): the contrast of the two must keep the plain path's distribution.
    let two = Samples::Two {
        baseline: Resampled::iid(Sample::column(latencies(101, 8)).expect("a column")),
        candidate: Resampled::iid(Sample::aggregated(vec![40., 50., 60., 75., 90.], vec![20, 35, 25, 12, 9]).expect("aggregated")),
        contrast: bandsaw::engine::job::Contrast::Difference,
        paired: false,
    };
    let (s, p) = both(&two, &stat("median"), B, 500);
    assert_same_distribution("difference of medians, 101 rows and 101 in 5 values", Draws::Own, &s, &p);
}

/// The largest relative difference between two runs' replicates, one by one.
fn max_relative_difference(a: &[f64], b: &[f64]) -> f64 {
    assert_eq!(a.len(), b.len());
    a.iter().zip(b).map(|(x, y)| (x - y).abs() / y.abs()).fold(0.0, f64::max)
}

#[test]
fn the_mean_shortcut_sums_the_plain_paths_rows() {
    // Both paths draw the rows by `draw::rows` from the same words of the same stream (the
    // shortcut sums x over them, the plain path counts them into weights and takes Σwx/Σw), so
    // each replicate is the mean of the same multiset of rows and only rounding differs. The
    // plain path's sums of n positive terms are off by at most about n·u relative (u = 2⁻⁵³:
    // 4.4e-12 at n = 40 000) in the worst case and by about √n·u (2e-14) for rounding errors of
    // random sign; the shortcut sums values centred on the sample's median (a middle row),
    // whose terms are smaller than the values, so its error is smaller still against the mean. The bound asked for, 1e-12 relative, holds with these seeds
    // (measured below). What it tells apart: a single different row moves a replicate by about
    // σ/n, 2e-3 relative at n = 300 and 2e-5 at n = 40 000 (σ ≈ 43 ms, mean ≈ 65 ms here).
    // 40 000 rows are drawn chunk by chunk.
    for (n, b, studentized) in [(300, 4000, false), (300, 4000, true), (40_000, 300, false)] {
        let sample = column(latencies(n, 4));
        let mut j = job(sample, stat("mean"), b, 400, true);
        if studentized {
            j.methods.push(Method::Studentized);
        }
        let mut plain_job = j.clone();
        plain_job.shortcuts = false;
        let (short, plain) = (run(&j), run(&plain_job));
        let d = max_relative_difference(&replicates(&short), &replicates(&plain));
        eprintln!("mean of {n} rows (studentized {studentized}): largest relative difference {d:.2e}");
        assert!(d < 1e-12, "n = {n}: {d:e}");
        if studentized {
            // The analytic standard error σ̂*/√n of each resample: the shortcut from the raw
            // moments of values centred on the sample's median (Σd²/n − (Σd/n)², where the mean
            // of a resample's d is about x̄ − median, within σ̂ of 0 since any median is within
            // one SD of the mean, so the subtraction cancels at most about half of Σd²/n: a bit
            // at most), the plain path two-pass: both to a few n·ε, well within 1e-10.
            let se = |o: &Outcome| o.extras.replicate_standard_errors.clone().expect("studentized");
            let d = max_relative_difference(&se(&short), &se(&plain));
            eprintln!("mean of {n} rows: largest relative difference of the standard errors {d:.2e}");
            assert!(d < 1e-10, "n = {n}: {d:e}");
        }
    }
}

/// P(Binomial(n, q) ≤ m): the terms C(n, k) q^k (1 − q)^{n−k} summed, with C(n, k) built by
/// the recursion C(n, k + 1) = C(n, k)·(n − k)/(k + 1) (every product a whole number below
/// 2⁵³, so exact, for n ≤ 51) and powers by `powi` (0⁰ = 1, so q = 0 and q = 1 give 1 and
/// [m ≥ n]). Every term is positive, so the sum is accurate to a few units in the last place.
fn binomial_cdf(n: u64, q: f64, m: u64) -> f64 {
    let mut c = 1.0;
    let mut sum = 0.0;
    for k in 0..=m.min(n) {
        sum += c * q.powi(k as i32) * (1.0 - q).powi((n - k) as i32);
        c = c * (n - k) as f64 / (k + 1) as f64;
    }
    sum
}

/// The exact bootstrap distribution of the median of n = 2m + 1 distinct values x₍₁₎ < … <
/// x₍ₙ₎: P(median* = x₍ⱼ₎) for j = 1..=n.
///
/// Written from the definition in Maritz, J. S. & Jarrett, R. G. (1978), "A note on estimating
/// the variance of the sample median", JASA 73(361), 194–196, and re-derived here: the median of
/// a resample of n = 2m + 1 draws is its (m + 1)-th smallest draw (definition 7 at p = ½ has
/// h = m, a whole number, so no interpolation). It is at most x₍ⱼ₎ exactly when at least
/// m + 1 of the n draws are at most x₍ⱼ₎; each draw is, independently, with probability j/n.
/// So P(median* ≤ x₍ⱼ₎) = P(Binomial(n, j/n) ≥ m + 1), and differencing over j,
/// P(j) = Σ_{k=0}^{m} [C(n,k) ((j−1)/n)^k (1−(j−1)/n)^{n−k} − C(n,k) (j/n)^k (1−j/n)^{n−k}].
fn maritz_jarrett(n: u64) -> Vec<f64> {
    assert!(n % 2 == 1);
    let m = (n - 1) / 2;
    let at_most = |j: u64| binomial_cdf(n, j as f64 / n as f64, m);
    (1..=n).map(|j| at_most(j - 1) - at_most(j)).collect()
}

/// Classes of consecutive order statistics (index ranges into `p`): the tails merged until each
/// class expects at least `min_expected` of `b` replicates, every other value its own class.
fn tail_merged_classes(p: &[f64], b: f64, min_expected: f64) -> Vec<std::ops::Range<usize>> {
    let (mut lo, mut hi) = (0, p.len());
    let mut mass = 0.0;
    while lo < hi && (mass + p[lo]) * b < min_expected {
        mass += p[lo];
        lo += 1;
    }
    let first = 0..lo + 1;
    mass = 0.0;
    while hi > lo + 1 && (mass + p[hi - 1]) * b < min_expected {
        mass += p[hi - 1];
        hi -= 1;
    }
    let last = hi - 1..p.len();
    std::iter::once(first)
        .chain((lo + 1..hi - 1).map(|j| j..j + 1))
        .chain(std::iter::once(last))
        .collect()
}

/// The exact bootstrap distribution of the median of 15 and of 51 values, held against the
/// replicate frequencies of the shortcut and of the plain path, and its exact standard deviation
/// against the engine's standard error. At 15 rows (fewer than 24) the shortcut draws the rows
/// one by one as the plain path does, so the two give the same replicates; at 51 it splits the
/// sorted rows by binomial draws, so its replicates are its own.
#[test]
fn the_median_has_the_exact_bootstrap_distribution_of_maritz_and_jarrett() {
    for n in [15u64, 51] {
        let p = maritz_jarrett(n);
        // The formula checked against statrs' binomial distribution function (an independent
        // implementation, through the regularized incomplete beta) and for total mass 1.
        let statrs_at_most = |j: u64| {
            use statrs::distribution::{Binomial, DiscreteCDF};
            Binomial::new(j as f64 / n as f64, n).unwrap().cdf((n - 1) / 2)
        };
        for j in 1..=n {
            let want = statrs_at_most(j - 1) - statrs_at_most(j);
            let got = p[j as usize - 1];
            assert!((got - want).abs() < 1e-12, "n = {n}: P({j}) = {got} vs statrs {want}");
        }
        assert!((p.iter().sum::<f64>() - 1.0).abs() < 1e-13);
        // Invented, distinct, sent out of order (row i holds x₍₁ ₊ (7i mod n)₎; 7 is prime to
        // 15 and 51).
        let x: Vec<f64> = (1..=n).map(|j| 10.0 + (j as f64).powf(1.5)).collect();
        let sent: Vec<f64> = (0..n as usize).map(|i| x[(7 * i) % n as usize]).collect();
        let b = 40_000u64;
        let mut seen = Vec::new();
        for shortcuts in [true, false] {
            let o = run(&job(column(sent.clone()), stat("median"), b, 1978, shortcuts));
            let r = replicates(&o);
            let mut counts = vec![0.0; n as usize];
            for v in &r {
                let j = x
                    .iter()
                    .position(|xj| xj == v)
                    .expect("the median of an odd resample is a sample value");
                counts[j] += 1.0;
            }
            let what = format!("median of {n} (shortcuts {shortcuts})");
            check_frequencies(&what, &p, &counts, b as f64);
            check_standard_error(&what, &p, &x, &o);
            seen.push(r);
        }
        assert_eq!(
            seen[0] == seen[1],
            n <= 24,
            "n = {n}: the paths share their draws below 24 rows only"
        );
    }
}

/// Each class's share of the replicates within 4 binomial standard errors, √(P(1 − P)/B), of its
/// exact probability P. The tails are merged until a class expects at least 20 replicates: a
/// single value of probability 10⁻⁶ seen once in 40 000 draws would be 5 standard errors off.
fn check_frequencies(what: &str, p: &[f64], counts: &[f64], b: f64) {
    for class in tail_merged_classes(p, b, 20.0) {
        let want: f64 = p[class.clone()].iter().sum();
        let got = counts[class.clone()].iter().sum::<f64>() / b;
        let tol = 4.0 * (want * (1.0 - want) / b).sqrt();
        eprintln!(
            "{what}: x({}..={}) P = {want:.5}, observed {got:.5} (tol {tol:.5})",
            class.start + 1,
            class.end
        );
        assert!(
            (got - want).abs() <= tol,
            "{what}: x({}..={}): {got} vs {want} ± {tol}",
            class.start + 1,
            class.end
        );
    }
}

/// The exact bootstrap standard deviation σ = √(Σ P(j)(x₍ⱼ₎ − μ)²) against the reported standard
/// error (the replicates' sd). The sd of B draws has standard error σ·√((κ − 1)/(4B)) for large B
/// (delta method on the sample variance, whose variance is (κ − 1)σ⁴/B), κ the kurtosis of the
/// exact distribution, computed here from the same probabilities; tolerance 4 of them.
fn check_standard_error(what: &str, p: &[f64], x: &[f64], o: &Outcome) {
    let mu: f64 = p.iter().zip(x).map(|(pj, xj)| pj * xj).sum();
    let var: f64 = p.iter().zip(x).map(|(pj, xj)| pj * (xj - mu).powi(2)).sum();
    let kappa = p.iter().zip(x).map(|(pj, xj)| pj * (xj - mu).powi(4)).sum::<f64>() / (var * var);
    let sigma = var.sqrt();
    let tol = 4.0 * sigma * ((kappa - 1.0) / (4.0 * o.resamples as f64)).sqrt();
    eprintln!(
        "{what}: exact sd {sigma:.5} (kurtosis {kappa:.3}), reported {:.5} (tol {tol:.5})",
        o.standard_error
    );
    assert!(
        (o.standard_error - sigma).abs() <= tol,
        "{what}: {} vs {sigma} ± {tol}",
        o.standard_error
    );
}

fn on_threads<T: Send>(threads: usize, f: impl FnOnce() -> T + Send) -> T {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("a pool")
        .install(f)
}

fn bits(x: &[f64]) -> Vec<u64> {
    x.iter().map(|v| v.to_bits()).collect()
}

/// The replicate values and, where computed, their standard errors, as bits.
fn replicate_bits(o: &Outcome) -> (Vec<u64>, Option<Vec<u64>>) {
    (bits(&replicates(o)), o.extras.replicate_standard_errors.as_deref().map(bits))
}

/// The same bits for the first `k` replicates of `long` as for all of `short`.
fn assert_prefix(what: &str, short: &Outcome, long: &Outcome, k: usize) {
    let ((sv, ss), (lv, ls)) = (replicate_bits(short), replicate_bits(long));
    assert_eq!(sv.len(), k, "{what}");
    assert!(sv[..] == lv[..k], "{what}: replicates differ");
    if let (Some(ss), Some(ls)) = (ss, ls) {
        assert!(ss[..] == ls[..k], "{what}: replicate standard errors differ");
    }
}

/// Shortcut statistics that `properties.rs` does not already cover there: its thread, prefix and
/// partial tests run the median and the aggregated quantile with a studentized interval (which
/// sends them to the plain path), the mean with a studentized interval only (the sums with
/// squares), and compare intervals rather than replicates after a deadline. Here each job takes
/// its shortcut: the replicates (and their standard errors, for the studentized proportion) are
/// the same bits on one and on two threads, a run stopped after `cap` replicates (the executor's
/// test hook `Budget::replicate_cap`, with partial results allowed) is a prefix of the full run,
/// and a run of B is a prefix of a run of 2B.
#[test]
fn shortcut_replicates_are_the_same_on_any_threads_after_a_stop_and_in_a_longer_run() {
    let percentile_and_studentized = |mut j: Job| {
        j.methods.push(Method::Studentized);
        j
    };
    let b = 3000;
    let cases = [
        ("median, 301 rows", job(column(latencies(301, 5)), stat("median"), b, 51, true)),
        ("iqr, 245 in 12 values", job(small_histogram(), stat("iqr"), b, 52, true)),
        ("quantile 0.9, 5e9 in 9 values", job(huge_histogram(), quantile(0.9), b, 53, true)),
        (
            "proportion, studentized",
            percentile_and_studentized(job(
                column((0..250).map(|i| f64::from(i % 7 < 2)).collect()),
                stat("proportion"),
                b,
                54,
                true,
            )),
        ),
        ("mean, 300 rows", job(column(latencies(300, 6)), stat("mean"), b, 55, true)),
        (
            "mean, 20 000 rows in two chunks",
            job(column(latencies(20_000, 7)), stat("mean"), 200, 56, true),
        ),
    ];
    for (what, j) in cases {
        let b = match j.resamples {
            Resamples::Fixed(b) => b,
            _ => unreachable!("fixed"),
        };
        let one = on_threads(1, || run(&j));
        let two = on_threads(2, || run(&j));
        assert_prefix(&format!("{what}: one and two threads"), &one, &two, b as usize);
        let cap = b / 3 + 7;
        let mut stopped = j.clone();
        stopped.on_time_limit = OnTimeLimit::Partial;
        let budget = Budget {
            replicate_cap: Some(cap),
            ..Budget::default()
        };
        let partial = on_threads(2, || try_run_within(&stopped, &budget)).expect("a partial result");
        assert!(
            !partial.complete && partial.resamples == cap,
            "{what}: {} resamples",
            partial.resamples
        );
        assert_prefix(&format!("{what}: stopped after {cap}"), &partial, &one, cap as usize);
        let mut longer = j.clone();
        longer.resamples = Resamples::Fixed(2 * b);
        let long = on_threads(2, || run(&longer));
        assert_prefix(&format!("{what}: B and 2B"), &one, &long, b as usize);
    }
}

#[test]
fn the_mean_of_40_000_rows_drawn_chunk_by_chunk_has_the_plug_in_standard_error() {
    // 40 000 rows are drawn in three chunks (16 384, 16 384, 7 232). The rows are the sorted
    // values, so the chunks hold the low, middle and high values: a wrong split of the draws
    // between chunks (the multinomial over chunks) would move the spread of the mean a lot.
    let x = latencies(40_000, 40);
    assert!(x.len() > 2 * CHUNK_ROWS);
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    let var = x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / n;
    let kurtosis_x = x.iter().map(|v| (v - m).powi(4)).sum::<f64>() / n / (var * var);
    // The iid bootstrap of the mean has Var* = σ̂²/n exactly, σ̂² the divide-by-n variance
    // (Efron & Tibshirani (1993), eq. 5.4 and ch. 12, as in `reference.rs`).
    let want = (var / n).sqrt();
    let b = 10_000u64;
    let o = run(&job(column(x), stat("mean"), b, 4, true));
    // The replicates' kurtosis is exactly 3 + (κₓ − 3)/n (cumulants of a sum of n iid draws
    // add, so the excess kurtosis of their mean is the data's over n): 3.0002 here. The sd of
    // B replicates has standard error σ·√((κ − 1)/(4B)) (delta method), ≈ 0.71 % of σ at
    // B = 10 000; tolerance 4 of them, 2.8 %.
    let kappa = 3.0 + (kurtosis_x - 3.0) / n;
    let tol = 4.0 * want * ((kappa - 1.0) / (4.0 * b as f64)).sqrt();
    eprintln!(
        "mean of 40 000 rows: plug-in σ̂/√n {want:.5}, reported {:.5} (tol {tol:.5}, κ {kappa:.5})",
        o.standard_error
    );
    assert!((o.standard_error - want).abs() <= tol, "{} vs {want} ± {tol}", o.standard_error);
}
