//! embedded-hal 1.0 handles onto a shared [`Bench`]: a virtual clock
//! (`DelayNs`), gate pins (`OutputPin`), PWM gates (`SetDutyCycle`) and a
//! current-sense ADC.
//!
//! All handles borrow one [`Rig`] (a `RefCell` around the bench), so a
//! driver can hold a pin and a delay at the same time, as on hardware.
//! Borrowing the bench through [`Rig::bench_mut`] while calling a handle
//! panics (`RefCell` rule): keep such borrows short.

use core::cell::{Ref, RefCell, RefMut};
use core::convert::Infallible;

use embedded_hal::delay::DelayNs;
use embedded_hal::digital::{ErrorType, OutputPin, StatefulOutputPin};
use embedded_hal::pwm::SetDutyCycle;

use crate::bench::Bench;
use crate::observe::SensePoint;
use crate::params::{check, SimError};
use crate::sense::{AdcConfig, Prng};

/// A bench shared by hardware handles.
#[derive(Debug)]
pub struct Rig<const N: usize> {
    cell: RefCell<Bench<N>>,
}

impl<const N: usize> Rig<N> {
    /// Wrap a bench.
    pub const fn new(bench: Bench<N>) -> Self {
        Rig {
            cell: RefCell::new(bench),
        }
    }

    /// Read access to the bench (probes, stats, energy, recording).
    pub fn bench(&self) -> Ref<'_, Bench<N>> {
        self.cell.borrow()
    }

    /// Write access to the bench (faults, supply, recorder).
    pub fn bench_mut(&self) -> RefMut<'_, Bench<N>> {
        self.cell.borrow_mut()
    }

    /// Unwrap the bench.
    pub fn into_inner(self) -> Bench<N> {
        self.cell.into_inner()
    }

    /// A delay provider that advances simulated time.
    pub fn clock(&self) -> VirtualClock<'_, N> {
        VirtualClock { rig: self }
    }

    /// The gate of channel `ch` as a push-pull output (high = switch on).
    pub fn gate(&self, ch: usize) -> Result<GatePin<'_, N>, SimError> {
        check_ch::<N>(ch)?;
        Ok(GatePin { rig: self, ch })
    }

    /// The gate of channel `ch` as a PWM output at `frequency_hz` with duty
    /// resolution `max_duty` (≥ 1). The period is rounded to whole ns.
    /// Frequency domain: (0, 1 MHz]; every edge is simulated, so cost grows
    /// with frequency × time.
    pub fn pwm(
        &self,
        ch: usize,
        frequency_hz: f64,
        max_duty: u16,
    ) -> Result<PwmGate<'_, N>, SimError> {
        check_ch::<N>(ch)?;
        check(
            frequency_hz.is_finite() && frequency_hz > 0.0 && frequency_hz <= 1e9,
            "pwm.frequency_hz",
        )?;
        check(max_duty >= 1, "pwm.max_duty")?;
        let period_ns = libm::round(1e9 / frequency_hz) as u64;
        Ok(PwmGate {
            rig: self,
            ch,
            period_ns: period_ns.max(1),
            max_duty,
            duty: 0,
        })
    }

    /// A current-sense ADC on channel `ch`.
    pub fn adc(&self, ch: usize, cfg: AdcConfig) -> Result<SenseAdc<'_, N>, SimError> {
        check_ch::<N>(ch)?;
        cfg.validate()?;
        Ok(SenseAdc {
            rig: self,
            ch,
            cfg,
            rng: Prng::new(cfg.seed),
        })
    }
}

fn check_ch<const N: usize>(ch: usize) -> Result<(), SimError> {
    if ch < N {
        Ok(())
    } else {
        Err(SimError::NoSuchChannel)
    }
}

/// Virtual time: every delay integrates the plant over that span.
/// Resolution 1 ns; time is a `u64` of ns (≈ 584 years).
#[derive(Debug, Clone, Copy)]
pub struct VirtualClock<'a, const N: usize> {
    rig: &'a Rig<N>,
}

impl<const N: usize> VirtualClock<'_, N> {
    /// Simulated time now, ns.
    pub fn now_ns(&self) -> u64 {
        self.rig.bench().now_ns()
    }

    /// Advance to an absolute time (no-op if in the past).
    pub fn advance_to(&mut self, t_ns: u64) {
        self.rig.bench_mut().advance_to(t_ns);
    }
}

impl<const N: usize> DelayNs for VirtualClock<'_, N> {
    fn delay_ns(&mut self, ns: u32) {
        self.rig.bench_mut().advance_ns(ns as u64);
    }

    fn delay_us(&mut self, us: u32) {
        self.rig.bench_mut().advance_ns(us as u64 * 1_000);
    }

    fn delay_ms(&mut self, ms: u32) {
        self.rig.bench_mut().advance_ns(ms as u64 * 1_000_000);
    }
}

/// A channel's gate as a GPIO. Setting it also ends any PWM on the channel.
#[derive(Debug, Clone, Copy)]
pub struct GatePin<'a, const N: usize> {
    rig: &'a Rig<N>,
    ch: usize,
}

impl<const N: usize> ErrorType for GatePin<'_, N> {
    type Error = Infallible;
}

impl<const N: usize> OutputPin for GatePin<'_, N> {
    fn set_low(&mut self) -> Result<(), Infallible> {
        // The channel index was checked when the pin was made.
        let _ = self.rig.bench_mut().set_gate(self.ch, false);
        Ok(())
    }

    fn set_high(&mut self) -> Result<(), Infallible> {
        let _ = self.rig.bench_mut().set_gate(self.ch, true);
        Ok(())
    }
}

impl<const N: usize> StatefulOutputPin for GatePin<'_, N> {
    fn is_set_high(&mut self) -> Result<bool, Infallible> {
        Ok(self.rig.bench().gate_on(self.ch).unwrap_or(false))
    }

    fn is_set_low(&mut self) -> Result<bool, Infallible> {
        Ok(!self.is_set_high()?)
    }
}

/// A channel's gate driven by a PWM timer: the switch really switches at
/// the carrier frequency (edge-aligned, on at the start of each period).
#[derive(Debug, Clone, Copy)]
pub struct PwmGate<'a, const N: usize> {
    rig: &'a Rig<N>,
    ch: usize,
    period_ns: u64,
    max_duty: u16,
    duty: u16,
}

impl<const N: usize> PwmGate<'_, N> {
    /// Carrier period, ns.
    pub fn period_ns(&self) -> u64 {
        self.period_ns
    }
}

impl<const N: usize> embedded_hal::pwm::ErrorType for PwmGate<'_, N> {
    type Error = Infallible;
}

impl<const N: usize> SetDutyCycle for PwmGate<'_, N> {
    fn max_duty_cycle(&self) -> u16 {
        self.max_duty
    }

    fn set_duty_cycle(&mut self, duty: u16) -> Result<(), Infallible> {
        let duty = duty.min(self.max_duty);
        self.duty = duty;
        let on_ns = (self.period_ns as u128 * duty as u128 / self.max_duty as u128) as u64;
        let _ = self.rig.bench_mut().set_pwm(self.ch, self.period_ns, on_ns);
        Ok(())
    }
}

/// A current-sense ADC as firmware sees it.
#[derive(Debug, Clone)]
pub struct SenseAdc<'a, const N: usize> {
    rig: &'a Rig<N>,
    ch: usize,
    cfg: AdcConfig,
    rng: Prng,
}

impl<const N: usize> SenseAdc<'_, N> {
    /// The converter settings.
    pub fn config(&self) -> &AdcConfig {
        &self.cfg
    }

    fn amps_now(&self) -> f64 {
        let b = self.rig.bench();
        match b.probe(self.ch) {
            Ok(p) => match self.cfg.sense {
                SensePoint::Switch => p.switch_amps,
                SensePoint::Coil => p.coil_amps,
            },
            Err(_) => 0.0,
        }
    }

    /// One conversion now (does not advance time).
    pub fn read(&mut self) -> u16 {
        let a = self.amps_now();
        self.cfg.convert(a, &mut self.rng)
    }

    /// Timer-triggered burst, triggered now: `buf[k]` is converted at
    /// `now + delay + k·interval_ns`, `delay` being the converter's start
    /// latency and jitter ([`AdcConfig::start_delay_ns`]; 0 by default).
    /// Returns with the clock at the last conversion.
    pub fn capture(&mut self, buf: &mut [u16], interval_ns: u64) {
        let delay = self.cfg.start_delay_ns(&mut self.rng);
        let t0 = self.rig.bench().now_ns().saturating_add(delay);
        for (k, slot) in buf.iter_mut().enumerate() {
            let t = t0.saturating_add(interval_ns.saturating_mul(k as u64));
            self.rig.bench_mut().advance_to(t);
            *slot = self.read();
        }
    }

    /// Counts → amperes (code × LSB).
    pub fn counts_to_amps(&self, code: u16) -> f64 {
        code as f64 * self.cfg.amps_per_count()
    }
}
