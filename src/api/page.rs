//! `GET /`: one self-contained page for trying the API in a browser.
//!
//! The page's HTML, stylesheet and script are compiled into the binary and served as one
//! document, so it works offline and needs no other route. Its script and style are inline and
//! allowed by their SHA-256 hashes in the `Content-Security-Policy`, computed here from the very
//! bytes served, so an edit of either can never leave a stale hash behind. The page talks only
//! to this server's own `/v1/interval` and `/v1/compare`.

use std::sync::LazyLock;

use axum::http::{header, HeaderMap, HeaderValue, StatusCode};
use axum::response::{IntoResponse, Response};
use base64::Engine as _;
use sha2::{Digest, Sha256};

const HTML: &str = include_str!("page/index.html");
const CSS: &str = include_str!("page/page.css");
const JS: &str = include_str!("page/page.js");
const CSS_SLOT: &str = "/*PAGE_CSS*/";
const JS_SLOT: &str = "/*PAGE_JS*/";

/// The page as served, with the headers that depend on its bytes.
pub struct Page {
    pub html: String,
    pub content_security_policy: String,
    pub etag: String,
}

fn sha256_source(text: &str) -> String {
    format!(
        "'sha256-{}'",
        base64::engine::general_purpose::STANDARD.encode(Sha256::digest(text.as_bytes()))
    )
}

/// The page, built once: the stylesheet and script put in their slots, their hashes in the policy.
pub fn page() -> &'static Page {
    static PAGE: LazyLock<Page> = LazyLock::new(|| {
        assert!(HTML.matches(CSS_SLOT).count() == 1 && HTML.matches(JS_SLOT).count() == 1);
        let html = HTML.replace(CSS_SLOT, CSS).replace(JS_SLOT, JS);
        // Images come from this server, from blob: URLs (the SVG picture, fetched by the
        // script) or data: (the empty icon, which spares a request for /favicon.ico);
        // connections only to this server; no plugins, frames, base or form targets.
        let content_security_policy = format!(
            "default-src 'self'; script-src {}; style-src {}; img-src 'self' blob: data:; connect-src 'self'; \
             object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'",
            sha256_source(JS),
            sha256_source(CSS)
        );
        // Weak, since the compression layer may send the same page gzip-encoded under it.
        let digest = Sha256::digest(html.as_bytes());
        let etag = format!("W/\"{}\"", digest[..12].iter().map(|b| format!("{b:02x}")).collect::<String>());
        Page {
            html,
            content_security_policy,
            etag,
        }
    });
    &PAGE
}

/// The weak comparison of RFC 9110 §8.8.3.2: the opaque tags equal, either one weak or not.
fn weak_eq(a: &str, b: &str) -> bool {
    a.trim_start_matches("W/") == b.trim_start_matches("W/")
}

/// Whether `If-None-Match` names this entity tag (or `*`).
fn not_modified(headers: &HeaderMap, etag: &str) -> bool {
    headers
        .get_all(header::IF_NONE_MATCH)
        .iter()
        .filter_map(|v| v.to_str().ok())
        .flat_map(|v| v.split(','))
        .map(|t| t.trim())
        .any(|t| t == "*" || weak_eq(t, etag))
}

/// A page for trying the API
///
/// An HTML page, served from the binary, that builds an interval or comparison request from
/// pasted numbers or a CSV file, sends it to `/v1/interval` or `/v1/compare`, and shows the
/// result, the problems beside the fields they name, and the request as a curl command. It may
/// be cached but is revalidated each time (`ETag`, `Cache-Control: no-cache`).
#[utoipa::path(
    get,
    path = "/",
    operation_id = "page",
    tag = "page",
    responses(
        (status = 200, description = "The page.", body = String, content_type = "text/html; charset=utf-8"),
        (status = 304, description = "The page is unchanged since the copy whose `ETag` was sent in `If-None-Match`."),
    ),
)]
pub(crate) async fn page_route(headers: HeaderMap) -> Response {
    let page = page();
    let mut resp = if not_modified(&headers, &page.etag) {
        StatusCode::NOT_MODIFIED.into_response()
    } else {
        let mut r = page.html.clone().into_response();
        r.headers_mut()
            .insert(header::CONTENT_TYPE, HeaderValue::from_static("text/html; charset=utf-8"));
        r
    };
    let h = resp.headers_mut();
    h.insert(header::CACHE_CONTROL, HeaderValue::from_static("no-cache"));
    h.insert(header::ETAG, HeaderValue::from_str(&page.etag).expect("an ASCII etag"));
    h.insert(
        header::CONTENT_SECURITY_POLICY,
        HeaderValue::from_str(&page.content_security_policy).expect("an ASCII policy"),
    );
    h.insert(header::X_CONTENT_TYPE_OPTIONS, HeaderValue::from_static("nosniff"));
    h.insert(header::REFERRER_POLICY, HeaderValue::from_static("no-referrer"));
    resp
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_page_inlines_its_script_and_style_and_the_policy_hashes_exactly_them() {
        let p = page();
        assert!(!p.html.contains(CSS_SLOT) && !p.html.contains(JS_SLOT));
        let between = |open: &str, close: &str| {
            let start = p.html.find(open).unwrap() + open.len();
            let end = start + p.html[start..].find(close).unwrap();
            p.html[start..end].to_string()
        };
        let script = between("<script>", "</script>");
        let style = between("<style>", "</style>");
        assert_eq!(script, JS);
        assert_eq!(style, CSS);
        assert!(p
            .content_security_policy
            .contains(&format!("script-src {};", sha256_source(&script))));
        assert!(p.content_security_policy.contains(&format!("style-src {};", sha256_source(&style))));
        // One script and one style element: anything else inline would be blocked.
        assert_eq!(p.html.matches("<script").count(), 1);
        assert_eq!(p.html.matches("<style").count(), 1);
        assert!(!p.html.contains(" style=") && !p.html.contains(" onclick="));
        // Nothing is fetched from elsewhere.
        assert!(!p.html.contains("http://") && !p.html.contains("https://"));
    }

    #[test]
    fn if_none_match_is_read_as_a_list_of_tags() {
        let mut h = HeaderMap::new();
        h.insert(header::IF_NONE_MATCH, HeaderValue::from_static("\"x\", W/\"abc\""));
        assert!(not_modified(&h, "\"abc\""));
        assert!(not_modified(&h, "W/\"x\""));
        assert!(!not_modified(&h, "W/\"abd\""));
        assert!(!not_modified(&HeaderMap::new(), "\"abc\""));
    }
}
