//! Fuzz the design-file reader end to end: any bytes as a design file (UTF-8 or not, valid TOML
//! or not), read, validated, analysed and rendered as report, JSON and constants.
//!
//! Invariants: no panic; every error carries a place in the file, on a line the file has, and
//! every error from the reader (not the analysis) names the key it blames unless the file is not
//! UTF-8 TOML at all; every output renders.
#![no_main]

use coilwise_tool::ToolError;
use coilwise_tool::{analysis::Analysis, constants, json, report, source, ErrorClass, Place};
use libfuzzer_sys::fuzz_target;

const PATH: &str = "fuzz.toml";

/// The error is placed in `PATH`, on one of its lines (or the line just past a final newline).
fn located(err: &ToolError, text: Option<&str>) {
    let Some(Place::File { path, line, column }) = &err.place else {
        panic!("error without a place in the file: {err}");
    };
    assert_eq!(path, PATH, "{err}");
    assert!(*line >= 1 && *column >= 1, "{err}");
    if let Some(text) = text {
        let lines = text.split('\n').count();
        assert!(*line <= lines, "line {line} of a {lines}-line file: {err}");
    }
    assert!(!err.to_string().is_empty());
}

fuzz_target!(|data: &[u8]| {
    let text = match source::decode(PATH, data.to_vec()) {
        Ok(t) => t,
        Err(e) => {
            // Too large is an I/O error of the whole file; not UTF-8 has a line.
            if e.class != ErrorClass::Io {
                located(&e, None);
            }
            return;
        }
    };
    let spec = match coilwise_tool::load_str(PATH, &text, &[]) {
        Ok(s) => s,
        Err(e) => {
            located(&e, Some(&text));
            if e.class != ErrorClass::Syntax {
                assert!(e.key.is_some(), "reader error without a key: {e}");
            }
            return;
        }
    };
    let a = match Analysis::new(&spec) {
        Ok(a) => a,
        Err(e) => {
            located(&e, Some(&text));
            return;
        }
    };
    assert!(!report::render_report(&a).is_empty());
    assert!(!json::render(&a).is_empty());
    match constants::render(&a, Some("coil"), true) {
        Ok(c) => assert!(c.contains("pub const TICK_HZ")),
        Err(e) => located(&e, Some(&text)),
    }
});
