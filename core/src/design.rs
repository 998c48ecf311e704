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
use crate::physics::circuit::{Circuit, OperatingPoint, SupplyRange, TemperatureRange, Tolerances};
use crate::physics::clamp::{EnergySplit, Release};
use crate::physics::coil::Armature;
use crate::physics::hold::Hold;
use crate::physics::off_time::{off_time_from_parts, OffTime, OffTimeNeeds};
use crate::physics::repetition::{clamp_average_power, max_repetition_rate};
use crate::time::{TickRate, Ticks};
use crate::units::{Amps, Hertz, Seconds, Volts, Watts};

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

    /// Every figure at one operating point, the coil switched off from its final current.
    ///
    /// # Errors
    /// Invalid tolerances or inputs; a planned duty `t_on·f` above 1 ([`crate::Param::Duty`]).
    pub fn figures(&self, op: &OperatingPoint) -> Result<Figures, Error> {
        self.tolerances.validate()?;
        let c = &self.circuit;
        let resolved = c.resolve(op)?;
        let rise = c.energize_resolved(&resolved, Armature::Released, Amps::new(0.0))?;
        let final_current = Amps::new(rise.asymptote());
        let pull_in_time = match rise.time_to(c.coil().pull_in_current().value()) {
            Ok(t) => Some(t),
            Err(Error::Unreachable { .. }) => None,
            Err(e) => return Err(e),
        };
        let release = c.release_resolved(&resolved, final_current)?;
        let (release_time, time_to_zero, energy, off_time) = self.release_figures(&release)?;
        let clamp_power = match self.duty {
            Some((_, f)) => Some(clamp_average_power(energy.clamp, f)?),
            None => None,
        };
        let max_repetition = match self.clamp_rating {
            Some(p) => max_repetition_rate(energy.clamp, p)?,
            None => None,
        };
        Ok(Figures {
            point: *op,
            final_current,
            tau_on: rise.tau(),
            pull_in_time,
            pull_in_margin: final_current.value() / c.coil().pull_in_current().value() - 1.0,
            tau_off: release.tau(),
            release_time,
            time_to_zero,
            energy,
            peak_switch_voltage: release.peak_switch_voltage(),
            switch_headroom: Volts::new(
                c.switch().breakdown().value() - release.peak_switch_voltage().value(),
            ),
            peak_node_voltage: release.peak_node_voltage(),
            clamp_power,
            max_repetition,
            off_time,
        })
    }

    /// Release to drop-out, time to zero, energy split and safe off-time of one release, with
    /// time to zero and energy sharing one `log1p` (the budget's hot path). Inlined into its two
    /// callers so its tuple result costs no stack of its own (the M0 tick budget grew by 72 B).
    #[inline(always)]
    fn release_figures(
        &self,
        release: &Release,
    ) -> Result<(Seconds, Seconds, EnergySplit, OffTime), Error> {
        let release_time = release.time_to_current(self.circuit.coil().drop_out_current())?;
        let (time_to_zero, energy) = release.zero_time_and_energy()?;
        let residual = if self.residual_current.value() == 0.0 {
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
            return self.budget().map(|b| b.ticks);
        }
        self.tolerances.validate()?;
        let c = &self.circuit;
        let t_pull = c
            .energize(&self.pull_in_corner(), Armature::Released, Amps::new(0.0))?
            .time_to(c.coil().pull_in_current().value())?;
        let resolved = c.resolve(&self.release_corner())?;
        let i0 = Amps::new(resolved.drive.value() / resolved.on_loop.value());
        let release = c.release_resolved(&resolved, i0)?;
        let (release_time, _, _, off) = self.release_figures(&release)?;
        Ok(self.ticks_from(t_pull, off.required, release_time)?.1)
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
            let f = self.figures(&op)?;
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
    pub fn hold_at_corners(
        &self,
        hold_current: Amps,
        frequency: Hertz,
    ) -> Result<[Hold; 3], Error> {
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
        let nominal = self.figures(&self.nominal_point())?;
        let pull_in = self.figures(&self.pull_in_corner())?;
        let release = self.figures(&self.release_corner())?;
        let Some(t_pull) = pull_in.pull_in_time else {
            return Err(Error::Unreachable {
                target: self.circuit.coil().pull_in_current().value(),
                asymptote: pull_in.final_current.value(),
            });
        };
        let mut min_off = if release.off_time.required >= nominal.off_time.required {
            release.off_time.required
        } else {
            nominal.off_time.required
        };
        let mut release_time = release.release_time;
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
        Ok(TimingBudget {
            nominal,
            pull_in_corner: pull_in,
            release_corner: release,
            min_on_time: min_on,
            min_off_time: min_off,
            release_time,
            ticks,
        })
    }
}

/// Every timing, energy and stress figure at one operating point.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Figures {
    /// Where these figures were evaluated.
    pub point: OperatingPoint,
    /// Final on-state current I∞, A (also the switch-off current assumed).
    pub final_current: Amps,
    /// Rise time constant with the armature released, s.
    pub tau_on: Seconds,
    /// Time from switch-on to pull-in current; `None` when the coil never pulls in here.
    pub pull_in_time: Option<Seconds>,
    /// `I∞ / I_pull − 1`.
    pub pull_in_margin: f32,
    /// Release time constant (armature operated, clamp loop), s.
    pub tau_off: Seconds,
    /// Switch-off to drop-out current, s.
    pub release_time: Seconds,
    /// Switch-off to zero current, s.
    pub time_to_zero: Seconds,
    /// Where the stored energy goes.
    pub energy: EnergySplit,
    /// Peak voltage across the switch (magnitude), V.
    pub peak_switch_voltage: Volts,
    /// Switch breakdown minus peak switch voltage, V. Negative: the switch avalanches before the
    /// clamp takes over, and the release figures (which assume the clamp conducts) do not hold.
    pub switch_headroom: Volts,
    /// Peak voltage of the switch node against ground (signed), V.
    pub peak_node_voltage: Volts,
    /// Clamp average power at the planned duty, W.
    pub clamp_power: Option<Watts>,
    /// Highest repetition rate for the clamp rating, Hz (`None`: no rating or no energy).
    pub max_repetition: Option<Hertz>,
    /// Safe minimum off-time at this point.
    pub off_time: OffTime,
}

/// Number of corners of the tolerance box searched by [`DriverDesign::corner`]: 2⁵ (supply,
/// temperature, resistance, inductance, sense).
pub const CORNER_COUNT: u32 = 32;

/// The firmware's timing constants in ticks, each rounded up.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TickBudget {
    /// Minimum on-time (worst pull-in + operate allowance).
    pub min_on: Ticks,
    /// Safe minimum off-time.
    pub min_off: Ticks,
    /// Worst-corner electrical pull-in time.
    pub pull_in: Ticks,
    /// Worst electrical release time (to drop-out), [`TimingBudget::release_time`].
    pub release: Ticks,
}

/// The result of [`DriverDesign::budget`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TimingBudget {
    /// Nominal supply, mid temperature, nominal parts.
    pub nominal: Figures,
    /// Hot, high-R, low-supply corner.
    pub pull_in_corner: Figures,
    /// Cold, low-R, high-supply corner.
    pub release_corner: Figures,
    /// Minimum on-time, s.
    pub min_on_time: Seconds,
    /// Safe minimum off-time, s.
    pub min_off_time: Seconds,
    /// Longest electrical release time (switch-off to drop-out current), s: the release corner's,
    /// or for an RC snubber the longest over all corners.
    pub release_time: Seconds,
    /// The same in ticks.
    pub ticks: TickBudget,
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::circuit::tests::valve;
    use crate::physics::clamp::Clamp;
    use crate::physics::off_time::min_off_time;
    use crate::units::{Celsius, Farads, Ohms};

    fn every_clamp() -> [Clamp; 6] {
        [
            Clamp::diode(Volts::new(0.8)).unwrap(),
            Clamp::diode_zener(Volts::new(0.8), Volts::new(34.0)).unwrap(),
            Clamp::diode_resistor(Volts::new(0.8), Ohms::new(220.0)).unwrap(),
            Clamp::AcrossSwitch {
                clamp_voltage: Volts::new(47.0),
            },
            Clamp::Unclamped,
            Clamp::rc_snubber(Ohms::new(1000.0), Farads::from_micro(10.0)).unwrap(),
        ]
    }

    /// Invented demo design: the 24 V greenhouse valve, 21.6…26.4 V, −25…+60 °C winding, ±5 % R,
    /// ±20 % L, ±1 % sense, 1 MHz timer, 8 ms / 5 ms mechanical allowances.
    fn design(clamp: Clamp) -> DriverDesign {
        let mut d = DriverDesign::new(
            valve(clamp),
            SupplyRange::new(Volts::new(21.6), Volts::new(24.0), Volts::new(26.4)).unwrap(),
            TemperatureRange::new(Celsius::new(-25.0), Celsius::new(60.0)).unwrap(),
            TickRate::new(1_000_000).unwrap(),
        );
        d.tolerances = Tolerances {
            resistance: 0.05,
            inductance: 0.2,
            sense: 0.01,
        };
        d.operate_allowance = Seconds::from_millis(8.0);
        d.release_allowance = Seconds::from_millis(5.0);
        d
    }

    fn corners(d: &DriverDesign) -> impl Iterator<Item = OperatingPoint> + '_ {
        (0..).map_while(|k| d.corner(k))
    }

    #[test]
    fn tick_budget_equals_the_full_budget() {
        for clamp in every_clamp() {
            for (residual, duty) in [
                (0.0, None),
                (0.002, None),
                (0.0, Some((Seconds::from_millis(50.0), Hertz::new(2.0)))),
            ] {
                let mut d = design(clamp);
                d.residual_current = Amps::new(residual);
                d.duty = duty;
                d.clamp_rating = duty.map(|_| Watts::new(0.004));
                assert_eq!(
                    d.tick_budget().unwrap(),
                    d.budget().unwrap().ticks,
                    "{clamp:?}"
                );
            }
        }
        let mut hopeless = design(every_clamp()[0]);
        hopeless.supply =
            SupplyRange::new(Volts::new(9.0), Volts::new(10.0), Volts::new(11.0)).unwrap();
        assert!(matches!(
            hopeless.tick_budget(),
            Err(Error::Unreachable { .. })
        ));
        assert!(matches!(hopeless.budget(), Err(Error::Unreachable { .. })));
    }

    #[test]
    fn the_two_chosen_corners_are_the_worst_of_all_32() {
        // Common practice, no source: pull-in is slowest for a hot coil on a low supply, and
        // release, clamp energy and switch voltage are worst for a cold coil on a high supply.
        // Brute force over every combination of supply, temperature, R, L and sense extremes
        // (16 supply/temperature/R/L corners, each with both sense extremes).
        for clamp in every_clamp() {
            let mut d = design(clamp);
            d.duty = Some((Seconds::from_millis(50.0), Hertz::new(2.0)));
            d.clamp_rating = Some(Watts::new(0.25));
            let b = d.budget().unwrap();
            let p = &b.pull_in_corner;
            let r = &b.release_corner;
            let close = |worst: f32, any: f32| any <= worst * (1.0 + 2e-5) + 1e-9;
            let snubber = clamp.kind() == crate::physics::clamp::ClampKind::RcSnubber;
            assert_eq!(corners(&d).count(), 32);
            let mut longest = 0.0f32;
            for op in corners(&d) {
                let f = d.figures(&op).unwrap();
                let pull = f.pull_in_time.unwrap().value();
                longest = longest.max(f.release_time.value());
                assert!(
                    close(p.pull_in_time.unwrap().value(), pull),
                    "{clamp:?} pull-in {op:?}"
                );
                assert!(
                    close(b.release_time.value(), f.release_time.value()),
                    "{clamp:?} release {op:?}"
                );
                if !snubber {
                    // First-order clamps: the release corner itself is the slowest.
                    assert!(close(r.release_time.value(), f.release_time.value()));
                    assert!(close(r.time_to_zero.value(), f.time_to_zero.value()));
                }
                assert!(
                    close(r.peak_switch_voltage.value(), f.peak_switch_voltage.value()),
                    "{clamp:?} peak {op:?}"
                );
                assert!(
                    close(r.energy.clamp.value(), f.energy.clamp.value()),
                    "{clamp:?} energy {op:?}"
                );
                assert!(
                    close(r.energy.stored.value(), f.energy.stored.value()),
                    "{clamp:?} stored"
                );
                assert!(
                    close(b.min_off_time.value(), f.off_time.required.value()),
                    "{clamp:?} off-time {op:?}"
                );
            }
            // The budget's release time is one of the corners' (not an overestimate either).
            assert!((b.release_time.value() - longest).abs() <= 1e-6 * longest);
        }
    }

    #[test]
    fn budget_is_pull_in_plus_allowance_and_rounds_up() {
        for clamp in every_clamp() {
            let d = design(clamp);
            let b = d.budget().unwrap();
            let t_pull = b.pull_in_corner.pull_in_time.unwrap().value();
            // Common practice, no source: minimum on-time = worst electrical pull-in + mechanical
            // operate allowance, and timing limits round up to whole ticks.
            assert!((b.min_on_time.value() - (t_pull + 0.008)).abs() < 1e-7);
            let rate = 1.0e6f64;
            for (ticks, s) in [
                (b.ticks.min_on, b.min_on_time),
                (b.ticks.min_off, b.min_off_time),
                (b.ticks.pull_in, b.pull_in_corner.pull_in_time.unwrap()),
                (b.ticks.release, b.release_time),
            ] {
                assert!(ticks.get() as f64 / rate >= s.value() as f64);
                assert!((ticks.get() as f64 - 1.0) / rate < s.value() as f64);
            }
            assert!(b.min_off_time >= b.nominal.off_time.required);
        }
    }

    #[test]
    fn the_fast_path_off_time_equals_the_public_one() {
        for clamp in every_clamp() {
            let mut d = design(clamp);
            d.duty = Some((Seconds::from_millis(50.0), Hertz::new(2.0)));
            d.clamp_rating = Some(Watts::new(0.05));
            for op in [d.nominal_point(), d.release_corner(), d.pull_in_corner()] {
                let f = d.figures(&op).unwrap();
                let rel = d.circuit.release(&op, f.final_current).unwrap();
                let needs = OffTimeNeeds {
                    residual_current: d.residual_current,
                    mechanical_release: d.release_allowance,
                    clamp_thermal: Some((Watts::new(0.05), Seconds::from_millis(50.0))),
                };
                let slow = min_off_time(&rel, d.circuit.coil().drop_out_current(), &needs).unwrap();
                assert_eq!(slow, f.off_time, "{clamp:?}");
            }
        }
    }

    #[test]
    fn a_coil_that_cannot_pull_in_at_the_corner_fails_the_budget() {
        let mut d = design(every_clamp()[0]);
        d.supply = SupplyRange::new(Volts::new(14.0), Volts::new(24.0), Volts::new(28.0)).unwrap();
        assert!(matches!(d.budget(), Err(Error::Unreachable { .. })));
        assert!(d
            .figures(&d.pull_in_corner())
            .unwrap()
            .pull_in_time
            .is_none());
    }

    #[test]
    fn duty_gives_coil_power_and_hold_is_optional() {
        let mut d = design(every_clamp()[0]);
        d.duty = Some((Seconds::from_millis(100.0), Hertz::new(5.0)));
        let b = d.budget().unwrap();
        let f = &b.nominal;
        let r = d.circuit.resolve(&f.point).unwrap().winding.value();
        let i = f.final_current.value();
        let p = d.coil_power(&f.point).unwrap().unwrap().value();
        // Textbook, from memory: Joule heating, P = I²·R·D.
        assert!((p - i * i * r * 0.5).abs() < 1e-6);
        let [h, hot, cold] = d
            .hold_at_corners(Amps::new(0.05), Hertz::new(20_000.0))
            .unwrap();
        assert!(h.duty > 0.0 && h.duty < 1.0);
        // Common practice, no source: hold duty is highest at the hot, low-supply corner, lowest
        // at the cold, high one.
        assert!(hot.duty > h.duty && cold.duty < h.duty);
        d.duty = Some((Seconds::new(1.0), Hertz::new(5.0)));
        assert!(d.coil_power(&f.point).is_err());
        d.duty = None;
        assert_eq!(d.coil_power(&f.point), Ok(None));
    }
}
