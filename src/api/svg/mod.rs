//! SVG pictures of a replicate distribution, for `Accept: image/svg+xml`.
//!
//! A picture is drawn from plain numbers ([`Figure`]) and is self-contained: no script, no
//! external fonts, links, images or `url(...)` references, every piece of text XML-escaped. The
//! marks carry a stable hook for tests and readers (documented in docs/api.md):
//!
//! - each interval is a `<g class="interval">` with `data-method`, `data-level`, `data-lower`
//!   and `data-upper`; its first `<line>` spans the lower to the upper endpoint;
//! - the estimate is the element of class `estimate` (a `<line>` at `x1`, or a dot at `cx`);
//! - a comparison's tolerance band is the `<rect class="tolerance">` with `data-lower` and
//!   `data-upper`;
//! - each axis tick is a `<g class="tick">` holding its `<line>` (at `x1`) and its label;
//! - each plot area is a `<g class="plot">` with `data-min` and `data-max`, the values at its
//!   left and right edges.

pub mod band;
pub mod full;
pub mod ticks;

use std::fmt::Write;

use crate::engine::extras::{Cdf, Histogram};

/// The colours, from the palette of Okabe & Ito (2008, "Color Universal Design"), chosen because
/// its hues stay apart under the common colour-vision deficiencies (protanopia, deuteranopia,
/// tritanopia) and differ in lightness too, so that a greyscale print still tells them apart.
/// Methods keep their colour across pictures; the estimate is black.
pub mod colour {
    /// The replicate histogram: sky blue, light enough that marks drawn over it stand out.
    pub const BARS: &str = "#56B4E9";
    /// The estimate, the axes and the text.
    pub const INK: &str = "#000000";
    /// Grid lines and the CDF's curve.
    pub const GRID: &str = "#D9D9D9";
    pub const CURVE: &str = "#555555";
    /// A comparison's tolerance band: yellow, behind everything.
    pub const BAND: &str = "#F0E442";

    /// An interval method's colour: percentile blue, BCa vermillion, basic bluish green, normal
    /// reddish purple, studentized orange.
    pub fn method(name: &str) -> &'static str {
        match name {
            "percentile" => "#0072B2",
            "bca" => "#D55E00",
            "basic" => "#009E73",
            "normal" => "#CC79A7",
            _ => "#E69F00",
        }
    }
}

/// The font of every text: the reader's own sans-serif (no font is fetched).
pub const FONT: &str = "font-family=\"sans-serif\"";

/// One interval to mark.
#[derive(Debug, Clone)]
pub struct Mark {
    pub method: &'static str,
    pub level: f64,
    pub lower: f64,
    pub upper: f64,
    /// For the percentile interval: the replicate quantile levels its endpoints were read at.
    pub tails: Option<(f64, f64)>,
}

/// A comparison's band of no change and its verdict.
#[derive(Debug, Clone)]
pub struct Tolerance {
    pub lower: f64,
    pub upper: f64,
    pub verdict: &'static str,
    /// The verdict in words (for the description).
    pub reason: String,
    /// Which interval the verdict was read from ("the 95% bca interval").
    pub read_from: String,
}

/// Everything a picture shows.
#[derive(Debug, Clone)]
pub struct Figure {
    /// What the replicates are of ("the mean", "the ratio of the median, candidate / baseline").
    pub what: String,
    pub estimate: f64,
    pub resamples: u64,
    pub marks: Vec<Mark>,
    pub histogram: Histogram,
    pub cdf: Cdf,
    pub unit: Option<String>,
    pub tolerance: Option<Tolerance>,
}

/// XML-escaped text, for element content and attribute values alike.
pub fn esc(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// A number for a person: four significant figures, or scientific notation when very large or
/// very small.
pub fn words(x: f64) -> String {
    if x == 0.0 {
        return "0".into();
    }
    if !(1e-4..1e7).contains(&x.abs()) {
        return format!("{x:.3e}");
    }
    let digits = (3.0 - x.abs().log10().floor()).clamp(0.0, 8.0) as usize;
    let s = format!("{x:.digits$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A number with its unit, for text.
pub fn with_unit(x: f64, unit: Option<&str>) -> String {
    match unit {
        Some(u) => format!("{} {u}", words(x)),
        None => words(x),
    }
}

/// A level as a percentage ("95%", "99.9%").
pub fn percent(level: f64) -> String {
    format!("{}%", words(level * 100.0))
}

/// The linear map from values to horizontal pixels.
#[derive(Debug, Clone, Copy)]
pub struct Scale {
    pub min: f64,
    pub max: f64,
    pub left: f64,
    pub right: f64,
}

impl Scale {
    pub fn x(&self, v: f64) -> f64 {
        self.left + (v - self.min) / (self.max - self.min) * (self.right - self.left)
    }
}

/// The values a picture's axis must show: the replicates' range, the estimate, every finite
/// interval endpoint and the tolerance band.
pub fn extent(f: &Figure) -> (f64, f64) {
    let h = &f.histogram.edges;
    let ends = f.marks.iter().flat_map(|m| [m.lower, m.upper]);
    let band = f.tolerance.iter().flat_map(|t| [t.lower, t.upper]);
    let all = [h[0], h[h.len() - 1], f.estimate].into_iter().chain(ends).chain(band);
    let (lo, hi) = all
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| (lo.min(v), hi.max(v)));
    if hi > lo {
        (lo, hi)
    } else {
        // One value: a small window around it.
        let pad = if lo == 0.0 { 1.0 } else { lo.abs() * 0.05 };
        (lo - pad, hi + pad)
    }
}

/// The opening tag with the accessible name and description, the title stating what is shown.
pub fn open(out: &mut String, width: f64, height: f64, title: &str, desc: &str) {
    let _ = write!(
        out,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width}\" height=\"{height}\" viewBox=\"0 0 {width} {height}\" role=\"img\" aria-labelledby=\"bandsaw-title bandsaw-desc\" {FONT}>\
<title id=\"bandsaw-title\">{}</title><desc id=\"bandsaw-desc\">{}</desc>\
<rect class=\"background\" x=\"0\" y=\"0\" width=\"{width}\" height=\"{height}\" fill=\"#FFFFFF\"/>",
        esc(title),
        esc(desc)
    );
}

/// The title: what the picture is of, and the estimate.
pub fn title(f: &Figure) -> String {
    let unit = f.unit.as_deref();
    format!("Bootstrap distribution of {}: estimate {}", f.what, with_unit(f.estimate, unit))
}

/// The description for screen readers: the estimate, each interval, and a comparison's verdict.
pub fn description(f: &Figure) -> String {
    let unit = f.unit.as_deref();
    let mut out = format!(
        "{} resamples of {}. The estimate is {}.",
        f.resamples,
        f.what,
        with_unit(f.estimate, unit)
    );
    for m in &f.marks {
        let _ = write!(
            out,
            " The {} {} interval runs from {} to {}.",
            percent(m.level),
            m.method,
            with_unit(m.lower, unit),
            with_unit(m.upper, unit)
        );
    }
    if let Some(t) = &f.tolerance {
        let _ = write!(
            out,
            " The band of no change runs from {} to {}. Verdict: {}, read from {}: {}",
            words(t.lower),
            words(t.upper),
            t.verdict,
            t.read_from,
            t.reason
        );
    }
    out
}

/// The plot area's group, carrying its mapping.
pub fn plot_open(out: &mut String, s: &Scale) {
    let _ = write!(out, "<g class=\"plot\" data-min=\"{}\" data-max=\"{}\">", s.min, s.max);
}

/// Ticks along a horizontal axis at `y`, with labels below them.
pub fn x_ticks(out: &mut String, s: &Scale, t: &ticks::Ticks, y: f64, font_size: f64) {
    let _ = write!(
        out,
        "<line class=\"axis\" x1=\"{:.2}\" x2=\"{:.2}\" y1=\"{y}\" y2=\"{y}\" stroke=\"{}\"/>",
        s.left,
        s.right,
        colour::INK
    );
    for (v, label) in t.values.iter().zip(t.labels()) {
        let x = s.x(*v);
        let _ = write!(
            out,
            "<g class=\"tick\" data-value=\"{v}\"><line x1=\"{x:.2}\" x2=\"{x:.2}\" y1=\"{y}\" y2=\"{:.2}\" stroke=\"{}\"/>\
<text x=\"{x:.2}\" y=\"{:.2}\" font-size=\"{font_size}\" text-anchor=\"middle\" fill=\"{}\">{}</text></g>",
            y + 4.0,
            colour::INK,
            y + 5.0 + font_size,
            colour::INK,
            esc(&label)
        );
    }
}

/// A comparison's tolerance band, shaded over `[top, bottom]`; a band narrower than a pixel
/// (no tolerance) is also drawn as a dashed line so that it can be seen.
pub fn tolerance_band(out: &mut String, s: &Scale, t: &Tolerance, top: f64, bottom: f64) {
    let (x0, x1) = (s.x(t.lower), s.x(t.upper));
    let _ = write!(
        out,
        "<rect class=\"tolerance\" data-lower=\"{}\" data-upper=\"{}\" x=\"{x0:.2}\" y=\"{top:.2}\" width=\"{:.2}\" height=\"{:.2}\" fill=\"{}\" fill-opacity=\"0.45\"/>",
        t.lower,
        t.upper,
        x1 - x0,
        bottom - top,
        colour::BAND
    );
    if x1 - x0 < 1.0 {
        let _ = write!(
            out,
            "<line class=\"no-change\" x1=\"{x0:.2}\" x2=\"{x0:.2}\" y1=\"{top:.2}\" y2=\"{bottom:.2}\" stroke=\"#8A7F00\" stroke-dasharray=\"2 2\"/>"
        );
    }
}

/// The marks in order, the scale of the axis, and its ticks, for a plot from `left` to `right`.
pub fn axis(f: &Figure, left: f64, right: f64, target: usize) -> (Scale, ticks::Ticks) {
    let (lo, hi) = extent(f);
    let t = ticks::covering(lo, hi, target);
    let s = Scale {
        min: t.first(),
        max: t.last(),
        left,
        right,
    };
    (s, t)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_is_escaped() {
        assert_eq!(esc("<ms> & \"q\" 'x'"), "&lt;ms&gt; &amp; &quot;q&quot; &#39;x&#39;");
    }

    #[test]
    fn numbers_read_as_four_figures() {
        assert_eq!(words(12.3456), "12.35");
        assert_eq!(words(0.0012346), "0.001235");
        assert_eq!(words(1200.0), "1200");
        assert_eq!(words(-3.5), "-3.5");
        assert_eq!(percent(0.95), "95%");
        assert_eq!(words(2.5e9), "2.500e9");
    }
}
