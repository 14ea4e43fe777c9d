//! RFC 9457 problem documents (`application/problem+json`).

use axum::http::{header, HeaderValue, StatusCode};
use axum::response::{IntoResponse, Response};
use serde::Serialize;
use utoipa::ToSchema;

use super::rules::Rule;

/// One invalid field: a JSON Pointer (RFC 6901) into the request and what is wrong with it.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
#[schema(example = json!({"pointer": "/levels/0", "message": "must be a confidence level strictly between 0 and 1 (0.95, not 95); got 95"}))]
pub struct FieldError {
    /// A JSON Pointer into the request ("" for the whole body).
    #[schema(pattern = "^(/[\\s\\S]*)?$")]
    pub pointer: String,
    /// What is wrong and how to fix it.
    pub message: String,
    /// The rule beyond the schema that refused the field, when one did (absent when the field
    /// breaks the schema itself).
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub rule: Option<Rule>,
}

impl FieldError {
    pub fn new(pointer: impl Into<String>, message: impl Into<String>) -> Self {
        FieldError {
            pointer: pointer.into(),
            message: message.into(),
            rule: None,
        }
    }

    /// A field refused by a rule beyond the schema.
    pub fn by_rule(pointer: impl Into<String>, rule: Rule, message: impl Into<String>) -> Self {
        FieldError {
            rule: Some(rule),
            ..FieldError::new(pointer, message)
        }
    }
}

/// A problem document. `type` is a stable relative URI `/problems/<slug>`.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
#[schema(example = json!({"type": "/problems/invalid-request", "title": "The request is invalid", "status": 422, "detail": "/levels/0: must be a confidence level strictly between 0 and 1 (0.95, not 95); got 95", "errors": [{"pointer": "/levels/0", "message": "must be a confidence level strictly between 0 and 1 (0.95, not 95); got 95"}]}))]
pub struct Problem {
    /// A stable relative URI `/problems/<slug>` naming the kind of problem.
    #[serde(rename = "type")]
    #[schema(pattern = "^/problems/[a-z][a-z-]*$")]
    pub kind: String,
    /// A short summary of the kind of problem.
    pub title: String,
    /// The HTTP status code.
    #[schema(minimum = 400, maximum = 599)]
    pub status: u16,
    /// What went wrong with this request and what to do about it.
    pub detail: String,
    /// Every invalid field (validation problems only).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub errors: Vec<FieldError>,
    #[serde(skip)]
    pub retry_after: Option<u64>,
}

impl Problem {
    pub fn new(status: StatusCode, slug: &str, title: &str, detail: impl Into<String>) -> Self {
        Problem {
            kind: format!("/problems/{slug}"),
            title: title.to_string(),
            status: status.as_u16(),
            detail: detail.into(),
            errors: Vec::new(),
            retry_after: None,
        }
    }

    pub fn slug(&self) -> &str {
        self.kind.trim_start_matches("/problems/")
    }

    pub fn malformed_json(detail: impl Into<String>) -> Self {
        Problem::new(StatusCode::BAD_REQUEST, "malformed-json", "The body is not a JSON object", detail)
    }

    pub fn body_too_large(limit: usize) -> Self {
        Problem::new(
            StatusCode::PAYLOAD_TOO_LARGE,
            "body-too-large",
            "The body is too large",
            format!("the body exceeds this server's limit of {limit} bytes; send fewer rows, aggregate them as {{\"values\": [...], \"counts\": [...]}}, or split the work into several requests"),
        )
    }

    /// The client did not send its whole body within the server's read timeout.
    pub fn request_timeout(timeout_ms: u64) -> Self {
        Problem::new(
            StatusCode::REQUEST_TIMEOUT,
            "request-timeout",
            "The body arrived too slowly",
            format!("the body was not received within this server's limit of {timeout_ms} ms; send it at once, or send less"),
        )
    }

    pub fn unsupported_media_type() -> Self {
        Problem::new(
            StatusCode::UNSUPPORTED_MEDIA_TYPE,
            "unsupported-media-type",
            "Unsupported media type",
            "send the body as JSON with the header Content-Type: application/json",
        )
    }

    /// Every invalid field at once.
    pub fn invalid(errors: Vec<FieldError>) -> Self {
        let mut p = Problem::new(StatusCode::UNPROCESSABLE_ENTITY, "invalid-request", "The request is invalid", "");
        p.errors = errors;
        p.detail = p.invalid_detail();
        p
    }

    fn invalid_detail(&self) -> String {
        match self.errors.as_slice() {
            [one] => format!("{}: {}", one.pointer_or_root(), one.message),
            many => format!(
                "{} fields are invalid; see errors for each, with a JSON Pointer into the request",
                many.len()
            ),
        }
    }

    /// The same problem about a part of a larger request: every pointer starts with `prefix`
    /// (a batch's `/jobs/<i>`), the detail too.
    pub fn within(self, prefix: &str) -> Self {
        self.with_pointers(|p| format!("{prefix}{p}"))
    }

    /// The same problem with every pointer passed through `f`, the detail too.
    pub fn with_pointers(mut self, f: impl Fn(&str) -> String) -> Self {
        for e in &mut self.errors {
            e.pointer = f(&e.pointer);
        }
        if !self.errors.is_empty() {
            self.detail = self.invalid_detail();
        }
        self
    }

    pub fn work_limit(estimate: f64, limit: f64) -> Self {
        Problem::new(
            StatusCode::UNPROCESSABLE_ENTITY,
            "work-limit",
            "The request needs more work than this server allows",
            format!(
                "the estimated work is {estimate:.3e} row-draws, above this server's limit of {limit:.3e}; lower resamples, send fewer rows (or aggregate them), or choose a statistic with an analytic standard error for studentized intervals"
            ),
        )
    }

    pub fn data_mismatch() -> Self {
        Problem::new(
            StatusCode::CONFLICT,
            "data-mismatch",
            "The token belongs to other data",
            "this token was issued for different data; send the same data as the request that returned it, or send the parameters instead of the token",
        )
    }

    /// `partial`: whether `"on_time_limit": "partial"` would have given a result.
    pub fn time_limit(done: u64, requested: u64, limit_ms: u64, partial: bool) -> Self {
        let way_out = if partial {
            "raise time_limit_ms (up to the server's maximum), lower resamples, or set \"on_time_limit\": \"partial\" to get the result over the resamples done"
        } else {
            "raise time_limit_ms (up to the server's maximum) or give a number of resamples"
        };
        Problem::new(
            StatusCode::SERVICE_UNAVAILABLE,
            "time-limit",
            "The request ran past its time limit",
            format!("only {done} of {requested} resamples finished within {limit_ms} ms; {way_out}"),
        )
    }

    /// The caller went away before the result was ready; nobody reads this, but it is logged.
    pub fn cancelled() -> Self {
        Problem::new(
            StatusCode::SERVICE_UNAVAILABLE,
            "cancelled",
            "The request was cancelled",
            "the client closed the connection, so the job was stopped",
        )
    }

    pub fn overloaded(retry_after: u64) -> Self {
        let mut p = Problem::new(
            StatusCode::SERVICE_UNAVAILABLE,
            "overloaded",
            "The server is at capacity",
            format!(
                "every compute thread is busy and the queue is full; retry after {retry_after} s (see Retry-After), or send smaller jobs"
            ),
        );
        p.retry_after = Some(retry_after);
        p
    }

    pub fn unauthorized() -> Self {
        Problem::new(
            StatusCode::UNAUTHORIZED,
            "unauthorized",
            "A valid API key is required",
            "send a key this server accepts as the header Authorization: Bearer <key>",
        )
    }

    pub fn internal(detail: impl Into<String>) -> Self {
        Problem::new(StatusCode::INTERNAL_SERVER_ERROR, "internal", "Internal error", detail)
    }

    pub fn not_found(path: &str) -> Self {
        Problem::new(
            StatusCode::NOT_FOUND,
            "not-found",
            "No such route",
            format!("{path} is not a route of this server; GET /v1/catalog lists what it does"),
        )
    }
}

impl FieldError {
    fn pointer_or_root(&self) -> &str {
        if self.pointer.is_empty() {
            "the request"
        } else {
            &self.pointer
        }
    }
}

impl IntoResponse for Problem {
    fn into_response(self) -> Response {
        let status = StatusCode::from_u16(self.status).unwrap_or(StatusCode::INTERNAL_SERVER_ERROR);
        let body = serde_json::to_vec(&self).expect("a problem serialises");
        let mut resp = (status, body).into_response();
        resp.headers_mut()
            .insert(header::CONTENT_TYPE, HeaderValue::from_static("application/problem+json"));
        if let Some(secs) = self.retry_after {
            resp.headers_mut().insert(header::RETRY_AFTER, HeaderValue::from(secs));
        }
        resp
    }
}

/// Escape one reference token of a JSON Pointer (RFC 6901 §3: `~` → `~0`, `/` → `~1`).
pub fn escape_token(s: &str) -> String {
    s.replace('~', "~0").replace('/', "~1")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pointer_tokens_are_escaped_per_rfc_6901() {
        assert_eq!(escape_token("a/b~c"), "a~1b~0c");
    }
}
