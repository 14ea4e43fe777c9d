//! The OpenAPI document: the committed `openapi/openapi.json`, the served `GET /openapi.json` and
//! `bandsaw openapi` are the same bytes; the document is OpenAPI 3.1 and lists every route with
//! every status it answers; its examples validate against its schemas; and its request schemas
//! agree with the server's hand-written validation.
//!
//! After changing the API, rewrite the committed file with
//! `BANDSAW_WRITE_OPENAPI=1 cargo test --release --test openapi`.

mod common;

use std::collections::BTreeSet;

use bandsaw::api::openapi::document_json;
use common::{document, schema_validator, TestApp};
use serde_json::{json, Value};

const COMMITTED: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/openapi/openapi.json");
const REWRITE: &str = "BANDSAW_WRITE_OPENAPI=1 cargo test --release --test openapi";

#[test]
fn the_committed_document_is_the_generated_one() {
    let generated = document_json();
    if std::env::var("BANDSAW_WRITE_OPENAPI").is_ok_and(|v| v == "1") {
        std::fs::create_dir_all(std::path::Path::new(COMMITTED).parent().unwrap()).unwrap();
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
async fn the_served_document_is_the_generated_one() {
    let app = TestApp::spawn().await;
    let resp = app.client.get(format!("{}/openapi.json", app.base)).send().await.unwrap();
    assert_eq!(resp.status().as_u16(), 200);
    let ct = resp.headers()["content-type"].to_str().unwrap().to_string();
    assert!(ct.starts_with("application/json"), "{ct}");
    let text = resp.text().await.unwrap();
    assert!(text == document_json(), "GET /openapi.json is not the generated document");
    // And through the validating helper.
    let (s, _, v) = app.get("/openapi.json").await;
    assert_eq!(s, 200);
    assert_eq!(&v, document());
}

#[test]
fn bandsaw_openapi_prints_the_document() {
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

/// Every route of API.md that this server serves, with every status it answers.
const ROUTES: &[(&str, &str, &[&str])] = &[
    (
        "post",
        "/v1/interval",
        &["200", "400", "401", "409", "413", "415", "422", "500", "503"],
    ),
    ("post", "/v1/batch", &["200", "400", "401", "413", "415", "422", "500", "503"]),
    ("get", "/v1/catalog", &["200", "401"]),
    ("get", "/healthz", &["200"]),
    ("get", "/readyz", &["200", "503"]),
    ("get", "/metrics", &["200"]),
    ("get", "/openapi.json", &["200"]),
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

#[test]
fn the_document_is_openapi_3_1_and_lists_every_route_and_status() {
    let doc = document();
    assert!(doc["openapi"].as_str().unwrap().starts_with("3.1."), "{}", doc["openapi"]);
    assert_eq!(doc["info"]["title"], "bandsaw");
    assert_eq!(doc["info"]["version"], env!("CARGO_PKG_VERSION"));
    assert!(doc["info"]["description"].as_str().is_some_and(|d| d.len() > 200));

    let paths: BTreeSet<&str> = doc["paths"].as_object().unwrap().keys().map(String::as_str).collect();
    let expected: BTreeSet<&str> = ROUTES.iter().map(|(_, p, _)| *p).collect();
    assert_eq!(paths, expected, "the documented paths");
    // /v1/compare is in the contract but not served yet.
    assert!(doc["paths"].get("/v1/compare").is_none());

    for (method, path, statuses) in ROUTES {
        let item = doc["paths"][path].as_object().unwrap();
        assert_eq!(item.keys().collect::<Vec<_>>(), vec![method], "{path} has exactly one operation");
        let op = &item[*method];
        assert!(op["operationId"].is_string() && op["summary"].is_string(), "{path}");
        let responses = op["responses"].as_object().unwrap();
        let got: Vec<&str> = responses.keys().map(String::as_str).collect();
        assert_eq!(&got, statuses, "{method} {path}: documented statuses");
        for (status, response) in responses {
            let response = deref(doc, response);
            assert!(response["description"].as_str().is_some_and(|d| !d.is_empty()), "{path} {status}");
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
    let scheme = &doc["components"]["securitySchemes"]["bearer"];
    assert_eq!((&scheme["type"], &scheme["scheme"]), (&json!("http"), &json!("bearer")));
    assert!(scheme["description"].as_str().unwrap().contains("optional"));

    // The problem types of each status, as API.md's error table has them.
    let types = |path: &str, method: &str, status: &str| problem_types(doc, &doc["paths"][path][method]["responses"][status]);
    assert_eq!(types("/v1/interval", "post", "400"), ["/problems/malformed-json"]);
    assert_eq!(types("/v1/interval", "post", "401"), ["/problems/unauthorized"]);
    assert_eq!(types("/v1/interval", "post", "409"), ["/problems/data-mismatch"]);
    assert_eq!(types("/v1/interval", "post", "413"), ["/problems/body-too-large"]);
    assert_eq!(types("/v1/interval", "post", "415"), ["/problems/unsupported-media-type"]);
    assert_eq!(
        types("/v1/interval", "post", "422"),
        ["/problems/invalid-request", "/problems/work-limit"]
    );
    assert_eq!(types("/v1/interval", "post", "500"), ["/problems/internal"]);
    assert_eq!(
        types("/v1/interval", "post", "503"),
        ["/problems/overloaded", "/problems/time-limit"]
    );
    assert_eq!(
        types("/v1/batch", "post", "422"),
        ["/problems/invalid-request", "/problems/work-limit"]
    );
    assert_eq!(types("/v1/batch", "post", "503"), ["/problems/overloaded"]);
    assert_eq!(types("/readyz", "get", "503"), ["/problems/not-ready"]);
    let retry_after = |path: &str, method: &str| {
        deref(doc, &doc["paths"][path][method]["responses"]["503"])["headers"]
            .get("Retry-After")
            .is_some()
    };
    assert!(retry_after("/v1/interval", "post") && retry_after("/v1/batch", "post") && retry_after("/readyz", "get"));
    // 404 and 405 are documented for every route.
    for (name, slug) in [
        ("NotFound", "/problems/not-found"),
        ("MethodNotAllowed", "/problems/method-not-allowed"),
    ] {
        let response = json!({"$ref": format!("#/components/responses/{name}")});
        assert_eq!(problem_types(doc, &response), [slug]);
    }
    assert_eq!(
        doc["paths"]["/metrics"]["get"]["responses"]["200"]["content"]
            .as_object()
            .unwrap()
            .keys()
            .collect::<Vec<_>>(),
        ["text/plain; version=0.0.4; charset=utf-8"]
    );
}

/// Every example of a media type (`example` and `examples`), with where it is.
fn examples(doc: &Value) -> Vec<(String, Value, Value)> {
    let mut out = Vec::new();
    let mut media = |at: String, content: &Value| {
        for (media_type, m) in content.as_object().into_iter().flatten() {
            let schema = m.get("schema").cloned().unwrap_or(json!(true));
            if let Some(e) = m.get("example") {
                out.push((format!("{at} {media_type}"), schema.clone(), e.clone()));
            }
            for (name, e) in m.get("examples").and_then(Value::as_object).into_iter().flatten() {
                out.push((format!("{at} {media_type} {name}"), schema.clone(), e["value"].clone()));
            }
        }
    };
    for (path, item) in doc["paths"].as_object().unwrap() {
        for (method, op) in item.as_object().unwrap() {
            media(format!("{method} {path} request"), &op["requestBody"]["content"]);
            for (status, r) in op["responses"].as_object().unwrap() {
                if r.get("$ref").is_none() {
                    media(format!("{method} {path} {status}"), &r["content"]);
                }
            }
        }
    }
    for (name, r) in doc["components"]["responses"].as_object().unwrap() {
        media(format!("components.responses.{name}"), &r["content"]);
    }
    for (name, s) in doc["components"]["schemas"].as_object().unwrap() {
        if let Some(e) = s.get("example") {
            out.push((
                format!("components.schemas.{name}"),
                json!({"$ref": format!("#/components/schemas/{name}")}),
                e.clone(),
            ));
        }
    }
    out
}

#[test]
fn every_example_validates_against_its_schema() {
    let doc = document();
    let all = examples(doc);
    assert!(all.len() >= 15, "{} examples", all.len());
    let mut failures = Vec::new();
    for (at, schema, example) in &all {
        let v = schema_validator(doc, schema);
        for e in v.iter_errors(example) {
            failures.push(format!("{at}: at {:?}: {e}", e.instance_path().to_string()));
        }
    }
    assert!(
        failures.is_empty(),
        "examples that do not match their schemas:\n{}",
        failures.join("\n")
    );
}

fn schema_of(name: &str) -> &'static Value {
    &document()["components"]["schemas"][name]
}

fn enum_of(schema: &Value) -> Vec<String> {
    schema["enum"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect()
}

/// The field names an "unknown field" message of the server lists.
fn listed_fields(problem: &Value, pointer: &str) -> BTreeSet<String> {
    let message = problem["errors"]
        .as_array()
        .unwrap()
        .iter()
        .find(|e| e["pointer"] == pointer)
        .unwrap_or_else(|| panic!("no error at {pointer}: {problem}"))["message"]
        .as_str()
        .unwrap()
        .to_string();
    let list = message.split("the fields here are ").nth(1).unwrap_or_else(|| panic!("{message}"));
    list.split(", ").map(|f| f.trim_matches('"').to_string()).collect()
}

fn properties(schema: &Value) -> BTreeSet<String> {
    schema["properties"].as_object().unwrap().keys().cloned().collect()
}

#[tokio::test]
async fn the_request_schemas_have_exactly_the_fields_the_server_accepts() {
    let app = TestApp::spawn().await;
    let (_, _, p) = app.post("/v1/interval", &json!({"data": [1, 2, 3], "zzz": 1})).await;
    let fields = listed_fields(&p, "/zzz");
    assert_eq!(properties(schema_of("IntervalRequest")), fields, "IntervalRequest");
    assert_eq!(schema_of("IntervalRequest")["additionalProperties"], false);
    let mut job_fields = fields.clone();
    job_fields.insert("kind".into());
    assert_eq!(properties(schema_of("IntervalJob")), job_fields, "IntervalJob");
    assert_eq!(schema_of("IntervalJob")["additionalProperties"], false);

    let (_, _, p) = app.post("/v1/batch", &json!({"jobs": [], "zzz": 1})).await;
    assert_eq!(properties(schema_of("BatchRequest")), listed_fields(&p, "/zzz"), "BatchRequest");
    assert_eq!(schema_of("BatchRequest")["additionalProperties"], false);

    let (_, _, p) = app
        .post("/v1/interval", &json!({"data": {"values": [1, 2], "counts": [1, 1], "zzz": 1}}))
        .await;
    assert_eq!(properties(schema_of("AggregatedData")), listed_fields(&p, "/data/zzz"));
    let (_, _, p) = app
        .post("/v1/interval", &json!({"data": {"columns": {"x": [1, 2]}, "zzz": 1}}))
        .await;
    assert_eq!(properties(schema_of("ColumnsData")), listed_fields(&p, "/data/zzz"));
    let (_, _, p) = app
        .post("/v1/interval", &json!({"data": [1, 2, 3], "scheme": {"kind": "iid", "zzz": 1}}))
        .await;
    assert_eq!(BTreeSet::from(["kind".to_string()]), listed_fields(&p, "/scheme/zzz"));
}

#[test]
fn the_statistics_schemes_and_methods_are_the_servers() {
    use bandsaw::api::request::{SCHEMES, STATISTICS};
    // StatisticObject: one variant per statistic, with exactly its parameters, closed.
    let variants = schema_of("StatisticObject")["oneOf"].as_array().unwrap();
    assert_eq!(variants.len(), STATISTICS.len());
    for ((name, params), v) in STATISTICS.iter().zip(variants) {
        assert_eq!(enum_of(&v["properties"]["name"]), [*name]);
        let mut expected: BTreeSet<String> = params.iter().map(|p| p.to_string()).collect();
        expected.insert("name".into());
        assert_eq!(properties(v), expected, "{name}");
        assert_eq!(v["additionalProperties"], false, "{name}");
    }
    // StatisticName: the statistics without a required parameter (a bare name of another is a 422).
    let catalog = bandsaw::api::catalog::catalog(bandsaw::api::catalog::LimitsEntry {
        max_body_bytes: 1,
        max_rows: 1,
        max_resamples: 1,
        work_limit: 1.0,
        default_time_limit_ms: 1,
        max_time_limit_ms: 1,
        max_batch_jobs: 1,
        threads: 1,
        queue: 1,
        max_seed: bandsaw::api::request::MAX_SEED,
        max_magnitude: bandsaw::api::request::MAX_MAGNITUDE,
    });
    let bare: Vec<&str> = catalog
        .statistics
        .iter()
        .filter(|s| s.parameters.iter().all(|p| !p.required))
        .map(|s| s.name)
        .collect();
    assert_eq!(enum_of(schema_of("StatisticName")), bare);
    // Required parameters are required in the schema, too.
    for (s, v) in catalog.statistics.iter().zip(variants) {
        let required: BTreeSet<&str> = v["required"].as_array().unwrap().iter().map(|r| r.as_str().unwrap()).collect();
        for p in &s.parameters {
            assert_eq!(required.contains(p.name), p.required, "{}.{}", s.name, p.name);
        }
    }
    // Scheme: one closed variant per kind of the contract.
    let kinds: Vec<String> = schema_of("Scheme")["oneOf"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| enum_of(&v["properties"]["kind"])[0].clone())
        .collect();
    assert_eq!(kinds, SCHEMES.iter().map(|(k, _)| k.to_string()).collect::<Vec<_>>());
    // Methods, inclusions, resample modes and warning codes: the catalogue's.
    let methods: Vec<&str> = catalog.methods.iter().map(|m| m.name).collect();
    assert_eq!(enum_of(schema_of("Method")), methods);
    assert_eq!(enum_of(schema_of("Include")), catalog.include);
    assert_eq!(enum_of(&schema_of("Resamples")["oneOf"][1]), catalog.resample_modes);
    assert_eq!(enum_of(schema_of("WarningCode")), catalog.warning_codes);
    // The seed bound is the server's.
    assert_eq!(
        schema_of("IntervalRequest")["properties"]["seed"]["maximum"].as_u64(),
        Some(bandsaw::api::request::MAX_SEED)
    );
}

/// Requests on which the schema and the server's validation agree: each is valid by the
/// IntervalRequest schema exactly when the server does not answer it with `invalid-request`.
#[tokio::test]
async fn the_request_schema_accepts_what_the_server_accepts() {
    let doc = document();
    let schema = schema_validator(doc, &json!({"$ref": "#/components/schemas/IntervalRequest"}));
    let app = TestApp::spawn().await;
    let cols = json!({"columns": {"x": [1, 2, 3, 4, 5], "y": [2, 1, 4, 3, 6]}});
    let cases = [
        json!({"data": [1, 2, 3]}),
        json!({"data": [1.5, 2, 3], "statistic": "median", "resamples": 200, "seed": 0}),
        json!({"data": [1, 2, 3, 4], "statistic": {"name": "quantile", "p": 0.9}, "levels": [0.8, 0.9], "methods": ["basic", "normal"]}),
        json!({"data": [1, 2, 3, 4], "statistic": {"name": "trimmed_mean"}, "include": ["histogram", "cdf", "replicates"]}),
        json!({"data": [1, 2, 3, 4], "statistic": {"name": "variance", "ddof": 1}, "scheme": {"kind": "bayesian"}}),
        json!({"data": [1, 2, 3, 4], "statistic": {"name": "mad", "scale": "normal"}, "on_time_limit": "partial", "time_limit_ms": 5000}),
        json!({"data": [1, 2, 3, 4], "resamples": "auto", "target_mc_error": 0.05}),
        json!({"data": [1, 2, 3, 4], "resamples": "exact"}),
        json!({"data": [1, 2, 3, 4], "methods": ["studentized"], "statistic": "median", "inner_resamples": 10, "resamples": 50}),
        json!({"data": {"values": [1, 2, 3], "counts": [2, 0, 3]}, "seed": 9007199254740991u64}),
        json!({"data": cols, "statistic": {"name": "correlation", "x": "x", "y": "y", "kind": "spearman"}, "resamples": 100}),
        json!({"data": cols, "statistic": {"name": "ratio", "numerator": "x", "denominator": "y"}, "resamples": 100}),
        json!({"data": cols, "statistic": {"name": "slope", "x": "x", "y": "y"}, "resamples": 100}),
        // invalid
        json!({}),
        json!({"data": [1]}),
        json!({"data": [1, "2", 3]}),
        json!({"data": [1, 2, 1e200]}),
        json!({"data": {"values": [1, 2]}}),
        json!({"data": {"values": [1, 2], "counts": [1, -1]}}),
        json!({"data": {"columns": {}}}),
        json!({"data": {"rows": [1, 2]}}),
        json!({"data": [1, 2, 3], "level": [0.9]}),
        json!({"data": [1, 2, 3], "levels": [95]}),
        json!({"data": [1, 2, 3], "levels": []}),
        json!({"data": [1, 2, 3], "methods": []}),
        json!({"data": [1, 2, 3], "methods": ["bootstrap-t"]}),
        json!({"data": [1, 2, 3], "statistic": "meen"}),
        json!({"data": [1, 2, 3], "statistic": "quantile"}),
        json!({"data": [1, 2, 3], "statistic": {"name": "quantile", "p": 1.5}}),
        json!({"data": [1, 2, 3], "statistic": {"name": "mean", "p": 0.5}}),
        json!({"data": [1, 2, 3], "statistic": {"name": "variance", "ddof": 2}}),
        json!({"data": [1, 2, 3], "statistic": {"name": "mad", "scale": "big"}}),
        json!({"data": [1, 2, 3], "resamples": 1}),
        json!({"data": [1, 2, 3], "resamples": 2.5}),
        json!({"data": [1, 2, 3], "resamples": "many"}),
        json!({"data": [1, 2, 3], "seed": -1}),
        json!({"data": [1, 2, 3], "seed": 9007199254740992u64}),
        json!({"data": [1, 2, 3], "seed": "7"}),
        json!({"data": [1, 2, 3], "scheme": {}}),
        json!({"data": [1, 2, 3], "scheme": {"kind": "nonsense"}}),
        json!({"data": [1, 2, 3], "scheme": {"kind": "iid", "extra": 1}}),
        json!({"data": [1, 2, 3], "time_limit_ms": 0}),
        json!({"data": [1, 2, 3], "on_time_limit": "wait"}),
        json!({"data": [1, 2, 3], "include": ["everything"]}),
        json!({"data": [1, 2, 3], "inner_resamples": 5}),
        json!({"data": [1, 2, 3], "token": 42}),
        json!({"data": [1, 2, 3], "resamples": "auto", "target_mc_error": 1.5}),
    ];
    let mut disagreements = Vec::new();
    for body in cases {
        let schema_ok = schema.is_valid(&body);
        let (status, _, v) = app.post("/v1/interval", &body).await;
        let server_ok = !(status == 422 && v["type"] == "/problems/invalid-request");
        if schema_ok != server_ok {
            disagreements.push(format!("{body}: schema {schema_ok}, server {status} {v}"));
        }
    }
    assert!(
        disagreements.is_empty(),
        "the schema and the server disagree:\n{}",
        disagreements.join("\n")
    );
}

/// The checker that every test's responses go through does catch what breaks the contract.
#[test]
fn the_response_checker_catches_what_breaks_the_contract() {
    let good =
        serde_json::to_vec(&document()["paths"]["/v1/interval"]["post"]["responses"]["200"]["content"]["application/json"]["example"])
            .unwrap();
    common::check_response(Some("post"), "/v1/interval", 200, "application/json", &good);
    let problem = |slug: &str, status: u16| {
        serde_json::to_vec(&json!({"type": format!("/problems/{slug}"), "title": "t", "status": status, "detail": "d"})).unwrap()
    };
    common::check_response(
        Some("post"),
        "/v1/interval",
        422,
        "application/problem+json",
        &problem("work-limit", 422),
    );
    common::check_response(Some("get"), "/nowhere", 404, "application/problem+json", &problem("not-found", 404));
    common::check_response(
        Some("get"),
        "/v1/interval",
        405,
        "application/problem+json",
        &problem("method-not-allowed", 405),
    );
    common::check_response(
        Some("get"),
        "/metrics",
        200,
        "text/plain; version=0.0.4; charset=utf-8",
        b"# HELP x\n",
    );

    let mut missing = serde_json::from_slice::<Value>(&good).unwrap();
    missing.as_object_mut().unwrap().remove("estimate");
    let mut null_number = serde_json::from_slice::<Value>(&good).unwrap();
    null_number["intervals"][0]["lower"] = Value::Null;
    let mut unknown_method = serde_json::from_slice::<Value>(&good).unwrap();
    unknown_method["intervals"][1]["method"] = json!("bootstrap-t");
    // (method, path, status, content type, body, what the failure message names)
    type Case<'a> = (&'a str, &'a str, u16, &'a str, Vec<u8>, &'a str);
    let bad: Vec<Case> = vec![
        (
            "post",
            "/v1/interval",
            200,
            "application/json",
            serde_json::to_vec(&missing).unwrap(),
            "estimate",
        ),
        (
            "post",
            "/v1/interval",
            200,
            "application/json",
            serde_json::to_vec(&null_number).unwrap(),
            "/intervals/0/lower",
        ),
        (
            "post",
            "/v1/interval",
            200,
            "application/json",
            serde_json::to_vec(&unknown_method).unwrap(),
            "/intervals/1/method",
        ),
        ("post", "/v1/interval", 200, "text/html", good.clone(), "content type"),
        ("post", "/v1/interval", 200, "application/json", b"{not json".to_vec(), "not JSON"),
        (
            "post",
            "/v1/interval",
            418,
            "application/problem+json",
            problem("teapot", 418),
            "does not list",
        ),
        (
            "post",
            "/v1/interval",
            422,
            "application/problem+json",
            problem("malformed-json", 422),
            "/type",
        ),
        (
            "post",
            "/v1/interval",
            400,
            "application/problem+json",
            problem("malformed-json", 422),
            "/status",
        ),
        (
            "get",
            "/readyz",
            503,
            "application/problem+json",
            problem("overloaded", 503),
            "/type",
        ),
        (
            "get",
            "/v1/nowhere",
            200,
            "application/json",
            b"{}".to_vec(),
            "not in the OpenAPI document",
        ),
        (
            "get",
            "/v1/nowhere",
            404,
            "application/problem+json",
            b"{\"type\": \"/problems/not-found\"}".to_vec(),
            "title",
        ),
        (
            "post",
            "/healthz",
            200,
            "application/json",
            b"{\"status\": \"ok\"}".to_vec(),
            "lists only",
        ),
    ];
    for (method, path, status, ct, body, expect) in bad {
        let caught = std::panic::catch_unwind(|| common::check_response(Some(method), path, status, ct, &body));
        let message = match caught {
            Ok(()) => panic!("{method} {path} {status} {} passed the checker", String::from_utf8_lossy(&body)),
            Err(e) => e
                .downcast_ref::<String>()
                .cloned()
                .or_else(|| e.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_default(),
        };
        assert!(
            message.contains(expect),
            "{method} {path} {status}: expected {expect:?} in {message}"
        );
    }
}

/// Responses of every shape the server gives, each checked against the document by the
/// helpers: every optional member of the interval response, batch outcomes, keys, health,
/// metrics, 404 and 405.
#[tokio::test]
async fn responses_of_every_shape_match_the_document() {
    let app = TestApp::spawn().await;
    let sample: Vec<f64> = (0..60).map(|i| ((i * 37) % 23) as f64 * 1.5 + (i % 7) as f64).collect();
    let large: Vec<f64> = (0..2500).map(|i| ((i * 7919) % 1000) as f64 / 10.0).collect();
    let cols = json!({"columns": {"x": [1, 2, 3, 4, 5, 6, 7, 8], "y": [2.1, 3.9, 6.2, 8.1, 9.7, 12.2, 14.1, 15.8]}});
    let all = ["percentile", "basic", "normal", "bca", "studentized"];
    let every = ["histogram", "cdf", "replicates"];
    let bodies = [
        // Nested studentized with every inclusion: replicate standard errors, histogram, CDF.
        json!({"data": sample, "statistic": "median", "methods": all, "include": every, "resamples": 200, "seed": 1, "levels": [0.8, 0.99]}),
        // Analytic studentized, Bayesian weights with replicate probabilities.
        json!({"data": sample, "methods": all, "include": every, "scheme": {"kind": "bayesian"}, "resamples": 200, "seed": 2}),
        // Exact enumeration of aggregated data.
        json!({"data": {"values": [1, 2, 3], "counts": [2, 1, 2]}, "resamples": "exact", "methods": all, "include": every}),
        // "auto" resamples.
        json!({"data": sample, "resamples": "auto", "target_mc_error": 0.1, "seed": 3, "methods": all}),
        // Beyond the generic jackknife limit: a grouped jackknife.
        json!({"data": large, "statistic": {"name": "quantile", "p": 0.9}, "resamples": 100, "seed": 4}),
        // Columns.
        json!({"data": cols, "statistic": {"name": "correlation", "x": "x", "y": "y"}, "methods": all, "resamples": 200, "seed": 5}),
        json!({"data": cols, "statistic": {"name": "ratio", "numerator": "y", "denominator": "x"}, "methods": all, "resamples": 200, "seed": 6}),
        json!({"data": cols, "statistic": {"name": "slope", "x": "x", "y": "y"}, "methods": all, "resamples": 200, "seed": 7}),
        // Every other statistic.
        json!({"data": sample, "statistic": {"name": "trimmed_mean", "trim": 0.2}, "resamples": 100, "seed": 8}),
        json!({"data": sample, "statistic": {"name": "std_dev", "ddof": 1}, "resamples": 100, "seed": 8}),
        json!({"data": sample, "statistic": "variance", "resamples": 100, "seed": 8}),
        json!({"data": sample, "statistic": {"name": "mad", "scale": "normal"}, "resamples": 100, "seed": 8}),
        json!({"data": sample, "statistic": "iqr", "resamples": 100, "seed": 8}),
        json!({"data": [1.5, 2.5, 3.5, 8.0], "statistic": "geometric_mean", "resamples": 100, "seed": 8}),
        json!({"data": [1.5, 2.5, 3.5, 8.0], "statistic": "coefficient_of_variation", "resamples": 100, "seed": 8}),
        json!({"data": [0, 1, 1, 0, 1], "statistic": "proportion", "resamples": 100, "seed": 8}),
        // Constant data (degenerate intervals, warnings).
        json!({"data": [5, 5, 5, 5], "methods": all, "seed": 9}),
        // A partial result.
        json!({"data": large, "statistic": "median", "resamples": 1_000_000, "time_limit_ms": 300, "on_time_limit": "partial", "seed": 10}),
    ];
    for body in &bodies {
        let (s, _, v) = app.post("/v1/interval", body).await;
        assert_eq!(s, 200, "{body}: {v}");
    }
    let (s, _, v) = app.post("/v1/interval", &bodies[bodies.len() - 1]).await;
    assert_eq!((s, &v["complete"]), (200, &json!(false)));
    // Errors: 409, 503 time-limit, 422 work and validation.
    let (_, _, first) = app.post("/v1/interval", &json!({"data": [1, 2, 3, 4], "seed": 1})).await;
    let (s, _, _) = app
        .post("/v1/interval", &json!({"data": [1, 2, 3, 5], "token": first["token"]}))
        .await;
    assert_eq!(s, 409);
    let (s, _, _) = app
        .post(
            "/v1/interval",
            &json!({"data": large, "statistic": "median", "resamples": 1_000_000, "time_limit_ms": 300}),
        )
        .await;
    assert_eq!(s, 503);
    // A batch with every kind of outcome, and its envelope errors.
    let jobs = json!({"jobs": [
        {"kind": "interval", "data": [1, 2, 3, 4], "seed": 1, "include": every},
        {"kind": "interval", "data": [1, 2, 3, 4], "token": first["token"]},
        {"kind": "interval", "data": [1, 2, 3, 5], "token": first["token"]},
        {"kind": "interval", "data": [1, "x"]},
        {"kind": "compare", "baseline": [1, 2], "candidate": [2, 3]},
        {"kind": "interval", "data": large, "statistic": "median", "resamples": 1_000_000, "time_limit_ms": 300},
        7
    ], "adjust": "holm", "family_level": 0.9, "time_limit_ms": 5000});
    let (s, _, v) = app.post("/v1/batch", &jobs).await;
    assert_eq!(s, 200, "{v}");
    assert_eq!(v["results"][2]["error"]["status"], 409, "{v}");
    assert_eq!(v["results"][5]["error"]["type"], "/problems/time-limit", "{v}");
    assert_eq!(app.post("/v1/batch", &json!({"jobs": "all"})).await.0, 422);
    assert_eq!(app.post_raw("/v1/batch", "application/json", b"[1]".to_vec()).await.0, 400);
    assert_eq!(app.post_raw("/v1/batch", "text/csv", b"1,2".to_vec()).await.0, 415);
    // Health, readiness, metrics, the catalogue, 404 and 405.
    assert_eq!(app.get("/healthz").await.2, json!({"status": "ok"}));
    assert_eq!(app.get("/readyz").await.2, json!({"status": "ready"}));
    assert_eq!(app.get("/metrics").await.0, 200);
    assert_eq!(app.get("/v1/catalog").await.0, 200);
    assert_eq!(app.get("/v1/compare").await.0, 404);
    assert_eq!(app.post("/v1/compare", &json!({})).await.0, 404);
    assert_eq!(app.post("/healthz", &json!({})).await.0, 405);
    assert_eq!(app.get("/v1/batch").await.0, 405);

    // With keys: 401 on every /v1 route, and a valid key passes.
    let keyed = TestApp::spawn_with(|c| c.api_keys = "k1".into()).await;
    assert_eq!(keyed.get("/v1/catalog").await.0, 401);
    assert_eq!(keyed.post("/v1/batch", &jobs).await.0, 401);
    assert_eq!(keyed.post("/v1/interval", &bodies[0]).await.0, 401);
    assert_eq!(keyed.get("/healthz").await.0, 200);
    let resp = keyed
        .client
        .get(format!("{}/v1/catalog", keyed.base))
        .header("authorization", "Bearer k1")
        .send()
        .await
        .unwrap();
    assert_eq!(TestApp::read(resp).await.0, 200);
}
