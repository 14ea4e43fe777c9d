//! R's boxed forms inside objects. R has no scalars, and its usual JSON writer (jsonlite) with
//! `auto_unbox` off sends every member of a named list as an array: `list(name = "quantile",
//! p = 0.9)` becomes `{"name": ["quantile"], "p": [0.9]}`. This module knows which members of
//! which objects hold one value ([`boxed_members`]), reads them unboxed
//! ([`with_members_unboxed`]), and fits every problem's pointers to the body as sent
//! ([`fitted`]). The request fields themselves are met halfway by [`Shape`](super::decode::Shape).

use serde_json::{Map, Value};
use std::sync::OnceLock;
use utoipa::ToSchema;

use super::decode::{refuse_many, Errors};
use super::problem::{escape_token, Problem};
use super::schema::{components, variants};
use crate::engine::scheme::SchemeSpec;
use crate::engine::statistic::StatisticSpec;

/// The members of an object by how they are sent: those that hold one value, which R's writers
/// may send boxed in a one-element array, and those that hold a list.
#[derive(Debug, Default, PartialEq)]
pub struct Members {
    pub one: Vec<String>,
    pub lists: Vec<String>,
}

impl Members {
    /// The members of a tagged union `T`'s variants, the tag included, each a list where its
    /// schema (references resolved) is an array.
    pub fn of_union<T: ToSchema>(tag: &str) -> Members {
        let components = components::<T>();
        let resolve = |p: &Value| -> Value {
            match p["$ref"].as_str() {
                Some(r) => components
                    .get(r.rsplit('/').next().unwrap_or(r))
                    .cloned()
                    .unwrap_or_else(|| panic!("{r} is a component")),
                None => p.clone(),
            }
        };
        let is_list = |p: &Value| {
            let t = &resolve(p)["type"];
            t == "array" || t.as_array().is_some_and(|ts| ts.iter().any(|t| t == "array"))
        };
        let mut out = Members::default();
        for variant in variants::<T>(tag) {
            for (name, p) in variant["properties"].as_object().into_iter().flatten() {
                let side = if is_list(p) { &mut out.lists } else { &mut out.one };
                if !side.contains(name) {
                    side.push(name.clone());
                }
            }
        }
        // A name that is a list in one variant and one value in another could not be read.
        assert!(
            out.one.iter().all(|m| !out.lists.contains(m)),
            "{} has a member that is a list in one variant and one value in another",
            T::name()
        );
        out
    }
}

/// The objects whose members R may send boxed, by the request field that holds them: a
/// statistic and a scheme (read from their schemas, once: utoipa builds a schema anew on every
/// call), and a histogram's `bins`.
pub fn boxed_members(field: &str) -> Option<&'static Members> {
    static STATISTIC: OnceLock<Members> = OnceLock::new();
    static SCHEME: OnceLock<Members> = OnceLock::new();
    static BINS: OnceLock<Members> = OnceLock::new();
    match field {
        "statistic" => Some(STATISTIC.get_or_init(|| Members::of_union::<StatisticSpec>("name"))),
        "scheme" => Some(SCHEME.get_or_init(|| Members::of_union::<SchemeSpec>("kind"))),
        "bins" => Some(BINS.get_or_init(|| Members {
            one: vec!["overflow".into()],
            lists: vec!["edges".into(), "counts".into()],
        })),
        _ => None,
    }
}

/// The tagged unions of the document: the schema's name, its tag, and the request field that
/// holds one.
pub const TAGGED_UNIONS: [(&str, &str, &str); 2] = [("StatisticSpec", "name", "statistic"), ("SchemeSpec", "kind", "scheme")];

/// A pointer made against a field's canonical form, fitted to the body as sent: an element
/// index dropped where a list came as one item alone (`/methods/0` → `/methods`), `/0` put in
/// where one value came as a one-element array (`/scheme/block_length` →
/// `/scheme/0/block_length`), and `/0` put after a member R sent boxed (`/statistic/p` →
/// `/statistic/p/0` for `"p": [1.5]`; the members are [`boxed_members`]). Pointers into
/// other values are left as they are.
pub fn fit_pointer(raw: &Map<String, Value>, pointer: &str) -> String {
    let tokens: Vec<&str> = pointer.split('/').skip(1).collect();
    let Some((first, rest)) = tokens.split_first() else {
        return pointer.to_string();
    };
    let mut out = format!("/{first}");
    let mut here = raw.get(&unescape_token(first));
    // The last two names descended by (not indices): a member and the field that holds it.
    let (mut owner, mut member) = ("", *first);
    for (i, token) in rest.iter().enumerate() {
        let index = token.parse::<usize>().ok();
        match here {
            Some(Value::Array(a)) if a.len() == 1 && index.is_none() => {
                out.push_str("/0");
                here = a.first();
            }
            Some(v) if i == 0 && *token == "0" && !v.is_array() && !v.is_object() => continue,
            _ => {}
        }
        out.push('/');
        out.push_str(token);
        here = match (here, index) {
            (Some(Value::Object(o)), _) => o.get(&unescape_token(token)),
            (Some(Value::Array(a)), Some(k)) => a.get(k),
            _ => None,
        };
        if index.is_none() {
            (owner, member) = (member, *token);
        }
    }
    // Only a pointer that ends at the member itself (not at an index inside it).
    let ends_at_member = tokens.last() == Some(&member);
    let boxed = boxed_members(owner).is_some_and(|m| m.one.iter().any(|o| escape_token(o) == member));
    if ends_at_member && boxed && matches!(here, Some(Value::Array(a)) if a.len() == 1) {
        out.push_str("/0");
    }
    out
}

/// A JSON Pointer reference token as the name it stands for (RFC 6901 §4: `~1` is `/`, `~0`
/// is `~`).
fn unescape_token(token: &str) -> String {
    token.replace("~1", "/").replace("~0", "~")
}

/// Decode an object whose members R may have sent boxed: with `auto_unbox` off, R's writers send
/// every member of a named list as an array, so `{"name": ["quantile"], "p": [0.9]}` stands for
/// `{"name": "quantile", "p": 0.9}`. Each member of `members.one` that came as a one-element
/// array is read as its element, and one that came as an array of another length is refused as
/// a request field would be; other members (lists, and names the object does not know) are read
/// as sent. [`fit_pointer`] then points an error inside a boxed member at its element.
pub fn with_members_unboxed<T>(
    v: &Value,
    at: &str,
    errs: &mut Errors,
    members: &Members,
    read: impl FnOnce(&Value, &str, &mut Errors) -> Option<T>,
) -> Option<T> {
    let boxed = |k: &String, v: &Value| v.is_array() && members.one.contains(k);
    let Value::Object(obj) = v else {
        return read(v, at, errs);
    };
    if !obj.iter().any(|(k, v)| boxed(k, v)) {
        // Nothing to unbox: read as sent, without a copy (a scheme's labels can be long).
        return read(v, at, errs);
    }
    let mut refused = Vec::new();
    let unboxed: Map<String, Value> = obj
        .iter()
        .map(|(k, v)| match v {
            Value::Array(items) if boxed(k, v) && items.len() == 1 => (k.clone(), items[0].clone()),
            Value::Array(items) if boxed(k, v) => {
                let pointer = format!("{at}/{}", escape_token(k));
                refuse_many(items.len(), &pointer, errs);
                refused.push(pointer);
                (k.clone(), v.clone())
            }
            _ => (k.clone(), v.clone()),
        })
        .collect();
    let before = errs.len();
    let got = read(&Value::Object(unboxed), at, errs);
    // The reader's own complaint about a member refused above says less than the refusal.
    let mut k = 0;
    errs.0.retain(|e| {
        k += 1;
        k <= before || !refused.contains(&e.pointer)
    });
    got.filter(|_| refused.is_empty())
}

/// A problem about a request body with its pointers fitted to the body as sent (see
/// [`fit_pointer`]): what the rules and the engine say about the canonical form, said of the
/// lenient one.
pub fn fitted(problem: Problem, body: &Value) -> Problem {
    match body.as_object() {
        Some(raw) if problem.errors.iter().any(|e| fit_pointer(raw, &e.pointer) != e.pointer) => {
            problem.with_pointers(|p| fit_pointer(raw, p))
        }
        _ => problem,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The schemas decide which members are lists: a scheme's labels, and nothing of a
    /// statistic; every tag and parameter holds one value.
    #[test]
    fn the_members_are_read_from_the_schemas() {
        let scheme = boxed_members("scheme").unwrap();
        assert_eq!(scheme.lists, ["strata", "clusters"]);
        assert!(["kind", "block_length", "mean_block_length"]
            .iter()
            .all(|m| scheme.one.contains(&m.to_string())));
        let statistic = boxed_members("statistic").unwrap();
        assert!(statistic.lists.is_empty(), "{:?}", statistic.lists);
        for m in [
            "name",
            "p",
            "trim",
            "divisor",
            "threshold",
            "numerator",
            "denominator",
            "x",
            "y",
            "kind",
            "normalized",
        ] {
            assert!(statistic.one.contains(&m.to_string()), "{m}");
        }
        assert!(boxed_members("data").is_none());
    }

    #[test]
    fn pointers_are_fitted_to_the_body_as_sent() {
        let body = serde_json::json!({
            "statistic": [{"name": "ratio", "numerator": ["a"]}],
            "levels": 0.9,
            "scheme": {"kind": "stratified", "strata": ["x"]},
            "data": {"bins": {"overflow": [3]}},
        });
        let raw = body.as_object().unwrap();
        for (made, sent) in [
            ("/statistic/numerator", "/statistic/0/numerator/0"),
            ("/statistic/0/numerator/0", "/statistic/0/numerator/0"),
            ("/levels/0", "/levels"),
            ("/scheme/strata", "/scheme/strata"),
            ("/data/bins/overflow", "/data/bins/overflow/0"),
            ("/seed", "/seed"),
            ("/statistic/0/numerator/0", "/statistic/0/numerator/0"),
            ("/data/bins/overflow/0", "/data/bins/overflow/0"),
            ("", ""),
        ] {
            assert_eq!(fit_pointer(raw, made), sent, "{made}");
        }
    }
}
