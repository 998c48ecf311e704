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

use coilwise_host_tests::{Fault, Magnetics};
use coilwise_rig::hardware::Channels;

use crate::scenario::{rail_name, CHANNELS};
use monitor::{DriveState, Violation};

pub use coilwise_rig::hardware::{MAX_SAMPLES, NS_PER_TICK, PWM_HZ, PWM_MAX_DUTY};

/// Most pulses the monitor's inrush check keeps over one run (more is a violation of its own).
const MONITORED_PULSES: usize = 40;

/// The board's simulated channels (the rig's plant, converters, drive and capture).
pub type Hardware = Channels<CHANNELS, MONITORED_PULSES>;

/// Logs one broken constraint the monitor found.
#[inline(never)]
fn log_violation(v: &Violation) {
    defmt::error!("[monitor] {}", v);
}

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

/// The simulated hardware and world: the rig's channels, the flash page, the fault script.
pub struct Plant {
    /// Plants, converters, drive state, capture, and the edge monitor.
    pub hw: Hardware,
    /// The flash page (survives the simulated reset).
    pub flash: flash::SimFlash,
    script: &'static [Scripted],
    next_event: usize,
}

/// Why the plant could not be built.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub struct BoardError;

impl Plant {
    /// A plant with no coils yet (usable in a `static`; see [`Plant::install`]).
    pub const fn empty() -> Self {
        Self {
            hw: Channels::empty(),
            flash: flash::SimFlash::new(),
            script: &[],
            next_event: 0,
        }
    }

    /// Fits the greenhouse coils (see [`parts`]) at the scenario's nominal rail voltages, one at a
    /// time (so that no copy of the whole plant passes through the stack), with their magnetic
    /// extras (the pump relay's eddy path), and loads `script` (events at 0 ms are applied now).
    #[inline(never)]
    pub fn install(
        &mut self,
        specs: &[crate::scenario::ChannelSpec; CHANNELS],
        script: &'static [Scripted],
    ) -> Result<(), BoardError> {
        for (ch, spec) in specs.iter().enumerate() {
            let magnetics: Magnetics = parts::magnetics(ch);
            self.hw.fit(ch, spec, magnetics).ok_or(BoardError)?;
        }
        self.script = script;
        self.apply_due_events(0);
        Ok(())
    }

    /// Simulated time, ns.
    pub fn now_ns(&self) -> u64 {
        self.hw.now_ns()
    }

    fn apply_due_events(&mut self, upto_ns: u64) {
        while let Some(e) = self.script.get(self.next_event) {
            let at = u64::from(e.at_ms) * 1_000_000;
            if at > upto_ns {
                break;
            }
            match e.what {
                Happening::Fault { channel, fault } => {
                    self.hw.inject(channel, fault);
                    defmt::warn!(
                        "[plant] t={=u32} ms: fault appears on channel {=usize}: {=str}",
                        e.at_ms,
                        channel,
                        fault_name(&fault)
                    );
                }
                Happening::Residual { channel, amps } => {
                    self.hw.leave_current(channel, amps);
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
                    self.hw.set_rail_volts(rail, volts);
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
        if t_ns <= self.hw.now_ns() {
            return;
        }
        loop {
            let next = self
                .script
                .get(self.next_event)
                .map(|e| u64::from(e.at_ms) * 1_000_000)
                .filter(|&at| at <= t_ns);
            self.hw.advance_to(next.unwrap_or(t_ns));
            match next {
                Some(at) => self.apply_due_events(at),
                None => break,
            }
        }
    }

    /// Sets channel `ch`'s switch pin; the monitor judges the edge, the log shows it.
    fn set_pin(&mut self, ch: usize, high: bool) {
        if let Some(d) = self.hw.set_pin(ch, high, log_violation) {
            log_drive(self.hw.now_ns(), ch, d);
        }
    }

    /// Sets channel `ch`'s hold duty; the monitor judges the edge, the log shows it.
    fn set_duty(&mut self, ch: usize, duty: u16) {
        if let Some(d) = self.hw.set_duty(ch, duty, log_violation) {
            log_drive(self.hw.now_ns(), ch, d);
        }
    }

    /// Ends the run: hands the final state to the monitor, which logs its findings and returns
    /// whether every constraint held.
    #[inline(never)]
    pub fn finish(&mut self) -> bool {
        let s = self.hw.monitor.finish(log_violation);
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
