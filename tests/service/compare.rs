//! `POST /v1/compare` and the compare jobs of a batch: the contrast of a statistic between a
//! baseline and a candidate against an outside value, each verdict and what its decision was
//! read from, the floor of too few runs, exact enumeration by default, paired runs, tokens,
//! validation, and a batch's comparisons as a family under Bonferroni and Holm.

use serde_json::{json, Value};

use crate::common::{invalid, message_at, ok, pointers, problem, rule_at, without_timing, TestApp};

// ---------------------------------------------------------------------------------------------
// Invented benchmark timings (ms), eight runs a side
// ---------------------------------------------------------------------------------------------

const BASELINE: [f64; 8] = [100.2, 101.5, 99.8, 100.9, 100.4, 101.1, 99.6, 100.7];
/// About 4.7 % slower than the baseline, with the same small noise.
const SLOWER: [f64; 8] = [105.1, 106.0, 104.2, 105.8, 104.9, 106.3, 105.0, 104.6];
/// About 5.3 % faster.
const FASTER: [f64; 8] = [95.1, 96.0, 94.2, 95.8, 94.9, 96.3, 95.0, 94.6];
/// The same speed, within a fraction of a percent.
const SAME: [f64; 8] = [100.5, 101.2, 100.1, 100.8, 99.9, 101.0, 100.3, 100.6];
/// The same speed on average but with a few percent of noise per run.
const NOISY: [f64; 8] = [97.0, 104.8, 99.1, 103.5, 96.2, 105.9, 98.4, 102.7];

/// The band of a 2 % tolerance on a ratio as the verdict's reason writes it.
const BAND_2_PERCENT: &str = "the tolerance band [0.9804, 1.02]";

// ---------------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------------

async fn compare(app: &TestApp, body: Value) -> (u16, String, Value) {
    app.post("/v1/compare", &body).await
}

fn num(v: &Value, pointer: &str) -> f64 {
    v.pointer(pointer)
        .and_then(Value::as_f64)
        .unwrap_or_else(|| panic!("no number at {pointer:?} in {v}"))
}

fn warning_codes(v: &Value) -> Vec<String> {
    v["contrast"]["diagnostics"]["warnings"]
        .as_array()
        .map(|a| a.iter().map(|w| w["code"].as_str().unwrap_or("").to_string()).collect())
        .unwrap_or_default()
}

/// A comparison without its timing (`contrast.elapsed_ms`, and `elapsed_ms` were there one),
/// the only fields that may differ between identical computations.
fn without_timings(v: Value) -> Value {
    let mut v = without_timing(v);
    if let Some(contrast) = v.get_mut("contrast") {
        *contrast = without_timing(contrast.take());
    }
    v
}

/// Every `*_mc_error` anywhere in `v`, with its pointer.
fn mc_errors(v: &Value, at: &str, out: &mut Vec<(String, f64)>) {
    match v {
        Value::Object(o) => {
            for (k, it) in o {
                let here = format!("{at}/{k}");
                match it.as_f64() {
                    Some(x) if k.ends_with("_mc_error") => out.push((here, x)),
                    _ => mc_errors(it, &here, out),
                }
            }
        }
        Value::Array(items) => {
            for (i, it) in items.iter().enumerate() {
                mc_errors(it, &format!("{at}/{i}"), out);
            }
        }
        _ => {}
    }
}

/// The plug-in variance (divisor n).
fn plugin_var(x: &[f64]) -> f64 {
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    x.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / n
}

/// 2 / C(n₁ + n₂, n₁): the smallest two-sided p-value of any arrangement of two samples.
fn unpaired_floor(n1: u64, n2: u64) -> f64 {
    let c = (0..n1).fold(1.0, |c, i| c * (n1 + n2 - i) as f64 / (i + 1) as f64);
    2.0 / c
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * b.abs().max(1.0)
}

/// What a comparison read on its own promises of its decision: it names the first method's
/// interval at the first level, its band is the tolerance's, its interval lies where its verdict
/// says, a change is claimed exactly when the p-value is within 1 − level, and its floor is that
/// of its runs.
fn check_decision(v: &Value, floor: f64) {
    let d = &v["decision"];
    let first = &v["contrast"]["intervals"][0];
    assert_eq!(
        (&d["method"], &d["level"], &d["lower"], &d["upper"]),
        (&first["method"], &first["level"], &first["lower"], &first["upper"]),
        "the decision is the first method's interval at the first level: {v}"
    );
    let t = num(v, "/comparison/tolerance");
    let band = match v["comparison"]["contrast"].as_str() {
        Some("difference") => (-t, t),
        _ => (1.0 / (1.0 + t), 1.0 + t),
    };
    assert!(
        close(num(d, "/tolerance_band/0"), band.0) && close(num(d, "/tolerance_band/1"), band.1),
        "{v}"
    );
    let (lower, upper, level, p) = (num(d, "/lower"), num(d, "/upper"), num(d, "/level"), num(d, "/p_value"));
    let (worse_above, better_above) = match v["comparison"]["better"].as_str() {
        Some("lower") => (lower > band.1, upper < band.0),
        _ => (upper < band.0, lower > band.1),
    };
    let too_few = floor > 1.0 - level;
    match v["verdict"].as_str().unwrap() {
        "regression" => assert!(worse_above && !too_few, "{v}"),
        "improvement" => assert!(better_above && !too_few, "{v}"),
        "equivalent" => assert!(band.0 <= lower && upper <= band.1 && !too_few, "{v}"),
        "inconclusive" => assert!(
            too_few || (lower <= band.1 && upper >= band.0 && (lower < band.0 || upper > band.1)),
            "{v}"
        ),
        other => panic!("unknown verdict {other}: {v}"),
    }
    let change = matches!(v["verdict"].as_str(), Some("regression" | "improvement"));
    assert_eq!(p <= 1.0 - level, change, "a change is claimed exactly when p ≤ 1 − level: {v}");
    assert!(p >= num(d, "/floor"), "the p-value never falls below the floor: {v}");
    assert!(
        close(num(d, "/floor"), floor),
        "floor {} for these runs, want {floor}: {v}",
        d["floor"]
    );
}

/// A comparison of eight runs a side: a ratio of means, 2 % tolerance, a fixed seed.
fn timings(candidate: &[f64]) -> Value {
    json!({"baseline": BASELINE, "candidate": candidate, "tolerance": 0.02, "seed": 11})
}

fn with(mut body: Value, key: &str, value: Value) -> Value {
    body[key] = value;
    body
}

// ---------------------------------------------------------------------------------------------
// An outside value
// ---------------------------------------------------------------------------------------------

/// Mouse survival times (days), Efron & Tibshirani (1993), Table 2.1.
const MOUSE_TREATMENT: [f64; 7] = [94., 197., 16., 38., 99., 141., 23.];
const MOUSE_CONTROL: [f64; 9] = [52., 104., 146., 10., 51., 30., 40., 27., 46.];

#[tokio::test]
async fn mouse_data_difference_of_means_has_the_exact_bootstrap_standard_error() {
    // The exact bootstrap standard error of a difference of independent means is
    // √(σ̂₁²/n₁ + σ̂₂²/n₂) with plug-in variances: 26.908 (Efron & Tibshirani 1993, ch. 2).
    let want = (plugin_var(&MOUSE_TREATMENT) / 7.0 + plugin_var(&MOUSE_CONTROL) / 9.0).sqrt();
    assert!((want - 26.908).abs() < 5e-4, "{want}");
    let app = TestApp::spawn().await;
    let v = ok(compare(
        &app,
        json!({"baseline": MOUSE_CONTROL, "candidate": MOUSE_TREATMENT, "contrast": "difference",
               "statistic": "mean", "seed": 7, "resamples": 40000}),
    )
    .await);
    assert!(close(num(&v, "/baseline_estimate"), 506.0 / 9.0), "{v}");
    assert!(close(num(&v, "/candidate_estimate"), 608.0 / 7.0), "{v}");
    assert_eq!(
        (&v["baseline_n"], &v["candidate_n"], &v["contrast"]["n"]),
        (&json!(9), &json!(7), &json!(16))
    );
    assert!((num(&v, "/contrast/estimate") - 30.6349).abs() < 1e-3, "86.857 − 56.222: {v}");
    assert_eq!(v["contrast"]["resamples"], 40000);
    // The Monte Carlo error of a bootstrap standard error from B resamples is about
    // se·√(1/(2B)) (0.35 % here, 0.09 days), reported beside it; 4 of them keep a fresh seed's
    // chance of a false failure below 1e-4.
    let (se, mc) = (num(&v, "/contrast/standard_error"), num(&v, "/contrast/standard_error_mc_error"));
    assert!(mc > 0.0 && mc < 0.01 * want, "{mc}");
    assert!((se - want).abs() < 4.0 * mc, "{se} vs {want} ± 4·{mc}");
    // No tolerance and an interval about zero: nothing is claimed, and no run count is guessed.
    assert_eq!(v["verdict"], "inconclusive", "{v}");
    assert!(v["decision"].get("runs_needed").is_none(), "{v}");
    check_decision(&v, unpaired_floor(9, 7));
}

// ---------------------------------------------------------------------------------------------
// Verdicts
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn each_verdict_is_read_from_the_first_interval_against_the_tolerance_band() {
    let app = TestApp::spawn().await;
    let floor = unpaired_floor(8, 8);
    for (candidate, verdict, words) in [
        (SLOWER, "regression", "on the worse side (lower is better)"),
        (FASTER, "improvement", "on the better side (lower is better)"),
        (SAME, "equivalent", "lies wholly inside"),
        (NOISY, "inconclusive", "overlaps"),
    ] {
        let v = ok(compare(&app, timings(&candidate)).await);
        assert_eq!(v["verdict"], verdict, "{v}");
        let reason = v["verdict_reason"].as_str().unwrap();
        for part in ["95% studentized interval", BAND_2_PERCENT, words] {
            assert!(reason.contains(part), "{verdict}: the reason names {part:?}: {reason}");
        }
        check_decision(&v, floor);
        assert_eq!(
            v["comparison"],
            json!({"contrast": "ratio", "paired": false, "better": "lower", "tolerance": 0.02})
        );
        assert_eq!(
            (&v["baseline_n"], &v["candidate_n"], &v["contrast"]["n"]),
            (&json!(8), &json!(8), &json!(16))
        );
    }
}

#[tokio::test]
async fn better_higher_swaps_regression_and_improvement_on_the_same_data() {
    let app = TestApp::spawn().await;
    for (candidate, lower_is_better, higher_is_better) in [(SLOWER, "regression", "improvement"), (FASTER, "improvement", "regression")] {
        let lower = ok(compare(&app, timings(&candidate)).await);
        let higher = ok(compare(&app, with(timings(&candidate), "better", json!("higher"))).await);
        assert_eq!(lower["verdict"], lower_is_better, "{lower}");
        assert_eq!(higher["verdict"], higher_is_better, "{higher}");
        assert!(
            higher["verdict_reason"].as_str().unwrap().contains("(higher is better)"),
            "{higher}"
        );
        assert_eq!(higher["comparison"]["better"], "higher");
        check_decision(&higher, unpaired_floor(8, 8));
        // Only the reading changes: the contrast and its intervals are the same numbers.
        assert_eq!(lower["contrast"]["intervals"], higher["contrast"]["intervals"]);
        assert_eq!(lower["decision"]["p_value"], higher["decision"]["p_value"]);
    }
}

#[tokio::test]
async fn a_difference_reads_its_tolerance_in_data_units() {
    let app = TestApp::spawn().await;
    let body =
        |tolerance: f64| json!({"baseline": BASELINE, "candidate": SLOWER, "contrast": "difference", "tolerance": tolerance, "seed": 11});
    // The candidate is 4.71 ms slower, its 95 % interval about [4.1, 5.35] ms.
    let v = ok(compare(&app, body(2.5)).await);
    assert!(close(num(&v, "/contrast/estimate"), 105.2375 - 100.525), "{v}");
    assert_eq!(v["verdict"], "regression", "{v}");
    assert_eq!(v["decision"]["tolerance_band"], json!([-2.5, 2.5]));
    assert!(
        v["verdict_reason"].as_str().unwrap().contains("the tolerance band [-2.5, 2.5]"),
        "{v}"
    );
    assert!(v["verdict_reason"].as_str().unwrap().contains("minus the baseline's"), "{v}");
    check_decision(&v, unpaired_floor(8, 8));
    // Six milliseconds of tolerance take the whole interval in: the same runs are equivalent.
    let v = ok(compare(&app, body(6.0)).await);
    assert_eq!(v["verdict"], "equivalent", "{v}");
    assert!(v["verdict_reason"].as_str().unwrap().contains("the tolerance band [-6, 6]"), "{v}");
    check_decision(&v, unpaired_floor(8, 8));
}

#[tokio::test]
async fn the_verdict_is_read_from_the_first_method_at_the_first_level() {
    let app = TestApp::spawn().await;
    let body = with(
        with(timings(&SLOWER), "methods", json!(["bca", "percentile"])),
        "levels",
        json!([0.9, 0.99]),
    );
    let v = ok(compare(&app, body).await);
    assert_eq!(
        (&v["decision"]["method"], &v["decision"]["level"]),
        (&json!("bca"), &json!(0.9)),
        "{v}"
    );
    assert_eq!(
        v["contrast"]["intervals"].as_array().unwrap().len(),
        4,
        "two methods at two levels: {v}"
    );
    assert!(v["verdict_reason"].as_str().unwrap().contains("its 90% bca interval"), "{v}");
    check_decision(&v, unpaired_floor(8, 8));
}

#[tokio::test]
async fn without_methods_the_verdict_is_studentized_where_the_contrast_has_an_analytic_error() {
    let app = TestApp::spawn().await;
    let methods = |v: &Value| -> Vec<Value> {
        v["contrast"]["intervals"]
            .as_array()
            .unwrap()
            .iter()
            .map(|i| i["method"].clone())
            .collect()
    };
    // The mean's standard error is analytic, so is a ratio's or a difference's of two
    // independent means (the delta method): studentized first, at no nested bootstrap.
    let means = ok(compare(&app, timings(&SLOWER)).await);
    assert_eq!(
        methods(&means),
        [json!("studentized"), json!("percentile"), json!("bca")],
        "{means}"
    );
    assert_eq!(means["decision"]["method"], "studentized");
    assert_eq!(means["contrast"]["diagnostics"]["studentized_standard_error"], "analytic");
    // The median has none, and paired runs neither (the pairs' contrast has no closed form):
    // the interval defaults.
    for body in [
        with(timings(&SLOWER), "statistic", json!("median")),
        with(timings(&SLOWER), "paired", json!(true)),
    ] {
        let v = ok(compare(&app, body).await);
        assert_eq!(methods(&v), [json!("percentile"), json!("bca")], "{v}");
    }
    // Named methods are kept as named.
    let named = ok(compare(&app, with(timings(&SLOWER), "methods", json!(["percentile"]))).await);
    assert_eq!(methods(&named), [json!("percentile")]);
}

#[tokio::test]
async fn inconclusive_with_a_tolerance_estimates_the_runs_needed() {
    let app = TestApp::spawn().await;
    let v = ok(compare(&app, timings(&NOISY)).await);
    assert_eq!(v["verdict"], "inconclusive", "{v}");
    let needed = v["decision"]["runs_needed"].as_u64().unwrap_or_else(|| panic!("runs_needed: {v}"));
    assert!(needed > 8, "more runs than the eight of each side: {v}");
    let reason = v["verdict_reason"].as_str().unwrap();
    assert!(reason.contains(&format!("About {needed} runs per side")), "{reason}");
    // The count is the least n′ at which the normal half-width z·ŝe·√(n/n′), the standard error
    // shrinking like 1/√n from the n = 8 runs a side now, is within the 2 % tolerance.
    let (z, se) = (1.959_963_984_540_054, num(&v, "/contrast/standard_error"));
    let half = |runs: u64| z * se * (8.0 / runs as f64).sqrt();
    assert!(
        half(needed) <= 0.02 && half(needed - 1) > 0.02,
        "{needed}: {} / {}",
        half(needed),
        half(needed - 1)
    );
    check_decision(&v, unpaired_floor(8, 8));
    // A verdict that is reached needs no more runs.
    let v = ok(compare(&app, timings(&SAME)).await);
    assert_eq!(v["verdict"], "equivalent", "{v}");
    assert!(v["decision"].get("runs_needed").is_none(), "{v}");
}

// ---------------------------------------------------------------------------------------------
// Too few runs, and how many resamples by default
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn too_few_runs_are_inconclusive_however_large_the_shift() {
    let app = TestApp::spawn().await;
    // Three runs a side, 50 % slower with no overlap at all: still at most 2 / C(6, 3) = 0.1.
    let v = ok(compare(
        &app,
        json!({"baseline": [20.1, 20.4, 19.8], "candidate": [30.2, 29.7, 30.5], "seed": 5}),
    )
    .await);
    assert_eq!(v["verdict"], "inconclusive", "{v}");
    assert!(warning_codes(&v).contains(&"too_few_runs".to_string()), "{v}");
    assert_eq!(v["decision"]["floor"], 0.1);
    assert_eq!(v["decision"]["p_value"], 0.1, "never below the floor: {v}");
    assert!(
        v["verdict_reason"]
            .as_str()
            .unwrap()
            .contains("with 3 baseline and 3 candidate runs"),
        "{v}"
    );
    // Four a side reach 2 / C(8, 4) = 0.029 ≤ 0.05: the runs needed, said in the reason.
    assert_eq!(v["decision"]["runs_needed"], 4, "{v}");
    assert!(
        v["verdict_reason"]
            .as_str()
            .unwrap()
            .contains("About 4 runs per side would decide."),
        "{v}"
    );
    check_decision(&v, 0.1);
    // Five runs a side reach 2 / C(10, 5) = 0.0079, and the same shift is a regression.
    let five = json!({"baseline": [20.1, 20.4, 19.8, 20.0, 20.3], "candidate": [30.2, 29.7, 30.5, 30.0, 29.9], "seed": 5});
    let v = ok(compare(&app, five.clone()).await);
    assert_eq!(v["verdict"], "regression", "{v}");
    assert!(!warning_codes(&v).contains(&"too_few_runs".to_string()), "{v}");
    check_decision(&v, 2.0 / 252.0);
    // Five pairs reach only 2·2⁻⁵ = 0.0625; six pairs 0.03125.
    let v = ok(compare(&app, with(five, "paired", json!(true))).await);
    assert_eq!(v["verdict"], "inconclusive", "{v}");
    assert_eq!(v["decision"]["runs_needed"], 6, "{v}");
    assert!(v["verdict_reason"].as_str().unwrap().contains("with 5 pairs"), "{v}");
    assert!(warning_codes(&v).contains(&"too_few_runs".to_string()), "{v}");
    check_decision(&v, 0.0625);
    let six = json!({"baseline": [20.1, 20.4, 19.8, 20.0, 20.3, 20.6], "candidate": [30.2, 29.7, 30.5, 30.0, 29.9, 30.4],
                     "paired": true, "seed": 5});
    let v = ok(compare(&app, six).await);
    assert_eq!(v["verdict"], "regression", "{v}");
    check_decision(&v, 0.03125);
}

#[tokio::test]
async fn without_resamples_small_comparisons_are_enumerated_exactly() {
    let app = TestApp::spawn().await;
    let runs = |n: usize| BASELINE.iter().chain(&SAME).take(n).copied().collect::<Vec<_>>();
    let slower = |n: usize| SLOWER.iter().chain(&FASTER).take(n).copied().collect::<Vec<_>>();
    let resamples = |v: &Value| v["contrast"]["resamples"].as_u64().unwrap();
    // Five distinct runs a side: C(9, 5) = 126 distinct resamples each, 126² in all.
    let v = ok(compare(&app, json!({"baseline": runs(5), "candidate": slower(5), "seed": 3})).await);
    assert_eq!(resamples(&v), 126 * 126, "{v}");
    let mut errors = Vec::new();
    mc_errors(&v["contrast"], "/contrast", &mut errors);
    assert!(
        errors.len() >= 6,
        "the standard error's, the bias's and each endpoint's: {errors:?}"
    );
    assert!(
        errors.iter().all(|(_, e)| *e == 0.0),
        "an enumeration has no Monte Carlo error: {errors:?}"
    );
    // Six against five: 462·126 = 58 212, within 100 000; six against six (462²) is not.
    let v = ok(compare(&app, json!({"baseline": runs(6), "candidate": slower(5), "seed": 3})).await);
    assert_eq!(resamples(&v), 462 * 126, "{v}");
    let v = ok(compare(&app, json!({"baseline": runs(6), "candidate": slower(6), "seed": 3})).await);
    assert_eq!(resamples(&v), 2000, "{v}");
    let v = ok(compare(&app, json!({"baseline": runs(12), "candidate": slower(12), "seed": 3})).await);
    assert_eq!(resamples(&v), 2000, "{v}");
    assert!(num(&v, "/contrast/standard_error_mc_error") > 0.0, "drawn, not enumerated: {v}");
    // Ten pairs: C(19, 10) = 92 378 distinct resamples of the pairs; eleven: 352 716, drawn.
    let v = ok(compare(
        &app,
        json!({"baseline": runs(10), "candidate": slower(10), "paired": true, "seed": 3}),
    )
    .await);
    assert_eq!(resamples(&v), 92_378, "{v}");
    let v = ok(compare(
        &app,
        json!({"baseline": runs(11), "candidate": slower(11), "paired": true, "seed": 3}),
    )
    .await);
    assert_eq!(resamples(&v), 2000, "{v}");
    // Asked for a number, or for a scheme that cannot be enumerated, the runs are drawn.
    let v = ok(compare(
        &app,
        json!({"baseline": runs(5), "candidate": slower(5), "resamples": 3000, "seed": 3}),
    )
    .await);
    assert_eq!(resamples(&v), 3000, "{v}");
    assert!(num(&v, "/contrast/standard_error_mc_error") > 0.0, "{v}");
    let bayesian = json!({"baseline": runs(5), "candidate": slower(5), "scheme": {"kind": "bayesian"}, "seed": 3});
    assert_eq!(resamples(&ok(compare(&app, bayesian).await)), 2000);
}

// ---------------------------------------------------------------------------------------------
// Paired runs
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn the_data_problems_of_both_samples_are_reported_at_once() {
    let app = TestApp::spawn().await;
    let v = invalid(
        compare(
            &app,
            json!({"baseline": [0, 1, 2, 1], "candidate": [0, 3, 1, 1], "statistic": "proportion"}),
        )
        .await,
        &["/baseline/2", "/candidate/1"],
    );
    for at in ["/baseline/2", "/candidate/1"] {
        assert_eq!(rule_at(&v, at).as_deref(), Some("statistic_domain"), "{v}");
    }
}

#[tokio::test]
async fn paired_runs_are_one_column_of_the_same_length_on_each_side() {
    let app = TestApp::spawn().await;
    let v = invalid(
        compare(
            &app,
            json!({"baseline": [20.1, 20.4, 19.8, 20.5], "candidate": [30.2, 29.7, 30.5], "paired": true}),
        )
        .await,
        &["/candidate"],
    );
    assert_eq!(rule_at(&v, "/candidate").as_deref(), Some("paired_rows"), "{v}");
    assert!(
        message_at(&v, "/candidate").contains("the baseline has 4 rows (or distinct values) and the candidate 3"),
        "{v}"
    );
    // Aggregated runs have no rows to pair: the refusal points at the aggregated sample.
    let agg = json!({"values": [1, 2, 3], "counts": [2, 2, 2]});
    let rows = json!([1, 1, 2, 2, 3, 3]);
    for (baseline, candidate, at) in [(&agg, &agg, "/baseline"), (&agg, &rows, "/baseline"), (&rows, &agg, "/candidate")] {
        let v = invalid(
            compare(&app, json!({"baseline": baseline, "candidate": candidate, "paired": true})).await,
            &[at],
        );
        assert_eq!(rule_at(&v, at).as_deref(), Some("paired_rows"), "{v}");
    }
    // The same runs unpaired are fine.
    ok(compare(
        &app,
        json!({"baseline": [20.1, 20.4, 19.8, 20.5], "candidate": [30.2, 29.7, 30.5], "seed": 1}),
    )
    .await);
    // Six pairs, each candidate run 0.4 to 0.9 ms above its baseline run: a regression, the
    // pairs enumerated (C(11, 6) = 462) and the floor the sign test's 2·2⁻⁶.
    let v = ok(compare(
        &app,
        json!({"baseline": [20.1, 20.4, 19.8, 20.0, 20.3, 20.6], "candidate": [20.9, 21.1, 20.5, 20.8, 21.2, 21.3],
               "paired": true, "seed": 5}),
    )
    .await);
    assert_eq!(v["comparison"]["paired"], true, "{v}");
    assert_eq!(v["verdict"], "regression", "{v}");
    assert_eq!(v["contrast"]["resamples"], 462);
    assert_eq!((&v["baseline_n"], &v["candidate_n"]), (&json!(6), &json!(6)));
    check_decision(&v, 0.03125);
}

// ---------------------------------------------------------------------------------------------
// Tokens
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn a_comparison_token_replays_it_on_the_same_runs_only() {
    let app = TestApp::spawn().await;
    for body in [
        json!({"baseline": BASELINE, "candidate": SLOWER, "contrast": "difference", "better": "higher", "tolerance": 0.02, "seed": 11}),
        // Enumerated by default: the token records the enumeration.
        json!({"baseline": &BASELINE[..5], "candidate": &SLOWER[..5], "paired": true, "seed": 4}),
    ] {
        let first = ok(compare(&app, body.clone()).await);
        let token = first["contrast"]["token"].as_str().expect("a token").to_string();
        let replay = json!({"baseline": body["baseline"], "candidate": body["candidate"], "token": token});
        let again = ok(compare(&app, replay.clone()).await);
        assert_eq!(
            without_timings(again),
            without_timings(first.clone()),
            "a replay is identical but for timing"
        );
        // `time_limit_ms` governs only this run, so it may come beside a token.
        let timed = ok(compare(&app, with(replay, "time_limit_ms", json!(5000))).await);
        assert_eq!(without_timings(timed), without_timings(first));
        // Other candidate runs, or the two sides swapped, are other data.
        let mut other = body["candidate"].clone();
        other[0] = json!(1.0);
        let swapped = json!({"baseline": body["candidate"], "candidate": body["baseline"], "token": token});
        problem(
            compare(&app, json!({"baseline": body["baseline"], "candidate": other, "token": token})).await,
            409,
            "data-mismatch",
        );
        problem(compare(&app, swapped).await, 409, "data-mismatch");
    }
}

#[tokio::test]
async fn a_token_stands_in_for_what_is_compared_and_belongs_to_its_route() {
    let app = TestApp::spawn().await;
    let first = ok(compare(&app, timings(&SLOWER)).await);
    let token = first["contrast"]["token"].clone();
    let replay = json!({"baseline": BASELINE, "candidate": SLOWER, "token": token});
    // The token records the contrast, pairing, direction and tolerance (docs/api.md: beside any
    // parameter it records a token is refused), each refused at its own pointer.
    for (field, value) in [
        ("contrast", json!("ratio")),
        ("paired", json!(false)),
        ("better", json!("lower")),
        ("tolerance", json!(0.02)),
    ] {
        let pointer = format!("/{field}");
        let v = invalid(compare(&app, with(replay.clone(), field, value)).await, &[&pointer]);
        assert_eq!(rule_at(&v, &pointer).as_deref(), Some("token_replaces_parameters"), "{v}");
    }
    let all = json!({"baseline": BASELINE, "candidate": SLOWER, "token": token, "contrast": "difference", "better": "higher", "seed": 1});
    invalid(compare(&app, all).await, &["/contrast", "/better", "/seed"]);
    // A comparison's token is not an interval's, nor the other way round.
    let v = invalid(
        app.post("/v1/interval", &json!({"data": BASELINE, "token": token})).await,
        &["/token"],
    );
    assert_eq!(rule_at(&v, "/token").as_deref(), Some("token_valid"), "{v}");
    let interval = ok(app.post("/v1/interval", &json!({"data": BASELINE, "seed": 1})).await);
    let v = invalid(
        compare(&app, json!({"baseline": BASELINE, "candidate": SLOWER, "token": interval["token"]})).await,
        &["/token"],
    );
    assert_eq!(rule_at(&v, "/token").as_deref(), Some("token_valid"), "{v}");
}

// ---------------------------------------------------------------------------------------------
// Validation
// ---------------------------------------------------------------------------------------------

#[tokio::test]
async fn every_invalid_field_of_a_comparison_is_reported_at_its_pointer() {
    let app = TestApp::spawn().await;
    let good = json!({"baseline": BASELINE, "candidate": SLOWER});
    let v = invalid(compare(&app, json!({})).await, &["/baseline", "/candidate"]);
    assert!(message_at(&v, "/baseline").contains("required"), "{v}");
    invalid(
        compare(&app, json!({"baseline": [1.0, 2.0, 3.0, "NaN"], "candidate": SLOWER})).await,
        &["/baseline/3"],
    );
    invalid(
        compare(&app, json!({"baseline": [1.0, 2.0, 3.0, "x"], "candidate": SLOWER})).await,
        &["/baseline/3"],
    );
    let bare = br#"{"baseline": [1, 2, 3, NaN], "candidate": [1, 2, Infinity]}"#.to_vec();
    invalid(
        app.post_raw("/v1/compare", "application/json", bare).await,
        &["/baseline/3", "/candidate/2"],
    );
    for (field, value) in [
        ("candidate", json!(5)),
        ("contrast", json!("quotient")),
        ("paired", json!("yes")),
        ("better", json!("faster")),
        ("tolerance", json!(-0.1)),
        ("statistic", json!("mode")),
        ("threshold", json!(1)),
        ("data", json!(BASELINE)),
    ] {
        let v = invalid(compare(&app, with(good.clone(), field, value)).await, &[&format!("/{field}")]);
        assert_eq!(rule_at(&v, &format!("/{field}")), None, "the schema refuses {field}: {v}");
    }
    invalid(compare(&app, with(good.clone(), "levels", json!([95]))).await, &["/levels/0"]);
    invalid(
        compare(&app, with(good.clone(), "methods", json!(["bootstrap"]))).await,
        &["/methods/0"],
    );
    // Every one at once.
    let all = json!({"baseline": [1, "x"], "candidate": "fast", "contrast": "quotient", "better": "faster", "tolerance": -1});
    invalid(
        compare(&app, all).await,
        &["/baseline/1", "/candidate", "/contrast", "/better", "/tolerance"],
    );
}

#[tokio::test]
async fn a_bad_compare_job_of_a_batch_points_under_its_index() {
    let app = TestApp::spawn().await;
    let body = json!({"jobs": [
        {"kind": "compare", "baseline": BASELINE, "candidate": SLOWER, "seed": 1},
        {"kind": "compare", "baseline": BASELINE, "candidate": SLOWER, "tolerance": -1, "better": "x", "paired": 1},
        {"kind": "compare", "baseline": [1, 2, 3], "candidate": [1, 2], "paired": true},
        {"kind": "compare", "candidate": SLOWER, "levels": [95]}
    ]});
    let (s, _, v) = app.post("/v1/batch", &body).await;
    assert_eq!(s, 200, "{v}");
    let r = v["results"].as_array().unwrap();
    assert_eq!(r[0]["ok"]["verdict"], "regression", "{}", r[0]);
    let sorted = |mut p: Vec<String>| {
        p.sort();
        p
    };
    assert_eq!(
        sorted(pointers(&r[1]["error"])),
        ["/jobs/1/better", "/jobs/1/paired", "/jobs/1/tolerance"]
    );
    assert_eq!(pointers(&r[2]["error"]), ["/jobs/2/candidate"]);
    assert_eq!(rule_at(&r[2]["error"], "/jobs/2/candidate").as_deref(), Some("paired_rows"));
    assert_eq!(sorted(pointers(&r[3]["error"])), ["/jobs/3/baseline", "/jobs/3/levels/0"]);
}

// ---------------------------------------------------------------------------------------------
// A batch's comparisons as a family
// ---------------------------------------------------------------------------------------------

/// Eight runs of the baseline's speed plus a shift, with a fixed noise pattern.
fn shifted(shift: f64, scale: f64) -> Vec<f64> {
    const NOISE: [f64; 8] = [-1.9, 2.4, -0.6, 1.3, -2.2, 0.4, 1.7, -1.1];
    NOISE
        .iter()
        .map(|e| ((100.4 + shift + scale * e) * 100.0).round() / 100.0)
        .collect()
}

/// Six comparisons (jobs 0, 1, 3, 4, 5, 6): a clear slowdown of 6 %, none, 3 %, a slight
/// 1.6 % (p about 0.01, between Bonferroni's 0.05/6 and Holm's 0.05/3 for the fourth
/// smallest), none (read at its own 90 % without a correction), and 1.2 % with half the
/// noise. Job 2 is an interval job and job 7 a comparison that fails: neither is in the family.
/// The comparisons name percentile (whose p-values these shifts were chosen by).
fn family(multiplicity: &str) -> Value {
    let shifts = [(6.0, 1.0), (0.2, 1.0), (3.0, 1.0), (1.6, 1.0), (-0.3, 1.0), (1.2, 0.5)];
    let mut jobs: Vec<Value> = shifts
        .iter()
        .zip(20..)
        .map(|(&(shift, scale), seed)| json!({"kind": "compare", "baseline": BASELINE, "candidate": shifted(shift, scale), "seed": seed, "methods": ["percentile"]}))
        .collect();
    jobs[4]["levels"] = json!([0.9]);
    jobs.insert(2, json!({"kind": "interval", "data": BASELINE, "seed": 3}));
    jobs.push(json!({"kind": "compare", "baseline": BASELINE, "candidate": SLOWER, "tolerance": -1}));
    json!({"jobs": jobs, "multiplicity": multiplicity, "family_level": 0.95})
}

/// The indices of the family's comparisons in the batch.
const MEMBERS: [usize; 6] = [0, 1, 3, 4, 5, 6];
const ALPHA: f64 = 1.0 - 0.95;

/// Run the family batch; check what is outside the family; return each member's result.
async fn run_family(app: &TestApp, multiplicity: &str) -> Vec<Value> {
    let (s, _, v) = app.post("/v1/batch", &family(multiplicity)).await;
    assert_eq!(s, 200, "{v}");
    assert_eq!((&v["multiplicity"], &v["family_level"]), (&json!(multiplicity), &json!(0.95)));
    let r = v["results"].as_array().unwrap();
    assert_eq!(r.len(), 8);
    // The interval job is untouched by the family: as it is alone.
    let alone = ok(app.post("/v1/interval", &json!({"data": BASELINE, "seed": 3})).await);
    assert_eq!(without_timing(r[2]["ok"].clone()), without_timing(alone), "{multiplicity}");
    assert_eq!(pointers(&r[7]["error"]), ["/jobs/7/tolerance"], "{multiplicity}");
    MEMBERS.iter().map(|&i| r[i]["ok"].clone()).collect()
}

fn p_values(results: &[Value]) -> Vec<f64> {
    results.iter().map(|r| num(r, "/decision/p_value")).collect()
}

fn claims(results: &[Value]) -> Vec<bool> {
    results
        .iter()
        .map(|r| r["verdict"] == "regression" || r["verdict"] == "improvement")
        .collect()
}

#[tokio::test]
async fn without_a_correction_each_comparison_is_read_at_its_own_level() {
    let app = TestApp::spawn().await;
    let none = run_family(&app, "none").await;
    for (r, own) in none.iter().zip([0.95, 0.95, 0.95, 0.95, 0.9, 0.95]) {
        assert_eq!(r["decision"]["level"], own, "{r}");
        assert!(r["decision"].get("simultaneous").is_none(), "only a correction has one: {r}");
        check_decision(r, unpaired_floor(8, 8));
    }
    assert_eq!(claims(&none), [true, false, true, true, false, true], "{none:?}");
}

#[tokio::test]
async fn bonferroni_reads_every_comparison_at_one_minus_alpha_over_m() {
    let app = TestApp::spawn().await;
    let none = run_family(&app, "none").await;
    let bonferroni = run_family(&app, "bonferroni").await;
    // m = 6: the interval job and the failed job are not counted.
    let level = 1.0 - ALPHA / 6.0;
    assert_eq!(
        p_values(&bonferroni),
        p_values(&none),
        "the p-values do not depend on the correction"
    );
    for r in &bonferroni {
        let d = &r["decision"];
        assert!(close(num(d, "/level"), level), "{r}");
        assert!(close(num(d, "/simultaneous/level"), level), "{r}");
        // Read at the simultaneous level, the decision's interval is the simultaneous one.
        assert_eq!(
            (&d["lower"], &d["upper"]),
            (&d["simultaneous"]["lower"], &d["simultaneous"]["upper"]),
            "{r}"
        );
        let claimed = r["verdict"] == "regression";
        assert_eq!(claimed, num(d, "/p_value") <= ALPHA / 6.0, "{r}");
    }
    // The slight 1.6 % slowdown (p ≈ 0.01 > 0.05/6) is claimed alone but not in the family.
    assert_eq!(claims(&bonferroni), [true, false, true, false, false, true]);
}

#[tokio::test]
async fn holm_steps_down_the_ordered_p_values_and_claims_what_bonferroni_does_and_more() {
    let app = TestApp::spawn().await;
    let bonferroni = run_family(&app, "bonferroni").await;
    let holm = run_family(&app, "holm").await;
    let p = p_values(&holm);
    assert_eq!(p, p_values(&bonferroni));
    // Order by p-value (ties by the stricter level first, as ties are interchangeable) and
    // read the k-th smallest (from 0) at 1 − α/(m − k), claiming while every smaller one was.
    let mut order: Vec<usize> = (0..6).collect();
    order.sort_by(|&a, &b| {
        p[a].total_cmp(&p[b])
            .then(num(&holm[b], "/decision/level").total_cmp(&num(&holm[a], "/decision/level")))
    });
    let mut still = true;
    for (k, &j) in order.iter().enumerate() {
        let threshold = ALPHA / (6 - k) as f64;
        let d = &holm[j]["decision"];
        assert!(close(num(d, "/level"), 1.0 - threshold), "job {j}, rank {k}: {}", holm[j]);
        still = still && p[j] <= threshold;
        assert_eq!(holm[j]["verdict"] == "regression", still, "job {j}, rank {k}: {}", holm[j]);
        // The simultaneous interval is Bonferroni's, whatever the step-down read.
        assert!(close(num(d, "/simultaneous/level"), 1.0 - ALPHA / 6.0), "{}", holm[j]);
        assert_eq!(d["simultaneous"], bonferroni[j]["decision"]["simultaneous"]);
    }
    let (h, b) = (claims(&holm), claims(&bonferroni));
    assert!(
        h.iter().zip(&b).all(|(h, b)| *h || !*b),
        "Holm claims all Bonferroni claims: {h:?} {b:?}"
    );
    // The 1.6 % slowdown is the fourth smallest p-value (≈ 0.010 ≤ 0.05/3): Holm claims it.
    assert_eq!(h, [true, false, true, true, false, true]);
}

#[tokio::test]
async fn a_change_held_back_by_holm_says_so_and_not_that_its_interval_overlaps() {
    let app = TestApp::spawn().await;
    // Two slight slowdowns whose p-values both lie between α/2 and α: the smaller fails
    // Holm's first step (α/2), so the step-down stops, and the larger, whose own 95 % interval
    // lies beyond the band, is held back by the family.
    let job = |shift: f64| json!({"kind": "compare", "baseline": BASELINE, "candidate": shifted(shift, 1.0), "seed": 20, "methods": ["percentile"]});
    let (s, _, v) = app
        .post("/v1/batch", &json!({"jobs": [job(1.35), job(1.4)], "multiplicity": "holm"}))
        .await;
    assert_eq!(s, 200, "{v}");
    let (held, first) = (&v["results"][0]["ok"], &v["results"][1]["ok"]);
    let (p_held, p_first) = (num(held, "/decision/p_value"), num(first, "/decision/p_value"));
    assert!(ALPHA / 2.0 < p_first && p_first < p_held && p_held <= ALPHA, "{p_first} {p_held}");
    for r in [held, first] {
        assert_eq!(r["verdict"], "inconclusive", "{r}");
    }
    assert_eq!(held["decision"]["level"], 0.95);
    assert!(num(held, "/decision/lower") > 1.0, "its own interval lies beyond the band: {held}");
    let reason = held["verdict_reason"].as_str().unwrap();
    assert!(reason.contains("Holm's step-down") && !reason.contains("overlaps"), "{reason}");
    assert!(first["verdict_reason"].as_str().unwrap().contains("overlaps"), "{first}");
}

#[tokio::test]
async fn a_suite_of_sixty_under_holm_still_claims_a_clear_regression() {
    let app = TestApp::spawn().await;
    // 2000 resamples resolve p-values only down to 2/2001 ≈ 0.001, above Holm's first
    // threshold 0.05/60; beyond that the tail is Student's t on the bootstrap standard error, so
    // a 10 % slowdown at 2 % noise (about 19 standard errors) is still claimed, and nothing else.
    let runs = |level: f64, phase: f64| -> Vec<f64> {
        (0..30)
            .map(|i| ((level * (1.0 + 0.02 * (i as f64 * 2.39 + phase).sin())) * 1000.0).round() / 1000.0)
            .collect()
    };
    let jobs: Vec<Value> = (0..60)
        .map(|k| {
            let level = if k == 17 { 110.0 } else { 100.0 };
            json!({"kind": "compare", "baseline": runs(100.0, 0.0), "candidate": runs(level, 0.3 + k as f64), "seed": k})
        })
        .collect();
    let (s, _, v) = app.post("/v1/batch", &json!({"jobs": jobs, "multiplicity": "holm"})).await;
    assert_eq!(s, 200, "{v}");
    let results = v["results"].as_array().unwrap();
    let slow = &results[17]["ok"];
    assert_eq!(slow["verdict"], "regression", "{slow}");
    assert!(num(slow, "/decision/p_value") <= ALPHA / 60.0, "{slow}");
    let claimed = results
        .iter()
        .filter(|r| r["ok"]["verdict"] == "regression" || r["ok"]["verdict"] == "improvement")
        .count();
    assert_eq!(claimed, 1);
}

#[tokio::test]
async fn a_block_scheme_resamples_each_sample_of_a_comparison_by_blocks() {
    let app = TestApp::spawn().await;
    // Invented: two days of a checkout's minute-by-minute latency, each drifting slowly.
    let day = |level: f64, phase: f64| -> Vec<f64> {
        (0..240)
            .map(|m| ((level + 4.0 * ((m as f64) / 17.0 + phase).sin() + ((m * 37) % 7) as f64 * 0.3) * 100.0).round() / 100.0)
            .collect()
    };
    let body = json!({"baseline": day(100.0, 0.0), "candidate": day(103.0, 1.0), "scheme": {"kind": "stationary_block"}, "seed": 5});
    let v = ok(compare(&app, body.clone()).await);
    let resolved = num(&v, "/contrast/scheme/mean_block_length");
    // "auto" is the longer of the two samples' lengths.
    let mut alone = Vec::new();
    for sample in ["baseline", "candidate"] {
        let r = ok(app
            .post(
                "/v1/interval",
                &json!({"data": body[sample], "scheme": {"kind": "stationary_block"}, "seed": 5}),
            )
            .await);
        alone.push(num(&r, "/scheme/mean_block_length"));
    }
    assert_eq!(resolved, alone[0].max(alone[1]), "{v}");
    assert!(resolved > 1.0);
    // Without named methods a block scheme keeps percentile first (no analytic error applies).
    assert_eq!(v["decision"]["method"], "percentile", "{v}");
    assert_eq!(v["contrast"]["diagnostics"]["jackknife"]["kind"], "blocks");
    let again = ok(compare(
        &app,
        json!({"baseline": body["baseline"], "candidate": body["candidate"], "token": v["contrast"]["token"]}),
    )
    .await);
    assert_eq!(without_timing(again["contrast"].clone()), without_timing(v["contrast"].clone()));
}

#[tokio::test]
async fn a_comparison_alone_and_in_an_uncorrected_batch_are_identical() {
    let app = TestApp::spawn().await;
    let none = run_family(&app, "none").await;
    let jobs = family("none")["jobs"].clone();
    for (&i, in_batch) in MEMBERS.iter().zip(none) {
        let mut body = jobs[i].clone();
        body.as_object_mut().unwrap().remove("kind");
        let alone = ok(compare(&app, body).await);
        assert_eq!(without_timings(alone), without_timings(in_batch), "job {i}");
    }
}

#[tokio::test]
async fn a_ratio_needs_a_positive_baseline_and_a_candidate_of_0_or_more() {
    let app = TestApp::spawn().await;
    // Negative timings make no sense, but a ratio of negative means would read backwards (a
    // lower candidate would look like a regression); a baseline mean of 0 has no ratio at all.
    for (baseline, candidate) in [
        (
            json!([-10, -11, -9, -10.5, -9.5, -10.2]),
            json!([-12, -12.5, -11.8, -12.2, -11.6, -12.1]),
        ),
        (json!([-1, 1, -1, 1, -2, 2]), json!([1, 2, 3, 4, 5, 6])),
    ] {
        let v = invalid(
            compare(&app, json!({"baseline": baseline, "candidate": candidate, "seed": 1})).await,
            &["/baseline"],
        );
        assert_eq!(rule_at(&v, "/baseline").as_deref(), Some("statistic_domain"), "{v}");
        assert!(message_at(&v, "/baseline").contains("\"difference\""), "{v}");
    }
    // The same runs as a difference are fine.
    let v = ok(compare(
        &app,
        json!({"baseline": [-10, -11, -9, -10.5, -9.5, -10.2], "candidate": [-12, -12.5, -11.8, -12.2, -11.6, -12.1], "contrast": "difference", "seed": 1}),
    )
    .await);
    assert_eq!(v["verdict"], "improvement", "lower is better, and the candidate is lower: {v}");
    // A positive baseline mean whose resamples cross 0: those resamples have no ratio and are
    // left out (counted and warned), never read as a huge change of the opposite sign.
    let v = ok(compare(
        &app,
        json!({"baseline": [-5, 1, 2, 3, 4, 5, -4, 2.5], "candidate": [2, 3, 2.5, 3.5, 2, 3, 2.5, 3], "resamples": 4000, "seed": 4}),
    )
    .await);
    let undefined = v["contrast"]["diagnostics"]["undefined_replicates"].as_u64().unwrap();
    assert!(undefined > 0, "{v}");
    let codes: Vec<&Value> = v["contrast"]["diagnostics"]["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| &w["code"])
        .collect();
    assert!(codes.contains(&&json!("undefined_replicates")), "{v}");
    for i in v["contrast"]["intervals"].as_array().unwrap() {
        assert!(num(i, "/lower") >= 0.0, "no negative ratio: {i}");
    }
}

/// Found by the fuzz run: a paired ratio whose baseline has a value near zero makes replicates
/// near 1e160, and the normal and BCa endpoints' Monte Carlo errors squared them into infinity
/// (a 500). They are computed scaled now, and stay finite and positive.
#[tokio::test]
async fn a_ratio_over_a_baseline_near_zero_keeps_every_monte_carlo_error_finite() {
    let app = TestApp::spawn().await;
    let body = json!({"baseline": [5, 9.657329225511568e-161, 7, 8], "candidate": [5.5, 6.1, 7.3, 8.2],
        "paired": true, "resamples": 100, "seed": 1, "methods": ["percentile", "normal", "bca", "basic"]});
    let v = ok(compare(&app, body).await);
    let intervals = v["contrast"]["intervals"].as_array().unwrap();
    assert_eq!(intervals.len(), 4);
    for i in intervals {
        for end in ["lower_mc_error", "upper_mc_error"] {
            let e = i[end].as_f64().unwrap();
            assert!(e.is_finite() && e >= 0.0, "{i}");
        }
    }
    // The replicates reach ~6e160, so the upper endpoints' errors are that large, not zero.
    assert!(intervals.iter().any(|i| i["upper_mc_error"].as_f64().unwrap() > 1e150), "{v}");
}

/// Found by the fuzz run: one candidate value near 8e18 among 2199 near 70. Leaving it out of
/// the candidate's mean must give the others' mean (about 70); the plain centred sums lost the
/// small values to rounding and gave a negative mean, whose ratio is undefined, and BCa's
/// endpoints came out undefined (a 500). With compensated sums the acceleration is defined.
#[tokio::test]
async fn one_value_that_dwarfs_the_rest_leaves_the_bca_acceleration_defined() {
    let app = TestApp::spawn().await;
    let small = |k: u64| (0..2199u64).map(move |i| k as f64 + ((i * 37) % 1000) as f64 / 7.0);
    let mut candidate: Vec<f64> = small(1).collect();
    candidate.push(8_301_972_324_654_488_187.0);
    let baseline: Vec<f64> = small(0).collect();
    let body = json!({"baseline": baseline, "candidate": candidate, "contrast": "ratio",
        "resamples": 100, "seed": 1, "methods": ["bca"]});
    let v = ok(compare(&app, body).await);
    let a = num(&v, "/contrast/diagnostics/acceleration");
    assert!(a.is_finite() && a != 0.0, "{v}");
    assert!(!warning_codes(&v).contains(&"bca_without_acceleration".to_string()), "{v}");
    assert!(num(&v, "/contrast/intervals/0/lower") <= num(&v, "/contrast/intervals/0/upper"));
}

/// A ratio whose baseline has one positive value: without it the baseline's mean is zero and
/// the ratio undefined, so the jackknife cannot give an acceleration. BCa goes without it and
/// says so, as when no jackknife can be had, rather than returning undefined endpoints.
#[tokio::test]
async fn an_undefined_leave_out_ratio_leaves_bca_without_acceleration() {
    let app = TestApp::spawn().await;
    // Unpaired (each sample's jackknife apart) and paired (pairs left out) alike.
    for paired in [false, true] {
        let body = json!({"baseline": [0, 0, 0, 0, 0, 0, 0, 4], "candidate": [3, 5, 4, 6, 5, 4, 3, 5],
            "contrast": "ratio", "paired": paired, "resamples": 200, "seed": 1, "methods": ["bca", "percentile"]});
        let v = ok(compare(&app, body).await);
        assert!(
            warning_codes(&v).contains(&"bca_without_acceleration".to_string()),
            "paired {paired}: {v}"
        );
        assert_eq!(num(&v, "/contrast/diagnostics/acceleration"), 0.0);
        for i in v["contrast"]["intervals"].as_array().unwrap() {
            assert!(num(i, "/lower").is_finite() && num(i, "/upper").is_finite(), "{i}");
        }
    }
}

/// One sample: a correlation whose x is constant once its one non-zero row is left out has an
/// undefined jackknife value, so BCa goes without the acceleration and says so.
#[tokio::test]
async fn an_undefined_leave_out_correlation_leaves_bca_without_acceleration() {
    let app = TestApp::spawn().await;
    let body = json!({"data": {"columns": {"x": [0, 0, 0, 0, 0, 0, 0, 1], "y": [3, 5, 4, 6, 5, 4, 3, 9]}},
        "statistic": {"name": "correlation", "x": "x", "y": "y"}, "resamples": 200, "seed": 1, "methods": ["bca"]});
    let v = ok(app.post("/v1/interval", &body).await);
    let codes: Vec<&str> = v["diagnostics"]["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|w| w["code"].as_str())
        .collect();
    assert!(codes.contains(&"bca_without_acceleration"), "{v}");
    assert_eq!(num(&v, "/diagnostics/acceleration"), 0.0);
    assert!(
        num(&v, "/intervals/0/lower").is_finite() && num(&v, "/intervals/0/upper").is_finite(),
        "{v}"
    );
}
