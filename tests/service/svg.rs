//! Pictures: `Accept: image/svg+xml` on `POST /v1/interval` and `POST /v1/compare`. The SVG is
//! well-formed XML, self-contained (no script, no event handlers, nothing fetched), named and
//! described for screen readers; and every mark sits where its number says. The value → x map
//! is read back from two axis ticks (their printed labels and their positions, not the
//! `data-` attributes), then each interval's ends, the estimate and a tolerance band's edges
//! are checked against the JSON response of the same request to within half a pixel.

use std::collections::BTreeMap;

use quick_xml::events::Event;
use serde_json::{json, Value};

use crate::common::{ok, problem, without_timing, TestApp};

const SVG: &str = "image/svg+xml";

/// Invented checkout latencies (ms) of a fictional shop, with a slow tail.
const CHECKOUT_MS: [f64; 30] = [
    212.0, 187.0, 240.0, 198.0, 305.0, 221.0, 189.0, 260.0, 233.0, 199.0, 412.0, 208.0, 226.0, 195.0, 251.0, 230.0, 217.0, 288.0, 203.0,
    244.0, 219.0, 197.0, 265.0, 236.0, 210.0, 348.0, 225.0, 201.0, 239.0, 214.0,
];

fn interval_request() -> Value {
    json!({
        "data": CHECKOUT_MS,
        "statistic": "mean",
        "methods": ["percentile", "bca", "normal"],
        "levels": [0.9, 0.95],
        "resamples": 2000,
        "seed": 20261202
    })
}

fn compare_request() -> Value {
    json!({
        "baseline": [100.2, 101.5, 99.8, 100.9, 100.4, 101.1, 99.6, 100.7],
        "candidate": [105.1, 106.0, 104.2, 105.8, 104.9, 106.3, 105.0, 104.6],
        "tolerance": 0.02,
        "resamples": 2000,
        "seed": 7
    })
}

/// An element of the picture: its name, attributes (unescaped), text and children.
#[derive(Debug, Default, Clone)]
struct Node {
    name: String,
    attrs: BTreeMap<String, String>,
    text: String,
    children: Vec<Node>,
}

impl Node {
    fn attr(&self, k: &str) -> &str {
        self.attrs
            .get(k)
            .unwrap_or_else(|| panic!("<{}> has no {k}: {:?}", self.name, self.attrs))
    }

    fn num(&self, k: &str) -> f64 {
        self.attr(k)
            .parse()
            .unwrap_or_else(|_| panic!("{k}={:?} is a number", self.attr(k)))
    }

    fn has_class(&self, c: &str) -> bool {
        self.attrs.get("class").is_some_and(|v| v.split(' ').any(|x| x == c))
    }

    /// Every element below this one, depth first.
    fn all(&self) -> Vec<&Node> {
        let mut out = Vec::new();
        for c in &self.children {
            out.push(c);
            out.extend(c.all());
        }
        out
    }

    fn with_class(&self, c: &str) -> Vec<&Node> {
        self.all().into_iter().filter(|n| n.has_class(c)).collect()
    }

    fn first(&self, name: &str) -> &Node {
        self.children
            .iter()
            .find(|n| n.name == name)
            .unwrap_or_else(|| panic!("<{}> holds a <{name}>", self.name))
    }

    /// All text within, entities resolved.
    fn all_text(&self) -> String {
        let mut s = self.text.clone();
        for c in &self.children {
            s.push_str(&c.all_text());
        }
        s
    }
}

fn element(e: &quick_xml::events::BytesStart) -> Node {
    let mut n = Node {
        name: e.name().0.to_string(),
        ..Node::default()
    };
    for a in e.attributes() {
        let a = a.expect("a well-formed attribute");
        n.attrs.insert(
            a.key.0.to_string(),
            a.normalized_value(quick_xml::XmlVersion::Implicit1_0)
                .expect("an escaped value")
                .into_owned(),
        );
    }
    n
}

/// Parse the picture as XML (panicking on anything malformed) into its root element.
fn parse(svg: &str) -> Node {
    let mut reader = quick_xml::Reader::from_str(svg);
    let mut stack = vec![Node::default()];
    loop {
        match reader.read_event().expect("well-formed XML") {
            Event::Start(e) => stack.push(element(&e)),
            Event::Empty(e) => stack.last_mut().unwrap().children.push(element(&e)),
            Event::End(_) => {
                let done = stack.pop().unwrap();
                stack.last_mut().expect("balanced tags").children.push(done);
            }
            Event::Text(t) => stack.last_mut().unwrap().text.push_str(&t.into_inner()),
            Event::GeneralRef(r) => {
                let c = match r.into_inner().as_ref() {
                    "lt" => "<".to_string(),
                    "gt" => ">".into(),
                    "amp" => "&".into(),
                    "quot" => "\"".into(),
                    "apos" => "'".into(),
                    other => {
                        let code = other.strip_prefix("#").expect("only numeric references beside the five");
                        char::from_u32(code.parse().expect("a decimal reference")).unwrap().to_string()
                    }
                };
                stack.last_mut().unwrap().text.push_str(&c);
            }
            Event::Eof => break,
            Event::Decl(_) | Event::Comment(_) => {}
            other => panic!("unexpected XML: {other:?}"),
        }
    }
    assert_eq!(stack.len(), 1, "every element closed");
    let mut top = stack.pop().unwrap().children;
    assert_eq!(top.len(), 1, "one root element");
    let root = top.pop().unwrap();
    assert_eq!(root.name, "svg");
    root
}

/// The value → x map of a plot area, read from its first and last tick: the label as printed
/// and the tick line's position. Every other tick must sit on the same line.
fn axis_map(plot: &Node) -> impl Fn(f64) -> f64 {
    let ticks: Vec<(f64, f64)> = plot
        .with_class("tick")
        .iter()
        .map(|t| {
            let label = t.first("text").all_text();
            (
                label.trim().parse::<f64>().unwrap_or_else(|_| panic!("tick label {label:?}")),
                t.first("line").num("x1"),
            )
        })
        .collect();
    assert!(ticks.len() >= 2, "at least two ticks: {ticks:?}");
    let ((v0, x0), (v1, x1)) = (ticks[0], ticks[ticks.len() - 1]);
    assert!(v1 > v0 && x1 > x0, "values grow to the right: {ticks:?}");
    let map = move |v: f64| x0 + (v - v0) / (v1 - v0) * (x1 - x0);
    for (v, x) in &ticks {
        assert!((map(*v) - x).abs() <= 0.5, "tick {v} at {x}, the line says {}", map(*v));
    }
    map
}

/// Check every interval of a JSON result against its mark in the plot, and the estimate.
fn marks_agree(plot: &Node, result: &Value, estimate: f64) {
    let map = axis_map(plot);
    let marks = plot.with_class("interval");
    let intervals = result["intervals"].as_array().expect("intervals");
    assert_eq!(marks.len(), intervals.len(), "one mark per interval");
    for iv in intervals {
        let (method, level) = (iv["method"].as_str().unwrap(), iv["level"].as_f64().unwrap());
        let (lower, upper) = (iv["lower"].as_f64().unwrap(), iv["upper"].as_f64().unwrap());
        let mark = marks
            .iter()
            .find(|m| m.attr("data-method") == method && (m.num("data-level") - level).abs() < 1e-12)
            .unwrap_or_else(|| panic!("a mark of the {level} {method} interval"));
        let span = mark.first("line");
        for (x, v, end) in [(span.num("x1"), lower, "lower"), (span.num("x2"), upper, "upper")] {
            assert!(
                (x - map(v)).abs() <= 0.5,
                "{level} {method} {end} end {v} drawn at x={x}, the axis puts it at {}",
                map(v)
            );
        }
    }
    let est = plot.with_class("estimate");
    assert_eq!(est.len(), 1, "one estimate mark");
    let x = est[0]
        .attrs
        .get("x1")
        .or(est[0].attrs.get("cx"))
        .expect("a position")
        .parse::<f64>()
        .unwrap();
    assert!(
        (x - map(estimate)).abs() <= 0.5,
        "estimate {estimate} at x={x}, the axis puts it at {}",
        map(estimate)
    );
}

/// What a self-contained, accessible picture must be; returns the root.
fn safe_and_described(svg: &str, estimate: f64) -> Node {
    let root = parse(svg);
    let lower = svg.to_ascii_lowercase();
    for banned in [
        "<script",
        "url(",
        "href",
        "<image",
        "<foreignobject",
        "@import",
        "<a ",
        "javascript:",
    ] {
        assert!(!lower.contains(banned), "the picture holds {banned:?}");
    }
    for n in std::iter::once(&root).chain(root.all()) {
        for k in n.attrs.keys() {
            assert!(!k.to_ascii_lowercase().starts_with("on"), "<{}> has a handler {k}", n.name);
        }
    }
    assert_eq!(root.attr("role"), "img");
    let title = root.first("title");
    let desc = root.first("desc");
    let labelled: Vec<&str> = root.attr("aria-labelledby").split(' ').collect();
    assert_eq!(labelled, [title.attr("id"), desc.attr("id")], "named by its title and description");
    // The estimate in words: the number after "estimate", to the 4 figures it is written with.
    let t = title.all_text();
    let written: f64 = t
        .split("estimate ")
        .nth(1)
        .and_then(|r| r.split(' ').next())
        .unwrap()
        .parse()
        .unwrap();
    assert!(
        (written / estimate - 1.0).abs() < 1e-3,
        "the title {t:?} states the estimate {estimate}"
    );
    assert!(
        desc.all_text()
            .contains(&format!("estimate is {}", t.split("estimate ").nth(1).unwrap())),
        "{desc:?}"
    );
    root
}

#[tokio::test]
async fn interval_marks_sit_where_the_numbers_say() {
    let app = TestApp::spawn().await;
    let json = ok(app.post("/v1/interval", &interval_request()).await);
    let (status, ct, vary, svg) = app.post_accepting("/v1/interval", &interval_request(), SVG).await;
    assert_eq!((status, ct.as_str()), (200, SVG), "{svg}");
    assert!(vary.to_ascii_lowercase().contains("accept"), "Vary: {vary}");
    let root = safe_and_described(&svg, json["estimate"].as_f64().unwrap());
    let plots = root.with_class("plot");
    assert_eq!(plots.len(), 2, "the histogram and the cumulative curve");
    marks_agree(plots[0], &json, json["estimate"].as_f64().unwrap());
    // The cumulative panel: each percentile endpoint is read off at its tail probability.
    let map = axis_map(plots[1]);
    let guides = plots[1].with_class("guide");
    let percentile: Vec<&Value> = json["intervals"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|i| i["method"] == "percentile")
        .collect();
    assert_eq!(guides.len(), 2 * percentile.len());
    for iv in percentile {
        for end in ["lower", "upper"] {
            let v = iv[end].as_f64().unwrap();
            let found = guides.iter().any(|g| {
                let last = g.attr("points").split(' ').next_back().unwrap().to_string();
                (last.split(',').next().unwrap().parse::<f64>().unwrap() - map(v)).abs() <= 0.5
            });
            assert!(found, "a guide comes down at the percentile {end} end {v}");
        }
    }
}

#[tokio::test]
async fn compare_picture_shades_the_band_where_the_decision_puts_it() {
    let app = TestApp::spawn().await;
    let json = ok(app.post("/v1/compare", &compare_request()).await);
    let (status, ct, _, svg) = app.post_accepting("/v1/compare", &compare_request(), SVG).await;
    assert_eq!((status, ct.as_str()), (200, SVG), "{svg}");
    let contrast = &json["contrast"];
    let root = safe_and_described(&svg, contrast["estimate"].as_f64().unwrap());
    let plot = root.with_class("plot")[0];
    marks_agree(plot, contrast, contrast["estimate"].as_f64().unwrap());
    let map = axis_map(plot);
    let band = plot.with_class("tolerance");
    assert_eq!(band.len(), 1);
    let (lo, hi) = (
        json["decision"]["tolerance_band"][0].as_f64().unwrap(),
        json["decision"]["tolerance_band"][1].as_f64().unwrap(),
    );
    let (x, w) = (band[0].num("x"), band[0].num("width"));
    assert!(
        (x - map(lo)).abs() <= 0.5 && (x + w - map(hi)).abs() <= 0.5,
        "band [{lo}, {hi}] drawn over [{x}, {}]",
        x + w
    );
    let verdict = json["verdict"].as_str().unwrap();
    assert_eq!(verdict, "regression", "the request is built to regress by about 5 %");
    assert!(root.with_class("verdict")[0].all_text().contains(&format!("Verdict: {verdict}")));
    assert!(root.first("desc").all_text().contains(&format!("Verdict: {verdict}")));
    // A difference has the samples' unit; a ratio has none, so it shows none.
    for (contrast, shown) in [("difference", true), ("ratio", false)] {
        let mut c = compare_request();
        c["contrast"] = json!(contrast);
        c["unit"] = json!("ms");
        let (status, _, _, svg) = app.post_accepting("/v1/compare", &c, SVG).await;
        assert_eq!(status, 200, "{svg}");
        let title = parse(&svg).first("title").all_text();
        assert_eq!(title.ends_with(" ms"), shown, "{contrast}: {title}");
    }
}

#[tokio::test]
async fn band_format_is_a_small_tile_with_every_interval() {
    let app = TestApp::spawn().await;
    let json = ok(app.post("/v1/interval", &interval_request()).await);
    let mut req = interval_request();
    req["format"] = json!("band");
    let (status, ct, _, svg) = app.post_accepting("/v1/interval", &req, SVG).await;
    assert_eq!((status, ct.as_str()), (200, SVG), "{svg}");
    let root = safe_and_described(&svg, json["estimate"].as_f64().unwrap());
    assert!(root.num("width") <= 240.0 && root.num("height") <= 48.0, "a tile: {:?}", root.attrs);
    marks_agree(root.with_class("plot")[0], &json, json["estimate"].as_f64().unwrap());
    let mut c = compare_request();
    c["format"] = json!("band");
    let (status, _, _, svg) = app.post_accepting("/v1/compare", &c, SVG).await;
    assert_eq!(status, 200);
    assert_eq!(parse(&svg).with_class("tolerance").len(), 1, "the band tile shades the band too");
}

#[tokio::test]
async fn accept_decides_between_json_and_a_picture() {
    let app = TestApp::spawn().await;
    let req = interval_request();
    for (accept, picture) in [
        ("image/svg+xml", true),
        ("application/json;q=0.5, image/svg+xml", true),
        ("image/*", true),
        ("image/svg+xml;q=0.5, application/json", false),
        ("*/*", false),
        ("application/json", false),
        ("image/svg+xml, */*", false),
        ("text/html", false),
    ] {
        let (status, ct, _, body) = app.post_accepting("/v1/interval", &req, accept).await;
        assert_eq!(status, 200, "{accept}: {body}");
        let want = if picture { SVG } else { "application/json" };
        assert!(ct.starts_with(want), "Accept {accept:?} gave {ct}");
    }
    // Without an Accept header: JSON.
    let (status, ct, _) = app.post("/v1/interval", &req).await;
    assert_eq!((status, ct.starts_with("application/json")), (200, true));
    // Problems stay problems, whatever was accepted.
    for path in ["/v1/interval", "/v1/compare"] {
        let (status, ct, _, body) = app.post_accepting(path, &json!({"data": "x"}), SVG).await;
        assert_eq!((status, ct.as_str()), (422, "application/problem+json"), "{path}: {body}");
    }
}

#[tokio::test]
async fn unit_is_shown_escaped_and_checked() {
    let app = TestApp::spawn().await;
    let mut req = interval_request();
    req["unit"] = json!("<ms>");
    let (status, _, _, svg) = app.post_accepting("/v1/interval", &req, SVG).await;
    assert_eq!(status, 200, "{svg}");
    assert!(svg.contains("&lt;ms&gt;") && !svg.contains("<ms>"), "the unit appears escaped");
    let root = parse(&svg);
    let captions: Vec<String> = root.with_class("unit").iter().map(|n| n.all_text()).collect();
    assert!(
        !captions.is_empty() && captions.iter().all(|c| c.ends_with("(<ms>)")),
        "{captions:?}"
    );
    assert!(root.first("title").all_text().ends_with(" <ms>"));
    // Presentation only: the JSON answer is the same with or without it.
    let plain = ok(app.post("/v1/interval", &interval_request()).await);
    let with = ok(app.post("/v1/interval", &req).await);
    assert_eq!(without_timing(with), without_timing(plain.clone()));
    for (bad, why) in [
        (json!(""), "1 to 16 characters"),
        (json!("milliseconds-ish!"), "1 to 16 characters"),
        (json!("m\ns"), "control"),
        (json!(5), "string"),
    ] {
        let mut r = interval_request();
        r["unit"] = bad.clone();
        let p = problem(app.post("/v1/interval", &r).await, 422, "invalid-request");
        let message = crate::common::message_at(&p, "/unit");
        assert!(message.contains(why), "{bad}: {message}");
    }
    let mut r = interval_request();
    r["format"] = json!("pie");
    problem(app.post("/v1/interval", &r).await, 422, "invalid-request");
    // Allowed beside a token, which does not stand in for them.
    let token = plain["token"].as_str().unwrap();
    let replay = json!({"data": CHECKOUT_MS, "token": token, "unit": "ms", "format": "band"});
    let (status, ct, _, svg) = app.post_accepting("/v1/interval", &replay, SVG).await;
    assert_eq!((status, ct.as_str()), (200, SVG), "{svg}");
    marks_agree(parse(&svg).with_class("plot")[0], &plain, plain["estimate"].as_f64().unwrap());
}
