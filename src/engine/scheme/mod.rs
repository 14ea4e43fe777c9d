//! Resampling schemes: how one resample's weights over the units are drawn.
//!
//! - [`iid`]: n draws with replacement (integer weights), Efron, B. (1979), "Bootstrap
//!   methods: another look at the jackknife", Annals of Statistics 7(1);
//! - [`bayesian`]: Dirichlet(1, …, 1) weights, Rubin, D. B. (1981), "The Bayesian bootstrap",
//!   Annals of Statistics 9(1);
//! - [`exact`]: every distinct `iid` resample with its multinomial probability, Fisher, N. I.
//!   & Hall, P. (1991), J. Statist. Plann. Inference 27.

pub mod bayesian;
pub mod exact;
pub mod iid;

use crate::engine::data::Prepared;
use rand_chacha::ChaCha8Rng;

/// Which scheme draws the resamples.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SchemeSpec {
    Iid,
    Bayesian,
}

impl SchemeSpec {
    pub fn name(&self) -> &'static str {
        match self {
            SchemeSpec::Iid => "iid",
            SchemeSpec::Bayesian => "bayesian",
        }
    }
}

/// Draw one resample's weights into `w` (resized to the number of units). The weights add up
/// to the sample size.
pub fn draw(scheme: SchemeSpec, data: &Prepared, rng: &mut ChaCha8Rng, w: &mut Vec<f64>) {
    w.clear();
    w.resize(data.units(), 0.0);
    match scheme {
        SchemeSpec::Iid => match data {
            Prepared::One(c) if !c.raw => iid::multinomial(rng, c.total as u64, &c.base, c.total, w),
            _ => iid::draw_rows(rng, w),
        },
        SchemeSpec::Bayesian => match data {
            Prepared::One(c) if !c.raw => bayesian::draw_counts(rng, &c.base, c.total, w),
            _ => bayesian::draw_rows(rng, w),
        },
    }
}
