//! The `data` field (and a comparison's `baseline` and `candidate`): one column, aggregated
//! values with counts, or named columns; decoded into the engine's [`Sample`], with the engine's
//! data problems turned into pointers into the request.

use serde_json::{Map, Value};
use utoipa::openapi::schema::{AdditionalProperties, ArrayBuilder, ObjectBuilder, OneOfBuilder, Schema, Type};
use utoipa::openapi::{Ref, RefOr};
use utoipa::{PartialSchema, ToSchema};

use super::boxed::{boxed_members, with_members_unboxed, Members};
use super::decode::{describe, unknown_fields, Decode, Errors, Shape};
use super::lift;
use super::problem::escape_token;
use super::rules::Rule;
use super::schema::lenient;
use crate::engine::data::{DataError, Form, Place, Sample, MAX_MAGNITUDE};

/// The largest count: whole numbers up to 2^53 − 1 are exact in every JSON client.
pub const MAX_COUNT: u64 = crate::engine::wire::MAX_EXACT_INTEGER;

/// Every bad element of an array is named, up to this many; a count says how many more.
const MAX_REPORTED: usize = 100;

/// A sample as sent.
#[derive(Debug, Clone, PartialEq)]
pub struct Data(pub Sample);

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

/// An array of numbers; every bad element is reported (magnitudes are the engine's to check).
fn numbers(v: &Value, at: &str, errs: &mut Errors) -> Option<Vec<f64>> {
    if let Some(x) = lifted(v, at) {
        return Some(x);
    }
    let Value::Array(items) = v else {
        errs.push(at, format!("must be an array of numbers; got {}", describe(v)));
        return None;
    };
    let bad: Vec<usize> = (0..items.len()).filter(|i| items[*i].as_f64().is_none()).collect();
    for i in bad.iter().take(MAX_REPORTED) {
        errs.push(format!("{at}/{i}"), number_message(&items[*i]));
    }
    if bad.len() > MAX_REPORTED {
        errs.push(
            at,
            format!("{} elements in all are not numbers; the first {MAX_REPORTED} are listed", bad.len()),
        );
    }
    bad.is_empty().then(|| items.iter().map(|x| x.as_f64().expect("checked")).collect())
}

/// The array lifted out of the body at `at` (which the tree holds as `[]`), if it was.
fn lifted(v: &Value, at: &str) -> Option<Vec<f64>> {
    matches!(v, Value::Array(a) if a.is_empty()).then(|| lift::take(at)).flatten()
}

/// A whole number of observations (0 or more; `2.0` counts, as JSON Schema reads it).
fn whole(c: &Value) -> Option<u64> {
    c.as_u64().or_else(|| {
        c.as_f64()
            .filter(|f| f.fract() == 0.0 && *f >= 0.0 && *f < 9.007_199_254_740_992e15)
            .map(|f| f as u64)
    })
}

/// The `counts` array at `at`; `required` says what it is for when it is missing.
fn counts(v: Option<&Value>, at: &str, required: &str, errs: &mut Errors) -> Option<Vec<u64>> {
    let at = format!("{at}/counts");
    let Some(v) = v else {
        errs.push(at, required);
        return None;
    };
    let Value::Array(items) = v else {
        errs.push(at, format!("must be an array of whole numbers; got {}", describe(v)));
        return None;
    };
    let before = errs.len();
    let out: Vec<u64> = items
        .iter()
        .enumerate()
        .filter_map(|(i, c)| {
            let k = whole(c);
            if k.is_none() {
                errs.push(
                    format!("{at}/{i}"),
                    format!("must be a whole number of observations (0 or more); got {}", describe(c)),
                );
            }
            k
        })
        .collect();
    (errs.len() == before).then_some(out)
}

fn columns(obj: &Map<String, Value>, at: &str, errs: &mut Errors) -> Option<Result<Sample, Vec<DataError>>> {
    unknown_fields(obj, &["columns"], at, errs);
    let at = format!("{at}/columns");
    let Some(Value::Object(cols)) = obj.get("columns") else {
        errs.push(&at, "must be an object mapping column names to arrays of numbers");
        return None;
    };
    if cols.is_empty() {
        errs.push(&at, "needs at least one column");
        return None;
    }
    let before = errs.len();
    let decoded: Vec<(String, Option<Vec<f64>>)> = cols
        .iter()
        .map(|(name, col)| (name.clone(), numbers(col, &format!("{at}/{}", escape_token(name)), errs)))
        .collect();
    if errs.len() != before {
        return None;
    }
    let (names, columns) = decoded.into_iter().map(|(n, c)| (n, c.expect("no errors"))).unzip();
    Some(Sample::columns(names, columns))
}

fn aggregated(obj: &Map<String, Value>, at: &str, errs: &mut Errors) -> Option<Result<Sample, Vec<DataError>>> {
    unknown_fields(obj, &["values", "counts"], at, errs);
    let values = match obj.get("values") {
        Some(x) => numbers(x, &format!("{at}/values"), errs),
        None => {
            errs.push(format!("{at}/values"), "is required with counts: the distinct values observed");
            None
        }
    };
    let counts = counts(
        obj.get("counts"),
        at,
        "is required with values: how often each value was observed",
        errs,
    );
    Some(Sample::aggregated(values?, counts?))
}

fn bins(obj: &Map<String, Value>, at: &str, errs: &mut Errors) -> Option<Result<Sample, Vec<DataError>>> {
    unknown_fields(obj, &["bins"], at, errs);
    let at = format!("{at}/bins");
    let Some(v @ Value::Object(_)) = obj.get("bins") else {
        errs.push(&at, "must be an object {\"edges\": [...], \"counts\": [...], \"overflow\": 0}");
        return None;
    };
    // R with `auto_unbox` off sends the overflow as a one-element array.
    let members = boxed_members("bins").expect("a histogram's members");
    with_members_unboxed(v, &at, errs, members, |v, at, errs| {
        bin_fields(v.as_object().expect("still an object"), members, at, errs)
    })
}

fn bin_fields(bins: &Map<String, Value>, members: &Members, at: &str, errs: &mut Errors) -> Option<Result<Sample, Vec<DataError>>> {
    let known: Vec<&str> = members.lists.iter().chain(&members.one).map(String::as_str).collect();
    unknown_fields(bins, &known, at, errs);
    let edges = match bins.get("edges") {
        Some(x) => numbers(x, &format!("{at}/edges"), errs),
        None => {
            errs.push(format!("{at}/edges"), "is required: the k + 1 strictly increasing edges of k bins");
            None
        }
    };
    let counts = counts(
        bins.get("counts"),
        at,
        "is required: the observations in each bin, one count per bin",
        errs,
    );
    let overflow = match bins.get("overflow") {
        None => Some(0),
        Some(v) => whole(v).or_else(|| {
            errs.push(
                format!("{at}/overflow"),
                format!(
                    "must be a whole number of observations above the last edge (0 or more); got {}",
                    describe(v)
                ),
            );
            None
        }),
    };
    Some(Sample::bins(edges?, counts?, overflow?))
}

/// Data as sent: a one-element array is a sample of one, never one value unboxed.
impl Decode for Data {
    const SHAPE: Shape = Shape::AsIs;

    fn decode(v: &Value, at: &str, errs: &mut Errors) -> Option<Self> {
        let sample = match v {
            Value::Array(_) => Sample::column(numbers(v, at, errs)?),
            Value::Object(obj) if obj.contains_key("columns") => columns(obj, at, errs)?,
            Value::Object(obj) if obj.contains_key("bins") => bins(obj, at, errs)?,
            Value::Object(obj) if obj.contains_key("values") || obj.contains_key("counts") => aggregated(obj, at, errs)?,
            Value::Object(_) => {
                errs.push(
                    at,
                    "an object here must be {\"values\": [...], \"counts\": [...]}, {\"columns\": {...}} or {\"bins\": {...}}",
                );
                return None;
            }
            other => {
                errs.push(at, format!("must be an array of numbers or an object; got {}", describe(other)));
                return None;
            }
        };
        let form = match v {
            Value::Array(_) => DataForm::Column,
            _ if v.get("columns").is_some() => DataForm::Columns,
            _ if v.get("bins").is_some() => DataForm::Bins,
            _ => DataForm::Aggregated,
        };
        match sample {
            Ok(s) => Some(Data(s)),
            Err(problems) => {
                report(form, problems, at, "", errs);
                None
            }
        }
    }
}

/// The form a sample was sent in, which decides where its parts sit in the request and which
/// of its problems the schema already states.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DataForm {
    Column,
    Aggregated,
    Columns,
    Bins,
}

impl DataForm {
    pub fn of(sample: &Sample) -> DataForm {
        match sample.form() {
            Form::Column(_) => DataForm::Column,
            Form::Aggregated { .. } => DataForm::Aggregated,
            Form::Columns { .. } => DataForm::Columns,
            Form::Bins { .. } => DataForm::Bins,
        }
    }
}

/// Where a problem of the engine lies in the request: `data_at` points at the sample,
/// `statistic_at` at the statistic.
pub fn pointer(form: DataForm, place: &Place, data_at: &str, statistic_at: &str) -> String {
    match place {
        Place::Whole => data_at.to_string(),
        Place::Value(i) if form == DataForm::Aggregated => format!("{data_at}/values/{i}"),
        Place::Value(i) => format!("{data_at}/{i}"),
        Place::Count(i) if form == DataForm::Bins => format!("{data_at}/bins/counts/{i}"),
        Place::Counts if form == DataForm::Bins => format!("{data_at}/bins/counts"),
        Place::Count(i) => format!("{data_at}/counts/{i}"),
        Place::Counts => format!("{data_at}/counts"),
        Place::Edge(i) => format!("{data_at}/bins/edges/{i}"),
        Place::Edges => format!("{data_at}/bins/edges"),
        Place::Overflow => format!("{data_at}/bins/overflow"),
        Place::Statistic => statistic_at.to_string(),
        Place::Column(name) => format!("{data_at}/columns/{}", escape_token(name)),
        Place::ColumnValue(name, i) => format!("{data_at}/columns/{}/{i}", escape_token(name)),
        Place::Parameter(param) => format!("{statistic_at}/{param}"),
    }
}

/// A data problem of the engine as a field error: its pointer, the rule beyond the schema that
/// it breaks (none for what the schema says itself), and its message with the wire's way out.
pub fn data_error(form: DataForm, e: DataError, data_at: &str, statistic_at: &str) -> (String, Option<Rule>, String) {
    let at = pointer(form, &e.place(), data_at, statistic_at);
    let rule = match &e {
        // The schema states these: magnitudes, at least one column, two values in a column.
        DataError::TooLarge { .. } | DataError::NoColumns | DataError::TooFewEdges { .. } => None,
        DataError::TooFew { .. } if form == DataForm::Column => None,
        DataError::TooFew { .. }
        | DataError::LengthMismatch { .. }
        | DataError::EdgeNotIncreasing { .. }
        | DataError::BinCounts { .. }
        | DataError::TooFewBinned { .. } => Some(Rule::SampleShape),
        DataError::CountsOverflow => Some(Rule::RowLimit),
        DataError::NeedsColumns { .. } | DataError::NeedsOneColumn { .. } | DataError::NotOnBins { .. } => Some(Rule::StatisticShape),
        DataError::MissingColumn { .. } => Some(Rule::ColumnNames),
        DataError::NotPaired { .. } => Some(Rule::PairedRows),
        _ => Some(Rule::StatisticDomain),
    };
    let way_out = match &e {
        DataError::NeedsColumns { .. } => ": send data as {\"columns\": {\"x\": [...], \"y\": [...]}}",
        DataError::NeedsOneColumn { .. } => ": send data as an array of numbers or as {\"values\": [...], \"counts\": [...]}",
        DataError::NotOnBins { .. } => {
            "; any statistic of one column takes the observations themselves (an array, or {\"values\": [...], \"counts\": [...]})"
        }
        _ => "",
    };
    (at, rule, format!("{e}{way_out}"))
}

/// Report the engine's data problems of a sample sent in `form` at `data_at`.
pub fn report(form: DataForm, problems: Vec<DataError>, data_at: &str, statistic_at: &str, errs: &mut Errors) {
    for p in problems {
        let (pointer, rule, message) = data_error(form, p, data_at, statistic_at);
        match rule {
            Some(rule) => errs.refuse(pointer, rule, message),
            None => errs.push(pointer, message),
        }
    }
}

// The schema, beside the decoder it describes.

/// One data value: a finite JSON number of magnitude at most 1e75.
pub struct DataValue;

impl PartialSchema for DataValue {
    fn schema() -> RefOr<Schema> {
        ObjectBuilder::new()
            .schema_type(Type::Number)
            .minimum(Some(-MAX_MAGNITUDE))
            .maximum(Some(MAX_MAGNITUDE))
            .description(Some(
                "A finite JSON number of magnitude at most 1e75 (so that the variance of such data, and the spread of its replicates, stay finite). `NaN`, `Infinity` and numeric strings are refused at their index.",
            ))
            .into()
    }
}

impl ToSchema for DataValue {}

fn value_ref() -> RefOr<Schema> {
    RefOr::Ref(Ref::from_schema_name("DataValue"))
}

fn aggregated_schema() -> ObjectBuilder {
    ObjectBuilder::new()
        .schema_type(Type::Object)
        .title(Some("Aggregated"))
        .property("values", ArrayBuilder::new().items(value_ref()).description(Some("The distinct values observed.")))
        .property(
            "counts",
            ArrayBuilder::new()
                .items(count_schema())
                .description(Some("How often each value was observed: one whole number (0 to 2^53 − 1) per value.")),
        )
        .required("values")
        .required("counts")
        .additional_properties(Some(AdditionalProperties::FreeForm(false)))
        .description(Some(
            "Aggregated data: each value observed `counts[i]` times (a histogram of latencies, a tally of ratings). The sample size is the sum of the counts.",
        ))
}

fn count_schema() -> ObjectBuilder {
    ObjectBuilder::new()
        .schema_type(Type::Integer)
        .minimum(Some(0))
        .maximum(Some(MAX_COUNT))
}

fn bins_schema() -> ObjectBuilder {
    let bins = ObjectBuilder::new()
        .schema_type(Type::Object)
        .property(
            "edges",
            ArrayBuilder::new().items(value_ref()).min_items(Some(2)).description(Some(
                "k + 1 strictly increasing edges of k bins; bin i holds the observations in (edges[i], edges[i + 1]].",
            )),
        )
        .property(
            "counts",
            ArrayBuilder::new().items(count_schema()).description(Some(
                "The observations in each bin: k whole numbers (0 to 2^53 − 1), one fewer than the edges.",
            )),
        )
        .property(
            "overflow",
            count_schema()
                .default(Some(0.into()))
                .description(Some("The observations above the last edge, at unknown values. Default 0.")),
        )
        .required("edges")
        .required("counts")
        .additional_properties(Some(AdditionalProperties::FreeForm(false)));
    // Its one-value members also boxed, as the decoder reads them from R.
    let shapes: Vec<(&str, Shape)> = boxed_members("bins")
        .expect("a histogram's members")
        .one
        .iter()
        .map(|m| (m.as_str(), Shape::One))
        .collect();
    let bins = lenient(&RefOr::T(Schema::Object(bins.build())), &shapes, &Default::default());
    ObjectBuilder::new()
        .schema_type(Type::Object)
        .title(Some("Bins"))
        .property("bins", bins)
        .required("bins")
        .additional_properties(Some(AdditionalProperties::FreeForm(false)))
        .description(Some(
            "A binned histogram as monitoring systems keep it: `counts[i]` observations in (edges[i], edges[i + 1]] and `overflow` above the last edge. A resample redraws the counts (a multinomial over the bins and the overflow). Only the statistics that bins give can be read from it: `median`, `quantile` and `iqr` (observations spread evenly inside each bin), `mean` (at the bins' midpoints; not with an overflow) and `exceedance`.",
        ))
}

fn columns_schema() -> ObjectBuilder {
    ObjectBuilder::new()
        .schema_type(Type::Object)
        .title(Some("Columns"))
        .property(
            "columns",
            ObjectBuilder::new()
                .schema_type(Type::Object)
                .additional_properties(Some(ArrayBuilder::new().items(value_ref())))
                .min_properties(Some(1))
                .description(Some("Column name → values; every column has the same number of rows.")),
        )
        .required("columns")
        .additional_properties(Some(AdditionalProperties::FreeForm(false)))
        .description(Some("Named columns of equal length, read together as rows, in the order sent."))
}

impl PartialSchema for Data {
    fn schema() -> RefOr<Schema> {
        OneOfBuilder::new()
            .item(
                ArrayBuilder::new()
                    .items(value_ref())
                    .min_items(Some(2))
                    .title(Some("Column"))
                    .description(Some("One column of observations, in the order sent; a bootstrap needs at least 2.")),
            )
            .item(aggregated_schema())
            .item(columns_schema())
            .item(bins_schema())
            .description(Some(
                "A sample: an array of numbers (one column); `{\"values\": [...], \"counts\": [...]}` (each value observed `counts[i]` times); `{\"columns\": {\"x\": [...], \"y\": [...]}}` (equal-length named columns read together as rows, for `ratio`, `correlation` and `slope`); or `{\"bins\": {\"edges\": [...], \"counts\": [...], \"overflow\": 0}}` (a binned histogram). Rows keep the order they were sent in. At most the server's `limits.max_rows` rows.",
            ))
            .into()
    }
}

impl ToSchema for Data {
    fn schemas(schemas: &mut Vec<(String, RefOr<Schema>)>) {
        schemas.push(("DataValue".into(), DataValue::schema()));
    }
}
