//! The contract: the OpenAPI document, the parser, the catalogue and `docs/api.md` agree, in
//! both directions.
//!
//! - The committed `openapi/openapi.json`, `GET /openapi.json` and `bandsaw openapi` are the same
//!   bytes, an OpenAPI 3.1 document that lists every route with every status it answers.
//! - Every example in the document validates against its schema, and every request example is
//!   accepted by the server.
//! - Requests generated from the document's schemas are accepted, or refused only by a rule the
//!   document names (`errors[].rule`) or by a documented limit (`work-limit`, `time-limit`).
//! - Every field the parser reads is in the document, and the catalogue, the document and the
//!   parser list the same statistics, schemes and methods.
//! - `docs/api.md` names exactly the document's fields, values and routes.
//!
//! After changing the API, rewrite the committed file with
//! `BANDSAW_WRITE_OPENAPI=1 cargo test --release --test service contract`.

use std::collections::BTreeSet;

use bandsaw::api::openapi::document_json;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde_json::{json, Map, Value};

use crate::common::{document, ok, schema_validator, without_timing, TestApp};

const COMMITTED: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/openapi/openapi.json");
const API_MD: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/docs/api.md");
const REWRITE: &str = "BANDSAW_WRITE_OPENAPI=1 cargo test --release --test service contract";

#[test]
fn the_committed_document_is_the_generated_one() {
    let generated = document_json();
    if std::env::var("BANDSAW_WRITE_OPENAPI").is_ok_and(|v| v == "1") {
        std::fs::write(COMMITTED, &generated).unwrap();
        eprintln!("wrote {COMMITTED}");
        return;
    }
    let committed =
        std::fs::read_to_string(COMMITTED).unwrap_or_else(|e| panic!("cannot read {COMMITTED} ({e}); write it with `{REWRITE}`"));
    if committed != generated {
        let line = committed
            .lines()
            .zip(generated.lines())
            .position(|(a, b)| a != b)
            .unwrap_or(committed.lines().count().min(generated.lines().count()));
        panic!(
            "openapi/openapi.json differs from the document the code generates (first at line {}: committed {:?}, generated {:?}). \
             If the API change is intended, run `{REWRITE}` and commit the file.",
            line + 1,
            committed.lines().nth(line).unwrap_or("<end>"),
            generated.lines().nth(line).unwrap_or("<end>"),
        );
    }
}

#[tokio::test]
async fn the_served_and_printed_documents_are_the_generated_one() {
    let app = TestApp::spawn().await;
    let resp = app.client.get(format!("{}/openapi.json", app.base)).send().await.unwrap();
    assert_eq!(resp.status().as_u16(), 200);
    let ct = resp.headers()["content-type"].to_str().unwrap().to_string();
    assert!(ct.starts_with("application/json"), "{ct}");
    assert!(
        resp.text().await.unwrap() == document_json(),
        "GET /openapi.json is not the generated document"
    );
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_bandsaw"))
        .arg("openapi")
        .output()
        .expect("bandsaw runs");
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    assert!(
        String::from_utf8(out.stdout).unwrap() == document_json(),
        "bandsaw openapi printed another document"
    );
}

/// Every route this server serves, with every status it answers.
const ROUTES: &[(&str, &str, &[&str])] = &[
    (
        "post",
        "/v1/interval",
        &["200", "400", "401", "408", "409", "413", "415", "422", "500", "503"],
    ),
    (
        "post",
        "/v1/compare",
        &["200", "400", "401", "408", "409", "413", "415", "422", "500", "503"],
    ),
    (
        "post",
        "/v1/batch",
        &["200", "400", "401", "408", "413", "415", "422", "500", "503"],
    ),
    ("get", "/v1/catalog", &["200", "401"]),
    ("get", "/healthz", &["200"]),
    ("get", "/readyz", &["200", "503"]),
    ("get", "/metrics", &["200"]),
    ("get", "/openapi.json", &["200"]),
    ("get", "/", &["200", "304"]),
];

/// Follow a local `$ref`.
fn deref<'a>(doc: &'a Value, v: &'a Value) -> &'a Value {
    match v.get("$ref").and_then(Value::as_str) {
        Some(r) => doc.pointer(r.strip_prefix('#').unwrap()).unwrap_or_else(|| panic!("dangling {r}")),
        None => v,
    }
}

/// The problem types a problem response allows.
fn problem_types(doc: &Value, response: &Value) -> Vec<String> {
    let schema = &deref(doc, response)["content"]["application/problem+json"]["schema"];
    let all_of = schema["allOf"]
        .as_array()
        .unwrap_or_else(|| panic!("a problem schema is allOf: {schema}"));
    assert_eq!(all_of[0]["$ref"], "#/components/schemas/Problem");
    all_of[1]["properties"]["type"]["enum"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t.as_str().unwrap().to_string())
        .collect()
}

fn check_operation(doc: &Value, method: &str, path: &str, statuses: &[&str]) {
    let item = doc["paths"][path].as_object().unwrap_or_else(|| panic!("{path} is documented"));
    assert_eq!(item.keys().collect::<Vec<_>>(), vec![method], "{path} has exactly one operation");
    let op = &item[method];
    assert!(op["operationId"].is_string() && op["summary"].is_string(), "{path}");
    let responses = op["responses"].as_object().unwrap();
    assert_eq!(
        responses.keys().map(String::as_str).collect::<Vec<_>>(),
        statuses,
        "{method} {path}: documented statuses"
    );
    for (status, response) in responses {
        let response = deref(doc, response);
        assert!(response["description"].as_str().is_some_and(|d| !d.is_empty()), "{path} {status}");
        if status == "304" {
            // Not Modified has no body (RFC 9110 §15.4.5).
            assert!(response.get("content").is_none(), "{path} {status}");
            continue;
        }
        let content = response["content"]
            .as_object()
            .unwrap_or_else(|| panic!("{path} {status} has content"));
        if status.starts_with('2') {
            assert!(!content.contains_key("application/problem+json"), "{path} {status}");
        } else {
            assert_eq!(
                content.keys().collect::<Vec<_>>(),
                vec!["application/problem+json"],
                "{path} {status}: errors are problem documents"
            );
            assert!(!problem_types(doc, response).is_empty());
        }
    }
    // /v1/* takes an optional bearer key; the other routes never need one.
    let security = op.get("security");
    if path.starts_with("/v1/") {
        assert_eq!(security, Some(&json!([{"bearer": []}, {}])), "{path}");
    } else {
        assert!(security.is_none(), "{path}");
    }
}

#[test]
fn the_document_is_openapi_3_1_and_lists_every_route_and_status() {
    let doc = document();
    assert!(doc["openapi"].as_str().unwrap().starts_with("3.1."), "{}", doc["openapi"]);
    assert_eq!(doc["info"]["version"], env!("CARGO_PKG_VERSION"));
    let paths: BTreeSet<&str> = doc["paths"].as_object().unwrap().keys().map(String::as_str).collect();
    assert_eq!(paths, ROUTES.iter().map(|(_, p, _)| *p).collect(), "the documented paths");
    for (method, path, statuses) in ROUTES {
        check_operation(doc, method, path, statuses);
    }
    let types = |path: &str, method: &str, status: &str| problem_types(doc, &doc["paths"][path][method]["responses"][status]);
    assert_eq!(types("/v1/interval", "post", "400"), ["/problems/malformed-json"]);
    assert_eq!(types("/v1/interval", "post", "408"), ["/problems/request-timeout"]);
    assert_eq!(types("/v1/interval", "post", "409"), ["/problems/data-mismatch"]);
    assert_eq!(
        types("/v1/interval", "post", "422"),
        ["/problems/invalid-request", "/problems/work-limit"]
    );
    assert_eq!(
        types("/v1/interval", "post", "503"),
        ["/problems/overloaded", "/problems/time-limit"]
    );
    assert_eq!(types("/v1/batch", "post", "503"), ["/problems/overloaded"]);
    assert_eq!(types("/readyz", "get", "503"), ["/problems/not-ready"]);
    for (name, slug) in [
        ("NotFound", "/problems/not-found"),
        ("MethodNotAllowed", "/problems/method-not-allowed"),
    ] {
        assert_eq!(
            problem_types(doc, &json!({"$ref": format!("#/components/responses/{name}")})),
            [slug]
        );
    }
}

/// Every example of a media type (`example` and `examples`): (where, schema, example, is a request).
fn examples(doc: &Value) -> Vec<(String, Value, Value, bool)> {
    let mut out = Vec::new();
    let mut media = |at: String, content: &Value, request: bool| {
        for (media_type, m) in content.as_object().into_iter().flatten() {
            let schema = m.get("schema").cloned().unwrap_or(json!(true));
            if let Some(e) = m.get("example") {
                out.push((format!("{at} {media_type}"), schema.clone(), e.clone(), request));
            }
            for (name, e) in m.get("examples").and_then(Value::as_object).into_iter().flatten() {
                out.push((format!("{at} {media_type} {name}"), schema.clone(), e["value"].clone(), request));
            }
        }
    };
    for (path, item) in doc["paths"].as_object().unwrap() {
        for (method, op) in item.as_object().unwrap() {
            media(format!("{method} {path}"), &op["requestBody"]["content"], true);
            for (status, r) in op["responses"].as_object().unwrap() {
                if r.get("$ref").is_none() {
                    media(format!("{method} {path} {status}"), &r["content"], false);
                }
            }
        }
    }
    for (name, r) in doc["components"]["responses"].as_object().unwrap() {
        media(format!("components.responses.{name}"), &r["content"], false);
    }
    out
}

#[tokio::test]
async fn every_example_validates_and_every_request_example_is_accepted() {
    let app = TestApp::spawn().await;
    // The example responses are the server's own answers to the example requests.
    use bandsaw::api::openapi as api;
    let pairs = [
        (
            "/v1/interval",
            api::interval_request_example(),
            "interval",
            api::interval_response_example(),
        ),
        (
            "/v1/compare",
            api::compare_request_example(),
            "compare",
            api::compare_response_example(),
        ),
        ("/v1/batch", api::batch_request_example(), "batch", api::batch_response_example()),
    ];
    // Every file is written before any is compared, so that one rewriting run does for all.
    let mut moved = Vec::new();
    for (route, request, name, example) in pairs {
        let answer = ok(app.post(route, &request).await);
        let file = format!("{}/openapi/{name}_response_example.json", env!("CARGO_MANIFEST_DIR"));
        if std::env::var_os("BANDSAW_WRITE_EXAMPLES").is_some() {
            std::fs::write(&file, serde_json::to_string_pretty(&answer).unwrap() + "\n").unwrap();
        }
        if without_timing(example) != without_timing(answer) {
            moved.push(route);
        }
    }
    assert!(
        moved.is_empty(),
        "the example responses of {moved:?} are not what the server answers to their example requests; \
         rewrite them with BANDSAW_WRITE_EXAMPLES=1 cargo test --release --test service every_example"
    );
    let doc = document();
    let all = examples(doc);
    assert!(all.len() >= 15, "{} examples", all.len());
    let mut failures = Vec::new();
    for (at, schema, example, _) in &all {
        for e in schema_validator(doc, schema).iter_errors(example) {
            failures.push(format!("{at}: at {:?}: {e}", e.instance_path().to_string()));
        }
    }
    assert!(
        failures.is_empty(),
        "examples that do not match their schemas:\n{}",
        failures.join("\n")
    );
    let requests: Vec<_> = all.iter().filter(|e| e.3).collect();
    assert_eq!(requests.len(), 3, "one request example per compute route");
    for (at, _, example, _) in requests {
        let path = at.split(' ').nth(1).unwrap();
        let (status, _, body) = app.post(path, example).await;
        assert_eq!(status, 200, "{at}: {body}");
    }
}

// ---------------------------------------------------------------------------------------------
// Requests generated from the document
// ---------------------------------------------------------------------------------------------

/// Random instances of the document's schemas, for the subset of JSON Schema the document
/// uses. Sizes and magnitudes stay small where the schema leaves them open, so that most
/// requests are cheap; the server's own limits are what the rest meets.
struct Generator<'a> {
    doc: &'a Value,
    rng: ChaCha8Rng,
}

impl Generator<'_> {
    fn instance(&mut self, schema: &Value) -> Value {
        let schema = deref(self.doc, schema);
        if let Some(items) = schema["oneOf"].as_array() {
            let pick = &items[self.rng.random_range(0..items.len())];
            return self.instance(pick);
        }
        if let Some(parts) = schema["allOf"].as_array() {
            let mut merged = Map::new();
            for p in parts {
                if let Value::Object(o) = self.instance(p) {
                    merged.extend(o);
                }
            }
            return Value::Object(merged);
        }
        if let Some(values) = schema["enum"].as_array() {
            return values[self.rng.random_range(0..values.len())].clone();
        }
        let kind = match &schema["type"] {
            Value::Array(kinds) => kinds[self.rng.random_range(0..kinds.len())].as_str().unwrap().to_string(),
            Value::String(k) => k.clone(),
            _ => "object".into(),
        };
        match kind.as_str() {
            "object" => self.object(schema),
            "array" => self.array(schema),
            "number" => self.number(schema),
            "integer" => self.integer(schema),
            "boolean" => json!(self.rng.random_bool(0.5)),
            _ => json!(self.word(schema["minLength"].as_u64().unwrap_or(0) as usize)),
        }
    }

    fn word(&mut self, min: usize) -> String {
        let n = self.rng.random_range(min.max(1)..=8);
        (0..n).map(|_| char::from(b'a' + self.rng.random_range(0..26u8))).collect()
    }

    fn object(&mut self, schema: &Value) -> Value {
        let required: Vec<&str> = schema["required"]
            .as_array()
            .map(|r| r.iter().filter_map(Value::as_str).collect())
            .unwrap_or_default();
        let mut out = Map::new();
        for (name, property) in schema["properties"].as_object().into_iter().flatten() {
            if required.contains(&name.as_str()) || self.rng.random_bool(0.4) {
                out.insert(name.clone(), self.instance(property));
            }
        }
        if let Some(extra) = schema.get("additionalProperties").filter(|a| a.is_object()) {
            let (n, len) = (self.rng.random_range(1..=3), self.rng.random_range(2..=8));
            for _ in 0..n {
                let key = self.word(1);
                let mut column = extra.clone();
                column["minItems"] = json!(len);
                column["maxItems"] = json!(len);
                out.insert(key, self.instance(&column));
            }
        }
        Value::Object(out)
    }

    fn array(&mut self, schema: &Value) -> Value {
        let min = schema["minItems"].as_u64().unwrap_or(0);
        let max = schema["maxItems"].as_u64().unwrap_or(min + 8).min(min + 8);
        let n = self.rng.random_range(min..=max);
        Value::Array((0..n).map(|_| self.instance(&schema["items"])).collect())
    }

    fn number(&mut self, schema: &Value) -> Value {
        let lo = schema["minimum"].as_f64().or(schema["exclusiveMinimum"].as_f64()).unwrap_or(-1e6);
        let hi = schema["maximum"].as_f64().or(schema["exclusiveMaximum"].as_f64()).unwrap_or(1e6);
        // Mostly moderate values, sometimes the whole range.
        let (lo, hi) = if self.rng.random_bool(0.8) {
            (lo.max(-50.0), hi.min(50.0))
        } else {
            (lo, hi)
        };
        let x: f64 = self.rng.random_range(lo..=hi);
        let exclusive = |bound: &str, at: f64| schema[bound].as_f64() == Some(at);
        if exclusive("exclusiveMinimum", x) || exclusive("exclusiveMaximum", x) {
            json!((lo + hi) / 2.0)
        } else {
            json!(x)
        }
    }

    fn integer(&mut self, schema: &Value) -> Value {
        let lo = schema["minimum"].as_u64().unwrap_or(0);
        let hi = schema["maximum"].as_u64().unwrap_or(u64::MAX).min(lo + 3000);
        json!(self.rng.random_range(lo..=hi))
    }
}

/// Bend a generated request to the rules `token_replaces_parameters`, `target_needs_auto` and
/// `sample_shape` (one count per value).
fn keep_to_rules(body: &mut Value) {
    let o = body.as_object_mut().unwrap();
    o.remove("token");
    if o.get("resamples") != Some(&json!("auto")) {
        o.remove("target_mc_error");
    }
    if let Some(values) = o["data"].get("values").and_then(Value::as_array).map(Vec::len) {
        let counts = o["data"]["counts"].as_array_mut().unwrap();
        counts.resize(values, json!(1));
    }
}

/// Whether a refusal is one the document allows for a request its schemas allow: a limit, or
/// field errors that each name a documented rule.
fn refused_by_rule(problem: &Value, rules: &[String]) -> Result<(), String> {
    match problem["type"].as_str() {
        Some("/problems/work-limit" | "/problems/time-limit") => Ok(()),
        Some("/problems/invalid-request") => {
            for e in problem["errors"].as_array().into_iter().flatten() {
                if !e["rule"].as_str().is_some_and(|r| rules.iter().any(|x| x == r)) {
                    return Err(format!("{} was refused by no documented rule: {}", e["pointer"], e["message"]));
                }
            }
            Ok(())
        }
        other => Err(format!("an unexpected problem {other:?}")),
    }
}

#[tokio::test]
async fn requests_generated_from_the_schemas_are_accepted_or_refused_by_a_documented_rule() {
    let app = TestApp::spawn_with(|c| c.limits.work_limit = 2e7).await;
    let doc = document();
    let rules: Vec<String> = doc["components"]["schemas"]["Rule"]["enum"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r.as_str().unwrap().into())
        .collect();
    let mut generator = Generator {
        doc,
        rng: ChaCha8Rng::seed_from_u64(20261202),
    };
    let (mut accepted, mut failures) = (0, Vec::new());
    for i in 0..300 {
        let mut body = generator.instance(&json!({"$ref": "#/components/schemas/IntervalRequest"}));
        // Four requests in five keep to three of the documented rules, so that the rest of the
        // request is explored past them; the fifth is sent as generated.
        if i % 5 != 0 {
            keep_to_rules(&mut body);
        }
        let (status, _, v) = app.post("/v1/interval", &body).await;
        match status {
            200 => accepted += 1,
            422 | 503 => {
                if let Err(e) = refused_by_rule(&v, &rules) {
                    failures.push(format!("{e}\n  request {body}"));
                }
            }
            _ => failures.push(format!("status {status}: {v}\n  request {body}")),
        }
    }
    assert!(
        failures.is_empty(),
        "{} generated requests were refused outside the documented rules:\n{}",
        failures.len(),
        failures.join("\n")
    );
    // The generator must reach the happy path too, or the check says little.
    assert!(accepted >= 60, "only {accepted} of 300 generated requests were accepted");
}

#[tokio::test]
async fn generated_batches_answer_every_job_by_the_same_contract() {
    let app = TestApp::spawn_with(|c| c.limits.work_limit = 2e7).await;
    let doc = document();
    let rules: Vec<String> = doc["components"]["schemas"]["Rule"]["enum"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r.as_str().unwrap().into())
        .collect();
    let mut generator = Generator {
        doc,
        rng: ChaCha8Rng::seed_from_u64(7),
    };
    let mut failures = Vec::new();
    for _ in 0..60 {
        let body = generator.instance(&json!({"$ref": "#/components/schemas/BatchRequest"}));
        let (status, _, v) = app.post("/v1/batch", &body).await;
        let problems: Vec<Value> = match status {
            200 => v["results"]
                .as_array()
                .unwrap()
                .iter()
                .filter_map(|r| r.get("error").cloned())
                .collect(),
            _ => vec![v.clone()],
        };
        for p in problems {
            if let Err(e) = refused_by_rule(&p, &rules) {
                failures.push(format!("{e}\n  batch {body}"));
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

// ---------------------------------------------------------------------------------------------
// One definition: parser, document, catalogue
// ---------------------------------------------------------------------------------------------

fn properties(schema: &Value) -> BTreeSet<String> {
    schema["properties"].as_object().unwrap().keys().cloned().collect()
}

fn schema_of(name: &str) -> &'static Value {
    &document()["components"]["schemas"][name]
}

#[test]
fn every_field_the_parser_reads_is_in_the_document() {
    use bandsaw::api::batch::BatchRequest;
    use bandsaw::api::compare::CompareRequest;
    use bandsaw::api::request::IntervalRequest;
    let fields = |f: Vec<&str>| f.into_iter().map(String::from).collect::<BTreeSet<_>>();
    assert_eq!(fields(IntervalRequest::fields()), properties(schema_of("IntervalRequest")));
    assert_eq!(fields(CompareRequest::fields()), properties(schema_of("CompareRequest")));
    assert_eq!(fields(BatchRequest::fields()), properties(schema_of("BatchRequest")));
    for (job, request) in [("IntervalJob", IntervalRequest::fields()), ("CompareJob", CompareRequest::fields())] {
        let mut expected = fields(request);
        expected.insert("kind".into());
        assert_eq!(expected, properties(schema_of(job)), "{job}");
    }
    // Unknown fields are refused, and the document says so.
    for name in ["IntervalRequest", "CompareRequest", "BatchRequest", "IntervalJob", "CompareJob"] {
        assert_eq!(schema_of(name)["additionalProperties"], json!(false), "{name}");
    }
}

/// The names of a tagged union's variants in the document.
fn variant_names(schema: &str, tag: &str) -> Vec<String> {
    schema_of(schema)["oneOf"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| unboxed(&v["properties"][tag])["enum"][0].as_str().unwrap().to_string())
        .collect()
}

/// A member's schema as one value: a tagged union's members also come boxed in a one-element
/// array (as R sends them), `oneOf: [X, {type: array, items: X, maxItems: 1}]`; this is X.
fn unboxed(property: &Value) -> &Value {
    let one_of = property["oneOf"].as_array().expect("every member of a tagged union is also boxed");
    assert_eq!(one_of.len(), 2, "{property}");
    assert_eq!(one_of[1]["type"], "array", "{property}");
    assert_eq!(one_of[1]["maxItems"], 1, "{property}");
    assert_eq!(one_of[1]["items"], one_of[0], "{property}");
    &one_of[0]
}

/// A statistic with every parameter the document lists, each at a value the document allows.
fn full_statistic(variant: &Value) -> Value {
    let mut generator = Generator {
        doc: document(),
        rng: ChaCha8Rng::seed_from_u64(3),
    };
    let mut out = Map::new();
    for (name, property) in variant["properties"].as_object().unwrap() {
        let property = unboxed(property);
        let v = match (name.as_str(), &deref(document(), property)["type"]) {
            ("name", _) => property["enum"][0].clone(),
            (_, _) if deref(document(), property) == schema_of("ColumnName") => json!(["x", "y"][out.len() % 2]),
            _ => generator.instance(property),
        };
        out.insert(name.clone(), v);
    }
    Value::Object(out)
}

#[tokio::test]
async fn the_catalogue_the_document_and_the_parser_list_the_same_statistics() {
    use bandsaw::engine::statistic::StatisticSpec;
    let registered: Vec<String> = StatisticSpec::NAMES.iter().map(|s| s.to_string()).collect();
    assert_eq!(
        variant_names("StatisticSpec", "name"),
        registered,
        "the document's statistics are the registry's"
    );
    let app = TestApp::spawn().await;
    let (_, _, catalog) = app.get("/v1/catalog").await;
    let listed: Vec<String> = catalog["statistics"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["name"].as_str().unwrap().to_string())
        .collect();
    assert_eq!(listed, registered, "the catalogue's statistics are the registry's");
    let data = json!({"columns": {"x": [1.0, 2.0, 4.0, 8.0, 9.0, 3.0], "y": [2.0, 1.0, 5.0, 7.0, 9.5, 4.0]}});
    let one = json!([1.0, 0.0, 1.0, 1.0, 0.0, 1.0]);
    for (variant, entry) in schema_of("StatisticSpec")["oneOf"]
        .as_array()
        .unwrap()
        .iter()
        .zip(catalog["statistics"].as_array().unwrap())
    {
        let stat = full_statistic(variant);
        // The catalogue lists the document's parameters, with their types, values and docs.
        let params: BTreeSet<String> = entry["parameters"]
            .as_array()
            .unwrap()
            .iter()
            .map(|p| p["name"].as_str().unwrap().into())
            .collect();
        let mut documented = properties(variant);
        documented.remove("name");
        assert_eq!(params, documented, "{stat}");
        for p in entry["parameters"].as_array().unwrap() {
            let property = &variant["properties"][p["name"].as_str().unwrap()];
            let inner = property["oneOf"].get(0).unwrap_or(property);
            let schema = deref(document(), inner);
            let kind = if schema == schema_of("ColumnName") {
                json!("column")
            } else {
                schema["type"].clone()
            };
            assert_eq!(p["type"], kind, "{stat}: {p}");
            assert_eq!(p.get("values"), schema.get("enum"), "{stat}: {p}");
            assert_eq!(p.get("default"), property.get("default"), "{stat}: {p}");
            assert!(p["description"].as_str().is_some_and(|d| !d.is_empty()), "{stat}: {p}");
        }
        // The parser takes every parameter the document lists.
        let data = if entry["data"] == "columns" { &data } else { &one };
        let (status, _, v) = app
            .post(
                "/v1/interval",
                &json!({"data": data, "statistic": stat, "resamples": 50, "seed": 1}),
            )
            .await;
        let domain_refusal = v["errors"][0]["rule"] == "statistic_domain";
        assert!(status == 200 || domain_refusal, "{stat}: {v}");
    }
    // Schemes and methods likewise.
    let kinds: Vec<String> = catalog["schemes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["kind"].as_str().unwrap().into())
        .collect();
    assert_eq!(kinds, variant_names("SchemeSpec", "kind"));
    let methods: Vec<Value> = catalog["methods"].as_array().unwrap().iter().map(|m| m["name"].clone()).collect();
    assert_eq!(Value::Array(methods), schema_of("Method")["enum"]);
    assert_eq!(catalog["warning_codes"], schema_of("WarningCode")["enum"]);
}

// ---------------------------------------------------------------------------------------------
// docs/api.md
// ---------------------------------------------------------------------------------------------

/// The backticked first cells of the table rows under a heading of `docs/api.md` whose header
/// row starts with `| first |`.
fn first_column(text: &str, first: &str) -> Vec<Vec<String>> {
    let mut tables = Vec::new();
    let mut current: Option<Vec<String>> = None;
    for line in text.lines() {
        if line.starts_with(&format!("| {first} |")) {
            current = Some(Vec::new());
        } else if let Some(rows) = current.as_mut() {
            if !line.starts_with('|') {
                tables.push(current.take().unwrap());
            } else if !line.starts_with("| ---") {
                let cell = line.split('|').nth(1).unwrap().trim();
                if let Some(name) = cell.strip_prefix('`').and_then(|c| c.split('`').next()) {
                    rows.push(name.to_string());
                }
            }
        }
    }
    tables.extend(current);
    tables
}

fn set(v: &[String]) -> BTreeSet<String> {
    v.iter().cloned().collect()
}

fn enum_set(name: &str) -> BTreeSet<String> {
    schema_of(name)["enum"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect()
}

#[test]
fn docs_api_md_names_what_the_document_names() {
    let text = std::fs::read_to_string(API_MD).expect("docs/api.md");
    let fields = first_column(&text, "field");
    assert_eq!(
        fields.len(),
        5,
        "five field tables: interval request and response, compare request and response, batch"
    );
    assert_eq!(set(&fields[0]), properties(schema_of("IntervalRequest")), "interval request fields");
    assert_eq!(set(&fields[1]), properties(schema_of("IntervalResponse")), "response fields");
    // A comparison's own fields; the page says it takes the interval's others but `data`.
    let interval_fields = properties(schema_of("IntervalRequest"));
    let own: BTreeSet<String> = properties(schema_of("CompareRequest"))
        .difference(&interval_fields)
        .cloned()
        .collect();
    assert_eq!(set(&fields[2]), own, "compare request fields");
    let shared: BTreeSet<String> = interval_fields.iter().filter(|f| *f != "data").cloned().collect();
    assert!(shared.is_subset(&properties(schema_of("CompareRequest"))));
    assert_eq!(set(&fields[3]), properties(schema_of("CompareResponse")), "compare response fields");
    assert_eq!(set(&fields[4]), properties(schema_of("BatchRequest")), "batch fields");
    assert_eq!(set(&first_column(&text, "verdict")[0]), enum_set("Verdict"));
    let routes: BTreeSet<String> = document()["paths"].as_object().unwrap().keys().cloned().collect();
    assert_eq!(set(&first_column(&text, "route")[0]), routes);
    assert_eq!(
        set(&first_column(&text, "statistic")[0]),
        set(&variant_names("StatisticSpec", "name"))
    );
    let on_bins: Vec<String> = bandsaw::engine::statistic::StatisticSpec::on_bins()
        .into_iter()
        .map(String::from)
        .collect();
    assert_eq!(
        set(&first_column(&text, "statistic on bins")[0]),
        set(&on_bins),
        "the statistics on bins"
    );
    assert_eq!(set(&first_column(&text, "method")[0]), enum_set("Method"));
    assert_eq!(set(&first_column(&text, "kind")[0]), set(&variant_names("SchemeSpec", "kind")));
    assert_eq!(set(&first_column(&text, "code")[0]), enum_set("WarningCode"));
    assert_eq!(set(&first_column(&text, "rule")[0]), enum_set("Rule"));
    // Every problem slug of the document is in the error table.
    let slugs: BTreeSet<String> = text
        .lines()
        .filter(|l| l.starts_with("| 4") || l.starts_with("| 5"))
        .filter_map(|l| l.split('`').nth(1).map(|s| format!("/problems/{s}")))
        .collect();
    let documented: BTreeSet<String> = document()["components"]["responses"]
        .as_object()
        .unwrap()
        .values()
        .flat_map(|r| problem_types(document(), r))
        .collect();
    assert_eq!(slugs, documented);
    for word in enum_set("Stop") {
        assert!(text.contains(&format!("`{word}`")), "docs/api.md names the stop reason {word}");
    }
}

// ---------------------------------------------------------------------------------------------
// Layers
// ---------------------------------------------------------------------------------------------

/// Every `.rs` file under `dir`, with its text up to its unit tests.
fn sources(dir: &std::path::Path, out: &mut Vec<(String, String)>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            sources(&path, out);
        } else if path.extension().is_some_and(|e| e == "rs") {
            let text = std::fs::read_to_string(&path).unwrap();
            let code = text.split("#[cfg(test)]").next().unwrap().to_string();
            out.push((path.display().to_string(), code));
        }
    }
}

#[test]
fn the_engine_knows_nothing_of_http_json_or_the_service() {
    let mut files = Vec::new();
    sources(std::path::Path::new(concat!(env!("CARGO_MANIFEST_DIR"), "/src/engine")), &mut files);
    assert!(files.len() > 20, "the engine's files");
    for (path, code) in &files {
        for word in [
            "axum",
            "serde_json",
            "crate::api",
            "crate::config",
            "crate::server",
            "crate::cli",
            "tokio",
        ] {
            assert!(
                !code.contains(word),
                "{path} names {word}: the engine must not depend on the service"
            );
        }
    }
    let config = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/src/config.rs")).unwrap();
    assert!(!config.contains("crate::api"), "config must not depend on the api");
}

/// The module of a source file: `src/api/catalog.rs` is `api::catalog`, a `mod.rs` its folder.
fn module_of(path: &std::path::Path, src: &std::path::Path) -> String {
    let rel = path.strip_prefix(src).unwrap().with_extension("");
    let mut parts: Vec<String> = rel.iter().map(|p| p.to_string_lossy().into_owned()).collect();
    if parts.last().is_some_and(|p| p == "mod" || p == "lib") {
        parts.pop();
    }
    parts.join("::")
}

/// Every path a file's code names from the crate (`crate::…`, `super::…`, `self::…`), braces
/// expanded one level, as absolute module paths.
fn named_paths(module: &str, code: &str) -> Vec<String> {
    let parent = module.rsplit_once("::").map_or("", |(p, _)| p);
    let mut out = Vec::new();
    let code: String = code
        .lines()
        .filter(|l| !l.trim_start().starts_with("//"))
        .collect::<Vec<_>>()
        .join("\n");
    let mut rest = code.as_str();
    while let Some(i) = rest.find(|c: char| c.is_ascii_alphabetic() || c == '$') {
        rest = &rest[i..];
        let end = rest
            .find(|c: char| !(c.is_alphanumeric() || c == '_' || c == ':' || c == '$'))
            .unwrap_or(rest.len());
        let path = rest[..end].trim_start_matches('$').trim_end_matches(':');
        let tail = &rest[end..];
        let base = match path.split_once("::") {
            Some(("crate", p)) => p.to_string(),
            Some(("super", p)) => format!("{parent}::{p}"),
            Some(("self", p)) => format!("{module}::{p}"),
            _ => String::new(),
        };
        if !base.is_empty() {
            if rest[..end].ends_with("::") && tail.starts_with('{') {
                let items = &tail[1..tail.find('}').unwrap_or(1)];
                out.extend(
                    items
                        .split(',')
                        .map(|i| format!("{base}::{}", i.trim().split("::").next().unwrap_or(""))),
                );
            } else {
                out.push(base);
            }
        }
        rest = &rest[end.max(1)..];
    }
    out
}

#[test]
fn no_module_imports_one_that_imports_it_back() {
    let src = std::path::Path::new(concat!(env!("CARGO_MANIFEST_DIR"), "/src"));
    let mut files = Vec::new();
    sources(src, &mut files);
    let modules: Vec<String> = files.iter().map(|(p, _)| module_of(std::path::Path::new(p), src)).collect();
    // The longest module a path lies in; a module and its ancestors or descendants are one
    // family (a parent declares what its children share), not an import between layers.
    let within = |path: &str| {
        modules
            .iter()
            .filter(|m| path == m.as_str() || path.starts_with(&format!("{m}::")))
            .max_by_key(|m| m.len())
            .cloned()
    };
    let family =
        |a: &str, b: &str| a == b || a.starts_with(&format!("{b}::")) || b.starts_with(&format!("{a}::")) || a.is_empty() || b.is_empty();
    let mut edges: BTreeSet<(String, String)> = BTreeSet::new();
    for ((_, code), module) in files.iter().zip(&modules) {
        for target in named_paths(module, code).iter().filter_map(|p| within(p)) {
            if !family(module, &target) {
                edges.insert((module.clone(), target));
            }
        }
    }
    assert!(
        edges.contains(&("api::job".to_string(), "engine::driver".to_string())),
        "the scan sees imports: {edges:?}"
    );
    for (a, b) in &edges {
        assert!(!edges.contains(&(b.clone(), a.clone())), "{a} and {b} import each other");
    }
    // Longer cycles: nothing reaches back to where it started.
    for start in &modules {
        let mut seen = BTreeSet::new();
        let mut stack: Vec<&String> = edges.iter().filter(|(a, _)| a == start).map(|(_, b)| b).collect();
        while let Some(m) = stack.pop() {
            assert!(m != start, "{start} reaches itself through its imports");
            if seen.insert(m.clone()) {
                stack.extend(edges.iter().filter(|(a, _)| a == m).map(|(_, b)| b));
            }
        }
    }
}
