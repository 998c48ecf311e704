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
//! Settling: [`SETTLE_TICKS`](coilwise_rp2040_arith::reference::SETTLE_TICKS) = 1.5 ms brings a full-scale step within a quarter count (checked
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
use embedded_hal::pwm::SetDutyCycle;
use rp2040_hal as hal;

use coilwise_rp2040_arith::watch::Threshold;
use hal::gpio::{DynPinId, FunctionSioInput, Interrupt, Pin, PullNone};
use hal::pwm::{FreeRunning, Pwm3, Slice};

use crate::seam::SenseErrorKind;

pub use coilwise_rp2040_arith::reference::{compare_for, REF_STEPS};

/// A comparator output wired to a GPIO input.
pub type ComparatorPin = Pin<DynPinId, FunctionSioInput, PullNone>;

struct Cmp {
    pin: ComparatorPin,
    state: Threshold,
}

/// The comparators of both channels and their reference PWM (slice 3: A → channel 0,
/// B → channel 1). The state of each across a pulse is [`Threshold`]; this type moves the
/// registers.
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
                state: Threshold::new(now),
            }
        });
        Self { reference, cmp }
    }

    fn write_reference(&mut self, ch: usize, compare: Option<u16>) {
        if let Some(c) = compare {
            let _ = match ch {
                0 => self.reference.channel_a.set_duty_cycle(c),
                _ => self.reference.channel_b.set_duty_cycle(c),
            };
        }
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
        let write = c.state.arm(level, now)?;
        self.write_reference(ch, write);
        Ok(())
    }

    /// Sets channel `ch`'s reference for `level` counts ahead of the pulses that will ask for
    /// it (e.g. the trip level the driver chose at commissioning), so that the first of them
    /// finds it settled. Arms nothing.
    pub fn preset(&mut self, ch: usize, level: u16, now: Instant) -> Result<(), SenseErrorKind> {
        let c = self.cmp.get_mut(ch).ok_or(SenseErrorKind::Other)?;
        let write = c.state.preset(level, now)?;
        self.write_reference(ch, write);
        Ok(())
    }

    /// Channel `ch` switched on at `on` (inside the drive's critical section).
    pub fn start(&mut self, ch: usize, on: Instant) {
        if let Some(c) = self.cmp.get_mut(ch) {
            let watch = c.state.edge(on);
            c.pin.set_interrupt_enabled(Interrupt::LevelHigh, watch);
        }
    }

    /// The `IO_IRQ_BANK0` work: timestamps every watching comparator whose output is high.
    pub fn on_interrupt(&mut self, now: Instant) {
        for c in self.cmp.iter_mut() {
            if c.state.watching() && c.pin.interrupt_status(Interrupt::LevelHigh) {
                c.state.trip(now);
                c.pin.set_interrupt_enabled(Interrupt::LevelHigh, false);
            }
        }
    }

    /// Channel `ch`'s reading for the latest pulse: `Ok(Some(t))` tripped `t` after the edge,
    /// `Ok(None)` not (yet) or no level armed; `Busy` when the reference was still settling at
    /// the edge.
    pub fn reading(&self, ch: usize) -> Result<Option<Ticks>, SenseErrorKind> {
        self.cmp
            .get(ch)
            .ok_or(SenseErrorKind::Other)?
            .state
            .reading()
    }
}
