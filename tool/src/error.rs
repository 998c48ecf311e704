//! The tool's error: what went wrong, where (file, line, column, key), and why.

use std::fmt;

/// The class of an error; printed as a stable tag (`error[missing-unit]: …`) so scripts and tests
/// can tell them apart without parsing prose.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ErrorClass {
    /// A file could not be read or written.
    Io,
    /// The file is not valid TOML.
    Syntax,
    /// A key that is not part of the design-file schema.
    UnknownKey,
    /// A required key is absent.
    MissingKey,
    /// A number where a value with a unit is required.
    MissingUnit,
    /// A unit of the wrong quantity (a voltage where a resistance belongs), or an unknown unit.
    WrongUnit,
    /// A value of the wrong type or not one of the allowed words.
    BadValue,
    /// Values that each parse but cannot describe a real circuit together.
    Impossible,
    /// A malformed command-line override.
    Usage,
}

impl ErrorClass {
    /// The tag printed in brackets.
    pub fn tag(self) -> &'static str {
        match self {
            ErrorClass::Io => "io",
            ErrorClass::Syntax => "syntax",
            ErrorClass::UnknownKey => "unknown-key",
            ErrorClass::MissingKey => "missing-key",
            ErrorClass::MissingUnit => "missing-unit",
            ErrorClass::WrongUnit => "wrong-unit",
            ErrorClass::BadValue => "bad-value",
            ErrorClass::Impossible => "impossible",
            ErrorClass::Usage => "usage",
        }
    }
}

/// Where a value came from.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Place {
    /// A position in a file, 1-based line and column.
    File {
        /// File name as given on the command line.
        path: String,
        /// Line, from 1.
        line: usize,
        /// Column in characters, from 1.
        column: usize,
    },
    /// A `--set` argument.
    CommandLine {
        /// The argument as typed.
        argument: String,
    },
}

impl fmt::Display for Place {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Place::File { path, line, column } => write!(f, "{path}:{line}:{column}"),
            Place::CommandLine { argument } => write!(
                f,
                "command line `--set {}`",
                crate::escape::echo(argument, 120)
            ),
        }
    }
}

/// An error with its class, place, key and explanation.
#[derive(Clone, Debug, PartialEq)]
pub struct ToolError {
    /// What kind of error.
    pub class: ErrorClass,
    /// Where, when known.
    pub place: Option<Place>,
    /// The design-file key, when one is to blame.
    pub key: Option<String>,
    /// Why, in a sentence.
    pub message: String,
    /// What to do about it, when there is a clear fix.
    pub hint: Option<String>,
}

impl ToolError {
    /// An error without place or key.
    pub fn new(class: ErrorClass, message: impl Into<String>) -> Self {
        Self {
            class,
            place: None,
            key: None,
            message: message.into(),
            hint: None,
        }
    }

    /// The same error with a hint.
    pub fn hint(mut self, hint: impl Into<String>) -> Self {
        self.hint = Some(hint.into());
        self
    }

    /// The same error at a place and key.
    pub fn at(mut self, place: Option<Place>, key: Option<&str>) -> Self {
        self.place = place;
        self.key = key.map(str::to_string);
        self
    }

    /// An I/O error on `path`.
    pub fn io(path: &str, what: &str, err: &std::io::Error) -> Self {
        Self::new(ErrorClass::Io, format!("cannot {what} `{path}`: {err}"))
    }
}

/// Prints `error[CLASS]: PLACE: KEY: message` and `  hint: …` on the next line. Every part is
/// escaped as it is printed ([`crate::escape::text_line`]): a file name, a key or a value from
/// the input holding a line feed or an escape sequence cannot add a line or reach the terminal
/// raw, wherever the message was put together.
impl fmt::Display for ToolError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        use crate::escape::text_line;
        write!(f, "error[{}]: ", self.class.tag())?;
        if let Some(p) = &self.place {
            write!(f, "{}: ", text_line(&p.to_string()))?;
        }
        if let Some(k) = &self.key {
            write!(f, "{}: ", text_line(k))?;
        }
        f.write_str(&text_line(&self.message))?;
        if let Some(h) = &self.hint {
            write!(f, "\n  hint: {}", text_line(h))?;
        }
        Ok(())
    }
}

impl std::error::Error for ToolError {}
