//! Pictures of a result: content negotiation (`Accept: image/svg+xml`), the presentation fields
//! of a request (`unit`, `format`), and the [`super::svg`] figure of a job that ran. The
//! picture reads the same replicate distribution, histogram and distribution function as
//! `include: ["histogram", "cdf"]` ([`crate::engine::extras`]), so both always agree.

use super::fields::{Picture, PictureFormat};
use super::job::Ran;
use super::svg::{self, Figure, Mark, Tolerance};
use super::{Drawn, JobFacts};
use crate::engine::extras;
use crate::engine::interval::Method;
use crate::engine::job::Contrast;
use crate::engine::summary::IntervalResult;
use crate::engine::verdict::Decision;

/// The media type of a picture.
pub const SVG: &str = "image/svg+xml";

/// One media range of an `Accept` header: its type, subtype and quality.
fn ranges(accept: &str) -> impl Iterator<Item = (String, String, f64)> + '_ {
    accept.split(',').filter_map(|part| {
        let mut pieces = part.split(';');
        let (ty, sub) = pieces.next()?.trim().split_once('/')?;
        let mut q = 1.0;
        for p in pieces {
            if let Some((k, v)) = p.split_once('=') {
                if k.trim().eq_ignore_ascii_case("q") {
                    q = v.trim().parse::<f64>().ok().filter(|q| (0.0..=1.0).contains(q))?;
                }
            }
        }
        Some((ty.trim().to_ascii_lowercase(), sub.trim().to_ascii_lowercase(), q))
    })
}

/// The quality an `Accept` header gives a media type: that of its most specific matching range
/// (RFC 9110 §12.5.1), 0 when none matches.
fn quality(accept: &str, media: &str) -> f64 {
    let (ty, sub) = media.split_once('/').expect("a media type");
    let mut best: Option<(u8, f64)> = None;
    for (t, s, q) in ranges(accept) {
        let specificity = match (t.as_str(), s.as_str()) {
            (t, s) if t == ty && s == sub => 3,
            (t, "*") if t == ty => 2,
            ("*", "*") => 1,
            _ => continue,
        };
        if best.is_none_or(|(b, bq)| specificity > b || (specificity == b && q > bq)) {
            best = Some((specificity, q));
        }
    }
    best.map_or(0.0, |(_, q)| q)
}

/// True when `Accept` prefers a picture to JSON: SVG strictly above JSON. A missing header, `*/*`
/// and a tie keep JSON.
pub fn prefers_svg(accept: Option<&str>) -> bool {
    accept.is_some_and(|a| quality(a, SVG) > quality(a, "application/json"))
}

/// The intervals worth drawing (finite endpoints), in the response's order.
fn marks(intervals: &[IntervalResult]) -> Vec<Mark> {
    intervals
        .iter()
        .filter(|r| r.endpoints.lower.is_finite() && r.endpoints.upper.is_finite())
        .map(|r| Mark {
            method: r.method.name(),
            level: r.level,
            lower: r.endpoints.lower,
            upper: r.endpoints.upper,
            tails: (r.method == Method::Percentile).then_some(r.endpoints.quantile_levels).flatten(),
        })
        .collect()
}

/// The figure of a job that ran, showing `what`.
fn figure(ran: &Ran, look: &Picture, what: String) -> Figure {
    let dist = &ran.outcome.reader.dist;
    Figure {
        what,
        estimate: ran.outcome.estimate,
        resamples: ran.outcome.resamples,
        marks: marks(&ran.outcome.intervals),
        histogram: extras::histogram(dist),
        cdf: extras::cdf(dist),
        unit: look.unit.as_ref().map(|u| u.0.clone()),
        tolerance: None,
    }
}

/// The picture of a figure in the format asked for, with its log facts.
fn draw(f: &Figure, look: &Picture, ran: &Ran) -> Drawn {
    let svg = match look.format {
        PictureFormat::Full => svg::full::render(f),
        PictureFormat::Band => svg::band::render(f),
    };
    Drawn {
        svg,
        facts: JobFacts {
            rows: ran.sizes.iter().sum(),
            resamples: ran.outcome.resamples,
            statistic: ran.params.statistic.name().to_string(),
            jobs: 1,
        },
    }
}

/// The picture of an interval job that ran.
pub fn interval(ran: &Ran, look: &Picture) -> Drawn {
    let f = figure(ran, look, format!("the {}", ran.params.statistic.name()));
    draw(&f, look, ran)
}

/// The picture of a comparison that ran, with its decision's band and verdict.
pub fn compare(ran: &Ran, d: &Decision, look: &Picture) -> Drawn {
    let c = ran.comparing.expect("a comparison");
    let sign = if c.contrast == Contrast::Ratio { "/" } else { "−" };
    let what = format!(
        "the {} of the {} (candidate {sign} baseline)",
        c.contrast,
        ran.params.statistic.name()
    );
    let mut f = figure(ran, look, what);
    // A ratio has no unit: the candidate's milliseconds over the baseline's.
    if c.contrast == Contrast::Ratio {
        f.unit = None;
    }
    f.tolerance = Some(Tolerance {
        lower: d.band.0,
        upper: d.band.1,
        verdict: d.verdict.name(),
        reason: d.reason.clone(),
        read_from: format!("the {} {} interval", svg::percent(d.level), d.method),
    });
    draw(&f, look, ran)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn accept_prefers_svg_only_when_it_ranks_above_json() {
        for (accept, svg) in [
            ("image/svg+xml", true),
            ("image/*", true),
            ("image/svg+xml, application/json;q=0.9", true),
            ("application/json, image/svg+xml;q=0.9", false),
            ("image/svg+xml;q=0.5, application/json;q=0.8", false),
            ("*/*", false),
            ("application/json", false),
            ("image/svg+xml, */*", false),
            ("image/svg+xml, */*;q=0.1", true),
            ("IMAGE/SVG+XML", true),
            ("text/html", false),
            ("image/svg+xml;q=0", false),
            ("image/svg+xml;q=oops", false),
        ] {
            assert_eq!(prefers_svg(Some(accept)), svg, "{accept}");
        }
        assert!(!prefers_svg(None));
    }
}
