//! The verdict of a comparison: did the candidate get worse, better, stay the same within a
//! tolerance, or can the data not tell yet?
//!
//! The verdict is read from one interval of the contrast (candidate against baseline) against
//! the tolerance band, the set of contrasts that count as no change: `regression` when the whole
//! interval lies beyond the band on the worse side, `improvement` on the better side,
//! `equivalent` when the whole interval lies inside the band (an equivalence test in the trade's
//! sense: an interval of level L inside the band rejects both one-sided "beyond the band"
//! hypotheses at (1 − L)/2 each; Schuirmann, D. J. (1987), J. Pharmacokinetics and
//! Biopharmaceutics 15(6)), and `inconclusive` otherwise.
//!
//! A p-value comes from inverting the interval (Davison & Hinkley 1997, §4.4 and §5.3): the
//! smallest α at which the (1 − α) interval lies wholly outside the band. A family of comparisons
//! adjusts the level each verdict is read at from these ([`crate::engine::family`]).

use statrs::function::factorial::binomial;

use crate::engine::distribution::normal_dist;
use crate::engine::interval::{Endpoints, Method};
use crate::engine::job::Contrast;
use crate::engine::summary::Reader;

crate::wire_enum! {
    /// Which direction of the statistic is better.
    pub enum Better default Lower {
        /// Lower is better: timings, latency, error rates.
        Lower = "lower",
        /// Higher is better: throughput, conversion.
        Higher = "higher",
    }
}

crate::wire_enum! {
    /// What a comparison decided.
    pub enum Verdict {
        /// The interval lies wholly beyond the tolerance band on the worse side.
        Regression = "regression",
        /// The interval lies wholly beyond the tolerance band on the better side.
        Improvement = "improvement",
        /// The interval lies wholly inside the tolerance band.
        Equivalent = "equivalent",
        /// The interval overlaps an edge of the band, or there are too few runs to decide.
        Inconclusive = "inconclusive",
    }
}

crate::bounded_number! {
    /// The change that still counts as no change: relative for a ratio (0.02 = 2 %: ratios
    /// from 1/1.02 to 1.02), in data units for a difference. 0 or more.
    pub struct Tolerance where 0.0 <= x <= 1e75, "a tolerance, 0 or more";
}

/// What is compared, and what counts as no change.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Comparison {
    pub contrast: Contrast,
    pub better: Better,
    pub tolerance: f64,
}

/// Where an interval lies against the tolerance band.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Side {
    Inside,
    Worse,
    Better,
    Edge,
}

impl Comparison {
    /// The contrasts that count as no change: [−t, t] for a difference, [1/(1 + t), 1 + t] for
    /// a ratio (symmetric on the log scale, so a slowdown and a speedup of the same factor
    /// count alike).
    pub fn band(&self) -> (f64, f64) {
        let t = self.tolerance;
        match self.contrast {
            // 0 − t, not −t: a tolerance of 0 gives the band [0, 0], not [−0, 0].
            Contrast::Difference => (0.0 - t, t),
            Contrast::Ratio => (1.0 / (1.0 + t), 1.0 + t),
        }
    }

    fn side(&self, lower: f64, upper: f64) -> Side {
        let (lo, hi) = self.band();
        let (above, below) = (lower > hi, upper < lo);
        match (above, below, self.better) {
            (true, _, Better::Lower) | (_, true, Better::Higher) => Side::Worse,
            (true, _, Better::Higher) | (_, true, Better::Lower) => Side::Better,
            _ if lower >= lo && upper <= hi => Side::Inside,
            _ => Side::Edge,
        }
    }
}

/// The smallest p-value an inversion reports: below it the search stops.
pub const MIN_P_VALUE: f64 = 1e-12;

/// The smallest α for which `holds` is true of the (1 − α) interval of `method`: intervals
/// widen with their level, so `holds` is true of every α down to some α*. Bisected on log α,
/// so that a small p-value has as many significant digits as a large one.
fn invert(r: &Reader, method: Method, holds: impl Fn(f64, f64) -> bool) -> f64 {
    let at = |alpha: f64| {
        let e = r.interval(method, 1.0 - alpha);
        holds(e.lower, e.upper)
    };
    // The largest α below 1 whose level 1 − α is representable apart from 0.
    let widest = 1.0 - 1e-12;
    if !at(widest) {
        return 1.0;
    }
    if at(MIN_P_VALUE) {
        return MIN_P_VALUE;
    }
    let (mut lo, mut hi) = (MIN_P_VALUE.ln(), widest.ln());
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if at(mid.exp()) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    hi.exp()
}

/// The p-value of a change: the smallest α at which the (1 − α) interval lies wholly outside
/// the tolerance band.
pub fn p_change(r: &Reader, method: Method, c: &Comparison) -> f64 {
    invert(r, method, |lower, upper| matches!(c.side(lower, upper), Side::Worse | Side::Better))
}

/// The p-value of equivalence: the smallest α at which the (1 − α) interval lies wholly inside
/// the tolerance band.
pub fn p_equivalence(r: &Reader, method: Method, c: &Comparison) -> f64 {
    invert(r, method, |lower, upper| c.side(lower, upper) == Side::Inside)
}

/// How many observations each sample has, and whether they are pairs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Sizes {
    pub baseline: u64,
    pub candidate: u64,
    pub paired: bool,
}

impl Sizes {
    /// The smallest two-sided p-value any distribution-free comparison of these runs can reach:
    /// the most extreme of the C(n₁ + n₂, n₁) arrangements of two samples (the rank-sum test's
    /// floor; Mann, H. B. & Whitney, D. R. (1947), Ann. Math. Statist. 18(1)), or the sign test's
    /// 2·2⁻ⁿ for n pairs (common practice). With fewer runs than this allows, the bootstrap's
    /// interval is too short-tailed to trust, and no verdict is given.
    pub fn floor(&self) -> f64 {
        if self.paired {
            (2.0 * 0.5_f64.powi(self.baseline.min(i32::MAX as u64) as i32)).min(1.0)
        } else {
            (2.0 / binomial(self.baseline + self.candidate, self.baseline)).min(1.0)
        }
    }

    /// The runs per side of an equal design as precise as this one: n for pairs, the harmonic
    /// mean 2·n₁·n₂/(n₁ + n₂) of two independent samples (whose variances add as σ²/n₁ + σ²/n₂).
    fn effective_per_side(&self) -> f64 {
        let (b, c) = (self.baseline as f64, self.candidate as f64);
        match self.paired {
            true => b,
            false if b + c > 0.0 => 2.0 * b * c / (b + c),
            false => 0.0,
        }
    }

    /// The fewest runs per side (equal sides, or pairs) whose floor reaches `alpha`.
    pub fn runs_for_floor(&self, alpha: f64) -> u64 {
        (1..=1100)
            .find(|&n| {
                let equal = Sizes {
                    baseline: n,
                    candidate: n,
                    paired: self.paired,
                };
                equal.floor() <= alpha
            })
            .unwrap_or(1100)
    }
}

/// The level a verdict is read at, and what may be claimed there (a family's step-down may
/// forbid a change that the job's own interval would show).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Reading {
    pub change_level: f64,
    pub change_allowed: bool,
    pub equivalence_level: f64,
    /// In a corrected family, the level at which the intervals of every comparison hold
    /// together (Bonferroni's 1 − α/m).
    pub simultaneous_level: Option<f64>,
}

impl Reading {
    /// One comparison on its own, read at its level.
    pub fn alone(level: f64) -> Reading {
        Reading {
            change_level: level,
            change_allowed: true,
            equivalence_level: level,
            simultaneous_level: None,
        }
    }
}

/// A verdict with everything it was read from.
#[derive(Debug, Clone, PartialEq)]
pub struct Decision {
    pub verdict: Verdict,
    pub method: Method,
    /// The interval the verdict was read from, and its level.
    pub level: f64,
    pub lower: f64,
    pub upper: f64,
    pub band: (f64, f64),
    pub p_value: f64,
    pub equivalence_p_value: f64,
    /// The smallest p-value a distribution-free comparison of the runs can reach.
    pub floor: f64,
    /// About how many runs per side would decide: enough to pass the floor, and to narrow the
    /// interval to the band's width at the observed noise.
    pub runs_needed: Option<u64>,
    /// Why the verdict is what it is.
    pub why: Why,
    pub reason: String,
}

/// Why a comparison got its verdict: for a claim, where its interval lies; for `inconclusive`,
/// what held it back.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Why {
    /// The interval lies wholly beyond the band (a regression or an improvement).
    Beyond,
    /// The interval lies wholly inside the band.
    Inside,
    /// No arrangement of so few runs is rare enough for the level.
    TooFewRuns,
    /// The interval lies beyond the band, but a family's step-down stopped before this
    /// comparison.
    HeldByFamily,
    /// The interval lies beyond (or inside) the band only by its most extreme replicates: the
    /// p-value of a change (or of equivalence), extrapolated beyond the replicates'
    /// resolution, does not reach the level.
    Unresolved,
    /// The interval at the level of a change lies inside the band, but not the one at the
    /// family's stricter level of equivalence.
    NotInsideAtFamilyLevel,
    /// The interval overlaps an edge of the band.
    Overlaps,
}

/// What a verdict is decided from.
pub struct Evidence<'a> {
    pub reader: &'a Reader,
    pub method: Method,
    pub comparison: Comparison,
    pub sizes: Sizes,
    /// The statistic's name, for the reason.
    pub statistic: &'a str,
}

/// The p-value of a change of a comparison: the interval's inversion ([`p_change`]), but never
/// below the floor of what a distribution-free comparison of its runs can reach (the bootstrap
/// of a few runs has tails too short to claim more). B drawn replicates resolve a p-value only
/// down to 2/(B + 1); below that the tail is extrapolated ([`t_tail`]), so that a suite of
/// hundreds of benchmarks under Holm or Bonferroni can still claim a clear change without
/// millions of resamples. What a family's correction orders by.
pub fn p_value(e: &Evidence) -> f64 {
    resolved(e, p_change(e.reader, e.method, &e.comparison), false)
}

/// The smallest p-value B drawn replicates read by their quantiles resolve: 2/(B + 1), below
/// which an interval's tail holds less than one replicate and its endpoint is the extreme
/// replicate, not a quantile (an enumeration and the normal interval have no such limit).
fn resolution(e: &Evidence) -> f64 {
    let dist = &e.reader.dist;
    match e.method == Method::Normal || dist.is_exact() {
        true => 0.0,
        false => 2.0 / (dist.len() as f64 + 1.0),
    }
}

/// The two-sided tail of Student's t at the distance from the estimate to the nearer edge of
/// the band (outside it for a change, inside it for equivalence), in bootstrap standard
/// errors, with n₁ + n₂ − 2 degrees of freedom (n − 1 for pairs): the usual reference
/// distribution of a two-sample t statistic (common practice), and heavier-tailed than the
/// normal, so the extrapolation errs towards claiming less. 1 when the estimate is on the other
/// side of the edge.
fn t_tail(e: &Evidence, inside: bool) -> f64 {
    use statrs::distribution::{ContinuousCDF, StudentsT};
    let (lo, hi) = e.comparison.band();
    let (estimate, se) = (e.reader.estimate, e.reader.standard_error);
    let distance = match inside {
        false => (estimate - hi).max(lo - estimate),
        true => (estimate - lo).min(hi - estimate),
    };
    if distance <= 0.0 {
        return 1.0;
    }
    if se <= 0.0 {
        return 0.0;
    }
    let s = e.sizes;
    let df = match s.paired {
        true => s.baseline as f64 - 1.0,
        false => (s.baseline + s.candidate) as f64 - 2.0,
    };
    StudentsT::new(0.0, 1.0, df.max(1.0)).map_or(1.0, |t| 2.0 * t.sf(distance / se))
}

/// A p-value by inverting the interval, extrapolated by [`t_tail`] below the replicates'
/// resolution, and never below the floor of the runs.
fn resolved(e: &Evidence, inverted: f64, inside: bool) -> f64 {
    let resolution = resolution(e);
    let p = match inverted <= resolution {
        true => resolution.min(t_tail(e, inside)),
        false => inverted,
    };
    p.max(e.sizes.floor())
}

/// The p-value of equivalence: the smallest α at which the (1 − α) interval lies wholly
/// inside the band, resolved as [`p_value`] is.
pub fn equivalence_p_value(e: &Evidence) -> f64 {
    resolved(e, p_equivalence(e.reader, e.method, &e.comparison), true)
}

/// Decide a comparison at a reading.
pub fn decide(e: &Evidence, reading: Reading) -> Decision {
    let c = &e.comparison;
    let floor = e.sizes.floor();
    let change = e.reader.interval(e.method, reading.change_level);
    let equal = e.reader.interval(e.method, reading.equivalence_level);
    let (p, p_equal) = (p_value(e), equivalence_p_value(e));
    let (verdict, why, at_equivalence) = classify(c, (floor, p, p_equal), reading, &change, &equal);
    let (level, iv) = match at_equivalence {
        true => (reading.equivalence_level, equal),
        false => (reading.change_level, change),
    };
    let runs_needed = (verdict == Verdict::Inconclusive).then(|| runs_needed(e, level)).flatten();
    let mut d = Decision {
        verdict,
        method: e.method,
        level,
        lower: iv.lower,
        upper: iv.upper,
        band: c.band(),
        p_value: p,
        equivalence_p_value: p_equal,
        floor,
        runs_needed,
        why,
        reason: String::new(),
    };
    d.reason = reason(e, &d);
    d
}

/// The verdict, why, and whether it was read at the level of equivalence (else of a change),
/// given where the intervals at those levels lie and the floor and p-value of a change. Too
/// few runs come first: whatever the intervals say, they cannot be trusted then. A change is
/// claimed only when its p-value agrees (beyond the replicates' resolution the interval's
/// endpoints are extreme replicates, which may lie beyond the band when the p-value does not
/// reach the level).
fn classify(
    c: &Comparison,
    (floor, p, p_equal): (f64, f64, f64),
    reading: Reading,
    change: &Endpoints,
    equal: &Endpoints,
) -> (Verdict, Why, bool) {
    let enough = |level: f64| floor <= 1.0 - level;
    let (at_change, at_equal) = (c.side(change.lower, change.upper), c.side(equal.lower, equal.upper));
    let undecided = |why| (Verdict::Inconclusive, why, false);
    match at_change {
        Side::Worse | Side::Better if !enough(reading.change_level) => undecided(Why::TooFewRuns),
        Side::Worse | Side::Better if p > 1.0 - reading.change_level => undecided(Why::Unresolved),
        Side::Worse | Side::Better if !reading.change_allowed => undecided(Why::HeldByFamily),
        Side::Worse => (Verdict::Regression, Why::Beyond, false),
        Side::Better => (Verdict::Improvement, Why::Beyond, false),
        _ if at_equal == Side::Inside && enough(reading.equivalence_level) && p_equal <= 1.0 - reading.equivalence_level => {
            (Verdict::Equivalent, Why::Inside, true)
        }
        _ if at_equal == Side::Inside && enough(reading.equivalence_level) => (Verdict::Inconclusive, Why::Unresolved, true),
        _ if at_equal == Side::Inside || (at_change == Side::Inside && !enough(reading.equivalence_level)) => {
            (Verdict::Inconclusive, Why::TooFewRuns, true)
        }
        Side::Inside => (Verdict::Inconclusive, Why::NotInsideAtFamilyLevel, true),
        _ if !enough(reading.change_level) => undecided(Why::TooFewRuns),
        _ => undecided(Why::Overlaps),
    }
}

/// About how many runs per side would decide at `level`: with too few runs, at least enough
/// for the floor to pass 1 − level; with a tolerance, enough to make the interval as narrow
/// as the tolerance (z·ŝe(n′) = t, with ŝe² shrinking like 1/n at the effective size of the
/// design now), which tells a change of twice the tolerance from none. `None` when neither
/// applies, or more runs are not what is missing.
fn runs_needed(e: &Evidence, level: f64) -> Option<u64> {
    let now = e.sizes.effective_per_side();
    let for_floor = (e.sizes.floor() > 1.0 - level).then(|| e.sizes.runs_for_floor(1.0 - level));
    let t = e.comparison.tolerance;
    let se = e.reader.standard_error;
    let for_noise = (t > 0.0 && se > 0.0 && now > 0.0)
        .then(|| {
            let z = normal_dist::upper_quantile((1.0 - level) / 2.0);
            (now * (z * se / t).powi(2)).ceil()
        })
        .filter(|n| *n > now && n.is_finite())
        .map(|n| n.min(1e12) as u64);
    match (for_floor, for_noise) {
        (Some(a), Some(b)) => Some(a.max(b)),
        (a, b) => a.or(b),
    }
}

/// A number in a sentence: four significant digits, without trailing zeros.
pub fn num(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return x.to_string();
    }
    let digits = (3 - x.abs().log10().floor() as i32).clamp(0, 12) as usize;
    let s = format!("{x:.digits$}");
    match s.contains('.') {
        true => s.trim_end_matches('0').trim_end_matches('.').to_string(),
        false => s,
    }
}

/// The verdict in words, for a person reading a CI log.
fn reason(e: &Evidence, d: &Decision) -> String {
    let name = e.statistic.replace('_', " ");
    let what = match e.comparison.contrast {
        Contrast::Difference => format!("the candidate's {name} minus the baseline's"),
        Contrast::Ratio => format!("the candidate's {name} over the baseline's"),
    };
    let interval = format!(
        "its {}% {} interval [{}, {}]",
        num(100.0 * d.level),
        d.method,
        num(d.lower),
        num(d.upper)
    );
    let band = format!("the tolerance band [{}, {}]", num(d.band.0), num(d.band.1));
    let better = format!("{} is better", e.comparison.better);
    let head = format!("{what} is {}; {interval}", num(e.reader.estimate));
    let worse = match (d.lower > d.band.1, e.comparison.better) {
        (true, Better::Lower) | (false, Better::Higher) => "worse",
        _ => "better",
    };
    let unit = if e.sizes.paired { "pairs" } else { "runs per side" };
    let more = d.runs_needed.map_or(String::new(), |n| format!(" About {n} {unit} would decide."));
    match d.why {
        Why::Beyond => format!("{head} lies wholly beyond {band} on the {worse} side ({better})."),
        Why::Inside => format!("{head} lies wholly inside {band}: any change is within the tolerance."),
        Why::TooFewRuns => format!(
            "{head}, but {} no arrangement of the runs is rarer than {} (two-sided), so the data cannot decide at {}%.{more}",
            few_runs(e.sizes),
            num(d.floor),
            num(100.0 * d.level)
        ),
        Why::Unresolved => {
            let (side, p, claim) = match d.lower >= d.band.0 && d.upper <= d.band.1 {
                true => ("inside", d.equivalence_p_value, "equivalence"),
                false => ("beyond", d.p_value, "change"),
            };
            format!(
                "{head} lies {side} {band} only by its most extreme resamples: its p-value of {claim}, {} (Student's t beyond what the resamples resolve), is above the {} this level needs, so no {claim} is claimed. More runs or more resamples would decide.",
                num(p),
                num(1.0 - d.level)
            )
        }
        Why::HeldByFamily => format!(
            "{head} lies beyond {band} on the {worse} side ({better}), but Holm's step-down over the family stopped at a comparison with a smaller (or equal) p-value, so no change is claimed here (p = {}).",
            num(d.p_value)
        ),
        Why::NotInsideAtFamilyLevel => format!(
            "{head}, read at the family's level for equivalence, reaches beyond {band}, so equivalence is not shown and the data cannot tell yet.{more}"
        ),
        Why::Overlaps => format!("{head} overlaps {band}, so the data cannot tell yet.{more}"),
    }
}

/// The runs of a comparison, for a sentence about their floor.
pub fn few_runs(sizes: Sizes) -> String {
    match sizes.paired {
        true => format!("with {} pairs, whose signs can fall in 2^{} ways,", sizes.baseline, sizes.baseline),
        false => format!("with {} baseline and {} candidate runs,", sizes.baseline, sizes.candidate),
    }
}
