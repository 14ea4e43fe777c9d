//! The reports of `bandsaw check`: a compact text for a CI log, a Markdown table for a
//! pull-request comment or job summary (both with what needs action first), JUnit XML for a CI
//! system's test view, and the JSON of the batch response (both in the suite's order). Each is built from the response alone (the same whether it came from
//! this process or a server), so the same seed gives the same report either way.

use quick_xml::events::{BytesDecl, BytesText, Event};
use quick_xml::Writer;
use serde::Deserialize;
use serde_json::{Map, Value};
use unicode_width::UnicodeWidthStr;

use super::{Exit, Format};
use crate::engine::job::Contrast;
use crate::engine::verdict::{num, Better, Verdict};

/// What a report needs of one compare job's response.
#[derive(Debug, Clone, Deserialize)]
pub struct Compared {
    pub verdict: Verdict,
    pub verdict_reason: String,
    pub baseline_n: u64,
    pub candidate_n: u64,
    pub comparison: Comparison,
    pub contrast: ContrastView,
    pub decision: DecisionView,
}

#[derive(Debug, Clone, Deserialize)]
pub struct Comparison {
    pub contrast: Contrast,
    pub better: Better,
    pub tolerance: f64,
    pub paired: bool,
}

#[derive(Debug, Clone, Deserialize)]
pub struct ContrastView {
    pub estimate: f64,
    pub statistic: Value,
    pub diagnostics: DiagnosticsView,
}

#[derive(Debug, Clone, Deserialize)]
pub struct DiagnosticsView {
    pub warnings: Vec<WarningView>,
}

#[derive(Debug, Clone, Deserialize)]
pub struct WarningView {
    pub code: String,
}

#[derive(Debug, Clone, Deserialize)]
pub struct DecisionView {
    pub method: String,
    pub level: f64,
    pub lower: f64,
    pub upper: f64,
}

/// One benchmark's line of a report.
#[derive(Debug, Clone)]
pub enum Row<'a> {
    Decided(&'a str, Box<Compared>),
    /// The job was refused: the problem's detail and each field's pointer and message.
    Failed(&'a str, String, Vec<(String, String)>),
}

impl Row<'_> {
    fn name(&self) -> &str {
        match self {
            Row::Decided(n, _) | Row::Failed(n, _, _) => n,
        }
    }
}

/// The problem's detail and its field errors, pointers made relative to the job.
fn problem_parts(problem: &Value, job: Option<usize>) -> (String, Vec<(String, String)>) {
    let detail = match problem["errors"].as_array().is_some_and(|e| !e.is_empty()) {
        // The detail of a refused request only repeats its field errors.
        true => problem["title"].as_str(),
        false => problem["detail"].as_str().or(problem["title"].as_str()),
    }
    .unwrap_or("refused")
    .to_string();
    let prefix = job.map(|i| format!("/jobs/{i}"));
    let errors = problem["errors"]
        .as_array()
        .map(Vec::as_slice)
        .unwrap_or(&[])
        .iter()
        .map(|e| {
            let pointer = e["pointer"].as_str().unwrap_or("");
            let local = prefix.as_deref().and_then(|p| pointer.strip_prefix(p)).unwrap_or(pointer);
            (with_flag(local), e["message"].as_str().unwrap_or("").to_string())
        })
        .collect();
    (detail, errors)
}

/// The command-line flag behind a request field, for a pointer into a job or the batch.
const FLAGS: [(&str, &str); 12] = [
    ("/statistic", "--statistic"),
    ("/contrast", "--contrast"),
    ("/better", "--better"),
    ("/tolerance", "--tolerance"),
    ("/levels", "--level"),
    ("/methods", "--method"),
    ("/resamples", "--resamples"),
    ("/seed", "--seed"),
    ("/paired", "--paired"),
    ("/multiplicity", "--multiplicity"),
    ("/family_level", "--family-level"),
    ("/baseline", "the baseline file"),
];

/// A pointer with the flag or file it comes from: "/levels/0 (--level)".
fn with_flag(pointer: &str) -> String {
    let from = FLAGS
        .iter()
        .chain(&[("/candidate", "the candidate file")])
        .find(|(field, _)| pointer == *field || pointer.starts_with(&format!("{field}/")));
    match from {
        Some((_, flag)) => format!("{pointer} ({flag})"),
        None => pointer.to_string(),
    }
}

/// Each benchmark's row, from a batch response.
pub fn rows<'a>(response: &Value, names: &[&'a str]) -> Vec<Row<'a>> {
    let empty = Vec::new();
    let results = response["results"].as_array().unwrap_or(&empty);
    names
        .iter()
        .enumerate()
        .map(|(i, name)| {
            let r = results.get(i).cloned().unwrap_or(Value::Null);
            match serde_json::from_value::<Compared>(r["ok"].clone()) {
                Ok(c) => Row::Decided(name, Box::new(c)),
                Err(e) if r.get("error").is_none() => Row::Failed(name, format!("an answer this report cannot read: {e}"), vec![]),
                Err(_) => {
                    let (detail, errors) = problem_parts(&r["error"], Some(i));
                    Row::Failed(name, detail, errors)
                }
            }
        })
        .collect()
}

/// The order a person reads a suite's rows in: what needs action first (regressions, then
/// refused jobs, then what is undecided), the suite's own order within each.
fn by_urgency<'a, 'r>(rows: &'r [Row<'a>]) -> Vec<&'r Row<'a>> {
    let rank = |r: &Row| match r {
        Row::Decided(_, c) => match c.verdict {
            Verdict::Regression => 0,
            Verdict::Inconclusive => 2,
            Verdict::Improvement => 3,
            Verdict::Equivalent => 4,
        },
        Row::Failed(..) => 1,
    };
    let mut sorted: Vec<&Row> = rows.iter().collect();
    sorted.sort_by_key(|r| rank(r));
    sorted
}

/// A contrast for a person: a ratio as a signed percentage change, a difference as a signed
/// number in data units.
fn change(contrast: Contrast, x: f64) -> String {
    match contrast {
        Contrast::Ratio => {
            let pct = (x - 1.0) * 100.0;
            let digits = if pct.abs() >= 1.0 { 1 } else { 2 };
            format!("{pct:+.digits$}%")
        }
        Contrast::Difference if x > 0.0 => format!("+{}", num(x)),
        Contrast::Difference => num(x),
    }
}

/// A level as a percentage, with digits enough to tell it from 100 % (99.995 %, not 100 %).
fn percent(level: f64) -> String {
    let pct = level * 100.0;
    let rest = 100.0 - pct;
    let digits = if rest > 0.0 {
        (2 - rest.log10().floor() as i32).clamp(0, 12) as usize
    } else {
        0
    };
    let s = format!("{pct:.digits$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    format!("{s}%")
}

/// "1 benchmark", "2 benchmarks".
fn count(n: usize, what: &str) -> String {
    format!("{n} {what}{}", if n == 1 { "" } else { "s" })
}

/// The statistic's name as the response gives it (with its parameters, if any).
fn statistic_words(s: &Value) -> String {
    let name = s["name"].as_str().unwrap_or("statistic").replace('_', " ");
    let params: Vec<String> = s
        .as_object()
        .map(|o| o.iter().filter(|(k, _)| *k != "name").map(|(k, v)| format!("{k} {v}")).collect())
        .unwrap_or_default();
    match params.is_empty() {
        true => name,
        false => format!("{name} ({})", params.join(", ")),
    }
}

/// What was compared, in one line (from the first decided benchmark).
fn setup_line(rows: &[Row]) -> Option<String> {
    rows.iter().find_map(|r| match r {
        Row::Decided(_, c) => {
            let cmp = &c.comparison;
            let contrast = match cmp.contrast {
                Contrast::Ratio => "candidate / baseline",
                Contrast::Difference => "candidate - baseline",
            };
            let tolerance = match cmp.contrast {
                Contrast::Ratio => format!("{}%", num(cmp.tolerance * 100.0)),
                Contrast::Difference => num(cmp.tolerance),
            };
            let paired = if cmp.paired { ", runs paired" } else { "" };
            Some(format!(
                "{}: {contrast}, {} is better, changes within {tolerance} count as none{paired}",
                statistic_words(&c.contrast.statistic),
                cmp.better
            ))
        }
        Row::Failed(..) => None,
    })
}

/// How the suite's verdicts hold together, in one line (the batch response always names its
/// multiplicity and family level).
fn family_line(response: &Value, rows: &[Row]) -> String {
    let decided: Vec<&Compared> = rows
        .iter()
        .filter_map(|r| match r {
            Row::Decided(_, c) => Some(&**c),
            Row::Failed(..) => None,
        })
        .collect();
    let alarm = percent(1.0 - response["family_level"].as_f64().unwrap_or_default());
    let decided_n = decided.len();
    match response["multiplicity"].as_str().unwrap_or_default() {
        _ if decided_n < 2 => match decided.first() {
            Some(c) => format!("one comparison, read at {}", percent(c.decision.level)),
            None => "no comparison could be read".to_string(),
        },
        "holm" => format!("Holm's step-down over {decided_n} comparisons: a false alarm anywhere in the suite at most {alarm} of the time"),
        "bonferroni" => format!("Bonferroni over {decided_n} comparisons: a false alarm anywhere in the suite at most {alarm} of the time"),
        _ => format!("no correction over {decided_n} comparisons: each may raise a false alarm at its own rate"),
    }
}

/// How many of each verdict, and errors: "1 regression, 2 equivalent, 1 inconclusive".
fn tally(rows: &[Row]) -> String {
    let count = |v: Verdict| rows.iter().filter(|r| matches!(r, Row::Decided(_, c) if c.verdict == v)).count();
    let errors = rows.iter().filter(|r| matches!(r, Row::Failed(..))).count();
    let mut parts: Vec<String> = [
        Verdict::Regression,
        Verdict::Improvement,
        Verdict::Equivalent,
        Verdict::Inconclusive,
    ]
    .into_iter()
    .map(|v| (v, count(v)))
    .filter(|(_, n)| *n > 0)
    .map(|(v, n)| {
        let plural = if n > 1 && v != Verdict::Equivalent && v != Verdict::Inconclusive {
            "s"
        } else {
            ""
        };
        format!("{n} {v}{plural}")
    })
    .collect();
    if errors > 0 {
        parts.push(format!("{errors} refused"));
    }
    parts.join(", ")
}

/// What the exit status means.
fn exit_words(exit: Exit) -> &'static str {
    match exit {
        Exit::Clear => "no regression",
        Exit::Regression => "a regression",
        Exit::Unusable => "a benchmark could not be compared",
        Exit::Undecided => "inconclusive under --strict",
    }
}

/// The codes of a comparison's warnings.
fn warning_codes(c: &Compared) -> Vec<&str> {
    c.contrast.diagnostics.warnings.iter().map(|w| w.code.as_str()).collect()
}

/// The text report for a CI log.
pub fn text(response: &Value, names: &[&str], seed: u64, exit: Exit) -> String {
    let rows = rows(response, names);
    // Columns in a terminal (Unicode UAX #11, East Asian Width, as the unicode-width crate
    // reads it): a CJK name takes two cells a character, a combining mark none.
    let width = names.iter().map(|n| n.width()).max().unwrap_or(0).max(9);
    let mut out = format!("bandsaw check: {}, candidate against baseline\n", count(rows.len(), "benchmark"));
    if let Some(setup) = setup_line(&rows) {
        out += &format!("  {setup}\n");
    }
    out += &format!("  {}\n\n", family_line(response, &rows));
    for row in by_urgency(&rows) {
        out += &text_row(row, width);
    }
    out += &format!("\n{} -> exit {} ({})\n", tally(&rows), exit as i32, exit_words(exit));
    out += &format!("seed {seed}: --seed {seed} repeats these numbers\n");
    out
}

fn text_row(row: &Row, width: usize) -> String {
    match row {
        Row::Decided(name, c) => {
            let label = match c.verdict {
                Verdict::Regression => "REGRESSION".to_string(),
                v => v.to_string(),
            };
            let k = c.comparison.contrast;
            let d = &c.decision;
            let name = padded(name, width);
            let mut s = format!(
                "  {label:<12}  {name}  {:>8}  {} {} interval {} to {}  runs {}/{}\n",
                change(k, c.contrast.estimate),
                percent(d.level),
                d.method,
                change(k, d.lower),
                change(k, d.upper),
                c.baseline_n,
                c.candidate_n
            );
            if c.verdict != Verdict::Equivalent {
                s += &format!("  {:<12}  {}\n", "", c.verdict_reason);
            }
            let codes = warning_codes(c);
            if !codes.is_empty() {
                s += &format!("  {:<12}  warnings: {}\n", "", codes.join(", "));
            }
            s
        }
        Row::Failed(name, detail, errors) => {
            let mut s = format!("  {:<12}  {}  {detail}\n", "REFUSED", padded(name, width));
            for (pointer, message) in errors {
                s += &format!("  {:<12}  {pointer}: {message}\n", "");
            }
            s
        }
    }
}

/// `name` followed by spaces up to `width` terminal columns.
fn padded(name: &str, width: usize) -> String {
    format!("{name}{}", " ".repeat(width.saturating_sub(name.width())))
}

/// Markdown's cell text: pipes and line breaks would end the cell.
/// Each character that could end the cell, open a code span or emphasis, or start markup is
/// escaped with a backslash (CommonMark allows it before any ASCII punctuation); line breaks
/// become spaces. Names are written with it, not in code spans, which a backtick would end.
fn cell(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '\\' | '|' | '`' | '*' | '_' | '<' | '>' | '[' | ']' | '~' | '#' | '&' => {
                out.push('\\');
                out.push(c);
            }
            '\n' | '\r' => out.push(' '),
            c if c.is_control() => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
    out
}

/// The Markdown report for a pull-request comment or a CI job summary.
pub fn markdown(response: &Value, names: &[&str], seed: u64, exit: Exit) -> String {
    let rows = rows(response, names);
    let regressions = rows
        .iter()
        .filter(|r| matches!(r, Row::Decided(_, c) if c.verdict == Verdict::Regression))
        .count();
    let headline = match regressions {
        0 => format!("no regression in {}", count(rows.len(), "benchmark")),
        n => format!("{} in {}", count(n, "regression"), count(rows.len(), "benchmark")),
    };
    let mut out = format!("### bandsaw check: {headline}\n\n");
    if let Some(setup) = setup_line(&rows) {
        out += &format!("{}; {}.\n\n", cell(&setup), cell(&family_line(response, &rows)));
    }
    out += "| verdict | benchmark | change | interval | level | runs (baseline / candidate) |\n";
    out += "| --- | --- | ---: | --- | ---: | ---: |\n";
    for row in by_urgency(&rows) {
        out += &markdown_row(row);
    }
    out += &format!("\n{} (exit {}: {}). Seed {seed}.\n", tally(&rows), exit as i32, exit_words(exit));
    let reasons: Vec<String> = by_urgency(&rows)
        .into_iter()
        .filter_map(|r| match r {
            Row::Decided(n, c) if c.verdict != Verdict::Equivalent => Some(format!("- {}: {}", cell(n), cell(&c.verdict_reason))),
            Row::Failed(n, d, e) => Some(format!(
                "- {} was refused: {}{}",
                cell(n),
                cell(d),
                e.iter().map(|(p, m)| format!(" {}: {}", cell(p), cell(m))).collect::<String>()
            )),
            Row::Decided(..) => None,
        })
        .collect();
    if !reasons.is_empty() {
        out += &format!("\n<details><summary>Why</summary>\n\n{}\n\n</details>\n", reasons.join("\n"));
    }
    out
}

fn markdown_row(row: &Row) -> String {
    match row {
        Row::Decided(name, c) => {
            let k = c.comparison.contrast;
            let verdict = match c.verdict {
                Verdict::Regression => "**regression**".to_string(),
                v => v.to_string(),
            };
            format!(
                "| {verdict} | {} | {} | {} to {} | {} {} | {} / {} |\n",
                cell(name),
                change(k, c.contrast.estimate),
                change(k, c.decision.lower),
                change(k, c.decision.upper),
                percent(c.decision.level),
                c.decision.method,
                c.baseline_n,
                c.candidate_n
            )
        }
        Row::Failed(name, detail, _) => format!("| **refused** | {} | | {} | | |\n", cell(name), cell(detail)),
    }
}

/// JUnit XML: one test case per benchmark; a regression is a failure, an inconclusive result
/// a skipped case, a refused job an error, each with the reason as its message.
pub fn junit(response: &Value, names: &[&str]) -> String {
    junit_of(&rows(response, names), response["elapsed_ms"].as_f64().unwrap_or(0.0) / 1000.0)
}

/// JUnit XML of rows that took `seconds`.
fn junit_of(rows: &[Row], seconds: f64) -> String {
    let count = |f: &dyn Fn(&Row) -> bool| rows.iter().filter(|r| f(r)).count().to_string();
    let is = |v: Verdict| move |r: &Row| matches!(r, Row::Decided(_, c) if c.verdict == v);
    let (tests, failures, skipped, errors) = (
        rows.len().to_string(),
        count(&is(Verdict::Regression)),
        count(&is(Verdict::Inconclusive)),
        count(&|r| matches!(r, Row::Failed(..))),
    );
    let seconds = format!("{seconds:.3}");
    let counts = [
        ("tests", tests.as_str()),
        ("failures", &failures),
        ("errors", &errors),
        ("skipped", &skipped),
        ("time", &seconds),
    ];
    let mut w = Writer::new_with_indent(Vec::new(), b' ', 2);
    let written = w
        .write_event(Event::Decl(BytesDecl::new("1.0", Some("UTF-8"), None)))
        .and_then(|_| {
            w.create_element("testsuites")
                .with_attribute(("name", "bandsaw check"))
                .with_attributes(counts)
                .write_inner_content(|w| {
                    w.create_element("testsuite")
                        .with_attribute(("name", "bandsaw check"))
                        .with_attributes(counts)
                        .write_inner_content(|w| rows.iter().try_for_each(|r| junit_case(w, r)))
                        .map(|_| ())
                })
        });
    written.expect("writing to memory");
    let mut xml = String::from_utf8(w.into_inner()).expect("UTF-8");
    xml.push('\n');
    xml
}

/// Text XML 1.0 can carry: control characters but tab, line feed and carriage return become
/// U+FFFD (the XML writer escapes markup, not these).
fn xml_text(s: &str) -> String {
    s.chars()
        .map(|c| match c {
            '\t' | '\n' | '\r' => c,
            c if (c as u32) < 0x20 || c == '\u{FFFE}' || c == '\u{FFFF}' => '\u{FFFD}',
            c => c,
        })
        .collect()
}

fn junit_case(w: &mut Writer<Vec<u8>>, row: &Row) -> std::io::Result<()> {
    let name = xml_text(row.name());
    let case = w
        .create_element("testcase")
        .with_attribute(("name", name.as_str()))
        .with_attribute(("classname", "bandsaw.check"));
    let (child, kind, message) = match row {
        Row::Decided(_, c) => match c.verdict {
            Verdict::Regression => ("failure", "regression", c.verdict_reason.clone()),
            Verdict::Inconclusive => ("skipped", "inconclusive", c.verdict_reason.clone()),
            _ => {
                let out = xml_text(&format!("{}: {}", c.verdict, c.verdict_reason));
                case.write_inner_content(|w| w.create_element("system-out").write_text_content(BytesText::new(&out)).map(|_| ()))?;
                return Ok(());
            }
        },
        Row::Failed(_, detail, errors) => {
            let fields: String = errors.iter().map(|(p, m)| format!("; {p}: {m}")).collect();
            ("error", "refused", format!("{detail}{fields}"))
        }
    };
    case.write_inner_content(|w| {
        w.create_element(child)
            .with_attribute(("type", kind))
            .with_attribute(("message", xml_text(&message).as_str()))
            .write_empty()
            .map(|_| ())
    })?;
    Ok(())
}

/// The JSON report: the batch response with the benchmarks' names first (the i-th name is the
/// i-th result's).
pub fn json(response: &Value, names: &[&str]) -> String {
    let mut out = Map::new();
    out.insert(
        "benchmarks".into(),
        Value::from(names.iter().map(|n| n.to_string()).collect::<Vec<_>>()),
    );
    if let Value::Object(o) = response {
        out.extend(o.clone());
    }
    let mut s = serde_json::to_string_pretty(&Value::Object(out)).expect("JSON");
    s.push('\n');
    s
}

/// The report of a batch that answered, in `format`.
pub fn render(format: Format, response: &Value, names: &[&str], seed: u64, exit: Exit) -> String {
    match format {
        Format::Text => text(response, names, seed, exit),
        Format::Markdown => markdown(response, names, seed, exit),
        Format::Junit => junit(response, names),
        Format::Json => json(response, names),
    }
}

/// The report of a batch refused as a whole (a bad option, the work limit), in `format`: the
/// problem's title and fields, pointers into a job named by its benchmark.
pub fn refused(format: Format, problem: &Value, names: &[&str]) -> String {
    let (detail, errors) = problem_parts(problem, None);
    let lines: Vec<String> = errors
        .iter()
        .map(|(pointer, message)| format!("{}: {message}", place(pointer, names)))
        .collect();
    match format {
        Format::Json => json(problem, names),
        Format::Text => {
            let mut out = format!("bandsaw check: refused: {detail}\n");
            for line in &lines {
                out += &format!("  {line}\n");
            }
            out
        }
        Format::Markdown => {
            let items: String = lines.iter().map(|l| format!("- {}\n", cell(l))).collect();
            format!("### bandsaw check: refused\n\n{}\n\n{items}", cell(&detail))
        }
        Format::Junit => {
            let row = Row::Failed("bandsaw check", detail, errors);
            junit_of(&[row], 0.0)
        }
    }
}

/// A pointer into the batch as a person reads it: "benchmark \"x\", /tolerance".
fn place(pointer: &str, names: &[&str]) -> String {
    let mut parts = pointer.splitn(4, '/').skip(1);
    match (parts.next(), parts.next().and_then(|i| i.parse::<usize>().ok()), parts.next()) {
        (Some("jobs"), Some(i), rest) if i < names.len() => {
            format!("benchmark {:?}, /{}", names[i], rest.unwrap_or(""))
        }
        _ => pointer.to_string(),
    }
}
