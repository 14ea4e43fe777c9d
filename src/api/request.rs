//! Parsing and validating requests from JSON, reporting every invalid field at once.
//!
//! Requests are read from a `serde_json::Value` by hand rather than derived, because a derived
//! deserializer stops at the first error, while a caller fixing a request wants all of them,
//! each with a JSON Pointer. Unknown fields are refused so that a typo (`"level"` for
//! `"levels"`) never silently changes a result.

use serde_json::{Map, Value};

use super::problem::{escape_token, FieldError};
use crate::engine::data::Sample;
use crate::engine::interval::Method;
use crate::engine::montecarlo::DEFAULT_TARGET_MC_ERROR;
use crate::engine::run::{Include, OnTimeLimit, Resamples, DEFAULT_INNER_RESAMPLES};
use crate::engine::scheme::SchemeSpec;
use crate::engine::statistic::StatisticSpec;

/// The largest magnitude accepted in data. A variance of such data is at most about 1e150, so
/// the squared deviations of its replicates, summed over a million of them, stay finite.
pub const MAX_MAGNITUDE: f64 = 1e75;

/// The largest seed every JSON client carries exactly: 2^53 − 1.
pub const MAX_SEED: u64 = (1 << 53) - 1;

/// Server limits that validation enforces.
#[derive(Debug, Clone)]
pub struct Limits {
    pub max_rows: u64,
    pub max_resamples: u64,
    pub default_time_limit_ms: u64,
    pub max_time_limit_ms: u64,
}

/// The parameters of an interval job: what a token records.
#[derive(Debug, Clone, PartialEq)]
pub struct IntervalParams {
    pub statistic: StatisticSpec,
    pub resamples: Resamples,
    pub seed: Option<u64>,
    pub levels: Vec<f64>,
    pub methods: Vec<Method>,
    pub scheme: SchemeSpec,
    pub include: Include,
    pub inner_resamples: usize,
}

/// A validated `POST /v1/interval` body.
#[derive(Debug, Clone)]
pub struct IntervalRequest {
    pub sample: Sample,
    /// The parameters, or `None` when a token stands in for them.
    pub params: Option<IntervalParams>,
    pub token: Option<String>,
    pub time_limit_ms: u64,
    pub on_time_limit: OnTimeLimit,
}

/// The catalogue of statistics with their parameters (name, parameters).
pub const STATISTICS: &[(&str, &[&str])] = &[
    ("mean", &[]),
    ("median", &[]),
    ("quantile", &["p"]),
    ("trimmed_mean", &["trim"]),
    ("variance", &["ddof"]),
    ("std_dev", &["ddof"]),
    ("mad", &["scale"]),
    ("iqr", &[]),
    ("geometric_mean", &[]),
    ("coefficient_of_variation", &[]),
    ("proportion", &[]),
    ("ratio", &["numerator", "denominator"]),
    ("correlation", &["x", "y", "kind"]),
    ("slope", &["x", "y"]),
];

/// Scheme kinds of the contract, and whether this server draws them yet.
pub const SCHEMES: &[(&str, bool)] = &[
    ("iid", true),
    ("bayesian", true),
    ("stratified", false),
    ("cluster", false),
    ("moving_block", false),
    ("circular_block", false),
    ("stationary_block", false),
];

const INTERVAL_FIELDS: &[&str] = &[
    "data",
    "statistic",
    "resamples",
    "target_mc_error",
    "seed",
    "levels",
    "methods",
    "scheme",
    "time_limit_ms",
    "on_time_limit",
    "include",
    "inner_resamples",
    "token",
];

/// Fields a token stands in for.
const TOKEN_REPLACES: &[&str] = &[
    "statistic",
    "resamples",
    "target_mc_error",
    "seed",
    "levels",
    "methods",
    "scheme",
    "include",
    "inner_resamples",
];

/// Collects field errors while reading a request.
#[derive(Default)]
pub struct Errors(pub Vec<FieldError>);

impl Errors {
    pub fn push(&mut self, pointer: impl Into<String>, message: impl Into<String>) {
        self.0.push(FieldError::new(pointer, message));
    }
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }
}

/// A short description of a JSON value's type, for error messages (never its content, which
/// could be the caller's data, except for short strings that explain the mistake, like "NaN").
pub fn describe(v: &Value) -> String {
    match v {
        Value::Null => "null".into(),
        Value::Bool(_) => "a boolean".into(),
        Value::Number(_) => "a number".into(),
        Value::String(s) if s.len() <= 12 => format!("the string {s:?}"),
        Value::String(_) => "a string".into(),
        Value::Array(_) => "an array".into(),
        Value::Object(_) => "an object".into(),
    }
}

fn number_message(v: &Value) -> String {
    match v {
        Value::String(s) if matches!(s.to_ascii_lowercase().trim_start_matches(['+', '-']), "nan" | "infinity" | "inf") => {
            format!(
                "must be a finite number; got {}: NaN and infinite values are not data (drop or impute them before sending)",
                describe(v)
            )
        }
        Value::String(_) => format!("must be a JSON number, not {} (send numbers unquoted)", describe(v)),
        _ => format!("must be a number; got {}", describe(v)),
    }
}

/// Read an array of finite numbers; every bad element is reported.
fn number_array(v: &Value, ptr: &str, errs: &mut Errors) -> Option<Vec<f64>> {
    let Value::Array(items) = v else {
        errs.push(ptr, format!("must be an array of numbers; got {}", describe(v)));
        return None;
    };
    let mut out = Vec::with_capacity(items.len());
    let mut ok = true;
    let mut reported = 0;
    for (i, item) in items.iter().enumerate() {
        match item.as_f64() {
            Some(x) if x.is_finite() && x.abs() <= MAX_MAGNITUDE => out.push(x),
            Some(x) if x.is_finite() => {
                ok = false;
                if reported < 100 {
                    errs.push(
                        format!("{ptr}/{i}"),
                        format!("has magnitude above {MAX_MAGNITUDE:e}, where sums of squares overflow double precision; rescale the data (other units)"),
                    );
                }
                reported += 1;
            }
            _ => {
                ok = false;
                // Report every bad element, up to a bound that keeps the problem document small.
                if reported < 100 {
                    errs.push(format!("{ptr}/{i}"), number_message(item));
                }
                reported += 1;
            }
        }
    }
    if reported > 100 {
        errs.push(
            ptr,
            format!("{reported} elements in all are not finite numbers; the first 100 are listed"),
        );
    }
    ok.then_some(out)
}

fn unknown_fields(obj: &Map<String, Value>, allowed: &[&str], ptr: &str, errs: &mut Errors) {
    for k in obj.keys() {
        if !allowed.contains(&k.as_str()) {
            errs.push(
                format!("{ptr}/{}", escape_token(k)),
                format!(
                    "unknown field; the fields here are {}",
                    allowed.iter().map(|a| format!("\"{a}\"")).collect::<Vec<_>>().join(", ")
                ),
            );
        }
    }
}

/// Read `data` in any of its three forms.
pub fn parse_data(v: Option<&Value>, ptr: &str, limits: &Limits, errs: &mut Errors) -> Option<Sample> {
    let Some(v) = v else {
        errs.push(
            ptr,
            "is required: an array of numbers, {\"values\": [...], \"counts\": [...]}, or {\"columns\": {\"x\": [...], ...}}",
        );
        return None;
    };
    let sample = match v {
        Value::Array(_) => Sample::Column(number_array(v, ptr, errs)?),
        Value::Object(obj) if obj.contains_key("columns") => {
            unknown_fields(obj, &["columns"], ptr, errs);
            let cptr = format!("{ptr}/columns");
            let Some(Value::Object(cols)) = obj.get("columns") else {
                errs.push(&cptr, "must be an object mapping column names to arrays of numbers");
                return None;
            };
            if cols.is_empty() {
                errs.push(&cptr, "needs at least one column");
                return None;
            }
            let mut names = Vec::new();
            let mut columns = Vec::new();
            let mut ok = true;
            for (name, col) in cols {
                match number_array(col, &format!("{cptr}/{}", escape_token(name)), errs) {
                    Some(c) => {
                        names.push(name.clone());
                        columns.push(c);
                    }
                    None => ok = false,
                }
            }
            if !ok {
                return None;
            }
            let len = columns[0].len();
            for (name, c) in names.iter().zip(&columns) {
                if c.len() != len {
                    errs.push(
                        format!("{cptr}/{}", escape_token(name)),
                        format!(
                            "has {} rows but column \"{}\" has {len}; columns are rows read together and must be the same length",
                            c.len(),
                            names[0]
                        ),
                    );
                    ok = false;
                }
            }
            if !ok {
                return None;
            }
            Sample::Columns { names, columns }
        }
        Value::Object(obj) if obj.contains_key("values") || obj.contains_key("counts") => {
            unknown_fields(obj, &["values", "counts"], ptr, errs);
            let values = match obj.get("values") {
                Some(x) => number_array(x, &format!("{ptr}/values"), errs),
                None => {
                    errs.push(format!("{ptr}/values"), "is required with counts: the distinct values observed");
                    None
                }
            };
            let counts = match obj.get("counts") {
                Some(Value::Array(items)) => {
                    let mut out = Vec::with_capacity(items.len());
                    let mut ok = true;
                    for (i, c) in items.iter().enumerate() {
                        match c.as_u64() {
                            Some(k) => out.push(k),
                            None => {
                                ok = false;
                                errs.push(
                                    format!("{ptr}/counts/{i}"),
                                    format!("must be a whole number of observations (0 or more); got {}", describe(c)),
                                );
                            }
                        }
                    }
                    ok.then_some(out)
                }
                Some(other) => {
                    errs.push(
                        format!("{ptr}/counts"),
                        format!("must be an array of whole numbers; got {}", describe(other)),
                    );
                    None
                }
                None => {
                    errs.push(
                        format!("{ptr}/counts"),
                        "is required with values: how often each value was observed",
                    );
                    None
                }
            };
            let (values, counts) = (values?, counts?);
            if values.len() != counts.len() {
                errs.push(
                    format!("{ptr}/counts"),
                    format!(
                        "has {} entries but values has {}; give one count per value",
                        counts.len(),
                        values.len()
                    ),
                );
                return None;
            }
            let total = counts.iter().try_fold(0u64, |a, c| a.checked_add(*c));
            if total.is_none_or(|t| t > limits.max_rows.saturating_mul(1_000_000)) {
                errs.push(format!("{ptr}/counts"), "the counts add up to more than this server can resample");
                return None;
            }
            Sample::Aggregated { values, counts }
        }
        Value::Object(_) => {
            errs.push(
                ptr,
                "an object here must be {\"values\": [...], \"counts\": [...]} or {\"columns\": {...}}",
            );
            return None;
        }
        other => {
            errs.push(ptr, format!("must be an array of numbers or an object; got {}", describe(other)));
            return None;
        }
    };
    if sample.n() < 2 {
        errs.push(ptr, format!("has {} observation(s); a bootstrap needs at least 2", sample.n()));
        return None;
    }
    if sample.units() as u64 > limits.max_rows {
        errs.push(ptr, format!("has {} rows, above this server's limit of {}; aggregate repeated values as {{\"values\": [...], \"counts\": [...]}} or sample the rows", sample.units(), limits.max_rows));
        return None;
    }
    Some(sample)
}

fn string_param(obj: &Map<String, Value>, key: &str, ptr: &str, errs: &mut Errors) -> Option<String> {
    match obj.get(key) {
        Some(Value::String(s)) if !s.is_empty() => Some(s.clone()),
        Some(other) => {
            errs.push(
                format!("{ptr}/{key}"),
                format!("must be a column name (a non-empty string); got {}", describe(other)),
            );
            None
        }
        None => {
            errs.push(format!("{ptr}/{key}"), "is required: the name of a column in data.columns");
            None
        }
    }
}

/// Read `statistic`: a name, or an object with the name and its parameters.
pub fn parse_statistic(v: Option<&Value>, ptr: &str, errs: &mut Errors) -> Option<StatisticSpec> {
    let names = || STATISTICS.iter().map(|(n, _)| format!("\"{n}\"")).collect::<Vec<_>>().join(", ");
    let empty = Map::new();
    let (name, obj, name_ptr) = match v {
        None => ("mean".to_string(), &empty, ptr.to_string()),
        Some(Value::String(s)) => (s.clone(), &empty, ptr.to_string()),
        Some(Value::Object(o)) => match o.get("name") {
            Some(Value::String(s)) => (s.clone(), o, format!("{ptr}/name")),
            _ => {
                errs.push(format!("{ptr}/name"), format!("is required: one of {}", names()));
                return None;
            }
        },
        Some(other) => {
            errs.push(
                ptr,
                format!("must be a statistic name or an object with \"name\"; got {}", describe(other)),
            );
            return None;
        }
    };
    let Some((_, params)) = STATISTICS.iter().find(|(n, _)| *n == name) else {
        errs.push(
            name_ptr,
            format!("unknown statistic {name:?}; the catalogue has {} (GET /v1/catalog)", names()),
        );
        return None;
    };
    let mut allowed = vec!["name"];
    allowed.extend_from_slice(params);
    unknown_fields(obj, &allowed, ptr, errs);
    let before = errs.0.len();
    let fraction = |key: &str, lo: f64, hi: f64, hi_open: bool, required: bool, default: f64, errs: &mut Errors| -> f64 {
        match obj.get(key) {
            None if !required => default,
            None => {
                errs.push(
                    format!("{ptr}/{key}"),
                    format!("is required: a number in [{lo}, {hi}{}", if hi_open { ")" } else { "]" }),
                );
                default
            }
            Some(x) => match x.as_f64() {
                Some(f) if f >= lo && (f < hi || (!hi_open && f == hi)) => f,
                _ => {
                    let got = x.as_f64().map_or_else(|| describe(x), |f| f.to_string());
                    errs.push(
                        format!("{ptr}/{key}"),
                        format!("must be a number in [{lo}, {hi}{}; got {got}", if hi_open { ")" } else { "]" }),
                    );
                    default
                }
            },
        }
    };
    let spec = match name.as_str() {
        "mean" => StatisticSpec::Mean,
        "median" => StatisticSpec::Median,
        "quantile" => StatisticSpec::Quantile {
            p: fraction("p", 0.0, 1.0, false, true, 0.5, errs),
        },
        "trimmed_mean" => StatisticSpec::TrimmedMean {
            trim: fraction("trim", 0.0, 0.5, true, false, 0.1, errs),
        },
        "variance" | "std_dev" => {
            let ddof = match obj.get("ddof") {
                None => 0,
                Some(x) => match x.as_u64() {
                    Some(d @ (0 | 1)) => d as u32,
                    _ => {
                        errs.push(
                            format!("{ptr}/ddof"),
                            format!("must be 0 (plug-in, divide by n) or 1 (divide by n − 1); got {}", describe(x)),
                        );
                        0
                    }
                },
            };
            if name == "variance" {
                StatisticSpec::Variance { ddof }
            } else {
                StatisticSpec::StdDev { ddof }
            }
        }
        "mad" => {
            let normal_scale = match obj.get("scale") {
                None => false,
                Some(Value::String(s)) if s == "raw" => false,
                Some(Value::String(s)) if s == "normal" => true,
                Some(x) => {
                    errs.push(
                        format!("{ptr}/scale"),
                        format!(
                            "must be \"raw\" or \"normal\" (× 1.4826, consistent for σ under normality); got {}",
                            describe(x)
                        ),
                    );
                    false
                }
            };
            StatisticSpec::Mad { normal_scale }
        }
        "iqr" => StatisticSpec::Iqr,
        "geometric_mean" => StatisticSpec::GeometricMean,
        "coefficient_of_variation" => StatisticSpec::CoefficientOfVariation,
        "proportion" => StatisticSpec::Proportion,
        "ratio" => {
            let n = string_param(obj, "numerator", ptr, errs);
            let d = string_param(obj, "denominator", ptr, errs);
            StatisticSpec::Ratio {
                numerator: n.unwrap_or_default(),
                denominator: d.unwrap_or_default(),
            }
        }
        "correlation" => {
            let x = string_param(obj, "x", ptr, errs);
            let y = string_param(obj, "y", ptr, errs);
            let spearman = match obj.get("kind") {
                None => false,
                Some(Value::String(s)) if s == "pearson" => false,
                Some(Value::String(s)) if s == "spearman" => true,
                Some(k) => {
                    errs.push(
                        format!("{ptr}/kind"),
                        format!("must be \"pearson\" or \"spearman\"; got {}", describe(k)),
                    );
                    false
                }
            };
            StatisticSpec::Correlation {
                x: x.unwrap_or_default(),
                y: y.unwrap_or_default(),
                spearman,
            }
        }
        "slope" => {
            let x = string_param(obj, "x", ptr, errs);
            let y = string_param(obj, "y", ptr, errs);
            StatisticSpec::Slope {
                x: x.unwrap_or_default(),
                y: y.unwrap_or_default(),
            }
        }
        _ => unreachable!("checked against the catalogue"),
    };
    (errs.0.len() == before).then_some(spec)
}

/// The normalised JSON form of a statistic (recorded in tokens and echoed in responses).
pub fn statistic_json(spec: &StatisticSpec) -> Value {
    let mut o = Map::new();
    o.insert("name".into(), Value::from(spec.name()));
    match spec {
        StatisticSpec::Quantile { p } => {
            o.insert("p".into(), Value::from(*p));
        }
        StatisticSpec::TrimmedMean { trim } => {
            o.insert("trim".into(), Value::from(*trim));
        }
        StatisticSpec::Variance { ddof } | StatisticSpec::StdDev { ddof } => {
            o.insert("ddof".into(), Value::from(*ddof));
        }
        StatisticSpec::Mad { normal_scale } => {
            o.insert("scale".into(), Value::from(if *normal_scale { "normal" } else { "raw" }));
        }
        StatisticSpec::Ratio { numerator, denominator } => {
            o.insert("numerator".into(), Value::from(numerator.clone()));
            o.insert("denominator".into(), Value::from(denominator.clone()));
        }
        StatisticSpec::Correlation { x, y, spearman } => {
            o.insert("x".into(), Value::from(x.clone()));
            o.insert("y".into(), Value::from(y.clone()));
            o.insert("kind".into(), Value::from(if *spearman { "spearman" } else { "pearson" }));
        }
        StatisticSpec::Slope { x, y } => {
            o.insert("x".into(), Value::from(x.clone()));
            o.insert("y".into(), Value::from(y.clone()));
        }
        _ => {}
    }
    Value::Object(o)
}

pub fn parse_scheme(v: Option<&Value>, ptr: &str, errs: &mut Errors) -> Option<SchemeSpec> {
    let kinds = || SCHEMES.iter().map(|(k, _)| format!("\"{k}\"")).collect::<Vec<_>>().join(", ");
    let obj = match v {
        None => return Some(SchemeSpec::Iid),
        Some(Value::Object(o)) => o,
        Some(other) => {
            errs.push(
                ptr,
                format!("must be an object such as {{\"kind\": \"iid\"}}; got {}", describe(other)),
            );
            return None;
        }
    };
    let kind = match obj.get("kind") {
        Some(Value::String(s)) => s.as_str(),
        _ => {
            errs.push(format!("{ptr}/kind"), format!("is required: one of {}", kinds()));
            return None;
        }
    };
    match SCHEMES.iter().find(|(k, _)| *k == kind) {
        None => {
            errs.push(
                format!("{ptr}/kind"),
                format!("unknown scheme {kind:?}; the schemes are {}", kinds()),
            );
            None
        }
        Some((_, false)) => {
            errs.push(format!("{ptr}/kind"), format!("the {kind} scheme is part of the contract but this server version does not draw it yet; use \"iid\" or \"bayesian\" (GET /v1/catalog lists what is available)"));
            None
        }
        Some((k, true)) => {
            unknown_fields(obj, &["kind"], ptr, errs);
            Some(if *k == "iid" { SchemeSpec::Iid } else { SchemeSpec::Bayesian })
        }
    }
}

pub fn scheme_json(s: SchemeSpec) -> Value {
    serde_json::json!({ "kind": s.name() })
}

/// A whole number in [lo, hi]. Integral floats (7.0, as some JSON writers send integers) are
/// accepted; below 2^53 they are exact.
fn positive_integer(v: &Value, ptr: &str, lo: u64, hi: u64, what: &str, errs: &mut Errors) -> Option<u64> {
    let whole = v.as_u64().or_else(|| {
        v.as_f64()
            .filter(|f| f.fract() == 0.0 && *f >= 0.0 && *f < 9007199254740992.0)
            .map(|f| f as u64)
    });
    match whole {
        Some(k) if k >= lo && k <= hi => Some(k),
        _ => {
            let got = match v.as_f64() {
                Some(f) if f.fract() != 0.0 => format!("{f}, which is not whole"),
                Some(f) => format!("{f}"),
                None => describe(v),
            };
            errs.push(ptr, format!("must be {what}, a whole number from {lo} to {hi}; got {got}"));
            None
        }
    }
}

/// Read the interval parameters (everything but data and the time limit).
pub fn parse_params(obj: &Map<String, Value>, limits: &Limits, errs: &mut Errors) -> Option<IntervalParams> {
    let before = errs.0.len();
    let statistic = parse_statistic(obj.get("statistic"), "/statistic", errs);
    let scheme = parse_scheme(obj.get("scheme"), "/scheme", errs);

    let resamples = match obj.get("resamples") {
        None => Some(Resamples::Fixed(2000)),
        Some(Value::String(s)) if s == "auto" => {
            let target = match obj.get("target_mc_error") {
                None => Some(DEFAULT_TARGET_MC_ERROR),
                Some(t) => match t.as_f64() {
                    Some(x) if x > 0.0 && x < 1.0 => Some(x),
                    _ => {
                        errs.push(
                            "/target_mc_error",
                            format!(
                                "must be a number strictly between 0 and 1 (a share of the standard error); got {}",
                                describe(t)
                            ),
                        );
                        None
                    }
                },
            };
            target.map(|target| Resamples::Auto { target })
        }
        Some(Value::String(s)) if s == "exact" => Some(Resamples::Exact),
        Some(v) => positive_integer(
            v,
            "/resamples",
            2,
            limits.max_resamples,
            "the number of resamples (or \"auto\" or \"exact\")",
            errs,
        )
        .map(Resamples::Fixed),
    };
    if obj.contains_key("target_mc_error") && obj.get("resamples").is_none_or(|r| r != "auto") {
        errs.push("/target_mc_error", "only applies with \"resamples\": \"auto\"");
    }
    if resamples == Some(Resamples::Exact) && scheme == Some(SchemeSpec::Bayesian) {
        errs.push("/resamples", "\"exact\" enumerates iid resamples; the Bayesian scheme has continuous weights and cannot be enumerated (give a number of resamples)");
    }

    let seed = match obj.get("seed") {
        None => None,
        Some(v) => positive_integer(v, "/seed", 0, MAX_SEED, "a seed", errs),
    };

    let levels = match obj.get("levels") {
        None => Some(vec![0.95]),
        Some(Value::Array(items)) if !items.is_empty() && items.len() <= 20 => {
            let mut out = Vec::new();
            let mut valid = 0;
            for (i, l) in items.iter().enumerate() {
                match l.as_f64() {
                    Some(x) if x > 0.0 && x < 1.0 => {
                        valid += 1;
                        // A repeated level adds nothing; keep the first.
                        if !out.contains(&x) {
                            out.push(x)
                        }
                    }
                    _ => errs.push(
                        format!("/levels/{i}"),
                        format!(
                            "must be a confidence level strictly between 0 and 1 (0.95, not 95); got {}",
                            l.as_f64().map_or(describe(l), |f| f.to_string())
                        ),
                    ),
                }
            }
            (valid == items.len()).then_some(out)
        }
        Some(v) => {
            errs.push(
                "/levels",
                format!(
                    "must be an array of 1 to 20 confidence levels such as [0.9, 0.95]; got {}",
                    describe(v)
                ),
            );
            None
        }
    };

    let methods = match obj.get("methods") {
        None => Some(vec![Method::Percentile, Method::Bca]),
        Some(Value::Array(items)) if !items.is_empty() => {
            let mut out: Vec<Method> = Vec::new();
            let mut ok = true;
            for (i, m) in items.iter().enumerate() {
                match m.as_str().and_then(Method::from_name) {
                    Some(method) => {
                        if !out.contains(&method) {
                            out.push(method)
                        }
                    }
                    None => {
                        ok = false;
                        errs.push(
                            format!("/methods/{i}"),
                            format!("unknown interval method {}; the methods are \"percentile\", \"basic\", \"normal\", \"bca\", \"studentized\"", describe(m)),
                        );
                    }
                }
            }
            ok.then_some(out)
        }
        Some(v) => {
            errs.push(
                "/methods",
                format!("must be a non-empty array of method names; got {}", describe(v)),
            );
            None
        }
    };

    let include = match obj.get("include") {
        None => Some(Include::default()),
        Some(Value::Array(items)) => {
            let mut inc = Include::default();
            let mut ok = true;
            for (i, it) in items.iter().enumerate() {
                match it.as_str() {
                    Some("histogram") => inc.histogram = true,
                    Some("cdf") => inc.cdf = true,
                    Some("replicates") => inc.replicates = true,
                    _ => {
                        ok = false;
                        errs.push(
                            format!("/include/{i}"),
                            format!("must be \"histogram\", \"cdf\" or \"replicates\"; got {}", describe(it)),
                        );
                    }
                }
            }
            ok.then_some(inc)
        }
        Some(v) => {
            errs.push("/include", format!("must be an array such as [\"histogram\"]; got {}", describe(v)));
            None
        }
    };

    let inner_resamples = match obj.get("inner_resamples") {
        None => Some(DEFAULT_INNER_RESAMPLES),
        Some(v) => positive_integer(
            v,
            "/inner_resamples",
            10,
            1000,
            "the nested bootstrap size for studentized intervals",
            errs,
        )
        .map(|k| k as usize),
    };

    if errs.0.len() != before {
        return None;
    }
    Some(IntervalParams {
        statistic: statistic?,
        resamples: resamples?,
        seed,
        levels: levels?,
        methods: methods?,
        scheme: scheme?,
        include: include?,
        inner_resamples: inner_resamples?,
    })
}

/// Read a whole `POST /v1/interval` body.
pub fn parse_interval(body: &Value, limits: &Limits) -> Result<IntervalRequest, Vec<FieldError>> {
    let mut errs = Errors::default();
    let Value::Object(obj) = body else {
        errs.push("", "the body must be a JSON object");
        return Err(errs.0);
    };
    unknown_fields(obj, INTERVAL_FIELDS, "", &mut errs);
    let sample = parse_data(obj.get("data"), "/data", limits, &mut errs);

    let token = match obj.get("token") {
        None => None,
        Some(Value::String(s)) => Some(s.clone()),
        Some(v) => {
            errs.push(
                "/token",
                format!("must be the token string of an earlier response; got {}", describe(v)),
            );
            None
        }
    };
    let params = if token.is_some() {
        for k in TOKEN_REPLACES {
            if obj.contains_key(*k) {
                errs.push(
                    format!("/{k}"),
                    "a token stands in for this parameter; send either the token or the parameters, not both",
                );
            }
        }
        None
    } else {
        parse_params(obj, limits, &mut errs)
    };

    let time_limit_ms = match obj.get("time_limit_ms") {
        None => Some(limits.default_time_limit_ms),
        Some(v) => positive_integer(v, "/time_limit_ms", 1, u64::MAX >> 11, "a time limit in milliseconds", &mut errs)
            .map(|t| t.min(limits.max_time_limit_ms)),
    };
    let on_time_limit = match obj.get("on_time_limit") {
        None => Some(OnTimeLimit::Fail),
        Some(Value::String(s)) if s == "fail" => Some(OnTimeLimit::Fail),
        Some(Value::String(s)) if s == "partial" => Some(OnTimeLimit::Partial),
        Some(v) => {
            errs.push("/on_time_limit", format!("must be \"fail\" or \"partial\"; got {}", describe(v)));
            None
        }
    };
    if !errs.is_empty() {
        return Err(errs.0);
    }
    Ok(IntervalRequest {
        sample: sample.expect("no errors"),
        params,
        token,
        time_limit_ms: time_limit_ms.expect("no errors"),
        on_time_limit: on_time_limit.expect("no errors"),
    })
}

/// Replace the bare tokens `NaN`, `Infinity` and `-Infinity` outside strings (which some
/// JSON writers emit, though JSON has no such literals) by strings, so that validation can
/// name the element instead of refusing the whole body as malformed.
pub fn quote_non_finite_literals(text: &str) -> Option<String> {
    let bytes = text.as_bytes();
    let mut out = String::with_capacity(text.len() + 16);
    let (mut i, mut last) = (0, 0);
    let mut in_string = false;
    while i < bytes.len() {
        let c = bytes[i];
        if in_string {
            match c {
                b'\\' => i += 2,
                b'"' => {
                    in_string = false;
                    i += 1
                }
                _ => i += 1,
            }
            continue;
        }
        if c == b'"' {
            in_string = true;
            i += 1;
            continue;
        }
        // Literals start with an ASCII byte, so `i` and `last` are always char boundaries.
        match ["-Infinity", "Infinity", "NaN"]
            .into_iter()
            .find(|lit| bytes[i..].starts_with(lit.as_bytes()))
        {
            Some(lit) => {
                out.push_str(&text[last..i]);
                out.push('"');
                out.push_str(lit);
                out.push('"');
                i += lit.len();
                last = i;
            }
            None => i += 1,
        }
    }
    if last == 0 {
        return None;
    }
    out.push_str(&text[last..]);
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bare_non_finite_literals_become_strings_outside_strings_only() {
        let s = quote_non_finite_literals(r#"{"data": [1, NaN, -Infinity, "NaN x"], "k": "Infinity"}"#).unwrap();
        let v: Value = serde_json::from_str(&s).unwrap();
        assert_eq!(v["data"][1], "NaN");
        assert_eq!(v["data"][2], "-Infinity");
        assert_eq!(v["data"][3], "NaN x");
        assert_eq!(v["k"], "Infinity");
        assert!(quote_non_finite_literals(r#"{"data": [1, 2]}"#).is_none());
    }
}
