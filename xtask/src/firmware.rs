//! Building and running the example firmware (firmware-example/, its own cargo workspace).

use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode, Stdio};

use crate::boards::Board;
use crate::tools;

/// The firmware's main binary.
pub const MAIN_BIN: &str = "coilwise-firmware-example";
/// The cost measurement binary.
pub const COST_BIN: &str = "cost";
/// Minimal firmware (b): tick constants + comparator verdict + scheduler.
pub const MIN_COMPARATOR_BIN: &str = "min_comparator";
/// Minimal firmware (c): (b) plus the sample fit.
pub const MIN_FIT_BIN: &str = "min_fit";

/// Cargo feature arguments a firmware binary is built and run with: the minimal firmwares alone,
/// without the demo's feature `full` (and so without the core features it asks for; cargo
/// unifies features per package, not per binary).
fn feature_args(bin: Option<&str>) -> &'static [&'static str] {
    match bin {
        Some(MIN_COMPARATOR_BIN | MIN_FIT_BIN) => {
            &["--no-default-features", "--features", "minimal"]
        }
        _ => &[],
    }
}

/// defmt-print line format used for every captured log: level and message, no timestamp and
/// no source location, so that logs compare across builds.
pub const LOG_FORMAT: &str = "{L} {s}";

/// Root of the repository (the parent of this crate's folder).
pub fn repo_root() -> PathBuf {
    let here = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    here.parent().map(Path::to_path_buf).unwrap_or(here)
}

/// The firmware workspace.
pub fn firmware_dir() -> PathBuf {
    repo_root().join("firmware-example")
}

/// Where the release ELF of `bin` for `board` lands.
pub fn elf_path(board: &Board, bin: &str) -> PathBuf {
    let target_dir = match std::env::var_os("CARGO_TARGET_DIR") {
        Some(d) => {
            let d = PathBuf::from(d);
            if d.is_absolute() {
                d
            } else {
                firmware_dir().join(d)
            }
        }
        None => firmware_dir().join("target"),
    };
    target_dir.join(board.triple).join("release").join(bin)
}

/// `--config` argument that makes the firmware's bytes independent of where the checkout and
/// the cargo home are: panic locations of path dependencies (the core, the driver) and of
/// registry crates carry absolute paths into `.rodata`, so a clone six characters deeper linked
/// a few dozen bytes more flash and failed a budget. Both prefixes are remapped to fixed names.
fn path_remap_config(triple: &str) -> String {
    let mut flags = vec![format!(
        "\"--remap-path-prefix={}=/coilwise\"",
        repo_root().display()
    )];
    if let Some(home) = tools::cargo_home() {
        flags.push(format!("\"--remap-path-prefix={}=/cargo\"", home.display()));
    }
    format!("target.{triple}.rustflags=[{}]", flags.join(","))
}

fn firmware_cargo(args: &[&str]) -> Command {
    let mut c = Command::new(tools::cargo());
    c.current_dir(firmware_dir());
    if let Some(pos) = args.iter().position(|a| *a == "--target") {
        if let Some(triple) = args.get(pos + 1) {
            c.arg("--config").arg(path_remap_config(triple));
        }
    }
    c.args(args);
    // Settings of the outer (host) cargo must not leak into the firmware build.
    for v in ["RUSTFLAGS", "CARGO_ENCODED_RUSTFLAGS", "CARGO_BUILD_TARGET"] {
        c.env_remove(v);
    }
    c
}

/// Builds every binary of the firmware for `board` in release mode (the demo's: main and cost).
pub fn build(board: &Board) -> Result<(), String> {
    build_with(board, None)
}

/// Builds the minimal firmwares for `board` in release mode, with their own features.
pub fn build_minimal(board: &Board) -> Result<(), String> {
    build_with(board, Some(MIN_COMPARATOR_BIN))
}

fn build_with(board: &Board, like: Option<&str>) -> Result<(), String> {
    eprintln!(
        "xtask: building the {}firmware for {} ({}, QEMU {})",
        if like.is_some() { "minimal " } else { "" },
        board.triple,
        board.core,
        board.machine
    );
    let mut args = vec!["build", "--release", "--target", board.triple, "--bins"];
    args.extend_from_slice(feature_args(like));
    let st = firmware_cargo(&args)
        .status()
        .map_err(|e| format!("could not start cargo: {e}"))?;
    if st.success() {
        Ok(())
    } else {
        Err(format!("firmware build for {} failed ({st})", board.triple))
    }
}

/// Outcome of one firmware run.
pub struct RunResult {
    /// The firmware's exit status (semihosting exit code; 124 = timed out).
    pub status: i32,
    /// The decoded log, when captured.
    pub log: String,
}

/// Runs an already built `bin` for `board` through `cargo run` (and so through the runner in
/// firmware-example/.cargo/config.toml). With `capture`, the decoded log is returned instead of
/// shown; stderr (plain text from QEMU and the firmware) always goes to the terminal.
pub fn run(board: &Board, bin: &str, capture: bool) -> Result<RunResult, String> {
    let decoder = tools::ensure_defmt_print()?;
    let mut args = vec![
        "run",
        "--quiet",
        "--release",
        "--target",
        board.triple,
        "--bin",
        bin,
    ];
    args.extend_from_slice(feature_args(Some(bin)));
    let mut c = firmware_cargo(&args);
    c.env("COILWISE_LOG_FORMAT", LOG_FORMAT)
        .env("DEFMT_PRINT", &decoder);
    if capture {
        c.stdout(Stdio::piped());
        let out = c
            .output()
            .map_err(|e| format!("could not start cargo run: {e}"))?;
        Ok(RunResult {
            status: out.status.code().unwrap_or(-1),
            log: String::from_utf8_lossy(&out.stdout).into_owned(),
        })
    } else {
        let st = c
            .status()
            .map_err(|e| format!("could not start cargo run: {e}"))?;
        Ok(RunResult {
            status: st.code().unwrap_or(-1),
            log: String::new(),
        })
    }
}

/// What a firmware exit status means (see `firmware-example/src/lib.rs`, module `status`).
pub fn describe_status(status: i32) -> String {
    match status {
        0 => "all firmware checks held".into(),
        1 => "a firmware check failed (see the ERROR lines above)".into(),
        101 => "the firmware panicked".into(),
        102 => "the firmware hit a HardFault".into(),
        103 => "an unexpected interrupt fired".into(),
        124 => "the firmware did not finish before the timeout".into(),
        127 => "a tool the runner needs is missing".into(),
        -1 => "the run was killed by a signal".into(),
        n => format!("unexpected exit status {n}"),
    }
}

/// `cargo xtask demo`: install what is missing, build, run with the log shown, print a verdict.
pub fn demo(board: &Board) -> Result<ExitCode, String> {
    tools::ensure_target(board.triple)?;
    tools::ensure_qemu()?;
    tools::ensure_defmt_print()?;
    build(board)?;
    eprintln!(
        "xtask: running under qemu-system-arm -machine {} (decoded defmt log follows)",
        board.machine
    );
    let r = run(board, MAIN_BIN, false)?;
    let verdict = if r.status == 0 { "PASS" } else { "FAIL" };
    println!(
        "verdict: {verdict} on {} ({}): exit status {} — {}",
        board.core,
        board.triple,
        r.status,
        describe_status(r.status)
    );
    Ok(if r.status == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::FAILURE
    })
}
