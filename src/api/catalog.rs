//! `GET /v1/catalog`: every statistic, scheme and interval method with its parameters, the
//! resample modes, the diagnostic codes, and this server's limits.
//!
//! Nothing here is written twice: statistics and schemes are read from the schemas their spec
//! types generate (the same the OpenAPI document holds), their facts from the engine's registry,
//! and the lists from the engine's enums.

use std::collections::BTreeMap;
use std::sync::OnceLock;

use serde::Serialize;
use serde_json::Value;
use utoipa::ToSchema;

use super::fields::ResampleMode;
use super::schema::{components, variants};
use crate::engine::diagnostics::WarningCode;
use crate::engine::interval::Method;
use crate::engine::job::Include;
use crate::engine::kernel::SeSource;
use crate::engine::scheme::SchemeSpec;
use crate::engine::statistic::{Shape, StatisticSpec};

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct Parameter {
    pub name: String,
    /// "number", "integer", "boolean", "string" or "column" (a column name of the data).
    #[serde(rename = "type")]
    pub kind: String,
    pub required: bool,
    /// The default, where there is one.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(value_type = Option<Object>)]
    pub default: Option<Value>,
    /// The values a string parameter takes, where they are few.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(nullable = false)]
    pub values: Option<Vec<String>>,
    pub description: String,
}

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct StatisticEntry {
    pub name: String,
    /// "one_column" (an array or values/counts) or "columns" (named columns).
    pub data: String,
    pub parameters: Vec<Parameter>,
    /// How the studentized interval gets its per-resample standard error.
    pub studentized_standard_error: SeSource,
    pub description: String,
}

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct SchemeEntry {
    pub kind: String,
    pub description: String,
}

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct MethodEntry {
    pub name: Method,
    pub description: &'static str,
    pub source: &'static str,
}

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct LimitsEntry {
    pub max_body_bytes: usize,
    pub max_rows: u64,
    pub max_resamples: u64,
    /// Most row-draws (rows × resamples × the statistic's relative cost, or a shortcut's own cost
    /// per resample) per job, or per batch.
    pub work_limit: f64,
    pub default_time_limit_ms: u64,
    pub max_time_limit_ms: u64,
    pub max_batch_jobs: usize,
    pub threads: usize,
    pub queue: usize,
    pub max_seed: u64,
    /// Data values must not exceed this magnitude.
    pub max_magnitude: f64,
}

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct CatalogResponse {
    pub version: &'static str,
    pub statistics: Vec<StatisticEntry>,
    pub schemes: Vec<SchemeEntry>,
    pub methods: Vec<MethodEntry>,
    /// Accepted values of `resamples` besides a whole number.
    pub resample_modes: Vec<ResampleMode>,
    pub include: Vec<Include>,
    /// Stable codes of `diagnostics.warnings`.
    pub warning_codes: Vec<WarningCode>,
    pub limits: LimitsEntry,
}

/// The schema a property stands for, through a `$ref` or a one-item `oneOf` (how a default is
/// attached to a reference), with the name of the component it refers to.
fn resolve<'a>(components: &'a BTreeMap<String, Value>, property: &'a Value) -> (&'a Value, Option<&'a str>) {
    let inner = match property["oneOf"].as_array() {
        Some(items) if items.len() == 1 => &items[0],
        _ => property,
    };
    match inner.get("$ref").and_then(Value::as_str).and_then(|r| r.rsplit('/').next()) {
        Some(name) => (components.get(name).unwrap_or(inner), Some(name)),
        None => (inner, None),
    }
}

fn parameter(components: &BTreeMap<String, Value>, name: &str, property: &Value, required: bool) -> Parameter {
    let (schema, component) = resolve(components, property);
    let values = schema["enum"]
        .as_array()
        .map(|e| e.iter().filter_map(|x| x.as_str().map(String::from)).collect());
    let kind = match (component, schema["type"].as_str()) {
        (Some("ColumnName"), _) => "column",
        (_, Some(t)) => t,
        _ => "string",
    };
    // The property's own description, else that of the one-item wrapper's reference, else the
    // component's.
    let wrapped = property["oneOf"].get(0).and_then(|i| i["description"].as_str());
    let description = property["description"]
        .as_str()
        .or(wrapped)
        .or(schema["description"].as_str())
        .unwrap_or("");
    Parameter {
        name: name.to_string(),
        kind: kind.to_string(),
        required,
        default: property.get("default").cloned(),
        values,
        description: description.to_string(),
    }
}

fn statistic(components: &BTreeMap<String, Value>, variant: &Value) -> StatisticEntry {
    let name = variant["properties"]["name"]["enum"][0].as_str().expect("a statistic names itself");
    let (shape, analytic) = StatisticSpec::facts_of(name).expect("a registered statistic");
    let required: Vec<&str> = variant["required"]
        .as_array()
        .map(|r| r.iter().filter_map(Value::as_str).collect())
        .unwrap_or_default();
    let parameters = variant["properties"]
        .as_object()
        .map(|p| {
            p.iter()
                .filter(|(k, _)| *k != "name")
                .map(|(k, v)| parameter(components, k, v, required.contains(&k.as_str())))
                .collect()
        })
        .unwrap_or_default();
    StatisticEntry {
        name: name.to_string(),
        data: match shape {
            Shape::Column => "one_column",
            Shape::Table => "columns",
        }
        .to_string(),
        parameters,
        studentized_standard_error: if analytic { SeSource::Analytic } else { SeSource::Nested },
        description: variant["description"].as_str().unwrap_or("").to_string(),
    }
}

/// The parts of the catalogue that do not depend on the server's settings, read once from the
/// schemas of the statistic and scheme types.
fn fixed() -> &'static (Vec<StatisticEntry>, Vec<SchemeEntry>) {
    static FIXED: OnceLock<(Vec<StatisticEntry>, Vec<SchemeEntry>)> = OnceLock::new();
    FIXED.get_or_init(|| {
        let components = components::<StatisticSpec>();
        let statistics = variants::<StatisticSpec>("name")
            .iter()
            .map(|v| statistic(&components, v))
            .collect();
        let schemes = variants::<SchemeSpec>("kind")
            .iter()
            .map(|v| SchemeEntry {
                kind: v["properties"]["kind"]["enum"][0]
                    .as_str()
                    .expect("a scheme names itself")
                    .to_string(),
                description: v["description"].as_str().unwrap_or("").to_string(),
            })
            .collect();
        (statistics, schemes)
    })
}

pub fn catalog(limits: LimitsEntry) -> CatalogResponse {
    let (statistics, schemes) = fixed().clone();
    CatalogResponse {
        version: env!("CARGO_PKG_VERSION"),
        statistics,
        schemes,
        methods: Method::ALL
            .iter()
            .map(|m| MethodEntry {
                name: *m,
                description: m.doc(),
                source: m.source(),
            })
            .collect(),
        resample_modes: ResampleMode::ALL.to_vec(),
        include: Include::ALL.to_vec(),
        warning_codes: WarningCode::ALL.to_vec(),
        limits,
    }
}
