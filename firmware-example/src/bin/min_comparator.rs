//! Minimal firmware (b): tick constants from the design tool, the comparator verdict and the
//! scheduler — nothing else of the core. `cargo xtask cost` reads its core flash
//! (`core_flash_min_bytes`); it exits 0 when every result is the expected one.
#![no_std]
#![no_main]

use coilwise_firmware_example as fw;
use cortex_m_rt::entry;
use fw::minimal;

#[entry]
fn main() -> ! {
    defmt::info!("minimal firmware: tick constants + comparator verdict + scheduler");
    let Some(expected) = minimal::expected() else {
        defmt::error!("the valve's bands could not be built");
        fw::exit(fw::status::CHECK_FAILED)
    };
    let ok = minimal::scheduler_round() & minimal::comparator_round(&expected);
    fw::exit_with_verdict(ok)
}
