//! A TOML value as the design-file reader holds it before interpretation ([`Raw`]), and the
//! conversion from the parser's spanned values.

use std::ops::Range;

use toml::de::DeValue;
use toml::Spanned;

use crate::error::Place;

/// A value as read, before interpretation.
#[derive(Clone, Debug, PartialEq)]
pub enum Raw {
    /// A TOML string.
    Str(String),
    /// A TOML integer or float (kept as written, for messages).
    Number(f64, String),
    /// A TOML boolean.
    Bool(bool),
    /// A TOML array.
    List(Vec<(Raw, Option<Place>)>),
    /// Anything else (date, table inside an array), by name.
    Other(&'static str),
}

impl Raw {
    pub(crate) fn type_name(&self) -> &'static str {
        match self {
            Raw::Str(_) => "a string",
            Raw::Number(..) => "a number",
            Raw::Bool(_) => "a boolean",
            Raw::List(_) => "an array",
            Raw::Other(what) => what,
        }
    }
}

/// The value of a TOML number as written (`_` removed; hexadecimal, octal and binary
/// integers as TOML defines them); NaN where it does not parse.
fn number(text: &str, radix: u32) -> f64 {
    let clean: String = text.chars().filter(|&c| c != '_').collect();
    let body = clean
        .strip_prefix("0x")
        .or_else(|| clean.strip_prefix("0o"))
        .or_else(|| clean.strip_prefix("0b"))
        .unwrap_or(&clean);
    if radix == 10 {
        body.parse::<f64>().unwrap_or(f64::NAN)
    } else {
        i64::from_str_radix(body, radix).map_or(f64::NAN, |v| v as f64)
    }
}

/// The reader's form of a TOML value: numbers kept with their text (for messages), arrays with
/// where each element is written.
pub(crate) fn convert(
    value: &Spanned<DeValue<'_>>,
    place: &dyn Fn(Range<usize>) -> Option<Place>,
) -> Raw {
    match value.get_ref() {
        DeValue::String(s) => Raw::Str(s.to_string()),
        DeValue::Integer(i) => Raw::Number(number(i.as_str(), i.radix()), i.as_str().to_string()),
        DeValue::Float(f) => Raw::Number(number(f.as_str(), 10), f.as_str().to_string()),
        DeValue::Boolean(b) => Raw::Bool(*b),
        DeValue::Datetime(_) => Raw::Other("a date"),
        DeValue::Table(_) => Raw::Other("a table"),
        DeValue::Array(items) => Raw::List(
            items
                .iter()
                .map(|item| (convert(item, place), place(item.span())))
                .collect(),
        ),
    }
}
