//! A bounded, deterministic fuzz run of the request parser and validator on a stable toolchain:
//! proptest generates raw bytes and structural mutations of valid requests, and each body goes
//! through the functions the HTTP handlers call (`interval::compute`, `compare::compute`,
//! `batch::compute`) with small limits so that a case costs milliseconds. Every case must end
//! in a response or in a valid RFC 9457 problem (4xx, or the documented 503 of a time limit),
//! never a panic, and allocate no more than a bound derived from the body and the limits.
//!
//! `BANDSAW_FUZZ_SECONDS` (default 5) bounds the run; `BANDSAW_FUZZ_SEED` (default fixed) picks
//! the sequence of cases, which is the same on every machine for a seed: a longer run only
//! goes further along it.

/// Small limits, so that every accepted case is cheap and every limit is within reach of the
/// mutations (rows, resamples and jobs at and past them). Here, as the parent of `check` (which
/// applies them) and `mutate` (which aims at them), so neither imports the other back.
pub const MAX_ROWS: u64 = 4000;
pub const MAX_RESAMPLES: u64 = 500;
pub const MAX_JOBS: usize = 4;
pub const WORK_LIMIT: f64 = 2e6;
pub const TIME_LIMIT_MS: u64 = 1000;

mod alloc;
mod check;
mod mutate;

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::time::{Duration, Instant};

use proptest::strategy::{Strategy, ValueTree};
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};

use check::{Outcome, Tally};
use mutate::{Case, Target};

fn seconds() -> f64 {
    std::env::var("BANDSAW_FUZZ_SECONDS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(5.0)
}

fn seed() -> u64 {
    std::env::var("BANDSAW_FUZZ_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(20_261_202)
}

fn runner(seed: u64) -> TestRunner {
    let mut bytes = [0u8; 32];
    bytes[..8].copy_from_slice(&seed.to_le_bytes());
    let config = Config {
        failure_persistence: None,
        ..Config::default()
    };
    TestRunner::new_with_rng(config, TestRng::from_seed(RngAlgorithm::ChaCha, &bytes))
}

/// Run one case, catching a panic as a failure.
fn attempt(case: &Case) -> Result<Outcome, String> {
    let body = case.body();
    match catch_unwind(AssertUnwindSafe(|| check::handle(case.target, &body))) {
        Ok(r) => r,
        Err(p) => Err(format!(
            "panicked: {}",
            p.downcast_ref::<String>()
                .cloned()
                .or_else(|| p.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_default()
        )),
    }
}

/// Shrink a failing case as proptest would (simplify while it still fails), to report a small one;
/// `first` is why it failed first.
fn shrink(mut tree: impl ValueTree<Value = Case>, first: String) -> (Case, String) {
    // The smallest case seen failing, with its reason (the tree's current case may be one that
    // passed when simplifying stops).
    let mut failing = (tree.current(), first);
    for _ in 0..500 {
        if !tree.simplify() {
            break;
        }
        match attempt(&tree.current()) {
            Err(e) => failing = (tree.current(), e),
            Ok(_) => {
                if !tree.complicate() {
                    break;
                }
            }
        }
    }
    failing
}

#[test]
fn requests_are_answered_or_refused_with_a_valid_problem() {
    check::the_checks_refuse_bad_problems();
    let seed = seed();
    let budget = Duration::from_secs_f64(seconds());
    let mut runner = runner(seed);
    let strategy = mutate::case();
    let mut tally = Tally::default();
    let start = Instant::now();
    let mut blips = 0;
    while start.elapsed() < budget {
        let tree = strategy.new_tree(&mut runner).expect("a case");
        match attempt(&tree.current()) {
            Ok(outcome) => tally.add(&tree.current(), outcome),
            // The allocation counter is process-wide: a peak that three reruns of the same case
            // do not reach again was another thread's allocation (pool threads winding down), not
            // this request's. It is printed, not failed; a panic or a bad problem always fails.
            Err(first) if first.starts_with(check::HELD) && (0..3).all(|_| attempt(&tree.current()).is_ok()) => {
                blips += 1;
                println!("fuzz: not reproduced in 3 reruns, so not this request's: {first}");
            }
            Err(first) => {
                let (small, why) = shrink(tree, first);
                let body = small.body();
                let shown = String::from_utf8_lossy(&body[..body.len().min(2000)]).into_owned();
                // The whole body, for replaying it by hand (the message shows its start only).
                let kept = std::env::temp_dir().join("bandsaw-fuzz-failure.json");
                let _ = std::fs::write(&kept, &body);
                panic!(
                    "seed {seed}, after {} cases: {:?} {why}\nbody ({} bytes, all of it in {}): {shown}",
                    tally.cases,
                    small.target,
                    body.len(),
                    kept.display()
                );
            }
        }
    }
    println!("{}", tally.summary(seed, start.elapsed()));
    println!("fuzz: {blips} allocation peaks above the bound that did not reproduce");
    assert!(tally.cases > 0);
    // Each kind of input must have been tried, or the run says nothing about it.
    for t in [Target::Interval, Target::Compare, Target::Batch] {
        assert!(tally.by_target(t) > 0, "no {t:?} case in the run");
    }
}
