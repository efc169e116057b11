//! Loosely typed values: every value of a need is first read as a
//! [`Loose`] (with its byte span, for TOML), so a value of the wrong type
//! is reported by the need reader itself, naming the key.

use super::shown;
use serde::de::{self, Deserializer, IgnoredAny, MapAccess, SeqAccess, Visitor};
use serde::Deserialize;
use std::ops::Range;

/// Any value as it was read, before its type is checked.
#[derive(Debug, Clone, PartialEq)]
pub(super) enum Loose {
    /// `true` / `false`.
    Bool(bool),
    /// A whole number.
    Int(i128),
    /// A number with a fraction or exponent (TOML also allows `nan`, `inf`).
    Float(f64),
    /// A string.
    Text(String),
    /// An array.
    List(Vec<Loose>),
    /// A table or object (contents not kept: no key takes one).
    Table,
    /// A TOML date or time.
    DateTime,
    /// JSON `null` (inside a list).
    Null,
}

impl Loose {
    /// What the value is, for "found ..." in messages.
    pub(super) fn describe(&self) -> String {
        match self {
            Loose::Bool(b) => format!("the boolean `{b}`"),
            Loose::Int(i) => format!("the number `{i}`"),
            Loose::Float(x) if x.is_nan() => "`nan`".to_string(),
            Loose::Float(x) if x.is_infinite() => {
                if *x > 0.0 { "`inf`" } else { "`-inf`" }.to_string()
            }
            Loose::Float(x) => format!("the number `{x}`"),
            Loose::Text(s) => format!("the text `{}`", shown(s)),
            Loose::List(_) => "a list".to_string(),
            Loose::Table => "a table".to_string(),
            Loose::DateTime => "a date/time".to_string(),
            Loose::Null => "null".to_string(),
        }
    }
}

impl<'de> Deserialize<'de> for Loose {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> std::result::Result<Self, D::Error> {
        deserializer.deserialize_any(LooseVisitor)
    }
}

/// Builds a [`Loose`] from whatever the format holds.
struct LooseVisitor;

impl<'de> Visitor<'de> for LooseVisitor {
    type Value = Loose;

    fn expecting(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("a value")
    }

    fn visit_bool<E: de::Error>(self, v: bool) -> std::result::Result<Loose, E> {
        Ok(Loose::Bool(v))
    }

    fn visit_i64<E: de::Error>(self, v: i64) -> std::result::Result<Loose, E> {
        Ok(Loose::Int(i128::from(v)))
    }

    fn visit_u64<E: de::Error>(self, v: u64) -> std::result::Result<Loose, E> {
        Ok(Loose::Int(i128::from(v)))
    }

    fn visit_i128<E: de::Error>(self, v: i128) -> std::result::Result<Loose, E> {
        Ok(Loose::Int(v))
    }

    fn visit_u128<E: de::Error>(self, v: u128) -> std::result::Result<Loose, E> {
        Ok(i128::try_from(v).map_or(Loose::Float(v as f64), Loose::Int))
    }

    fn visit_f64<E: de::Error>(self, v: f64) -> std::result::Result<Loose, E> {
        Ok(Loose::Float(v))
    }

    fn visit_str<E: de::Error>(self, v: &str) -> std::result::Result<Loose, E> {
        Ok(Loose::Text(v.to_string()))
    }

    fn visit_string<E: de::Error>(self, v: String) -> std::result::Result<Loose, E> {
        Ok(Loose::Text(v))
    }

    fn visit_unit<E: de::Error>(self) -> std::result::Result<Loose, E> {
        Ok(Loose::Null)
    }

    fn visit_none<E: de::Error>(self) -> std::result::Result<Loose, E> {
        Ok(Loose::Null)
    }

    fn visit_some<D: Deserializer<'de>>(self, d: D) -> std::result::Result<Loose, D::Error> {
        Loose::deserialize(d)
    }

    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> std::result::Result<Loose, A::Error> {
        let mut items = Vec::new();
        while let Some(item) = seq.next_element::<Loose>()? {
            items.push(item);
        }
        Ok(Loose::List(items))
    }

    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> std::result::Result<Loose, A::Error> {
        // toml hands a date/time over as a one-entry map with this key.
        let mut kind = Loose::Table;
        let mut first = true;
        while let Some(key) = map.next_key::<String>()? {
            if first && key == "$__toml_private_datetime" {
                kind = Loose::DateTime;
            }
            first = false;
            map.next_value::<IgnoredAny>()?;
        }
        Ok(kind)
    }
}

/// A read value with, where the format gives it, its byte span.
pub(super) trait Field {
    /// The value.
    fn value(&self) -> &Loose;
    /// Its byte range in the text.
    fn span(&self) -> Option<Range<usize>>;
}

impl Field for Loose {
    fn value(&self) -> &Loose {
        self
    }
    fn span(&self) -> Option<Range<usize>> {
        None
    }
}

impl Field for toml::Spanned<Loose> {
    fn value(&self) -> &Loose {
        self.get_ref()
    }
    fn span(&self) -> Option<Range<usize>> {
        Some(toml::Spanned::span(self))
    }
}
