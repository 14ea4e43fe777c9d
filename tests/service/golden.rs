//! Golden responses: the full response (every number, every warning) of two dozen varied
//! requests, pinned in `tests/golden/*.json`. Every statistic, every method, `auto`, `exact`,
//! Bayesian, aggregated, columns, a grouped jackknife, a partial result and a batch. A change
//! in the engine or the service that moves any bit of any of them fails here; an intended
//! change rewrites the files with
//! `BANDSAW_WRITE_GOLDEN=1 cargo test --release --test service golden`
//! and says why in its commit.
//!
//! Only `elapsed_ms` (a clock reading) and `token` (checked by replaying it instead) are left out.

use serde_json::Value;

use crate::common::TestApp;

const DIR: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/golden");

/// Remove the fields that may differ between identical computations: `elapsed_ms` anywhere,
/// and `token` (kept aside for replay).
fn strip(v: &mut Value) {
    match v {
        Value::Object(o) => {
            o.remove("elapsed_ms");
            o.remove("token");
            o.values_mut().for_each(strip);
        }
        Value::Array(a) => a.iter_mut().for_each(strip),
        _ => {}
    }
}

/// The first place where two JSON values differ: (pointer, one, the other).
fn first_difference(a: &Value, b: &Value, at: String) -> Option<(String, Value, Value)> {
    match (a, b) {
        (Value::Object(x), Value::Object(y)) => {
            let keys: Vec<&String> = x.keys().chain(y.keys().filter(|k| !x.contains_key(*k))).collect();
            keys.into_iter().find_map(|k| {
                let (p, q) = (x.get(k).unwrap_or(&Value::Null), y.get(k).unwrap_or(&Value::Null));
                first_difference(p, q, format!("{at}/{k}"))
            })
        }
        (Value::Array(x), Value::Array(y)) if x.len() == y.len() => x
            .iter()
            .zip(y)
            .enumerate()
            .find_map(|(i, (p, q))| first_difference(p, q, format!("{at}/{i}"))),
        _ if a == b => None,
        _ => Some((at, a.clone(), b.clone())),
    }
}

async fn send(app: &TestApp, path: &str, headers: &Value, body: &Value) -> Value {
    let mut req = app.client.post(format!("{}{path}", app.base)).json(body);
    if let Some(h) = headers.as_object() {
        for (k, v) in h {
            req = req.header(k, v.as_str().unwrap());
        }
    }
    let (status, _, v) = TestApp::read(req.send().await.unwrap()).await;
    assert_eq!(status, 200, "{v}");
    v
}

#[tokio::test]
async fn responses_match_the_golden_files_bit_for_bit() {
    let app = TestApp::spawn_with(|c| c.test_hooks = true).await;
    let write = std::env::var("BANDSAW_WRITE_GOLDEN").is_ok_and(|v| v == "1");
    let mut files: Vec<_> = std::fs::read_dir(DIR).unwrap().map(|e| e.unwrap().path()).collect();
    files.sort();
    assert!(files.len() >= 12, "the golden set is gone");
    for file in files {
        let mut golden: Value = serde_json::from_str(&std::fs::read_to_string(&file).unwrap()).unwrap();
        let path = golden["path"].as_str().unwrap_or("/v1/interval").to_string();
        let headers = golden["headers"].clone();
        let request = golden["request"].clone();
        let mut got = send(&app, &path, &headers, &request).await;
        if path == "/v1/interval" {
            // The token replays to the same response (the token itself is not pinned).
            let replay = serde_json::json!({"data": request["data"], "token": got["token"]});
            let mut again = send(&app, &path, &Value::Null, &replay).await;
            strip(&mut again);
            let mut first = got.clone();
            strip(&mut first);
            assert_eq!(again, first, "{}: the token does not replay", file.display());
        }
        strip(&mut got);
        if write {
            golden["response"] = got;
            std::fs::write(&file, serde_json::to_string_pretty(&golden).unwrap() + "\n").unwrap();
            continue;
        }
        if let Some((at, want, have)) = first_difference(&golden["response"], &got, String::new()) {
            panic!("{}: the response moved at {at}: want {want}, got {have}", file.display());
        }
    }
}
