//! Hardware that replays a fixed trace, for the cost probes of the driver (`src/bin/cost.rs`):
//! a switch and a PWM that do nothing, and a current sense whose every capture is the same
//! 64-sample rise and whose comparator always reads the same crossing. Nothing here is used by
//! the demo firmware.

use core::convert::Infallible;

use coilwise::Ticks;
use coilwise_driver::{Capture, Crossing, CurrentSense, SensePlan, SenseScale};

/// A switch output that does nothing.
pub struct NullPin;

impl embedded_hal::digital::ErrorType for NullPin {
    type Error = Infallible;
}

impl embedded_hal::digital::OutputPin for NullPin {
    fn set_low(&mut self) -> Result<(), Infallible> {
        Ok(())
    }
    fn set_high(&mut self) -> Result<(), Infallible> {
        Ok(())
    }
}

/// A PWM that does nothing (1000 duty steps).
pub struct NullPwm;

impl embedded_hal::pwm::ErrorType for NullPwm {
    type Error = Infallible;
}

impl embedded_hal::pwm::SetDutyCycle for NullPwm {
    fn max_duty_cycle(&self) -> u16 {
        1000
    }
    fn set_duty_cycle(&mut self, _duty: u16) -> Result<(), Infallible> {
        Ok(())
    }
}

/// A current sense that returns `trace` for every capture armed with a comparator level (a
/// real pulse) and `probe_trace` for one armed without (a diagnostic pulse), both precomputed,
/// and a crossing `crossing` ticks after switch-on; zero current reads 0 counts. Borrows its
/// traces, so that the handle is as small as a real converter's and moving it (into
/// `Driver::new`) measures the driver, not the replayed data.
pub struct ReplaySense<'a> {
    /// The capture of a real pulse.
    pub trace: &'a [u16; 64],
    /// The capture of a diagnostic pulse.
    pub probe_trace: &'a [u16; 64],
    /// Comparator crossing, ticks after switch-on.
    pub crossing: u32,
    /// Converter scale, A per count.
    pub amps_per_count: f32,
    plan: Option<SensePlan>,
}

impl<'a> ReplaySense<'a> {
    /// A sense replaying `trace`.
    pub const fn new(
        trace: &'a [u16; 64],
        probe_trace: &'a [u16; 64],
        crossing: u32,
        amps_per_count: f32,
    ) -> Self {
        Self {
            trace,
            probe_trace,
            crossing,
            amps_per_count,
            plan: None,
        }
    }
}

impl CurrentSense for ReplaySense<'_> {
    type Error = coilwise_driver::SenseErrorKind;
    const MAX_SAMPLES: usize = 64;

    fn scale(&self) -> SenseScale {
        SenseScale {
            amps_per_count: self.amps_per_count,
            offset_counts: 0,
            full_scale_counts: 4095,
        }
    }

    fn sample_now(&mut self) -> Result<u16, Self::Error> {
        Ok(0)
    }

    fn arm(&mut self, plan: &SensePlan) -> Result<(), Self::Error> {
        self.plan = Some(*plan);
        Ok(())
    }

    fn samples(&mut self, out: &mut [u16]) -> Result<Option<Capture>, Self::Error> {
        let Some(p) = self.plan else { return Ok(None) };
        let n = p.samples.min(64);
        let dst = out
            .get_mut(..n)
            .ok_or(coilwise_driver::SenseErrorKind::BufferLength)?;
        let src = if p.trip_level.is_some() {
            self.trace
        } else {
            self.probe_trace
        };
        dst.copy_from_slice(&src[..n]);
        Ok(Some(Capture {
            len: n,
            first: p.first,
            period: p.period,
        }))
    }

    fn crossing(&mut self) -> Result<Crossing, Self::Error> {
        Ok(Crossing::After(Ticks(self.crossing)))
    }
}

/// 64 samples of a first-order rise `i∞·(1 − e^(−t/τ))` at `t = (k + 1)·period`, in counts of
/// `apc` amperes, with a fixed ±0.45-count dither (the cost probes' healthy valve trace).
pub fn rise_trace(i_inf: f32, tau: f32, period: f32, apc: f32) -> [u16; 64] {
    let mut trace = [0u16; 64];
    for (k, c) in trace.iter_mut().enumerate() {
        let t = (k as f32 + 1.0) * period;
        let dither = [0.3f32, -0.4, 0.1, -0.2, 0.45][k % 5];
        *c = libm::roundf(i_inf * (1.0 - libm::expf(-t / tau)) / apc + dither) as u16;
    }
    trace
}
