//! One call for a whole driver design: the timing budget and stress figures firmware needs.
//!
//! Corners. Every figure is evaluated at the nominal point and at two worst corners, chosen by the
//! monotonicity of the closed forms (checked by brute force over all 16 corners in the tests):
//!
//! - **pull-in corner**: hottest winding, resistance at +tolerance, lowest supply, inductance at
//!   +tolerance, sense at +tolerance. Pull-in time `t = (L·I_p/V)·g(I_p·R/V)` with
//!   `g(x) = −ln(1−x)/x` increasing, so t rises with R and L and falls with V.
//! - **release corner**: coldest winding, resistance at −tolerance, highest supply, inductance at
//!   +tolerance, sense at −tolerance. The switch-off current `I₀ = V/R_on` is highest, so stored
//!   energy, clamp energy, peak voltage and decay times are all largest.
//!
//! The RC snubber breaks the second rule for its *times*: its pre-charged capacitor drives a slow
//! tail of about `I₀·R/(R + R_s)` decaying with `C·(R + R_s)`, so its release is longest with a hot,
//! high-resistance winding and low inductance. The release corner still carries its worst stress
//! (peak voltage, energy), but for a snubber [`DriverDesign::budget`] takes the release time and
//! off-time as the maximum over all [`CORNER_COUNT`] corners (about 30× the work of the budget of a
//! first-order clamp).

use crate::error::Error;
use crate::physics::circuit::{
    Circuit, OperatingPoint, Resolved, SupplyRange, TemperatureRange, Tolerances,
};
use crate::physics::clamp::{EnergySplit, Release};
use crate::physics::coil::Armature;
use crate::physics::hold::Hold;
use crate::physics::off_time::{off_time_from_parts, OffTime, OffTimeNeeds};
use crate::physics::repetition::{clamp_average_power, max_repetition_rate};
use crate::time::TickRate;
use crate::units::{Amps, Hertz, Seconds, Volts, Watts};

mod figures;

pub(crate) use figures::{BudgetTimes, FigureSlots};
pub use figures::{Figures, TickBudget, TimingBudget};

/// A complete driver design: the circuit, the ranges it must work over, and the firmware's timer.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub struct DriverDesign {
    /// Coil, switch, topology, sense, wiring, clamp.
    pub circuit: Circuit,
    /// Supply range.
    pub supply: SupplyRange,
    /// Winding temperature range.
    pub temperature: TemperatureRange,
    /// Part tolerances.
    pub tolerances: Tolerances,
    /// Firmware timer rate.
    pub tick_rate: TickRate,
    /// Mechanical operate allowance: armature travel after the current reaches pull-in, s.
    pub operate_allowance: Seconds,
    /// Mechanical release allowance: armature travel after the current falls below drop-out, s.
    pub release_allowance: Seconds,
    /// Current the coil must decay to before the next pulse, A (0 = fully at rest).
    pub residual_current: Amps,
    /// Planned pulse length and repetition rate (for clamp power), if known.
    pub duty: Option<(Seconds, Hertz)>,
    /// Clamp average-power rating, if the clamp has one to respect.
    pub clamp_rating: Option<Watts>,
}

impl DriverDesign {
    /// A design with zero tolerances, zero mechanical allowances, full decay to 0 A before the next
    /// pulse, and no duty or clamp rating; set the public fields to refine it.
    pub fn new(
        circuit: Circuit,
        supply: SupplyRange,
        temperature: TemperatureRange,
        tick_rate: TickRate,
    ) -> Self {
        Self {
            circuit,
            supply,
            temperature,
            tolerances: Tolerances::default(),
            tick_rate,
            operate_allowance: Seconds::new(0.0),
            release_allowance: Seconds::new(0.0),
            residual_current: Amps::new(0.0),
            duty: None,
            clamp_rating: None,
        }
    }

    /// The nominal point: nominal supply, mid-range winding temperature, nominal parts.
    pub fn nominal_point(&self) -> OperatingPoint {
        let t = 0.5 * (self.temperature.min().value() + self.temperature.max().value());
        OperatingPoint::new(self.supply.nominal(), crate::units::Celsius::new(t))
    }

    /// The worst pull-in corner (see the module docs).
    pub fn pull_in_corner(&self) -> OperatingPoint {
        let t = &self.tolerances;
        OperatingPoint {
            supply: self.supply.min(),
            temperature: self.temperature.max(),
            resistance_factor: 1.0 + t.resistance,
            inductance_factor: 1.0 + t.inductance,
            sense_factor: 1.0 + t.sense,
        }
    }

    /// The worst release corner (see the module docs).
    pub fn release_corner(&self) -> OperatingPoint {
        let t = &self.tolerances;
        OperatingPoint {
            supply: self.supply.max(),
            temperature: self.temperature.min(),
            resistance_factor: 1.0 - t.resistance,
            inductance_factor: 1.0 + t.inductance,
            sense_factor: 1.0 - t.sense,
        }
    }

    /// Corner `index` (0 ≤ index < [`CORNER_COUNT`]) of the tolerance box: bit 0 supply (min/max),
    /// bit 1 winding temperature (min/max), bit 2 resistance (−/+ tolerance), bit 3 inductance
    /// (−/+), bit 4 sense (−/+). `None` past the last corner.
    pub fn corner(&self, index: u32) -> Option<OperatingPoint> {
        if index >= CORNER_COUNT {
            return None;
        }
        let t = &self.tolerances;
        let pick = |bit: u32, lo: f32, hi: f32| if index & bit == 0 { lo } else { hi };
        Some(OperatingPoint {
            supply: Volts::new(pick(
                1,
                self.supply.min().value(),
                self.supply.max().value(),
            )),
            temperature: crate::units::Celsius::new(pick(
                2,
                self.temperature.min().value(),
                self.temperature.max().value(),
            )),
            resistance_factor: pick(4, 1.0 - t.resistance, 1.0 + t.resistance),
            inductance_factor: pick(8, 1.0 - t.inductance, 1.0 + t.inductance),
            sense_factor: pick(16, 1.0 - t.sense, 1.0 + t.sense),
        })
    }

    /// Checks the design's own fields, the one validation that [`DriverDesign::figures`],
    /// [`DriverDesign::budget`], [`DriverDesign::tick_budget`] and
    /// [`DriverDesign::hold_at_corners`] share: tolerances (see [`Tolerances::validate`]);
    /// mechanical allowances and residual current finite and ≥ 0; a planned duty with
    /// `t_on ≥ 0`, `f ≥ 0` (finite) and `t_on·f ≤ 1`; a clamp rating finite and > 0.
    ///
    /// # Errors
    /// [`Error::Invalid`] naming the field: [`crate::Param::Tolerance`], [`crate::Param::Time`],
    /// [`crate::Param::Current`], [`crate::Param::Frequency`], [`crate::Param::Duty`],
    /// [`crate::Param::PowerRating`].
    pub fn validate(&self) -> Result<(), Error> {
        use crate::error::{non_negative, positive, Param};
        self.tolerances.validate()?;
        non_negative(self.operate_allowance.value(), Param::Time)?;
        non_negative(self.release_allowance.value(), Param::Time)?;
        non_negative(self.residual_current.value(), Param::Current)?;
        if let Some((on, f)) = self.duty {
            let on = non_negative(on.value(), Param::Time)?;
            let f = non_negative(f.value(), Param::Frequency)?;
            crate::physics::drive::duty_fraction(on * f)?;
        }
        if let Some(p) = self.clamp_rating {
            positive(p.value(), Param::PowerRating)?;
        }
        Ok(())
    }

    /// Every figure at one operating point, the coil switched off from its final current.
    ///
    /// # Errors
    /// As [`DriverDesign::validate`]; invalid inputs; a figure that overflows f32.
    pub fn figures(&self, op: &OperatingPoint) -> Result<Figures, Error> {
        self.validate()?;
        self.figures_of_valid(op)
    }

    /// [`DriverDesign::figures`] of a design already validated (the budget validates once).
    fn figures_of_valid(&self, op: &OperatingPoint) -> Result<Figures, Error> {
        let mut f = Figures::UNSET;
        self.figures_into(op, &mut f)?;
        Ok(f)
    }

    /// [`DriverDesign::figures_of_valid`] written into `out` (every field; left partly written on
    /// an error), in place, so that the budget's three figures are built where they end up
    /// instead of in temporaries moved up through the callers (stack). The rise half and the
    /// release half each have a frame of their own, one after the other: only the resolved
    /// point is carried from one to the other.
    #[inline(always)]
    fn figures_into(&self, op: &OperatingPoint, out: &mut Figures) -> Result<(), Error> {
        let resolved = self.rise_into(op, out)?;
        self.release_into(&resolved, out.final_current, out)
    }

    /// The rise half of [`DriverDesign::figures_into`]: the point resolved, and the rise's
    /// figures written into `out`; returns the resolved point.
    #[inline(never)]
    fn rise_into(&self, op: &OperatingPoint, out: &mut Figures) -> Result<Resolved, Error> {
        let c = &self.circuit;
        let resolved = c.resolve(op)?;
        out.point = *op;
        let rise = c.energize_resolved(&resolved, Armature::Released, Amps::new(0.0))?;
        let final_current = Amps::new(rise.asymptote());
        out.final_current = final_current;
        out.tau_on = rise.tau();
        out.pull_in_time = match rise.time_to(c.coil().pull_in_current().value()) {
            Ok(t) => Some(t),
            Err(Error::Unreachable { .. }) => None,
            Err(e) => return Err(e),
        };
        out.pull_in_margin =
            crate::physics::circuit::pull_in_margin_of(final_current, c.coil().pull_in_current())?;
        Ok(resolved)
    }

    /// The release half of [`DriverDesign::figures_into`]: the release from `i0` at `resolved`
    /// and every figure of it, written into `out` (a frame of its own; the release is used
    /// where it was returned, not moved).
    #[inline(never)]
    fn release_into(&self, resolved: &Resolved, i0: Amps, out: &mut Figures) -> Result<(), Error> {
        let made = self.circuit.release_resolved(resolved, i0);
        let release = match &made {
            Ok(r) => r,
            Err(e) => return Err(*e),
        };
        let (release_time, time_to_zero, energy, off_time) = self.release_figures(release)?;
        out.release_time = release_time;
        out.time_to_zero = time_to_zero;
        out.energy = energy;
        out.off_time = off_time;
        out.clamp_power = match self.duty {
            Some((_, f)) => Some(clamp_average_power(out.energy.clamp, f)?),
            None => None,
        };
        out.max_repetition = match self.clamp_rating {
            Some(p) => max_repetition_rate(out.energy.clamp, p)?,
            None => None,
        };
        out.tau_off = release.tau();
        let peak = release.peak_switch_voltage();
        out.peak_switch_voltage = peak;
        out.switch_headroom = Volts::new(self.circuit.switch().breakdown().value() - peak.value());
        out.peak_node_voltage = release.peak_node_voltage();
        Ok(())
    }

    /// Release to drop-out, time to zero, energy split and safe off-time of one release, with
    /// time to zero and energy sharing one `log1p` (the tick budget's hot path, and the budget's
    /// `release_into`). Inlined so its tuple result costs no stack of its own (the M0 tick
    /// budget grew by 72 B out of line).
    #[inline(always)]
    fn release_figures(
        &self,
        release: &Release,
    ) -> Result<(Seconds, Seconds, EnergySplit, OffTime), Error> {
        let release_time = release.time_to_current(self.circuit.coil().drop_out_current())?;
        let (time_to_zero, energy) = release.zero_time_and_energy()?;
        let residual = if self.residual_current.value().to_bits() & 0x7FFF_FFFF == 0 {
            time_to_zero
        } else {
            release.settle_time(self.residual_current)?
        };
        let off_time =
            off_time_from_parts(release_time, residual, energy.clamp, &self.off_time_needs())?;
        Ok((release_time, time_to_zero, energy, off_time))
    }

    fn off_time_needs(&self) -> OffTimeNeeds {
        OffTimeNeeds {
            residual_current: self.residual_current,
            mechanical_release: self.release_allowance,
            clamp_thermal: match (self.clamp_rating, self.duty) {
                (Some(p), Some((on, _))) => Some((p, on)),
                _ => None,
            },
        }
    }

    /// Minimum on-time `t_pull + t_operate` and the four tick constants, each rounded up.
    fn ticks_from(
        &self,
        t_pull: Seconds,
        min_off: Seconds,
        release_time: Seconds,
    ) -> Result<(Seconds, TickBudget), Error> {
        let operate =
            crate::error::non_negative(self.operate_allowance.value(), crate::error::Param::Time)?;
        let min_on = Seconds::new(t_pull.value() + operate);
        let r = self.tick_rate;
        Ok((
            min_on,
            TickBudget {
                min_on: r.ticks_at_least(min_on)?,
                min_off: r.ticks_at_least(min_off)?,
                pull_in: r.ticks_at_least(t_pull)?,
                release: r.ticks_at_least(release_time)?,
            },
        ))
    }

    /// Only the firmware's tick constants: the same [`TickBudget`] as [`DriverDesign::budget`]
    /// (tested equal), computed from the two worst corners alone — one rise and one release —
    /// for a device that needs nothing else. Costs about a third of the full budget.
    ///
    /// For the first-order clamps the release corner bounds the nominal point (module docs), so
    /// the nominal figures are skipped; an RC snubber falls back to the full budget.
    ///
    /// # Errors
    /// As [`DriverDesign::budget`].
    pub fn tick_budget(&self) -> Result<TickBudget, Error> {
        if self.circuit.clamp().kind() == crate::physics::clamp::ClampKind::RcSnubber {
            return self.snubber_ticks();
        }
        self.validate()?;
        let c = &self.circuit;
        let t_pull = c
            .energize(&self.pull_in_corner(), Armature::Released, Amps::new(0.0))?
            .time_to(c.coil().pull_in_current().value())?;
        let resolved = c.resolve(&self.release_corner())?;
        let made = c.release_resolved(&resolved, resolved.final_current);
        let release = match &made {
            Ok(r) => r,
            Err(e) => return Err(*e),
        };
        let (release_time, _, energy, off) = self.release_figures(release)?;
        // The budget's clamp power at the planned rate: refused here when it overflows there
        // (the release corner carries the largest clamp energy of the budget's three points).
        if let Some((_, f)) = self.duty {
            clamp_average_power(energy.clamp, f)?;
        }
        Ok(self.ticks_from(t_pull, off.required, release_time)?.1)
    }

    /// [`DriverDesign::tick_budget`] of an RC snubber: the full budget's ticks (out of line, so
    /// that the budget sits on the stack only on this path).
    #[inline(never)]
    fn snubber_ticks(&self) -> Result<TickBudget, Error> {
        let mut b = TimingBudget::UNSET;
        self.budget_into(&mut b)?;
        Ok(b.ticks)
    }

    /// Longest off-time and release time over all corners (the RC snubber's times are not
    /// monotone in the parts). Kept out of line so its figures do not grow the stack of
    /// [`DriverDesign::budget`] for the first-order clamps.
    #[inline(never)]
    fn slowest_corner_times(&self) -> Result<(Seconds, Seconds), Error> {
        let mut off = Seconds::new(0.0);
        let mut rel = Seconds::new(0.0);
        let mut k = 0;
        while let Some(op) = self.corner(k) {
            let f = self.figures_of_valid(&op)?;
            if f.off_time.required > off {
                off = f.off_time.required;
            }
            if f.release_time > rel {
                rel = f.release_time;
            }
            k += 1;
        }
        Ok((off, rel))
    }

    /// Time-average winding dissipation at the planned duty at `op`: `P = I∞²·R_w·D` with
    /// `D = t_on·f` (transients neglected; see [`crate::physics::heating`]), W. `None` when the
    /// design has no planned duty. Kept out of [`Figures`] to keep the budget's stack small.
    ///
    /// # Errors
    /// A duty above 1 ([`crate::Param::Duty`]) or invalid inputs.
    pub fn coil_power(&self, op: &OperatingPoint) -> Result<Option<Watts>, Error> {
        let Some((on, f)) = self.duty else {
            return Ok(None);
        };
        let d = crate::error::non_negative(on.value(), crate::error::Param::Time)?
            * crate::error::non_negative(f.value(), crate::error::Param::Frequency)?;
        self.circuit.coil_dissipation(op, d).map(Some)
    }

    /// The hold PWM for `hold_current` at `frequency` at the nominal point, the pull-in corner
    /// (hot, low supply: the highest duty) and the release corner (cold, high supply: the lowest
    /// duty), in that order. See [`Circuit::hold`].
    ///
    /// # Errors
    /// As [`DriverDesign::validate`] (the corners are built from the tolerances) and
    /// [`Circuit::hold`].
    pub fn hold_at_corners(
        &self,
        hold_current: Amps,
        frequency: Hertz,
    ) -> Result<[Hold; 3], Error> {
        self.validate()?;
        let c = &self.circuit;
        Ok([
            c.hold(&self.nominal_point(), hold_current, frequency)?,
            c.hold(&self.pull_in_corner(), hold_current, frequency)?,
            c.hold(&self.release_corner(), hold_current, frequency)?,
        ])
    }

    /// The release at the worst release corner (for plotting or custom checks).
    pub fn worst_release(&self) -> Result<Release, Error> {
        let op = self.release_corner();
        let i0 = self.circuit.final_current(&op)?;
        self.circuit.release(&op, i0)
    }

    /// The full timing budget: figures at nominal and at both worst corners, and the firmware's
    /// minimum on- and off-times in ticks (rounded up).
    ///
    /// `min_on = t_pull_in(pull-in corner) + operate allowance`;
    /// `min_off = max over corners of the safe off-time` (see
    /// [`crate::physics::off_time::min_off_time`]).
    ///
    /// # Errors
    /// [`Error::Unreachable`] when the coil cannot pull in at the pull-in corner (firmware must not
    /// rely on such a design); [`Error::TickOverflow`] when a time does not fit the timer; any
    /// invalid input.
    pub fn budget(&self) -> Result<TimingBudget, Error> {
        let mut r = Err(Error::TickOverflow);
        self.budget_result(&mut r);
        r
    }

    /// [`DriverDesign::budget`] written over `r`.
    #[inline(never)]
    fn budget_result(&self, r: &mut Result<TimingBudget, Error>) {
        *r = Ok(TimingBudget::UNSET);
        if let Ok(b) = r {
            if let Err(e) = self.budget_into(b) {
                *r = Err(e);
            }
        }
    }

    /// [`DriverDesign::budget`] written into `out` (left partly written on an error): the three
    /// figures are built in place, not returned by value through the callers (stack). Inlined
    /// into its two out-of-line callers (one frame less below them).
    #[inline(always)]
    pub(crate) fn budget_into(&self, out: &mut TimingBudget) -> Result<(), Error> {
        let t = self.budget_core(out)?;
        out.min_on_time = t.min_on;
        out.min_off_time = t.min_off;
        out.release_time = t.release_time;
        out.ticks = t.ticks;
        Ok(())
    }

    /// The budget's computation: the figures at the nominal point, the pull-in corner and the
    /// release corner (in that order) written into the slots `slots` hands out, and the times
    /// and ticks drawn from them. A caller that needs the figures only one at a time (channel
    /// limits) hands out one slot three times and reads it in between.
    #[inline(always)]
    pub(crate) fn budget_core(&self, slots: &mut impl FigureSlots) -> Result<BudgetTimes, Error> {
        self.validate()?;
        let f = slots.slot(0);
        self.figures_into(&self.nominal_point(), f)?;
        let nominal_off = f.off_time.required;
        let f = slots.slot(1);
        self.figures_into(&self.pull_in_corner(), f)?;
        let (pull_in_time, pull_in_final) = (f.pull_in_time, f.final_current);
        let f = slots.slot(2);
        self.figures_into(&self.release_corner(), f)?;
        let (release_off, mut release_time) = (f.off_time.required, f.release_time);
        let Some(t_pull) = pull_in_time else {
            return Err(Error::Unreachable {
                target: self.circuit.coil().pull_in_current().value(),
                asymptote: pull_in_final.value(),
            });
        };
        let mut min_off = if release_off >= nominal_off {
            release_off
        } else {
            nominal_off
        };
        if self.circuit.clamp().kind() == crate::physics::clamp::ClampKind::RcSnubber {
            let (off, rel) = self.slowest_corner_times()?;
            if off > min_off {
                min_off = off;
            }
            if rel > release_time {
                release_time = rel;
            }
        }
        let (min_on, ticks) = self.ticks_from(t_pull, min_off, release_time)?;
        Ok(BudgetTimes {
            min_on,
            min_off,
            release_time,
            ticks,
        })
    }
}

/// Number of corners of the tolerance box searched by [`DriverDesign::corner`]: 2⁵ (supply,
/// temperature, resistance, inductance, sense).
pub const CORNER_COUNT: u32 = 32;

#[cfg(test)]
mod tests;
