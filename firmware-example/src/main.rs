//! Example firmware: the greenhouse controller (invented scenario) on the QEMU board.
//!
//! Start-up self-check (core calculations against reference values, then a diagnostic pulse per
//! channel), then a timed programme of pulse requests through the core's scheduler, with every
//! real pulse's rise measured and classified, while the simulated plant injects faults. Exits 0
//! only when every verdict and request outcome the script demands held and the monitor found no
//! broken constraint on the emitted edges (see `demo.rs`).
#![no_std]
#![no_main]

use core::mem::MaybeUninit;

use coilwise_firmware_example as fw;
use cortex_m_rt::entry;
use fw::app::{Controller, INRUSH_CAP};
use fw::board::{SimBoard, SimClock, SimHold, SimSense, SimSwitch};
use fw::demo::{self, Checker};
use fw::hw::Channel;
use fw::scenario::{self, ChannelSpec, CHANNELS};
use fw::ticks::TickSource;

/// The controller on the QEMU board.
type Ctl = Controller<
    'static,
    SimSwitch<'static>,
    SimHold<'static>,
    SimSense<'static>,
    SimClock<'static>,
    CHANNELS,
>;

/// The scenario's channel designs, built one by one straight into static memory (out of line:
/// the temporaries of building them stay out of `main`'s frame).
#[inline(never)]
fn specs() -> Option<&'static [ChannelSpec; CHANNELS]> {
    let slot = cortex_m::singleton!(
        : MaybeUninit<[ChannelSpec; CHANNELS]> = MaybeUninit::uninit()
    )?;
    let first = slot.as_mut_ptr().cast::<ChannelSpec>();
    for i in 0..CHANNELS {
        let Some(Ok(spec)) = scenario::channel(i) else {
            defmt::error!("the scenario's designs are invalid");
            return None;
        };
        // SAFETY: `i < CHANNELS`, so `first.add(i)` is element `i` of the array in `slot`, which
        // nothing else refers to (`slot` is borrowed mutably).
        unsafe { first.add(i).write(spec) };
    }
    // SAFETY: every one of the `CHANNELS` elements was written above.
    Some(unsafe { slot.assume_init_ref() })
}

/// Builds the board and the controller in static memory, out of line for the same reason.
#[inline(never)]
fn setup() -> Option<(&'static SimBoard, &'static mut Ctl)> {
    let specs = specs()?;
    let Some(board) = fw::board::take(specs, &demo::SCRIPT) else {
        defmt::error!("the simulated plant could not be built");
        return None;
    };
    let hw = core::array::from_fn(|ch| {
        let (switch, hold, sense) = board.channel(ch);
        Channel::new(switch, hold, sense)
    });
    let slot = cortex_m::singleton!(: MaybeUninit<Ctl> = MaybeUninit::uninit())?;
    match Controller::init(slot, specs, hw, board.clock()) {
        Ok(c) => Some((board, c)),
        Err(e) => {
            defmt::error!("controller set-up failed: {}", e);
            None
        }
    }
}

/// Gives the plant's monitor the limits the controller enforces (out of line: the copy of the
/// limits and the monitor's own table stay out of `main`'s frame, which lasts the whole run).
#[inline(never)]
fn arm_monitor(board: &SimBoard, ctl: &Ctl) {
    board.plant().monitor.set_limits(&ctl.limits(), INRUSH_CAP);
}

#[entry]
fn main() -> ! {
    // Paint free RAM first so the run's stack high-water mark can be reported at the end.
    fw::measure::paint_free_stack();
    defmt::info!("coilwise example firmware: greenhouse controller demo (invented scenario)");
    defmt::info!(
        "board {=str} (simulated coil plant in simulated time); 3 x 24 V valves, 1 x 12 V pump relay",
        fw::BOARD
    );
    defmt::info!("results are engineering estimates; real designs follow the datasheets, local codes and licensed practice");

    let Some((board, ctl)) = setup() else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    arm_monitor(board, ctl);
    ctl.log_design();

    let mut checker = Checker::new(board.clock().now());
    let ok_run = match ctl.self_check(&mut checker) {
        Ok(_) => match ctl.run(&demo::STEPS_ONLY, &mut checker) {
            Ok(_) => true,
            Err(e) => {
                defmt::error!("run stopped: {}", e);
                false
            }
        },
        Err(e) => {
            defmt::error!("self-check stopped the firmware: {}", e);
            false
        }
    };
    let ok_monitor = board.plant().finish();
    let ok_check = checker.finish();
    let ok = ok_run && ok_monitor && ok_check;
    // `~` marks a build-dependent figure; the golden-log comparison masks it. The first is the
    // application's own depth at its deepest call into the board (a real board has no simulated
    // plant below it), the second the whole run's, plant included.
    defmt::info!(
        "application stack above the hardware seam: ~{=u32} bytes (seam method frames not included)",
        fw::measure::stack_app_bytes().unwrap_or(0)
    );
    defmt::info!(
        "stack high-water mark: ~{=u32} bytes",
        fw::measure::stack_peak_bytes()
    );
    defmt::info!(
        "verdict: {=str} (expected verdicts and request outcomes: {=str}; constraints on the emitted edges: {=str})",
        if ok { "PASS" } else { "FAIL" },
        if ok_check { "held" } else { "NOT held" },
        if ok_monitor { "held" } else { "NOT held" }
    );
    fw::exit_with_verdict(ok)
}
