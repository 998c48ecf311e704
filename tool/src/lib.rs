//! # coilwise-tool
//!
//! The design-time side of coilwise: reads a driver design (TOML, values with units), runs the
//! core's closed forms over the nominal point and the worst corners, and prints the timing budget,
//! pass / warn / fail checks, a clamp comparison, waveforms (SVG) and firmware constants.
//!
//! The binary `coilwise` is a thin layer over [`load`], [`analysis::Analysis`] and the output
//! modules; everything here is usable from tests and other tools.
//!
//! All results are engineering estimates from first-order models. They do not replace the
//! component datasheets, local electrical codes, or licensed practice.
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod analysis;
pub mod cautions;
pub mod constants;
pub mod error;
pub mod escape;
pub mod input;
pub mod json;
pub mod numbers;
pub mod output;
pub mod plot;
pub mod quantity;
pub mod raw;
pub mod report;
pub mod schema;
pub mod source;
pub mod spec;
pub mod table;

pub use analysis::Analysis;
pub use error::{ErrorClass, Place, ToolError};
pub use spec::Spec;

/// Reads the design file at `path`, applies `overrides` (`KEY=VALUE`, in order) and validates it.
///
/// # Errors
/// Unreadable file, a file larger than [`source::MAX_FILE_BYTES`] or not UTF-8, invalid TOML, any schema or physics error, each with file, line and key.
pub fn load(path: &str, overrides: &[String]) -> Result<Spec, ToolError> {
    let text = source::read(path)?;
    load_str(path, &text, overrides)
}

/// As [`load`], from text already in memory; `path` is used in messages only.
///
/// # Errors
/// As [`load`].
pub fn load_str(path: &str, text: &str, overrides: &[String]) -> Result<Spec, ToolError> {
    let mut inputs = input::Inputs::parse(path, text)?;
    for o in overrides {
        inputs.apply_override(o)?;
    }
    Spec::build(inputs)
}
