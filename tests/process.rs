//! Tests of the real binary as an operator runs it: graceful shutdown on SIGTERM with a request
//! in flight, and structured logs that carry no data values.

use std::io::{BufRead, BufReader, Read};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use serde_json::json;

struct Server {
    child: Child,
    base: String,
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

fn start(extra: &[&str]) -> Server {
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
    let mut server = start(&[]);
    let url = format!("{}/v1/interval", server.base);
    let data: Vec<f64> = (0..20000).map(|i| ((i * 7919) % 1000) as f64).collect();
    // About a second of work on two threads.
    let body = json!({"data": data, "statistic": "median", "resamples": 60000, "seed": 5});
    let request = std::thread::spawn(move || {
        let rt = tokio::runtime::Builder::new_current_thread().enable_all().build().unwrap();
        rt.block_on(async {
            let r = reqwest::Client::new().post(url).json(&body).send().await.unwrap();
            (r.status().as_u16(), r.json::<serde_json::Value>().await.unwrap())
        })
    });
    std::thread::sleep(Duration::from_millis(300));
    sigterm(&server.child);
    let (status, v) = request.join().unwrap();
    assert_eq!(status, 200, "{v}");
    assert_eq!(v["resamples"], 60000);
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
}
