//! Reading a design file: TOML with spans, flattened to dotted keys, checked against the schema,
//! with command-line overrides; every value keeps where it came from for error messages.

use std::collections::BTreeMap;
use std::ops::Range;

use toml::de::{DeTable, DeValue};

use crate::error::{ErrorClass, Place, ToolError};
use crate::escape::echo;
use crate::quantity::{self, Dim, QuantityError};
use crate::schema::{self, Kind};
use crate::source::{first_failing_line, Lines};

use crate::raw::convert;
pub use crate::raw::Raw;

/// The most values a list key (`diagnosis.thresholds`, `compare.zener`, `compare.resistor`) may
/// hold: every value costs a diagnosis band or a comparison row, and 100 000 of them kept the
/// tool busy for seconds.
pub const MAX_LIST: usize = 64;

/// The most characters of a key or value an error message echoes.
const ECHO_MAX: usize = 80;

/// A value in SI units and where it was written.
pub type Placed = (f64, Option<Place>);

/// One key's value and where it came from.
#[derive(Clone, Debug)]
struct Entry {
    value: Raw,
    /// Where the key is written.
    place: Option<Place>,
    /// Where the value is written.
    value_place: Option<Place>,
}

/// The flattened contents of a design file plus overrides.
#[derive(Clone, Debug)]
pub struct Inputs {
    path: String,
    entries: BTreeMap<String, Entry>,
    sections: BTreeMap<String, Place>,
}

impl Inputs {
    /// Parses `text` (the contents of `path`) and checks every key against the schema.
    ///
    /// # Errors
    /// [`ErrorClass::Syntax`] for invalid TOML, [`ErrorClass::UnknownKey`] for a key outside the
    /// schema, [`ErrorClass::BadValue`] for a value of the wrong TOML type.
    pub fn parse(path: &str, text: &str) -> Result<Self, ToolError> {
        let lines = Lines::new(text);
        let table = DeTable::parse(text).map_err(|e| {
            // Some errors ("recursion limit" of dotted keys) come without a span: found by
            // bisection over the lines instead.
            let at = e
                .span()
                .map_or_else(|| first_failing_line(text, e.message()), |s| s.start);
            let (line, column) = lines.line_col(at);
            let place = Some(Place::File {
                path: path.to_string(),
                line,
                column,
            });
            let mut message = format!("not valid TOML: {}", e.message().trim());
            // The parser's message says "duplicate key" without the key: it is under the span.
            if let Some(s) = e.span().filter(|_| message.contains("duplicate key")) {
                if let Some(written) = text.get(s) {
                    message.push_str(&format!(" `{}`", echo(written.trim(), ECHO_MAX)));
                }
            }
            ToolError::new(ErrorClass::Syntax, message).at(place, None)
        })?;
        let mut inputs = Inputs {
            path: path.to_string(),
            entries: BTreeMap::new(),
            sections: BTreeMap::new(),
        };
        let file = |span: Range<usize>| {
            let (line, column) = lines.line_col(span.start);
            Some(Place::File {
                path: path.to_string(),
                line,
                column,
            })
        };
        for (name, value) in table.get_ref().iter() {
            let section = name.get_ref().to_string();
            let shown = echo(&section, ECHO_MAX);
            let DeValue::Table(inner) = value.get_ref() else {
                if schema::sections().contains(&section.as_str()) {
                    // A section name, but not written as one table.
                    let found = match value.get_ref() {
                        DeValue::Array(items)
                            if !items.is_empty()
                                && items
                                    .iter()
                                    .all(|v| matches!(v.get_ref(), DeValue::Table(_))) =>
                        {
                            "an array of tables ([[...]])".to_string()
                        }
                        other => format!("a TOML {}", other.type_str()),
                    };
                    return Err(ToolError::new(
                        ErrorClass::BadValue,
                        format!("[{shown}] must be a section (one table), found {found}"),
                    )
                    .hint(format!(
                        "write the section once as [{shown}] with its keys under it"
                    ))
                    .at(file(name.span()), Some(&shown)));
                }
                return Err(ToolError::new(
                    ErrorClass::UnknownKey,
                    format!(
                        "top-level key `{shown}` is not part of the design file; keys belong in a section such as [coil]"
                    ),
                )
                .at(file(name.span()), Some(&shown)));
            };
            if !schema::sections().contains(&section.as_str()) {
                let mut err = ToolError::new(
                    ErrorClass::UnknownKey,
                    format!("section [{shown}] is not part of the design file"),
                )
                .at(file(name.span()), Some(&shown));
                err = err.hint(format!("sections are {}", schema::sections().join(", ")));
                return Err(err);
            }
            inputs.sections.insert(
                section.clone(),
                file(name.span()).unwrap_or(Place::File {
                    path: path.to_string(),
                    line: 1,
                    column: 1,
                }),
            );
            for (k, v) in inner.iter() {
                let dotted = format!("{section}.{}", k.get_ref());
                let place = file(k.span());
                let raw = convert(v, &file);
                inputs.insert_checked(&dotted, raw, place, file(v.span()))?;
            }
        }
        Ok(inputs)
    }

    /// Checks `key` against the schema and stores it.
    fn insert_checked(
        &mut self,
        key: &str,
        value: Raw,
        place: Option<Place>,
        value_place: Option<Place>,
    ) -> Result<(), ToolError> {
        let Some(spec) = schema::spec(key) else {
            let shown = echo(key, ECHO_MAX);
            let mut err = ToolError::new(
                ErrorClass::UnknownKey,
                format!("`{shown}` is not a key of the design file"),
            )
            .at(place, Some(&shown));
            err = match schema::closest(key) {
                Some(k) => err.hint(format!("did you mean `{k}`? (`coilwise keys` lists all)")),
                None => err.hint("`coilwise keys` lists every key"),
            };
            return Err(err);
        };
        let ok = match (spec.kind, &value) {
            (Kind::Quantity(_) | Kind::Text | Kind::Choice(_), Raw::Str(_)) => true,
            // Numbers are let through so that a missing unit gets its own message.
            (Kind::Quantity(_), Raw::Number(..)) => true,
            (Kind::QuantityList(_), Raw::List(_)) => true,
            _ => false,
        };
        if !ok {
            return Err(ToolError::new(
                ErrorClass::BadValue,
                format!(
                    "expected {}, found {}",
                    match spec.kind {
                        Kind::QuantityList(_) => "an array of strings",
                        Kind::Quantity(Dim::Number) => "a number",
                        _ => "a string",
                    },
                    value.type_name()
                ),
            )
            .at(value_place, Some(key))
            .hint(format!("write it like {} = {}", key, spec.format())));
        }
        self.entries.insert(
            key.to_string(),
            Entry {
                value,
                place,
                value_place,
            },
        );
        Ok(())
    }

    /// Applies one `--set KEY=VALUE` override. The value is taken as a string (`supply.min=20 V`),
    /// or as a TOML array when it starts with `[` (`compare.zener=["12 V", "24 V"]`); an empty
    /// value (`clamp.diode_drop=`) removes the key.
    ///
    /// # Errors
    /// [`ErrorClass::Usage`] for a missing `=` or an empty key; schema errors as for the file.
    pub fn apply_override(&mut self, argument: &str) -> Result<(), ToolError> {
        let place = Some(Place::CommandLine {
            argument: argument.to_string(),
        });
        let Some((key, value)) = argument.split_once('=') else {
            return Err(
                ToolError::new(ErrorClass::Usage, "an override must look like KEY=VALUE")
                    .at(place, None)
                    .hint("for example --set supply.min=\"20 V\""),
            );
        };
        let key = key.trim();
        let value = value.trim();
        if key.is_empty() {
            return Err(ToolError::new(
                ErrorClass::Usage,
                "an override needs a key before the `=`",
            )
            .at(place, None)
            .hint("for example --set supply.min=\"20 V\"; `coilwise keys` lists them"));
        }
        if value.is_empty() {
            // `KEY=` removes the key: back to its default, or absent.
            if schema::spec(key).is_none() {
                return self.insert_checked(key, Raw::Str(String::new()), place.clone(), place);
            }
            self.entries.remove(key);
            return Ok(());
        }
        let raw = if value.starts_with('[') {
            let parsed = DeValue::parse(value).map_err(|e| {
                ToolError::new(
                    ErrorClass::Syntax,
                    format!("the array is not valid TOML: {}", e.message().trim()),
                )
                .at(place.clone(), Some(key))
            })?;
            convert(&parsed, &|_| place.clone())
        } else {
            let unquoted = value
                .strip_prefix('"')
                .and_then(|v| v.strip_suffix('"'))
                .unwrap_or(value);
            Raw::Str(unquoted.to_string())
        };
        self.insert_checked(key, raw, place.clone(), place)
    }

    /// The file name the inputs were read from.
    pub fn path(&self) -> &str {
        &self.path
    }

    /// Where the value of `key` is written; failing that, the header of its section, or the
    /// `--set` argument that wrote a key of a section the file lacks; failing that, the file.
    pub fn place(&self, key: &str) -> Option<Place> {
        if let Some(e) = self.entries.get(key) {
            return e.value_place.clone().or_else(|| e.place.clone());
        }
        let section = key.split('.').next().unwrap_or(key);
        if let Some(p) = self.sections.get(section) {
            return Some(p.clone());
        }
        // A section only `--set` wrote: where one of its keys came from.
        let prefix = format!("{section}.");
        if let Some(p) = self
            .entries
            .iter()
            .find(|(k, _)| k.starts_with(&prefix))
            .and_then(|(_, e)| e.place.clone())
        {
            return Some(p);
        }
        Some(Place::File {
            path: self.path.clone(),
            line: 1,
            column: 1,
        })
    }

    /// Whether `key` is present.
    pub fn has(&self, key: &str) -> bool {
        self.entries.contains_key(key)
    }

    /// Whether any key of `section` is present.
    pub fn has_section(&self, section: &str) -> bool {
        let prefix = format!("{section}.");
        self.entries.keys().any(|k| k.starts_with(&prefix))
    }

    /// An error of `class` at `key`.
    pub fn error(&self, key: &str, class: ErrorClass, message: impl Into<String>) -> ToolError {
        ToolError::new(class, message).at(self.place(key), Some(key))
    }

    /// A missing-key error naming the section the key belongs in.
    pub fn missing(&self, key: &str, why: &str) -> ToolError {
        let kind = schema::spec(key).map(|s| s.format()).unwrap_or_default();
        let section = key.split('.').next().unwrap_or(key);
        let name = key.split('.').nth(1).unwrap_or(key);
        self.error(
            key,
            ErrorClass::MissingKey,
            format!("`{key}` is missing{why}"),
        )
        .hint(format!("add `{name} = {kind}` under [{section}]"))
    }

    fn dim_of(key: &str) -> Dim {
        match schema::spec(key).map(|s| s.kind) {
            Some(Kind::Quantity(d) | Kind::QuantityList(d)) => d,
            _ => Dim::Number,
        }
    }

    fn quantity_error(
        &self,
        key: &str,
        place: Option<Place>,
        text: &str,
        e: QuantityError,
    ) -> ToolError {
        let dim = Self::dim_of(key);
        let class = match e {
            QuantityError::MissingUnit => ErrorClass::MissingUnit,
            QuantityError::WrongUnit { .. } | QuantityError::UnknownUnit(_) => {
                ErrorClass::WrongUnit
            }
            _ => ErrorClass::BadValue,
        };
        let expected = match dim {
            Dim::Number => dim.name().to_string(),
            _ => format!("{} in {}", dim.name(), dim.unit_hint()),
        };
        let mut err = ToolError::new(
            class,
            format!(
                "value \"{}\" {e}; expected {expected}",
                echo(text, ECHO_MAX)
            ),
        )
        .at(place, Some(key));
        // The key's own example ("0.8 V" for a diode drop), not the unit's generic one.
        let example = schema::spec(key)
            .and_then(|s| s.example)
            .unwrap_or(dim.example());
        let hint = match (&e, dim) {
            (QuantityError::UnknownUnit(u), Dim::Temperature) if u == "C" => {
                "write degrees Celsius as degC or °C, e.g. \"85 degC\"".to_string()
            }
            (_, Dim::Number) => format!("write a plain number, e.g. {example}"),
            _ => format!(
                "write it like \"{example}\" (SI prefixes p n u µ m k M G allowed where it makes sense)"
            ),
        };
        err = err.hint(hint);
        err
    }

    /// `raw` read as the quantity `key` expects, then held to its physical range
    /// ([`quantity::physical_range`]).
    fn parse_one(&self, key: &str, raw: &Raw, place: Option<Place>) -> Result<f64, ToolError> {
        let v = self.parse_raw(key, raw, place.clone())?;
        quantity::physical_range(Self::dim_of(key), v).map_err(|why| {
            ToolError::new(ErrorClass::Impossible, why)
                .at(place, Some(key))
                .hint("see docs/design-file.md for the allowed range")
        })?;
        Ok(v)
    }

    fn parse_raw(&self, key: &str, raw: &Raw, place: Option<Place>) -> Result<f64, ToolError> {
        let dim = Self::dim_of(key);
        match raw {
            Raw::Str(s) => {
                quantity::parse(dim, s).map_err(|e| self.quantity_error(key, place, s, e))
            }
            Raw::Number(v, written) if dim == Dim::Number => {
                let based = ["0x", "0o", "0b"].iter().any(|p| written.starts_with(p));
                let value = if !v.is_finite() {
                    // TOML's `nan` and `inf` literals.
                    Err(QuantityError::NotFinite)
                } else if based {
                    quantity::in_range(*v)
                } else {
                    // A decimal TOML number is read by the one number grammar.
                    quantity::parse(dim, written)
                };
                value.map_err(|e| self.quantity_error(key, place, written, e))
            }
            Raw::Number(_, written) => {
                Err(self.quantity_error(key, place, written, QuantityError::MissingUnit))
            }
            other => Err(ToolError::new(
                ErrorClass::BadValue,
                format!("expected a string, found {}", other.type_name()),
            )
            .at(place, Some(key))),
        }
    }

    /// The value of a quantity key in SI units, if present.
    pub fn quantity(&self, key: &str) -> Result<Option<f64>, ToolError> {
        match self.entries.get(key) {
            None => Ok(None),
            Some(e) => self
                .parse_one(key, &e.value, e.value_place.clone())
                .map(Some),
        }
    }

    /// The value of a quantity key, or its schema default.
    pub fn quantity_or_default(&self, key: &str) -> Result<f64, ToolError> {
        if let Some(v) = self.quantity(key)? {
            return Ok(v);
        }
        let text = schema::spec(key).and_then(|s| s.default).unwrap_or("");
        quantity::parse(Self::dim_of(key), text)
            .map_err(|e| self.quantity_error(key, None, text, e))
    }

    /// The value of a required quantity key.
    pub fn required(&self, key: &str) -> Result<f64, ToolError> {
        self.quantity(key)?.ok_or_else(|| self.missing(key, ""))
    }

    /// The values of a quantity-list key with their places, if present.
    pub fn quantities(&self, key: &str) -> Result<Option<Vec<Placed>>, ToolError> {
        let Some(e) = self.entries.get(key) else {
            return Ok(None);
        };
        let Raw::List(items) = &e.value else {
            return Err(self.error(key, ErrorClass::BadValue, "expected an array"));
        };
        if items.len() > MAX_LIST {
            return Err(self.error(
                key,
                ErrorClass::BadValue,
                format!(
                    "the array has {} values; at most {MAX_LIST} are allowed",
                    items.len()
                ),
            ));
        }
        let mut out = Vec::with_capacity(items.len());
        for (raw, place) in items {
            let place = place.clone().or_else(|| e.value_place.clone());
            out.push((self.parse_one(key, raw, place.clone())?, place));
        }
        Ok(Some(out))
    }

    /// A text key, if present.
    pub fn text(&self, key: &str) -> Option<String> {
        match self.entries.get(key).map(|e| &e.value) {
            Some(Raw::Str(s)) => Some(s.clone()),
            _ => None,
        }
    }

    /// A choice key: one of the words in its schema, or its default.
    pub fn choice(&self, key: &str) -> Result<Option<&'static str>, ToolError> {
        let Some(spec) = schema::spec(key) else {
            return Ok(None);
        };
        let Kind::Choice(words) = spec.kind else {
            return Ok(None);
        };
        let written = match self.text(key) {
            Some(w) => w,
            None => {
                return Ok(spec
                    .default
                    .and_then(|d| words.iter().copied().find(|w| *w == d)))
            }
        };
        words
            .iter()
            .copied()
            .find(|w| *w == written)
            .map(Some)
            .ok_or_else(|| {
                self.error(
                    key,
                    ErrorClass::BadValue,
                    format!(
                        "\"{}\" is not one of: {}",
                        echo(&written, ECHO_MAX),
                        words.join(", ")
                    ),
                )
            })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_key_names_line_and_suggests() {
        let text = "[coil]\nresistanse = \"160 ohm\"\n";
        let err = Inputs::parse("x.toml", text).unwrap_err();
        assert_eq!(err.class, ErrorClass::UnknownKey);
        assert_eq!(
            err.place,
            Some(Place::File {
                path: "x.toml".into(),
                line: 2,
                column: 1
            })
        );
        assert!(err.hint.unwrap().contains("coil.resistance"));
    }

    #[test]
    fn numbers_without_unit_are_reported_as_such() {
        let text = "[coil]\nresistance = 160\n";
        let inputs = Inputs::parse("x.toml", text).unwrap();
        let err = inputs.quantity("coil.resistance").unwrap_err();
        assert_eq!(err.class, ErrorClass::MissingUnit);
        let text = "[switch]\nmin_gain = 100\n";
        let inputs = Inputs::parse("x.toml", text).unwrap();
        assert_eq!(inputs.quantity("switch.min_gain").unwrap(), Some(100.0));
    }

    #[test]
    fn overrides_replace_and_add() {
        let text = "[supply]\nnominal = \"24 V\"\n";
        let mut inputs = Inputs::parse("x.toml", text).unwrap();
        inputs.apply_override("supply.nominal=\"12 V\"").unwrap();
        inputs
            .apply_override("compare.zener=[\"12 V\", \"18 V\"]")
            .unwrap();
        assert_eq!(inputs.quantity("supply.nominal").unwrap(), Some(12.0));
        inputs.apply_override("supply.nominal=").unwrap();
        assert!(!inputs.has("supply.nominal"));
        inputs.apply_override("supply.nominal=12 V").unwrap();
        let z = inputs.quantities("compare.zener").unwrap().unwrap();
        assert_eq!(z.len(), 2);
        assert!(matches!(
            inputs.place("supply.nominal"),
            Some(Place::CommandLine { .. })
        ));
        assert_eq!(
            inputs.apply_override("supply.nominal").unwrap_err().class,
            ErrorClass::Usage
        );
        assert_eq!(
            inputs
                .apply_override("supply.nominl=1 V")
                .unwrap_err()
                .class,
            ErrorClass::UnknownKey
        );
    }
}
