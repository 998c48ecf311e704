//! coilwise on an RP2040: the orchard irrigation station of [`design`] (a 24 V valve and a
//! 12 V dosing-pump relay) on the board of [`board`], driven by `coilwise-driver`.
//!
//! 1. [`setup::setup`] starts the clocks and peripherals and installs the board.
//! 2. The channels are built from their designs ([`configs`]) and claimed once into static
//!    memory; the driver's working state ([`DriverState`]) is a static of `main`, initialised
//!    at load time. The driver borrows both for the life of the program. The driver commissions the channels ([`commission`]:
//!    self-check vectors, converter zeros, one diagnostic pulse per channel, every event logged
//!    as it comes) and the comparator references are set to the trip levels it chose.
//! 3. The driver moves into the TIMER alarm 0 interrupt, which calls `service(now)` and sets
//!    the alarm to the instant it returns; requests from the main loop reach it through a small
//!    queue and a pended interrupt. The board's DMA and GPIO interrupts run at a higher
//!    priority, so a fit in `service` never delays a capture's end or a comparator timestamp.
//!
//! Written for real hardware and never run here: see the README's bring-up checklist before a
//! coil is connected.
#![no_std]
#![no_main]
#![deny(missing_docs)]

mod board;
mod capture;
mod clock;
mod comparator;
mod design;
mod log;
mod seam;
mod setup;

use core::cell::RefCell;

use coilwise::schedule::HoldPlan;
use coilwise::{Amps, Hertz, Ticks};
use coilwise_driver::{
    selfcheck, ChannelConfig, ChannelHw, ChannelOptions, Driver, DriverState, Phase, Pulse, SAMPLES,
};
use critical_section::Mutex;
use defmt_rtt as _;
use embedded_hal::delay::DelayNs as _;
use embedded_hal::digital::InputPin as _;
use heapless::Deque;
use panic_probe as _;
use rp2040_hal as hal;

use hal::fugit::MicrosDurationU32;
use hal::pac::{self, interrupt};
use hal::timer::Alarm as _;

use crate::board::{CHANNELS, HOLD_HZ};
use crate::clock::TimerClock;
use crate::seam::TickSource as _;
use crate::setup::{Hardware, StartError};

/// Second-stage boot loader for the W25Q080-class QSPI flash of most RP2040 boards.
#[link_section = ".boot2"]
#[used]
pub static BOOT2: [u8; 256] = rp2040_boot2::BOOT_LOADER_W25Q080;

/// Pulses pending or in flight the driver keeps.
const QUEUE: usize = 8;
/// Events the driver queues between two drains (one per `service` call here).
const EVENTS: usize = 16;

/// The driver as this board instantiates it: 2 channels, [`QUEUE`] pulses, [`EVENTS`] events,
/// borrowing its configurations and state from static memory.
type Drv = Driver<'static, board::Switch, board::Hold, board::Sense, CHANNELS, QUEUE, EVENTS>;
/// The driver's working state (channels, scheduler, event queue, capture buffer).
type State = DriverState<CHANNELS, QUEUE, EVENTS>;

/// Rise capture sample period of each channel, µs: 64 samples span about two time constants
/// of the valve (τ ≈ 4.1 ms nominal) and of the relay (τ ≈ 0.6 ms nominal).
const RISE_PERIOD: [u32; CHANNELS] = [120, 25];
/// Converter noise the diagnosis assumes, counts RMS: the RP2040 ADC's effective resolution
/// is about 8.7 bits of 12 (RP2040 datasheet, from memory), ≈ 2.9 counts RMS with
/// quantisation; 2.5 counts of it taken as noise.
const ADC_NOISE_COUNTS: f32 = 2.5;
/// The valve holds at this fraction of its pull-in current after pull-in (invented).
const VALVE_HOLD_FRACTION: f32 = 0.55;

/// A request from the main loop to the service interrupt.
#[derive(Clone, Copy)]
enum Ask {
    /// A pulse on a channel.
    Pulse(usize, Pulse),
    /// The operator asks an isolated channel back (its diagnostic pulse decides).
    Reenable(usize),
}

static ASKS: Mutex<RefCell<Deque<Ask, 4>>> = Mutex::new(RefCell::new(Deque::new()));
static HANDOFF: Mutex<RefCell<Option<Service>>> = Mutex::new(RefCell::new(None));

/// What the service interrupt owns.
struct Service {
    drv: Drv,
    alarm: hal::timer::Alarm0,
    clock: TimerClock,
}

/// Channel configurations from the two designs. Each channel's inrush window is made to cover
/// its 64-sample rise capture: with an inrush cap of 1 the scheduler then never switches a
/// second coil on while the single ADC is still capturing the first (a second `arm` would be
/// refused `Busy` and fault its channel).
fn configs() -> Result<[ChannelConfig; CHANNELS], StartError> {
    let valve = design::valve().map_err(|_| StartError::Design)?;
    let relay = design::relay().map_err(|_| StartError::Design)?;
    let hold = HoldPlan {
        current: Amps::new(VALVE_HOLD_FRACTION * valve.circuit.coil().pull_in_current().value()),
        frequency: Hertz::new(HOLD_HZ as f32),
    };
    let valve_opts = ChannelOptions::new(Ticks(RISE_PERIOD[0]))
        .in_group(0)
        .with_hold(hold)
        .with_noise(ADC_NOISE_COUNTS);
    let relay_opts = ChannelOptions::new(Ticks(RISE_PERIOD[1]))
        .in_group(1)
        .with_noise(ADC_NOISE_COUNTS);
    let mut cfgs = [
        ChannelConfig::from_design(&valve, &valve_opts).map_err(|_| StartError::Design)?,
        ChannelConfig::from_design(&relay, &relay_opts).map_err(|_| StartError::Design)?,
    ];
    for (cfg, period) in cfgs.iter_mut().zip(RISE_PERIOD) {
        // The capture's last result lands one conversion (2 µs) after its last sample.
        let capture = Ticks(period * SAMPLES as u32 + period + capture::MIN_PERIOD);
        if cfg.limits.inrush_window().get() < capture.get() {
            cfg.limits = cfg
                .limits
                .with_inrush_window(capture)
                .map_err(|_| StartError::Design)?;
        }
    }
    Ok(cfgs)
}

/// Logs every queued event of the driver, a verdict's estimates beside its finding. Called
/// after every `commission` / `service` call, so a channel's [`Drv::last_verdict`] is the
/// verdict of the `Judged` event just popped (one service call judges at most one
/// measurement per channel).
fn drain(drv: &mut Drv) {
    while let Some(e) = drv.pop_event() {
        log::event(&e, drv.last_verdict(usize::from(e.channel)));
    }
}

/// Commissions the driver at start-up (blocking: one diagnostic pulse per channel, 1.4 ms on
/// the valve and 0.18 ms on the relay, plus the minimum off-times the driver waits for): the self-check vectors logged (the same deterministic values the
/// driver checks), `commission(now)`, then `service` at every instant it asks for until every
/// diagnostic pulse has been judged, waiting on the TIMER in between.
fn commission(drv: &mut Drv, clock: &mut TimerClock) -> Result<(), StartError> {
    log::vectors(&selfcheck::compute());
    let r = drv.commission(clock.now());
    drain(drv);
    if let Err(e) = r {
        defmt::error!("commissioning: {}", e);
        return Err(StartError::Driver);
    }
    while drv.phase() == Phase::Running {
        let r = drv.service(clock.now());
        drain(drv);
        let next = r.map_err(|e| {
            defmt::error!("commissioning: {}", e);
            StartError::Driver
        })?;
        let wait = next.since(clock.now());
        if wait > 0 && drv.phase() == Phase::Running {
            clock.delay_us(wait as u32);
        }
    }
    Ok(())
}

/// Builds and commissions the driver in `state` (its configurations claimed once into static
/// memory), sets the comparator references, hands the driver to the service interrupt.
fn start(hw: Hardware, state: &'static mut State) -> Result<(), StartError> {
    let Hardware {
        handles,
        mut clock,
        mut alarm,
    } = hw;
    // Built at run time (the designs' arithmetic is not const), then moved into a static the
    // driver borrows; the claim succeeds once only.
    let cfgs = configs()?;
    let configs: &'static [ChannelConfig; CHANNELS] =
        cortex_m::singleton!(: [ChannelConfig; CHANNELS] = cfgs).ok_or(StartError::Driver)?;
    let hw = handles.map(|(sw, hold, sense)| ChannelHw::new(sw, hold, sense));
    let mut drv = Drv::new(configs, state, hw, clock.rate(), clock.now(), 1).map_err(|e| {
        defmt::error!("driver set-up: {}", e);
        StartError::Driver
    })?;
    commission(&mut drv, &mut clock)?;
    for ch in 0..CHANNELS {
        if let Some(s) = drv.sense_setup(ch) {
            defmt::info!(
                "ch{=usize}: converter zero {=f32} counts, comparator at {} counts = {=f32} A",
                ch,
                s.zero_counts,
                s.trip_counts,
                s.trip_level.value()
            );
        }
        if let Some(level) = drv.sense_setup(ch).and_then(|s| s.trip_counts) {
            if board::preset_reference(ch, level).is_err() {
                defmt::warn!(
                    "ch{=usize}: comparator level {=u16} not settable",
                    ch,
                    level
                );
            }
        }
    }
    alarm.enable_interrupt();
    critical_section::with(|cs| {
        *HANDOFF.borrow_ref_mut(cs) = Some(Service { drv, alarm, clock });
    });
    // SAFETY: the handler takes its state from HANDOFF and the queue through critical sections.
    unsafe { cortex_m::peripheral::NVIC::unmask(pac::Interrupt::TIMER_IRQ_0) };
    cortex_m::peripheral::NVIC::pend(pac::Interrupt::TIMER_IRQ_0);
    Ok(())
}

/// Passes a request to the service interrupt and runs it now. `false` when the queue is full.
fn ask(a: Ask) -> bool {
    let queued = critical_section::with(|cs| ASKS.borrow_ref_mut(cs).push_back(a).is_ok());
    cortex_m::peripheral::NVIC::pend(pac::Interrupt::TIMER_IRQ_0);
    queued
}

/// The service interrupt: requests first, then `service(now)`, its events logged, the alarm
/// set for the instant it asks (the TIMER alarm compares the same 32-bit low word).
#[interrupt]
fn TIMER_IRQ_0() {
    static mut SERVICE: Option<Service> = None;
    if SERVICE.is_none() {
        *SERVICE = critical_section::with(|cs| HANDOFF.borrow_ref_mut(cs).take());
    }
    let Some(s) = SERVICE.as_mut() else {
        return;
    };
    s.alarm.clear_interrupt();
    while let Some(a) = critical_section::with(|cs| ASKS.borrow_ref_mut(cs).pop_front()) {
        let now = s.clock.now();
        match a {
            // The outcome is queued as an event as well; it is logged below.
            Ask::Pulse(ch, pulse) => {
                let _ = s.drv.request(now, ch, pulse);
            }
            Ask::Reenable(ch) => match s.drv.reenable(now, ch) {
                Ok(()) => defmt::info!("ch{=usize}: re-enable asked, diagnostic pulse due", ch),
                Err(e) => defmt::info!("ch{=usize}: not re-enabled: {}", ch, e),
            },
        }
        drain(&mut s.drv);
    }
    let now = s.clock.now();
    let next = match s.drv.service(now) {
        Ok(next) => next,
        Err(e) => {
            defmt::error!("service: {}", e);
            now.after(Ticks(1_000))
        }
    };
    drain(&mut s.drv);
    let wait = next.since(s.clock.now()).max(0) as u32;
    if s.alarm.schedule(MicrosDurationU32::micros(wait)).is_err() {
        defmt::error!("alarm not set: service stops");
    }
}

/// The irrigation programme (invented): every 10 minutes the valve opens for 2 minutes, and
/// 20 s after it opens the dosing pump runs for 8 s. Each request is refused rather than started
/// more than 30 s late. A press of the re-enable button (held 50 ms) asks every channel back
/// into service; the driver answers "not isolated" for a channel in service.
fn programme(mut clock: TimerClock, mut button: setup::Button) -> ! {
    const CYCLE: u32 = 600_000_000;
    const LATE: Ticks = Ticks(30_000_000);
    let mut cycle_start = clock.now().after(Ticks(5_000_000));
    let mut dosed = true;
    let mut opened = false;
    let mut held_ms = 0u32;
    loop {
        let now = clock.now();
        if button.is_low().unwrap_or(false) {
            held_ms = held_ms.saturating_add(10);
            if held_ms == 50 {
                for ch in 0..CHANNELS {
                    ask(Ask::Reenable(ch));
                }
            }
        } else {
            held_ms = 0;
        }
        if !opened && now.is_at_or_after(cycle_start) {
            opened = ask(Ask::Pulse(0, Pulse::now(Ticks(120_000_000)).within(LATE)));
            dosed = false;
        }
        if opened && !dosed && now.is_at_or_after(cycle_start.after(Ticks(20_000_000))) {
            dosed = ask(Ask::Pulse(1, Pulse::now(Ticks(8_000_000)).within(LATE)));
        }
        if opened && dosed && now.is_at_or_after(cycle_start.after(Ticks(CYCLE))) {
            cycle_start = cycle_start.after(Ticks(CYCLE));
            opened = false;
        }
        // Polled: the programme's instants are seconds apart, the pulses' edges come from the
        // service interrupt, not from here.
        clock.delay_ms(10);
    }
}

#[cortex_m_rt::entry]
fn main() -> ! {
    // The driver's working state, initialised at load time (`State::new` is const) and never
    // built on the stack: cortex-m-rt hands a `static mut` declared here to `main` as a
    // `&'static mut`, safely, because `main` runs once and nothing else can name it.
    static mut STATE: State = State::new();
    let started = setup::setup().and_then(|(hw, button)| {
        let clock = hw.clock;
        start(hw, STATE).map(|()| (clock, button))
    });
    match started {
        Ok((clock, button)) => programme(clock, button),
        Err(e) => {
            defmt::error!("start-up failed: {}; every gate stays off", e);
            loop {
                cortex_m::asm::wfi();
            }
        }
    }
}
