//! The OpenAPI 3.1 document of the HTTP API, served at `GET /openapi.json`, printed by
//! `bandsaw openapi`, and committed as `openapi/openapi.json` (a test keeps the three equal).
//!
//! Nothing in it is written by hand twice: the routes are documented on their handlers
//! (`#[utoipa::path]` in [`super`]), the request schemas are the types the parser decodes into,
//! the response schemas the types that produce the JSON, and the engine's enums and bounded
//! numbers describe themselves. What derive cannot say is added here by modifiers: the tagged
//! unions' variants as single objects that refuse unknown fields, the meaning of every enum
//! value, and the problem responses with their examples.

use utoipa::openapi::example::ExampleBuilder;
use utoipa::openapi::header::HeaderBuilder;
use utoipa::openapi::schema::{AllOfBuilder, ObjectBuilder, Schema, SchemaType, Type};
use utoipa::openapi::security::{Http, HttpAuthScheme, SecurityScheme};
use utoipa::openapi::{ContentBuilder, Ref, RefOr, ResponseBuilder};
use utoipa::{Modify, OpenApi, ToResponse, ToSchema};

use super::batch::{BatchRequest, BatchResponse, JobKind};
use super::boxed::{boxed_members, TAGGED_UNIONS};
use super::catalog::CatalogResponse;
use super::compare::{CompareRequest, CompareResponse};
use super::decode::{Decode, Shape};
use super::fields::{ResampleMode, Statistic};
use super::problem::{FieldError, Problem};
use super::request::IntervalRequest;
use super::response::IntervalResponse;
use super::rules::Rule;
use super::schema::{flattened, merged};
use super::Health;
use crate::engine::diagnostics::WarningCode;
use crate::engine::family::Multiplicity;
use crate::engine::interval::Method;
use crate::engine::jackknife::JackknifeKind;
use crate::engine::job::{Contrast, Include};
use crate::engine::kernel::SeSource;
use crate::engine::plan::{OnTimeLimit, Stop};
use crate::engine::statistic::association::CorrelationKind;
use crate::engine::statistic::spread::Divisor;
use crate::engine::verdict::{Better, Verdict};

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
in data are refused with a 422 that names the index, and no response holds a `null` number. \
Integer fields accept integral numbers written with a fraction part (`2.0`), as JSON Schema counts \
them integers.

Every error is an RFC 9457 problem document (`Content-Type: application/problem+json`) with a \
stable `type` of the form `/problems/<slug>`; validation reports every invalid field at once, each \
with a JSON Pointer (RFC 6901) into the request. A request that this document's schemas allow can \
still be refused by a rule between fields, with the data or with the server's limits; such a \
field error names its rule (`errors[].rule`, see the `Rule` schema). Besides the statuses listed on \
each operation, any path that is not a route answers `404` (`/problems/not-found`) and a route \
asked with a method it does not answer gives `405` (`/problems/method-not-allowed`); see the \
`NotFound` and `MethodNotAllowed` responses under `components`.

API keys are optional: a server started without keys serves `/v1/*` to anyone; a server started \
with keys needs `Authorization: Bearer <key>` on `/v1/*` and answers `401` \
(`/problems/unauthorized`) without a valid one. The health, readiness, metrics and document \
routes and the page never need a key.";

#[derive(OpenApi)]
#[openapi(
    info(
        title = "bandsaw",
        version = env!("CARGO_PKG_VERSION"),
        description = DESCRIPTION,
        license(name = "MIT OR Apache-2.0", identifier = "MIT OR Apache-2.0"),
    ),
    paths(super::interval_route, super::compare_route, super::batch_route, super::catalog_route, super::healthz, super::readyz, super::metrics_route, super::openapi_route, super::page::page_route),
    components(
        schemas(IntervalRequest, CompareRequest, Statistic, BatchRequest, IntervalResponse, CompareResponse, BatchResponse, CatalogResponse, Problem, FieldError, Rule, Health, WarningCode),
        responses(
            MalformedJson,
            Unauthorized,
            NotFound,
            MethodNotAllowed,
            RequestTimeout,
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
    modifiers(&Security, &TaggedUnions, &Flattened, &EnumMeanings),
    tags(
        (name = "intervals", description = "Bootstrap computations"),
        (name = "discovery", description = "What this server offers: the catalogue and this document"),
        (name = "operations", description = "Liveness, readiness and metrics for orchestrators and monitoring"),
        (name = "page", description = "A page for trying the API in a browser"),
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

/// The tagged unions (a statistic by `name`, a scheme by `kind`): derive writes each variant as
/// an `allOf` of its parameters and its tag, or as an object open to other fields; here each
/// becomes one object, tag first, that refuses unknown fields as the parser does.
struct TaggedUnions;

impl Modify for TaggedUnions {
    fn modify(&self, openapi: &mut utoipa::openapi::OpenApi) {
        let schemas = &mut openapi.components.get_or_insert_with(Default::default).schemas;
        for (name, tag, _) in TAGGED_UNIONS {
            let Some(RefOr::T(Schema::OneOf(one_of))) = schemas.get_mut(name) else {
                panic!("{name} is a oneOf");
            };
            for item in &mut one_of.items {
                *item = RefOr::T(Schema::Object(merged(item, tag)));
            }
        }
        // Each member also boxed in a one-element array, as the decoder reads it from R
        // (`boxed::with_members_unboxed`); a list member stays as it is. Done after the loop
        // above, as `lenient` resolves references through the components.
        for (name, _, field) in TAGGED_UNIONS {
            let lists = &boxed_members(field).expect("a tagged union's members").lists;
            let Some(RefOr::T(Schema::OneOf(one_of))) = schemas.get(name) else {
                panic!("{name} is a oneOf");
            };
            let items: Vec<RefOr<Schema>> = one_of
                .items
                .iter()
                .map(|item| {
                    let RefOr::T(Schema::Object(o)) = item else {
                        panic!("merged above");
                    };
                    let shapes: Vec<(&str, Shape)> = o
                        .properties
                        .keys()
                        .map(|k| (k.as_str(), if lists.contains(k) { Shape::AsIs } else { Shape::One }))
                        .collect();
                    super::schema::lenient(item, &shapes, schemas)
                })
                .collect();
            let Some(RefOr::T(Schema::OneOf(one_of))) = schemas.get_mut(name) else {
                panic!("{name} is a oneOf");
            };
            one_of.items = items;
        }
        let Some(RefOr::T(Schema::Object(parameter))) = schemas.get_mut("Parameter") else {
            panic!("Parameter is an object");
        };
        parameter.properties.insert(
            "default".into(),
            ObjectBuilder::new()
                .schema_type(SchemaType::AnyValue)
                .description(Some("The default, as JSON, where there is one."))
                .into(),
        );
    }
}

/// The request types with flattened parts, each as one object (a client sees one flat list of
/// fields); the shared part itself is then no component of its own.
struct Flattened;

impl Modify for Flattened {
    fn modify(&self, openapi: &mut utoipa::openapi::OpenApi) {
        let schemas = &mut openapi.components.get_or_insert_with(Default::default).schemas;
        schemas.insert(<IntervalRequest as ToSchema>::name().into(), flattened::<IntervalRequest>());
        schemas.insert(<CompareRequest as ToSchema>::name().into(), super::compare::request_schema());
        schemas.remove(<super::request::Resampling as ToSchema>::name().as_ref());
        // Every field but data also in R's lenient forms, as the decoder takes it.
        let with_kind = |mut shapes: Vec<(&'static str, Shape)>| {
            shapes.insert(0, ("kind", <JobKind as Decode>::SHAPE));
            shapes
        };
        let requests = [
            (<IntervalRequest as ToSchema>::name().to_string(), IntervalRequest::shapes()),
            (<CompareRequest as ToSchema>::name().to_string(), CompareRequest::shapes()),
            (<BatchRequest as ToSchema>::name().to_string(), BatchRequest::shapes()),
            ("IntervalJob".to_string(), with_kind(IntervalRequest::shapes())),
            ("CompareJob".to_string(), with_kind(CompareRequest::shapes())),
        ];
        for (name, shapes) in requests {
            let lenient = super::schema::lenient(&schemas[&name], &shapes, schemas);
            schemas.insert(name, lenient);
        }
    }
}

/// Every enum's values with their meanings, in its description.
struct EnumMeanings;

impl Modify for EnumMeanings {
    fn modify(&self, openapi: &mut utoipa::openapi::OpenApi) {
        let schemas = &mut openapi.components.get_or_insert_with(Default::default).schemas;
        let meanings: [(&str, String); 16] = [
            ("Method", Method::described()),
            ("WarningCode", WarningCode::described()),
            ("Rule", Rule::described()),
            ("Stop", Stop::described()),
            ("Include", Include::described()),
            ("OnTimeLimit", OnTimeLimit::described()),
            ("JackknifeKind", JackknifeKind::described()),
            ("SeSource", SeSource::described()),
            ("Multiplicity", Multiplicity::described()),
            ("ResampleMode", ResampleMode::described()),
            ("JobKind", JobKind::described()),
            ("Verdict", Verdict::described()),
            ("Better", Better::described()),
            ("Contrast", Contrast::described()),
            ("Divisor", Divisor::described()),
            ("CorrelationKind", CorrelationKind::described()),
        ];
        for (name, list) in meanings {
            if let Some(RefOr::T(Schema::Object(o))) = schemas.get_mut(name) {
                let head = o.description.take().unwrap_or_default();
                o.description = Some(format!("{head}\n\n{list}"));
            }
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Examples
// ---------------------------------------------------------------------------------------------

/// The example request of `POST /v1/interval`.
pub fn interval_request_example() -> serde_json::Value {
    serde_json::json!({
        "data": [12.1, 9.8, 15.3, 11.0, 13.4, 10.2, 14.8, 12.9],
        "statistic": "mean",
        "resamples": 2000,
        "seed": 7,
        "levels": [0.95],
        "methods": ["percentile", "bca"],
        "scheme": {"kind": "iid"},
        "time_limit_ms": 2000,
        "on_time_limit": "fail"
    })
}

/// The example request of `POST /v1/batch`: three tiles of a dashboard and a benchmark, the
/// last job with a mistake (a ratio asked of one column of data) to show that it fails alone.
pub fn batch_request_example() -> serde_json::Value {
    serde_json::json!({
        "jobs": [
            {"kind": "interval", "data": [12.1, 9.8, 15.3, 11.0, 13.4], "resamples": 1000, "seed": 1},
            {"kind": "interval", "data": [0.8, 1.1, 0.9, 1.4, 1.0, 1.2], "statistic": {"name": "quantile", "p": 0.9}, "resamples": 1000, "seed": 2},
            {"kind": "compare", "baseline": [41.8, 42.3, 41.5, 43.0, 42.1, 41.9], "candidate": [45.1, 44.7, 45.9, 44.9, 45.4, 46.0], "tolerance": 0.02, "resamples": 1000, "seed": 3},
            {"kind": "interval", "data": [3.0, 4.5, 2.5, 5.0], "statistic": {"name": "ratio", "numerator": "orders", "denominator": "visits"}, "seed": 4}
        ],
        "multiplicity": "none"
    })
}

/// The example request of `POST /v1/compare`: a parser benchmark, eight runs before and after a
/// change.
pub fn compare_request_example() -> serde_json::Value {
    serde_json::json!({
        "baseline": [41.8, 42.3, 41.5, 43.0, 42.1, 41.9, 42.6, 42.2],
        "candidate": [45.1, 44.7, 45.9, 44.9, 45.4, 46.0, 45.2, 44.8],
        "statistic": "median",
        "contrast": "ratio",
        "better": "lower",
        "tolerance": 0.02,
        "resamples": 4000,
        "seed": 11,
        "levels": [0.95],
        "methods": ["percentile"]
    })
}

/// The example response of `POST /v1/compare`: what the server answers to
/// [`compare_request_example`] (a test keeps them equal).
pub fn compare_response_example() -> serde_json::Value {
    serde_json::from_str(COMPARE_RESPONSE_EXAMPLE).expect("the example is JSON")
}

/// Written by the contract test with `BANDSAW_WRITE_EXAMPLES=1`.
const COMPARE_RESPONSE_EXAMPLE: &str = include_str!("../../openapi/compare_response_example.json");

/// The example response of `POST /v1/interval`: what the server answers to
/// [`interval_request_example`] (a test keeps them equal).
pub fn interval_response_example() -> serde_json::Value {
    serde_json::from_str(INTERVAL_RESPONSE_EXAMPLE).expect("the example is JSON")
}

/// Written by the contract test with `BANDSAW_WRITE_EXAMPLES=1`.
const INTERVAL_RESPONSE_EXAMPLE: &str = include_str!("../../openapi/interval_response_example.json");

/// The example response of `POST /v1/batch`: what the server answers to
/// [`batch_request_example`] (a test keeps them equal).
pub fn batch_response_example() -> serde_json::Value {
    serde_json::from_str(BATCH_RESPONSE_EXAMPLE).expect("the example is JSON")
}

/// Written by the contract test with `BANDSAW_WRITE_EXAMPLES=1`.
const BATCH_RESPONSE_EXAMPLE: &str = include_str!("../../openapi/batch_response_example.json");

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
        FieldError::by_rule(
            "/target_mc_error",
            Rule::TargetNeedsAuto,
            "only applies with \"resamples\": \"auto\"",
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
    RequestTimeout: 408, "`/problems/request-timeout`: the body did not arrive within the server's read timeout (a client that is slow to send its headers has its connection closed instead).",
        [Problem::request_timeout(30_000)],
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
    Unprocessable: 422, "`/problems/invalid-request`: fields are missing, out of range, of the wrong type or inconsistent, each named in `errors` with a JSON Pointer into the request; or `/problems/work-limit`: the estimated work (rows × resamples × the statistic's cost; under `iid` a mean, share or order statistic costs its shortcut's own amount per resample) exceeds the server's limit, known before any work starts.",
        [invalid_example(), Problem::work_limit(4.2e9, 2e9)],
        retry_after = false, www_authenticate = false;
    Internal: 500, "`/problems/internal`: the computation failed unexpectedly; the server serves on.",
        [Problem::internal("the computation failed unexpectedly; the server is still serving. Please report the request's parameters (not its data) if this repeats")],
        retry_after = false, www_authenticate = false;
    Unavailable: 503, "`/problems/overloaded`: every compute thread is busy and the queue is full; `Retry-After` says when to retry. Or `/problems/time-limit`: the request ran past its time limit with `\"on_time_limit\": \"fail\"`.",
        [Problem::overloaded(1), Problem::time_limit(412_000, 1_000_000, 2000, true)],
        retry_after = true, www_authenticate = false;
    Overloaded: 503, "`/problems/overloaded`: every compute thread is busy and the queue is full; `Retry-After` says when to retry. (A job of a batch that runs past the batch's time limit is answered in its `error`, not with a 503.)",
        [Problem::overloaded(1)],
        retry_after = true, www_authenticate = false;
    NotReady: 503, "`/problems/not-ready`: the pool sheds load or the server drains for shutdown; `Retry-After` says when to ask again.",
        [not_ready_example()],
        retry_after = true, www_authenticate = false;
}
