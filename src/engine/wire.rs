//! How the engine's vocabulary describes itself.
//!
//! Every enum of the catalogue (methods, stop reasons, warning codes, …) owns its wire name and
//! its documentation, and every bounded number its range and the sentence that explains it. The
//! service derives its parser (serde), its OpenAPI document (utoipa), its catalogue and its error
//! texts from them, so that a name, a range or a doc line is written once. This is description
//! only: nothing here knows HTTP or JSON values.

/// A fieldless enum with one wire name per variant: serde and OpenAPI use the name, `ALL` lists
/// the variants in order, and `doc` returns a variant's doc comment (for the catalogue).
/// `pub enum Name default Variant { ... }` also makes `Variant` the default.
#[macro_export]
macro_rules! wire_enum {
    (
        $(#[$meta:meta])*
        pub enum $name:ident default $default:ident {
            $( $(#[doc = $doc:literal])* $variant:ident = $wire:tt, )+
        }
    ) => {
        $crate::wire_enum! {
            $(#[$meta])*
            pub enum $name { $( $(#[doc = $doc])* $variant = $wire, )+ }
        }

        impl Default for $name {
            fn default() -> Self {
                $name::$default
            }
        }
    };
    (
        $(#[$meta:meta])*
        pub enum $name:ident {
            $( $(#[doc = $doc:literal])* $variant:ident = $wire:tt, )+
        }
    ) => {
        $(#[$meta])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize, utoipa::ToSchema)]
        pub enum $name {
            $( $(#[doc = $doc])* #[serde(rename = $wire)] $variant, )+
        }

        impl $name {
            /// Every variant, in the order of the definition.
            pub const ALL: &'static [$name] = &[$($name::$variant),+];

            /// The wire name.
            pub fn name(self) -> &'static str {
                match self { $($name::$variant => $wire),+ }
            }

            /// The variant's doc comment, one line.
            pub fn doc(self) -> &'static str {
                match self { $($name::$variant => concat!($($doc),*).trim_ascii()),+ }
            }

            /// The variant with this wire name.
            pub fn from_name(name: &str) -> Option<$name> {
                Self::ALL.iter().copied().find(|v| v.name() == name)
            }

            /// Every wire name quoted, for messages: `"a", "b"`.
            pub fn quoted() -> String {
                Self::ALL.iter().map(|v| format!("\"{}\"", v.name())).collect::<Vec<_>>().join(", ")
            }

            /// Every wire name with its meaning, one per line, for documents.
            pub fn described() -> String {
                Self::ALL.iter().map(|v| format!("- `{}`: {}", v.name(), v.doc())).collect::<Vec<_>>().join("\n")
            }
        }

        impl std::fmt::Display for $name {
            fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str(self.name())
            }
        }
    };
}

/// A value outside the range its type allows.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("must be {what}; got {got}")]
pub struct OutOfRange {
    /// What the value must be, in words ("a confidence level strictly between 0 and 1").
    pub what: &'static str,
    /// What was given, written as a number.
    pub got: String,
}

/// A number as a person reads it in a message: plainly, or in scientific notation when it is
/// very large or very small (a 301-digit number helps nobody).
pub fn show(x: f64) -> String {
    if x != 0.0 && !(1e-6..1e16).contains(&x.abs()) {
        format!("{x:e}")
    } else {
        x.to_string()
    }
}

/// Whether a bound of a range is part of it, for the OpenAPI schema of a bounded number.
#[doc(hidden)]
#[macro_export]
macro_rules! __bound {
    (min, <, $v:expr, $o:ident) => {
        $o.exclusive_minimum(Some($v))
    };
    (min, <=, $v:expr, $o:ident) => {
        $o.minimum(Some($v))
    };
    (max, <, $v:expr, $o:ident) => {
        $o.exclusive_maximum(Some($v))
    };
    (max, <=, $v:expr, $o:ident) => {
        $o.maximum(Some($v))
    };
}

/// A real number in a range, as a type whose constructor checks the range: `Level::new(95.0)`
/// is an error, so a level of 95 cannot exist. Serde goes through the constructor, and the
/// OpenAPI schema carries the same range and the doc comment.
#[macro_export]
macro_rules! bounded_number {
    (
        $(#[doc = $doc:literal])*
        pub struct $name:ident where $lo:literal $lop:tt x $hop:tt $hi:literal, $what:literal;
    ) => {
        $(#[doc = $doc])*
        #[derive(Debug, Clone, Copy, PartialEq, PartialOrd, serde::Serialize, serde::Deserialize)]
        #[serde(try_from = "f64", into = "f64")]
        pub struct $name(f64);

        impl $name {
            /// What a value of this type must be, in words.
            pub const WHAT: &'static str = $what;

            // Each type picks which of its bounds belong to it, so the comparisons are written out.
            #[allow(clippy::manual_range_contains)]
            pub fn new(x: f64) -> Result<$name, $crate::engine::wire::OutOfRange> {
                if $lo $lop x && x $hop $hi {
                    Ok($name(x))
                } else {
                    Err($crate::engine::wire::OutOfRange { what: $what, got: $crate::engine::wire::show(x) })
                }
            }

            pub fn get(self) -> f64 {
                self.0
            }
        }

        impl TryFrom<f64> for $name {
            type Error = $crate::engine::wire::OutOfRange;
            fn try_from(x: f64) -> Result<$name, Self::Error> {
                $name::new(x)
            }
        }

        impl From<$name> for f64 {
            fn from(v: $name) -> f64 {
                v.0
            }
        }

        impl utoipa::PartialSchema for $name {
            fn schema() -> utoipa::openapi::RefOr<utoipa::openapi::schema::Schema> {
                let o = utoipa::openapi::ObjectBuilder::new().schema_type(utoipa::openapi::schema::Type::Number);
                let o = $crate::__bound!(min, $lop, $lo, o);
                let o = $crate::__bound!(max, $hop, $hi, o);
                o.description(Some(concat!($($doc),*).trim_ascii())).into()
            }
        }

        impl utoipa::ToSchema for $name {}
    };
}

/// A whole number in a range. Integral JSON numbers written with a fraction part (`2.0`, as
/// JSON Schema counts them integers and some writers send them) are accepted below 2^53, where
/// they are exact.
#[macro_export]
macro_rules! whole_number {
    (
        $(#[doc = $doc:literal])*
        pub struct $name:ident where $lo:literal <= x <= $hi:expr, $what:literal;
    ) => {
        $(#[doc = $doc])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
        #[serde(into = "u64")]
        pub struct $name(u64);

        impl $name {
            /// What a value of this type must be, in words.
            pub const WHAT: &'static str = $what;
            /// The least value.
            pub const MIN: u64 = $lo;
            /// The greatest value.
            pub const MAX: u64 = $hi;

            pub fn new(x: u64) -> Result<$name, $crate::engine::wire::OutOfRange> {
                if ($lo..=$hi).contains(&x) {
                    Ok($name(x))
                } else {
                    Err($crate::engine::wire::OutOfRange { what: $what, got: x.to_string() })
                }
            }

            pub fn get(self) -> u64 {
                self.0
            }
        }

        impl From<$name> for u64 {
            fn from(v: $name) -> u64 {
                v.0
            }
        }

        impl<'de> serde::Deserialize<'de> for $name {
            fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<$name, D::Error> {
                let x = d.deserialize_any($crate::engine::wire::WholeVisitor { what: $what })?;
                $name::new(x).map_err(serde::de::Error::custom)
            }
        }

        impl utoipa::PartialSchema for $name {
            fn schema() -> utoipa::openapi::RefOr<utoipa::openapi::schema::Schema> {
                let o = utoipa::openapi::ObjectBuilder::new()
                    .schema_type(utoipa::openapi::schema::Type::Integer)
                    .minimum(Some($lo));
                let o = if $hi < u64::MAX { o.maximum(Some($hi)) } else { o };
                o.description(Some(concat!($($doc),*).trim_ascii())).into()
            }
        }

        impl utoipa::ToSchema for $name {}
    };
}

/// Reads a whole number from any numeric form; see [`whole_number!`].
#[doc(hidden)]
pub struct WholeVisitor {
    pub what: &'static str,
}

/// The largest whole number that every JSON client carries exactly (JavaScript's numbers are
/// doubles): 2^53 − 1. Seeds, counts and other whole numbers of the wire stay within it.
pub const MAX_EXACT_INTEGER: u64 = (1 << 53) - 1;

/// Below 2^53 every whole number is exact in a double.
const EXACT_INTEGERS: f64 = (MAX_EXACT_INTEGER + 1) as f64;

impl serde::de::Visitor<'_> for WholeVisitor {
    type Value = u64;

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        write!(f, "{}", self.what)
    }

    fn visit_u64<E: serde::de::Error>(self, v: u64) -> Result<u64, E> {
        Ok(v)
    }

    fn visit_i64<E: serde::de::Error>(self, v: i64) -> Result<u64, E> {
        u64::try_from(v).map_err(|_| {
            E::custom(OutOfRange {
                what: self.what,
                got: v.to_string(),
            })
        })
    }

    fn visit_f64<E: serde::de::Error>(self, v: f64) -> Result<u64, E> {
        if v.fract() == 0.0 && (0.0..EXACT_INTEGERS).contains(&v) {
            Ok(v as u64)
        } else {
            let got = if v.fract() != 0.0 {
                format!("{}, which is not whole", show(v))
            } else {
                show(v)
            };
            Err(E::custom(OutOfRange { what: self.what, got }))
        }
    }
}

#[cfg(test)]
mod tests {
    use serde::Deserialize;

    crate::bounded_number! {
        /// A test share.
        pub struct Share where 0.0 <= x < 0.5, "a share from 0 up to 0.5";
    }

    crate::whole_number! {
        /// A test count.
        pub struct Count where 2 <= x <= 10, "a count from 2 to 10";
    }

    #[test]
    fn bounded_numbers_check_their_range_on_every_path() {
        assert!(Share::new(0.0).is_ok());
        assert!(Share::new(0.5).is_err());
        assert!(Share::new(f64::NAN).is_err());
        let e = Share::new(0.7).unwrap_err();
        assert_eq!(e.to_string(), "must be a share from 0 up to 0.5; got 0.7");
        assert!(serde_json::from_str::<Share>("0.6").is_err());
        assert_eq!(serde_json::from_str::<Share>("0.25").unwrap().get(), 0.25);
    }

    #[test]
    fn whole_numbers_accept_integral_floats_only() {
        assert_eq!(Count::deserialize(serde_json::json!(3)).unwrap().get(), 3);
        assert_eq!(Count::deserialize(serde_json::json!(3.0)).unwrap().get(), 3);
        assert!(Count::deserialize(serde_json::json!(3.5)).is_err());
        assert!(Count::deserialize(serde_json::json!(-3)).is_err());
        assert!(Count::deserialize(serde_json::json!(11)).is_err());
        assert!(Count::deserialize(serde_json::json!("3")).is_err());
    }
}
