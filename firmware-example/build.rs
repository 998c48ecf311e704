//! Picks the memory map for the target being built and hands it to cortex-m-rt's `link.x`.
//!
//! The maps live in `memory/<target-triple>.x`. The chosen one is copied to `OUT_DIR/memory.x`
//! and `OUT_DIR` is put on the linker search path. Do not add a `memory.x` to the crate root: the
//! linker would find that one first and silently use it for every target.

use std::env;
use std::fs;
use std::path::PathBuf;

fn main() {
    let target = env::var("TARGET").unwrap_or_default();
    let manifest =
        PathBuf::from(env::var("CARGO_MANIFEST_DIR").expect("cargo sets CARGO_MANIFEST_DIR"));
    let out = PathBuf::from(env::var("OUT_DIR").expect("cargo sets OUT_DIR"));

    println!("cargo:rerun-if-changed=build.rs");
    println!("cargo:rerun-if-changed=memory");

    // Which QEMU board the target runs on (see .cargo/config.toml), and the SysTick (core)
    // clock of that board model. Checked under QEMU 7.2 with -icount shift=10 (1024 ns per
    // instruction): 25.6, 16.384 and 12.8 SysTick ticks per instruction respectively.
    let (board, core_hz) = match target.as_str() {
        "thumbv7em-none-eabihf" => ("mps2_an386", 25_000_000u32),
        "thumbv7m-none-eabi" => ("lm3s6965evb", 12_500_000),
        "thumbv6m-none-eabi" => ("microbit", 16_000_000),
        _ => ("host", 1_000_000),
    };
    println!("cargo:rustc-env=COILWISE_BOARD={board}");
    println!("cargo:rustc-env=COILWISE_CORE_HZ={core_hz}");

    if !target.starts_with("thumbv") {
        // Host builds (e.g. `cargo metadata`, rust-analyzer) need no memory map.
        return;
    }
    let map = manifest.join("memory").join(format!("{target}.x"));
    let text = fs::read(&map).unwrap_or_else(|e| {
        panic!(
            "no memory map for target `{target}`: {} ({e}). Supported: thumbv7em-none-eabihf, \
             thumbv7m-none-eabi, thumbv6m-none-eabi",
            map.display()
        )
    });
    fs::write(out.join("memory.x"), text).expect("write OUT_DIR/memory.x");
    println!("cargo:rustc-link-search={}", out.display());
}
