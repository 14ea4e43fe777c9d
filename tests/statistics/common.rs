//! Helpers of the statistics tests: jobs built from plain values, run on the current pool.

pub use bandsaw::engine::data::Sample;
pub use bandsaw::engine::driver::{self, Outcome, RunError};
pub use bandsaw::engine::executor::Budget;
pub use bandsaw::engine::interval::{Level, Method};
pub use bandsaw::engine::job::{Include, Job, Resampled, Samples};
pub use bandsaw::engine::plan::OnTimeLimit;
pub use bandsaw::engine::scheme::SchemeSpec;
pub use bandsaw::engine::statistic::StatisticSpec;
use serde_json::{json, Value};

/// One column of observations.
pub fn column(x: Vec<f64>) -> Samples {
    Samples::One(Resampled::iid(Sample::column(x).expect("a valid column")))
}

/// Aggregated data.
pub fn aggregated(values: Vec<f64>, counts: Vec<u64>) -> Samples {
    Samples::One(Resampled::iid(Sample::aggregated(values, counts).expect("valid aggregated data")))
}

/// Named columns.
pub fn columns(names: Vec<String>, cols: Vec<Vec<f64>>) -> Samples {
    Samples::One(Resampled::iid(Sample::columns(names, cols).expect("valid columns")))
}

/// A statistic from its wire form, as a request gives it.
pub fn spec(v: Value) -> StatisticSpec {
    serde_json::from_value(v).expect("a valid statistic")
}

/// A statistic without parameters, by name.
pub fn stat(name: &str) -> StatisticSpec {
    spec(json!({ "name": name }))
}

/// Confidence levels.
pub fn levels(x: &[f64]) -> Vec<Level> {
    x.iter().map(|l| Level::new(*l).expect("a level")).collect()
}

/// Resample every sample of a job by `scheme`.
pub fn set_scheme(job: &mut Job, scheme: SchemeSpec) {
    match &mut job.samples {
        Samples::One(r) => r.scheme = scheme,
        Samples::Two { baseline, candidate, .. } => {
            baseline.scheme = scheme.clone();
            candidate.scheme = scheme;
        }
    }
}

/// Run a job on the current rayon pool with no time limit.
pub fn try_run(job: &Job) -> Result<Outcome, RunError> {
    try_run_within(job, &Budget::default())
}

/// Run a job on the current rayon pool within a budget.
pub fn try_run_within(job: &Job, budget: &Budget) -> Result<Outcome, RunError> {
    driver::prepare(job.clone())?.run(budget)
}

/// Run a job that must succeed.
pub fn run(job: &Job) -> Outcome {
    try_run(job).expect("the job runs")
}
