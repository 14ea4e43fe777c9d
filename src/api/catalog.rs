//! `GET /v1/catalog`: every statistic, scheme and interval method with its parameters, the
//! resample modes, the diagnostic codes, and this server's limits.
//!
//! Nothing here is written twice: statistics and schemes are read from the OpenAPI document's
//! schemas (which their spec types generate), their facts from the engine's registry, and the
//! lists from the engine's enums.

use std::sync::OnceLock;

use serde::Serialize;
use serde_json::Value;
use utoipa::ToSchema;

use super::fields::ResampleMode;
use crate::engine::diagnostics::WarningCode;
use crate::engine::interval::Method;
use crate::engine::job::Include;
use crate::engine::kernel::SeSource;
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
    /// Most row-draws (rows × resamples × the statistic's relative cost) per job, or per batch.
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

/// The variants of a tagged union of the document, as (tag value, variant object).
fn variants<'a>(doc: &'a Value, schema: &str, tag: &str) -> Vec<(String, &'a Value)> {
    doc["components"]["schemas"][schema]["oneOf"]
        .as_array()
        .unwrap_or_else(|| panic!("{schema} is a oneOf in the document"))
        .iter()
        .map(|v| {
            (
                v["properties"][tag]["enum"][0]
                    .as_str()
                    .unwrap_or_else(|| panic!("{schema} variants carry {tag}"))
                    .to_string(),
                v,
            )
        })
        .collect()
}

/// Follow a local `$ref` of the document.
fn resolve<'a>(doc: &'a Value, v: &'a Value) -> (&'a Value, Option<&'a str>) {
    match v.get("$ref").and_then(Value::as_str) {
        Some(r) => (doc.pointer(r.trim_start_matches('#')).unwrap_or(v), r.rsplit('/').next()),
        None => (v, None),
    }
}

fn parameter(doc: &Value, name: &str, property: &Value, required: bool) -> Parameter {
    let (schema, component) = resolve(doc, property);
    let values = schema["enum"]
        .as_array()
        .map(|e| e.iter().filter_map(|x| x.as_str().map(String::from)).collect());
    let kind = match (component, schema["type"].as_str()) {
        (Some("ColumnName"), _) => "column",
        (_, Some(t)) => t,
        _ => "string",
    };
    let description = property["description"].as_str().or(schema["description"].as_str()).unwrap_or("");
    Parameter {
        name: name.to_string(),
        kind: kind.to_string(),
        required,
        default: property.get("default").cloned(),
        values,
        description: description.to_string(),
    }
}

fn statistic(doc: &Value, name: &str, variant: &Value) -> StatisticEntry {
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
                .map(|(k, v)| parameter(doc, k, v, required.contains(&k.as_str())))
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

/// The parts of the catalogue that do not depend on the server's settings, read once.
fn fixed() -> &'static (Vec<StatisticEntry>, Vec<SchemeEntry>) {
    static FIXED: OnceLock<(Vec<StatisticEntry>, Vec<SchemeEntry>)> = OnceLock::new();
    FIXED.get_or_init(|| {
        let doc: Value = serde_json::from_str(&super::openapi::document_json()).expect("the document is JSON");
        let statistics = variants(&doc, "StatisticSpec", "name")
            .into_iter()
            .map(|(n, v)| statistic(&doc, &n, v))
            .collect();
        let schemes = variants(&doc, "SchemeSpec", "kind")
            .into_iter()
            .map(|(kind, v)| SchemeEntry {
                kind,
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
