//! Confidence intervals from the replicate distribution, one method per file:
//! [`percentile`], [`basic`], [`normal`], [`bca`], [`studentized`].
//!
//! Each method receives the replicate values sorted once
//! ([`ReplicateDistribution`](crate::engine::distribution::ReplicateDistribution)) and returns
//! its two endpoints together with the Monte Carlo standard error of each endpoint (the part of
//! its uncertainty that comes from using finitely many resamples).

pub mod basic;
pub mod bca;
pub mod normal;
pub mod percentile;
pub mod studentized;

crate::wire_enum! {
    /// An interval method.
    pub enum Method {
        /// Replicate quantiles at α/2 and 1 − α/2.
        Percentile = "percentile",
        /// 2θ̂ minus the replicate quantiles.
        Basic = "basic",
        /// θ̂ − bias ± z·standard error.
        Normal = "normal",
        /// Bias-corrected and accelerated percentile interval.
        Bca = "bca",
        /// Bootstrap-t, with analytic or nested standard errors.
        Studentized = "studentized",
    }
}

impl Method {
    /// Where the method is published (each file's doc comment gives the details).
    pub fn source(self) -> &'static str {
        match self {
            Method::Percentile => "Efron (1981); Davison & Hinkley (1997) §5.3.1",
            Method::Basic => "Davison & Hinkley (1997) §5.2, eq. 5.6",
            Method::Normal => "Davison & Hinkley (1997) §5.2, eq. 5.5",
            Method::Bca => "Efron (1987), JASA 82(397); Efron & Tibshirani (1993) ch. 14",
            Method::Studentized => "Davison & Hinkley (1997) §5.2.1; Efron & Tibshirani (1993) ch. 12",
        }
    }
}

/// The methods of a request that names none.
pub const DEFAULT_METHODS: [Method; 2] = [Method::Percentile, Method::Bca];

/// The methods of a comparison that names none, where its contrast has an analytic standard
/// error: the verdict is read from the first, and the studentized interval's far tails stay
/// near nominal at small n where the percentile interval's run short (what a family's
/// correction reads, at α/m), at no cost of a nested bootstrap.
pub const COMPARISON_METHODS: [Method; 3] = [Method::Studentized, Method::Percentile, Method::Bca];

crate::bounded_number! {
    /// A confidence level, strictly between 0 and 1 (0.95, not 95).
    pub struct Level where 0.0 < x < 1.0, "a confidence level strictly between 0 and 1 (0.95, not 95)";
}

/// The level of a request that names none.
pub const DEFAULT_LEVEL: f64 = 0.95;

/// Two endpoints with their Monte Carlo standard errors and, for methods that read replicate
/// quantiles, the quantile levels they read.
#[derive(Debug, Clone, PartialEq)]
pub struct Endpoints {
    pub lower: f64,
    pub upper: f64,
    pub lower_mc_error: f64,
    pub upper_mc_error: f64,
    /// The replicate quantile levels read for (lower, upper), where the method reads them.
    pub quantile_levels: Option<(f64, f64)>,
}

impl Endpoints {
    /// A zero-width interval at `x` with no Monte Carlo error.
    pub fn point(x: f64) -> Endpoints {
        Endpoints {
            lower: x,
            upper: x,
            lower_mc_error: 0.0,
            upper_mc_error: 0.0,
            quantile_levels: None,
        }
    }
}
