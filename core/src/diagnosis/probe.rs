//! The diagnostic pulse: a start-up check that does not actuate the coil.
//!
//! A pulse shorter than the fastest healthy rise to pull-in cannot move the armature (the force
//! is set by the ampere-turns, hence the current). Sampled across the pulse, the early part of the
//! rise still fixes the slope `k_s·V_d/L` (from its start) and τ (from its curvature), so the
//! verdicts of [`super::verdict::judge_rise`] apply; τ is less precise than from a full rise, and a
//! window too short to fix it gives [`super::verdict::Undetermined::WindowTooShort`].

use super::band::{corners, Expected};
use super::fit::FitOptions;
use super::sample::{Sample, Sampling};
use super::verdict::{judge_trace, Criteria, Verdict};
use crate::design::DriverDesign;
use crate::error::{positive, Error, Param, Why};
use crate::physics::coil::Armature;
use crate::time::Ticks;
use crate::units::{Amps, Seconds};

/// A diagnostic pulse for a design.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Probe {
    /// Pulse length in timer ticks (rounded down: it is a maximum).
    pub length: Ticks,
    /// The same in seconds (`length / tick rate`).
    pub duration: Seconds,
    /// The current the pulse must stay below: `fraction × pull-in`, A (true current).
    pub limit: Amps,
}

impl Probe {
    /// The longest pulse that keeps the current below `fraction` (0 < f < 1) of the pull-in current
    /// at every corner of the design's tolerances and ranges:
    /// `t = min over corners of τ·ln(I∞/(I∞ − f·I_pull))`, rounded down to ticks.
    ///
    /// The fastest corner is the highest supply, lowest inductance and lowest resistance (the
    /// current at a fixed time rises with V and falls with L and R); all 32 corners are evaluated.
    /// A corner that never reaches `f·I_pull` imposes no limit.
    ///
    /// # Errors
    /// `fraction` outside (0, 1): [`Error::Invalid`] ([`Param::Tolerance`]). A pulse shorter than
    /// one tick: [`Error::Invalid`] ([`Param::TickRate`], [`Why::OutOfRange`]). No corner reaching
    /// the limit (the coil never pulls in anywhere): [`Error::Unreachable`].
    pub fn new(design: &DriverDesign, fraction: f32) -> Result<Self, Error> {
        let f = positive(fraction, Param::Tolerance)?;
        if f >= 1.0 {
            return Err(Error::invalid(Param::Tolerance, Why::OutOfRange));
        }
        design.tolerances.validate()?;
        let limit = f * design.circuit.coil().pull_in_current().value();
        let mut shortest = f32::INFINITY;
        let mut highest = 0.0f32;
        for op in corners(design) {
            let rise = design
                .circuit
                .energize(&op, Armature::Released, Amps::new(0.0))?;
            highest = highest.max(rise.asymptote());
            match rise.time_to(limit) {
                Ok(t) => shortest = shortest.min(t.value()),
                Err(Error::Unreachable { .. }) => {}
                Err(e) => return Err(e),
            }
        }
        if !shortest.is_finite() {
            return Err(Error::Unreachable {
                target: limit,
                asymptote: highest,
            });
        }
        let length = design.tick_rate.ticks_at_most(Seconds::new(shortest))?;
        if length.get() == 0 {
            return Err(Error::invalid(Param::TickRate, Why::OutOfRange));
        }
        Ok(Self {
            length,
            duration: design.tick_rate.seconds(length),
            limit: Amps::new(limit),
        })
    }

    /// Sample period for `n` samples spread over the pulse, the first one period after switch-on
    /// and the last at its end: `Δt = duration/n`, s.
    ///
    /// # Errors
    /// `n = 0`: [`Error::Invalid`] ([`Param::Frequency`], [`Why::NotPositive`]).
    pub fn sample_period(&self, n: usize) -> Result<Seconds, Error> {
        if n == 0 {
            return Err(Error::invalid(Param::Frequency, Why::NotPositive));
        }
        Ok(Seconds::new(self.duration.value() / n as f32))
    }

    /// Judges the samples of one probe pulse ([`judge_trace`]): the same bands and criteria as a
    /// full rise, on the early part of it. Samples taken after the pulse ended (later than
    /// `duration` + half a period) are the decay, not the rise, and are left out. Never panics.
    pub fn judge<S: Sample>(
        &self,
        samples: &[S],
        sampling: &Sampling,
        expected: &Expected,
        criteria: &Criteria,
        options: &FitOptions,
    ) -> Verdict {
        let end = self.duration.value() + 0.5 * sampling.period().value();
        let within = samples
            .iter()
            .enumerate()
            .take_while(|(k, _)| sampling.time_of(*k).value() <= end)
            .count();
        // `within` counts samples of `samples`, so the slice always exists.
        let window = samples.get(..within).unwrap_or(samples);
        judge_trace(window, sampling, expected, criteria, options)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnosis::band::tests::valve_design;
    use crate::diagnosis::band::Conditions;
    use crate::diagnosis::verdict::Finding;
    use crate::physics::circuit::OperatingPoint;
    use crate::units::{Celsius, Volts};
    extern crate std;
    use std::vec::Vec;

    #[test]
    fn the_probe_stays_below_its_limit_at_the_fastest_corner() {
        let d = valve_design();
        let p = Probe::new(&d, 0.5).unwrap();
        // Fastest corner worked by hand: 26.4 V, L = 0.27 H, R_w = 180·0.9·(1 − 0.00393·60)
        // = 123.80 Ω, R_on = 123.80 + 0.4 + 0.495 + 0.1 = 124.795 Ω; limit 0.5·15/180 A.
        let (i_inf, tau) = (26.4f64 / 124.795, 0.27f64 / 124.795);
        let limit = 0.5 * 15.0 / 180.0;
        let t = tau * (i_inf / (i_inf - limit)).ln();
        assert!((p.duration.value() as f64) <= t);
        // Rounded down: one more tick would pass the limit's time.
        assert!((p.length.get() + 1) as f64 / 1e6 > t);
        assert!((p.limit.value() as f64 - limit).abs() < 1e-7);
        let op = OperatingPoint {
            supply: Volts::new(26.4),
            temperature: Celsius::new(-40.0),
            resistance_factor: 0.9,
            inductance_factor: 0.9,
            sense_factor: 0.99,
        };
        let rise = d
            .circuit
            .energize(&op, Armature::Released, Amps::new(0.0))
            .unwrap();
        assert!(rise.value_at(p.duration).unwrap() <= p.limit.value());
        assert!(Probe::new(&d, 1.0).is_err());
        assert!(Probe::new(&d, f32::NAN).is_err());
        assert!(p.sample_period(0).is_err());
    }

    #[test]
    fn a_probe_of_a_nominal_coil_is_healthy_and_of_a_shorted_one_is_not() {
        let d = valve_design();
        let p = Probe::new(&d, 0.5).unwrap();
        let n = 64;
        let dt = p.sample_period(n).unwrap();
        let sampling = Sampling::adc(dt, 12, Amps::new(0.25))
            .unwrap()
            .with_first_sample(dt)
            .unwrap()
            .with_noise(0.5)
            .unwrap();
        let cond = Conditions::default();
        let e = Expected::new(&d, &cond).unwrap();
        let trace = |r_w: f64, l: f64| -> Vec<u16> {
            let r_on = r_w + 1.0;
            (1..=n)
                .map(|k| {
                    let t = k as f64 * dt.value() as f64;
                    let i = 24.0 / r_on * -(-t * r_on / l).exp_m1();
                    (i / (0.25 / 4095.0)).round() as u16
                })
                .collect()
        };
        let c = Criteria::default();
        let o = FitOptions::default();
        let v = p.judge(&trace(180.0, 0.30), &sampling, &e, &c, &o);
        assert_eq!(v.finding, Finding::Healthy, "{v:?}");
        let v = p.judge(&trace(90.0, 0.075), &sampling, &e, &c, &o);
        assert_eq!(v.finding, Finding::ShortedTurns, "{v:?}");
    }
}
