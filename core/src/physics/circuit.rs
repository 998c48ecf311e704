//! The drive circuit around the coil: switch, topology, sense and wiring resistance, clamp; and the
//! operating point (supply, winding temperature, part tolerances) it is evaluated at.

use super::clamp::Clamp;
use super::coil::{temperature_in_range_as, Armature, Coil};
use super::domain::{part_factor, resistance_in_range};
use super::first_order::FirstOrder;
use crate::error::{
    finite, is_positive_finite_bits, non_negative, positive, Error, Limit, Param, Why,
};
use crate::units::{Amps, Celsius, Ohms, Seconds, Volts};

/// The transistor that switches the coil.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Switch {
    /// Bipolar transistor in saturation: a fixed collector-emitter drop.
    Bipolar {
        /// V_CE(sat) at the coil current, V (≥ 0).
        saturation: Volts,
        /// V_CEO breakdown, V; the unclamped switch avalanches here.
        breakdown: Volts,
    },
    /// MOSFET fully enhanced: a resistance.
    Mosfet {
        /// R_DS(on) at the operating junction temperature, Ω (≥ 0).
        on_resistance: Ohms,
        /// V_(BR)DSS, V; the unclamped switch avalanches here.
        breakdown: Volts,
    },
}

impl Switch {
    /// Breakdown voltage of the switch, V.
    pub const fn breakdown(&self) -> Volts {
        match *self {
            Switch::Bipolar { breakdown, .. } | Switch::Mosfet { breakdown, .. } => breakdown,
        }
    }

    /// The on-state as `(constant drop, V; series resistance, Ω)`: bipolar `(V_CE(sat), 0)`,
    /// MOSFET `(0, R_DS(on))`.
    pub(crate) const fn on_state(&self) -> (f32, f32) {
        match *self {
            Switch::Bipolar { saturation, .. } => (saturation.value(), 0.0),
            Switch::Mosfet { on_resistance, .. } => (0.0, on_resistance.value()),
        }
    }

    /// Checks every field: finite, drops ≥ 0, breakdown > 0, on-resistance at most
    /// [`super::domain::MAX_RESISTANCE`].
    pub fn validate(&self) -> Result<(), Error> {
        match *self {
            Switch::Bipolar {
                saturation,
                breakdown,
            } => {
                non_negative(saturation.value(), Param::SaturationVoltage)?;
                positive(breakdown.value(), Param::BreakdownVoltage)?;
            }
            Switch::Mosfet {
                on_resistance,
                breakdown,
            } => {
                resistance_in_range(
                    non_negative(on_resistance.value(), Param::OnResistance)?,
                    Param::OnResistance,
                )?;
                positive(breakdown.value(), Param::BreakdownVoltage)?;
            }
        }
        Ok(())
    }
}

/// Where the switch sits relative to the coil.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Topology {
    /// Switch between coil and ground; at switch-off the switch node (coil's lower end) flies
    /// *up* to supply + clamp voltage.
    LowSide,
    /// Switch between supply and coil; at switch-off the switch node (coil's upper end) flies
    /// *down* to −(clamp voltage) below ground.
    HighSide,
}

/// A supply voltage range: lowest, nominal and highest.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SupplyRange {
    min: f32,
    nominal: f32,
    max: f32,
}

impl SupplyRange {
    /// A supply from `min` to `max` around `nominal`, V; 0 < min ≤ nominal ≤ max, all finite.
    pub fn new(min: Volts, nominal: Volts, max: Volts) -> Result<Self, Error> {
        let min = positive(min.value(), Param::Supply)?;
        let nominal = positive(nominal.value(), Param::Supply)?;
        let max = positive(max.value(), Param::Supply)?;
        if !(min <= nominal && nominal <= max) {
            return Err(Error::invalid(Param::Supply, Why::Inverted));
        }
        Ok(Self { min, nominal, max })
    }

    /// A nominal supply with a symmetric fractional tolerance (e.g. 0.1 for ±10 %).
    pub fn with_tolerance(nominal: Volts, tolerance: f32) -> Result<Self, Error> {
        let tol = tolerance_fraction(tolerance)?;
        let n = positive(nominal.value(), Param::Supply)?;
        Self::new(
            Volts::new(n * (1.0 - tol)),
            Volts::new(n),
            Volts::new(n * (1.0 + tol)),
        )
    }

    /// Lowest supply, V.
    pub const fn min(&self) -> Volts {
        Volts::new(self.min)
    }
    /// Nominal supply, V.
    pub const fn nominal(&self) -> Volts {
        Volts::new(self.nominal)
    }
    /// Highest supply, V.
    pub const fn max(&self) -> Volts {
        Volts::new(self.max)
    }
}

/// A winding temperature range, °C (coldest start to hottest running coil).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TemperatureRange {
    min: f32,
    max: f32,
}

impl TemperatureRange {
    /// Winding temperatures from `min` to `max`, °C, finite, min ≤ max, within the copper model's
    /// range (see [`crate::physics::coil::MIN_WINDING_TEMPERATURE`]).
    pub fn new(min: Celsius, max: Celsius) -> Result<Self, Error> {
        let lo = finite(min.value(), Param::TemperatureRange)?;
        let hi = finite(max.value(), Param::TemperatureRange)?;
        if lo > hi {
            return Err(Error::invalid(Param::TemperatureRange, Why::Inverted));
        }
        temperature_in_range_as(lo, Param::TemperatureRange)?;
        temperature_in_range_as(hi, Param::TemperatureRange)?;
        Ok(Self { min: lo, max: hi })
    }
    /// Coldest winding, °C.
    pub const fn min(&self) -> Celsius {
        Celsius::new(self.min)
    }
    /// Hottest winding, °C.
    pub const fn max(&self) -> Celsius {
        Celsius::new(self.max)
    }
}

/// Part-to-part spread of the coil, as fractions (0.1 = ±10 %).
#[derive(Clone, Copy, Debug, PartialEq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Tolerances {
    /// Winding resistance at the reference temperature, ± fraction.
    pub resistance: f32,
    /// Inductance (both armature states), ± fraction.
    pub inductance: f32,
    /// Current-sense resistor, ± fraction.
    pub sense: f32,
}

impl Tolerances {
    /// Checks each fraction is finite and in [0, 0.9].
    pub fn validate(&self) -> Result<(), Error> {
        tolerance_fraction(self.resistance)?;
        tolerance_fraction(self.inductance)?;
        tolerance_fraction(self.sense)?;
        Ok(())
    }
}

pub(crate) fn tolerance_fraction(x: f32) -> Result<f32, Error> {
    let x = non_negative(x, Param::Tolerance)?;
    // `x > 0.9` on the magnitude bits (x is finite and ≥ 0 here, −0 included).
    if x.to_bits() & 0x7FFF_FFFF > 0.9f32.to_bits() {
        return Err(Error::invalid(Param::Tolerance, Why::OutOfRange));
    }
    Ok(x)
}

/// One operating condition: supply voltage, winding temperature, and where each part sits within
/// its tolerance (1.0 = nominal, 1.1 = 10 % high; within [`super::domain::PART_FACTOR_RANGE`]).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct OperatingPoint {
    /// Supply voltage, V.
    pub supply: Volts,
    /// Winding temperature, °C.
    pub temperature: Celsius,
    /// Multiplier on the coil's reference resistance.
    pub resistance_factor: f32,
    /// Multiplier on both inductances.
    pub inductance_factor: f32,
    /// Multiplier on the sense resistor.
    pub sense_factor: f32,
}

impl OperatingPoint {
    /// Nominal parts at the given supply and winding temperature.
    pub const fn new(supply: Volts, temperature: Celsius) -> Self {
        Self {
            supply,
            temperature,
            resistance_factor: 1.0,
            inductance_factor: 1.0,
            sense_factor: 1.0,
        }
    }
}

/// A coil with its switch, sense and wiring resistances and its clamp.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Circuit {
    coil: Coil,
    switch: Switch,
    topology: Topology,
    sense: f32,
    wiring: f32,
    clamp: Clamp,
}

/// The electrical state of a circuit at one operating point, with every resistance resolved.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Resolved {
    /// Winding resistance at this temperature and tolerance, Ω.
    pub winding: Ohms,
    /// Total resistance of the on-state loop (winding + wiring + sense + MOSFET), Ω.
    pub on_loop: Ohms,
    /// Resistance of the freewheel loop (winding + wiring; the clamp's own resistor is the clamp's), Ω.
    pub off_loop: Ohms,
    /// Voltage that drives the on-state loop (supply − bipolar saturation), V.
    pub drive: Volts,
    /// Supply voltage, V.
    pub supply: Volts,
    /// Inductance while pulling in, H.
    pub inductance_released: f32,
    /// Inductance while held / at switch-off, H.
    pub inductance_operated: f32,
    /// Final on-state current `I∞ = V_drive / R_on`, A (worked out once here; the rise and the
    /// budget's switch-off current take it from here).
    pub final_current: Amps,
}

impl Circuit {
    /// A drive circuit. `sense` and `wiring` are series resistances (0 … [`super::domain::MAX_RESISTANCE`]); the sense resistor sits
    /// in the switch path, outside the freewheel loop, and the wiring inside it (clamp at the driver).
    ///
    /// # Errors
    /// [`Error::Invalid`] for a bad switch, clamp, or resistance.
    pub fn new(
        coil: Coil,
        switch: Switch,
        topology: Topology,
        sense: Ohms,
        wiring: Ohms,
        clamp: Clamp,
    ) -> Result<Self, Error> {
        switch.validate()?;
        clamp.validate()?;
        let sense = non_negative(sense.value(), Param::SenseResistance)?;
        let sense = resistance_in_range(sense, Param::SenseResistance)?;
        let wiring = non_negative(wiring.value(), Param::WiringResistance)?;
        let wiring = resistance_in_range(wiring, Param::WiringResistance)?;
        Ok(Self {
            coil,
            switch,
            topology,
            sense,
            wiring,
            clamp,
        })
    }

    /// The coil.
    pub const fn coil(&self) -> &Coil {
        &self.coil
    }
    /// The switch.
    pub const fn switch(&self) -> &Switch {
        &self.switch
    }
    /// The topology.
    pub const fn topology(&self) -> Topology {
        self.topology
    }
    /// The clamp.
    pub const fn clamp(&self) -> &Clamp {
        &self.clamp
    }
    /// Sense resistance, Ω.
    pub const fn sense(&self) -> Ohms {
        Ohms::new(self.sense)
    }
    /// Wiring resistance, Ω.
    pub const fn wiring(&self) -> Ohms {
        Ohms::new(self.wiring)
    }

    /// The same circuit with another clamp.
    pub fn with_clamp(mut self, clamp: Clamp) -> Result<Self, Error> {
        clamp.validate()?;
        self.clamp = clamp;
        Ok(self)
    }

    /// Resolves every resistance and voltage at an operating point:
    /// `R_w = R_ref·k_R·(1 + α(T − T_ref))`, `R_on = R_w + R_wiring + k_s·R_sense (+ R_DS(on))`,
    /// `V_drive = V_supply − V_CE(sat)`.
    ///
    /// # Errors
    /// Invalid supply or temperature; a part factor outside [`super::domain::PART_FACTOR_RANGE`]
    /// ([`Param::Tolerance`]); [`Limit::NoHeadroom`] when V_drive ≤ 0;
    /// [`Limit::Overflow`] when a resolved resistance, inductance or the final current
    /// `V_drive/R_on` does not fit a positive finite f32 (extreme factors or supplies).
    pub fn resolve(&self, op: &OperatingPoint) -> Result<Resolved, Error> {
        let supply = positive(op.supply.value(), Param::Supply)?;
        let k_r = part_factor(op.resistance_factor)?;
        let k_l = part_factor(op.inductance_factor)?;
        let k_s = part_factor(op.sense_factor)?;
        let winding = self.coil.resistance_at(op.temperature)?.value() * k_r;
        let (drop, r_switch) = self.switch.on_state();
        let drive = supply - drop;
        // `drive <= 0.0` on the bits (both operands finite, so `drive` is not NaN): sign set
        // (−0 included) or +0.
        if drive.to_bits() >> 31 == 1 || drive.to_bits() == 0 {
            return Err(Error::OutsideModel(Limit::NoHeadroom));
        }
        let off_loop = winding + self.wiring;
        let on_loop = off_loop + self.sense * k_s + r_switch;
        let l_rel = self.coil.inductance(Armature::Released).value() * k_l;
        let l_op = self.coil.inductance(Armature::Operated).value() * k_l;
        // I∞ = V_drive/R_on: every figure of the circuit scales with it. One test for all (the
        // budget's hot path): each resolved figure a positive finite f32. The loops are at least
        // the winding and at most the on loop, so checking those bounds them too.
        let i_inf = drive / on_loop;
        let fit = is_positive_finite_bits(winding)
            & is_positive_finite_bits(on_loop)
            & is_positive_finite_bits(l_rel)
            & is_positive_finite_bits(l_op)
            & is_positive_finite_bits(i_inf);
        if !fit {
            return Err(Error::OutsideModel(Limit::Overflow));
        }
        Ok(Resolved {
            winding: Ohms::new(winding),
            on_loop: Ohms::new(on_loop),
            off_loop: Ohms::new(off_loop),
            drive: Volts::new(drive),
            supply: Volts::new(supply),
            inductance_released: l_rel,
            inductance_operated: l_op,
            final_current: Amps::new(i_inf),
        })
    }

    /// Final (steady) on-state current: `I∞ = (V − V_CE(sat)) / R_on`, A.
    pub fn final_current(&self, op: &OperatingPoint) -> Result<Amps, Error> {
        Ok(self.resolve(op)?.final_current)
    }

    /// The current rise after switch-on from `initial` amperes with the armature in `armature`:
    /// `i(t) = I∞ + (i₀ − I∞)·e^(−t/τ)`, `τ = L/R_on`.
    ///
    /// Accuracy: exact for a constant inductance; a moving armature changes L mid-rise (see the
    /// theory notes), which the pull-in time here does not include.
    pub fn energize(
        &self,
        op: &OperatingPoint,
        armature: Armature,
        initial: Amps,
    ) -> Result<FirstOrder, Error> {
        self.energize_resolved(&self.resolve(op)?, armature, initial)
    }

    /// [`Circuit::energize`] on an already resolved operating point (saves resolving twice).
    pub(crate) fn energize_resolved(
        &self,
        r: &Resolved,
        armature: Armature,
        initial: Amps,
    ) -> Result<FirstOrder, Error> {
        let l = match armature {
            Armature::Released => r.inductance_released,
            Armature::Operated => r.inductance_operated,
        };
        let i0 = finite(initial.value(), Param::Current)?;
        FirstOrder::new(
            i0,
            r.final_current.value(),
            Seconds::new(l / r.on_loop.value()),
        )
    }

    /// Pull-in time from zero current with the armature released:
    /// `t = τ·ln(I∞/(I∞ − I_pull))`, s. Excludes the armature's mechanical travel.
    ///
    /// # Errors
    /// [`Error::Unreachable`] when I_pull ≥ I∞: the coil never pulls in at this point.
    pub fn pull_in_time(&self, op: &OperatingPoint) -> Result<Seconds, Error> {
        self.energize(op, Armature::Released, Amps::new(0.0))?
            .time_to(self.coil.pull_in_current().value())
    }

    /// Pull-in margin: `I∞ / I_pull − 1` (0.25 = 25 % more current than needed). Negative means the
    /// coil does not pull in.
    ///
    /// # Errors
    /// As [`Circuit::resolve`]; [`Limit::Overflow`] when the ratio does not fit an f32.
    pub fn pull_in_margin(&self, op: &OperatingPoint) -> Result<f32, Error> {
        pull_in_margin_of(self.final_current(op)?, self.coil.pull_in_current())
    }
}

/// `I∞ / I_pull − 1`, checked: [`Limit::Overflow`] when it does not fit an f32.
pub(crate) fn pull_in_margin_of(final_current: Amps, pull_in: Amps) -> Result<f32, Error> {
    crate::error::result(final_current.value() / pull_in.value() - 1.0)
}

#[cfg(test)]
#[path = "circuit_tests.rs"]
pub(crate) mod tests;
