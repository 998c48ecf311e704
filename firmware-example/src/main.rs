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

use coilwise::Celsius;
use coilwise_driver::{ChannelConfig, ChannelHw, TickSource};
use coilwise_firmware_example as fw;
use cortex_m_rt::entry;
use fw::board::{SimBoard, SimHold, SimSense, SimSwitch};
use fw::demo::{self, Checker, Drv};
use fw::scenario::{self, ChannelSpec, Names, CHANNELS, INRUSH_CAP};

/// The driver on the QEMU board.
type Driver<'a> = Drv<'a, SimSwitch<'static>, SimHold<'static>, SimSense<'static>>;

/// The driver's working state (channels, scheduler, events, capture buffer), in static memory.
type State = coilwise_driver::DriverState<CHANNELS, { demo::QUEUE }, { demo::EVENTS }>;

/// The scenario's channel designs, on the stack of the set-up only: the run needs their names
/// alone (see [`setup`]), so their few hundred bytes are not kept in static memory.
#[inline(never)]
fn specs() -> Option<[ChannelSpec; CHANNELS]> {
    let mut out: [Option<ChannelSpec>; CHANNELS] = [None; CHANNELS];
    for (i, o) in out.iter_mut().enumerate() {
        let Some(Ok(spec)) = scenario::channel(i) else {
            defmt::error!("the scenario's designs are invalid");
            return None;
        };
        *o = Some(spec);
    }
    let [Some(a), Some(b), Some(c), Some(d)] = out else {
        return None;
    };
    Some([a, b, c, d])
}

/// Set-up (out of line, before the run's deepest frames): the designs, the board with its coils,
/// the driver's configurations (static), the design log. Returns the configurations, the board
/// and the channel names.
#[inline(never)]
fn setup() -> Option<(&'static [ChannelConfig; CHANNELS], &'static SimBoard, Names)> {
    let specs = specs()?;
    let board = board(&specs)?;
    // The simulated plant is built (it stands for the board's hardware set-up, with a deep f64
    // frame of its own): from here on the high-water mark measures the application's start-up.
    fw::measure::restart_high_water();
    let configs = configs(&specs)?;
    fw::log::design(&specs, demo::QUEUE);
    Some((configs, board, core::array::from_fn(|i| specs[i].name)))
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
fn board(specs: &[ChannelSpec; CHANNELS]) -> Option<&'static SimBoard> {
    let b = fw::board::take(specs, &demo::SCRIPT);
    if b.is_none() {
        defmt::error!("the simulated plant could not be built");
    }
    b
}

/// The channels' hardware handles.
type Hardware = [ChannelHw<SimSwitch<'static>, SimHold<'static>, SimSense<'static>>; CHANNELS];

/// The channels' hardware handles on the board.
fn hardware(board: &'static SimBoard) -> Hardware {
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
fn arm_monitor(board: &SimBoard, drv: &Driver<'_>) {
    board
        .plant()
        .hw
        .monitor
        .set_limits(&drv.limits(), drv.inrush_cap());
}

/// A driver on `hw` in `state`, the board temperature given (out of line).
#[inline(never)]
fn driver<'a>(
    configs: &'static [ChannelConfig; CHANNELS],
    state: &'a mut State,
    hw: Hardware,
    board: &'static SimBoard,
) -> Option<Driver<'a>> {
    match Driver::new(
        configs,
        state,
        hw,
        clock(board).rate(),
        clock(board).now(),
        INRUSH_CAP,
    ) {
        Ok(mut d) => {
            d.set_board_temperature(Some(Celsius::new(board.temperature())));
            Some(d)
        }
        Err(e) => {
            defmt::error!("driver set-up failed: {}", e);
            None
        }
    }
}

/// Power-up to the end of the programme: commissioning with baseline learning, the records
/// saved to flash, the programme. Returns whether it went as the script demands (`None`: no
/// driver could be built).
#[inline(never)]
fn first_life(
    configs: &'static [ChannelConfig; CHANNELS],
    state: &mut State,
    board: &'static SimBoard,
    specs: &Names,
    checker: &mut Checker,
    learned: &mut [u8; CHANNELS],
) -> Option<bool> {
    let mut owned = driver(configs, state, hardware(board), board)?;
    // The start-up chain's depth: everything built from reset up to here (the designs, the
    // channel configurations with their limits and bands, the design log, the driver) except
    // the simulated plant (see `setup`); commissioning, next, is the first call that reaches the
    // hardware.
    defmt::info!(
        "start-up stack, reset to the driver built: ~{=u32} bytes",
        fw::measure::stack_high_water_since_paint()
    );
    let drv = &mut owned;
    arm_monitor(board, drv);
    defmt::info!(
        "board temperature sensor: {=f32} C (given to the driver for the baselines' copper correction)",
        board.temperature()
    );
    let ok = fw::run::commission(drv, &mut board.clock(), specs, checker)
        && match fw::store::save(drv, &mut board.flash(), specs) {
            Ok(_) => true,
            Err(e) => {
                defmt::error!("flash: {}", e);
                false
            }
        }
        && match fw::run::run(drv, &mut board.clock(), specs, checker) {
            Ok(_) => true,
            Err(e) => {
                defmt::error!("run stopped: {}", e);
                false
            }
        };
    *learned = checker.learned;
    Some(ok)
}

/// When the simulated controller is switched on again, ms after the first power-up (after the
/// script's flash disturbance).
const RESET_AT_MS: u32 = 3_100;

/// The simulated reset: power off until [`RESET_AT_MS`] (the plant keeps its coils, faults and
/// flash; the driver's RAM state is gone), a new driver on the same state memory, the stored
/// baselines offered to it, commissioning (one pulse per channel with an accepted record,
/// judged against it), the records saved again. Returns whether the script's demands held.
#[inline(never)]
fn second_life(
    configs: &'static [ChannelConfig; CHANNELS],
    state: &mut State,
    board: &'static SimBoard,
    specs: &Names,
    checker: &mut Checker,
    learned_before: [u8; CHANNELS],
) -> bool {
    use embedded_hal::delay::DelayNs;
    let mut clk = board.clock();
    let since = clk.now().since(checker.origin).max(0) as u32 / 1000;
    defmt::info!(
        "simulated reset: power off at t={=u32} ms, on again at t={=u32} ms; the driver is re-created from the flash page",
        since,
        RESET_AT_MS
    );
    clk.delay_ms(RESET_AT_MS.saturating_sub(since));
    // The same pins and converters, handed out again (all outputs are off).
    let Some(mut owned) = driver(configs, state, hardware(board), board) else {
        return false;
    };
    let drv = &mut owned;
    let taken = fw::store::load(drv, &board.flash(), specs);
    let ok = fw::run::commission(drv, &mut board.clock(), specs, checker);
    // The flash is not written until the save below: compare each baseline in use with its slot.
    let same: [bool; CHANNELS] = core::array::from_fn(|i| {
        let mut r = [0u8; coilwise::diagnosis::baseline::RECORD_LEN];
        board.flash().read(i * r.len(), &mut r).is_ok() && drv.baseline_record(i) == Some(r)
    });
    checker.after_reset(taken, learned_before, same);
    ok && fw::store::save(drv, &mut board.flash(), specs).is_ok()
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
    let Some((configs, board, names)) = setup() else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    let specs = &names;
    let Some(state) = state() else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    let mut checker = Checker::new(board.clock().now());
    // First life: commissioning learns each channel's baseline, the application keeps the
    // records in flash, then the programme runs.
    let mut learned_before = [0u8; CHANNELS];
    let Some(ok_run) = first_life(
        configs,
        state,
        board,
        specs,
        &mut checker,
        &mut learned_before,
    ) else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    // Simulated reset: the controller restarts from its flash.
    let ok_reset =
        ok_run && second_life(configs, state, board, specs, &mut checker, learned_before);
    let ok_run = ok_run && ok_reset;
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
