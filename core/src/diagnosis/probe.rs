//! The diagnostic pulse: a start-up check that does not actuate the coil.
//!
//! A pulse shorter than the fastest healthy rise to pull-in cannot move the armature (the force
//! is set by the ampere-turns, hence the current). Sampled across the pulse, the early part of the
//! rise still fixes the slope `k_s·V_d/L` (from its start) and τ (from its curvature), so the
//! verdicts of [`super::verdict::judge_rise`] apply; τ is less precise than from a full rise, and a
//! window too short to fix it gives [`super::verdict::Undetermined::WindowTooShort`].

use super::band::{corner, Expected, Span, CORNERS};
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
        let supply = Span {
            min: design.supply.min().value(),
            max: design.supply.max().value(),
        };
        let temperature = Span {
            min: design.temperature.min().value(),
            max: design.temperature.max().value(),
        };
        let mut shortest = f32::INFINITY;
        let mut highest = 0.0f32;
        for index in 0..CORNERS {
            let op = corner(design, supply, temperature, index);
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
        judge_trace(&samples[..within], sampling, expected, criteria, options)
    }
}
