//! The targets the example firmware builds for and the QEMU machine each one runs on.

/// One firmware target.
pub struct Board {
    /// Short name used on the command line and in the budget file.
    pub key: &'static str,
    /// Rust target triple.
    pub triple: &'static str,
    /// QEMU machine (set in firmware-example/.cargo/config.toml; shown in messages).
    pub machine: &'static str,
    /// Core, for messages.
    pub core: &'static str,
    /// Built and checked in CI.
    pub ci: bool,
}

/// Every known target.
pub static BOARDS: [Board; 3] = [
    Board {
        key: "m4f",
        triple: "thumbv7em-none-eabihf",
        machine: "mps2-an386",
        core: "Cortex-M4F",
        ci: true,
    },
    Board {
        key: "m0",
        triple: "thumbv6m-none-eabi",
        machine: "microbit",
        core: "Cortex-M0",
        ci: true,
    },
    Board {
        key: "m3",
        triple: "thumbv7m-none-eabi",
        machine: "lm3s6965evb",
        core: "Cortex-M3",
        ci: false,
    },
];

/// Looks a target up by short name or triple.
pub fn find(name: &str) -> Option<&'static Board> {
    BOARDS.iter().find(|b| b.key == name || b.triple == name)
}

/// The demo's default target.
pub fn default_demo() -> &'static Board {
    &BOARDS[0]
}

/// The targets CI checks.
pub fn ci_boards() -> Vec<&'static Board> {
    BOARDS.iter().filter(|b| b.ci).collect()
}
