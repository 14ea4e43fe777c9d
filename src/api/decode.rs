//! Decoding requests: every invalid field reported at once, each with its JSON Pointer.
//!
//! A derived deserializer stops at the first error, while a caller fixing a request wants all of
//! them. So a request type is declared with [`wire_object!`], which defines the struct (whose
//! OpenAPI schema utoipa derives) and decodes each of its fields on its own from the JSON object,
//! collecting every error; a cross-field pass follows in the route. A field's type decodes
//! through [`Decode`]: most through their serde derive (the engine's types own their names and
//! ranges), arrays element by element (so every bad element is named), and a few forms by hand.

use serde::de::DeserializeOwned;
use serde_json::{Map, Value};

use super::problem::{escape_token, FieldError, Problem};
use super::rules::Rule;

/// Field errors collected while reading a request.
#[derive(Debug, Default)]
pub struct Errors(pub Vec<FieldError>);

impl Errors {
    pub fn push(&mut self, pointer: impl Into<String>, message: impl Into<String>) {
        self.0.push(FieldError::new(pointer, message));
    }

    /// An error that a documented cross-field rule or limit decided (see [`Rule`]).
    pub fn refuse(&mut self, pointer: impl Into<String>, rule: Rule, message: impl Into<String>) {
        self.0.push(FieldError::by_rule(pointer, rule, message));
    }

    pub fn len(&self) -> usize {
        self.0.len()
    }

    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }
}

/// A short description of a JSON value's type, for error messages: never its content, which
/// could be the caller's data, except for short strings that explain the mistake, like "NaN".
pub fn describe(v: &Value) -> String {
    match v {
        Value::Null => "null".into(),
        Value::Bool(_) => "a boolean".into(),
        Value::Number(n) => format!("{n}"),
        Value::String(s) if s.chars().count() <= 12 => format!("the string {}", Value::String(s.clone())),
        Value::String(_) => "a string".into(),
        Value::Array(_) => "an array".into(),
        Value::Object(_) => "an object".into(),
    }
}

/// A value given where a name was expected: a short string quoted as JSON, else described.
pub fn given(v: &Value) -> String {
    match v {
        Value::String(s) if s.chars().count() <= 24 => v.to_string(),
        other => describe(other),
    }
}

/// How a request field's value may be sent. R's usual JSON writer turns a length-one vector
/// into a one-element array or a bare value depending on a setting (`auto_unbox`), so a field
/// meets it halfway: one value also comes as a one-element array, and a list also as one item
/// alone. Data is the exception: a one-element data array is a sample of one, never a value.
/// The decoder ([`decode_field`]) and the OpenAPI document (`schema::lenient`) both read it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shape {
    /// One value (or object), or a one-element array holding it.
    One,
    /// An array, or one item alone standing for a one-item array.
    List,
    /// Exactly as its type decodes it: data arrays, and a batch's jobs.
    AsIs,
}

/// The words every refusal of an array where one value goes uses, and the document repeats.
pub const ONE_VALUE: &str = "one value (or a one-element array)";

/// Decodes one field's value, reporting every problem under `at`.
pub trait Decode: Sized {
    /// How a request field of this type may be sent; one value unless said otherwise.
    const SHAPE: Shape = Shape::One;

    fn decode(v: &Value, at: &str, errs: &mut Errors) -> Option<Self>;
}

/// Decode a request field's value by its type's [`Shape`]. An error inside a one-element array
/// points at the element (`/statistic/0`); one inside a list's lone item points at the field
/// (`/levels`): a pointer always resolves in the body as sent.
pub fn decode_field<T: Decode>(v: &Value, at: &str, errs: &mut Errors) -> Option<T> {
    match (T::SHAPE, v) {
        (Shape::One, Value::Array(items)) => match items.as_slice() {
            [one] => T::decode(one, &format!("{at}/0"), errs),
            _ => {
                refuse_many(items.len(), at, errs);
                None
            }
        },
        (Shape::List, item) if !item.is_array() => {
            let mut inner = Errors::default();
            let got = T::decode(&Value::Array(vec![item.clone()]), at, &mut inner);
            let element = format!("{at}/0");
            for mut e in inner.0 {
                if let Some(rest) = e.pointer.strip_prefix(&element) {
                    e.pointer = format!("{at}{rest}");
                }
                errs.0.push(e);
            }
            got
        }
        _ => T::decode(v, at, errs),
    }
}

/// The refusal of an array of `n` items (not one) where one value goes.
pub(crate) fn refuse_many(n: usize, at: &str, errs: &mut Errors) {
    errs.push(at, format!("must be {ONE_VALUE}; got an array of {n} items"));
}

/// Decode through a type's serde derive, turning serde's first error into a field error with a
/// JSON Pointer to the value at fault.
pub fn with_serde<T: DeserializeOwned>(v: &Value, at: &str, errs: &mut Errors) -> Option<T> {
    match serde_path_to_error::deserialize::<_, T>(v) {
        Ok(x) => Some(x),
        Err(e) => {
            report(&e.inner().to_string(), e.path(), v, at, errs);
            None
        }
    }
}

/// Decode an object through `read` (a serde derive on a path-tracking deserializer), reporting
/// the first error of every field, not only the first of all: after each error the field at
/// fault is taken out and the object read again, until it reads, or fails on no field of its
/// own (a missing field, or one already reported and taken out).
pub fn every_field<T>(
    obj: &Map<String, Value>,
    at: &str,
    errs: &mut Errors,
    read: impl Fn(&Value, &mut serde_path_to_error::Track) -> Result<T, serde_json::Error>,
) -> Option<T> {
    let mut rest = obj.clone();
    let mut reported: Vec<String> = Vec::new();
    loop {
        let value = Value::Object(rest.clone());
        let mut track = serde_path_to_error::Track::new();
        let e = match read(&value, &mut track) {
            Ok(x) => return reported.is_empty().then_some(x),
            Err(e) => e,
        };
        let before = errs.len();
        report(&e.to_string(), &track.path(), &value, at, errs);
        if errs.0[..before].iter().any(|x| x.pointer == errs.0[before].pointer) {
            // Reported already (a required field found missing before reading).
            errs.0.truncate(before);
            return None;
        }
        let token = errs.0[before].pointer[at.len()..]
            .trim_start_matches('/')
            .split('/')
            .next()
            .unwrap_or("")
            .to_string();
        let key = rest.keys().find(|k| escape_token(k) == token).cloned();
        match key {
            Some(k) => {
                rest.shift_remove(&k);
                reported.push(k);
            }
            None => {
                if reported.iter().any(|k| escape_token(k) == token) {
                    errs.0.truncate(before);
                }
                return None;
            }
        }
    }
}

/// Report serde's error `message`, met at `path` inside the value `v` found at `at`.
pub fn report(message: &str, path: &serde_path_to_error::Path, v: &Value, at: &str, errs: &mut Errors) {
    let mut pointer = at.to_string();
    let mut here = v;
    for segment in path.iter() {
        let token = match segment {
            serde_path_to_error::Segment::Seq { index } => index.to_string(),
            serde_path_to_error::Segment::Map { key } => key.clone(),
            _ => continue,
        };
        here = here
            .get(&token)
            .or_else(|| token.parse::<usize>().ok().and_then(|i| here.get(i)))
            .unwrap_or(here);
        pointer.push('/');
        pointer.push_str(&escape_token(&token));
    }
    let (pointer, message) = explain(message, pointer, here);
    errs.push(pointer, message);
}

/// The text between the first pair of backticks in a serde message.
fn quoted_name(message: &str) -> Option<&str> {
    let start = message.find('`')? + 1;
    let end = start + message[start..].find('`')?;
    Some(&message[start..end])
}

/// serde's message, rewritten for a person who sends JSON: the field it names gets the pointer,
/// Rust type names become JSON words, and a wrong value is described, not echoed.
fn explain(message: &str, pointer: String, value: &Value) -> (String, String) {
    if let Some(rest) = message.strip_prefix("missing field ") {
        let name = quoted_name(rest).unwrap_or("");
        return (format!("{pointer}/{}", escape_token(name)), "is required".into());
    }
    if let Some(rest) = message.strip_prefix("unknown field ") {
        let name = escape_token(quoted_name(rest).unwrap_or(""));
        let expected = match rest.split_once(", ") {
            Some((_, "there are no fields")) | None => "nothing else may be given here".to_string(),
            Some((_, e)) => e.replace('`', "\""),
        };
        // serde's path ends at the unknown key when it read the key itself, not otherwise.
        let at = if pointer.ends_with(&format!("/{name}")) {
            pointer
        } else {
            format!("{pointer}/{name}")
        };
        return (at, format!("unknown field ({expected})"));
    }
    if message.starts_with("unknown variant ") {
        let expected = message.split_once(", ").map_or(String::new(), |(_, e)| e.replace('`', "\""));
        return (pointer, format!("unknown value {}; {expected}", given(value)));
    }
    if let Some(expected) = message
        .strip_prefix("invalid type: ")
        .and_then(|m| m.split_once(", expected "))
        .map(|(_, e)| e)
    {
        return (pointer, format!("must be {}; got {}", json_words(expected), describe(value)));
    }
    (pointer, message.replace('`', "\""))
}

/// Rust type names in serde's "expected ..." as JSON words.
fn json_words(expected: &str) -> String {
    match expected {
        "f64" | "f32" => "a number".into(),
        "u64" | "u32" | "usize" | "i64" => "a whole number".into(),
        "a boolean" => "true or false".into(),
        // A name of an enumeration, which serde would also take as a map.
        "string or map" => "a name (a string)".into(),
        other => other.replace('`', "\""),
    }
}

/// Types decoded through their serde derive.
#[macro_export]
macro_rules! decode_with_serde {
    ($($t:ty),+ $(,)?) => {
        $(impl $crate::api::decode::Decode for $t {
            fn decode(v: &serde_json::Value, at: &str, errs: &mut $crate::api::decode::Errors) -> Option<Self> {
                $crate::api::decode::with_serde(v, at, errs)
            }
        })+
    };
}

/// An array decodes element by element, so that every bad element is named.
impl<T: Decode> Decode for Vec<T> {
    const SHAPE: Shape = Shape::List;

    fn decode(v: &Value, at: &str, errs: &mut Errors) -> Option<Self> {
        let Value::Array(items) = v else {
            errs.push(at, format!("must be an array; got {}", describe(v)));
            return None;
        };
        let before = errs.len();
        let out: Vec<Option<T>> = items
            .iter()
            .enumerate()
            .map(|(i, x)| T::decode(x, &format!("{at}/{i}"), errs))
            .collect();
        (errs.len() == before).then(|| out.into_iter().map(|x| x.expect("no errors")).collect())
    }
}

/// Refuse every field of `obj` not in `fields`, listing the known ones.
pub fn unknown_fields(obj: &Map<String, Value>, fields: &[&str], at: &str, errs: &mut Errors) {
    for k in obj.keys().filter(|k| !fields.contains(&k.as_str())) {
        errs.push(
            format!("{at}/{}", escape_token(k)),
            format!(
                "unknown field; the fields here are {}",
                fields.iter().map(|a| format!("\"{a}\"")).collect::<Vec<_>>().join(", ")
            ),
        );
    }
}

/// A request object type: the struct whose OpenAPI schema utoipa derives, with every field
/// decoded on its own. Each field is `required`, `default` (absent means what the named function
/// returns, which the OpenAPI document shows as the default), `optional` (absent means `None`),
/// or `flatten` (another such type whose fields sit in the same object); its doc comment
/// documents it in the OpenAPI document.
#[macro_export]
macro_rules! wire_object {
    ($(#[$meta:meta])* pub struct $name:ident { $($body:tt)* }) => {
        $crate::wire_object!(@munch [$(#[$meta])*] $name [] [] $($body)*);
    };
    (@munch $metas:tt $name:ident [$($fields:tt)*] [$($decodes:tt)*]
        required $(#[$fm:meta])* $field:ident : $ty:ty, $($rest:tt)*) => {
        $crate::wire_object!(@munch $metas $name
            [$($fields)* $(#[$fm])* pub $field: $ty,]
            [$($decodes)* ($field, $ty, required)] $($rest)*);
    };
    (@munch $metas:tt $name:ident [$($fields:tt)*] [$($decodes:tt)*]
        default $(#[$fm:meta])* $field:ident : $ty:ty = $default:path, $($rest:tt)*) => {
        $crate::wire_object!(@munch $metas $name
            [$($fields)* $(#[$fm])* #[serde(default)] #[schema(default = $default)] pub $field: $ty,]
            [$($decodes)* ($field, $ty, default $default)] $($rest)*);
    };
    (@munch $metas:tt $name:ident [$($fields:tt)*] [$($decodes:tt)*]
        optional $(#[$fm:meta])* $field:ident : $ty:ty, $($rest:tt)*) => {
        $crate::wire_object!(@munch $metas $name
            [$($fields)* $(#[$fm])* #[serde(default)] #[schema(nullable = false)] pub $field: Option<$ty>,]
            [$($decodes)* ($field, $ty, optional)] $($rest)*);
    };
    (@munch $metas:tt $name:ident [$($fields:tt)*] [$($decodes:tt)*]
        flatten $(#[$fm:meta])* $field:ident : $ty:ty, $($rest:tt)*) => {
        $crate::wire_object!(@munch $metas $name
            [$($fields)* $(#[$fm])* #[serde(flatten)] pub $field: $ty,]
            [$($decodes)* ($field, $ty, flatten)] $($rest)*);
    };
    (@munch [$(#[$meta:meta])*] $name:ident [$($fields:tt)*] [$( ($field:ident, $ty:ty, $($mode:tt)*) )*]) => {
        $(#[$meta])*
        #[derive(Debug, Clone, utoipa::ToSchema)]
        #[serde(deny_unknown_fields)]
        pub struct $name { $($fields)* }

        impl $name {
            /// The names of the fields, those of flattened parts included.
            pub fn fields() -> Vec<&'static str> {
                let mut out = Vec::new();
                $( out.extend($crate::wire_object!(@names $field, $ty, $($mode)*)); )*
                out
            }

            /// How each field may be sent, those of flattened parts included.
            pub fn shapes() -> Vec<(&'static str, $crate::api::decode::Shape)> {
                let mut out = Vec::new();
                $( out.extend($crate::wire_object!(@shapes $field, $ty, $($mode)*)); )*
                out
            }

            /// Decode every field of `obj` (every error at once, under `at`), refusing fields
            /// that are neither this type's nor in `also`.
            pub fn decode(
                obj: &serde_json::Map<String, serde_json::Value>,
                at: &str,
                also: &[&str],
                errs: &mut $crate::api::decode::Errors,
            ) -> Option<Self> {
                let known: Vec<&str> = Self::fields().into_iter().chain(also.iter().copied()).collect();
                $crate::api::decode::unknown_fields(obj, &known, at, errs);
                Self::decode_fields(obj, at, errs)
            }

            /// Decode this type's fields of `obj`, leaving other fields to the caller.
            pub fn decode_fields(
                obj: &serde_json::Map<String, serde_json::Value>,
                at: &str,
                errs: &mut $crate::api::decode::Errors,
            ) -> Option<Self> {
                let before = errs.len();
                $( let $field = $crate::wire_object!(@decode obj, at, errs, $field, $ty, $($mode)*); )*
                if errs.len() != before {
                    return None;
                }
                Some($name { $( $field: $field.expect("decoded without errors"), )* })
            }
        }
    };
    (@names $field:ident, $ty:ty, flatten) => { <$ty>::fields() };
    (@names $field:ident, $ty:ty, $($mode:tt)*) => { [stringify!($field)] };
    (@shapes $field:ident, $ty:ty, flatten) => { <$ty>::shapes() };
    (@shapes $field:ident, $ty:ty, $($mode:tt)*) => {
        [(stringify!($field), <$ty as $crate::api::decode::Decode>::SHAPE)]
    };
    (@decode $obj:ident, $at:ident, $errs:ident, $field:ident, $ty:ty, flatten) => {
        <$ty>::decode_fields($obj, $at, $errs)
    };
    (@decode $obj:ident, $at:ident, $errs:ident, $field:ident, $ty:ty, required) => {
        match $obj.get(stringify!($field)) {
            Some(v) => $crate::api::decode::decode_field::<$ty>(v, &format!("{}/{}", $at, stringify!($field)), $errs),
            None => {
                $errs.push(format!("{}/{}", $at, stringify!($field)), "is required");
                None
            }
        }
    };
    (@decode $obj:ident, $at:ident, $errs:ident, $field:ident, $ty:ty, default $default:path) => {
        match $obj.get(stringify!($field)) {
            Some(v) => $crate::api::decode::decode_field::<$ty>(v, &format!("{}/{}", $at, stringify!($field)), $errs),
            None => Some($default()),
        }
    };
    (@decode $obj:ident, $at:ident, $errs:ident, $field:ident, $ty:ty, optional) => {
        match $obj.get(stringify!($field)) {
            Some(v) => $crate::api::decode::decode_field::<$ty>(v, &format!("{}/{}", $at, stringify!($field)), $errs).map(Some),
            None => Some(None),
        }
    };
}

/// Decode a request object with `decode` and hold it to the rules of `check`, every error at
/// once: the shared first step of each compute route.
pub fn checked<T>(
    json: &Value,
    decode: impl FnOnce(&Map<String, Value>, &mut Errors) -> Option<T>,
    check: impl FnOnce(&T, &Map<String, Value>, &mut Errors),
) -> Result<T, Problem> {
    let raw = json.as_object().expect("an object");
    let mut errs = Errors::default();
    let req = decode(raw, &mut errs);
    if let Some(r) = &req {
        check(r, raw, &mut errs);
    }
    match req {
        Some(r) if errs.is_empty() => Ok(r),
        _ => Err(Problem::invalid(errs.0)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::interval::{Level, Method};

    #[test]
    fn every_field_of_an_object_reports_its_own_error() {
        use crate::engine::statistic::association::CorrelationSpec;
        let obj = serde_json::json!({"x": "", "y": 5, "kind": "q", "z": 1});
        let mut errs = Errors::default();
        let read = |v: &Value, t: &mut serde_path_to_error::Track| {
            <CorrelationSpec as serde::Deserialize>::deserialize(serde_path_to_error::Deserializer::new(v, t))
        };
        assert!(every_field(obj.as_object().unwrap(), "/statistic", &mut errs, read).is_none());
        let pointers: Vec<&str> = errs.0.iter().map(|e| e.pointer.as_str()).collect();
        assert_eq!(
            pointers,
            ["/statistic/x", "/statistic/y", "/statistic/kind", "/statistic/z"],
            "{:?}",
            errs.0
        );
        // A required field missing behind an invalid one shows once the invalid one is mended
        // (the statistic's decoder checks required fields against its schema beforehand).
        let mut errs = Errors::default();
        assert!(every_field(serde_json::json!({"x": ""}).as_object().unwrap(), "/s", &mut errs, read).is_none());
        let pointers: Vec<&str> = errs.0.iter().map(|e| e.pointer.as_str()).collect();
        assert_eq!(pointers, ["/s/x"], "{:?}", errs.0);
    }

    #[test]
    fn an_unknown_field_is_named_once_in_its_pointer() {
        use crate::engine::statistic::quantile::QuantileSpec;
        let mut errs = Errors::default();
        assert!(with_serde::<QuantileSpec>(&serde_json::json!({"p": 0.5, "q": 1}), "/x", &mut errs).is_none());
        assert_eq!(errs.0[0].pointer, "/x/q");
    }

    #[test]
    fn serde_errors_point_at_the_value_and_read_as_json() {
        let mut errs = Errors::default();
        let got: Option<Vec<Level>> = Decode::decode(&serde_json::json!([0.5, 95, "x"]), "/levels", &mut errs);
        assert!(got.is_none());
        let pointers: Vec<&str> = errs.0.iter().map(|e| e.pointer.as_str()).collect();
        assert_eq!(pointers, ["/levels/1", "/levels/2"]);
        assert!(errs.0[0].message.contains("95"), "{:?}", errs.0);
        assert_eq!(errs.0[1].message, "must be a number; got the string \"x\"");
        let mut errs = Errors::default();
        let m: Option<Method> = Decode::decode(&serde_json::json!("pct"), "/methods/0", &mut errs);
        assert!(m.is_none());
        assert!(errs.0[0].message.contains("\"percentile\""), "{:?}", errs.0);
    }
}
