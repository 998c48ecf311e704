//! The board: two coil channels on an RP2040, behind the driver's hardware seam.
//!
//! | role | peripheral | channel 0 (24 V valve) | channel 1 (12 V relay) |
//! |---|---|---|---|
//! | gate (switch + hold PWM) | PWM slice 1 / 2, channel A, 20 kHz | GPIO2 | GPIO4 |
//! | sense amplifier → ADC | ADC input, FIFO + DMA channel 0 | GPIO26 (ADC0) | GPIO27 (ADC1) |
//! | comparator reference | PWM slice 3, 122 kHz, RC filtered | GPIO6 (3A) | GPIO7 (3B) |
//! | comparator output | GPIO input, level interrupt | GPIO10 | GPIO11 |
//! | time | TIMER, 1 MHz, low word | — | — |
//!
//! **Switch and hold on one pin.** The gate pin is always in its PWM function; the pad's output
//! override decides what reaches the MOSFET: forced low (off), forced high (full drive) or the
//! slice's output (hold PWM). This is the seam's rule — hold duty > 0 drives the gate, at duty 0
//! the gate follows the switch — made in hardware, and the forced levels take effect on the
//! register write (a compare write would wait for the counter to wrap). While the switch is on,
//! the compare is kept at 100 %, so handing over from full drive to the hold PWM never drops the
//! gate before the first hold period; a hold started from off restarts the slice's counter so the
//! first on-phase begins at once.
//!
//! **Edges and captures in step.** A switch-on edge (off → full or off → hold) is one critical
//! section: start the ADC (`CS.START_MANY`), write the pad override, read the TIMER, arm the
//! comparator interrupt. The ADC start and the gate edge are a few dozen instructions apart
//! (well under a microsecond at 125 MHz).
//!
//! Every handle ([`Switch`], [`Hold`], [`Sense`]) is a channel index into the one [`Board`] in a
//! `critical_section::Mutex`, which the DMA and GPIO interrupt handlers share.

use core::cell::RefCell;
use core::convert::Infallible;

use coilwise::Instant;
use critical_section::Mutex;
use embedded_hal::pwm::SetDutyCycle as _;
use rp2040_hal as hal;

use hal::gpio::{DynPinId, FunctionPwm, OutputOverride, Pin, PullDown};
use hal::pac::{self, interrupt};
use hal::pwm::{FreeRunning, Pwm1, Pwm2, Slice};

use coilwise_rp2040_arith::gate::{self, Gate, Pad};

use crate::capture::Engine;
use crate::comparator::Comparators;
use crate::seam::{Capture, Crossing, CurrentSense, SenseErrorKind, SensePlan, SenseScale};

/// Coil channels on this board.
pub const CHANNELS: usize = 2;
pub use coilwise_rp2040_arith::pwm::{HOLD_HZ, HOLD_TOP, SYS_HZ};

/// A gate pin (PWM function, pulled down so the MOSFET stays off until the pad is driven).
pub type GatePin = Pin<DynPinId, FunctionPwm, PullDown>;

/// The gate PWM slices: channel 0 on slice 1 A, channel 1 on slice 2 A.
pub struct GateSlices {
    /// Channel 0's slice.
    pub ch0: Slice<Pwm1, FreeRunning>,
    /// Channel 1's slice.
    pub ch1: Slice<Pwm2, FreeRunning>,
}

struct Drive {
    pin: GatePin,
    switch_on: bool,
    duty: u16,
}

impl Drive {
    fn gate(&self) -> Gate {
        Gate::of(self.switch_on, self.duty)
    }
}

/// Everything the handles share.
pub struct Board {
    drive: [Drive; CHANNELS],
    slices: GateSlices,
    engine: Engine<CHANNELS>,
    comparators: Comparators,
    scales: [SenseScale; CHANNELS],
}

static BOARD: Mutex<RefCell<Option<Board>>> = Mutex::new(RefCell::new(None));

/// The TIMER's low word (1 MHz), read straight from the register.
pub fn timer_now() -> Instant {
    // SAFETY: a read of TIMERAWL, a read-only free-running counter with no side effects.
    let timer = unsafe { &*pac::TIMER::PTR };
    Instant(timer.timerawl().read().bits())
}

impl Board {
    /// Builds the board from its configured parts (gates low, hold slices at [`HOLD_TOP`] and
    /// enabled, comparator references routed) and installs it; returns the handles of each
    /// channel. `None` if a board is already installed.
    pub fn install(
        gates: [GatePin; CHANNELS],
        mut slices: GateSlices,
        engine: Engine<CHANNELS>,
        comparators: Comparators,
        scales: [SenseScale; CHANNELS],
    ) -> Option<[(Switch, Hold, Sense); CHANNELS]> {
        let _ = slices.ch0.channel_a.set_duty_cycle(0);
        let _ = slices.ch1.channel_a.set_duty_cycle(0);
        let drive = gates.map(|mut pin| {
            pin.set_output_override(OutputOverride::AlwaysLow);
            Drive {
                pin,
                switch_on: false,
                duty: 0,
            }
        });
        let board = Board {
            drive,
            slices,
            engine,
            comparators,
            scales,
        };
        critical_section::with(|cs| {
            let mut slot = BOARD.borrow_ref_mut(cs);
            if slot.is_some() {
                return None;
            }
            *slot = Some(board);
            Some([0, 1].map(|ch| (Switch { ch }, Hold { ch }, Sense { ch })))
        })
    }

    fn set_compare(&mut self, ch: usize, compare: u16, restart: bool) {
        match ch {
            0 => {
                let _ = self.slices.ch0.channel_a.set_duty_cycle(compare);
                if restart {
                    self.slices.ch0.set_counter(HOLD_TOP);
                }
            }
            _ => {
                let _ = self.slices.ch1.channel_a.set_duty_cycle(compare);
                if restart {
                    self.slices.ch1.set_counter(HOLD_TOP);
                }
            }
        }
    }

    /// Applies a switch or duty change to channel `ch`'s gate in the order of
    /// [`gate::step`]; an off → on change starts the armed capture and comparator (see the
    /// module doc).
    fn drive(&mut self, ch: usize, switch_on: bool, duty: u16) {
        let Some(d) = self.drive.get_mut(ch) else {
            return;
        };
        let before = d.gate();
        d.switch_on = switch_on;
        d.duty = duty;
        let Some(st) = gate::step(before, d.gate()) else {
            return;
        };
        if st.compare_first {
            self.set_compare(ch, st.compare, st.restart_counter);
        }
        if st.switch_on_edge {
            self.engine.start(ch);
        }
        self.drive[ch].pin.set_output_override(match st.pad {
            Pad::Low => OutputOverride::AlwaysLow,
            Pad::High => OutputOverride::AlwaysHigh,
            Pad::Pwm => OutputOverride::DontInvert,
        });
        if !st.compare_first {
            self.set_compare(ch, st.compare, st.restart_counter);
        }
        if st.switch_on_edge {
            let on = timer_now();
            self.comparators.start(ch, on);
        }
    }
}

fn with_board<R>(f: impl FnOnce(&mut Board) -> R) -> Option<R> {
    critical_section::with(|cs| BOARD.borrow_ref_mut(cs).as_mut().map(f))
}

/// The low-side switch of one channel (`set_high` = coil at full drive).
pub struct Switch {
    ch: usize,
}

impl embedded_hal::digital::ErrorType for Switch {
    type Error = Infallible;
}

impl embedded_hal::digital::OutputPin for Switch {
    fn set_low(&mut self) -> Result<(), Infallible> {
        with_board(|b| {
            let duty = b.drive[self.ch].duty;
            b.drive(self.ch, false, duty)
        });
        Ok(())
    }

    fn set_high(&mut self) -> Result<(), Infallible> {
        with_board(|b| {
            let duty = b.drive[self.ch].duty;
            b.drive(self.ch, true, duty)
        });
        Ok(())
    }
}

/// The hold PWM of one channel ([`HOLD_HZ`], `max_duty_cycle` = [`HOLD_TOP`] + 1 steps).
pub struct Hold {
    ch: usize,
}

impl embedded_hal::pwm::ErrorType for Hold {
    type Error = Infallible;
}

impl embedded_hal::pwm::SetDutyCycle for Hold {
    fn max_duty_cycle(&self) -> u16 {
        HOLD_TOP + 1
    }

    fn set_duty_cycle(&mut self, duty: u16) -> Result<(), Infallible> {
        with_board(|b| {
            let on = b.drive[self.ch].switch_on;
            b.drive(self.ch, on, duty)
        });
        Ok(())
    }
}

/// The current sense of one channel: ADC capture (FIFO + DMA) and comparator.
pub struct Sense {
    ch: usize,
}

impl CurrentSense for Sense {
    type Error = SenseErrorKind;
    const MAX_SAMPLES: usize = crate::capture::MAX_SAMPLES;

    fn scale(&self) -> SenseScale {
        with_board(|b| b.scales[self.ch]).unwrap_or(SenseScale {
            amps_per_count: 0.0,
            offset_counts: 0,
            full_scale_counts: 4095,
        })
    }

    fn sample_now(&mut self) -> Result<u16, SenseErrorKind> {
        with_board(|b| b.engine.convert_now(self.ch)).unwrap_or(Err(SenseErrorKind::Other))
    }

    fn arm(&mut self, plan: &SensePlan) -> Result<(), SenseErrorKind> {
        with_board(|b| {
            // Check the comparator level before touching the ADC, so a refused plan changes
            // nothing.
            if let Some(level) = plan.trip_level {
                crate::comparator::compare_for(level)?;
            }
            b.engine
                .prepare(self.ch, plan.first, plan.period, plan.samples)?;
            b.comparators.arm(self.ch, plan.trip_level, timer_now())
        })
        .unwrap_or(Err(SenseErrorKind::Other))
    }

    fn samples(&mut self, out: &mut [u16]) -> Result<Option<Capture>, SenseErrorKind> {
        let got =
            with_board(|b| b.engine.collect(self.ch, out)).unwrap_or(Err(SenseErrorKind::Other))?;
        Ok(got.map(|(len, first, period)| Capture { len, first, period }))
    }

    fn crossing(&mut self) -> Result<Crossing, SenseErrorKind> {
        let r =
            with_board(|b| b.comparators.reading(self.ch)).unwrap_or(Err(SenseErrorKind::Other))?;
        Ok(match r {
            Some(t) => Crossing::After(t),
            None => Crossing::NotYet,
        })
    }
}

/// The capture's DMA channel finished: stop the ADC and hand the buffer back.
#[interrupt]
fn DMA_IRQ_0() {
    with_board(|b| b.engine.finish());
}

/// A comparator output went high: timestamp it.
#[interrupt]
fn IO_IRQ_BANK0() {
    let now = timer_now();
    with_board(|b| b.comparators.on_interrupt(now));
}

/// Sets channel `ch`'s comparator reference for a trip level of `level` counts now (see
/// [`Comparators::preset`]); `LevelOutOfRange` above 4095, `Other` without a board.
pub fn preset_reference(ch: usize, level: u16) -> Result<(), SenseErrorKind> {
    with_board(|b| b.comparators.preset(ch, level, timer_now()))
        .unwrap_or(Err(SenseErrorKind::Other))
}

/// NVIC priority of the board's interrupts: the highest, so that a comparator timestamp or the
/// end of a capture is never held up by the application's service interrupt.
pub const BOARD_PRIORITY: u8 = 0x00;

/// Gives the board's interrupts (DMA completion, comparator inputs) [`BOARD_PRIORITY`] and
/// unmasks them in the NVIC.
pub fn enable_interrupts(nvic: &mut cortex_m::peripheral::NVIC) {
    // SAFETY: the handlers above only take the board through its critical-section mutex, so
    // neither a priority change nor unmasking them can break a critical section in progress.
    unsafe {
        nvic.set_priority(pac::Interrupt::DMA_IRQ_0, BOARD_PRIORITY);
        nvic.set_priority(pac::Interrupt::IO_IRQ_BANK0, BOARD_PRIORITY);
        cortex_m::peripheral::NVIC::unmask(pac::Interrupt::DMA_IRQ_0);
        cortex_m::peripheral::NVIC::unmask(pac::Interrupt::IO_IRQ_BANK0);
    }
}
