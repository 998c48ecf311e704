//! The coil: winding resistance with its copper temperature coefficient, inductance per armature
//! position, and the must-operate / must-release ratings that fix pull-in and drop-out currents.

use super::domain::{inductance_in_range, resistance_in_range};
use crate::error::{finite, positive, Error, Param, Why};
use crate::units::{Amps, Celsius, Henries, Ohms, PerKelvin};

/// Temperature coefficient of resistance of annealed copper at 20 °C: 0.003 93 /K
/// (IEC 60028 annealed copper: α20 = 0.003 93 /K, zero-resistance point −234.5 °C).
pub const COPPER_ALPHA_20C: PerKelvin = PerKelvin::new(0.003_93);

/// Lowest winding temperature the linear copper model is used for, °C.
pub const MIN_WINDING_TEMPERATURE: Celsius = Celsius::new(-100.0);
/// Highest winding temperature the linear copper model is used for, °C (beyond every insulation
/// class; magnet wire class 220 is the top of IEC 60085).
pub const MAX_WINDING_TEMPERATURE: Celsius = Celsius::new(250.0);

/// Which mechanical state the armature is in; it sets the inductance.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Armature {
    /// Released: air gap open, lower inductance. Applies while the coil pulls in.
    Released,
    /// Operated: air gap closed, higher inductance. Applies when the coil is switched off.
    Operated,
}

/// A relay, valve or contactor coil as its datasheet describes it.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Coil {
    resistance: f32,
    reference_temperature: f32,
    alpha: f32,
    inductance_released: f32,
    inductance_operated: f32,
    must_operate: f32,
    must_release: f32,
    /// `must_operate / resistance`, A (divided once here: the budget asks for it at every
    /// point, and a division is about 130 instructions without an FPU).
    pull_in: f32,
    /// `must_release / resistance`, A.
    drop_out: f32,
}

impl Coil {
    /// A coil with winding resistance `resistance` measured at `reference_temperature`, inductance
    /// `inductance_released` (armature open) and `inductance_operated` (armature closed; pass the
    /// same value for a coil without a moving armature), and the datasheet's must-operate and
    /// must-release voltages, both specified at the reference temperature. Copper's temperature
    /// coefficient ([`COPPER_ALPHA_20C`]) is assumed; see [`Coil::with_temperature_coefficient`].
    ///
    /// # Errors
    /// [`Error::Invalid`] naming the parameter: any value non-finite; R, L or must-operate not
    /// positive; R above [`super::domain::MAX_RESISTANCE`] or L below [`super::domain::MIN_INDUCTANCE`] ([`Why::OutOfRange`]); must-release not positive or not below must-operate; reference temperature outside
    /// [`MIN_WINDING_TEMPERATURE`]..[`MAX_WINDING_TEMPERATURE`]; a must-operate voltage so large
    /// against R that `V_op/R` overflows f32, or a must-release voltage so small against R that
    /// `V_rel/R` is below the smallest normal f32 ([`Why::OutOfRange`]).
    pub fn new(
        resistance: Ohms,
        reference_temperature: Celsius,
        inductance_released: Henries,
        inductance_operated: Henries,
        must_operate: crate::units::Volts,
        must_release: crate::units::Volts,
    ) -> Result<Self, Error> {
        let resistance = resistance_in_range(
            positive(resistance.value(), Param::WindingResistance)?,
            Param::WindingResistance,
        )?;
        let t_ref = temperature_in_range(reference_temperature)?;
        let l_rel = inductance_in_range(inductance_released, Param::InductanceReleased)?;
        let l_op = inductance_in_range(inductance_operated, Param::InductanceOperated)?;
        let v_op = positive(must_operate.value(), Param::MustOperateVoltage)?;
        let v_rel = positive(must_release.value(), Param::MustReleaseVoltage)?;
        if v_rel >= v_op {
            return Err(Error::invalid(
                Param::MustReleaseVoltage,
                Why::ReleaseAboveOperate,
            ));
        }
        // The pull-in current V_op/R (the larger of the two ratios) must be finite, and the
        // drop-out current V_rel/R (the smaller) a normal f32: a ratio that underflows to 0 or
        // a subnormal would make every margin and ratio against it overflow.
        let pull_in = v_op / resistance;
        let drop_out = v_rel / resistance;
        if !pull_in.is_finite() {
            return Err(Error::invalid(Param::MustOperateVoltage, Why::OutOfRange));
        }
        if drop_out < f32::MIN_POSITIVE {
            return Err(Error::invalid(Param::MustReleaseVoltage, Why::OutOfRange));
        }
        Ok(Self {
            resistance,
            reference_temperature: t_ref,
            alpha: COPPER_ALPHA_20C.value(),
            inductance_released: l_rel,
            inductance_operated: l_op,
            must_operate: v_op,
            must_release: v_rel,
            pull_in,
            drop_out,
        })
    }

    /// The same coil with another temperature coefficient (1/K, finite, 0 ≤ α ≤ 0.01;
    /// aluminium ≈ 0.0040 /K (handbook value, from memory)).
    pub fn with_temperature_coefficient(mut self, alpha: PerKelvin) -> Result<Self, Error> {
        let a = finite(alpha.value(), Param::TemperatureCoefficient)?;
        if !(0.0..=0.01).contains(&a) {
            return Err(Error::invalid(
                Param::TemperatureCoefficient,
                Why::OutOfRange,
            ));
        }
        self.alpha = a;
        Ok(self)
    }

    /// Winding resistance at the reference temperature, Ω.
    pub const fn resistance_ref(&self) -> Ohms {
        Ohms::new(self.resistance)
    }

    /// The reference temperature of the resistance and voltage ratings, °C.
    pub const fn reference_temperature(&self) -> Celsius {
        Celsius::new(self.reference_temperature)
    }

    /// Temperature coefficient α, 1/K.
    pub const fn temperature_coefficient(&self) -> PerKelvin {
        PerKelvin::new(self.alpha)
    }

    /// Inductance in the given armature state, H.
    pub const fn inductance(&self, armature: Armature) -> Henries {
        Henries::new(match armature {
            Armature::Released => self.inductance_released,
            Armature::Operated => self.inductance_operated,
        })
    }

    /// Must-operate voltage at the reference temperature, V.
    pub const fn must_operate(&self) -> crate::units::Volts {
        crate::units::Volts::new(self.must_operate)
    }

    /// Must-release voltage at the reference temperature, V.
    pub const fn must_release(&self) -> crate::units::Volts {
        crate::units::Volts::new(self.must_release)
    }

    /// Winding resistance at temperature T: `R(T) = R_ref·(1 + α·(T − T_ref))`, Ω.
    ///
    /// Domain: T within [`MIN_WINDING_TEMPERATURE`]..[`MAX_WINDING_TEMPERATURE`]. Accuracy: the
    /// linear copper law is within about 1 % of measured copper resistivity from −100 °C to
    /// +250 °C; the result carries f32 rounding only.
    ///
    /// # Errors
    /// Temperature outside the range; [`crate::Limit::Overflow`] when `R(T)` overflows f32 (an
    /// `R_ref` near f32::MAX, warmed).
    pub fn resistance_at(&self, temperature: Celsius) -> Result<Ohms, Error> {
        let t = temperature_in_range(temperature)?;
        let scale = 1.0 + self.alpha * (t - self.reference_temperature);
        positive(scale, Param::Temperature)?;
        crate::error::result(self.resistance * scale).map(Ohms::new)
    }

    /// Winding temperature from a measured resistance: `T = T_ref + (R/R_ref − 1)/α`, °C.
    ///
    /// Domain: R finite and > 0, α > 0; a result outside the model's temperature range is an
    /// error (a resistance that far off is a fault, not a temperature).
    pub fn temperature_from_resistance(&self, measured: Ohms) -> Result<Celsius, Error> {
        let r = positive(measured.value(), Param::WindingResistance)?;
        positive(self.alpha, Param::TemperatureCoefficient)?;
        let t = self.reference_temperature + (r / self.resistance - 1.0) / self.alpha;
        temperature_in_range(Celsius::new(t)).map(Celsius::new)
    }

    /// Pull-in current: `I_pull = V_must_operate / R_ref`, A.
    ///
    /// The armature pulls in at a fixed ampere-turn figure, so the current is fixed; the
    /// must-operate *voltage* rises with winding temperature only because R does.
    pub fn pull_in_current(&self) -> Amps {
        Amps::new(self.pull_in)
    }

    /// Drop-out current: `I_drop = V_must_release / R_ref`, A.
    pub fn drop_out_current(&self) -> Amps {
        Amps::new(self.drop_out)
    }
}

/// `Ok(t)` when the winding temperature `t` is finite and within the copper model's range
/// ([`MIN_WINDING_TEMPERATURE`]..=[`MAX_WINDING_TEMPERATURE`]), else [`Param::Temperature`].
pub(super) fn temperature_in_range(t: Celsius) -> Result<f32, Error> {
    temperature_in_range_as(t.value(), Param::Temperature)
}

/// [`temperature_in_range`] reporting `param`.
pub(super) fn temperature_in_range_as(t: f32, param: Param) -> Result<f32, Error> {
    let t = finite(t, param)?;
    // `MIN ≤ t ≤ MAX` on the bits (a float compare is a library call without an FPU): finite
    // floats of one sign order as their magnitude bits; −0 is 0.
    let bits = t.to_bits();
    let limit = if bits >> 31 == 1 {
        (-MIN_WINDING_TEMPERATURE.value()).to_bits()
    } else {
        MAX_WINDING_TEMPERATURE.value().to_bits()
    };
    if bits & 0x7FFF_FFFF > limit {
        return Err(Error::invalid(param, Why::OutOfRange));
    }
    Ok(t)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::Volts;

    fn valve() -> Coil {
        // Invented demo coil: a 24 V valve, 180 Ω at 20 °C.
        Coil::new(
            Ohms::new(180.0),
            Celsius::new(20.0),
            Henries::new(0.30),
            Henries::new(0.45),
            Volts::new(16.8),
            Volts::new(2.4),
        )
        .unwrap()
    }

    #[test]
    fn copper_coefficient_matches_the_annealed_copper_standard() {
        // IEC 60028 annealed copper: α20 = 0.003 93 /K, zero-resistance point −234.5 °C:
        // 1/(234.5 + 20) = 0.003929 /K.
        assert!((COPPER_ALPHA_20C.value() - 1.0 / 254.5).abs() < 2e-6);
        // Handbook rule of thumb (common practice, no source): copper gains ≈ 25 % from 20 to 85 °C.
        let c = valve();
        let r85 = c.resistance_at(Celsius::new(85.0)).unwrap().value();
        assert!((r85 / 180.0 - 1.2555).abs() < 1e-3);
    }

    #[test]
    fn temperature_round_trips_through_resistance() {
        let c = valve();
        for t in [-40.0f32, 0.0, 20.0, 55.0, 85.0, 155.0] {
            let r = c.resistance_at(Celsius::new(t)).unwrap();
            let back = c.temperature_from_resistance(r).unwrap().value();
            assert!((back - t).abs() < 0.01, "{t} -> {back}");
        }
    }

    #[test]
    fn pull_in_and_drop_out_currents() {
        let c = valve();
        // Common practice, no source: pull-in and drop-out currents are the must-operate and
        // must-release voltages over the reference resistance (Ohm's law).
        assert!((c.pull_in_current().value() - 16.8 / 180.0).abs() < 1e-7);
        assert!((c.drop_out_current().value() - 2.4 / 180.0).abs() < 1e-7);
    }

    #[test]
    fn bad_coils_are_rejected_with_the_parameter_named() {
        let ok = |r: f32, l: f32, vo: f32, vr: f32| {
            Coil::new(
                Ohms::new(r),
                Celsius::new(20.0),
                Henries::new(l),
                Henries::new(l),
                Volts::new(vo),
                Volts::new(vr),
            )
        };
        assert_eq!(
            ok(0.0, 0.1, 10.0, 1.0),
            Err(Error::invalid(Param::WindingResistance, Why::NotPositive))
        );
        assert_eq!(
            ok(f32::NAN, 0.1, 10.0, 1.0),
            Err(Error::invalid(Param::WindingResistance, Why::NotFinite))
        );
        assert_eq!(
            ok(100.0, -0.1, 10.0, 1.0),
            Err(Error::invalid(Param::InductanceReleased, Why::NotPositive))
        );
        assert_eq!(
            ok(100.0, 0.1, 10.0, 10.0),
            Err(Error::invalid(
                Param::MustReleaseVoltage,
                Why::ReleaseAboveOperate
            ))
        );
        assert!(valve().resistance_at(Celsius::new(900.0)).is_err());
        assert!(valve().resistance_at(Celsius::new(f32::NAN)).is_err());
        assert!(valve()
            .temperature_from_resistance(Ohms::new(1.0e6))
            .is_err());
        assert!(valve()
            .with_temperature_coefficient(PerKelvin::new(0.5))
            .is_err());
    }
}
