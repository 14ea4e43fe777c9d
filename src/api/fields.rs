//! Field types of the requests that need more than their engine type's serde derive: lists
//! with bounds, the statistic (a name, or an object with its parameters), the number of
//! resamples (a number, `"auto"` or `"exact"`) and tagged unions such as the scheme.

use std::borrow::Cow;

use serde::{Deserialize, Serialize};
use serde_json::{Map, Value};
use utoipa::openapi::schema::{ArrayBuilder, ObjectBuilder, OneOfBuilder, Schema, Type};
use utoipa::openapi::{Ref, RefOr};
use utoipa::{PartialSchema, ToSchema};

use super::boxed::{boxed_members, with_members_unboxed};
use super::decode::{describe, every_field, given, with_serde, Decode, Errors, Shape};
use crate::engine::interval::{Level, Method, DEFAULT_LEVEL, DEFAULT_METHODS};
use crate::engine::job::{Include, InnerResamples};
use crate::engine::plan::OnTimeLimit;
use crate::engine::plan::{McTarget, ResampleCount};
use crate::engine::rng::Seed;
use crate::engine::scheme::{BlockLength, SchemeSpec};
use crate::engine::statistic::StatisticSpec;

crate::decode_with_serde!(
    Level,
    Method,
    Include,
    OnTimeLimit,
    InnerResamples,
    McTarget,
    ResampleCount,
    Seed,
    String
);

/// Decode an array of `min` to `max` items; an item given twice counts once.
pub fn bounded_list<T: Decode + PartialEq>(v: &Value, at: &str, (min, max): (usize, usize), errs: &mut Errors) -> Option<Vec<T>> {
    let count = v.as_array().map(Vec::len);
    if count.is_some_and(|n| n < min || n > max) {
        errs.push(at, format!("must hold {min} to {max} items; it holds {}", count.unwrap_or(0)));
        return None;
    }
    let items: Vec<T> = Decode::decode(v, at, errs)?;
    let mut out: Vec<T> = Vec::with_capacity(items.len());
    for x in items {
        if !out.contains(&x) {
            out.push(x);
        }
    }
    Some(out)
}

/// A list type of `min` to `max` items of an engine type, with its default: decoded by
/// [`bounded_list`], documented with the same bounds.
macro_rules! list_of {
    ($(#[doc = $doc:literal])* $name:ident($item:ty), $min:literal..=$max:literal, default $default:ident = $value:expr) => {
        $(#[doc = $doc])*
        #[derive(Debug, Clone, PartialEq, Serialize)]
        #[serde(transparent)]
        pub struct $name(pub Vec<$item>);

        impl<'de> Deserialize<'de> for $name {
            fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
                $name::try_from(Vec::<$item>::deserialize(d)?).map_err(serde::de::Error::custom)
            }
        }

        impl TryFrom<Vec<$item>> for $name {
            type Error = String;
            fn try_from(items: Vec<$item>) -> Result<Self, String> {
                if ($min..=$max).contains(&items.len()) {
                    Ok($name(items))
                } else {
                    Err(format!("must hold {} to {} items; it holds {}", $min, $max, items.len()))
                }
            }
        }


        /// The default when the field is absent.
        pub fn $default() -> $name {
            $name($value)
        }

        impl Decode for $name {
            const SHAPE: Shape = Shape::List;

            fn decode(v: &Value, at: &str, errs: &mut Errors) -> Option<Self> {
                bounded_list(v, at, ($min, $max), errs).map($name)
            }
        }

        impl PartialSchema for $name {
            fn schema() -> RefOr<Schema> {
                ArrayBuilder::new()
                    .items(RefOr::Ref(Ref::from_schema_name(<$item as ToSchema>::name())))
                    .min_items(Some($min))
                    .max_items(Some($max))
                    .description(Some(concat!($($doc),*).trim_ascii()))
                    .into()
            }
        }

        impl ToSchema for $name {
            fn schemas(schemas: &mut Vec<(String, RefOr<Schema>)>) {
                schemas.push((<$item as ToSchema>::name().into(), <$item as PartialSchema>::schema()));
            }
        }
    };
}

list_of! {
    /// Confidence levels, 1 to 20 of them; repeats count once.
    Levels(Level), 1..=20, default default_levels = vec![Level::new(DEFAULT_LEVEL).expect("in range")]
}

list_of! {
    /// Interval methods, at least one; repeats count once.
    Methods(Method), 1..=5, default default_methods = DEFAULT_METHODS.to_vec()
}

list_of! {
    /// Optional parts of the response.
    Includes(Include), 0..=3, default no_extras = Vec::new()
}

/// The values a tagged union's tag takes, read from its OpenAPI schema (the one definition of
/// its names): each variant is an object (or an `allOf` of objects) whose `tag` property has one
/// enumerated value.
pub fn tag_values<T: PartialSchema>(tag: &str) -> Vec<String> {
    let schema = serde_json::to_value(T::schema()).expect("a schema serialises");
    let variants = schema["oneOf"].as_array().cloned().unwrap_or_default();
    variants
        .iter()
        .flat_map(|v| std::iter::once(v.clone()).chain(v["allOf"].as_array().cloned().unwrap_or_default()))
        .filter_map(|v| v["properties"][tag]["enum"][0].as_str().map(String::from))
        .collect()
}

fn one_of(names: &[String]) -> String {
    names.iter().map(|n| format!("\"{n}\"")).collect::<Vec<_>>().join(", ")
}

/// Check a tagged union's tag before its serde derive reads the rest, so that a missing or
/// unknown tag points at the tag and lists the names.
fn checked_tag<'v>(v: &'v Value, at: &str, tag: &str, names: &[String], errs: &mut Errors) -> Option<&'v Map<String, Value>> {
    let Value::Object(obj) = v else {
        errs.push(at, format!("must be an object with \"{tag}\"; got {}", describe(v)));
        return None;
    };
    match obj.get(tag) {
        Some(Value::String(s)) if names.contains(s) => Some(obj),
        Some(other) => {
            errs.push(
                format!("{at}/{tag}"),
                format!("unknown value {}; expected one of {}", given(other), one_of(names)),
            );
            None
        }
        None => {
            errs.push(format!("{at}/{tag}"), format!("is required: one of {}", one_of(names)));
            None
        }
    }
}

/// A labelled scheme's labels: an array of strings or integers, one per row.
fn labels_ok(v: Option<&Value>, at: &str, errs: &mut Errors) -> bool {
    let Some(v) = v else {
        errs.push(
            at,
            "is required: a label (string or integer) for each row, in the order of the rows".to_string(),
        );
        return false;
    };
    let Value::Array(items) = v else {
        errs.push(
            at,
            format!("must be an array of labels (strings or integers), one per row; got {}", describe(v)),
        );
        return false;
    };
    let before = errs.len();
    for (i, item) in items.iter().enumerate() {
        if !(item.is_string() || item.is_i64() || item.is_u64()) {
            errs.push(
                format!("{at}/{i}"),
                format!("a label is a string or an integer; got {}", describe(item)),
            );
        }
    }
    errs.len() == before
}

impl Decode for SchemeSpec {
    fn decode(v: &Value, at: &str, errs: &mut Errors) -> Option<Self> {
        let members = boxed_members("scheme").expect("a scheme's members");
        with_members_unboxed(v, at, errs, members, scheme_members)
    }
}

/// A scheme's object, its members unboxed where R boxed them.
fn scheme_members(v: &Value, at: &str, errs: &mut Errors) -> Option<SchemeSpec> {
    let obj = checked_tag(v, at, "kind", &tag_values::<SchemeSpec>("kind"), errs)?;
    // An internally tagged enum loses a field's place in serde's errors: a block length is
    // read on its own first, so that its error points at it.
    let mut lengths_ok = true;
    for field in ["block_length", "mean_block_length"] {
        if let Some(Err(e)) = obj.get(field).map(BlockLength::deserialize) {
            errs.push(format!("{at}/{field}"), e.to_string());
            lengths_ok = false;
        }
    }
    let kind = obj.get("kind").and_then(Value::as_str);
    for (scheme, field) in [("stratified", "strata"), ("cluster", "clusters")] {
        if kind == Some(scheme) {
            lengths_ok &= labels_ok(obj.get(field), &format!("{at}/{field}"), errs);
        }
    }
    if !lengths_ok {
        return None;
    }
    every_field(obj, at, errs, |v, t| {
        SchemeSpec::deserialize(serde_path_to_error::Deserializer::new(v, t))
    })
}

/// `statistic`: a name, or an object with the name and its parameters.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(transparent)]
pub struct Statistic(pub StatisticSpec);

/// The mean, when no statistic is named.
pub fn default_statistic() -> Statistic {
    Statistic(StatisticSpec::default())
}

/// The names a statistic may be given by alone: those whose parameters all have defaults.
pub fn names_alone() -> Vec<&'static str> {
    let empty = Value::Object(Map::new());
    StatisticSpec::NAMES
        .iter()
        .copied()
        .filter(|n| StatisticSpec::deserialize_params(n, &empty).is_some_and(|r| r.is_ok()))
        .collect()
}

impl Decode for Statistic {
    fn decode(v: &Value, at: &str, errs: &mut Errors) -> Option<Self> {
        let members = boxed_members("statistic").expect("a statistic's members");
        with_members_unboxed(v, at, errs, members, statistic_members)
    }
}

/// A statistic's name or object, the object's members unboxed where R boxed them.
fn statistic_members(v: &Value, at: &str, errs: &mut Errors) -> Option<Statistic> {
    let names: Vec<String> = StatisticSpec::NAMES.iter().map(|s| s.to_string()).collect();
    let (name, params) = match v {
        Value::String(name) if !names.contains(name) => {
            errs.push(
                at,
                format!("unknown statistic {v}; the catalogue has {} (GET /v1/catalog)", one_of(&names)),
            );
            return None;
        }
        Value::String(name) => (name.clone(), Map::new()),
        Value::Object(_) => {
            let mut obj = checked_tag(v, at, "name", &names, errs)?.clone();
            let name = obj
                .shift_remove("name")
                .and_then(|n| n.as_str().map(String::from))
                .expect("checked");
            for missing in required_parameters(&name).into_iter().filter(|p| !obj.contains_key(p)) {
                errs.push(format!("{at}/{missing}"), "is required");
            }
            (name, obj)
        }
        other => {
            errs.push(
                at,
                format!(
                    "must be a statistic's name or an object with \"name\" and its parameters; got {}",
                    describe(other)
                ),
            );
            return None;
        }
    };
    let read = |p: &Value, t: &mut serde_path_to_error::Track| {
        StatisticSpec::deserialize_params(&name, serde_path_to_error::Deserializer::new(p, t)).expect("a known name")
    };
    if v.is_string() {
        return match read(&Value::Object(params), &mut serde_path_to_error::Track::new()) {
            Ok(spec) => Some(Statistic(spec)),
            Err(_) => {
                errs.push(at, format!("the statistic \"{name}\" needs parameters: send an object such as {{\"name\": \"{name}\", ...}} (GET /v1/catalog lists them)"));
                None
            }
        };
    }
    every_field(&params, at, errs, read).map(Statistic)
}

/// The parameters a statistic requires, from its schema.
fn required_parameters(name: &str) -> Vec<String> {
    static REQUIRED: std::sync::OnceLock<Vec<(String, Vec<String>)>> = std::sync::OnceLock::new();
    let all = REQUIRED.get_or_init(|| {
        crate::api::schema::variants::<StatisticSpec>("name")
            .iter()
            .map(|v| {
                let required = v["required"].as_array().into_iter().flatten().filter_map(Value::as_str);
                let name = v["properties"]["name"]["enum"][0].as_str().unwrap_or("").to_string();
                (name, required.filter(|r| *r != "name").map(String::from).collect())
            })
            .collect()
    });
    all.iter().find(|(n, _)| n == name).map(|(_, r)| r.clone()).unwrap_or_default()
}

impl PartialSchema for Statistic {
    fn schema() -> RefOr<Schema> {
        OneOfBuilder::new()
            .item(
                ObjectBuilder::new()
                    .schema_type(Type::String)
                    .enum_values(Some(names_alone()))
                    .title(Some("Name"))
                    .description(Some("A statistic by name alone, its parameters at their defaults.")),
            )
            .item(RefOr::Ref(Ref::from_schema_name("StatisticSpec")))
            .description(Some(
                "A statistic: a name (for one without required parameters), or an object with the name and its parameters. `GET /v1/catalog` lists them all.",
            ))
            .into()
    }
}

impl ToSchema for Statistic {
    fn schemas(schemas: &mut Vec<(String, RefOr<Schema>)>) {
        schemas.push(("StatisticSpec".into(), StatisticSpec::schema()));
        StatisticSpec::schemas(schemas);
    }
}

crate::wire_enum! {
    /// A way of choosing the number of resamples.
    pub enum ResampleMode {
        /// Grow until every endpoint's Monte Carlo error is below `target_mc_error` times the standard error, or the time limit or the resample limit is reached.
        Auto = "auto",
        /// Enumerate every distinct resample with its multinomial weight (`iid` only; only where their count is within `limits.max_resamples`, about 10 observations).
        Exact = "exact",
    }
}

/// `resamples`: a number (2 or more), `"auto"` or `"exact"`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum Resamples {
    Count(ResampleCount),
    Mode(ResampleMode),
}

/// 2000 resamples, when the request names no number.
pub fn default_resamples() -> Resamples {
    Resamples::Count(ResampleCount::new(crate::engine::plan::DEFAULT_RESAMPLES).expect("in range"))
}

impl Decode for Resamples {
    fn decode(v: &Value, at: &str, errs: &mut Errors) -> Option<Self> {
        match v {
            Value::Number(_) => with_serde(v, at, errs).map(Resamples::Count),
            _ => match serde_json::from_value::<ResampleMode>(v.clone()) {
                Ok(mode) => Some(Resamples::Mode(mode)),
                Err(_) => {
                    errs.push(
                        at,
                        format!(
                            "must be a number of resamples (2 or more), \"auto\" or \"exact\"; got {}",
                            describe(v)
                        ),
                    );
                    None
                }
            },
        }
    }
}

impl PartialSchema for Resamples {
    fn schema() -> RefOr<Schema> {
        OneOfBuilder::new()
            .item(RefOr::Ref(Ref::from_schema_name("ResampleCount")))
            .item(RefOr::Ref(Ref::from_schema_name("ResampleMode")))
            .description(Some(
                "How many resamples to draw: a number from 2 to the server's `limits.max_resamples`, `\"auto\"` or `\"exact\"`.",
            ))
            .into()
    }
}

impl ToSchema for Resamples {
    fn schemas(schemas: &mut Vec<(String, RefOr<Schema>)>) {
        schemas.push(("ResampleCount".into(), ResampleCount::schema()));
        schemas.push(("ResampleMode".into(), ResampleMode::schema()));
    }
}

/// The most characters of a unit: what fits under an axis.
pub const MAX_UNIT_CHARS: usize = 16;

/// A unit shown on a picture's value axis ("ms", "req/s", "€"): 1 to [`MAX_UNIT_CHARS`]
/// characters, no control characters. It is escaped when drawn.
#[derive(Debug, Clone, PartialEq)]
pub struct Unit(pub String);

impl Decode for Unit {
    fn decode(v: &Value, at: &str, errs: &mut Errors) -> Option<Self> {
        let Value::String(s) = v else {
            errs.push(at, format!("must be a string such as \"ms\"; got {}", describe(v)));
            return None;
        };
        let chars = s.chars().count();
        if chars == 0 || chars > MAX_UNIT_CHARS {
            errs.push(at, format!("must be 1 to {MAX_UNIT_CHARS} characters, such as \"ms\"; got {chars}"));
            return None;
        }
        if s.chars().any(char::is_control) {
            errs.push(
                at,
                "must not contain control characters (line breaks, tabs); write the unit on one line",
            );
            return None;
        }
        Some(Unit(s.clone()))
    }
}

impl utoipa::PartialSchema for Unit {
    fn schema() -> RefOr<Schema> {
        ObjectBuilder::new()
            .schema_type(Type::String)
            .min_length(Some(1))
            .max_length(Some(MAX_UNIT_CHARS))
            .pattern(Some("^[^\\u0000-\\u001F\\u007F-\\u009F]*$"))
            .description(Some(format!(
                "A unit shown on a picture's value axis (\"ms\", \"req/s\"): 1 to {MAX_UNIT_CHARS} characters, no control characters."
            )))
            .examples(["ms"])
            .into()
    }
}

impl utoipa::ToSchema for Unit {
    fn name() -> Cow<'static, str> {
        Cow::Borrowed("Unit")
    }
}

crate::wire_enum! {
    /// The kind of picture drawn when the response is `image/svg+xml`.
    pub enum PictureFormat default Full {
        /// Two panels: the replicate histogram with the estimate and every interval marked, and
        /// the cumulative curve with the percentile endpoints read off it.
        Full = "full",
        /// A sparkline-sized tile (240 × 48) for a dashboard: the estimate as a dot and the
        /// intervals as nested bars on one axis.
        Band = "band",
    }
}

crate::decode_with_serde!(PictureFormat);

crate::wire_object! {
    /// How a picture of the result looks, when the response is `image/svg+xml` (`Accept`).
    /// Presentation only: allowed beside a token, not recorded by one, and ignored in a JSON
    /// response (and in a batch).
    pub struct Picture {
        optional
        /// The unit of the values, written on the picture's value axis.
        unit: Unit,
        default
        format: PictureFormat = PictureFormat::default,
    }
}
