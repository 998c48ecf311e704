//! Cost measurement firmware: instructions and stack per call, on the target, under QEMU with a
//! fixed `-icount` (set by `qemu-run.sh`). Run with `cargo xtask cost` from the repository root
//! (or `cargo run --release --bin cost --target <triple>` here).
//!
//! Each measured call is one `case!` line: a name (letters, digits, `_`) and an expression whose
//! value is kept where the call returned it and passed by reference through `black_box`, so it
//! cannot be optimised away (and is not copied again for the harness: a call's figure holds its
//! result once, as its caller would), plus a short description.
//! Inputs must also go through `black_box` (constants would be folded through the call).
//! Output lines have the form `cost <name> insns <n> stack <bytes> | <what>`, which
//! `cargo xtask cost` parses.
#![no_std]
#![no_main]

use core::hint::black_box;

use core::cell::RefCell;

use coilwise::diagnosis::verdict::{judge_threshold, judge_trace};
use coilwise::diagnosis::{
    Conditions, Criteria, Expected, Finding, FitOptions, Sampling, ThresholdBand, ThresholdReading,
};
use coilwise::schedule::{ChannelId, ChannelLimits, HeatRatings, PinEvent, Request, Scheduler};
use coilwise::{Amps, DriverDesign, Instant, Seconds, Ticks};
use coilwise_firmware_example as fw;
use cortex_m_rt::entry;
use fw::measure::Meter;
use fw::ticks::SysTickClock;

/// Measures one call: `case!(meter, "name", "what it is", expression)`; with
/// `setup { ... }` before the expression, that block runs unmeasured before each of the two runs
/// (for calls that change state).
macro_rules! case {
    ($m:expr, $name:literal, $what:literal, setup $s:block, $e:expr) => {{
        let c = $m.cost_after(&mut || $s, &mut || {
            black_box(&$e);
        });
        report($name, $what, c);
    }};
    ($m:expr, $name:literal, $what:literal, $e:expr) => {{
        let c = $m.cost(&mut || {
            black_box(&$e);
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

/// Inputs of the diagnosis and scheduler cases, prepared unmeasured.
struct Inputs {
    expected: Expected,
    band: ThresholdBand,
    criteria: Criteria,
    sampling: Sampling,
    trace: [u16; 64],
    scheduler: Scheduler<4, 8>,
}

impl Inputs {
    /// The demo valve: its bands, a comparator band at 50 % of pull-in, a 64-sample healthy rise
    /// (closed form at 24 V, 20 °C, 100 µs apart, 0.2 mA per count, with a fixed ±1 count
    /// dither), and a scheduler holding one valve pulse due at tick 2000.
    fn new(valve: &DriverDesign) -> Option<Self> {
        let cond = Conditions::default();
        let expected = Expected::new(valve, &cond).ok()?;
        let threshold = Amps::new(0.5 * valve.circuit.coil().pull_in_current().value());
        let band = ThresholdBand::new(valve, &cond, threshold).ok()?;
        let apc = 0.000_201_4f32;
        let period = Seconds::from_micros(100.0);
        let sampling = Sampling::new(period, apc)
            .and_then(|s| s.with_first_sample(period))
            .and_then(|s| s.with_full_scale(4095.0))
            .and_then(|s| s.with_noise(0.6))
            .ok()?;
        let (i_inf, tau) = (24.0f32 / 72.65, 0.30f32 / 72.65);
        let mut trace = [0u16; 64];
        for (k, c) in trace.iter_mut().enumerate() {
            let t = (k as f32 + 1.0) * 1e-4;
            let dither = [0.3f32, -0.4, 0.1, -0.2, 0.45][k % 5];
            *c = libm::roundf(i_inf * (1.0 - libm::expf(-t / tau)) / apc + dither) as u16;
        }
        let limits = ChannelLimits::from_design(valve, &HeatRatings::default(), None).ok()?;
        let mut scheduler = Scheduler::new([limits; 4], 1, Instant(0)).ok()?;
        scheduler
            .submit(
                Instant(0),
                Request::at(ChannelId(0), Ticks(80_000), Instant(2_000)),
            )
            .ok()?;
        // The measured calls must take their full path: a healthy verdict, not an early exit.
        let criteria = Criteria::default();
        let fit = judge_trace(
            &trace,
            &sampling,
            &expected,
            &criteria,
            &FitOptions::default(),
        );
        let cmp = judge_threshold(
            ThresholdReading::Crossed(Seconds::from_micros(1762.0)),
            &band,
            None,
            &expected,
            &criteria,
        );
        if fit.finding != Finding::Healthy || cmp.finding != Finding::Healthy {
            defmt::error!("cost inputs: {} / {}", fit.finding, cmp.finding);
            return None;
        }
        Some(Self {
            expected,
            band,
            criteria,
            sampling,
            trace,
            scheduler,
        })
    }
}

/// The start-up calls of the core: what a firmware builds from its designs before its loop
/// (channel limits, the scheduler, the diagnosis bands, a driver channel configuration).
#[inline(never)]
fn startup_cases(m: &mut Meter, valve: &DriverDesign) {
    use coilwise_driver::{ChannelConfig, ChannelOptions};
    case!(
        m,
        "limits_from_design",
        "channel limits of the demo valve from its design (ChannelLimits::from_design)",
        ChannelLimits::from_design(black_box(valve), &HeatRatings::default(), None)
    );
    let Ok(limits) = ChannelLimits::from_design(valve, &HeatRatings::default(), None) else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    let four = [limits; 4];
    case!(
        m,
        "sched_new",
        "Scheduler::new, 4 channels x 8 slots, returned by value (the 896-byte result included)",
        Scheduler::<4, 8>::new(black_box(four), 1, Instant(0))
    );
    let slot: RefCell<Option<Scheduler<4, 8>>> = RefCell::new(None);
    case!(
        m,
        "sched_new_in",
        "Scheduler::new_in, 4 channels x 8 slots, built in place in caller-supplied storage",
        Scheduler::new_in(&mut slot.borrow_mut(), black_box(&four), 1, Instant(0))
            .map(|s| s.pending())
    );
    let cond = Conditions::default();
    case!(
        m,
        "expected_new",
        "healthy bands of the demo valve (Expected::new, at start-up per diagnosed channel)",
        Expected::new(black_box(valve), &cond)
    );
    let threshold = Amps::new(0.5 * valve.circuit.coil().pull_in_current().value());
    case!(
        m,
        "threshold_band_new",
        "comparator band at 50 % of pull-in (ThresholdBand::new, at commissioning)",
        ThresholdBand::new(black_box(valve), &cond, black_box(threshold))
    );
    let options = ChannelOptions::new(Ticks(100));
    case!(
        m,
        "channel_config",
        "driver channel configuration of the demo valve (ChannelConfig::from_design)",
        ChannelConfig::from_design(black_box(valve), &options)
    );
}

/// The driver's `service()` on one valve channel with replaying hardware (`fw::fake`): idle,
/// applying one on edge (arming the capture), and collecting and judging a 64-sample rise
/// (fit, comparator, verdict, event). Each measured call gets its state from an unmeasured
/// set-up that moves time on by a second.
#[inline(never)]
fn driver_cases(m: &mut Meter, trace: &[u16; 64]) {
    use coilwise_driver::{ChannelConfig, ChannelHw, Driver, DriverState, Phase, Pulse};
    use fw::fake::{NullPin, NullPwm, ReplaySense};
    let Some(Ok(spec)) = fw::scenario::channel(0) else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    let Ok(cfg) = spec.config() else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    let configs: [ChannelConfig; 1] = [cfg];
    let mut state = DriverState::<1, 8, 8>::new();
    let probe_period = cfg
        .diagnosis
        .map_or(1e-5, |d| d.probe.length.get() as f32 * 1e-6 / 64.0);
    let (i_inf, tau) = (24.0f32 / 72.65, 0.30f32 / 72.65);
    let probe_trace = fw::fake::rise_trace(i_inf, tau, probe_period, 0.000_201_4);
    let Ok(rate) = coilwise::TickRate::new(1_000_000) else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    // Start-up: the driver built on its (caller-supplied) state, then built and commissioned
    // (converter zero from the replayed sense, first diagnostic pulse scheduled). The hardware
    // handles are made inside the measured call, as a firmware's start-up makes them.
    let start_state = RefCell::new(DriverState::<1, 8, 8>::new());
    let new_driver = |st: &mut DriverState<1, 8, 8>| {
        let sense = ReplaySense::new(trace, &probe_trace, 1762, 0.000_201_4);
        let hw = [ChannelHw::new(NullPin, NullPwm, sense)];
        Driver::new(&configs, st, hw, rate, Instant(0), 1).map(|_| ())
    };
    case!(
        m,
        "driver_new",
        "Driver::new: 1 valve channel on replaying hardware, state supplied by the caller",
        new_driver(&mut start_state.borrow_mut())
    );
    case!(
        m,
        "driver_new_commission",
        "Driver::new + commission (converter zero, first diagnostic pulse scheduled)",
        {
            let mut st = start_state.borrow_mut();
            let sense = ReplaySense::new(trace, &probe_trace, 1762, 0.000_201_4);
            let hw = [ChannelHw::new(NullPin, NullPwm, sense)];
            match Driver::new(&configs, &mut st, hw, rate, Instant(0), 1) {
                Ok(mut d) => d.commission(black_box(Instant(0))).is_ok(),
                Err(_) => false,
            }
        }
    );
    let sense = ReplaySense::new(trace, &probe_trace, 1762, 0.000_201_4);
    let hw = [ChannelHw::new(NullPin, NullPwm, sense)];
    let Ok(mut d) = Driver::new(&configs, &mut state, hw, rate, Instant(0), 1) else {
        fw::exit(fw::status::CHECK_FAILED)
    };
    if d.commission(Instant(0)).is_err() {
        fw::exit(fw::status::CHECK_FAILED)
    }
    let mut t = Instant(0);
    for _ in 0..16 {
        t = d.service(t).unwrap_or(t);
        if d.phase() == Phase::Ready {
            break;
        }
    }
    while d.pop_event().is_some() {}
    if d.phase() != Phase::Ready {
        defmt::error!("cost: the replayed channel did not commission");
        fw::exit(fw::status::CHECK_FAILED)
    }
    let drv = RefCell::new(d);
    let now = core::cell::Cell::new(t.after(Ticks(1_000_000)));
    // Moves time on by a second, lets the previous pulse end, drains the events.
    let fresh = |with_pulse: bool| {
        let mut d = drv.borrow_mut();
        let t = now.get().after(Ticks(1_000_000));
        now.set(t);
        let _ = d.service(t);
        while d.pop_event().is_some() {}
        if with_pulse {
            let _ = d.request(t, 0, Pulse::now(Ticks(80_000)));
            let _ = d.pop_event();
        }
    };
    case!(
        m,
        "driver_service_idle",
        "driver service() with nothing due (1 valve channel)",
        setup { fresh(false) },
        drv.borrow_mut().service(black_box(now.get()))
    );
    case!(
        m,
        "driver_service_edge",
        "driver service() applying one on edge and arming the rise capture",
        setup { fresh(true) },
        drv.borrow_mut().service(black_box(now.get()))
    );
    case!(
        m,
        "driver_service_rise",
        "driver service() collecting and judging a 64-sample rise (fit + comparator + event)",
        setup {
            fresh(true);
            let t = now.get();
            let _ = drv.borrow_mut().service(t);
            now.set(t.after(Ticks(6_400)));
        },
        drv.borrow_mut().service(black_box(now.get()))
    );
    let healthy = drv.borrow().last_verdict(0).map(|v| v.finding) == Some(Finding::Healthy);
    if !healthy {
        defmt::error!("cost: the measured rise was not judged healthy");
        fw::exit(fw::status::CHECK_FAILED)
    }
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
    let Some(inputs) = Inputs::new(&valve) else {
        defmt::error!("cost inputs could not be built");
        fw::exit(fw::status::CHECK_FAILED)
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
    case!(
        m,
        "threshold_verdict",
        "one comparator time-to-threshold verdict (judge_threshold, bands precomputed)",
        judge_threshold(
            black_box(ThresholdReading::Crossed(Seconds::from_micros(1762.0))),
            black_box(&inputs.band),
            None,
            black_box(&inputs.expected),
            &inputs.criteria
        )
    );
    case!(
        m,
        "fit_verdict_64",
        "fit + verdict of a 64-sample rise (judge_trace, one refinement)",
        judge_trace(
            black_box(&inputs.trace[..]),
            black_box(&inputs.sampling),
            black_box(&inputs.expected),
            &inputs.criteria,
            &FitOptions::default()
        )
    );
    let sched = RefCell::new(inputs.scheduler.clone());
    case!(
        m,
        "sched_submit",
        "one scheduler submit (4 channels, 8 slots, one pulse queued on another channel)",
        setup { *sched.borrow_mut() = inputs.scheduler.clone() },
        sched.borrow_mut().submit(
            black_box(Instant(1_000)),
            black_box(Request::now(ChannelId(1), Ticks(80_000)))
        )
    );
    let due = RefCell::new(inputs.scheduler.clone());
    let edges = RefCell::new(heapless::Vec::<PinEvent, 4>::new());
    case!(
        m,
        "sched_poll",
        "one scheduler poll emitting one edge (the queued pulse's on edge)",
        setup {
            *due.borrow_mut() = inputs.scheduler.clone();
            edges.borrow_mut().clear();
        },
        due.borrow_mut()
            .poll(black_box(Instant(2_000)), &mut *edges.borrow_mut())
    );
    startup_cases(&mut m, &valve);
    driver_cases(&mut m, &inputs.trace);
    // ------------------------------------------------------------------------------------------

    defmt::info!("cost done");
    fw::exit(0)
}
