//! The full picture: the replicate histogram with the estimate and every interval marked, over
//! the empirical cumulative curve of the replicates with the percentile endpoints read off it.

use std::fmt::Write;

use super::{colour, esc, percent, Figure, Scale};

const WIDTH: f64 = 720.0;
/// The plot area's horizontal extent; the legend and the rows' labels sit to its right.
const LEFT: f64 = 64.0;
const RIGHT: f64 = 540.0;
const HIST_HEIGHT: f64 = 170.0;
const ROW: f64 = 14.0;
const CDF_HEIGHT: f64 = 150.0;
/// About this many steps along the value axis.
const TICKS: usize = 6;

/// Where the parts of the picture sit, top to bottom.
struct Layout {
    hist_top: f64,
    hist_bottom: f64,
    rows_bottom: f64,
    axis: f64,
    cdf_top: f64,
    cdf_bottom: f64,
    height: f64,
}

fn layout(f: &Figure) -> Layout {
    let hist_top = if f.tolerance.is_some() { 76.0 } else { 60.0 };
    let hist_bottom = hist_top + HIST_HEIGHT;
    let rows_bottom = hist_bottom + 8.0 + ROW * f.marks.len() as f64;
    let axis = rows_bottom + 4.0;
    let cdf_top = axis + 64.0;
    let cdf_bottom = cdf_top + CDF_HEIGHT;
    Layout {
        hist_top,
        hist_bottom,
        rows_bottom,
        axis,
        cdf_top,
        cdf_bottom,
        height: cdf_bottom + 46.0,
    }
}

/// The picture as an SVG document.
pub fn render(f: &Figure) -> String {
    let l = layout(f);
    let (s, t) = super::axis(f, LEFT, RIGHT, TICKS);
    let mut out = String::with_capacity(32 * 1024);
    super::open(&mut out, WIDTH, l.height, &super::title(f), &super::description(f));
    headings(&mut out, f, &l);
    super::plot_open(&mut out, &s);
    if let Some(tol) = &f.tolerance {
        super::tolerance_band(&mut out, &s, tol, l.hist_top, l.rows_bottom);
    }
    histogram(&mut out, f, &s, &l);
    intervals(&mut out, f, &s, &l);
    let _ = write!(
        out,
        "<line class=\"estimate\" x1=\"{x:.2}\" x2=\"{x:.2}\" y1=\"{:.2}\" y2=\"{:.2}\" stroke=\"{}\" stroke-width=\"2\"/>",
        l.hist_top,
        l.rows_bottom,
        colour::INK,
        x = s.x(f.estimate)
    );
    super::x_ticks(&mut out, &s, &t, l.axis, 11.0);
    out.push_str("</g>");
    caption(&mut out, f, l.axis + 36.0);
    super::plot_open(&mut out, &s);
    cdf(&mut out, f, &s, &l);
    super::x_ticks(&mut out, &s, &t, l.cdf_bottom, 11.0);
    out.push_str("</g>");
    caption(&mut out, f, l.cdf_bottom + 36.0);
    legend(&mut out, f, l.hist_top);
    out.push_str("</svg>");
    out
}

fn text(out: &mut String, x: f64, y: f64, size: f64, extra: &str, content: &str) {
    let _ = write!(
        out,
        "<text x=\"{x:.2}\" y=\"{y:.2}\" font-size=\"{size}\" fill=\"{}\"{extra}>{}</text>",
        colour::INK,
        esc(content)
    );
}

/// The title, a comparison's verdict, and each panel's heading.
fn headings(out: &mut String, f: &Figure, l: &Layout) {
    // From the picture's left edge: a comparison's title runs to about 90 characters.
    text(out, 16.0, 24.0, 13.0, " font-weight=\"bold\"", &super::title(f));
    if let Some(t) = &f.tolerance {
        let verdict = format!("Verdict: {} (read from {}; shaded: the band of no change)", t.verdict, t.read_from);
        let _ = write!(
            out,
            "<text class=\"verdict\" x=\"16\" y=\"44\" font-size=\"12\" font-weight=\"bold\" fill=\"{}\">{}</text>",
            colour::INK,
            esc(&verdict)
        );
    }
    text(out, LEFT, l.hist_top - 8.0, 12.0, "", "Replicates (histogram) and intervals");
    text(
        out,
        LEFT,
        l.cdf_top - 10.0,
        12.0,
        "",
        "Cumulative share of replicates, percentile endpoints read off",
    );
}

/// The x axis's caption: what the values are, with the unit.
fn caption(out: &mut String, f: &Figure, y: f64) {
    let words = match &f.unit {
        Some(u) => format!("{} ({u})", f.what),
        None => f.what.clone(),
    };
    let _ = write!(
        out,
        "<text class=\"unit\" x=\"{:.2}\" y=\"{y:.2}\" font-size=\"12\" text-anchor=\"middle\" fill=\"{}\">{}</text>",
        (LEFT + RIGHT) / 2.0,
        colour::INK,
        esc(&words)
    );
}

/// One bar per bin, its height the bin's share of the replicates.
fn histogram(out: &mut String, f: &Figure, s: &Scale, l: &Layout) {
    let h = &f.histogram;
    let top = h.mass.iter().copied().fold(0.0, f64::max);
    if top <= 0.0 {
        return;
    }
    for (k, m) in h.mass.iter().enumerate() {
        let (x0, x1) = (s.x(h.edges[k]), s.x(h.edges[k + 1]));
        let height = m / top * (HIST_HEIGHT - 6.0);
        let _ = write!(
            out,
            "<rect class=\"bar\" x=\"{x0:.2}\" y=\"{:.2}\" width=\"{:.2}\" height=\"{height:.2}\" fill=\"{}\" fill-opacity=\"0.75\" stroke=\"#FFFFFF\" stroke-width=\"0.5\"/>",
            l.hist_bottom - height,
            (x1 - x0).max(0.5),
            colour::BARS
        );
    }
    let _ = write!(
        out,
        "<line x1=\"{LEFT}\" x2=\"{RIGHT}\" y1=\"{y}\" y2=\"{y}\" stroke=\"{}\"/>",
        colour::GRID,
        y = l.hist_bottom
    );
}

/// One row per interval under the histogram: a bar from its lower to its upper endpoint with
/// end caps, labelled to the right of the plot.
fn intervals(out: &mut String, f: &Figure, s: &Scale, l: &Layout) {
    for (i, m) in f.marks.iter().enumerate() {
        let y = l.hist_bottom + 8.0 + ROW * (i as f64 + 0.5);
        let (x0, x1) = (s.x(m.lower), s.x(m.upper));
        let c = colour::method(m.method);
        let _ = write!(
            out,
            "<g class=\"interval\" data-method=\"{}\" data-level=\"{}\" data-lower=\"{}\" data-upper=\"{}\">\
<line x1=\"{x0:.2}\" x2=\"{x1:.2}\" y1=\"{y:.2}\" y2=\"{y:.2}\" stroke=\"{c}\" stroke-width=\"4\"/>\
<line x1=\"{x0:.2}\" x2=\"{x0:.2}\" y1=\"{:.2}\" y2=\"{:.2}\" stroke=\"{c}\" stroke-width=\"1.5\"/>\
<line x1=\"{x1:.2}\" x2=\"{x1:.2}\" y1=\"{:.2}\" y2=\"{:.2}\" stroke=\"{c}\" stroke-width=\"1.5\"/>",
            m.method,
            m.level,
            m.lower,
            m.upper,
            y - 5.0,
            y + 5.0,
            y - 5.0,
            y + 5.0
        );
        text(out, RIGHT + 8.0, y + 4.0, 11.0, "", &format!("{} {}", percent(m.level), m.method));
        out.push_str("</g>");
    }
}

/// The empirical cumulative curve as steps, the share axis, and dashed guides from each
/// percentile endpoint's tail probability across to the curve and down to the axis.
fn cdf(out: &mut String, f: &Figure, s: &Scale, l: &Layout) {
    let y = |p: f64| l.cdf_bottom - p * CDF_HEIGHT;
    for p in [0.0, 0.25, 0.5, 0.75, 1.0] {
        let _ = write!(
            out,
            "<line class=\"grid\" x1=\"{LEFT}\" x2=\"{RIGHT}\" y1=\"{yp:.2}\" y2=\"{yp:.2}\" stroke=\"{}\"/>\
<text x=\"{:.2}\" y=\"{:.2}\" font-size=\"11\" text-anchor=\"end\" fill=\"{}\">{}</text>",
            colour::GRID,
            LEFT - 6.0,
            y(p) + 4.0,
            colour::INK,
            p,
            yp = y(p)
        );
    }
    let mut points = format!("{:.2},{:.2}", s.left, y(0.0));
    let mut last = 0.0;
    for (v, p) in f.cdf.values.iter().zip(&f.cdf.probabilities) {
        let x = s.x(*v);
        let _ = write!(points, " {x:.2},{:.2} {x:.2},{:.2}", y(last), y(*p));
        last = *p;
    }
    let _ = write!(points, " {:.2},{:.2}", s.right, y(last));
    let _ = write!(
        out,
        "<polyline class=\"cdf\" points=\"{points}\" fill=\"none\" stroke=\"{}\" stroke-width=\"1.5\"/>",
        colour::CURVE
    );
    for m in f.marks.iter().filter(|m| m.method == "percentile") {
        let Some((p_low, p_high)) = m.tails else { continue };
        for (p, v) in [(p_low, m.lower), (p_high, m.upper)] {
            let _ = write!(
                out,
                "<polyline class=\"guide\" data-probability=\"{p}\" data-value=\"{v}\" points=\"{LEFT},{yp:.2} {x:.2},{yp:.2} {x:.2},{:.2}\" fill=\"none\" stroke=\"{}\" stroke-dasharray=\"4 3\"/>",
                l.cdf_bottom,
                colour::method(m.method),
                yp = y(p),
                x = s.x(v)
            );
        }
    }
}

/// One legend entry: a swatch (`rect`, `line` or `dash`) and its words.
fn entry(out: &mut String, y: f64, swatch: &str, c: &str, words: &str) {
    let x = RIGHT + 24.0;
    let _ = match swatch {
        "rect" => write!(
            out,
            "<rect x=\"{x}\" y=\"{:.2}\" width=\"18\" height=\"10\" fill=\"{c}\" fill-opacity=\"0.75\"/>",
            y - 9.0
        ),
        "dash" => write!(
            out,
            "<line x1=\"{x}\" x2=\"{:.2}\" y1=\"{:.2}\" y2=\"{:.2}\" stroke=\"{c}\" stroke-width=\"1.5\" stroke-dasharray=\"4 3\"/>",
            x + 18.0,
            y - 4.0,
            y - 4.0
        ),
        _ => write!(
            out,
            "<line x1=\"{x}\" x2=\"{:.2}\" y1=\"{:.2}\" y2=\"{:.2}\" stroke=\"{c}\" stroke-width=\"3\"/>",
            x + 18.0,
            y - 4.0,
            y - 4.0
        ),
    };
    text(out, x + 24.0, y, 11.0, "", words);
}

/// What each colour and line means.
fn legend(out: &mut String, f: &Figure, top: f64) {
    out.push_str("<g class=\"legend\">");
    let mut items: Vec<(&str, &str, String)> = vec![
        ("rect", colour::BARS, "replicates".into()),
        ("line", colour::INK, "estimate".into()),
    ];
    let mut methods: Vec<&str> = Vec::new();
    for m in &f.marks {
        if !methods.contains(&m.method) {
            methods.push(m.method);
        }
    }
    items.extend(methods.into_iter().map(|m| ("line", colour::method(m), format!("{m} interval"))));
    if f.tolerance.is_some() {
        items.push(("rect", colour::BAND, "no change".into()));
    }
    items.push(("line", colour::CURVE, "cumulative share".into()));
    if f.marks.iter().any(|m| m.method == "percentile" && m.tails.is_some()) {
        items.push(("dash", colour::method("percentile"), "tail probabilities".into()));
    }
    for (i, (swatch, c, words)) in items.iter().enumerate() {
        entry(out, top + 10.0 + 17.0 * i as f64, swatch, c, words);
    }
    out.push_str("</g>");
}
