//! The board's hardware handles: switch, hold PWM, current sense (ADC and comparator) and
//! clock of the simulated channels, each a thin seam onto the shared [`super::Plant`].

use core::convert::Infallible;

use coilwise::{Instant, TickRate};
use embedded_hal::delay::DelayNs;
use embedded_hal::digital::{ErrorType, OutputPin};
use embedded_hal::pwm::SetDutyCycle;

use super::{SimBoard, MAX_SAMPLES, NS_PER_TICK, PWM_MAX_DUTY};
use crate::measure::note_seam_sp;
use crate::scenario::TICK_HZ;
use coilwise_driver::TickSource;
use coilwise_driver::{Capture, Crossing, CurrentSense, SenseErrorKind, SensePlan, SenseScale};

/// The low-side switch of one simulated channel.
pub struct SimSwitch<'a> {
    pub(super) board: &'a SimBoard,
    pub(super) ch: usize,
}

impl ErrorType for SimSwitch<'_> {
    type Error = Infallible;
}

impl SimSwitch<'_> {
    #[inline(never)]
    fn set(&mut self, high: bool) {
        self.board.plant.borrow_mut().set_pin(self.ch, high);
    }
}

// Every seam method below starts with `note_seam_sp` and is inlined into its caller, so the
// stack pointer recorded is the application's; the plant's work stays out of line (see
// `crate::measure::stack_app_bytes`).

impl OutputPin for SimSwitch<'_> {
    #[inline(always)]
    fn set_low(&mut self) -> Result<(), Infallible> {
        note_seam_sp();
        self.set(false);
        Ok(())
    }

    #[inline(always)]
    fn set_high(&mut self) -> Result<(), Infallible> {
        note_seam_sp();
        self.set(true);
        Ok(())
    }
}

/// The hold PWM of one simulated channel ([`PWM_HZ`], [`PWM_MAX_DUTY`] steps).
pub struct SimHold<'a> {
    pub(super) board: &'a SimBoard,
    pub(super) ch: usize,
    pub(super) duty: u16,
}

impl embedded_hal::pwm::ErrorType for SimHold<'_> {
    type Error = Infallible;
}

impl SimHold<'_> {
    #[inline(never)]
    fn set(&mut self, duty: u16) {
        self.duty = duty.min(PWM_MAX_DUTY);
        self.board.plant.borrow_mut().set_duty(self.ch, self.duty);
    }
}

impl SetDutyCycle for SimHold<'_> {
    #[inline(always)]
    fn max_duty_cycle(&self) -> u16 {
        note_seam_sp();
        PWM_MAX_DUTY
    }

    #[inline(always)]
    fn set_duty_cycle(&mut self, duty: u16) -> Result<(), Infallible> {
        note_seam_sp();
        self.set(duty);
        Ok(())
    }
}

/// The current sense (ADC + comparator) of one simulated channel.
pub struct SimSense<'a> {
    pub(super) board: &'a SimBoard,
    pub(super) ch: usize,
}

impl SimSense<'_> {
    #[inline(never)]
    fn scale_sim(&self) -> SenseScale {
        self.board.plant.borrow().hw.scale(self.ch)
    }

    #[inline(never)]
    fn sample_now_sim(&mut self) -> Result<u16, SenseErrorKind> {
        self.board.plant.borrow_mut().hw.sample_now(self.ch)
    }

    #[inline(never)]
    fn arm_sim(&mut self, plan: &SensePlan) -> Result<(), SenseErrorKind> {
        self.board.plant.borrow_mut().hw.arm(self.ch, plan)
    }

    #[inline(never)]
    fn samples_sim(&mut self, out: &mut [u16]) -> Result<Option<Capture>, SenseErrorKind> {
        self.board.plant.borrow().hw.samples(self.ch, out)
    }

    #[inline(never)]
    fn crossing_sim(&mut self) -> Result<Crossing, SenseErrorKind> {
        self.board.plant.borrow().hw.crossing(self.ch)
    }
}

impl CurrentSense for SimSense<'_> {
    type Error = SenseErrorKind;
    const MAX_SAMPLES: usize = MAX_SAMPLES;

    #[inline(always)]
    fn scale(&self) -> SenseScale {
        note_seam_sp();
        self.scale_sim()
    }

    #[inline(always)]
    fn sample_now(&mut self) -> Result<u16, SenseErrorKind> {
        note_seam_sp();
        self.sample_now_sim()
    }

    #[inline(always)]
    fn arm(&mut self, plan: &SensePlan) -> Result<(), SenseErrorKind> {
        note_seam_sp();
        self.arm_sim(plan)
    }

    #[inline(always)]
    fn samples(&mut self, out: &mut [u16]) -> Result<Option<Capture>, SenseErrorKind> {
        note_seam_sp();
        self.samples_sim(out)
    }

    #[inline(always)]
    fn crossing(&mut self) -> Result<Crossing, SenseErrorKind> {
        note_seam_sp();
        self.crossing_sim()
    }
}

/// Simulated time as a [`TickSource`] (1 µs ticks) and a [`DelayNs`] that advances the plant.
pub struct SimClock<'a> {
    pub(super) board: &'a SimBoard,
}

impl SimClock<'_> {
    #[inline(never)]
    fn now_sim(&self) -> Instant {
        // Truncation to the wrapping 32-bit counter is the intent.
        Instant((self.board.plant.borrow().now_ns() / NS_PER_TICK) as u32)
    }

    #[inline(never)]
    fn delay_sim(&mut self, ns: u32) {
        let mut p = self.board.plant.borrow_mut();
        let t = p.now_ns() + u64::from(ns);
        p.advance_to(t);
    }
}

impl TickSource for SimClock<'_> {
    #[inline(always)]
    fn rate(&self) -> TickRate {
        note_seam_sp();
        TickRate::new(TICK_HZ).unwrap_or_else(|_| crate::exit(crate::status::CHECK_FAILED))
    }

    #[inline(always)]
    fn now(&self) -> Instant {
        note_seam_sp();
        self.now_sim()
    }
}

impl DelayNs for SimClock<'_> {
    #[inline(always)]
    fn delay_ns(&mut self, ns: u32) {
        note_seam_sp();
        self.delay_sim(ns);
    }
}
