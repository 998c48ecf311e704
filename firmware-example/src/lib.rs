//! Runtime support shared by every binary of the coilwise example firmware.
//!
//! - logging: defmt frames over semihosting stdout (decode with `defmt-print -e ELF`);
//! - [`exit`]: ends the QEMU run with a status the runner passes through to `cargo run`;
//! - panic, `defmt::panic!`, HardFault and unexpected interrupts all end the run with a
//!   non-zero status (see [`status`]) after logging where it happened;
//! - [`ticks`]: the driver's tick source on SysTick (for the cost firmware);
//! - [`measure`]: instruction counts and stack high-water marks for `src/bin/cost.rs`;
//! - [`scenario`]: the invented greenhouse-controller parts, as `coilwise-driver` channel
//!   configurations;
//! - [`board`]: the QEMU board — the driver's hardware seam implemented on a simulated coil
//!   plant;
//! - [`demo`]: the scripted demo (faults, programme, expected outcomes, checker);
//! - [`run`]: the demo's loop on the driver (commissioning, requests, service, events);
//! - [`log`]: the designs, the commissioning and the driver's events in words;
//! - [`fake`]: replaying hardware for the cost probes of the driver;
//! - [`minimal`]: the small firmwares `src/bin/min_*.rs` (core flash without the driver).
//!
//! The runtime itself (commissioning, scheduling, capture, diagnosis, isolation) is the
//! `coilwise-driver` library; this crate is board + scenario + `main` on top of it.
//!
//! Plain text, if any, goes to semihosting *stderr*: stdout carries the binary defmt stream and
//! anything else written there corrupts it.
#![no_std]
#![deny(missing_docs)]

use cortex_m_rt::{exception, ExceptionFrame};
// The critical-section implementation (single core) defmt needs, for binaries that use nothing
// else of cortex-m.
use cortex_m as _;
use defmt_semihosting as _;

#[cfg(feature = "full")]
pub mod board;
#[cfg(feature = "full")]
pub mod demo;
#[cfg(feature = "full")]
pub mod fake;
#[cfg(feature = "full")]
pub mod log;
#[cfg(feature = "full")]
pub mod measure;
pub mod minimal;
#[cfg(feature = "full")]
pub mod run;
#[cfg(feature = "full")]
pub use coilwise_rig::scenario;
#[cfg(feature = "full")]
pub mod store;
#[cfg(feature = "full")]
pub mod ticks;

/// Exit statuses the firmware reports to the host (besides 0 = every check held).
pub mod status {
    /// A check of the application failed (a verdict or a constraint did not hold).
    pub const CHECK_FAILED: i32 = 1;
    /// A Rust panic or `defmt::panic!`.
    pub const PANIC: i32 = 101;
    /// The HardFault handler ran.
    pub const HARD_FAULT: i32 = 102;
    /// An interrupt or exception without a handler fired.
    pub const UNEXPECTED_IRQ: i32 = 103;
}

/// Name of the QEMU board this build is for, chosen by the target in `build.rs`.
pub const BOARD: &str = env!("COILWISE_BOARD");

/// Ends the run: flushes nothing (defmt-semihosting writes synchronously) and reports `code`
/// through semihosting `SYS_EXIT_EXTENDED`, which QEMU turns into its own exit status.
pub fn exit(code: i32) -> ! {
    semihosting::process::exit(code)
}

/// Ends the run with status 0 when `ok`, else [`status::CHECK_FAILED`].
pub fn exit_with_verdict(ok: bool) -> ! {
    exit(if ok { 0 } else { status::CHECK_FAILED })
}

#[panic_handler]
fn panic(info: &core::panic::PanicInfo) -> ! {
    // Location only: formatting the message would pull in core::fmt (kilobytes of flash, and
    // of stack on the M0).
    match info.location() {
        Some(l) => defmt::error!("panic at {=str}:{=u32}", l.file(), l.line()),
        None => defmt::error!("panic (no location)"),
    }
    exit(status::PANIC)
}

#[defmt::panic_handler]
fn defmt_panic() -> ! {
    exit(status::PANIC)
}

#[exception]
unsafe fn HardFault(frame: &ExceptionFrame) -> ! {
    defmt::error!(
        "HardFault: pc={=u32:#010x} lr={=u32:#010x} xpsr={=u32:#010x}",
        frame.pc(),
        frame.lr(),
        frame.xpsr()
    );
    exit(status::HARD_FAULT)
}

#[exception]
unsafe fn DefaultHandler(irqn: i16) {
    defmt::error!("unexpected exception/interrupt {=i16}", irqn);
    exit(status::UNEXPECTED_IRQ)
}
