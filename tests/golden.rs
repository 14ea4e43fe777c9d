//! Golden responses: the full response (every number, every warning) of two dozen varied
//! requests, pinned in `tests/golden/*.json`. Every statistic, every method, `auto`, `exact`,
//! Bayesian, aggregated, columns, a grouped jackknife, a partial result and a batch. A change
//! in the engine or the service that moves any bit of any of them fails here; an intended
//! change rewrites the files with `BANDSAW_WRITE_GOLDEN=1 cargo test --release --test golden`
//! and says why in its commit.
//!
//! Only `elapsed_ms` (a clock reading) and `token` (checked by replaying it instead) are left out.

mod common;

use common::TestApp;
use serde_json::Value;

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
        assert!(
            golden["response"] == got,
            "{}: the response moved.\nwant {}\ngot  {}",
            file.display(),
            golden["response"],
            got
        );
    }
}
