//! Cost measurement firmware: instructions and stack per call, on the target, under QEMU with a
//! fixed `-icount` (set by `qemu-run.sh`). Run with `cargo xtask cost` from the repository root
//! (or `cargo run --release --bin cost --target <triple>` here).
//!
//! Each measured call is one `case!` line: a name (letters, digits, `_`) and an expression whose
//! value is passed through `black_box` so it cannot be optimised away, plus a short description.
//! Inputs must also go through `black_box` (constants would be folded through the call).
//! Output lines have the form `cost <name> insns <n> stack <bytes> | <what>`, which
//! `cargo xtask cost` parses.
#![no_std]
#![no_main]

use core::hint::black_box;

use coilwise_firmware_example as fw;
use cortex_m_rt::entry;
use fw::measure::Meter;
use fw::ticks::SysTickClock;

/// Measures one call: `case!(meter, "name", "what it is", expression)`; with
/// `setup { ... }` before the expression, that block runs unmeasured before each of the two runs
/// (for calls that change state).
macro_rules! case {
    ($m:expr, $name:literal, $what:literal, $e:expr) => {{
        let c = $m.cost(&mut || {
            let _ = black_box($e);
        });
        report($name, $what, c);
    }};
    ($m:expr, $name:literal, $what:literal, setup $s:block, $e:expr) => {{
        let c = $m.cost_after(&mut || $s, &mut || {
            let _ = black_box($e);
        });
        report($name, $what, c);
    }};
}

/// The line `cargo xtask cost` parses: `cost <name> insns <n> stack <bytes> | <what>`.
fn report(name: &str, what: &str, c: fw::measure::Cost) {
    defmt::info!(
        "cost {=str} insns {=u32} stack {=u32} | {=str}",
        name,
        c.insns,
        c.stack_bytes,
        what
    );
}

/// 1000 `expf` calls at x = 0.000, 0.001, …, 0.999, summed: the calibration example
/// (TOOLCHAIN.md: ≈ 58 k instructions on the M4F, loop included).
#[inline(never)]
fn expf_x1000() -> f32 {
    let mut acc = 0.0f32;
    let mut i = 0u32;
    while i < 1000 {
        let x = 0.001 * (i as f32);
        acc += libm::expf(black_box(x));
        i += 1;
    }
    acc
}

#[entry]
fn main() -> ! {
    let cp = cortex_m::Peripherals::take().unwrap_or_else(|| fw::exit(fw::status::CHECK_FAILED));
    defmt::info!("coilwise cost measurement on {=str}", fw::BOARD);
    let clock = SysTickClock::start(cp.SYST);
    let mut m = match Meter::calibrate(clock) {
        Ok(m) => m,
        Err(e) => {
            defmt::error!(
                "calibration failed: {} (QEMU needs a fixed -icount shift)",
                e
            );
            fw::exit(fw::status::CHECK_FAILED)
        }
    };
    defmt::info!(
        "calibration: {=u64} ticks per {=u32} instructions, harness overhead {=u64} ticks",
        m.ticks_per_ref_block(),
        fw::measure::REF_INSNS,
        m.overhead_ticks()
    );

    let valve = match fw::scenario::valve_design(1_000_000) {
        Ok(d) => d,
        Err(e) => {
            defmt::error!("demo design rejected: {}", e);
            fw::exit(fw::status::CHECK_FAILED)
        }
    };

    // ---- measured calls: one line each ------------------------------------------------------
    case!(
        m,
        "libm_expf_x1",
        "one libm::expf (x = 0.5)",
        libm::expf(black_box(0.5f32))
    );
    case!(
        m,
        "libm_expf_x1000",
        "1000 libm::expf, loop included (calibration example)",
        expf_x1000()
    );
    case!(
        m,
        "design_budget",
        "timing budget of the demo valve design (DriverDesign::budget)",
        black_box(&valve).budget()
    );
    case!(
        m,
        "tick_budget",
        "firmware tick constants of the demo valve design (DriverDesign::tick_budget)",
        black_box(&valve).tick_budget()
    );
    // TODO(integration): add as the APIs land: one time-to-threshold verdict;
    //   one 64-sample fit + verdict; one scheduler submit; one scheduler poll.
    // ------------------------------------------------------------------------------------------

    defmt::info!("cost done");
    fw::exit(0)
}
