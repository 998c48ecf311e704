//! The QEMU board: the driver's hardware seam (`coilwise_driver::CurrentSense`,
//! `coilwise_driver::TickSource`, embedded-hal pins and PWM) implemented on a simulated coil
//! plant, in simulated time.
//!
//! A real board replaces this module (see `docs/porting.md`); the driver and the rest of the
//! example do not change.
//!
//! - Each channel's coil, switch, clamp and armature is a numerical plant of
//!   `coilwise-host-tests` (one `Bench<1>` per channel, so an idle coil costs nothing while
//!   another one is integrated), driven by the pin and PWM state the application sets.
//! - Time is simulated: [`SimClock`] counts 1 µs ticks of plant time, and its
//!   [`DelayNs`](embedded_hal::delay::DelayNs) advances the plant. The firmware's own computing
//!   takes no simulated time (on a real board, drive the edges from a timer interrupt so that a
//!   fit in the main loop cannot delay them).
//! - The ADC ([`SimSense`]) converts the switch (shunt) current with 12 bits, an amplifier offset
//!   and seeded Gaussian noise, at the instants the armed plan asks for, while time advances (as a
//!   timer-triggered ADC with DMA would). The comparator latches the first crossing of its level
//!   after each switch-on.
//! - A fault script injects faults and supply changes at set times ([`Happening`]).
//! - Every seam method records the stack pointer it is called with
//!   ([`crate::measure::note_seam_sp`]) before handing over to the plant, so the firmware can
//!   report the application's stack without the plant's.
//! - [`Monitor`] (the rig's, `coilwise_rig::monitor`) watches the edges the pins really made and
//!   what the plant did, and reports every broken constraint: the independent check of the
//!   scheduler's output. The board logs what it reports.

pub mod flash;
mod handles;

pub use coilwise_rig::{monitor, parts};

pub use handles::{SimClock, SimHold, SimSense, SimSwitch};

use core::cell::RefCell;

use coilwise_host_tests::{
    AdcConfig, ArmatureState, Bench, Fault, Prng, SensePoint, SolverSettings, Stepping, Supply,
};

use crate::scenario::{rail_name, CHANNELS, TICK_HZ};
use coilwise::Ticks;
use coilwise_driver::SensePlan;
use monitor::{DriveState, PlantView, Violation};

/// Most pulses the monitor's inrush check keeps over one run (more is a violation of its own).
const MONITORED_PULSES: usize = 40;

/// The board's edge monitor.
pub type Monitor = monitor::Monitor<CHANNELS, MONITORED_PULSES>;

/// Logs one broken constraint the monitor found.
#[inline(never)]
fn log_violation(v: &Violation) {
    defmt::error!("[monitor] {}", v);
}

/// Samples one capture can hold.
pub const MAX_SAMPLES: usize = 64;

/// Hold PWM carrier of the simulated timers, Hz (invented; every edge is integrated, so the
/// simulation cost grows with it).
pub const PWM_HZ: u32 = 2_000;

/// Duty resolution of the simulated PWM (`max_duty_cycle`).
pub const PWM_MAX_DUTY: u16 = 1_000;

const NS_PER_TICK: u64 = 1_000_000_000 / TICK_HZ as u64;
const PWM_PERIOD_NS: u64 = 1_000_000_000 / PWM_HZ as u64;

/// Something the fault script does to the simulated hardware.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Happening {
    /// A fault appears on a channel (stays until the end of the run).
    Fault {
        /// The channel.
        channel: usize,
        /// What breaks.
        fault: Fault,
    },
    /// The channel's coil still carries `amps` at its next switch-on, as a pulse soon after a
    /// release leaves it (the driver's own minimum off-times never do here: every clamp of the
    /// scenario brings the current to zero before they end, so the world puts it there).
    Residual {
        /// The channel.
        channel: usize,
        /// Current left at switch-on, A.
        amps: f64,
    },
    /// A bit of the flash page flips (a worn or disturbed cell): `byte ^ mask` at `offset`.
    FlashBitFlip {
        /// Byte offset in the page.
        offset: u16,
        /// Bits flipped.
        mask: u8,
    },
    /// A rail's open-circuit voltage changes (a sag, or its recovery).
    Supply {
        /// The rail (supply group).
        rail: u8,
        /// New voltage, V.
        volts: f64,
    },
}

/// One scripted event of the simulated world.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Scripted {
    /// When, ms of simulated time (0: present at power-up).
    pub at_ms: u32,
    /// What.
    pub what: Happening,
}

/// Solver settings for the demo: adaptive steps of at most 1 ms, tolerances loose enough to keep
/// the M0 run short and tight enough for the converter (1e-6 relative is 0.004 counts at full
/// scale) and the comparator (crossings within a few ns).
fn solver() -> SolverSettings {
    SolverSettings {
        stepping: Stepping::Adaptive {
            rel_tol: 1e-6,
            abs_tol_amps: 1e-7,
            max_step_s: 1e-3,
        },
        ..SolverSettings::default()
    }
}

/// Converter of one channel as built (invented): the scenario's shunt/gain/reference, an
/// amplifier offset of a few counts, and 0.6 counts RMS of noise from a fixed seed.
fn converter(spec: &crate::scenario::ChannelSpec, channel: usize) -> AdcConfig {
    let apc = f64::from(spec.sense.amps_per_count());
    AdcConfig {
        bits: 12,
        full_scale_amps: apc * 4096.0,
        noise_lsb_rms: 0.6,
        offset_lsb: [3.0, 2.0, 4.0, 3.0][channel % 4],
        gain_error: 0.0,
        start_latency_ns: 0,
        start_jitter_ns: 0,
        seed: 0x5EED_0000 + channel as u64,
        sense: SensePoint::Switch,
    }
}

#[derive(Clone, Copy)]
struct CaptureState {
    plan: SensePlan,
    /// Switch-on time of the capture in progress, ns; `None`: not started.
    started: Option<u64>,
    taken: usize,
    buf: [u16; MAX_SAMPLES],
}

/// The simulated hardware: plants, converters, drive state, fault script, monitor.
pub struct Plant {
    benches: [Option<Bench<1>>; CHANNELS],
    adc: [AdcConfig; CHANNELS],
    rng: [Prng; CHANNELS],
    rails: [u8; CHANNELS],
    /// Lowest supply each channel's design allows, V.
    design_min: [f64; CHANNELS],
    pin: [bool; CHANNELS],
    duty: [u16; CHANNELS],
    faulted: [bool; CHANNELS],
    /// Current left at the next switch-on, per channel (script).
    residual: [Option<f64>; CHANNELS],
    /// The flash page (survives the simulated reset).
    pub flash: flash::SimFlash,
    capture: [CaptureState; CHANNELS],
    script: &'static [Scripted],
    next_event: usize,
    now_ns: u64,
    /// The independent check of what the pins did.
    pub monitor: Monitor,
}

/// Why the plant could not be built.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub struct BoardError;

const IDLE_CAPTURE: CaptureState = CaptureState {
    plan: SensePlan {
        first: Ticks(0),
        period: Ticks(1),
        samples: 0,
        trip_level: None,
    },
    started: None,
    taken: 0,
    buf: [0; MAX_SAMPLES],
};

const NO_ADC: AdcConfig = AdcConfig {
    bits: 12,
    full_scale_amps: 1.0,
    noise_lsb_rms: 0.0,
    offset_lsb: 0.0,
    gain_error: 0.0,
    start_latency_ns: 0,
    start_jitter_ns: 0,
    seed: 0,
    sense: SensePoint::Switch,
};

impl Plant {
    /// A plant with no coils yet (usable in a `static`; see [`Plant::install`]).
    pub const fn empty() -> Self {
        Self {
            benches: [const { None }; CHANNELS],
            adc: [NO_ADC; CHANNELS],
            rng: [Prng::new(0); CHANNELS],
            rails: [0; CHANNELS],
            design_min: [0.0; CHANNELS],
            pin: [false; CHANNELS],
            duty: [0; CHANNELS],
            faulted: [false; CHANNELS],
            residual: [None; CHANNELS],
            flash: flash::SimFlash::new(),
            capture: [IDLE_CAPTURE; CHANNELS],
            script: &[],
            next_event: 0,
            now_ns: 0,
            monitor: Monitor::new(),
        }
    }

    /// Fits the greenhouse coils (see [`parts`]) at the scenario's nominal rail voltages, one at a
    /// time (so that no copy of the whole plant passes through the stack), and loads `script`
    /// (events at 0 ms are applied now).
    #[inline(never)]
    pub fn install(
        &mut self,
        specs: &[crate::scenario::ChannelSpec; CHANNELS],
        script: &'static [Scripted],
    ) -> Result<(), BoardError> {
        for (ch, spec) in specs.iter().enumerate() {
            let params = parts::channel(ch).ok_or(BoardError)?;
            let v = f64::from(spec.design.supply.nominal().value());
            self.benches[ch] =
                Some(Bench::single(Supply::ideal(v), params, solver()).map_err(|_| BoardError)?);
            self.adc[ch] = converter(spec, ch);
            self.rng[ch] = Prng::new(self.adc[ch].seed);
            if let Some(b) = self.benches[ch].as_mut() {
                b.set_magnetics(0, parts::magnetics(ch))
                    .map_err(|_| BoardError)?;
            }
            self.rails[ch] = spec.rail;
            self.design_min[ch] = f64::from(spec.design.supply.min().value());
        }
        self.script = script;
        self.apply_due_events(0);
        Ok(())
    }

    /// Simulated time, ns.
    pub fn now_ns(&self) -> u64 {
        self.now_ns
    }

    /// Whether the channel's coil has a scripted fault or its rail is below the design's range
    /// right now (the monitor does not expect such a coil to operate).
    fn degraded(&self, ch: usize) -> bool {
        self.faulted[ch]
            || self.benches[ch]
                .as_ref()
                .is_none_or(|b| b.supply().volts < self.design_min[ch])
    }

    fn view(&self, ch: usize) -> PlantView {
        let Some(b) = self.benches[ch].as_ref() else {
            return PlantView {
                coil_amps: 0.0,
                at_rest: true,
                moved: false,
                operated: false,
                degraded: true,
            };
        };
        let stats = b.stats(0).ok();
        PlantView {
            coil_amps: b.probe(0).map(|p| p.coil_amps).unwrap_or(0.0),
            at_rest: matches!(b.armature(0), Ok(ArmatureState::Released)),
            moved: stats.is_some_and(|s| s.moved_ns.is_some()),
            operated: stats.is_some_and(|s| s.operated_ns.is_some()),
            degraded: self.degraded(ch),
        }
    }

    fn apply_due_events(&mut self, upto_ns: u64) {
        while let Some(e) = self.script.get(self.next_event) {
            let at = u64::from(e.at_ms) * 1_000_000;
            if at > upto_ns {
                break;
            }
            match e.what {
                Happening::Fault { channel, fault } => {
                    if let Some(Some(b)) = self.benches.get_mut(channel) {
                        if b.inject(0, fault).is_ok() {
                            self.faulted[channel] = true;
                        }
                    }
                    defmt::warn!(
                        "[plant] t={=u32} ms: fault appears on channel {=usize}: {=str}",
                        e.at_ms,
                        channel,
                        fault_name(&fault)
                    );
                }
                Happening::Residual { channel, amps } => {
                    if let Some(r) = self.residual.get_mut(channel) {
                        *r = Some(amps);
                    }
                    defmt::warn!(
                        "[plant] t={=u32} ms: channel {=usize} will still carry {=f32} mA at its next switch-on (a pulse soon after a release)",
                        e.at_ms,
                        channel,
                        (amps * 1e3) as f32
                    );
                }
                Happening::FlashBitFlip { offset, mask } => {
                    self.flash.disturb(usize::from(offset), mask);
                    defmt::warn!(
                        "[plant] t={=u32} ms: flash cell disturbed: byte {=u16} of the page, bits {=u8:#04x} flipped",
                        e.at_ms,
                        offset,
                        mask
                    );
                }
                Happening::Supply { rail, volts } => {
                    for ch in 0..CHANNELS {
                        if let (true, Some(b)) = (self.rails[ch] == rail, self.benches[ch].as_mut())
                        {
                            let _ = b.set_supply_volts(volts);
                        }
                    }
                    defmt::warn!(
                        "[plant] t={=u32} ms: {=str} now at {=u32}.{=u32} V",
                        e.at_ms,
                        rail_name(rail),
                        (volts * 10.0) as u32 / 10,
                        (volts * 10.0) as u32 % 10
                    );
                }
            }
            self.next_event += 1;
        }
    }

    /// Advances every plant to `t_ns`, taking due samples and applying due script events.
    pub fn advance_to(&mut self, t_ns: u64) {
        if t_ns <= self.now_ns {
            return;
        }
        loop {
            let next = self
                .script
                .get(self.next_event)
                .map(|e| u64::from(e.at_ms) * 1_000_000)
                .filter(|&at| at <= t_ns);
            let until = next.unwrap_or(t_ns);
            for ch in 0..CHANNELS {
                self.advance_channel(ch, until);
            }
            self.now_ns = until;
            match next {
                Some(at) => self.apply_due_events(at),
                None => break,
            }
        }
    }

    fn advance_channel(&mut self, ch: usize, until: u64) {
        loop {
            let c = &self.capture[ch];
            let Some(on) = c.started else { break };
            if c.taken >= c.plan.samples {
                break;
            }
            let t = on
                + (u64::from(c.plan.first.get()) + c.taken as u64 * u64::from(c.plan.period.get()))
                    * NS_PER_TICK;
            if t > until {
                break;
            }
            let Some(b) = self.benches[ch].as_mut() else {
                return;
            };
            b.advance_to(t);
            let amps = b.probe(0).map(|p| p.switch_amps).unwrap_or(0.0);
            let code = self.adc[ch].convert(amps, &mut self.rng[ch]);
            let c = &mut self.capture[ch];
            c.buf[c.taken] = code;
            c.taken += 1;
        }
        if let Some(b) = self.benches[ch].as_mut() {
            b.advance_to(until);
        }
    }

    fn drive_state(&self, ch: usize) -> DriveState {
        if self.duty[ch] > 0 {
            DriveState::Pwm(self.duty[ch])
        } else if self.pin[ch] {
            DriveState::Full
        } else {
            DriveState::Off
        }
    }

    /// Applies a pin or duty change to the plant: a switch-on edge starts the armed capture
    /// (the comparator of the plant arms itself at every switch-on).
    fn set_drive(&mut self, ch: usize, pin: bool, duty: u16) {
        let before = self.drive_state(ch);
        self.pin[ch] = pin;
        self.duty[ch] = duty.min(PWM_MAX_DUTY);
        let after = self.drive_state(ch);
        if before == after {
            return;
        }
        let view = self.view(ch);
        self.monitor
            .drive(self.now_ns, ch, after, &view, log_violation);
        log_drive(self.now_ns, ch, after);
        let Some(b) = self.benches[ch].as_mut() else {
            return;
        };
        let _ = match after {
            DriveState::Off => b.set_gate(0, false),
            DriveState::Full => b.set_gate(0, true),
            DriveState::Pwm(d) if d >= PWM_MAX_DUTY => b.set_gate(0, true),
            DriveState::Pwm(d) => b.set_pwm(
                0,
                PWM_PERIOD_NS,
                PWM_PERIOD_NS * u64::from(d) / u64::from(PWM_MAX_DUTY),
            ),
        };
        if before == DriveState::Off {
            // The monitor judged the edge above (the driver's constraint); a current left from
            // outside the driver is the world's, put in after it.
            if let Some(amps) = self.residual[ch].take() {
                let _ = b.set_current(0, amps);
            }
            let c = &mut self.capture[ch];
            c.started = (c.plan.samples > 0).then_some(self.now_ns);
            c.taken = 0;
        }
    }

    /// Ends the run: hands the final state to the monitor, which logs its findings and returns
    /// whether every constraint held.
    #[inline(never)]
    pub fn finish(&mut self) -> bool {
        let s = self.monitor.finish(log_violation);
        defmt::info!(
            "[monitor] {=u32} drive changes, {=u32} pulses; most coils in inrush at once: {=usize} (cap {=usize}); violations: {=u32}",
            s.edges,
            s.pulses,
            s.worst_inrush,
            s.inrush_cap,
            s.violations
        );
        s.held
    }
}

/// Logs a drive change of the switch as the plant received it: what the pins did.
#[inline(never)]
fn log_drive(t_ns: u64, ch: usize, d: DriveState) {
    let us = (t_ns / 1_000) as u32;
    let (ms, frac) = (us / 1000, us % 1000);
    match d {
        DriveState::Off => {
            defmt::info!("t={=u32}.{=u32:03} ms  [pins] ch{=usize} off", ms, frac, ch)
        }
        DriveState::Full => {
            defmt::info!("t={=u32}.{=u32:03} ms  [pins] ch{=usize} on", ms, frac, ch)
        }
        DriveState::Pwm(duty) => defmt::info!(
            "t={=u32}.{=u32:03} ms  [pins] ch{=usize} hold PWM at {=u16}/{=u16}",
            ms,
            frac,
            ch,
            duty,
            PWM_MAX_DUTY
        ),
    }
}

/// The plant behind a `RefCell`, shared by the handles (as peripherals share one chip).
pub struct SimBoard {
    plant: RefCell<Plant>,
}

/// The one board: a plant in static memory, set up in place by [`take`].
struct BoardCell(SimBoard);

// SAFETY: the firmware is single-threaded and no interrupt handler touches the board; `take`
// hands out the only reference, once.
unsafe impl Sync for BoardCell {}

static BOARD: BoardCell = BoardCell(SimBoard {
    plant: RefCell::new(Plant::empty()),
});
static TAKEN: core::sync::atomic::AtomicBool = core::sync::atomic::AtomicBool::new(false);

/// The board, with the scenario's coils fitted and `script` loaded; `None` when already taken or
/// when a coil's parameters are invalid.
#[inline(never)]
pub fn take(
    specs: &[crate::scenario::ChannelSpec; CHANNELS],
    script: &'static [Scripted],
) -> Option<&'static SimBoard> {
    use core::sync::atomic::Ordering;
    if TAKEN.load(Ordering::Relaxed) {
        return None;
    }
    TAKEN.store(true, Ordering::Relaxed);
    let board = &BOARD.0;
    board.plant.borrow_mut().install(specs, script).ok()?;
    Some(board)
}

impl SimBoard {
    /// Direct access to the plant (monitor set-up, end of run). Do not hold it across a call of
    /// a handle.
    pub fn plant(&self) -> core::cell::RefMut<'_, Plant> {
        self.plant.borrow_mut()
    }

    /// The handles of channel `ch`: switch, hold PWM, current sense.
    pub fn channel(&self, ch: usize) -> (SimSwitch<'_>, SimHold<'_>, SimSense<'_>) {
        (
            SimSwitch { board: self, ch },
            SimHold {
                board: self,
                ch,
                duty: 0,
            },
            SimSense { board: self, ch },
        )
    }

    /// The flash page (erase, program, read). Do not hold it across a call of a handle.
    pub fn flash(&self) -> core::cell::RefMut<'_, flash::SimFlash> {
        core::cell::RefMut::map(self.plant.borrow_mut(), |p| &mut p.flash)
    }

    /// The board temperature sensor, °C (the simulated coils sit at the board's temperature).
    pub fn temperature(&self) -> f32 {
        parts::WINDING_CELSIUS as f32
    }

    /// The board's clock: tick source and delay.
    pub fn clock(&self) -> SimClock<'_> {
        SimClock { board: self }
    }
}

/// A short name of a plant fault for the log.
pub fn fault_name(f: &Fault) -> &'static str {
    match f {
        Fault::Open => "open wire",
        Fault::Short { .. } => "short across the coil",
        Fault::ShortedTurns { .. } | Fault::ShortedTurnsLumped { .. } => "shorted turns",
        Fault::SeriesResistance { .. } => "corroded connector (series resistance)",
        Fault::StuckArmature => "stuck armature",
        _ => "other fault",
    }
}
