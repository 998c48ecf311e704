//! The comparator path: an external comparator per channel, its threshold from a filtered PWM
//! output, its output timestamped by a GPIO level interrupt that reads the 1 MHz TIMER.
//!
//! The RP2040 has no analog comparator and no DAC. Each channel's comparator (an external part
//! with push-pull output and a few mV of hysteresis, see the README's wiring) compares the sense
//! amplifier's output (the same node the ADC converts) with a reference made by one channel of
//! PWM slice 3 at 122 kHz (TOP = 1023, 10 bits) through a two-stage RC filter (1 kΩ / 100 nF,
//! then 10 kΩ / 10 nF; see [`coilwise_rp2040_arith::reference`]). A trip level of `L`
//! converter counts is compare value `round(L/4)` of 1024 (`L/4096` of the 3.3 V I/O rail), so
//! the level is set to within ±2 counts (±0.05 % of full scale); the ADC reference and the I/O
//! rail must be the same 3.3 V for the two scales to agree (the bring-up checklist measures
//! both).
//!
//! Settling: [`SETTLE_TICKS`] = 1.5 ms brings a full-scale step within a quarter count (checked
//! in the arithmetic crate against the ladder's exact two-pole step response). A switch-on edge
//! sooner than that after a level change gets no comparator reading: `crossing` answers `Busy`
//! for that pulse rather than a time against a moving threshold. The driver treats every sense
//! error as a hardware fault of the channel, so `main` presets each reference to the trip level
//! the driver chose at commissioning ([`Comparators::preset`]) before any real pulse.
//!
//! Timestamp: at the switch-on edge the channel's input pin gets a level-high interrupt
//! (`IO_IRQ_BANK0`); the handler reads the TIMER's low word and stores `t − t_on`, then masks
//! the pin. A level interrupt (not an edge) also reports a comparator that is already high at
//! switch-on, as a crossing at 0. The reading is late by the interrupt latency (≈ 1 µs at
//! 125 MHz with nothing of higher priority running) and rounds down to whole µs.

use coilwise::{Instant, Ticks};
use rp2040_hal as hal;

use embedded_hal::pwm::SetDutyCycle;
use hal::gpio::{DynPinId, FunctionSioInput, Interrupt, Pin, PullNone};
use hal::pwm::{FreeRunning, Pwm3, Slice};

use crate::seam::SenseErrorKind;

pub use coilwise_rp2040_arith::reference::{compare_for, REF_STEPS, SETTLE_TICKS};

/// A comparator output wired to a GPIO input.
pub type ComparatorPin = Pin<DynPinId, FunctionSioInput, PullNone>;

/// What one channel's comparator is doing.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Watch {
    /// No trip level armed for this pulse.
    Off,
    /// Armed: watch from the next switch-on edge.
    Armed,
    /// The reference had not settled at the edge: no reading for this pulse.
    Unsettled,
    /// Watching since the edge at `on`.
    Since { on: Instant },
    /// Tripped this many ticks after the edge.
    Tripped(Ticks),
}

struct Cmp {
    pin: ComparatorPin,
    level: Option<u16>,
    /// The reference is settled from this instant on.
    ready_at: Instant,
    watch: Watch,
}

/// The comparators of both channels and their reference PWM (slice 3: A → channel 0,
/// B → channel 1).
pub struct Comparators {
    reference: Slice<Pwm3, FreeRunning>,
    cmp: [Cmp; 2],
}

impl Comparators {
    /// The comparator inputs and the reference slice (already configured for [`REF_STEPS`] and
    /// routed to its pins); both references start at 0 V.
    pub fn new(
        mut reference: Slice<Pwm3, FreeRunning>,
        pins: [ComparatorPin; 2],
        now: Instant,
    ) -> Self {
        let _ = reference.channel_a.set_duty_cycle(0);
        let _ = reference.channel_b.set_duty_cycle(0);
        let cmp = pins.map(|pin| {
            pin.set_interrupt_enabled(Interrupt::LevelHigh, false);
            Cmp {
                pin,
                level: None,
                ready_at: now,
                watch: Watch::Off,
            }
        });
        Self { reference, cmp }
    }

    /// Arms channel `ch`'s comparator at `level` counts for the next switch-on edge (`None`:
    /// no reading). A changed level re-programs the reference and restarts its settling time.
    pub fn arm(
        &mut self,
        ch: usize,
        level: Option<u16>,
        now: Instant,
    ) -> Result<(), SenseErrorKind> {
        let c = self.cmp.get_mut(ch).ok_or(SenseErrorKind::Other)?;
        c.pin.set_interrupt_enabled(Interrupt::LevelHigh, false);
        let Some(level) = level else {
            c.watch = Watch::Off;
            return Ok(());
        };
        let compare = compare_for(level)?;
        if c.level != Some(level) {
            let _ = match ch {
                0 => self.reference.channel_a.set_duty_cycle(compare),
                _ => self.reference.channel_b.set_duty_cycle(compare),
            };
            c.level = Some(level);
            c.ready_at = now.after(Ticks(SETTLE_TICKS));
        }
        c.watch = Watch::Armed;
        Ok(())
    }

    /// Sets channel `ch`'s reference for `level` counts ahead of the pulses that will ask for
    /// it (e.g. the trip level the driver chose at commissioning), so that the first of them
    /// finds it settled. Arms nothing.
    pub fn preset(&mut self, ch: usize, level: u16, now: Instant) -> Result<(), SenseErrorKind> {
        let watch = self.cmp.get(ch).ok_or(SenseErrorKind::Other)?.watch;
        self.arm(ch, Some(level), now)?;
        self.cmp[ch].watch = watch;
        Ok(())
    }

    /// Channel `ch` switched on at `on` (inside the drive's critical section).
    pub fn start(&mut self, ch: usize, on: Instant) {
        let Some(c) = self.cmp.get_mut(ch) else {
            return;
        };
        match c.watch {
            Watch::Armed if on.is_at_or_after(c.ready_at) => {
                c.watch = Watch::Since { on };
                c.pin.set_interrupt_enabled(Interrupt::LevelHigh, true);
            }
            Watch::Armed => c.watch = Watch::Unsettled,
            // A new pulse without a new plan: the old reading is not this pulse's.
            Watch::Tripped(_) | Watch::Since { .. } | Watch::Unsettled => {
                c.pin.set_interrupt_enabled(Interrupt::LevelHigh, false);
                c.watch = Watch::Off;
            }
            Watch::Off => {}
        }
    }

    /// The `IO_IRQ_BANK0` work: timestamps every watching comparator whose output is high.
    pub fn on_interrupt(&mut self, now: Instant) {
        for c in self.cmp.iter_mut() {
            if let Watch::Since { on } = c.watch {
                if c.pin.interrupt_status(Interrupt::LevelHigh) {
                    c.pin.set_interrupt_enabled(Interrupt::LevelHigh, false);
                    c.watch = Watch::Tripped(Ticks(now.since(on).max(0) as u32));
                }
            }
        }
    }

    /// Channel `ch`'s reading for the latest pulse: `Ok(Some(t))` tripped `t` after the edge,
    /// `Ok(None)` not (yet) or no level armed; `Busy` when the reference was still settling at
    /// the edge.
    pub fn reading(&self, ch: usize) -> Result<Option<Ticks>, SenseErrorKind> {
        match self.cmp.get(ch).map(|c| c.watch) {
            Some(Watch::Tripped(t)) => Ok(Some(t)),
            Some(Watch::Unsettled) => Err(SenseErrorKind::Busy),
            Some(_) => Ok(None),
            None => Err(SenseErrorKind::Other),
        }
    }
}
