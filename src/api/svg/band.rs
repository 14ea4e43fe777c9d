//! The band picture: a sparkline-sized tile (about 240 × 48) for a dashboard. One axis, the
//! estimate as a dot, and each method's intervals as nested bars in a row of its own: the
//! lowest level thickest, so that the wider intervals show as thinner whiskers around it.

use std::fmt::Write;

use super::{colour, Figure, Scale};

const WIDTH: f64 = 240.0;
const HEIGHT: f64 = 48.0;
const MARGIN: f64 = 10.0;
/// The rows of bars sit between these heights; the axis below them.
const ROWS_TOP: f64 = 3.0;
const ROWS_BOTTOM: f64 = 30.0;
const AXIS: f64 = 33.0;
const FONT_SIZE: f64 = 8.0;

/// The picture as an SVG document.
pub fn render(f: &Figure) -> String {
    // A unit's label takes room at the right end of the axis (about half the font size a letter).
    let unit_room = f.unit.as_ref().map_or(0.0, |u| u.chars().count() as f64 * FONT_SIZE * 0.55 + 6.0);
    let (s, t) = super::axis(f, MARGIN, WIDTH - MARGIN - unit_room, 3);
    let mut out = String::with_capacity(4096);
    super::open(&mut out, WIDTH, HEIGHT, &super::title(f), &super::description(f));
    super::plot_open(&mut out, &s);
    if let Some(tol) = &f.tolerance {
        super::tolerance_band(&mut out, &s, tol, ROWS_TOP, ROWS_BOTTOM);
    }
    bars(&mut out, f, &s);
    let _ = write!(
        out,
        "<circle class=\"estimate\" cx=\"{:.2}\" cy=\"{:.2}\" r=\"3\" fill=\"{}\" stroke=\"#FFFFFF\" stroke-width=\"1\"/>",
        s.x(f.estimate),
        (ROWS_TOP + ROWS_BOTTOM) / 2.0,
        colour::INK
    );
    super::x_ticks(&mut out, &s, &t, AXIS, FONT_SIZE);
    out.push_str("</g>");
    if let Some(u) = &f.unit {
        let _ = write!(
            out,
            "<text class=\"unit\" x=\"{:.2}\" y=\"{:.2}\" font-size=\"{FONT_SIZE}\" text-anchor=\"end\" fill=\"{}\">{}</text>",
            WIDTH - 4.0,
            AXIS + 5.0 + FONT_SIZE,
            colour::INK,
            super::esc(u)
        );
    }
    out.push_str("</svg>");
    out
}

/// Each method's row, its levels nested: the lowest level thickest.
fn bars(out: &mut String, f: &Figure, s: &Scale) {
    let mut methods: Vec<&str> = Vec::new();
    for m in &f.marks {
        if !methods.contains(&m.method) {
            methods.push(m.method);
        }
    }
    let row = (ROWS_BOTTOM - ROWS_TOP) / methods.len().max(1) as f64;
    // Widest level first, so that the thicker bars of lower levels are drawn over it.
    let mut order: Vec<&super::Mark> = f.marks.iter().collect();
    order.sort_by(|a, b| b.level.total_cmp(&a.level));
    for m in order {
        let r = methods.iter().position(|x| *x == m.method).unwrap_or(0);
        let y = ROWS_TOP + row * (r as f64 + 0.5);
        // The rank of this level among its method's, 0 for the lowest.
        let rank = f.marks.iter().filter(|o| o.method == m.method && o.level < m.level).count();
        let thickness = ((row - 2.0).clamp(2.0, 8.0) / (1.0 + rank as f64)).max(1.0);
        let _ = write!(
            out,
            "<g class=\"interval\" data-method=\"{}\" data-level=\"{}\" data-lower=\"{}\" data-upper=\"{}\">\
<line x1=\"{:.2}\" x2=\"{:.2}\" y1=\"{y:.2}\" y2=\"{y:.2}\" stroke=\"{}\" stroke-width=\"{thickness:.2}\" stroke-opacity=\"0.85\"/></g>",
            m.method,
            m.level,
            m.lower,
            m.upper,
            s.x(m.lower),
            s.x(m.upper),
            colour::method(m.method)
        );
    }
}
