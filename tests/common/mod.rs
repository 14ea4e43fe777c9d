//! Shared helpers for black-box tests: spawn the real application on port 0 and talk HTTP.
#![allow(dead_code)]

use bandsaw::config::Config;
use bandsaw::server::Application;
use serde_json::Value;

/// A running server for one test.
pub struct TestApp {
    pub base: String,
    pub client: reqwest::Client,
}

impl TestApp {
    pub async fn spawn() -> TestApp {
        Self::spawn_with(|_| {}).await
    }

    /// Spawn with a modified default configuration (listening on 127.0.0.1:0).
    pub async fn spawn_with(f: impl FnOnce(&mut Config)) -> TestApp {
        let mut config = Config {
            listen: "127.0.0.1:0".into(),
            threads: 2,
            ..Config::default()
        };
        f(&mut config);
        let app = Application::build(config).await.expect("server builds");
        let base = format!("http://{}", app.address());
        tokio::spawn(app.run_until_stopped());
        TestApp {
            base,
            client: reqwest::Client::new(),
        }
    }

    /// POST JSON to a path; returns (status, content-type, body as JSON).
    pub async fn post(&self, path: &str, body: &Value) -> (u16, String, Value) {
        let resp = self
            .client
            .post(format!("{}{path}", self.base))
            .json(body)
            .send()
            .await
            .expect("request");
        Self::read(resp).await
    }

    /// POST raw bytes with a content type.
    pub async fn post_raw(&self, path: &str, content_type: &str, body: Vec<u8>) -> (u16, String, Value) {
        let resp = self
            .client
            .post(format!("{}{path}", self.base))
            .header("content-type", content_type)
            .body(body)
            .send()
            .await
            .expect("request");
        Self::read(resp).await
    }

    pub async fn get(&self, path: &str) -> (u16, String, Value) {
        let resp = self.client.get(format!("{}{path}", self.base)).send().await.expect("request");
        Self::read(resp).await
    }

    pub async fn read(resp: reqwest::Response) -> (u16, String, Value) {
        let status = resp.status().as_u16();
        let ct = resp
            .headers()
            .get("content-type")
            .and_then(|v| v.to_str().ok())
            .unwrap_or("")
            .to_string();
        let bytes = resp.bytes().await.expect("body");
        let v = serde_json::from_slice(&bytes).unwrap_or(Value::Null);
        (status, ct, v)
    }
}

/// The pointers of a problem document's `errors`.
pub fn pointers(problem: &Value) -> Vec<String> {
    problem["errors"]
        .as_array()
        .map(|a| a.iter().map(|e| e["pointer"].as_str().unwrap_or("").to_string()).collect())
        .unwrap_or_default()
}

/// Remove the timing field, the only one that may differ between identical computations.
pub fn without_timing(mut v: Value) -> Value {
    if let Some(o) = v.as_object_mut() {
        o.remove("elapsed_ms");
    }
    v
}
