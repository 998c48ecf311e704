//! Example firmware: the greenhouse controller (invented scenario) on the QEMU board, on top of
//! the `coilwise-driver` library.
//!
//! Commissioning (the core's arithmetic against reference values, each channel's converter zero
//! and a diagnostic pulse below pull-in), then a timed programme of pulse requests through the
//! driver, which schedules them safely, captures and judges every rise, and isolates a faulty
//! channel, while the simulated plant injects faults. Exits 0 only when every verdict and
//! request outcome the script demands held and the monitor found no broken constraint on the
//! emitted edges (see `demo.rs`).
#![no_std]
#![no_main]

use core::mem::MaybeUninit;

use coilwise_driver::{ChannelConfig, ChannelHw, TickSource};
use coilwise_firmware_example as fw;
use cortex_m_rt::entry;
use fw::board::{SimBoard, SimHold, SimSense, SimSwitch};
use fw::demo::{self, Checker, Drv};
use fw::scenario::{self, ChannelSpec, CHANNELS, INRUSH_CAP};

/// The driver on the QEMU board.
type Driver = Drv<SimSwitch<'static>, SimHold<'static>, SimSense<'static>>;

/// The driver's working state (channels, scheduler, events, capture buffer), in static memory.
type State = coilwise_driver::DriverState<CHANNELS, { demo::QUEUE }, { demo::EVENTS }>;

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

/// The driver's channel configurations, built one by one straight into static memory (as
/// [`specs`]).
#[inline(never)]
fn configs(specs: &[ChannelSpec; CHANNELS]) -> Option<&'static [ChannelConfig; CHANNELS]> {
    let slot = cortex_m::singleton!(
        : MaybeUninit<[ChannelConfig; CHANNELS]> = MaybeUninit::uninit()
    )?;
    let first = slot.as_mut_ptr().cast::<ChannelConfig>();
    for (i, s) in specs.iter().enumerate() {
        match s.config() {
            // SAFETY: `i < CHANNELS` (one spec per channel), so `first.add(i)` is element `i`
            // of the array in `slot`, which nothing else refers to.
            Ok(cfg) => unsafe { first.add(i).write(cfg) },
            Err(e) => {
                defmt::error!("channel {=usize} set-up failed: {}", i, e);
                return None;
            }
        }
    }
    // SAFETY: every one of the `CHANNELS` elements was written above.
    Some(unsafe { slot.assume_init_ref() })
}

/// The board with the scenario's coils (out of line: its set-up stays out of `main`'s frame).
#[inline(never)]
fn board(specs: &'static [ChannelSpec; CHANNELS]) -> Option<&'static SimBoard> {
    let b = fw::board::take(specs, &demo::SCRIPT);
    if b.is_none() {
        defmt::error!("the simulated plant could not be built");
    }
    b
}

/// The channels' hardware handles on the board.
fn hardware(
    board: &'static SimBoard,
) -> [ChannelHw<SimSwitch<'static>, SimHold<'static>, SimSense<'static>>; CHANNELS] {
    core::array::from_fn(|ch| {
        let (switch, hold, sense) = board.channel(ch);
        ChannelHw::new(switch, hold, sense)
    })
}

/// The driver's working state: a `static` initialised at load time (`State::new` is `const`), so
/// it is never built on the stack; `None` after the first call.
fn state() -> Option<&'static mut State> {
    use core::sync::atomic::{AtomicBool, Ordering};
    static mut STATE: State = State::new();
    static TAKEN: AtomicBool = AtomicBool::new(false);
    critical_section::with(|_| {
        if TAKEN.load(Ordering::Relaxed) {
            return None;
        }
        TAKEN.store(true, Ordering::Relaxed);
        // SAFETY: `TAKEN` makes this the only reference ever made to `STATE`, and no interrupt
        // handler touches it.
        Some(unsafe { &mut *core::ptr::addr_of_mut!(STATE) })
    })
}

/// The board's clock.
fn clock(board: &'static SimBoard) -> fw::board::SimClock<'static> {
    board.clock()
}

/// Gives the plant's monitor the limits the driver enforces (out of line: the copy of the
/// limits and the monitor's own table stay out of `main`'s frame).
#[inline(never)]
fn arm_monitor(board: &SimBoard, drv: &Driver) {
    board
        .plant()
        .monitor
        .set_limits(&drv.limits(), drv.inrush_cap());
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
    let Some(specs) = specs() else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    let Some(configs) = configs(specs) else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    let Some(board) = board(specs) else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    let Some(state) = state() else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    let mut drv = match Driver::new(
        configs,
        state,
        hardware(board),
        clock(board).rate(),
        clock(board).now(),
        INRUSH_CAP,
    ) {
        Ok(d) => d,
        Err(e) => {
            defmt::error!("driver set-up failed: {}", e);
            fw::exit(fw::status::CHECK_FAILED)
        }
    };
    let drv = &mut drv;
    arm_monitor(board, drv);
    fw::log::design(specs, demo::QUEUE);

    let mut checker = Checker::new(board.clock().now());
    let ok_run = fw::run::commission(drv, &mut board.clock(), specs, &mut checker)
        && match fw::run::run(drv, &mut board.clock(), specs, &mut checker) {
            Ok(_) => true,
            Err(e) => {
                defmt::error!("run stopped: {}", e);
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
