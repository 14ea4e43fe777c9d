//! The OpenAPI 3.1 document of the HTTP API, served at `GET /openapi.json`, printed by
//! `bandsaw openapi`, and committed as `openapi/openapi.json` (a test keeps the three equal).
//!
//! The request side is written here as documentation-only types that mirror the hand-written
//! validation of [`super::request`] (which refuses unknown fields, hence
//! `additionalProperties: false`). The response side derives its schemas from the types that
//! produce the JSON ([`super::response`], [`super::problem`], [`super::catalog`]) where there
//! are such types, and from documentation-only types here where a route builds its JSON by hand
//! ([`super::batch`], the health routes). The routes are documented by `#[utoipa::path]` on
//! documentation-only functions, so the handlers in [`super`] stay as they are.
//!
//! The tests validate every response they receive against this document
//! (`tests/common/mod.rs`), and `tests/openapi.rs` checks the document against the committed
//! file, the served one, the catalogue and its own examples.

use utoipa::openapi::example::ExampleBuilder;
use utoipa::openapi::header::HeaderBuilder;
use utoipa::openapi::schema::{AdditionalProperties, AllOfBuilder, ArrayBuilder, ObjectBuilder, OneOfBuilder, Schema, SchemaType, Type};
use utoipa::openapi::security::{Http, HttpAuthScheme, SecurityScheme};
use utoipa::openapi::{ContentBuilder, Ref, RefOr, ResponseBuilder};
use utoipa::{Modify, OpenApi, PartialSchema, ToResponse, ToSchema};

use super::catalog::CatalogResponse;
use super::problem::{FieldError, Problem};
use super::response::IntervalResponse;

pub use self::schemas::*;

/// The document.
pub fn document() -> utoipa::openapi::OpenApi {
    ApiDoc::openapi()
}

/// The document as pretty JSON with a trailing newline: the bytes of `openapi/openapi.json`.
pub fn document_json() -> String {
    let mut s = document().to_pretty_json().expect("the OpenAPI document serialises");
    s.push('\n');
    s
}

const DESCRIPTION: &str = "\
bandsaw turns a data array into bootstrap intervals: the estimate of a statistic, its standard \
error and bias, confidence intervals by up to five methods (percentile, basic, normal, BCa, \
studentized) with the Monte Carlo error of every endpoint, diagnostics with stable warning codes, \
and a token that replays the computation exactly.

Everything is JSON over HTTP/1.1. Numbers are JSON numbers: `NaN`, `Infinity` or numeric strings \
in data are refused with a 422 that names the index, and no response holds a `null` number.

Every error is an RFC 9457 problem document (`Content-Type: application/problem+json`) with a \
stable `type` of the form `/problems/<slug>`; validation reports every invalid field at once, each \
with a JSON Pointer (RFC 6901) into the request. Besides the statuses listed on each operation, any \
path that is not a route answers `404` (`/problems/not-found`) and a route asked with a method it \
does not answer gives `405` (`/problems/method-not-allowed`); see the `NotFound` and \
`MethodNotAllowed` responses under `components`.

API keys are optional: a server started without keys serves `/v1/*` to anyone; a server started \
with keys needs `Authorization: Bearer <key>` on `/v1/*` and answers `401` \
(`/problems/unauthorized`) without a valid one. The health, readiness, metrics and document \
routes never need a key.";

#[derive(OpenApi)]
#[openapi(
    info(
        title = "bandsaw",
        version = env!("CARGO_PKG_VERSION"),
        description = DESCRIPTION,
        license(name = "MIT OR Apache-2.0", identifier = "MIT OR Apache-2.0"),
    ),
    paths(interval, batch, catalog, healthz, readyz, metrics, openapi_json),
    components(
        schemas(
            IntervalRequest,
            Data,
            DataValue,
            AggregatedData,
            ColumnsData,
            Statistic,
            StatisticName,
            StatisticObject,
            Resamples,
            Scheme,
            BlockLength,
            MeanBlockLength,
            Label,
            Level,
            Method,
            OnTimeLimit,
            Include,
            BatchRequest,
            BatchJob,
            IntervalJob,
            CompareJob,
            Adjust,
            IntervalResponse,
            BatchResponse,
            BatchResult,
            BatchOk,
            BatchError,
            CatalogResponse,
            Problem,
            FieldError,
            Health,
            WarningCode,
        ),
        responses(
            MalformedJson,
            Unauthorized,
            NotFound,
            MethodNotAllowed,
            DataMismatch,
            BodyTooLarge,
            UnsupportedMediaType,
            Unprocessable,
            Internal,
            Unavailable,
            Overloaded,
            NotReady,
        ),
    ),
    modifiers(&Security, &Tighten),
    tags(
        (name = "intervals", description = "Bootstrap computations"),
        (name = "discovery", description = "What this server offers: the catalogue and this document"),
        (name = "operations", description = "Liveness, readiness and metrics for orchestrators and monitoring"),
    ),
)]
struct ApiDoc;

/// The name of the bearer security scheme.
pub const BEARER: &str = "bearer";

struct Security;

impl Modify for Security {
    fn modify(&self, openapi: &mut utoipa::openapi::OpenApi) {
        let components = openapi.components.get_or_insert_with(Default::default);
        let mut http = Http::new(HttpAuthScheme::Bearer);
        http.description = Some(
            "An API key as `Authorization: Bearer <key>`. Keys are optional: only a server started with API keys needs one, \
             on `/v1/*` only; a server without keys accepts requests with or without the header."
                .into(),
        );
        components.add_security_scheme(BEARER, SecurityScheme::Http(http));
    }
}

/// What derive cannot say: the variants of the tagged statistic and scheme objects refuse
/// unknown fields (as `super::request` does), and a catalogue parameter's `default` is any JSON
/// value (a number or a string), not an object.
struct Tighten;

impl Modify for Tighten {
    fn modify(&self, openapi: &mut utoipa::openapi::OpenApi) {
        let schemas = &mut openapi.components.get_or_insert_with(Default::default).schemas;
        for (name, tag) in [("StatisticObject", "name"), ("Scheme", "kind")] {
            let Some(RefOr::T(Schema::OneOf(one_of))) = schemas.get_mut(name) else {
                panic!("{name} is a oneOf of objects");
            };
            for item in &mut one_of.items {
                let RefOr::T(Schema::Object(variant)) = item else {
                    panic!("the variants of {name} are inline objects");
                };
                variant.additional_properties = Some(Box::new(AdditionalProperties::FreeForm(false)));
                // The tag first, for the reader.
                let properties = std::mem::take(&mut variant.properties);
                let tag_schema = properties.get(tag).cloned().unwrap_or_else(|| panic!("{name} variants have {tag}"));
                variant.properties.insert(tag.to_string(), tag_schema);
                variant.properties.extend(properties.into_iter().filter(|(k, _)| k != tag));
                variant.required.retain(|r| r != tag);
                variant.required.insert(0, tag.to_string());
            }
        }
        let Some(RefOr::T(Schema::Object(parameter))) = schemas.get_mut("Parameter") else {
            panic!("Parameter is an object");
        };
        parameter.properties.insert(
            "default".into(),
            ObjectBuilder::new()
                .schema_type(SchemaType::AnyValue)
                .description(Some("The default, as JSON (a number or a string), where there is one."))
                .into(),
        );
    }
}

// ---------------------------------------------------------------------------------------------
// Routes (documentation only: the handlers are in `super`)
// ---------------------------------------------------------------------------------------------

/// One bootstrap interval
///
/// One sample (or one set of paired columns), one statistic: the estimate, its standard error
/// and bias, the intervals of every requested method at every requested level, each endpoint
/// with its Monte Carlo error, diagnostics, and a replay token. With `token` instead of the
/// parameters, the same data gives the identical response again.
#[utoipa::path(
    post,
    path = "/v1/interval",
    operation_id = "interval",
    tag = "intervals",
    request_body(
        content = IntervalRequest,
        content_type = "application/json",
        description = "The sample, the statistic and how to resample; only `data` is required.",
        example = json!({
            "data": [12.1, 9.8, 15.3, 11.0, 13.4, 10.2, 14.8, 12.9],
            "statistic": "mean",
            "resamples": 2000,
            "seed": 7,
            "levels": [0.95],
            "methods": ["percentile", "bca"],
            "scheme": {"kind": "iid"},
            "time_limit_ms": 2000,
            "on_time_limit": "fail"
        }),
    ),
    responses(
        (status = 200, description = "The result.", body = IntervalResponse, content_type = "application/json", example = json!(interval_response_example())),
        (status = 400, response = MalformedJson),
        (status = 401, response = Unauthorized),
        (status = 409, response = DataMismatch),
        (status = 413, response = BodyTooLarge),
        (status = 415, response = UnsupportedMediaType),
        (status = 422, response = Unprocessable),
        (status = 500, response = Internal),
        (status = 503, response = Unavailable),
    ),
    security(("bearer" = []), ()),
)]
#[allow(dead_code)]
fn interval() {}

/// Many interval jobs in one request
///
/// Many jobs in one request, validated together and run in order on one compute slot, sharing
/// the request's time limit; the estimated work of all of them together must be within the
/// server's work limit. One `ok` result or one `error` problem per job, in the order of the
/// jobs: a bad job does not sink the batch, and its problem's pointers start with
/// `/jobs/<index>` so that they point into the batch request. `compare` jobs are part of the
/// contract but this server version answers each with an `error` (422).
#[utoipa::path(
    post,
    path = "/v1/batch",
    operation_id = "batch",
    tag = "intervals",
    request_body(
        content = BatchRequest,
        content_type = "application/json",
        description = "The jobs and how to adjust their levels as a family.",
        example = json!({
            "jobs": [
                {"kind": "interval", "data": [12.1, 9.8, 15.3, 11.0, 13.4], "seed": 1},
                {"kind": "interval", "data": [0.8, 1.1, 0.9, 1.4, 1.0, 1.2], "statistic": "median", "seed": 2}
            ],
            "adjust": "none"
        }),
    ),
    responses(
        (status = 200, description = "One result or one problem per job, in order.", body = BatchResponse, content_type = "application/json", example = json!(batch_response_example())),
        (status = 400, response = MalformedJson),
        (status = 401, response = Unauthorized),
        (status = 413, response = BodyTooLarge),
        (status = 415, response = UnsupportedMediaType),
        (status = 422, response = Unprocessable),
        (status = 500, response = Internal),
        (status = 503, response = Overloaded),
    ),
    security(("bearer" = []), ()),
)]
#[allow(dead_code)]
fn batch() {}

/// What this server computes, and its limits
///
/// Every statistic with its parameters, every resampling scheme (and whether this server
/// version draws it), every interval method, the resample modes, the inclusions, the stable
/// warning codes, and this server's limits.
#[utoipa::path(
    get,
    path = "/v1/catalog",
    operation_id = "catalog",
    tag = "discovery",
    responses(
        (status = 200, description = "The catalogue.", body = CatalogResponse, content_type = "application/json"),
        (status = 401, response = Unauthorized),
    ),
    security(("bearer" = []), ()),
)]
#[allow(dead_code)]
fn catalog() {}

/// Liveness
///
/// 200 while the process serves.
#[utoipa::path(
    get,
    path = "/healthz",
    operation_id = "healthz",
    tag = "operations",
    responses(
        (status = 200, description = "The process serves.", body = Health, content_type = "application/json", example = json!({"status": "ok"})),
    ),
)]
#[allow(dead_code)]
fn healthz() {}

/// Readiness
///
/// 200 while the compute pool accepts work; 503 while it sheds load (and for a second after it
/// last shed a job) or while the server drains for shutdown.
#[utoipa::path(
    get,
    path = "/readyz",
    operation_id = "readyz",
    tag = "operations",
    responses(
        (status = 200, description = "The pool accepts work.", body = Health, content_type = "application/json", example = json!({"status": "ready"})),
        (status = 503, response = NotReady),
    ),
)]
#[allow(dead_code)]
fn readyz() {}

/// Prometheus metrics
///
/// The Prometheus text exposition (format 0.0.4): requests by route and status, latency,
/// replicates drawn, jobs shed, timed out, cancelled and panicked, queue depth and running jobs.
#[utoipa::path(
    get,
    path = "/metrics",
    operation_id = "metrics",
    tag = "operations",
    responses(
        (status = 200, description = "The metrics.", body = String, content_type = "text/plain; version=0.0.4; charset=utf-8"),
    ),
)]
#[allow(dead_code)]
fn metrics() {}

/// This document
///
/// The OpenAPI 3.1 document of this API, identical to `openapi/openapi.json` in the repository.
#[utoipa::path(
    get,
    path = "/openapi.json",
    operation_id = "openapi",
    tag = "discovery",
    responses(
        (status = 200, description = "The OpenAPI document.", body = Object, content_type = "application/json"),
    ),
)]
#[allow(dead_code)]
fn openapi_json() {}

// ---------------------------------------------------------------------------------------------
// Examples
// ---------------------------------------------------------------------------------------------

fn interval_response_example() -> serde_json::Value {
    serde_json::json!({
        "estimate": 12.4375,
        "standard_error": 0.66206,
        "standard_error_mc_error": 0.00994,
        "bias": -0.01219,
        "bias_mc_error": 0.0148,
        "bias_corrected_estimate": 12.44969,
        "n": 8,
        "resamples": 2000,
        "complete": true,
        "intervals": [
            {"method": "percentile", "level": 0.95, "lower": 11.1625, "upper": 13.7125,
             "lower_mc_error": 0.025, "upper_mc_error": 0.03125, "quantile_levels": [0.025, 0.975]},
            {"method": "bca", "level": 0.95, "lower": 11.2125, "upper": 13.825,
             "lower_mc_error": 0.05348, "upper_mc_error": 0.04122, "quantile_levels": [0.03242, 0.98105]}
        ],
        "statistic": {"name": "mean"},
        "scheme": {"kind": "iid"},
        "seed": 7,
        "diagnostics": {
            "z0": 0.04702,
            "acceleration": 0.0054,
            "replicate_skewness": 0.05013,
            "distinct_replicate_values": 453,
            "undefined_replicates": 0,
            "jackknife": {"kind": "closed_form"},
            "stop": "done",
            "warnings": [{
                "code": "small_sample",
                "message": "only 8 observations: bootstrap intervals from so few are unreliable (they tend to be too narrow). Gather more data; meanwhile prefer bca or studentized and read the interval as rough."
            }]
        },
        "token": "bs1.eyJ2IjoxLCJlbmdpbmUiOiIwLjEuMCIsImdlbmVyYXRvciI6ImNoYWNoYTgtc3RyZWFtLXBlci1yZXBsaWNhdGUtdjEiLCJzZWVkIjo3LCJtb2RlIjoiZml4ZWQiLCJyZXNhbXBsZXMiOjIwMDAsInN0b3AiOiJkb25lIiwic3RhdGlzdGljIjp7Im5hbWUiOiJtZWFuIn0sInNjaGVtZSI6eyJraW5kIjoiaWlkIn0sIm1ldGhvZHMiOlsicGVyY2VudGlsZSIsImJjYSJdLCJsZXZlbHMiOlswLjk1XSwiaW5jbHVkZSI6W10sImlubmVyX3Jlc2FtcGxlcyI6NTAsImRhdGEiOiI1NmExMmEwOTUzODNjYjI5ODY0OGRkOTIyOGE4M2U2Y2M3YWI0YTY4NjZiZTY0NDA4ODdiOTFjNWZjZmRkYWZjIn0",
        "elapsed_ms": 3.933
    })
}

fn batch_response_example() -> serde_json::Value {
    let mut ok = interval_response_example();
    ok["elapsed_ms"] = serde_json::json!(3.1);
    let error = Problem::invalid(vec![FieldError::new(
        "/jobs/1/levels/0",
        "must be a confidence level strictly between 0 and 1 (0.95, not 95); got 95",
    )]);
    serde_json::json!({
        "results": [{"ok": ok}, {"error": error}],
        "adjust": "none",
        "family_level": 0.95,
        "elapsed_ms": 3.4
    })
}

// ---------------------------------------------------------------------------------------------
// Problem responses
// ---------------------------------------------------------------------------------------------

/// A problem response: `application/problem+json` with the [`Problem`] schema, its `type`
/// restricted to `slugs` and its `status` to `status`, with one example per slug.
fn problem_response(
    description: &str,
    status: u16,
    examples: Vec<Problem>,
    retry_after: bool,
    www_authenticate: bool,
) -> RefOr<utoipa::openapi::Response> {
    let types: Vec<String> = examples.iter().map(|p| p.kind.clone()).collect();
    let narrow = ObjectBuilder::new()
        .schema_type(Type::Object)
        .property(
            "type",
            ObjectBuilder::new().schema_type(Type::String).enum_values(Some(types.clone())),
        )
        .property(
            "status",
            ObjectBuilder::new().schema_type(Type::Integer).enum_values(Some([status])),
        );
    let schema = AllOfBuilder::new().item(Ref::from_schema_name("Problem")).item(narrow).build();
    let mut content = ContentBuilder::new().schema(Some(Schema::AllOf(schema)));
    if examples.len() == 1 {
        content = content.example(Some(serde_json::to_value(&examples[0]).expect("a problem serialises")));
    } else {
        content = content.examples_from_iter(examples.iter().map(|p| {
            (
                p.slug().to_string(),
                ExampleBuilder::new()
                    .summary(p.title.clone())
                    .value(Some(serde_json::to_value(p).expect("a problem serialises")))
                    .build(),
            )
        }));
    }
    let mut response = ResponseBuilder::new()
        .description(description)
        .content("application/problem+json", content.build());
    if retry_after {
        response = response.header(
            "Retry-After",
            HeaderBuilder::new()
                .schema(ObjectBuilder::new().schema_type(Type::Integer).minimum(Some(1)))
                .description(Some(
                    "Seconds to wait before retrying (sent with `/problems/overloaded` and `/problems/not-ready`).",
                ))
                .build(),
        );
    }
    if www_authenticate {
        response = response.header(
            "WWW-Authenticate",
            HeaderBuilder::new()
                .schema(ObjectBuilder::new().schema_type(Type::String).enum_values(Some(["Bearer"])))
                .description(Some("The authentication scheme to use: `Bearer`."))
                .build(),
        );
    }
    RefOr::T(response.build())
}

fn invalid_example() -> Problem {
    Problem::invalid(vec![
        FieldError::new(
            "/data/2",
            "must be a finite number; got the string \"NaN\": NaN and infinite values are not data (drop or impute them before sending)",
        ),
        FieldError::new(
            "/levels/0",
            "must be a confidence level strictly between 0 and 1 (0.95, not 95); got 95",
        ),
    ])
}

fn method_not_allowed_example() -> Problem {
    Problem::new(
        axum::http::StatusCode::METHOD_NOT_ALLOWED,
        "method-not-allowed",
        "Method not allowed",
        "/v1/interval does not answer GET; see /openapi.json for each route's method",
    )
}

fn not_ready_example() -> Problem {
    Problem::new(
        axum::http::StatusCode::SERVICE_UNAVAILABLE,
        "not-ready",
        "Not accepting work",
        "the pool is shedding load or the server is draining for shutdown; send work to another replica",
    )
}

macro_rules! problem_responses {
    ($($name:ident: $status:literal, $description:literal, [$($example:expr),+ $(,)?], retry_after = $retry:literal, www_authenticate = $www:literal;)+) => {
        $(
            #[doc = $description]
            pub struct $name;

            impl<'r> ToResponse<'r> for $name {
                fn response() -> (&'r str, RefOr<utoipa::openapi::Response>) {
                    (stringify!($name), problem_response($description, $status, vec![$($example),+], $retry, $www))
                }
            }
        )+
    };
}

problem_responses! {
    MalformedJson: 400, "`/problems/malformed-json`: the body is not JSON, or not a JSON object.",
        [Problem::malformed_json("the body is not valid JSON (EOF while parsing a list at line 1 column 14); send a JSON object such as {\"data\": [1.5, 2.25, 3.0]}")],
        retry_after = false, www_authenticate = false;
    Unauthorized: 401, "`/problems/unauthorized`: this server has API keys and the request has no valid `Authorization: Bearer` key.",
        [Problem::unauthorized()],
        retry_after = false, www_authenticate = true;
    NotFound: 404, "`/problems/not-found`: the path is not a route of this server (any path not in this document).",
        [Problem::not_found("/v1/nowhere")],
        retry_after = false, www_authenticate = false;
    MethodNotAllowed: 405, "`/problems/method-not-allowed`: the route does not answer this method (any method a path of this document does not list).",
        [method_not_allowed_example()],
        retry_after = false, www_authenticate = false;
    DataMismatch: 409, "`/problems/data-mismatch`: a token was replayed on other data.",
        [Problem::data_mismatch()],
        retry_after = false, www_authenticate = false;
    BodyTooLarge: 413, "`/problems/body-too-large`: the body exceeds the server's byte limit (`limits.max_body_bytes` of the catalogue).",
        [Problem::body_too_large(1_048_576)],
        retry_after = false, www_authenticate = false;
    UnsupportedMediaType: 415, "`/problems/unsupported-media-type`: the body is not sent as `application/json` (or another `application/*+json` type).",
        [Problem::unsupported_media_type()],
        retry_after = false, www_authenticate = false;
    Unprocessable: 422, "`/problems/invalid-request`: fields are missing, out of range, of the wrong type or inconsistent, each named in `errors` with a JSON Pointer into the request; or `/problems/work-limit`: the estimated work (rows × resamples × the statistic's cost) exceeds the server's limit, known before any work starts.",
        [invalid_example(), Problem::work_limit(4.2e9, 2e9)],
        retry_after = false, www_authenticate = false;
    Internal: 500, "`/problems/internal`: the computation failed unexpectedly; the server serves on.",
        [Problem::internal("the computation failed unexpectedly; the server is still serving. Please report the request's parameters (not its data) if this repeats")],
        retry_after = false, www_authenticate = false;
    Unavailable: 503, "`/problems/overloaded`: every compute thread is busy and the queue is full; `Retry-After` says when to retry. Or `/problems/time-limit`: the request ran past its time limit with `\"on_time_limit\": \"fail\"`.",
        [Problem::overloaded(1), Problem::time_limit(412_000, 1_000_000, 2000)],
        retry_after = true, www_authenticate = false;
    Overloaded: 503, "`/problems/overloaded`: every compute thread is busy and the queue is full; `Retry-After` says when to retry. (A job of a batch that runs past the batch's time limit is answered in its `error`, not with a 503.)",
        [Problem::overloaded(1)],
        retry_after = true, www_authenticate = false;
    NotReady: 503, "`/problems/not-ready`: the pool sheds load or the server drains for shutdown; `Retry-After` says when to ask again.",
        [not_ready_example()],
        retry_after = true, www_authenticate = false;
}

// ---------------------------------------------------------------------------------------------
// Schemas written by hand (shapes that derive cannot say)
// ---------------------------------------------------------------------------------------------

fn schema_ref(name: &str) -> RefOr<Schema> {
    RefOr::Ref(Ref::from_schema_name(name))
}

fn string_enum<I: IntoIterator<Item = &'static str>>(values: I) -> ObjectBuilder {
    ObjectBuilder::new().schema_type(Type::String).enum_values(Some(values))
}

macro_rules! hand_schema {
    ($name:ident, $deps:expr, $body:block) => {
        impl PartialSchema for $name {
            fn schema() -> RefOr<Schema> $body
        }
        impl ToSchema for $name {
            fn schemas(schemas: &mut Vec<(String, RefOr<Schema>)>) {
                let deps: &[(&str, fn() -> RefOr<Schema>)] = $deps;
                for (name, schema) in deps {
                    schemas.push((name.to_string(), schema()));
                }
            }
        }
    };
}

/// One data value: a finite JSON number of magnitude at most 1e75.
pub struct DataValue;
hand_schema!(DataValue, &[], {
    ObjectBuilder::new()
        .schema_type(Type::Number)
        .minimum(Some(-super::request::MAX_MAGNITUDE))
        .maximum(Some(super::request::MAX_MAGNITUDE))
        .description(Some(
            "A finite JSON number of magnitude at most 1e75 (so that the variance of such data, and the spread of its replicates, stay finite). `NaN`, `Infinity` and numeric strings are refused at their index.",
        ))
        .into()
});

/// `data`: one column, aggregated values with counts, or named columns.
pub struct Data;
hand_schema!(
    Data,
    &[
        ("DataValue", DataValue::schema),
        ("AggregatedData", AggregatedData::schema),
        ("ColumnsData", ColumnsData::schema)
    ],
    {
        OneOfBuilder::new()
        .item(
            ArrayBuilder::new()
                .items(schema_ref("DataValue"))
                .min_items(Some(2))
                .title(Some("Column"))
                .description(Some("One column of observations; a bootstrap needs at least 2.")),
        )
        .item(schema_ref("AggregatedData"))
        .item(schema_ref("ColumnsData"))
        .description(Some(
            "The sample: an array of numbers (one column); `{\"values\": [...], \"counts\": [...]}` (each value observed `counts[i]` times; the sample size is the sum of the counts); or `{\"columns\": {\"x\": [...], \"y\": [...]}}` (equal-length named columns resampled together as rows, for `ratio`, `correlation` and `slope`). At most the server's `limits.max_rows` rows.",
        ))
        .into()
    }
);

/// `resamples`: a number, `"auto"` or `"exact"`.
pub struct Resamples;
hand_schema!(Resamples, &[], {
    OneOfBuilder::new()
        .item(
            ObjectBuilder::new()
                .schema_type(Type::Integer)
                .minimum(Some(2))
                .title(Some("Count"))
                .description(Some("A number of resamples, from 2 to the server's `limits.max_resamples`.")),
        )
        .item(string_enum(["auto", "exact"]).title(Some("Mode")).description(Some(
            "`auto`: grow until every endpoint's Monte Carlo error is below `target_mc_error` times the standard error, or the time limit or the resample limit is reached. `exact`: enumerate every distinct resample with its multinomial weight (iid scheme only; only where their count is within `limits.max_resamples`, about 10 observations).",
        )))
        .default(Some(serde_json::json!(2000)))
        .description(Some("How many resamples to draw. Default 2000."))
        .into()
});

/// A block length: a whole number of rows or `"auto"`.
pub struct BlockLength;
hand_schema!(BlockLength, &[], {
    OneOfBuilder::new()
        .item(ObjectBuilder::new().schema_type(Type::Integer).minimum(Some(1)))
        .item(string_enum(["auto"]))
        .description(Some(
            "Rows per block, or `\"auto\"` (chosen from the data and returned resolved in the response).",
        ))
        .into()
});

/// A mean block length: a positive number of rows or `"auto"`.
pub struct MeanBlockLength;
hand_schema!(MeanBlockLength, &[], {
    OneOfBuilder::new()
        .item(ObjectBuilder::new().schema_type(Type::Number).minimum(Some(1)))
        .item(string_enum(["auto"]))
        .description(Some(
            "Mean rows per block (block lengths are geometric), or `\"auto\"` (chosen from the data and returned resolved in the response).",
        ))
        .into()
});

/// Named columns of equal length, resampled together as rows.
pub struct ColumnsData;
hand_schema!(ColumnsData, &[("DataValue", DataValue::schema)], {
    ObjectBuilder::new()
        .schema_type(Type::Object)
        .property(
            "columns",
            ObjectBuilder::new()
                .schema_type(Type::Object)
                .additional_properties(Some(ArrayBuilder::new().items(schema_ref("DataValue"))))
                .min_properties(Some(1))
                .description(Some("Column name → values; every column has the same number of rows.")),
        )
        .required("columns")
        .additional_properties(Some(AdditionalProperties::FreeForm(false)))
        .description(Some("Named columns of equal length, resampled together as rows."))
        .into()
});

/// A compare job of a batch.
pub struct CompareJob;
hand_schema!(CompareJob, &[], {
    ObjectBuilder::new()
        .schema_type(Type::Object)
        .property("kind", string_enum(["compare"]))
        .required("kind")
        .additional_properties(Some(AdditionalProperties::FreeForm(true)))
        .description(Some(
            "A compare job of a batch: the fields of `POST /v1/compare` with `\"kind\": \"compare\"`. Part of the contract; this server version answers each with an `error` (422 at `/jobs/<index>/kind`).",
        ))
        .into()
});

/// A confidence level, strictly between 0 and 1.
pub struct Level;
hand_schema!(Level, &[], {
    ObjectBuilder::new()
        .schema_type(Type::Number)
        .exclusive_minimum(Some(0))
        .exclusive_maximum(Some(1))
        .description(Some("A confidence level, strictly between 0 and 1 (0.95, not 95)."))
        .into()
});

/// A stratum or cluster label.
pub struct Label;
hand_schema!(Label, &[], {
    ObjectBuilder::new()
        .schema_type(SchemaType::Array(vec![Type::String, Type::Integer]))
        .description(Some("A label: one per row, rows with equal labels belong together."))
        .into()
});

/// A stable code of `diagnostics.warnings`: the catalogue's `warning_codes`.
pub struct WarningCode;
hand_schema!(WarningCode, &[], {
    string_enum(super::catalog::WARNING_CODES.iter().copied())
        .description(Some(
            "A stable, machine-readable warning code (`GET /v1/catalog` lists them as `warning_codes`).",
        ))
        .into()
});

// ---------------------------------------------------------------------------------------------
// Documentation-only schemas
// ---------------------------------------------------------------------------------------------

/// Documentation-only types: they describe JSON that is read by hand ([`super::request`],
/// [`super::batch`]) or built by hand (batch results, health). Nothing constructs them.
#[allow(dead_code, clippy::large_enum_variant)]
mod schemas {
    use utoipa::ToSchema;

    use super::{BlockLength, CompareJob, Data, DataValue, Label, Level, MeanBlockLength, Resamples};
    use crate::api::problem::Problem;
    use crate::api::response::IntervalResponse;

    /// Aggregated data: each value observed `counts[i]` times (a histogram of latencies, a tally
    /// of ratings). The sample size is the sum of the counts.
    #[derive(ToSchema)]
    #[serde(deny_unknown_fields)]
    pub struct AggregatedData {
        /// The distinct values observed.
        pub values: Vec<DataValue>,
        /// How often each value was observed: one whole number (0 or more) per value.
        pub counts: Vec<u64>,
    }

    /// `statistic`: a name (for a statistic without required parameters), or an object with the
    /// name and its parameters. Default `"mean"`.
    #[derive(ToSchema)]
    #[serde(untagged)]
    pub enum Statistic {
        Name(StatisticName),
        Object(StatisticObject),
    }

    /// A statistic given by name alone, with its parameters at their defaults.
    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum StatisticName {
        Mean,
        Median,
        TrimmedMean,
        Variance,
        StdDev,
        Mad,
        Iqr,
        GeometricMean,
        CoefficientOfVariation,
        Proportion,
    }

    /// A statistic with its parameters. Responses echo it normalised, every parameter given.
    #[derive(ToSchema)]
    #[serde(tag = "name", rename_all = "snake_case", deny_unknown_fields)]
    pub enum StatisticObject {
        /// Arithmetic mean.
        Mean,
        /// Median (Hyndman–Fan definition 7 at p = 0.5).
        Median,
        /// Sample quantile, Hyndman–Fan definition 7 (numpy's linear).
        Quantile {
            /// Probability in [0, 1].
            #[schema(minimum = 0, maximum = 1)]
            p: f64,
        },
        /// Mean after cutting ⌊trim·n⌋ observations from each end.
        TrimmedMean {
            /// Share cut from each end, in [0, 0.5). Default 0.1.
            #[serde(default)]
            #[schema(minimum = 0, exclusive_maximum = 0.5, default = 0.1)]
            trim: f64,
        },
        /// Variance: the plug-in form (divide by n) unless `ddof` is 1.
        Variance {
            /// 0: divide by n (plug-in); 1: by n − 1. Default 0.
            #[serde(default)]
            #[schema(minimum = 0, maximum = 1, default = 0)]
            ddof: u8,
        },
        /// Standard deviation: the plug-in form (divide by n) unless `ddof` is 1.
        StdDev {
            /// 0: divide by n (plug-in); 1: by n − 1. Default 0.
            #[serde(default)]
            #[schema(minimum = 0, maximum = 1, default = 0)]
            ddof: u8,
        },
        /// Median absolute deviation from the median.
        Mad {
            /// `raw`, or `normal` (× 1.4826, consistent for σ under normality). Default `raw`.
            #[serde(default)]
            #[schema(inline, default = "raw")]
            scale: MadScale,
        },
        /// Interquartile range Q(0.75) − Q(0.25).
        Iqr,
        /// Exp of the mean log; positive data.
        GeometricMean,
        /// Plug-in standard deviation over the mean.
        CoefficientOfVariation,
        /// Share of values equal to 1 in data of 0s and 1s.
        Proportion,
        /// Ratio of column sums (sum over sum); needs `data.columns`.
        Ratio {
            /// The column summed on top.
            #[schema(min_length = 1)]
            numerator: String,
            /// The column summed below.
            #[schema(min_length = 1)]
            denominator: String,
        },
        /// Correlation of two columns; needs `data.columns`.
        Correlation {
            /// The first column.
            #[schema(min_length = 1)]
            x: String,
            /// The second column.
            #[schema(min_length = 1)]
            y: String,
            /// `pearson` or `spearman`. Default `pearson`.
            #[serde(default)]
            #[schema(inline, default = "pearson")]
            kind: CorrelationKind,
        },
        /// Least-squares slope of y on x; needs `data.columns`.
        Slope {
            /// The regressor column.
            #[schema(min_length = 1)]
            x: String,
            /// The response column.
            #[schema(min_length = 1)]
            y: String,
        },
    }

    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum MadScale {
        Raw,
        Normal,
    }

    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum CorrelationKind {
        Pearson,
        Spearman,
    }

    /// `scheme`: how a resample is drawn. Default `{"kind": "iid"}`. This server version draws
    /// `iid` and `bayesian`; the other kinds are part of the contract and are refused with a 422
    /// at `/scheme/kind` until it draws them (`GET /v1/catalog` lists what is available).
    /// Responses echo the scheme with `"auto"` block lengths resolved.
    #[derive(ToSchema)]
    #[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
    pub enum Scheme {
        /// n rows drawn with replacement.
        Iid,
        /// Dirichlet(1, …, 1) weights on the rows.
        Bayesian,
        /// Rows resampled within each stratum, stratum sizes kept (not drawn by this server version yet).
        Stratified {
            /// The stratum of each row.
            strata: Vec<Label>,
        },
        /// Whole clusters resampled with replacement (not drawn by this server version yet).
        Cluster {
            /// The cluster of each row.
            clusters: Vec<Label>,
        },
        /// Overlapping blocks of consecutive rows (not drawn by this server version yet).
        MovingBlock { block_length: BlockLength },
        /// Blocks that wrap around the end of the series (not drawn by this server version yet).
        CircularBlock { block_length: BlockLength },
        /// Blocks of geometric length (not drawn by this server version yet).
        StationaryBlock { mean_block_length: MeanBlockLength },
    }

    /// An interval method.
    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum Method {
        Percentile,
        Basic,
        Normal,
        Bca,
        Studentized,
    }

    /// What to do when the time limit is reached: `fail` (a 503 problem of type `time-limit`) or
    /// `partial` (the result over the resamples finished, `"complete": false`, and a warning).
    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum OnTimeLimit {
        Fail,
        Partial,
    }

    /// An optional part of the response: `histogram` (edges and counts of the replicate
    /// distribution), `cdf` (a downsampled empirical CDF of the replicates), `replicates` (every
    /// replicate value, in stream order).
    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum Include {
        Histogram,
        Cdf,
        Replicates,
    }

    /// Why drawing stopped: `done` (every resample drawn), `time_limit` (a partial result),
    /// `auto_target` (`"auto"` reached its target), `auto_limit` (`"auto"` reached the resample
    /// or work limit), `auto_time` (`"auto"` reached the time limit).
    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum Stop {
        Done,
        TimeLimit,
        AutoTarget,
        AutoLimit,
        AutoTime,
    }

    /// How the jackknife of the BCa acceleration was computed.
    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum JackknifeKind {
        ClosedForm,
        LeaveOneOut,
        Grouped,
    }

    /// How a studentized interval had each resample's standard error: `analytic` or `nested`
    /// (an inner bootstrap of `inner_resamples`).
    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum StandardErrorSource {
        Analytic,
        Nested,
    }

    /// How the levels of a batch are adjusted to hold for the whole family.
    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum Adjust {
        None,
        Bonferroni,
        Holm,
    }

    /// The kind of an interval job.
    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum IntervalKind {
        Interval,
    }

    /// The fields of an interval request, shared by `POST /v1/interval` and the interval jobs
    /// of `POST /v1/batch`.
    macro_rules! interval_request {
        ($(#[$meta:meta])* $name:ident { $($extra:tt)* }) => {
            $(#[$meta])*
            #[derive(ToSchema)]
            #[serde(deny_unknown_fields)]
            pub struct $name {
                $($extra)*
                #[schema(required = true)]
                pub data: Data,
                #[serde(default)]
                pub statistic: Statistic,
                #[serde(default)]
                pub resamples: Resamples,
                /// The share of the standard error below which `"resamples": "auto"` stops:
                /// strictly between 0 and 1, default 0.02. Only with `"resamples": "auto"`.
                #[schema(exclusive_minimum = 0, exclusive_maximum = 1, default = 0.02)]
                #[serde(default)]
                pub target_mc_error: f64,
                /// The seed of the random streams, from 0 to 2^53 − 1 (so that every JSON client
                /// carries it exactly). When absent the server draws one; the response echoes it
                /// and its token carries it.
                #[schema(minimum = 0, maximum = 9007199254740991_u64)]
                #[serde(default)]
                pub seed: u64,
                /// Confidence levels strictly between 0 and 1 (0.95, not 95), 1 to 20 of them.
                /// Default `[0.95]`.
                #[schema(min_items = 1, max_items = 20, default = json!([0.95]))]
                #[serde(default)]
                pub levels: Vec<Level>,
                /// Interval methods, at least one; repeats count once. Default
                /// `["percentile", "bca"]`.
                #[schema(min_items = 1, default = json!(["percentile", "bca"]))]
                #[serde(default)]
                pub methods: Vec<Method>,
                #[serde(default)]
                pub scheme: Scheme,
                /// Wall-clock budget for this request in milliseconds, 1 or more, capped by the
                /// server's `limits.max_time_limit_ms`. Default `limits.default_time_limit_ms`.
                #[schema(minimum = 1)]
                #[serde(default)]
                pub time_limit_ms: u64,
                /// Default `fail`.
                #[schema(default = "fail")]
                #[serde(default)]
                pub on_time_limit: OnTimeLimit,
                /// Optional parts of the response. Default none.
                #[serde(default)]
                pub include: Vec<Include>,
                /// The nested bootstrap size for studentized intervals of statistics without an
                /// analytic standard error: 10 to 1000, default 50.
                #[schema(minimum = 10, maximum = 1000, default = 50)]
                #[serde(default)]
                pub inner_resamples: u64,
                /// A token from an earlier response, instead of the parameters it stands in for
                /// (`statistic`, `resamples`, `target_mc_error`, `seed`, `levels`, `methods`,
                /// `scheme`, `include`, `inner_resamples`: sending any of them beside a token is
                /// a 422). With the same `data` the response is identical to the earlier one;
                /// with other data the answer is a 409 problem of type `data-mismatch`.
                #[serde(default)]
                pub token: String,
            }
        };
    }

    interval_request! {
        /// The body of `POST /v1/interval`. Unknown fields are refused (422), so that a typo
        /// (`level` for `levels`) never silently changes a result.
        IntervalRequest {}
    }

    interval_request! {
        /// An interval job of a batch: the fields of an interval request with
        /// `"kind": "interval"`.
        IntervalJob {
            #[schema(required = true, inline)]
            pub kind: IntervalKind,
        }
    }

    /// A job of a batch, told apart by `kind`.
    #[derive(ToSchema)]
    #[serde(untagged)]
    #[schema(discriminator = "kind")]
    pub enum BatchJob {
        Interval(IntervalJob),
        Compare(CompareJob),
    }

    /// The body of `POST /v1/batch`. Unknown fields are refused (422).
    #[derive(ToSchema)]
    #[serde(deny_unknown_fields)]
    pub struct BatchRequest {
        /// 1 to the server's `limits.max_batch_jobs` jobs.
        #[schema(min_items = 1)]
        pub jobs: Vec<BatchJob>,
        /// The level the whole family of results holds at with an adjustment, strictly between
        /// 0 and 1. Default 0.95.
        #[serde(default)]
        #[schema(exclusive_minimum = 0, exclusive_maximum = 1, default = 0.95)]
        pub family_level: f64,
        /// Default `none`.
        #[serde(default)]
        #[schema(default = "none")]
        pub adjust: Adjust,
        /// Wall-clock budget for the whole batch in milliseconds, 1 or more, capped by the
        /// server's `limits.max_time_limit_ms`; each job's own `time_limit_ms` applies within
        /// it. Default `limits.default_time_limit_ms`.
        #[serde(default)]
        #[schema(minimum = 1)]
        pub time_limit_ms: u64,
    }

    /// A job's result.
    #[derive(ToSchema)]
    #[serde(deny_unknown_fields)]
    pub struct BatchOk {
        pub ok: IntervalResponse,
    }

    /// A job's problem; its pointers start with `/jobs/<index>`.
    #[derive(ToSchema)]
    #[serde(deny_unknown_fields)]
    pub struct BatchError {
        pub error: Problem,
    }

    /// One job's outcome: `{"ok": result}` or `{"error": problem}`.
    #[derive(ToSchema)]
    #[serde(untagged)]
    pub enum BatchResult {
        Ok(BatchOk),
        Error(BatchError),
    }

    /// The response of `POST /v1/batch`.
    #[derive(ToSchema)]
    pub struct BatchResponse {
        /// One outcome per job, in the order of the jobs.
        pub results: Vec<BatchResult>,
        pub adjust: Adjust,
        /// The family level of the request (default 0.95).
        #[schema(exclusive_minimum = 0, exclusive_maximum = 1)]
        pub family_level: f64,
        /// Milliseconds from receiving the request to the response.
        #[schema(minimum = 0)]
        pub elapsed_ms: f64,
    }

    /// Liveness or readiness.
    #[derive(ToSchema)]
    pub struct Health {
        /// `ok` from `/healthz`, `ready` from `/readyz`.
        #[schema(inline)]
        pub status: HealthStatus,
    }

    #[derive(ToSchema)]
    #[serde(rename_all = "snake_case")]
    pub enum HealthStatus {
        Ok,
        Ready,
    }
}
