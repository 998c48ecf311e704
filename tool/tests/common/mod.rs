//! Helpers shared by the end-to-end tests.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The workspace root (tests run the binary from there so paths print as `examples/...`).
pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("tool/ has a parent")
        .to_path_buf()
}

/// Runs `coilwise ARGS` from the workspace root.
pub fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_coilwise"))
        .args(args)
        .current_dir(root())
        .output()
        .expect("the coilwise binary runs")
}

/// Standard output as text.
pub fn stdout(o: &Output) -> String {
    String::from_utf8(o.stdout.clone()).expect("stdout is UTF-8")
}

/// Standard error as text.
pub fn stderr(o: &Output) -> String {
    String::from_utf8(o.stderr.clone()).expect("stderr is UTF-8")
}

/// The text of an example design.
pub fn example(name: &str) -> String {
    std::fs::read_to_string(root().join("examples").join(name)).expect("example exists")
}

/// `text` with the first occurrence of `from` replaced (which must exist).
pub fn edit(text: &str, from: &str, to: &str) -> String {
    assert!(text.contains(from), "`{from}` not in the design");
    text.replacen(from, to, 1)
}

/// 1-based line of the first line containing `needle` in `text`.
pub fn line_of(text: &str, needle: &str) -> usize {
    text.lines()
        .position(|l| l.contains(needle))
        .map(|i| i + 1)
        .expect("needle present")
}

/// Compiles `lib` as a library crate with warnings denied (rustc's lints included), metadata
/// only; `Err` carries rustc's diagnostics.
pub fn rustc_check(lib: &str) -> Result<(), String> {
    let dir = tempfile::tempdir().unwrap();
    let src = dir.path().join("lib.rs");
    std::fs::write(&src, lib).unwrap();
    let rustc = std::env::var("RUSTC").unwrap_or_else(|_| "rustc".to_string());
    let o = Command::new(rustc)
        .args([
            "--edition",
            "2021",
            "--crate-type",
            "lib",
            "--crate-name",
            "emitted",
        ])
        .args(["-D", "warnings", "--emit", "metadata", "--out-dir"])
        .arg(dir.path())
        .arg(&src)
        .output()
        .expect("rustc runs");
    if o.status.success() {
        Ok(())
    } else {
        Err(String::from_utf8_lossy(&o.stderr).into_owned())
    }
}
