//! Faults a client can cause, against the real binary over raw TCP: a client that hangs up
//! mid-job, clients that send a byte at a time, and more connections than the server serves at
//! once. Times are printed as figures (run with `--nocapture`), never asserted; the only time
//! bounds are generous deadlines that tell a hang from a slow machine.

use std::io::{ErrorKind, Read, Write};
use std::net::TcpStream;
use std::time::{Duration, Instant};

use serde_json::{json, Value};

use crate::common::metric;
use crate::process::{start, Server};

/// What a hang looks like: far beyond any answer the tests wait for.
const HANG: Duration = Duration::from_secs(60);

fn runtime() -> tokio::runtime::Runtime {
    tokio::runtime::Builder::new_current_thread().enable_all().build().unwrap()
}

fn get_text(rt: &tokio::runtime::Runtime, url: &str) -> (u16, String) {
    rt.block_on(async {
        let r = reqwest::get(url).await.unwrap();
        (r.status().as_u16(), r.text().await.unwrap())
    })
}

/// Poll `/metrics` until `name` reads `value`; how long that took.
fn wait_for_metric(rt: &tokio::runtime::Runtime, server: &Server, name: &str, value: f64) -> Duration {
    let started = Instant::now();
    let url = format!("{}/metrics", server.base);
    loop {
        if metric(&get_text(rt, &url).1, name) == value {
            return started.elapsed();
        }
        assert!(started.elapsed() < HANG, "{name} never reached {value}");
        std::thread::sleep(Duration::from_millis(2));
    }
}

/// A small request that must succeed.
fn normal_request(rt: &tokio::runtime::Runtime, server: &Server) -> u16 {
    rt.block_on(async {
        reqwest::Client::new()
            .post(format!("{}/v1/interval", server.base))
            .json(&json!({"data": [3.5, 4.25, 2.0, 5.5, 4.0], "seed": 3}))
            .send()
            .await
            .unwrap()
            .status()
            .as_u16()
    })
}

fn connect(server: &Server) -> TcpStream {
    TcpStream::connect(server.base.trim_start_matches("http://")).unwrap()
}

/// The head of a JSON POST to `/v1/interval` announcing `length` bytes of body.
fn head(length: usize) -> String {
    format!("POST /v1/interval HTTP/1.1\r\nHost: bandsaw\r\nContent-Type: application/json\r\nContent-Length: {length}\r\n\r\n")
}

#[test]
fn a_client_that_hangs_up_mid_job_frees_its_worker() {
    let server = start(&[]);
    let rt = runtime();
    // Minutes of work with a minute's time limit: only cancellation ends it soon.
    let data: Vec<f64> = (0..20000).map(|i| 350.0 + ((i * 7919) % 400) as f64).collect();
    let body = json!({"data": data, "statistic": "median", "resamples": 900000, "time_limit_ms": 60000}).to_string();
    let mut client = connect(&server);
    client.write_all(head(body.len()).as_bytes()).unwrap();
    client.write_all(body.as_bytes()).unwrap();
    wait_for_metric(&rt, &server, "bandsaw_jobs_running", 1.0);
    let hung_up = Instant::now();
    drop(client);
    wait_for_metric(&rt, &server, "bandsaw_jobs_running", 0.0);
    let freed = hung_up.elapsed();
    let (_, text) = get_text(&rt, &format!("{}/metrics", server.base));
    assert_eq!(metric(&text, "bandsaw_jobs_cancelled_total"), 1.0, "the job ended as cancelled");
    println!("figure: hang-up to free worker {:.1} ms", freed.as_secs_f64() * 1e3);
    assert_eq!(normal_request(&rt, &server), 200);
    assert_eq!(get_text(&rt, &format!("{}/readyz", server.base)).0, 200);
}

/// How a trickling connection ended.
#[derive(Debug)]
enum Ended {
    /// The server answered; the response text.
    Answered(String),
    /// The server closed the connection without an answer.
    Closed,
}

/// Send `head`, then `trickle` one byte per 100 ms, until the server answers or closes; also the
/// bytes of `trickle` sent and the time from the first byte of `head`.
fn trickle(server: &Server, head: &[u8], trickle: &[u8]) -> (Ended, usize, Duration) {
    let mut s = connect(server);
    let started = Instant::now();
    let mut sent = 0;
    s.write_all(head).unwrap();
    s.set_read_timeout(Some(Duration::from_millis(100))).unwrap();
    let mut response = Vec::new();
    let mut buf = [0u8; 4096];
    loop {
        assert!(started.elapsed() < HANG, "the server let a trickling client go on for a minute");
        // The wait between bytes is a read, so an answer is taken as soon as it comes.
        match s.read(&mut buf) {
            Ok(0) => break,
            Ok(k) => response.extend_from_slice(&buf[..k]),
            Err(e) if matches!(e.kind(), ErrorKind::WouldBlock | ErrorKind::TimedOut) => {
                if !response.is_empty() {
                    break;
                }
                if sent < trickle.len() && s.write_all(&trickle[sent..=sent]).is_ok() {
                    sent += 1;
                } else if sent < trickle.len() {
                    break;
                }
            }
            Err(_) => break,
        }
    }
    let ended = if response.is_empty() {
        Ended::Closed
    } else {
        Ended::Answered(String::from_utf8_lossy(&response).into_owned())
    };
    (ended, sent, started.elapsed())
}

#[test]
fn a_body_sent_a_byte_at_a_time_is_answered_408_and_others_are_served_meanwhile() {
    let server = std::sync::Arc::new(start(&["--request-read-timeout-ms", "1500"]));
    let rt = runtime();
    // A kilobyte at ten bytes a second would take 100 s.
    let body = vec![b' '; 1000];
    // More trickling bodies than compute threads (2), and one trickling head.
    let slow: Vec<_> = (0..5)
        .map(|_| {
            let (server, body) = (server.clone(), body.clone());
            std::thread::spawn(move || trickle(&server, head(body.len()).as_bytes(), &body))
        })
        .collect();
    let slow_head = {
        let server = server.clone();
        std::thread::spawn(move || {
            let line = b"POST /v1/interval HTTP/1.1\r\n";
            trickle(&server, line, &[b'x'; 1000])
        })
    };
    // Meanwhile ordinary requests are served.
    for _ in 0..5 {
        assert_eq!(normal_request(&rt, &server), 200);
    }
    for h in slow {
        let (ended, sent, took) = h.join().unwrap();
        let Ended::Answered(text) = &ended else {
            panic!("no answer to a trickled body: {ended:?}")
        };
        assert!(text.starts_with("HTTP/1.1 408"), "{text}");
        let problem: Value = serde_json::from_str(&text[text.find("\r\n\r\n").unwrap() + 4..]).unwrap();
        assert_eq!(problem["type"], "/problems/request-timeout");
        assert_eq!(problem["status"], 408);
        assert!(sent < body.len(), "the body was cut off ({sent} of {} bytes sent)", body.len());
        println!(
            "figure: trickled body cut off after {:.0} ms, {sent} bytes",
            took.as_secs_f64() * 1e3
        );
    }
    // hyper closes a connection whose head is too slow (without an answer when it cannot send
    // one); either way the connection is let go.
    let (ended, sent, took) = slow_head.join().unwrap();
    if let Ended::Answered(text) = &ended {
        assert!(text.starts_with("HTTP/1.1 408"), "{text}");
    }
    assert!(sent < 1000, "the head was never cut off");
    println!(
        "figure: trickled head ended ({ended:?}) after {:.0} ms, {sent} bytes",
        took.as_secs_f64() * 1e3
    );
    assert_eq!(normal_request(&rt, &server), 200);
}

#[test]
fn trickling_clients_hold_no_compute_thread_and_no_queue_place() {
    // A long read timeout: the slow clients stay connected for the whole test.
    let server = start(&["--request-read-timeout-ms", "600000", "--queue", "2"]);
    let rt = runtime();
    // More than threads + queue (2 + 2): had reading a body taken a pool place, these would fill it.
    let mut slow: Vec<TcpStream> = (0..8)
        .map(|_| {
            let mut s = connect(&server);
            s.write_all(head(1000).as_bytes()).unwrap();
            s.write_all(b"{\"data\": [1").unwrap();
            s
        })
        .collect();
    for _ in 0..5 {
        assert_eq!(normal_request(&rt, &server), 200);
    }
    let (ready, _) = get_text(&rt, &format!("{}/readyz", server.base));
    assert_eq!(ready, 200, "the pool is not full");
    let (_, text) = get_text(&rt, &format!("{}/metrics", server.base));
    assert_eq!(metric(&text, "bandsaw_jobs_running"), 0.0);
    assert_eq!(metric(&text, "bandsaw_queue_depth"), 0.0);
    // And the slow ones are still open, unanswered: nothing to read yet.
    for s in &mut slow {
        s.set_nonblocking(true).unwrap();
        let mut b = [0u8; 1];
        let e = s.read(&mut b).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::WouldBlock, "a slow client was answered or closed early");
    }
}

#[test]
fn past_the_connection_limit_a_client_waits_for_a_free_connection() {
    let server = std::sync::Arc::new(start(&["--max-connections", "3"]));
    let idle: Vec<TcpStream> = (0..3).map(|_| connect(&server)).collect();
    let waiting = {
        let server = server.clone();
        std::thread::spawn(move || normal_request(&runtime(), &server))
    };
    // Three connections held: the fourth is not served. (On a slow machine this sleep proves
    // less, never fails.)
    std::thread::sleep(Duration::from_millis(300));
    assert!(!waiting.is_finished(), "a fourth connection was served past --max-connections 3");
    drop(idle);
    assert_eq!(waiting.join().unwrap(), 200);
}
