//! Reading the schemas utoipa derives: the variants of a tagged union as single objects, and
//! the components a schema refers to. The OpenAPI document and the catalogue both read them
//! here.

use std::collections::BTreeMap;

use serde_json::{json, Value};
use utoipa::openapi::schema::{AdditionalProperties, Object, ObjectBuilder, Schema, Type};
use utoipa::openapi::RefOr;
use utoipa::ToSchema;

use super::decode::{Shape, ONE_VALUE};

/// A variant of a tagged union as one object: its tag property first, then its parameters,
/// refusing unknown fields as the parser does.
pub fn merged(variant: &RefOr<Schema>, tag: &str) -> Object {
    let parts: Vec<Object> = match variant {
        RefOr::T(Schema::AllOf(all)) => all
            .items
            .iter()
            .map(|p| match p {
                RefOr::T(Schema::Object(o)) => o.clone(),
                _ => panic!("the parts of a tagged variant are inline objects"),
            })
            .collect(),
        RefOr::T(Schema::Object(o)) => vec![o.clone()],
        _ => panic!("a tagged variant is an object"),
    };
    let mut out = ObjectBuilder::new().schema_type(Type::Object).build();
    for p in &parts {
        if let Some(t) = p.properties.get(tag) {
            out.properties.insert(tag.to_string(), t.clone());
        }
    }
    for p in parts {
        out.properties.extend(p.properties.into_iter().filter(|(k, _)| k != tag));
        out.required.extend(p.required.into_iter().filter(|r| r != tag));
        out.description = out.description.or(p.description);
    }
    out.required.insert(0, tag.to_string());
    out.additional_properties = Some(Box::new(AdditionalProperties::FreeForm(false)));
    out
}

/// The variants of a tagged union `T`, each as one object (as JSON).
pub fn variants<T: ToSchema>(tag: &str) -> Vec<Value> {
    let RefOr::T(Schema::OneOf(one_of)) = T::schema() else {
        panic!("{} is a oneOf", T::name());
    };
    one_of
        .items
        .iter()
        .map(|v| serde_json::to_value(merged(v, tag)).expect("a schema serialises"))
        .collect()
}

/// The component schemas `T`'s schema refers to, by name (as JSON).
pub fn components<T: ToSchema>() -> BTreeMap<String, Value> {
    let mut found = Vec::new();
    T::schemas(&mut found);
    found
        .into_iter()
        .map(|(name, s)| (name, serde_json::to_value(s).expect("a schema serialises")))
        .collect()
}

/// The schema of a request type with flattened parts (`#[serde(flatten)]`, which utoipa
/// renders as an `allOf` of the parts) as one object that refuses unknown fields, as the
/// parser does: a client sees one flat list of fields.
pub fn flattened<T: ToSchema>() -> RefOr<Schema> {
    let mut named = Vec::new();
    T::schemas(&mut named);
    let resolve = |part: &RefOr<Schema>| -> Vec<Object> {
        let schema = match part {
            RefOr::Ref(r) => {
                let name = r.ref_location.rsplit('/').next().unwrap_or_default();
                named
                    .iter()
                    .find(|(n, _)| n == name)
                    .map(|(_, s)| s.clone())
                    .unwrap_or_else(|| panic!("{name} is among the schemas of {}", T::name()))
            }
            other => other.clone(),
        };
        match flattened_parts(&schema) {
            Some(parts) => parts,
            None => panic!("the parts of {} are objects", T::name()),
        }
    };
    let (description, parts): (Option<String>, Vec<Object>) = match T::schema() {
        // The type's own fields first, then those of its flattened parts.
        RefOr::T(Schema::AllOf(all)) => {
            let (own, shared): (Vec<&RefOr<Schema>>, Vec<&RefOr<Schema>>) = all.items.iter().partition(|p| matches!(p, RefOr::T(_)));
            (all.description.clone(), own.into_iter().chain(shared).flat_map(resolve).collect())
        }
        other => (None, resolve(&other)),
    };
    let mut out = ObjectBuilder::new().schema_type(Type::Object).build();
    for p in parts {
        out.description = out.description.or(p.description);
        out.properties.extend(p.properties);
        out.required.extend(p.required);
    }
    out.description = description.or(out.description);
    out.additional_properties = Some(Box::new(AdditionalProperties::FreeForm(false)));
    RefOr::T(Schema::Object(out))
}

/// The objects of a schema that is an object or an `allOf` of objects.
fn flattened_parts(schema: &RefOr<Schema>) -> Option<Vec<Object>> {
    match schema {
        RefOr::T(Schema::Object(o)) => Some(vec![o.clone()]),
        RefOr::T(Schema::AllOf(all)) => all
            .items
            .iter()
            .map(flattened_parts)
            .collect::<Option<Vec<_>>>()
            .map(|v| v.concat()),
        _ => None,
    }
}

/// What the document says of every field sent in R's lenient forms (see [`Shape`]).
const ONE_NOTE: &str = "Also accepted as a one-element array holding the value, as R's JSON writers send a length-one vector; an array of two or more is refused: it must be ";
const LIST_NOTE: &str =
    "Also accepted as one item alone, standing for a one-item list, as R's JSON writers send a length-one vector with `auto_unbox`.";

/// A request schema whose properties accept what the decoder accepts by each field's [`Shape`]
/// (`shapes`, from the request type): one value as `oneOf: [X, {type: array, items: X,
/// minItems: 1, maxItems: 1}]`, a list as `oneOf: [list, item]`; `components` resolves a list
/// property's reference to its item schema.
pub fn lenient(schema: &RefOr<Schema>, shapes: &[(&str, Shape)], components: &BTreeMap<String, RefOr<Schema>>) -> RefOr<Schema> {
    let mut json = serde_json::to_value(schema).expect("a schema serialises");
    let Some(properties) = json.get_mut("properties").and_then(Value::as_object_mut) else {
        panic!("a request schema is one object with properties");
    };
    for (field, shape) in shapes.iter().filter(|(_, shape)| *shape != Shape::AsIs) {
        let Some(property) = properties.get_mut(*field) else {
            panic!("{field} is a property of the request schema");
        };
        let Value::Object(mut p) = property.take() else {
            panic!("{field}'s schema is an object");
        };
        let description = p.remove("description");
        let default = p.remove("default");
        let inner = match p.get("oneOf").and_then(Value::as_array) {
            Some(items) if items.len() == 1 && p.len() == 1 => items[0].clone(),
            _ => Value::Object(p),
        };
        let (variants, note) = match shape {
            Shape::One => (
                json!([inner, {"type": "array", "items": inner, "minItems": 1, "maxItems": 1}]),
                format!("{ONE_NOTE}{ONE_VALUE}."),
            ),
            Shape::List => (json!([inner, list_item(&inner, components)]), LIST_NOTE.to_string()),
            Shape::AsIs => unreachable!("left as it is"),
        };
        let said = description
            .as_ref()
            .and_then(Value::as_str)
            .map_or(String::new(), |d| format!("{d}\n\n"));
        *property = restore(json!({"oneOf": variants}), Some(json!(format!("{said}{note}"))), default);
    }
    serde_json::from_value(json).expect("a schema reads back")
}

/// A property's schema with its description and default put back.
fn restore(inner: Value, description: Option<Value>, default: Option<Value>) -> Value {
    let Value::Object(mut out) = inner else {
        panic!("a property schema is an object");
    };
    out.extend(description.map(|d| ("description".to_string(), d)));
    out.extend(default.map(|d| ("default".to_string(), d)));
    Value::Object(out)
}

/// The item schema of a list property: the `items` of the list it is or refers to.
fn list_item(list: &Value, components: &BTreeMap<String, RefOr<Schema>>) -> Value {
    let resolved = match list.get("$ref").and_then(Value::as_str).and_then(|r| r.rsplit('/').next()) {
        Some(name) => {
            serde_json::to_value(components.get(name).unwrap_or_else(|| panic!("{name} is a component"))).expect("a schema serialises")
        }
        None => list.clone(),
    };
    resolved["items"].clone()
}
