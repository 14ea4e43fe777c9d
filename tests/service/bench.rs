//! `bandsaw bench` as an operator runs it: the real binary, `--quick`, in both forms. The
//! numbers are the machine's, so nothing here holds a speed: only that every part of the
//! report is there and every number is one a measurement can give.

use std::process::Command;

use serde_json::Value;

/// `bandsaw bench --quick <args>` on two threads: its standard output, after checking that it
/// succeeded.
fn bench(args: &[&str]) -> String {
    let out = Command::new(env!("CARGO_BIN_EXE_bandsaw"))
        .args(["bench", "--quick", "--threads", "2"])
        .args(args)
        .env_remove("BANDSAW_THREADS")
        .output()
        .expect("the binary runs");
    assert!(out.status.success(), "bandsaw bench {args:?}: {out:?}");
    String::from_utf8(out.stdout).expect("UTF-8 output")
}

/// A positive, finite number at `pointer` in `v`.
fn positive(v: &Value, pointer: &str) -> f64 {
    let x = v
        .pointer(pointer)
        .and_then(Value::as_f64)
        .unwrap_or_else(|| panic!("no number at {pointer} in {v}"));
    assert!(x.is_finite() && x > 0.0, "{pointer} = {x}");
    x
}

/// A whole number at `pointer` in `v`.
fn whole(v: &Value, pointer: &str) -> u64 {
    v.pointer(pointer)
        .and_then(Value::as_u64)
        .unwrap_or_else(|| panic!("no whole number at {pointer} in {v}"))
}

fn array<'a>(v: &'a Value, pointer: &str) -> &'a Vec<Value> {
    v.pointer(pointer)
        .and_then(Value::as_array)
        .unwrap_or_else(|| panic!("no array at {pointer} in {v}"))
}

fn check_kernels(report: &Value) {
    let kernels = array(report, "/kernels");
    let named: Vec<(&str, u64)> = kernels
        .iter()
        .map(|k| (k["statistic"].as_str().unwrap(), k["n"].as_u64().unwrap()))
        .collect();
    for want in [
        ("mean", 10_000),
        ("mean", 1_000_000),
        ("variance", 10_000),
        ("median", 10_000),
        ("median", 1_000_000),
    ] {
        assert!(named.contains(&want), "no kernel {want:?} in {named:?}");
    }
    for k in kernels {
        assert!(whole(k, "/resamples") >= 1, "{k}");
        positive(k, "/seconds");
        let per_second = positive(k, "/resamples_per_second");
        let ns = positive(k, "/ns_per_resample");
        assert!((per_second * ns / 1e9 - 1.0).abs() < 1e-9, "{k}");
        if k["draws_rows"].as_bool().expect("draws_rows") {
            let rows = positive(k, "/row_draws_per_second");
            assert!((rows / (per_second * whole(k, "/n") as f64) - 1.0).abs() < 1e-9, "{k}");
            // A share of two timings: positive and finite, nothing more (a timed bound could fail
            // on a loaded machine).
            positive(k, "/percent_of_ceiling");
        } else {
            // The order statistics draw no rows: no row-draw rate, no share of the ceiling.
            assert!(k["row_draws_per_second"].is_null() && k["percent_of_ceiling"].is_null(), "{k}");
        }
    }
    let median = kernels.iter().find(|k| k["statistic"] == "median").unwrap();
    assert_eq!(median["draws_rows"], false);
}

fn check_scaling(report: &Value) {
    let runs = array(report, "/scaling/runs");
    let threads: Vec<u64> = runs.iter().map(|r| r["threads"].as_u64().unwrap()).collect();
    assert_eq!(threads.first(), Some(&1), "{threads:?}");
    assert_eq!(threads.last(), Some(&2), "capped at --threads 2: {threads:?}");
    assert!(threads.windows(2).all(|w| w[0] < w[1]), "{threads:?}");
    assert_eq!(runs[0]["speedup"], 1.0);
    for r in runs {
        positive(r, "/seconds");
        positive(r, "/speedup");
    }
    assert!(whole(report, "/scaling/resamples") >= 1);
}

fn check_capacity(report: &Value) {
    assert_eq!(report.pointer("/capacity/extrapolated"), Some(&Value::Bool(true)));
    assert_eq!(whole(report, "/capacity/threads"), 2);
    let jobs = array(report, "/capacity/jobs");
    let named: Vec<String> = jobs
        .iter()
        .map(|j| {
            format!(
                "{} {} {} {}",
                j["statistic"].as_str().unwrap(),
                j["n"],
                j["scheme"].as_str().unwrap(),
                j["methods"]
            )
        })
        .collect();
    for want in [
        r#"mean 10000 iid ["percentile"]"#,
        r#"median 10000 iid ["percentile"]"#,
        r#"median 1000000 iid ["percentile"]"#,
        r#"proportion 10000 iid ["percentile"]"#,
        r#"mean 100000 stationary_block ["percentile"]"#,
        r#"mean 10000 iid ["percentile","bca"]"#,
    ] {
        assert!(named.iter().any(|n| n == want), "no capacity row {want} in {named:?}");
    }
    for j in jobs {
        positive(j, "/seconds_per_resample");
        positive(j, "/resamples_per_second");
        positive(j, "/prepare_seconds");
        let fixed = j["fixed_seconds"].as_f64().unwrap();
        assert!(fixed.is_finite() && fixed >= j["prepare_seconds"].as_f64().unwrap(), "{j}");
        let timed = array(j, "/timed");
        assert_eq!(timed.len(), 2, "{j}");
        // Rounded down to two significant figures: at most two digits before the zeros.
        let cap = whole(j, "/resamples_in_one_second");
        let digits = cap.to_string();
        assert!(digits.trim_end_matches('0').len() <= 2, "{cap}");
        // Never more than a second's worth at the fitted rate.
        assert!(cap as f64 <= j["resamples_per_second"].as_f64().unwrap() + 1.0, "{j}");
    }
    let block = jobs.iter().find(|j| j["scheme"] == "stationary_block").unwrap();
    assert_eq!(block["mean_block_length"], 50.0);
}

#[test]
fn the_json_report_has_every_part_and_every_rate_is_a_rate() {
    let report: Value = serde_json::from_str(&bench(&["--format", "json"])).expect("the report is JSON");
    assert_eq!(report["bandsaw"], env!("CARGO_PKG_VERSION"));
    assert_eq!(report.pointer("/machine/quick"), Some(&Value::Bool(true)));
    assert!(whole(&report, "/machine/logical_cpus") >= 1);
    assert_eq!(whole(&report, "/ceiling/range"), 10_000);
    assert!(whole(&report, "/ceiling/draws") >= 10_000);
    positive(&report, "/ceiling/draws_per_second");
    check_kernels(&report);
    check_scaling(&report);
    check_capacity(&report);
}

#[test]
fn the_text_report_has_its_four_parts() {
    let text = bench(&[]);
    for part in [
        "The ceiling",
        "Kernels, one thread",
        "Scaling:",
        "Capacity on 2 threads",
        "extrapolated",
    ] {
        assert!(text.contains(part), "no {part:?} in:\n{text}");
    }
    for job in [
        "mean, n = 10 000",
        "median, n = 1 000 000",
        "stationary blocks of mean 50",
        "percentile + BCa",
    ] {
        assert!(text.contains(job), "no {job:?} in:\n{text}");
    }
}

#[test]
fn bad_flags_are_refused_before_anything_is_measured() {
    let out = Command::new(env!("CARGO_BIN_EXE_bandsaw"))
        .args(["bench", "--seconds", "0"])
        .output()
        .expect("the binary runs");
    assert_eq!(out.status.code(), Some(2), "{out:?}");
    assert!(String::from_utf8_lossy(&out.stderr).contains("--seconds"), "{out:?}");
}
