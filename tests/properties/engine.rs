//! The properties. Each asserts only what is exactly true of the engine's arithmetic, derived in
//! the comment beside it.

use crate::common::*;
use proptest::prelude::*;
use proptest::test_runner::TestCaseError;
use serde_json::{json, Value};

const EPS: f64 = f64::EPSILON;

proptest! {
    #![proptest_config(config(128))]

    /// lower ≤ upper for every method and level. Percentile and BCa read two quantiles of the
    /// sorted replicates at levels α_lo ≤ α_hi (BCa's adjusted level is increasing in the
    /// nominal one on the branch where 1 − a(z₀ + z) > 0, and pushed to 0 or 1 off it, on the
    /// side that keeps the order), and interpolation between order statistics is monotone in
    /// the level; basic reflects them (2θ̂ − q_hi ≤ 2θ̂ − q_lo, rounding being monotone); normal
    /// and studentized subtract z·se or t·se with se ≥ 0 from one centre.
    #[test]
    fn lower_is_at_most_upper(x in sample(), stat in column_statistic(), scheme in scheme(), seed in 0u64..1000) {
        if let Some(v) = ran(&body(json!(x), &stat, &scheme, seed)) {
            for (m, l, lo, hi) in intervals(&v) {
                prop_assert!(lo <= hi, "{m} at {l}: {lo} > {hi}");
            }
        }
    }

    /// Percentile and BCa endpoints are quantiles of the replicates: `a + h·(b − a)` between
    /// neighbouring order statistics a ≤ b with 0 ≤ h < 1. Rounding is monotone and h·fl(b − a)
    /// ≥ 0, so the endpoint is never below the smallest replicate, exactly; above, fl(b − a)
    /// may round up by half an ulp of |a| + |b|, and the sum by another, so an endpoint exceeds
    /// the largest replicate by at most 2ε(|min| + |max|).
    #[test]
    fn quantile_endpoints_lie_within_the_replicates(x in sample(), stat in column_statistic(), scheme in scheme(), seed in 0u64..1000) {
        let mut b = body(json!(x), &stat, &scheme, seed);
        b["methods"] = json!(["percentile", "bca"]);
        b["include"] = json!(["replicates"]);
        if let Some(v) = ran(&b) {
            let reps: Vec<f64> = v["replicates"].as_array().expect("replicates").iter().filter_map(Value::as_f64).collect();
            let min = reps.iter().copied().fold(f64::INFINITY, f64::min);
            let max = reps.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let slack = 2.0 * EPS * (min.abs() + max.abs());
            for (m, l, lo, hi) in intervals(&v) {
                prop_assert!(lo >= min && hi <= max + slack, "{m} at {l}: [{lo}, {hi}] outside [{min}, {max}]");
            }
        }
    }
}

/// |a − b| ≤ tol.
fn near(a: f64, b: f64, tol: f64, what: &str) -> Result<(), TestCaseError> {
    prop_assert!((a - b).abs() <= tol, "{what}: {a} vs {b} (tolerance {tol:e})");
    Ok(())
}

proptest! {
    #![proptest_config(config(96))]

    /// x + c shifts a location statistic's estimate and every percentile, basic and normal
    /// endpoint by c. The resamples are the same (same seed, same n, and a shift keeps the
    /// sorted order, ties included), so each replicate differs only by rounding: the shifted
    /// values carry ε·M each (M = max|x| + |c|), and a replicate (a weighted mean of at most n
    /// of them, or an interpolation between two) adds at most n·ε·M. Order statistics move by
    /// no more than the values they sort, so quantiles carry δ = 2n·ε·M; basic adds θ̂'s error
    /// (δ) twice; normal is θ̂ − bias ∓ z·se with z < 2.6 at 0.99 and se, bias each off by at
    /// most 2δ: under 10δ. The tolerance is 16δ. BCa and studentized are left out on purpose:
    /// z₀ counts replicates below θ̂ and jumps when rounding moves one across it, and a
    /// shift's cancellation in the jackknife and in standard errors is relative to M, not to
    /// the spread.
    #[test]
    fn shifting_the_data_shifts_location_intervals(x in moderate_sample(), stat in location_statistic(), c in -1e6f64..1e6, seed in 0u64..1000) {
        let shifted: Vec<f64> = x.iter().map(|v| v + c).collect();
        let mut b = body(json!(x), &stat, &json!({"kind": "iid"}), seed);
        b["methods"] = json!(["percentile", "basic", "normal"]);
        let (Some(a), Some(s)) = (ran(&b), ran(&{ let mut t = b.clone(); t["data"] = json!(shifted); t })) else {
            return Err(TestCaseError::fail("a location statistic is defined on any sample"));
        };
        let m = x.iter().fold(0f64, |m, v| m.max(v.abs())) + c.abs();
        let tol = 16.0 * 2.0 * x.len() as f64 * EPS * m;
        near(f(&a, "/estimate") + c, f(&s, "/estimate"), tol, "estimate")?;
        for ((m, l, lo, hi), (_, _, slo, shi)) in intervals(&a).into_iter().zip(intervals(&s)) {
            near(lo + c, slo, tol, &format!("{m} {l} lower"))?;
            near(hi + c, shi, tol, &format!("{m} {l} upper"))?;
        }
    }

    /// k·x with k = 2^j: multiplying by a power of two is exact (no value leaves the normal
    /// range here) and keeps the sorted order, so the same draws pick the same rows, every
    /// replicate and every quantile scale exactly, and the percentile and basic endpoints of
    /// location and spread statistics are k (or k^degree) times the originals, bit for bit;
    /// normal, BCa and studentized go through Φ⁻¹, powers and square roots of scaled sums, each
    /// correctly rounded or nearly, and agree to 1e-12 relative.
    #[test]
    fn scaling_the_data_scales_the_intervals(x in sample(), j in -20i32..=20, loc in location_statistic(), spread in spread_statistic(), seed in 0u64..1000) {
        let k = 2f64.powi(j);
        let scaled: Vec<f64> = x.iter().map(|v| v * k).collect();
        for (stat, degree) in [(loc, 1), spread] {
            let b = body(json!(x), &stat, &json!({"kind": "iid"}), seed);
            let (Some(a), Some(s)) = (ran(&b), ran(&{ let mut t = b.clone(); t["data"] = json!(scaled); t })) else {
                continue;
            };
            let kd = k.powi(degree);
            let scale = |v: &Value| intervals(v).iter().fold(f(v, "/estimate").abs(), |m, i| m.max(i.2.abs()).max(i.3.abs()));
            let tol = 1e-12 * scale(&s);
            prop_assert_eq!(f(&a, "/estimate") * kd, f(&s, "/estimate"));
            for ((m, l, lo, hi), (_, _, slo, shi)) in intervals(&a).into_iter().zip(intervals(&s)) {
                if m == "percentile" || m == "basic" {
                    prop_assert_eq!(lo * kd, slo, "{} {} lower", m, l);
                    prop_assert_eq!(hi * kd, shi, "{} {} upper", m, l);
                } else {
                    near(lo * kd, slo, tol, &format!("{m} {l} lower"))?;
                    near(hi * kd, shi, tol, &format!("{m} {l} upper"))?;
                }
            }
        }
    }

    /// k·x with k < 0 flips a location statistic's interval (lower' = k·upper) — but only in
    /// distribution: rows are drawn by position among the sorted values, and negating reverses
    /// that order, so the same seed draws other rows. Exact enumeration (n ≤ 8) has no draws,
    /// so there it is exactly true up to rounding: the values are multiples of 1/8 below 2^10
    /// (times k = −2^j, still exact), every sum of at most 8 of them is exact, and what is left
    /// is an interpolation or a division per replicate and the probability sums read in the
    /// other order (a few ε each), far inside 1e-12 of the data's magnitude. Quantiles of a
    /// discrete distribution reflect (−Q(α) = Q₋(1 − α)) unless a cumulative probability
    /// equals α exactly, which k/n^n never does at 0.1 or 0.025 for n ≤ 8. Percentile, basic
    /// and normal only: BCa's z₀ counts replicates tied with θ̂, which a one-ulp difference
    /// in an interpolated replicate can untie.
    #[test]
    fn negating_the_data_flips_location_intervals(x in prop::collection::vec((-8000i32..=8000).prop_map(|k| f64::from(k) / 8.0), 2..=8), j in -10i32..=10, stat in location_statistic(), seed in 0u64..1000) {
        let k = -(2f64.powi(j));
        let flipped: Vec<f64> = x.iter().map(|v| v * k).collect();
        let mut b = body(json!(x), &stat, &json!({"kind": "iid"}), seed);
        b["resamples"] = json!("exact");
        b["methods"] = json!(["percentile", "basic", "normal"]);
        // The p-quantile of x is minus the (1 − p)-quantile of −x; 1 − p is rounded, which moves
        // the interpolation by ε·n of a gap between values, inside the tolerance.
        let mut t = b.clone();
        t["data"] = json!(flipped);
        if let Some(p) = stat.get("p").and_then(Value::as_f64) {
            t["statistic"]["p"] = json!(1.0 - p);
        }
        let (Some(a), Some(s)) = (ran(&b), ran(&t)) else {
            return Err(TestCaseError::fail("a location statistic is defined on any sample"));
        };
        let tol = 1e-12 * x.iter().fold(1f64, |m, v| m.max(v.abs())) * k.abs();
        near(f(&a, "/estimate") * k, f(&s, "/estimate"), tol, "estimate")?;
        for ((m, l, lo, hi), (_, _, slo, shi)) in intervals(&a).into_iter().zip(intervals(&s)) {
            near(hi * k, slo, tol, &format!("{m} {l} lower"))?;
            near(lo * k, shi, tol, &format!("{m} {l} upper"))?;
        }
    }
}

proptest! {
    #![proptest_config(config(64))]

    /// Replicate i uses only its own stream, so one and two threads give the same bits: the
    /// whole response but the elapsed time.
    #[test]
    fn one_and_two_threads_give_the_same_bits(x in sample(), stat in column_statistic(), scheme in scheme(), seed in 0u64..1000) {
        let b = body(json!(x), &stat, &scheme, seed);
        let strip = |r: Result<Value, bandsaw::api::problem::Problem>| r.map(|mut v| { v["elapsed_ms"] = json!(0); v });
        prop_assert_eq!(strip(interval_on(1, &b)), strip(interval_on(2, &b)));
    }

    /// A run stopped after m replicates (`on_time_limit: partial`) reports the full result of
    /// a run asked for exactly the replicates it did: the first of the same streams.
    #[test]
    fn a_partial_result_is_the_full_result_of_its_prefix(x in sample(), stat in column_statistic(), scheme in scheme(), cap in 20u64..290, seed in 0u64..1000) {
        let mut b = body(json!(x), &stat, &scheme, seed);
        b["on_time_limit"] = json!("partial");
        let partial = match interval_capped(&b, Some(cap)) {
            Ok(v) => v,
            Err(p) => { prop_assert!((400..500).contains(&p.status), "{}", p.detail); return Ok(()); }
        };
        prop_assert_eq!(&partial["complete"], &json!(false));
        let done = partial["resamples"].as_u64().expect("resamples");
        prop_assert!(done >= cap && done < 299, "stopped after {} with the cap at {}", done, cap);
        b["resamples"] = json!(done);
        let full = interval(&b).expect("the prefix runs as the partial run did");
        prop_assert_eq!(&full["complete"], &json!(true));
        prop_assert_eq!(numbers(&partial), numbers(&full));
    }

    /// Under `iid` the rows are laid out sorted by value and drawn by position among the sorted
    /// values, so permuting the rows changes nothing a statistic of the values reports: the
    /// same bits (ties are equal values, so their order among themselves cannot matter). The
    /// warnings may differ (serial correlation reads the order sent), and so does the token
    /// (it digests the data as sent); neither is compared.
    #[test]
    fn permuting_rows_changes_nothing_under_iid(x in sample().prop_flat_map(|x| (Just(x.clone()), Just(x).prop_shuffle())), stat in column_statistic(), seed in 0u64..1000) {
        let (x, permuted) = x;
        let b = body(json!(x), &stat, &json!({"kind": "iid"}), seed);
        let a = ran(&b);
        let p = ran(&{ let mut t = b.clone(); t["data"] = json!(permuted); t });
        prop_assert_eq!(a.map(|v| numbers(&v)), p.map(|v| numbers(&v)));
    }

    /// Aggregated data (`values` + `counts`) and its rows written out have the same bootstrap
    /// distribution, but not the same random draws (rows are drawn one by one, aggregated data
    /// by a multinomial over its values), so only exact enumeration can compare them exactly:
    /// with n ≤ 8 rows both enumerate the same distribution and must agree on the estimate, the
    /// standard error and every endpoint up to the order of summation. The values are
    /// multiples of 1/8 below 2^10, so every sum of at most 8 of them is exact and what is left
    /// is a few roundings of divisions, roots and Φ⁻¹ (ε each): 1e-12 of the data's scale is
    /// loose. The levels 0.8 and 0.95 need cumulative probabilities k/n^n at 0.1 or 0.025,
    /// which no n ≤ 8 reaches, so no endpoint sits on a tie between two order statistics.
    #[test]
    fn aggregated_data_gives_the_result_of_its_rows(rows in prop::collection::vec((-40i32..=40).prop_map(|k| f64::from(k) / 8.0), 2..=8), stat in column_statistic(), seed in 0u64..1000) {
        let mut distinct: Vec<f64> = rows.clone();
        distinct.sort_by(f64::total_cmp);
        distinct.dedup();
        let counts: Vec<u64> = distinct.iter().map(|d| rows.iter().filter(|r| *r == d).count() as u64).collect();
        let mut b = body(json!(rows), &stat, &json!({"kind": "iid"}), seed);
        b["resamples"] = json!("exact");
        b["methods"] = json!(["percentile", "basic", "normal", "bca"]);
        let raw = ran(&b);
        let agg = ran(&{ let mut t = b.clone(); t["data"] = json!({"values": distinct, "counts": counts}); t });
        let (Some(raw), Some(agg)) = (raw, agg) else {
            // Only a statistic that can be undefined (a coefficient of variation at mean 0, an
            // exceedance) may be refused, and then in both forms alike.
            prop_assert!(stat.get("name").is_some_and(|n| n == "coefficient_of_variation" || n == "exceedance"), "{} refused", stat);
            prop_assert!(raw_refused_alike(&b, &distinct, &counts), "one form ran and the other was refused");
            return Ok(());
        };
        let scale = 1.0 + f(&raw, "/estimate").abs() + f(&raw, "/standard_error");
        let tol = 1e-12 * scale;
        near(f(&raw, "/estimate"), f(&agg, "/estimate"), tol, "estimate")?;
        near(f(&raw, "/standard_error"), f(&agg, "/standard_error"), tol, "standard error")?;
        for ((m, l, lo, hi), (_, _, alo, ahi)) in intervals(&raw).into_iter().zip(intervals(&agg)) {
            near(lo, alo, tol, &format!("{m} {l} lower"))?;
            near(hi, ahi, tol, &format!("{m} {l} upper"))?;
        }
    }
}

/// Both forms refused, with the same kind of problem.
fn raw_refused_alike(b: &Value, distinct: &[f64], counts: &[u64]) -> bool {
    let mut agg = b.clone();
    agg["data"] = json!({"values": distinct, "counts": counts});
    match (interval(b), interval(&agg)) {
        (Err(p), Err(q)) => p.kind == q.kind,
        _ => false,
    }
}

proptest! {
    #![proptest_config(config(128))]

    /// A proportion's interval is a set of shares: with 0/1 data every endpoint of percentile
    /// and BCa is a replicate's share k/n, so it lies in [0, 1] exactly.
    #[test]
    fn proportion_quantile_endpoints_are_shares(x in prop::collection::vec(prop_oneof![Just(0.0), Just(1.0)], 2..200), seed in 0u64..1000) {
        let mut b = body(json!(x), &json!("proportion"), &json!({"kind": "iid"}), seed);
        b["methods"] = json!(["percentile", "bca"]);
        if let Some(v) = ran(&b) {
            for (m, l, lo, hi) in intervals(&v) {
                prop_assert!((0.0..=1.0).contains(&lo) && (0.0..=1.0).contains(&hi) && lo <= hi, "{m} {l}: [{lo}, {hi}]");
            }
        }
    }
}
