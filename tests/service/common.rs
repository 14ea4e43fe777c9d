//! Shared helpers: spawn the real application on port 0, send it real HTTP requests, and read
//! problem documents.
//!
//! Every response read through [`TestApp`] is checked against the OpenAPI document
//! (`bandsaw::api::openapi`): its status must be documented for the operation, its content type
//! must be one the document lists, and a JSON body must validate against the documented schema.
//! A path that is not in the document must be a `NotFound` problem, and a method a documented
//! path does not list a `MethodNotAllowed` problem. A failure panics with the JSON Pointer into
//! the body and what is wrong there.

use std::collections::BTreeMap;
use std::sync::OnceLock;

use bandsaw::config::{Config, Threads};
use bandsaw::server::Application;
use serde_json::{json, Value};

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
            threads: Threads { threads: 2 },
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
        Self::read_checked(resp, Some("post")).await
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
        Self::read_checked(resp, Some("post")).await
    }

    pub async fn get(&self, path: &str) -> (u16, String, Value) {
        let resp = self.client.get(format!("{}{path}", self.base)).send().await.expect("request");
        Self::read_checked(resp, Some("get")).await
    }

    /// POST JSON with an `Accept` header; returns (status, content-type, `Vary`, body as text),
    /// the response checked against the OpenAPI document.
    pub async fn post_accepting(&self, path: &str, body: &Value, accept: &str) -> (u16, String, String, String) {
        let resp = self
            .client
            .post(format!("{}{path}", self.base))
            .header("accept", accept)
            .json(body)
            .send()
            .await
            .expect("request");
        let status = resp.status().as_u16();
        let header = |name: &str| {
            let values = resp.headers().get_all(name).iter();
            values.filter_map(|v| v.to_str().ok()).collect::<Vec<_>>().join(", ")
        };
        let (ct, vary) = (header("content-type"), header("vary"));
        let bytes = resp.bytes().await.expect("body");
        check_response(Some("post"), path, status, &ct, &bytes);
        (status, ct, vary, String::from_utf8(bytes.to_vec()).expect("UTF-8"))
    }

    /// Read a response: (status, content-type, body as JSON, `Null` when it is not JSON). The
    /// response is checked against the OpenAPI document as that of the only operation of its
    /// path (the request's method is not known here).
    pub async fn read(resp: reqwest::Response) -> (u16, String, Value) {
        Self::read_checked(resp, None).await
    }

    async fn read_checked(resp: reqwest::Response, method: Option<&str>) -> (u16, String, Value) {
        let path = resp.url().path().to_string();
        let encoded = resp.headers().contains_key("content-encoding");
        let status = resp.status().as_u16();
        let ct = resp
            .headers()
            .get("content-type")
            .and_then(|v| v.to_str().ok())
            .unwrap_or("")
            .to_string();
        let bytes = resp.bytes().await.expect("body");
        if !encoded {
            check_response(method, &path, status, &ct, &bytes);
        }
        let v = serde_json::from_slice(&bytes).unwrap_or(Value::Null);
        (status, ct, v)
    }
}

// ---------------------------------------------------------------------------------------------
// Responses checked against the OpenAPI document
// ---------------------------------------------------------------------------------------------

/// One documented response: its name for messages and, per media type (its essence, without
/// parameters), a validator of the body when the type is JSON.
struct Documented {
    name: String,
    content: Vec<(String, Option<jsonschema::Validator>)>,
}

/// The document's responses, built once per test binary.
struct Contract {
    /// path → method (lowercase) → status key ("200", "default", …) → response.
    operations: BTreeMap<String, BTreeMap<String, BTreeMap<String, Documented>>>,
    not_found: Documented,
    method_not_allowed: Documented,
}

const METHODS: [&str; 8] = ["get", "put", "post", "delete", "options", "head", "patch", "trace"];

/// The media type without parameters, lowercased.
fn essence(content_type: &str) -> String {
    content_type.split(';').next().unwrap_or("").trim().to_ascii_lowercase()
}

fn is_json(essence: &str) -> bool {
    essence == "application/json" || (essence.starts_with("application/") && essence.ends_with("+json"))
}

/// A validator of `schema`, a schema object of the document whose `$ref`s point into
/// `#/components/schemas`: OpenAPI 3.1 schemas are JSON Schema 2020-12, so the schema is made
/// the root of a resource that carries the document's components beside it.
pub fn schema_validator(document: &Value, schema: &Value) -> jsonschema::Validator {
    let mut root = match schema {
        Value::Object(o) => o.clone(),
        Value::Bool(b) => {
            return jsonschema::options()
                .with_draft(jsonschema::Draft::Draft202012)
                .build(&json!(b))
                .expect("bool schema")
        }
        other => panic!("a schema is an object: {other}"),
    };
    root.insert("components".into(), document["components"].clone());
    jsonschema::options()
        .with_draft(jsonschema::Draft::Draft202012)
        .build(&Value::Object(root))
        .unwrap_or_else(|e| panic!("the document's schema does not compile: {e}\n{schema:#}"))
}

/// Follow a response `$ref` (`#/components/responses/X`).
fn resolve<'a>(document: &'a Value, response: &'a Value) -> (&'a Value, Option<String>) {
    match response.get("$ref").and_then(Value::as_str) {
        Some(r) => {
            let pointer = r.strip_prefix('#').unwrap_or_else(|| panic!("a local $ref: {r}"));
            let target = document.pointer(pointer).unwrap_or_else(|| panic!("{r} is not in the document"));
            (target, r.rsplit('/').next().map(String::from))
        }
        None => (response, None),
    }
}

fn documented(document: &Value, name: String, response: &Value) -> Documented {
    let (response, component) = resolve(document, response);
    let name = match component {
        Some(c) => format!("{name} ({c})"),
        None => name,
    };
    let content = response
        .get("content")
        .and_then(Value::as_object)
        .map(|c| {
            c.iter()
                .map(|(media_type, media)| {
                    let e = essence(media_type);
                    let validator = is_json(&e).then(|| schema_validator(document, media.get("schema").unwrap_or(&json!(true))));
                    (e, validator)
                })
                .collect()
        })
        .unwrap_or_default();
    Documented { name, content }
}

/// The document as JSON.
pub fn document() -> &'static Value {
    static DOCUMENT: OnceLock<Value> = OnceLock::new();
    DOCUMENT.get_or_init(|| serde_json::from_str(&bandsaw::api::openapi::document_json()).expect("the document is JSON"))
}

fn contract() -> &'static Contract {
    static CONTRACT: OnceLock<Contract> = OnceLock::new();
    CONTRACT.get_or_init(|| {
        let doc = document();
        let mut operations = BTreeMap::new();
        for (path, item) in doc["paths"].as_object().expect("paths") {
            let mut methods = BTreeMap::new();
            for method in METHODS {
                let Some(op) = item.get(method) else { continue };
                let mut responses = BTreeMap::new();
                for (status, response) in op["responses"].as_object().expect("responses") {
                    let name = format!("{} {path} {status}", method.to_uppercase());
                    responses.insert(status.clone(), documented(doc, name, response));
                }
                methods.insert(method.to_string(), responses);
            }
            operations.insert(path.clone(), methods);
        }
        let general = |name: &str| {
            documented(
                doc,
                format!("any route's {name}"),
                &json!({"$ref": format!("#/components/responses/{name}")}),
            )
        };
        Contract {
            operations,
            not_found: general("NotFound"),
            method_not_allowed: general("MethodNotAllowed"),
        }
    })
}

/// Check one response against the document; panics with what does not match. `method` is
/// lowercase, or `None` when unknown (then the path's only operation is assumed).
fn check_response(method: Option<&str>, path: &str, status: u16, content_type: &str, body: &[u8]) {
    let contract = contract();
    let path = path.split('?').next().unwrap_or(path);
    let shown = method.map_or("?".to_string(), str::to_uppercase);
    let expected: &Documented = match contract.operations.get(path) {
        None => {
            assert_eq!(
                status, 404,
                "{shown} {path} answered {status}, but the path is not in the OpenAPI document (src/api/openapi.rs): document it, or it must be a 404"
            );
            &contract.not_found
        }
        Some(methods) => {
            let op = match method {
                Some(m) => methods.get(m),
                None if status == 405 => None,
                None if methods.len() == 1 => methods.values().next(),
                None => return,
            };
            match op {
                None => {
                    assert_eq!(
                        status,
                        405,
                        "{shown} {path} answered {status}, but the OpenAPI document lists only {:?} for this path: document the method, or it must be a 405",
                        methods.keys().collect::<Vec<_>>()
                    );
                    &contract.method_not_allowed
                }
                Some(responses) => responses
                    .get(&status.to_string())
                    .or_else(|| responses.get("default"))
                    .unwrap_or_else(|| {
                        panic!(
                            "{shown} {path} answered {status}, which the OpenAPI document does not list for it (it lists {:?}); body: {}",
                            responses.keys().collect::<Vec<_>>(),
                            String::from_utf8_lossy(&body[..body.len().min(2000)])
                        )
                    }),
            }
        }
    };
    check_body(expected, content_type, body);
}

/// Check a body against a documented response.
fn check_body(expected: &Documented, content_type: &str, body: &[u8]) {
    if expected.content.is_empty() {
        return;
    }
    let e = essence(content_type);
    let Some((_, validator)) = expected.content.iter().find(|(m, _)| *m == e) else {
        panic!(
            "{}: the content type is {content_type:?}, but the OpenAPI document lists {:?}",
            expected.name,
            expected.content.iter().map(|(m, _)| m).collect::<Vec<_>>()
        );
    };
    let Some(validator) = validator else { return };
    let value: Value = serde_json::from_slice(body).unwrap_or_else(|err| {
        panic!(
            "{}: the body is not JSON ({err}): {}",
            expected.name,
            String::from_utf8_lossy(&body[..body.len().min(2000)])
        )
    });
    let errors: Vec<String> = validator
        .iter_errors(&value)
        .map(|err| {
            let at = err.instance_path().to_string();
            format!("  at {:?}: {err} (schema {})", at, err.schema_path())
        })
        .collect();
    if !errors.is_empty() {
        let mut shown = value.to_string();
        if shown.len() > 4000 {
            let mut end = 4000;
            while !shown.is_char_boundary(end) {
                end -= 1;
            }
            shown.truncate(end);
            shown.push('…');
        }
        panic!(
            "{}: the body does not match the OpenAPI document:\n{}\nbody: {shown}",
            expected.name,
            errors.join("\n")
        );
    }
}

/// The pointers of a problem document's `errors`.
pub fn pointers(problem: &Value) -> Vec<String> {
    problem["errors"]
        .as_array()
        .map(|a| a.iter().map(|e| e["pointer"].as_str().unwrap_or("").to_string()).collect())
        .unwrap_or_default()
}

/// The value of an unlabelled metric line `name value`.
pub fn metric(text: &str, name: &str) -> f64 {
    let line = text
        .lines()
        .find(|l| l.split_whitespace().next() == Some(name))
        .unwrap_or_else(|| panic!("no {name} in\n{text}"));
    line.split_whitespace().last().unwrap().parse().unwrap()
}

/// Remove the timing fields (at any depth: a comparison's contrast and a batch's results carry
/// their own), the only ones that may differ between identical computations.
pub fn without_timing(mut v: Value) -> Value {
    strip_timing(&mut v);
    v
}

fn strip_timing(v: &mut Value) {
    match v {
        Value::Object(o) => {
            o.remove("elapsed_ms");
            o.values_mut().for_each(strip_timing);
        }
        Value::Array(a) => a.iter_mut().for_each(strip_timing),
        _ => {}
    }
}

// ---------------------------------------------------------------------------------------------
// Reading results and problem documents
// ---------------------------------------------------------------------------------------------

/// The JSON Pointer of the first `null` anywhere in `v`, if any.
fn first_null(v: &Value, at: &str) -> Option<String> {
    match v {
        Value::Null => Some(at.to_string()),
        Value::Array(items) => items.iter().enumerate().find_map(|(i, it)| first_null(it, &format!("{at}/{i}"))),
        Value::Object(o) => o
            .iter()
            .find_map(|(k, it)| first_null(it, &format!("{at}/{}", k.replace('~', "~0").replace('/', "~1")))),
        _ => None,
    }
}

/// Assert a 200 JSON response without nulls and return its body.
pub fn ok(resp: (u16, String, Value)) -> Value {
    let (status, ct, v) = resp;
    assert_eq!(status, 200, "expected 200, got {status}: {v}");
    assert!(ct.starts_with("application/json"), "content-type {ct:?}");
    assert!(v.is_object(), "the body is not a JSON object: {v}");
    if let Some(at) = first_null(&v, "") {
        panic!("the response has a null at {at:?}: {v}");
    }
    v
}

/// Assert a problem document with this status and slug; return it.
pub fn problem(resp: (u16, String, Value), status: u16, slug: &str) -> Value {
    let (s, ct, v) = resp;
    assert_eq!(s, status, "expected {status} /problems/{slug}, got {s}: {v}");
    assert_eq!(ct, "application/problem+json", "problem content-type for {v}");
    assert_eq!(v["type"], format!("/problems/{slug}"), "problem type: {v}");
    assert_eq!(v["status"], status, "problem status member: {v}");
    assert!(v["title"].as_str().is_some_and(|t| !t.is_empty()), "problem title: {v}");
    assert!(v["detail"].as_str().is_some_and(|t| !t.is_empty()), "problem detail: {v}");
    v
}

/// Assert a 422 invalid-request problem whose pointers are exactly `expected` (in any order).
pub fn invalid(resp: (u16, String, Value), expected: &[&str]) -> Value {
    let v = problem(resp, 422, "invalid-request");
    let mut got = pointers(&v);
    got.sort();
    let mut want: Vec<String> = expected.iter().map(|s| s.to_string()).collect();
    want.sort();
    assert_eq!(got, want, "pointers of {v}");
    for e in v["errors"].as_array().unwrap() {
        assert!(
            e["message"].as_str().is_some_and(|m| !m.is_empty()),
            "every error has a message: {v}"
        );
    }
    v
}

/// The error at `pointer` of a problem document.
fn error_at<'a>(v: &'a Value, pointer: &str) -> &'a Value {
    v["errors"]
        .as_array()
        .and_then(|a| a.iter().find(|e| e["pointer"] == pointer))
        .unwrap_or_else(|| panic!("no error at {pointer:?} in {v}"))
}

/// The message of the error at `pointer`.
pub fn message_at(v: &Value, pointer: &str) -> String {
    error_at(v, pointer)["message"]
        .as_str()
        .unwrap_or_else(|| panic!("no message at {pointer:?} in {v}"))
        .to_string()
}

/// The rule that refused the field at `pointer` (`None` when the field breaks the schema itself).
pub fn rule_at(v: &Value, pointer: &str) -> Option<String> {
    error_at(v, pointer)
        .get("rule")
        .map(|r| r.as_str().unwrap_or_else(|| panic!("a rule is a name: {v}")).to_string())
}
