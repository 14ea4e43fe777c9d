//! `bandsaw check` as a CI job runs it: the real binary on files, its exit status, its four
//! reports, and the same numbers in-process and from a server for the same seed.
//!
//! The suite (invented): a team's document parser and image resizer, milliseconds per run.

use std::path::{Path, PathBuf};
use std::process::Command;

use quick_xml::events::Event;
use serde_json::{json, Value};

use crate::process::start;

/// A directory of its own for one test's files.
fn workdir(test: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("bandsaw-check-{}-{test}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn write(dir: &Path, name: &str, text: &str) -> String {
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_string()
}

/// `n` runs around `level` ms with a fixed noise pattern of relative size `noise` (the same
/// pattern on both sides, shifted by the phase, so the tests' verdicts are fixed by design).
fn runs(n: usize, level: f64, noise: f64, phase: f64) -> Vec<f64> {
    (0..n)
        .map(|i| (level * (1.0 + noise * (i as f64 * 2.39 + phase).sin()) * 1000.0).round() / 1000.0)
        .collect()
}

/// The suite: a 10 % slower small-document parse (30 runs), a large-document parse 0.2 %
/// slower inside a 3 % tolerance (30 runs), and a thumbnail resize of 3 runs.
fn suite(changed: bool) -> Value {
    let (phase, pick) = if changed { (0.7, 1) } else { (0.0, 0) };
    json!({
        "parse/small_doc": runs(30, [12.0, 13.2][pick], 0.02, phase),
        "parse/large_doc": runs(30, [240.0, 240.5][pick], 0.01, phase),
        "resize/thumbnail": runs(3, [4.0, 4.1][pick], 0.05, phase),
    })
}

struct Ran {
    status: i32,
    stdout: String,
    stderr: String,
}

fn check(args: &[&str]) -> Ran {
    let out = Command::new(env!("CARGO_BIN_EXE_bandsaw"))
        .arg("check")
        .args(args)
        .args(["--threads", "2"])
        .env_remove("BANDSAW_API_KEY")
        .output()
        .expect("the binary runs");
    Ran {
        status: out.status.code().expect("an exit status"),
        stdout: String::from_utf8(out.stdout).unwrap(),
        stderr: String::from_utf8(out.stderr).unwrap(),
    }
}

/// The suite's two files in `dir`: (baseline, candidate).
fn suite_files(dir: &Path, only: &[&str]) -> (String, String) {
    let pick = |v: Value| {
        let o: serde_json::Map<String, Value> = v
            .as_object()
            .unwrap()
            .iter()
            .filter(|(k, _)| only.contains(&k.as_str()))
            .map(|(k, v)| (k.clone(), v.clone()))
            .collect();
        Value::Object(o).to_string()
    };
    (
        write(dir, "base.json", &pick(suite(false))),
        write(dir, "change.json", &pick(suite(true))),
    )
}

const ALL: [&str; 3] = ["parse/small_doc", "parse/large_doc", "resize/thumbnail"];

#[test]
fn each_exit_status_says_what_the_suite_found() {
    let dir = workdir("exit");
    let tolerance = ["--tolerance", "0.03", "--seed", "11"];
    // 1: a regression (whatever else the suite holds).
    let (b, c) = suite_files(&dir, &ALL);
    let r = check(&[&b, &c, tolerance[0], tolerance[1], tolerance[2], tolerance[3]]);
    assert_eq!(r.status, 1, "{}{}", r.stdout, r.stderr);
    assert!(r.stdout.contains("REGRESSION    parse/small_doc"), "{}", r.stdout);
    // 0: equivalent and inconclusive only; 3 under --strict, for the inconclusive 3 runs.
    let (b, c) = suite_files(&dir, &["parse/large_doc", "resize/thumbnail"]);
    let args = [b.as_str(), &c, tolerance[0], tolerance[1], tolerance[2], tolerance[3]];
    let r = check(&args);
    assert_eq!(r.status, 0, "{}", r.stdout);
    assert!(
        r.stdout.contains("1 equivalent, 1 inconclusive -> exit 0 (no regression)"),
        "{}",
        r.stdout
    );
    let r = check(&[&args[..], &["--strict"]].concat());
    assert_eq!(r.status, 3, "{}", r.stdout);
    assert!(r.stdout.contains("exit 3 (inconclusive under --strict)"), "{}", r.stdout);
    // 0 under --strict when everything is decided.
    let (b, c) = suite_files(&dir, &["parse/large_doc"]);
    let r = check(&[&b, &c, "--tolerance", "0.03", "--strict"]);
    assert_eq!(r.status, 0, "{}", r.stdout);
    assert!(r.stdout.contains("equivalent    parse/large_doc"), "{}", r.stdout);
    // 2: usage, a bad file, a missing benchmark, a refused job.
    assert_eq!(check(&[&b]).status, 2, "one file only");
    assert_eq!(check(&[&b, &c, "--format", "yaml"]).status, 2, "an unknown format");
    let bad = write(&dir, "bad.txt", "12.1\n12.3\n12,4\n");
    let r = check(&[&bad, &bad]);
    assert_eq!((r.status, r.stdout.as_str()), (2, ""));
    assert!(r.stderr.contains(&format!("{bad}:3: one number per line")), "{}", r.stderr);
    let r = check(&[
        &b,
        &write(&dir, "other.json", r#"{"parse/large_doc": [1, 2, 3], "parse/tiny": [1, 2]}"#),
    ]);
    assert_eq!(r.status, 2);
    assert!(r.stderr.contains(r#"has no benchmark "parse/tiny""#), "{}", r.stderr);
    let r = check(&[&b, &c, "--tolerance", "-1"]);
    assert_eq!(r.status, 2, "{}", r.stdout);
    assert!(r.stdout.contains("REFUSED") && r.stdout.contains("/tolerance"), "{}", r.stdout);
}

#[test]
fn every_input_form_gives_the_same_comparison() {
    let dir = workdir("forms");
    let (base, change) = (runs(12, 8.0, 0.03, 0.0), runs(12, 8.4, 0.03, 0.5));
    let lines = |v: &[f64]| {
        format!(
            "# ms per run\n{}\n",
            v.iter().map(|x| format!("{x}  # run")).collect::<Vec<_>>().join("\n")
        )
    };
    let csv = |v: &[f64]| {
        format!(
            "run,ms\n{}\n",
            v.iter().enumerate().map(|(i, x)| format!("{i},{x}")).collect::<Vec<_>>().join("\n")
        )
    };
    let forms = [
        (write(&dir, "b.txt", &lines(&base)), write(&dir, "c.txt", &lines(&change)), vec![]),
        (
            write(&dir, "b.csv", &csv(&base)),
            write(&dir, "c.csv", &csv(&change)),
            vec!["--column", "ms"],
        ),
        (
            write(&dir, "b.json", &json!(base).to_string()),
            write(&dir, "c.json", &json!(change).to_string()),
            vec![],
        ),
        (
            write(&dir, "bs.json", &json!({"resize": base}).to_string()),
            write(&dir, "cs.json", &json!({"resize": change}).to_string()),
            vec![],
        ),
    ];
    let reports: Vec<Value> = forms
        .iter()
        .map(|(b, c, extra)| {
            let r = check(&[&[b.as_str(), c, "--name", "resize", "--format", "json", "--seed", "3"][..], extra].concat());
            assert_eq!(r.status, 1, "a 5 % slowdown: {}{}", r.stdout, r.stderr);
            let mut v: Value = serde_json::from_str(&r.stdout).unwrap();
            v.as_object_mut().unwrap().remove("elapsed_ms");
            v["results"][0]["ok"]["contrast"].as_object_mut().unwrap().remove("elapsed_ms");
            v
        })
        .collect();
    for r in &reports[1..] {
        assert_eq!(r, &reports[0]);
    }
    assert_eq!(reports[0]["benchmarks"], json!(["resize"]));
    assert_eq!(reports[0]["results"][0]["ok"]["baseline_n"], 12);
    // Without --name, one benchmark is called by the candidate file's stem.
    let r = check(&[&forms[0].0, &forms[0].1, "--format", "json"]);
    assert_eq!(serde_json::from_str::<Value>(&r.stdout).unwrap()["benchmarks"], json!(["c"]));
}

/// Each test case of a JUnit report: (name, the kind of its child element, if any).
fn junit_cases(xml: &str) -> Vec<(String, Option<String>)> {
    let mut reader = quick_xml::Reader::from_str(xml);
    let mut cases = Vec::new();
    loop {
        match reader.read_event().expect("well-formed XML") {
            Event::Start(e) | Event::Empty(e) if e.name().into_inner() == "testcase" => {
                let name = e
                    .try_get_attribute("name")
                    .unwrap()
                    .unwrap()
                    .normalized_value(quick_xml::XmlVersion::Implicit1_0)
                    .unwrap()
                    .to_string();
                cases.push((name, None));
            }
            Event::Start(e) | Event::Empty(e) if matches!(e.name().into_inner(), "failure" | "skipped" | "error") => {
                let message = e.try_get_attribute("message").unwrap().expect("a message");
                assert!(!message.value.is_empty());
                cases.last_mut().unwrap().1 = Some(e.name().into_inner().to_string());
            }
            Event::Eof => break,
            _ => {}
        }
    }
    cases
}

#[test]
fn junit_has_one_case_per_benchmark_and_markdown_one_row() {
    let dir = workdir("junit");
    let (b, mut c) = suite_files(&dir, &ALL);
    // A fourth benchmark whose job is refused (a ratio of a negative baseline).
    let mut base: Value = serde_json::from_str(&std::fs::read_to_string(&b).unwrap()).unwrap();
    let mut change: Value = serde_json::from_str(&std::fs::read_to_string(&c).unwrap()).unwrap();
    base["resize/broken"] = json!([-1.0, -2.0, -1.5]);
    change["resize/broken"] = json!([1.0, 2.0, 1.5]);
    let b = write(&dir, "base4.json", &base.to_string());
    c = write(&dir, "change4.json", &change.to_string());
    let r = check(&[&b, &c, "--tolerance", "0.03", "--format", "junit", "--seed", "2"]);
    assert_eq!(r.status, 1, "a regression outranks a refused job: {}", r.stdout);
    assert_eq!(
        junit_cases(&r.stdout),
        [
            ("parse/small_doc".to_string(), Some("failure".to_string())),
            ("parse/large_doc".to_string(), None),
            ("resize/thumbnail".to_string(), Some("skipped".to_string())),
            ("resize/broken".to_string(), Some("error".to_string())),
        ]
    );
    assert!(
        r.stdout.contains(r#"tests="4" failures="1" errors="1" skipped="1""#),
        "{}",
        r.stdout
    );
    let r = check(&[&b, &c, "--tolerance", "0.03", "--format", "markdown", "--seed", "2"]);
    let rows: Vec<&str> = r
        .stdout
        .lines()
        .filter(|l| l.starts_with("| ") && !l.starts_with("| verdict") && !l.starts_with("| ---"))
        .collect();
    assert_eq!(rows.len(), 4, "{}", r.stdout);
    // What needs action first: the regression, then the refused job.
    assert!(rows[0].starts_with("| **regression** | parse/small\\_doc | +10."), "{}", rows[0]);
    assert!(rows[1].starts_with("| **refused** | resize/broken"), "{}", rows[1]);
    assert!(r.stdout.contains("<details><summary>Why</summary>"));
}

#[test]
fn a_server_gives_the_same_report_as_this_process() {
    let dir = workdir("server");
    let server = start(&["--api-keys", "ci-key-1"]);
    let (b, c) = suite_files(&dir, &ALL);
    let args = [b.as_str(), &c, "--tolerance", "0.03", "--seed", "19", "--resamples", "4000"];
    let with_server =
        |format: &str, key: &str| check(&[&args[..], &["--format", format, "--server", &server.base, "--api-key", key]].concat());
    for format in ["text", "markdown"] {
        let here = check(&[&args[..], &["--format", format]].concat());
        let there = with_server(format, "ci-key-1");
        assert_eq!(
            (here.status, &here.stdout),
            (there.status, &there.stdout),
            "{format}: {}",
            there.stderr
        );
        assert_eq!(here.status, 1);
    }
    let timeless = |r: Ran| {
        let mut v: Value = serde_json::from_str(&r.stdout).unwrap();
        v.as_object_mut().unwrap().remove("elapsed_ms");
        for result in v["results"].as_array_mut().unwrap() {
            result["ok"]["contrast"].as_object_mut().unwrap().remove("elapsed_ms");
        }
        v
    };
    assert_eq!(
        timeless(check(&[&args[..], &["--format", "json"]].concat())),
        timeless(with_server("json", "ci-key-1"))
    );
    // A wrong key is the server's 401, and no server at all is exit 2 too.
    let r = with_server("text", "wrong");
    assert_eq!(r.status, 2, "{}", r.stdout);
    assert!(r.stdout.contains("refused"), "{}", r.stdout);
    let r = check(&[&b, &c, "--server", "http://127.0.0.1:9"]);
    assert_eq!(r.status, 2);
    assert!(r.stderr.contains("cannot reach the server"), "{}", r.stderr);
}

/// The demo suite's files, from the repository root.
fn demo(file: &str) -> String {
    format!("{}/scripts/check-demo/{file}", env!("CARGO_MANIFEST_DIR"))
}

/// The README's command for the demo, in `format`.
fn demo_check(format: &str) -> Ran {
    check(&[
        &demo("base.json"),
        &demo("change.json"),
        "--tolerance",
        "0.02",
        "--seed",
        "7",
        "--format",
        format,
    ])
}

#[test]
fn the_demo_suite_tells_its_story_and_the_readme_shows_what_it_prints() {
    let r = demo_check("json");
    assert_eq!(r.status, 1, "{}", r.stderr);
    let v: Value = serde_json::from_str(&r.stdout).unwrap();
    let verdict = |name: &str| {
        let i = v["benchmarks"].as_array().unwrap().iter().position(|n| n == name).unwrap();
        v["results"][i]["ok"].clone()
    };
    // The real 8 % slowdown is found; the noisy benchmark with no change is not called a
    // regression; the 3-run benchmark is not decided, and says why.
    assert_eq!(verdict("resize/hero_webp")["verdict"], "regression");
    assert_ne!(verdict("parse/markdown_large")["verdict"], "regression");
    let short = verdict("parse/front_matter");
    assert_eq!(short["verdict"], "inconclusive");
    assert!(short["contrast"]["diagnostics"]["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w["code"] == "too_few_runs"));
    for quiet in ["parse/markdown_small", "resize/thumbnail_jpeg"] {
        assert_eq!(verdict(quiet)["verdict"], "equivalent", "{quiet}");
    }
    // The README's two blocks are what the command prints now.
    let readme = std::fs::read_to_string(format!("{}/README.md", env!("CARGO_MANIFEST_DIR"))).unwrap();
    let between = |start: &str, end: &str| {
        let from = readme.find(start).unwrap_or_else(|| panic!("README lacks {start}"));
        let rest = &readme[from..];
        let body = &rest[rest.find('\n').unwrap() + 1..];
        body[..body.find(end).unwrap()].to_string()
    };
    let text = between("<!-- check-demo text", "```\n\nThe same with");
    assert_eq!(
        text.trim_start_matches("```text\n"),
        demo_check("text").stdout,
        "the README's text report"
    );
    let markdown = between("<!-- check-demo markdown", "<!-- check-demo end -->");
    assert_eq!(markdown, demo_check("markdown").stdout, "the README's Markdown report");
}

#[test]
fn names_and_messages_cannot_break_the_markdown_table_or_the_xml() {
    let dir = workdir("escape");
    let (base, change) = (runs(12, 8.0, 0.03, 0.0), runs(12, 9.0, 0.03, 0.5));
    let names = ["a|b", "tick`s`", "<x&y>", "ctl\u{1}char", "back\\|slash"];
    let suite = |v: &[f64]| Value::Object(names.iter().map(|n| (n.to_string(), json!(v))).collect());
    let (b, c) = (
        write(&dir, "b.json", &suite(&base).to_string()),
        write(&dir, "c.json", &suite(&change).to_string()),
    );
    let r = check(&[&b, &c, "--format", "junit", "--seed", "1"]);
    assert_eq!(r.status, 1, "{}", r.stderr);
    let cases: Vec<String> = junit_cases(&r.stdout).into_iter().map(|(n, _)| n).collect();
    assert_eq!(
        cases,
        ["a|b", "tick`s`", "<x&y>", "ctl\u{FFFD}char", "back\\|slash"],
        "{}",
        r.stdout
    );
    let r = check(&[&b, &c, "--format", "markdown", "--seed", "1"]);
    let rows: Vec<&str> = r.stdout.lines().filter(|l| l.starts_with("| **regression**")).collect();
    assert_eq!(rows.len(), 5, "{}", r.stdout);
    for row in rows {
        // Seven cells: eight pipes that are not escaped by a backslash.
        let bytes = row.as_bytes();
        let unescaped = (0..bytes.len())
            .filter(|&i| bytes[i] == b'|' && bytes[..i].iter().rev().take_while(|c| **c == b'\\').count() % 2 == 0)
            .count();
        assert_eq!(unescaped, 7, "{row}");
        assert!(!row.contains('`') || row.contains("\\`"), "{row}");
    }
}

#[test]
fn the_text_report_aligns_names_of_any_script_in_terminal_columns() {
    let dir = workdir("wide");
    let (base, change) = (runs(12, 8.0, 0.03, 0.0), runs(12, 9.0, 0.03, 0.5));
    // A CJK name takes two terminal columns a character, a combining accent none.
    let names = ["检索/短查询", "parse/json", "re\u{301}sume\u{301}/render"];
    let suite = |v: &[f64]| Value::Object(names.iter().map(|n| (n.to_string(), json!(v))).collect());
    let (b, c) = (
        write(&dir, "b.json", &suite(&base).to_string()),
        write(&dir, "c.json", &suite(&change).to_string()),
    );
    let r = check(&[&b, &c, "--seed", "1"]);
    assert_eq!(r.status, 1, "{}", r.stderr);
    // The change column starts at the same terminal column on every benchmark's line.
    let starts: Vec<usize> = names
        .iter()
        .map(|n| {
            let line = r
                .stdout
                .lines()
                .find(|l| l.contains(n))
                .unwrap_or_else(|| panic!("{n}: {}", r.stdout));
            let after = line.find(n).unwrap() + n.len();
            let gap = line[after..].len() - line[after..].trim_start().len();
            unicode_width::UnicodeWidthStr::width(&line[..after]) + gap
        })
        .collect();
    assert!(starts.windows(2).all(|w| w[0] == w[1]), "{starts:?}\n{}", r.stdout);
}

#[test]
fn a_batch_refused_whole_is_reported_in_the_asked_format() {
    let dir = workdir("refused");
    let (b, c) = suite_files(&dir, &ALL);
    // Under Holm the first --level is the suite's level: 95 is not a level.
    let r = check(&[&b, &c, "--level", "95", "--format", "junit"]);
    assert_eq!(r.status, 2, "{}", r.stdout);
    let cases = junit_cases(&r.stdout);
    assert_eq!(cases, [("bandsaw check".to_string(), Some("error".to_string()))], "{}", r.stdout);
    assert!(r.stdout.contains("/family_level (--family-level)"), "{}", r.stdout);
    let r = check(&[&b, &c, "--level", "95", "--format", "markdown"]);
    assert!(r.stdout.starts_with("### bandsaw check: refused"), "{}", r.stdout);
    // A level that is one: the suite holds at it, and a single comparison is read at it.
    let (b1, c1) = suite_files(&dir, &["parse/large_doc"]);
    let r = check(&[&b1, &c1, "--level", "0.9", "--tolerance", "0.03", "--format", "json"]);
    let v: Value = serde_json::from_str(&r.stdout).unwrap();
    assert_eq!(
        (&v["family_level"], &v["results"][0]["ok"]["decision"]["level"]),
        (&json!(0.9), &json!(0.9))
    );
}

#[test]
fn a_byte_order_mark_and_standard_input_are_read() {
    let dir = workdir("bom");
    let b = write(&dir, "b.txt", "\u{feff}12.1\n12.3\n12.2\n12.4\n12.0\n12.2\n");
    let c = write(&dir, "c.txt", "\u{feff}[12.2, 12.1, 12.3, 12.2, 12.4, 12.1]");
    let r = check(&[&b, &c, "--tolerance", "0.05"]);
    assert_eq!(r.status, 0, "{}{}", r.stdout, r.stderr);
    let r = check(&["-", "-"]);
    assert_eq!(r.status, 2);
    assert!(r.stderr.contains("only one of the two files can be standard input"), "{}", r.stderr);
}

#[test]
fn an_answer_the_report_cannot_read_is_not_a_pass() {
    // A "server" that answers 200 with JSON that is no batch response.
    let listener = std::net::TcpListener::bind("127.0.0.1:0").unwrap();
    let url = format!("http://{}", listener.local_addr().unwrap());
    std::thread::spawn(move || {
        if let Ok((mut stream, _)) = listener.accept() {
            use std::io::{Read, Write};
            let mut buf = [0u8; 65536];
            let _ = stream.read(&mut buf);
            let body = r#"{"hello": 1}"#;
            let _ = write!(
                stream,
                "HTTP/1.1 200 OK\r\nContent-Type: application/json\r\nContent-Length: {}\r\nConnection: close\r\n\r\n{body}",
                body.len()
            );
        }
    });
    let dir = workdir("unreadable");
    let (b, c) = suite_files(&dir, &["parse/large_doc"]);
    let r = check(&[&b, &c, "--server", &url]);
    assert_eq!(r.status, 2, "{}{}", r.stdout, r.stderr);
    assert!(r.stdout.contains("REFUSED"), "{}", r.stdout);
}
