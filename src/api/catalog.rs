//! `GET /v1/catalog`: every statistic, scheme and interval method with its parameters, the
//! resample modes, the diagnostic codes, and this server's limits.

use serde::Serialize;
use utoipa::ToSchema;

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct Parameter {
    pub name: &'static str,
    /// "number", "integer", "string" or "column" (a column name of the data).
    #[serde(rename = "type")]
    pub kind: &'static str,
    pub required: bool,
    /// The default, as JSON, where there is one.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[schema(value_type = Option<Object>)]
    pub default: Option<serde_json::Value>,
    pub description: &'static str,
}

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct StatisticEntry {
    pub name: &'static str,
    /// "one_column" (an array or values/counts) or "columns" (named columns).
    pub data: &'static str,
    pub parameters: Vec<Parameter>,
    /// How the studentized interval gets its per-resample standard error: "analytic" or "nested".
    pub studentized_standard_error: &'static str,
    pub description: &'static str,
}

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct SchemeEntry {
    pub kind: &'static str,
    /// False for kinds of the contract that this server version does not draw yet.
    pub available: bool,
    pub description: &'static str,
}

#[derive(Debug, Clone, Serialize, ToSchema)]
pub struct MethodEntry {
    pub name: &'static str,
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
    pub resample_modes: Vec<&'static str>,
    pub include: Vec<&'static str>,
    /// Stable codes of `diagnostics.warnings`.
    pub warning_codes: Vec<&'static str>,
    pub limits: LimitsEntry,
}

fn p(name: &'static str, kind: &'static str, required: bool, default: Option<serde_json::Value>, description: &'static str) -> Parameter {
    Parameter {
        name,
        kind,
        required,
        default,
        description,
    }
}

fn stat(name: &'static str, data: &'static str, parameters: Vec<Parameter>, analytic: bool, description: &'static str) -> StatisticEntry {
    StatisticEntry {
        name,
        data,
        parameters,
        studentized_standard_error: if analytic { "analytic" } else { "nested" },
        description,
    }
}

pub const WARNING_CODES: &[&str] = &[
    "small_sample",
    "constant_data",
    "extreme_quantile",
    "few_distinct_replicates",
    "large_bias",
    "skewed_replicates",
    "undefined_replicates",
    "extreme_bca_adjustment",
    "bca_without_acceleration",
    "too_few_resamples",
    "serial_correlation",
    "studentized_degenerate",
    "partial_result",
    "auto_resample_limit",
    "auto_time_limit",
    "inexact_nested_studentized",
];

pub fn catalog(limits: LimitsEntry) -> CatalogResponse {
    use serde_json::json;
    let one = "one_column";
    let cols = "columns";
    CatalogResponse {
        version: env!("CARGO_PKG_VERSION"),
        statistics: vec![
            stat("mean", one, vec![], true, "arithmetic mean"),
            stat("median", one, vec![], false, "median (Hyndman–Fan definition 7 at p = 0.5)"),
            stat(
                "quantile",
                one,
                vec![p("p", "number", true, None, "probability in [0, 1]")],
                false,
                "sample quantile, Hyndman–Fan definition 7 (numpy's linear)",
            ),
            stat(
                "trimmed_mean",
                one,
                vec![p("trim", "number", false, Some(json!(0.1)), "share cut from each end, in [0, 0.5)")],
                false,
                "mean after cutting ⌊trim·n⌋ observations from each end",
            ),
            stat(
                "variance",
                one,
                vec![p("ddof", "integer", false, Some(json!(0)), "0: divide by n (plug-in); 1: by n − 1")],
                true,
                "variance",
            ),
            stat(
                "std_dev",
                one,
                vec![p("ddof", "integer", false, Some(json!(0)), "0: divide by n (plug-in); 1: by n − 1")],
                true,
                "standard deviation",
            ),
            stat(
                "mad",
                one,
                vec![p("scale", "string", false, Some(json!("raw")), "\"raw\" or \"normal\" (× 1.4826)")],
                false,
                "median absolute deviation from the median",
            ),
            stat("iqr", one, vec![], false, "interquartile range Q(0.75) − Q(0.25)"),
            stat("geometric_mean", one, vec![], true, "exp of the mean log; positive data"),
            stat(
                "coefficient_of_variation",
                one,
                vec![],
                false,
                "plug-in standard deviation over the mean",
            ),
            stat("proportion", one, vec![], true, "share of values equal to 1 in data of 0s and 1s"),
            stat(
                "ratio",
                cols,
                vec![
                    p("numerator", "column", true, None, "column summed on top"),
                    p("denominator", "column", true, None, "column summed below"),
                ],
                true,
                "ratio of column sums",
            ),
            stat(
                "correlation",
                cols,
                vec![
                    p("x", "column", true, None, "first column"),
                    p("y", "column", true, None, "second column"),
                    p("kind", "string", false, Some(json!("pearson")), "\"pearson\" or \"spearman\""),
                ],
                false,
                "correlation of two columns",
            ),
            stat(
                "slope",
                cols,
                vec![p("x", "column", true, None, "regressor"), p("y", "column", true, None, "response")],
                true,
                "least-squares slope of y on x",
            ),
        ],
        schemes: super::request::SCHEMES
            .iter()
            .map(|(kind, available)| SchemeEntry {
                kind,
                available: *available,
                description: match *kind {
                    "iid" => "n rows drawn with replacement",
                    "bayesian" => "Dirichlet(1, …, 1) weights on the rows (Rubin 1981)",
                    "stratified" => "rows resampled within each stratum, sizes kept",
                    "cluster" => "whole clusters resampled with replacement",
                    "moving_block" => "overlapping blocks of consecutive rows",
                    "circular_block" => "blocks that wrap around the end of the series",
                    _ => "blocks of geometric length (Politis & Romano 1994)",
                },
            })
            .collect(),
        methods: vec![
            MethodEntry {
                name: "percentile",
                description: "replicate quantiles at α/2 and 1 − α/2",
                source: "Efron (1981); Davison & Hinkley (1997) §5.3.1",
            },
            MethodEntry {
                name: "basic",
                description: "2θ̂ minus the replicate quantiles",
                source: "Davison & Hinkley (1997) §5.2, eq. 5.6",
            },
            MethodEntry {
                name: "normal",
                description: "θ̂ − bias ± z·standard error",
                source: "Davison & Hinkley (1997) §5.2, eq. 5.5",
            },
            MethodEntry {
                name: "bca",
                description: "bias-corrected and accelerated percentile interval",
                source: "Efron (1987), JASA 82(397); Efron & Tibshirani (1993) ch. 14",
            },
            MethodEntry {
                name: "studentized",
                description: "bootstrap-t with analytic or nested standard errors",
                source: "Davison & Hinkley (1997) §5.2.1; Efron & Tibshirani (1993) ch. 12",
            },
        ],
        resample_modes: vec!["auto", "exact"],
        include: vec!["histogram", "cdf", "replicates"],
        warning_codes: WARNING_CODES.to_vec(),
        limits,
    }
}
