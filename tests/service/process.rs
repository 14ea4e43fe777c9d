//! The real binary as an operator runs it: graceful shutdown on SIGTERM with a request in flight,
//! logs that carry no data values and no colour codes when standard error is not a terminal,
//! and each command's help listing only the flags that apply to it.

use std::io::{BufRead, BufReader, Read};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use serde_json::json;

/// The binary serving on a free port; killed when dropped.
pub struct Server {
    pub child: Child,
    pub base: String,
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// Start `bandsaw serve` on a free loopback port with two threads and `extra` flags.
pub fn start(extra: &[&str]) -> Server {
    let mut child = Command::new(env!("CARGO_BIN_EXE_bandsaw"))
        .args(["serve", "--listen", "127.0.0.1:0", "--threads", "2"])
        .args(extra)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the binary starts");
    let mut out = BufReader::new(child.stdout.take().unwrap());
    let mut line = String::new();
    out.read_line(&mut line).unwrap();
    let base = line
        .split_whitespace()
        .find(|w| w.starts_with("http://"))
        .expect("the address line")
        .to_string();
    // Keep draining stdout so the child never blocks on a full pipe.
    std::thread::spawn(move || std::io::copy(&mut out, &mut std::io::sink()));
    Server { child, base }
}

#[cfg(unix)]
fn sigterm(child: &Child) {
    let status = Command::new("kill").args(["-TERM", &child.id().to_string()]).status().unwrap();
    assert!(status.success());
}

#[cfg(unix)]
#[test]
fn sigterm_during_a_request_lets_it_finish_then_exits_zero() {
    // A grace period and a time limit that a loaded machine cannot reach: the test is about
    // the request finishing, not about how long it takes.
    let mut server = start(&["--shutdown-grace-ms", "120000"]);
    let url = format!("{}/v1/interval", server.base);
    let data: Vec<f64> = (0..20000).map(|i| ((i * 7919) % 1000) as f64).collect();
    // Most of a second of work on two idle threads: the MAD, which has no shortcut (a median's
    // resamples take microseconds each and could finish before the job is seen running).
    let body = json!({"data": data, "statistic": "mad", "resamples": 6000, "seed": 5, "time_limit_ms": 60000});
    let request = std::thread::spawn(move || {
        let rt = tokio::runtime::Builder::new_current_thread().enable_all().build().unwrap();
        rt.block_on(async {
            let r = reqwest::Client::new().post(url).json(&body).send().await.unwrap();
            (r.status().as_u16(), r.json::<serde_json::Value>().await.unwrap())
        })
    });
    // Signal once the job is running (not after a guessed delay), so the request is in flight.
    let rt = tokio::runtime::Builder::new_current_thread().enable_all().build().unwrap();
    let metrics = format!("{}/metrics", server.base);
    let waiting = Instant::now();
    while !rt
        .block_on(async { reqwest::get(&metrics).await.unwrap().text().await.unwrap() })
        .lines()
        .any(|l| l == "bandsaw_jobs_running 1")
    {
        assert!(!request.is_finished(), "the request finished before the job was seen running");
        assert!(waiting.elapsed() < Duration::from_secs(30), "the job never started");
        std::thread::sleep(Duration::from_millis(5));
    }
    sigterm(&server.child);
    let (status, v) = request.join().unwrap();
    assert_eq!(status, 200, "{v}");
    assert_eq!(v["resamples"], 6000);
    let started = Instant::now();
    let exit = loop {
        if let Some(s) = server.child.try_wait().unwrap() {
            break s;
        }
        assert!(started.elapsed() < Duration::from_secs(10), "the server did not exit");
        std::thread::sleep(Duration::from_millis(20));
    };
    assert!(exit.success(), "{exit:?}");
    // And it no longer accepts connections.
    let addr = server.base.trim_start_matches("http://").to_string();
    assert!(std::net::TcpStream::connect(addr).is_err());
}

#[cfg(unix)]
#[test]
fn a_log_line_per_request_and_no_data_values_in_it() {
    let mut server = start(&["--log-format", "json"]);
    let rt = tokio::runtime::Builder::new_current_thread().enable_all().build().unwrap();
    // Distinctive values that must not appear anywhere in the logs.
    let secret = [987654.321, 123456.789, 555555.125, 314159.2653];
    rt.block_on(async {
        let c = reqwest::Client::new();
        let url = format!("{}/v1/interval", server.base);
        let r = c
            .post(&url)
            .header("x-request-id", "log-check-1")
            .json(&json!({"data": secret, "seed": 1}))
            .send()
            .await
            .unwrap();
        assert_eq!(r.status().as_u16(), 200);
        // An invalid request whose problem document names the field, not the value.
        let r = c
            .post(&url)
            .json(&json!({"data": [secret[0], "oops"], "seed": 1}))
            .send()
            .await
            .unwrap();
        assert_eq!(r.status().as_u16(), 422);
    });
    sigterm(&server.child);
    let _ = server.child.wait();
    let mut logs = String::new();
    server.child.stderr.take().unwrap().read_to_string(&mut logs).unwrap();
    let lines: Vec<serde_json::Value> = logs.lines().filter_map(|l| serde_json::from_str(l).ok()).collect();
    let ok = lines
        .iter()
        .find(|l| l["request_id"] == "log-check-1")
        .unwrap_or_else(|| panic!("no request line in {logs}"));
    assert_eq!(ok["route"], "/v1/interval");
    assert_eq!(ok["status"], 200);
    assert_eq!(ok["rows"], 4);
    assert_eq!(ok["resamples"], 2000);
    assert_eq!(ok["statistic"], "mean");
    assert_eq!(ok["outcome"], "ok");
    assert!(ok["latency_ms"].as_f64().unwrap() > 0.0);
    assert!(
        lines.iter().any(|l| l["status"] == 422 && l["outcome"] == "invalid-request"),
        "{logs}"
    );
    for v in secret {
        for form in [format!("{v}"), format!("{}", v as u64)] {
            assert!(!logs.contains(&form), "the logs contain the data value {form}:\n{logs}");
        }
    }
    assert!(
        !logs.contains("\x1b["),
        "standard error is a pipe, yet the logs carry ANSI escape codes:\n{logs:?}"
    );
}

/// The default (pretty) log format, read through a pipe as a log collector reads it: plain
/// text, no ANSI colour codes.
#[cfg(unix)]
#[test]
fn pretty_logs_to_a_pipe_carry_no_colour_codes() {
    let mut server = start(&[]);
    let rt = tokio::runtime::Builder::new_current_thread().enable_all().build().unwrap();
    rt.block_on(async {
        let r = reqwest::Client::new()
            .post(format!("{}/v1/interval", server.base))
            .header("x-request-id", "pretty-check-1")
            .json(&json!({"data": [1.5, 2.5, 4.0, 3.25], "seed": 1}))
            .send()
            .await
            .unwrap();
        assert_eq!(r.status().as_u16(), 200);
    });
    sigterm(&server.child);
    let _ = server.child.wait();
    let mut logs = String::new();
    server.child.stderr.take().unwrap().read_to_string(&mut logs).unwrap();
    assert!(logs.contains("pretty-check-1"), "no request line in {logs:?}");
    assert!(
        !logs.contains("\x1b["),
        "standard error is a pipe, yet the logs carry ANSI escape codes:\n{logs:?}"
    );
}

/// The text of `bandsaw <args>` (standard output), which must succeed.
fn help_of(args: &[&str]) -> String {
    let out = Command::new(env!("CARGO_BIN_EXE_bandsaw"))
        .args(args)
        .output()
        .expect("the binary runs");
    assert!(out.status.success(), "bandsaw {args:?}: {out:?}");
    String::from_utf8(out.stdout).expect("UTF-8 help")
}

#[test]
fn each_command_offers_only_the_flags_that_apply_to_it() {
    let interval = help_of(&["interval", "--help"]);
    for flag in ["--max-resamples", "--max-rows", "--work-limit", "--threads", "--input"] {
        assert!(interval.contains(flag), "`interval --help` lacks {flag}:\n{interval}");
    }
    for server_only in [
        "--listen",
        "--api-keys",
        "--api-key-file",
        "--cors-origins",
        "--queue",
        "--max-body-bytes",
        "--max-connections",
        "--request-read-timeout-ms",
    ] {
        assert!(
            !interval.contains(server_only),
            "`interval --help` offers the server's {server_only}:\n{interval}"
        );
    }
    let check = help_of(&["check", "--help"]);
    for flag in [
        "--statistic",
        "--contrast",
        "--better",
        "--tolerance",
        "--level",
        "--method",
        "--resamples",
        "--seed",
        "--paired",
        "--multiplicity",
        "--format",
        "--strict",
        "--server",
        "--column",
        "--threads",
        "--work-limit",
    ] {
        assert!(check.contains(flag), "`check --help` lacks {flag}:\n{check}");
    }
    for server_only in ["--listen", "--api-keys", "--cors-origins", "--queue"] {
        assert!(
            !check.contains(server_only),
            "`check --help` offers the server's {server_only}:\n{check}"
        );
    }
    let serve = help_of(&["serve", "--help"]);
    for flag in [
        "--listen",
        "--api-keys",
        "--cors-origins",
        "--max-resamples",
        "--threads",
        "--max-connections",
        "--request-read-timeout-ms",
    ] {
        assert!(serve.contains(flag), "`serve --help` lacks {flag}:\n{serve}");
    }
    assert!(!serve.contains("--input"), "`serve --help` offers `interval`'s --input:\n{serve}");
}
