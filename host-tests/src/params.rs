//! Plant parameters in SI units (plain `f64` fields) and their validation.
//!
//! Everything here is a description of hardware; nothing moves. Build a
//! [`ChannelParams`] per coil and a [`Supply`], then hand them to
//! [`crate::Bench::new`], which validates them (no NaN, no negative
//! resistances, ...) and returns [`SimError`] instead of panicking.

use core::fmt;

/// Thermal voltage kT/q at 25 °C in volts (k = 1.380649e-23 J/K,
/// q = 1.602176634e-19 C, T = 298.15 K; SI 2019 exact constants).
pub const THERMAL_VOLTS_25C: f64 = 1.380649e-23 * 298.15 / 1.602176634e-19;

/// Error returned when parameters are unusable.
#[non_exhaustive]
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SimError {
    /// A parameter is NaN, infinite, or outside its documented domain.
    /// The payload names the field.
    InvalidParameter(&'static str),
    /// A channel index was not below the number of channels.
    NoSuchChannel,
    /// A supply with source resistance needs a bulk capacitance > 0 on the
    /// rail (the rail voltage is a state of the simulation).
    RailNeedsCapacitance,
}

impl fmt::Display for SimError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SimError::InvalidParameter(name) => write!(f, "invalid parameter `{name}`"),
            SimError::NoSuchChannel => f.write_str("no such channel"),
            SimError::RailNeedsCapacitance => {
                f.write_str("a supply with source resistance needs bulk capacitance > 0")
            }
        }
    }
}

impl core::error::Error for SimError {}

pub(crate) fn check(ok: bool, name: &'static str) -> Result<(), SimError> {
    if ok {
        Ok(())
    } else {
        Err(SimError::InvalidParameter(name))
    }
}

pub(crate) fn finite_ge0(v: f64, name: &'static str) -> Result<(), SimError> {
    check(v.is_finite() && v >= 0.0, name)
}

pub(crate) fn finite_gt0(v: f64, name: &'static str) -> Result<(), SimError> {
    check(v.is_finite() && v > 0.0, name)
}

/// Exponential (Shockley) diode law with a series resistance:
/// `v(i) = n·Vt·ln(1 + i/Is) + Rs·i` for forward current `i ≥ 0`.
///
/// Reverse conduction (leakage, reverse recovery) is not modelled: a reverse
/// biased diode carries exactly zero current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DiodeLaw {
    /// Saturation current `Is` in amperes (> 0).
    pub saturation_amps: f64,
    /// Ideality factor `n` (> 0, typically 1…2).
    pub ideality: f64,
    /// Thermal voltage `Vt = kT/q` in volts (> 0); [`THERMAL_VOLTS_25C`] at 25 °C.
    pub thermal_volts: f64,
    /// Ohmic series resistance `Rs` in ohms (≥ 0).
    pub series_ohms: f64,
}

impl DiodeLaw {
    /// A general-purpose 1 A silicon rectifier (invented values of the usual
    /// order: Is = 5 nA, n = 1.9, Rs = 0.04 Ω, 25 °C). About 0.75 V at 50 mA.
    pub const fn rectifier() -> Self {
        DiodeLaw {
            saturation_amps: 5e-9,
            ideality: 1.9,
            thermal_volts: THERMAL_VOLTS_25C,
            series_ohms: 0.04,
        }
    }

    /// A small-signal switching diode (invented values of the usual order:
    /// Is = 2.5 nA, n = 1.75, Rs = 0.6 Ω, 25 °C).
    pub const fn small_signal() -> Self {
        DiodeLaw {
            saturation_amps: 2.5e-9,
            ideality: 1.75,
            thermal_volts: THERMAL_VOLTS_25C,
            series_ohms: 0.6,
        }
    }

    /// Forward voltage in volts at forward current `amps` (A):
    /// `n·Vt·ln(1 + i/Is) + Rs·i`; negative currents are treated as zero.
    /// Exact for the model (libm `log1p`, ~1 ulp).
    pub fn volts_at(&self, amps: f64) -> f64 {
        let i = if amps > 0.0 { amps } else { 0.0 };
        self.ideality * self.thermal_volts * libm::log1p(i / self.saturation_amps)
            + self.series_ohms * i
    }

    /// Incremental resistance dv/di in ohms at forward current `amps`:
    /// `n·Vt/(Is + i) + Rs`.
    pub fn slope_at(&self, amps: f64) -> f64 {
        let i = if amps > 0.0 { amps } else { 0.0 };
        self.ideality * self.thermal_volts / (self.saturation_amps + i) + self.series_ohms
    }

    pub(crate) fn validate(&self) -> Result<(), SimError> {
        finite_gt0(self.saturation_amps, "diode.saturation_amps")?;
        finite_gt0(self.ideality, "diode.ideality")?;
        finite_gt0(self.thermal_volts, "diode.thermal_volts")?;
        finite_ge0(self.series_ohms, "diode.series_ohms")
    }
}

/// What is fitted across the coil (from the switched coil terminal back to
/// the supply rail for a low-side switch) to take the current at switch-off.
///
/// All clamps here conduct only in the switch-off direction; in the on-state
/// they are reverse biased and carry no current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Clamp {
    /// No clamp: at switch-off the switch breaks down (avalanche) at its
    /// breakdown voltage and absorbs the energy.
    None,
    /// Plain freewheel diode.
    Diode(DiodeLaw),
    /// Diode in series with a zener (sharp knee): clamp voltage
    /// `v = v_diode(i) + Vz + Rz·i` for `i > 0`.
    DiodeZener {
        /// The series (blocking) diode.
        diode: DiodeLaw,
        /// Zener voltage `Vz` in volts (≥ 0).
        zener_volts: f64,
        /// Zener dynamic resistance `Rz` in ohms (≥ 0).
        zener_ohms: f64,
    },
    /// Diode in series with a resistor: `v = v_diode(i) + R·i`.
    DiodeResistor {
        /// The series (blocking) diode.
        diode: DiodeLaw,
        /// Resistor in ohms (≥ 0).
        ohms: f64,
    },
    /// Bidirectional TVS (or any constant-voltage clamp) rated above the
    /// supply: `v = Vbr + Rd·i` for `i > 0`, open below `Vbr`. With `Rd = 0`
    /// this is the ideal constant-voltage clamp of the textbooks.
    Tvs {
        /// Clamping voltage `Vbr` in volts (≥ 0).
        breakdown_volts: f64,
        /// Dynamic resistance `Rd` in ohms (≥ 0).
        dynamic_ohms: f64,
    },
}

impl Clamp {
    /// Voltage (V) at which the clamp starts to conduct (its value at `i → 0+`).
    pub fn threshold_volts(&self) -> f64 {
        match *self {
            Clamp::None => f64::INFINITY,
            Clamp::Diode(_) | Clamp::DiodeResistor { .. } => 0.0,
            Clamp::DiodeZener { zener_volts, .. } => zener_volts,
            Clamp::Tvs {
                breakdown_volts, ..
            } => breakdown_volts,
        }
    }

    /// Clamp voltage (V) at forward current `amps` (A, `≥ 0`; negative
    /// values are treated as zero). `+∞` for [`Clamp::None`].
    pub fn volts_at(&self, amps: f64) -> f64 {
        let i = if amps > 0.0 { amps } else { 0.0 };
        match *self {
            Clamp::None => f64::INFINITY,
            Clamp::Diode(d) => d.volts_at(i),
            Clamp::DiodeZener {
                diode,
                zener_volts,
                zener_ohms,
            } => diode.volts_at(i) + zener_volts + zener_ohms * i,
            Clamp::DiodeResistor { diode, ohms } => diode.volts_at(i) + ohms * i,
            Clamp::Tvs {
                breakdown_volts,
                dynamic_ohms,
            } => breakdown_volts + dynamic_ohms * i,
        }
    }

    /// Incremental resistance dv/di (Ω) at forward current `amps`.
    pub fn slope_at(&self, amps: f64) -> f64 {
        match *self {
            Clamp::None => 0.0,
            Clamp::Diode(d) => d.slope_at(amps),
            Clamp::DiodeZener {
                diode, zener_ohms, ..
            } => diode.slope_at(amps) + zener_ohms,
            Clamp::DiodeResistor { diode, ohms } => diode.slope_at(amps) + ohms,
            Clamp::Tvs { dynamic_ohms, .. } => dynamic_ohms,
        }
    }

    pub(crate) fn validate(&self) -> Result<(), SimError> {
        match *self {
            Clamp::None => Ok(()),
            Clamp::Diode(d) => d.validate(),
            Clamp::DiodeZener {
                diode,
                zener_volts,
                zener_ohms,
            } => {
                diode.validate()?;
                finite_ge0(zener_volts, "clamp.zener_volts")?;
                finite_ge0(zener_ohms, "clamp.zener_ohms")
            }
            Clamp::DiodeResistor { diode, ohms } => {
                diode.validate()?;
                finite_ge0(ohms, "clamp.ohms")
            }
            Clamp::Tvs {
                breakdown_volts,
                dynamic_ohms,
            } => {
                finite_ge0(breakdown_volts, "clamp.breakdown_volts")?;
                finite_ge0(dynamic_ohms, "clamp.dynamic_ohms")
            }
        }
    }
}

/// Series RC snubber across the coil (in parallel with any [`Clamp`]).
/// The capacitor voltage is a state of the simulation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Snubber {
    /// Series resistance in ohms (> 0).
    pub ohms: f64,
    /// Capacitance in farads (> 0).
    pub farads: f64,
}

/// The switching transistor. Its on-path always includes the current-sense
/// resistor of [`ChannelParams::sense_ohms`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Switch {
    /// N-channel MOSFET: on-state `v = Ron·i` (both directions); off-state
    /// blocks until `breakdown_volts`, then avalanches as
    /// `v = Vbr + Rav·i`; the body diode conducts reverse current below
    /// `−body_diode_volts` (piecewise linear, 50 mΩ).
    Mosfet {
        /// On-resistance `Ron` in ohms (≥ 0; `Ron + Rsense > 0` required).
        on_ohms: f64,
        /// Drain–source breakdown (avalanche) voltage in volts (> 0).
        breakdown_volts: f64,
        /// Resistance in avalanche `Rav` in ohms (≥ 0).
        avalanche_ohms: f64,
        /// Body-diode forward voltage in volts (≥ 0).
        body_diode_volts: f64,
    },
    /// Bipolar transistor driven into saturation: on-state
    /// `v = Vsat + Rsat·i` for `i > 0`, no reverse conduction; off-state
    /// blocks until `breakdown_volts`, then `v = Vbr + Rav·i`.
    Bipolar {
        /// Saturation voltage offset `Vsat` in volts (≥ 0).
        saturation_volts: f64,
        /// Saturation slope resistance `Rsat` in ohms (≥ 0; `Rsat + Rsense > 0` required).
        saturation_ohms: f64,
        /// Collector–emitter breakdown voltage in volts (> 0).
        breakdown_volts: f64,
        /// Resistance in breakdown in ohms (≥ 0).
        avalanche_ohms: f64,
    },
}

impl Switch {
    /// A logic-level 60 V MOSFET (invented values: Ron = 50 mΩ, Vbr = 68 V,
    /// Rav = 0.2 Ω, body diode 0.7 V).
    pub const fn small_mosfet() -> Self {
        Switch::Mosfet {
            on_ohms: 0.05,
            breakdown_volts: 68.0,
            avalanche_ohms: 0.2,
            body_diode_volts: 0.7,
        }
    }

    /// A small NPN driver transistor (invented values: Vsat = 0.1 V,
    /// Rsat = 1 Ω, Vceo breakdown 45 V, 0.5 Ω in breakdown).
    pub const fn small_npn() -> Self {
        Switch::Bipolar {
            saturation_volts: 0.1,
            saturation_ohms: 1.0,
            breakdown_volts: 45.0,
            avalanche_ohms: 0.5,
        }
    }

    /// Breakdown voltage in volts.
    pub fn breakdown_volts(&self) -> f64 {
        match *self {
            Switch::Mosfet {
                breakdown_volts, ..
            }
            | Switch::Bipolar {
                breakdown_volts, ..
            } => breakdown_volts,
        }
    }

    pub(crate) fn validate(&self, sense_ohms: f64) -> Result<(), SimError> {
        match *self {
            Switch::Mosfet {
                on_ohms,
                breakdown_volts,
                avalanche_ohms,
                body_diode_volts,
            } => {
                finite_ge0(on_ohms, "switch.on_ohms")?;
                check(on_ohms + sense_ohms > 0.0, "switch.on_ohms")?;
                finite_gt0(breakdown_volts, "switch.breakdown_volts")?;
                finite_ge0(avalanche_ohms, "switch.avalanche_ohms")?;
                finite_ge0(body_diode_volts, "switch.body_diode_volts")
            }
            Switch::Bipolar {
                saturation_volts,
                saturation_ohms,
                breakdown_volts,
                avalanche_ohms,
            } => {
                finite_ge0(saturation_volts, "switch.saturation_volts")?;
                finite_ge0(saturation_ohms, "switch.saturation_ohms")?;
                check(saturation_ohms + sense_ohms > 0.0, "switch.saturation_ohms")?;
                finite_gt0(breakdown_volts, "switch.breakdown_volts")?;
                finite_ge0(avalanche_ohms, "switch.avalanche_ohms")
            }
        }
    }
}

/// The winding.
///
/// Inductance versus normalised armature position `x ∈ [0, 1]`
/// (0 = released, 1 = operated) follows a one-gap reluctance law
/// (magnetic path = fixed iron/leakage part + an air gap that closes
/// linearly with `x`):
///
/// `L(x) = L_op / (1 + k·(1 − x))`, `k = L_op/L_rel − 1`,
/// `dL/dx = L_op·k / (1 + k·(1 − x))²`.
///
/// Hence `L(0) = L_rel` and `L(1) = L_op`. Iron saturation, eddy currents and
/// hysteresis are not modelled.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Coil {
    /// Winding resistance in ohms at the temperature of the run (> 0).
    pub resistance_ohms: f64,
    /// Inductance with the armature released, in henries (> 0).
    pub inductance_released_henries: f64,
    /// Inductance with the armature operated, in henries (≥ the released value).
    pub inductance_operated_henries: f64,
    /// Wiring (harness + connector) resistance in series with the coil, in
    /// ohms (≥ 0). The clamp sits on the driver side, across coil + wiring.
    pub wiring_ohms: f64,
}

impl Coil {
    /// A coil whose inductance does not depend on the armature.
    pub const fn fixed(resistance_ohms: f64, henries: f64, wiring_ohms: f64) -> Self {
        Coil {
            resistance_ohms,
            inductance_released_henries: henries,
            inductance_operated_henries: henries,
            wiring_ohms,
        }
    }

    /// Inductance in henries at normalised position `x` (clamped to [0, 1]),
    /// from the reluctance law in the type docs.
    pub fn inductance_at(&self, x: f64) -> f64 {
        let k = self.inductance_operated_henries / self.inductance_released_henries - 1.0;
        let x = x.clamp(0.0, 1.0);
        self.inductance_operated_henries / (1.0 + k * (1.0 - x))
    }

    pub(crate) fn validate(&self) -> Result<(), SimError> {
        finite_gt0(self.resistance_ohms, "coil.resistance_ohms")?;
        finite_gt0(
            self.inductance_released_henries,
            "coil.inductance_released_henries",
        )?;
        check(
            self.inductance_operated_henries.is_finite()
                && self.inductance_operated_henries >= self.inductance_released_henries,
            "coil.inductance_operated_henries",
        )?;
        finite_ge0(self.wiring_ohms, "coil.wiring_ohms")
    }
}

/// Moving-armature mechanics (one degree of freedom along the stroke).
///
/// `m·ẍ_m = F_mag − (F0 + k_s·p) − c·ṗ`, with `p ∈ [0, stroke]` in metres,
/// magnetic force from virtual work `F_mag = ½·i²·dL/dp` (linear magnetics),
/// hard end stops at both ends. At a stop the armature stays while the net
/// force presses it into the stop; an impact reverses the velocity times
/// `restitution` (0 = no bounce).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Armature {
    /// Travel from released to operated stop, in metres (> 0).
    pub stroke_m: f64,
    /// Moving mass in kilograms (> 0).
    pub mass_kg: f64,
    /// Return-spring force at the released stop `F0`, newtons (≥ 0).
    pub preload_newtons: f64,
    /// Return-spring rate `k_s`, newtons per metre (≥ 0).
    pub spring_newtons_per_m: f64,
    /// Viscous damping `c`, newton-seconds per metre (≥ 0).
    pub damping_newton_s_per_m: f64,
    /// Coefficient of restitution at the stops, in [0, 1].
    pub restitution: f64,
}

/// Whether and how the armature moves.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Mechanics {
    /// The armature is held at a fixed normalised position `x ∈ [0, 1]`
    /// (a bench inductor, or a coil whose inductance one wants constant).
    Fixed {
        /// Normalised position (0 = released, 1 = operated).
        position: f64,
    },
    /// The armature moves under magnetic and spring forces.
    Moving(Armature),
}

/// Which node the switch connects.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Topology {
    /// Coil from the rail to the switch, switch to ground (the switched
    /// coil terminal swings *above* the rail at switch-off).
    #[default]
    LowSide,
    /// Switch from the rail to the coil, coil to ground, clamp from ground
    /// to the switched terminal (that terminal swings *below* ground at
    /// switch-off). The equations are the same as for the low side with the
    /// switch voltage measured from the rail; only the reported node voltage
    /// differs.
    HighSide,
}

/// One coil with its drive circuit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChannelParams {
    /// The winding.
    pub coil: Coil,
    /// Armature mechanics.
    pub mechanics: Mechanics,
    /// The switching transistor.
    pub switch: Switch,
    /// Current-sense resistor in series with the switch, ohms (≥ 0).
    pub sense_ohms: f64,
    /// The clamp across the coil.
    pub clamp: Clamp,
    /// Optional RC snubber across the coil.
    pub snubber: Option<Snubber>,
    /// Low-side or high-side switch.
    pub topology: Topology,
}

impl ChannelParams {
    pub(crate) fn validate(&self) -> Result<(), SimError> {
        self.coil.validate()?;
        finite_ge0(self.sense_ohms, "sense_ohms")?;
        self.switch.validate(self.sense_ohms)?;
        self.clamp.validate()?;
        if let Some(s) = self.snubber {
            finite_gt0(s.ohms, "snubber.ohms")?;
            finite_gt0(s.farads, "snubber.farads")?;
        }
        match self.mechanics {
            Mechanics::Fixed { position } => {
                check((0.0..=1.0).contains(&position), "mechanics.position")
            }
            Mechanics::Moving(a) => {
                finite_gt0(a.stroke_m, "armature.stroke_m")?;
                finite_gt0(a.mass_kg, "armature.mass_kg")?;
                finite_ge0(a.preload_newtons, "armature.preload_newtons")?;
                finite_ge0(a.spring_newtons_per_m, "armature.spring_newtons_per_m")?;
                finite_ge0(a.damping_newton_s_per_m, "armature.damping_newton_s_per_m")?;
                check((0.0..=1.0).contains(&a.restitution), "armature.restitution")
            }
        }
    }
}

/// The supply feeding all channels of a bench.
///
/// With `source_ohms = 0` the rail is an ideal source. Otherwise the rail is
/// a node with a bulk capacitor `bulk_farads` fed from the ideal source
/// through `source_ohms`, so that simultaneous turn-ons sag it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Supply {
    /// Open-circuit supply voltage in volts (≥ 0).
    pub volts: f64,
    /// Source resistance in ohms (≥ 0).
    pub source_ohms: f64,
    /// Bulk capacitance on the rail in farads (> 0 when `source_ohms > 0`).
    pub bulk_farads: f64,
}

impl Supply {
    /// An ideal (stiff) supply.
    pub const fn ideal(volts: f64) -> Self {
        Supply {
            volts,
            source_ohms: 0.0,
            bulk_farads: 0.0,
        }
    }

    pub(crate) fn validate(&self) -> Result<(), SimError> {
        finite_ge0(self.volts, "supply.volts")?;
        finite_ge0(self.source_ohms, "supply.source_ohms")?;
        finite_ge0(self.bulk_farads, "supply.bulk_farads")?;
        if self.source_ohms > 0.0 && self.bulk_farads <= 0.0 {
            return Err(SimError::RailNeedsCapacitance);
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::settings::SolverSettings;

    #[test]
    fn validation_rejects_bad_values() {
        let good = crate::demo::valve_24v();
        assert!(good.validate().is_ok());
        let mut p = good;
        p.coil.resistance_ohms = f64::NAN;
        assert_eq!(
            p.validate(),
            Err(SimError::InvalidParameter("coil.resistance_ohms"))
        );
        let mut p = good;
        p.coil.inductance_operated_henries = 0.1;
        assert!(p.validate().is_err());
        let mut p = good;
        p.sense_ohms = -1.0;
        assert!(p.validate().is_err());
        let mut p = good;
        p.switch = Switch::Mosfet {
            on_ohms: 0.0,
            breakdown_volts: 60.0,
            avalanche_ohms: 0.0,
            body_diode_volts: 0.7,
        };
        p.sense_ohms = 0.0;
        assert!(p.validate().is_err());
        let s = Supply {
            volts: 24.0,
            source_ohms: 0.5,
            bulk_farads: 0.0,
        };
        assert_eq!(s.validate(), Err(SimError::RailNeedsCapacitance));
        assert!(Supply::ideal(f64::INFINITY).validate().is_err());
        let st = SolverSettings::with_max_step(-1.0);
        assert!(st.validate().is_err());
    }

    /// Thermal voltage at 25 °C ≈ 25.69 mV (kT/q, textbook value).
    #[test]
    fn thermal_voltage() {
        assert!((THERMAL_VOLTS_25C - 0.025693).abs() < 1e-6);
    }
}
