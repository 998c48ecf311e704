//! Example firmware entry point (greenhouse controller demo, invented scenario).
//!
//! Infrastructure stage: logs a banner, checks that logging, time and exit work on this board,
//! and exits 0. The coil application (self-check, diagnostic pulses, scheduled programme) is
//! added on top of `coilwise_firmware_example::hw` in the integration step.
#![no_std]
#![no_main]

use coilwise_firmware_example as fw;
use cortex_m_rt::entry;
use fw::ticks::{SysTickClock, TickSource};

#[entry]
fn main() -> ! {
    // Paint free RAM first so the run's stack high-water mark can be reported at the end.
    fw::measure::paint_free_stack();
    let cp = cortex_m::Peripherals::take().unwrap_or_else(|| fw::exit(fw::status::CHECK_FAILED));
    defmt::info!("coilwise example firmware: greenhouse controller demo (invented scenario)");
    defmt::info!(
        "board {=str}, core clock {=u32} Hz",
        fw::BOARD,
        SysTickClock::CORE_HZ
    );

    let clock = SysTickClock::start(cp.SYST);
    let t0 = clock.now();
    let t1 = clock.now();
    let time_ok = t1.since(t0) > 0 && clock.rate().hz() == SysTickClock::CORE_HZ;
    defmt::info!("tick source running: {=bool}", time_ok);

    // One call into the core: the timing budget of the demo's irrigation valve drive, at a
    // 1 MHz scheduler tick. TODO(integration): the application (self-check, diagnostic pulses,
    // scheduled programme on the simulated plant) replaces this.
    let budget_ok = match fw::scenario::valve_design(1_000_000).and_then(|d| d.budget()) {
        Ok(b) => {
            defmt::info!(
                "valve budget: min on {=u32} ticks, min off {=u32} ticks, pull-in {=u32} ticks, release {=u32} ticks (1 MHz)",
                b.ticks.min_on.get(),
                b.ticks.min_off.get(),
                b.ticks.pull_in.get(),
                b.ticks.release.get()
            );
            defmt::info!(
                "valve worst corner: final current {=f32} A, peak switch voltage {=f32} V",
                b.release_corner.final_current.value(),
                b.release_corner.peak_switch_voltage.value()
            );
            b.ticks.min_on.get() > 0 && b.ticks.min_off.get() > 0
        }
        Err(e) => {
            defmt::error!("valve budget failed: {}", e);
            false
        }
    };

    let ok = time_ok && budget_ok;
    // `~` marks a build-dependent figure; the golden-log comparison masks it.
    defmt::info!(
        "stack high-water mark: ~{=u32} bytes",
        fw::measure::stack_peak_bytes()
    );
    defmt::info!("verdict: {=str}", if ok { "PASS" } else { "FAIL" });
    fw::exit_with_verdict(ok)
}
