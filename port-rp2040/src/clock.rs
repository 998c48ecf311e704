//! The tick source: the RP2040 TIMER, a 64-bit counter at 1 MHz (from the watchdog tick, 12 MHz
//! crystal / 12), read as its low word.
//!
//! `TIMERAWL` is read without the `TIMELR`/`TIMEHR` latch, so reading it has no side effect and
//! interrupt handlers may read it at any moment. Its 32 bits wrap every 71.6 minutes, which is
//! what the core's wrap-safe [`Instant`] arithmetic expects. The TIMER's alarms compare the same
//! low word, so an [`Instant`] from the driver schedules an alarm without conversion.

use coilwise::{Instant, TickRate};
use embedded_hal::delay::DelayNs;
use rp2040_hal::Timer;

use crate::seam::TickSource;

/// TIMER tick rate, Hz.
pub const TICK_HZ: u32 = 1_000_000;

/// [`TickSource`] and [`DelayNs`] on the TIMER.
#[derive(Clone, Copy)]
pub struct TimerClock {
    timer: Timer,
    rate: TickRate,
}

impl TimerClock {
    /// The clock on a started TIMER (the watchdog tick must run at 1 MHz, as
    /// `init_clocks_and_plls` sets it up). `None` only if [`TICK_HZ`] were zero.
    pub fn new(timer: Timer) -> Option<Self> {
        Some(Self {
            timer,
            rate: TickRate::new(TICK_HZ).ok()?,
        })
    }
}

impl TickSource for TimerClock {
    fn rate(&self) -> TickRate {
        self.rate
    }

    fn now(&self) -> Instant {
        Instant(self.timer.get_counter_low())
    }
}

impl DelayNs for TimerClock {
    /// Busy-waits at least `ns` (rounded up to whole µs of the TIMER).
    fn delay_ns(&mut self, ns: u32) {
        self.timer.delay_ns(ns);
    }

    fn delay_us(&mut self, us: u32) {
        self.timer.delay_us(us);
    }

    fn delay_ms(&mut self, ms: u32) {
        self.timer.delay_ms(ms);
    }
}
