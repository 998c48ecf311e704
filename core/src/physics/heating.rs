//! Coil heating: dissipation at a duty, the self-heated winding temperature, and the winding
//! temperature from resistance (the "resistance method").
//!
//! **Dissipation.** `P = I∞²·R_w·D`: the time average over a duty D with the on-state current taken
//! at its final value (rise and release transients neglected: they shorten the on-phase current,
//! so this slightly overestimates; valid when the pulses are long against τ and short against the
//! coil's thermal time constant).
//!
//! **Self-heating.** With thermal resistance R_th from winding to ambient (K/W), the winding
//! settles where `T = T_amb + R_th·P(T)`, `P(T) = D·V²·R_w(T)/(R_w(T) + R_x)²`, `R_w(T)` the
//! linear copper law and R_x the rest of the on loop (wiring, sense, R_DS(on)). Solved with a
//! bounded bracketed root finder. The root is unique on T ≥ T_amb: as a function of R_w, P rises
//! until R_w = R_x and is concave for R_w < 2R_x, so `h(T) = T − T_amb − R_th·P(T)` is convex there
//! and increasing beyond (P falls); starting from `h(T_amb) ≤ 0` it crosses zero exactly once. In
//! the usual case R_w > R_x, P falls as the winding warms (constant-voltage drive is thermally
//! self-limiting), and with R_x = 0 the equilibrium is the positive root of a quadratic (used as
//! the check in the tests).
//!
//! Copper and insulation limits are the designer's: this is a steady-state estimate and does not
//! replace a temperature-rise test.

use super::circuit::{Circuit, OperatingPoint};
use super::coil::{temperature_in_range, MAX_WINDING_TEMPERATURE};
use super::drive::duty_fraction;
use crate::error::{finite, non_negative, positive, result, Error, Limit, Param};
use crate::units::{Amps, Celsius, KelvinPerWatt, Ohms, Watts};

/// Temperature at which copper's resistance extrapolates to zero on the linear law, °C (−234.5 °C =
/// 20 °C − 1/α20; IEC 60028 annealed copper: α20 = 0.003 93 /K, zero-resistance point −234.5 °C).
pub const COPPER_ZERO_RESISTANCE: Celsius = Celsius::new(-234.5);

/// Iteration cap of the equilibrium solver.
const MAX_THERMAL_STEPS: u32 = 60;

/// Time-average coil dissipation at a duty: `P = I²·R·D`, W (transients neglected).
///
/// Domain: I finite, R ≥ 0, 0 ≤ D ≤ 1.
pub fn coil_dissipation(current: Amps, winding: Ohms, duty: f32) -> Result<Watts, Error> {
    let i = finite(current.value(), Param::Current)?;
    let r = non_negative(winding.value(), Param::WindingResistance)?;
    let d = duty_fraction(duty)?;
    result(i * i * r * d).map(Watts::new)
}

/// Winding temperature by the resistance method for copper:
/// `T₂ = (R₂/R₁)·(234.5 + T₁) − 234.5`, °C, from a cold resistance R₁ at a known T₁ and a hot
/// resistance R₂ (the linear copper law referred to T₁; some standards round 234.5 to 235).
///
/// # Errors
/// Non-positive resistance, T₁ outside the copper model's range, or a result outside it.
pub fn temperature_by_resistance(
    cold: Ohms,
    cold_temperature: Celsius,
    hot: Ohms,
) -> Result<Celsius, Error> {
    let r1 = positive(cold.value(), Param::WindingResistance)?;
    let r2 = positive(hot.value(), Param::WindingResistance)?;
    let t1 = temperature_in_range(cold_temperature)?;
    let k = -COPPER_ZERO_RESISTANCE.value();
    let t2 = result((r2 / r1) * (k + t1) - k)?;
    temperature_in_range(Celsius::new(t2)).map(Celsius::new)
}

/// The self-heated steady state of a coil.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SelfHeating {
    /// Winding temperature at equilibrium, °C.
    pub temperature: Celsius,
    /// Winding resistance there, Ω.
    pub winding: Ohms,
    /// On-state current there, A.
    pub current: Amps,
    /// Average winding dissipation there, W.
    pub power: Watts,
}

impl Circuit {
    /// Time-average winding dissipation at an operating point and duty: `P = I∞²·R_w(T)·D`, W.
    pub fn coil_dissipation(&self, op: &OperatingPoint, duty: f32) -> Result<Watts, Error> {
        let r = self.resolve(op)?;
        let i = r.drive.value() / r.on_loop.value();
        coil_dissipation(Amps::new(i), r.winding, duty)
    }

    /// Self-heated winding temperature at ambient `ambient`, thermal resistance winding→ambient
    /// `thermal_resistance` (K/W, > 0) and duty `duty` (0…1), at the supply and part factors of
    /// `op` (its temperature is ignored: it is what is solved for). Method and uniqueness in the
    /// module docs; solved to 1e-5 relative in at most 60 steps.
    ///
    /// # Errors
    /// [`Limit::Overtemperature`] when the equilibrium lies above
    /// [`MAX_WINDING_TEMPERATURE`]; [`Limit::Overflow`] when a figure does not fit an f32;
    /// invalid inputs.
    pub fn self_heating(
        &self,
        op: &OperatingPoint,
        ambient: Celsius,
        thermal_resistance: KelvinPerWatt,
        duty: f32,
    ) -> Result<SelfHeating, Error> {
        let t_amb = temperature_in_range(ambient)?;
        let r_th = positive(thermal_resistance.value(), Param::ThermalResistance)?;
        let d = duty_fraction(duty)?;
        let at_ambient = OperatingPoint {
            temperature: Celsius::new(t_amb),
            ..*op
        };
        let r = self.resolve(&at_ambient)?;
        let coil = self.coil();
        let r_ref = coil.resistance_ref().value() * op.resistance_factor;
        let alpha = coil.temperature_coefficient().value();
        let t_ref = coil.reference_temperature().value();
        let r_x = r.on_loop.value() - r.winding.value();
        let v = r.drive.value();
        let winding_at = |t: f32| r_ref * (1.0 + alpha * (t - t_ref));
        // P = D·i²·R_w with i = V/(R_w + R_x): the current first, so that neither V² nor
        // (R_w + R_x)² can overflow on their own (∞/∞ was a NaN for extreme supplies and loops).
        let power_at = |t: f32| {
            let rw = winding_at(t);
            let i = v / (rw + r_x);
            d * i * i * rw
        };
        let h = |t: f32| t - t_amb - r_th * power_at(t);
        // Bracket: P never exceeds its value at ambient when R_w ≥ R_x there, else D·V²/(4·R_x).
        let rw_amb = r.winding.value();
        let p_max = if rw_amb >= r_x {
            power_at(t_amb)
        } else {
            // D·V²/(4·R_x), as D·(V/(2R_x))²·R_x for the same reason.
            let i = 0.5 * (v / r_x);
            d * i * i * r_x
        };
        let t_hi = result(t_amb + r_th * p_max)?;
        let t = if t_hi <= t_amb || h(t_amb) >= 0.0 {
            t_amb
        } else {
            let limit = MAX_WINDING_TEMPERATURE.value();
            let top = libm::fminf(t_hi, limit);
            if h(top) < 0.0 {
                return Err(Error::OutsideModel(Limit::Overtemperature));
            }
            super::root::illinois(h, t_amb, top, MAX_THERMAL_STEPS, 1.0e-5)
        };
        let rw = winding_at(t);
        positive(rw, Param::Temperature)?;
        Ok(SelfHeating {
            temperature: Celsius::new(t),
            winding: Ohms::new(result(rw)?),
            current: Amps::new(result(v / (rw + r_x))?),
            power: Watts::new(result(power_at(t))?),
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::circuit::{tests::valve, Switch, Topology};
    use crate::physics::clamp::Clamp;
    use crate::units::Volts;

    fn op() -> OperatingPoint {
        OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0))
    }

    #[test]
    fn dissipation_is_i_squared_r_times_duty() {
        let p = coil_dissipation(Amps::new(0.1), Ohms::new(180.0), 0.5).unwrap();
        // Textbook, from memory: Joule heating, P = I²·R·D (0.1² · 180 · 0.5 = 0.9 W).
        assert!((p.value() - 0.9).abs() < 1e-6);
        assert!(coil_dissipation(Amps::new(0.1), Ohms::new(180.0), -0.1).is_err());
        let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
        let i = 24.0 / 181.0;
        let p = c.coil_dissipation(&op(), 1.0).unwrap().value();
        assert!((p - i * i * 180.0).abs() < 1e-5);
    }

    #[test]
    fn resistance_method_matches_the_copper_law() {
        // The resistance method of winding temperature (common practice, no source) with copper's
        // zero-resistance point (IEC 60028 annealed copper: α20 = 0.003 93 /K, zero-resistance
        // point −234.5 °C). 180 Ω at 20 °C reading 225.9 Ω hot: (225.9/180)·254.5 − 234.5 = 84.9
        // °C; the coil's own α-law inverse gives the same within rounding (α20 = 1/254.5).
        let t = temperature_by_resistance(Ohms::new(180.0), Celsius::new(20.0), Ohms::new(225.9))
            .unwrap()
            .value();
        assert!((t - ((225.9 / 180.0) * 254.5 - 234.5)).abs() < 1e-3);
        let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
        let t2 = c
            .coil()
            .temperature_from_resistance(Ohms::new(225.9))
            .unwrap()
            .value();
        assert!((t - t2).abs() < 0.05, "{t} vs {t2}");
        assert!(
            temperature_by_resistance(Ohms::new(1.0), Celsius::new(20.0), Ohms::new(9.0)).is_err()
        );
    }

    /// Wire-only coil (no wiring, sense or switch resistance): the equilibrium is the positive
    /// root of `x² − b·x − c = 0` for `x = R_w/R_ref`, `b = 1 + α(T_amb − T_ref)`,
    /// `c = α·R_th·D·V²/R_ref` (derived by hand from T = T_amb + R_th·D·V²/R_w).
    #[test]
    fn bare_winding_equilibrium_is_the_quadratic_root() {
        let coil = *valve(Clamp::diode(Volts::new(0.8)).unwrap()).coil();
        let c = Circuit::new(
            coil,
            Switch::Bipolar {
                saturation: Volts::new(0.0),
                breakdown: Volts::new(60.0),
            },
            Topology::LowSide,
            Ohms::new(0.0),
            Ohms::new(0.0),
            Clamp::diode(Volts::new(0.8)).unwrap(),
        )
        .unwrap();
        for (t_amb, r_th, d) in [
            (25.0f32, 40.0f32, 1.0f32),
            (60.0, 25.0, 0.5),
            (-20.0, 80.0, 1.0),
        ] {
            let s = c
                .self_heating(&op(), Celsius::new(t_amb), KelvinPerWatt::new(r_th), d)
                .unwrap();
            let a = 0.00393f64;
            let b = 1.0 + a * (t_amb as f64 - 20.0);
            let cc = a * r_th as f64 * d as f64 * 576.0 / 180.0;
            let x = (b + (b * b + 4.0 * cc).sqrt()) / 2.0;
            let t = 20.0 + (x - 1.0) / a;
            assert!(
                (s.temperature.value() as f64 - t).abs() < 0.01,
                "{s:?} vs {t}"
            );
            // Self-consistent: T = T_amb + R_th·P.
            let back = t_amb + r_th * s.power.value();
            assert!((back - s.temperature.value()).abs() < 0.01);
        }
    }

    #[test]
    fn heating_converges_below_the_cold_estimate_and_flags_overheat() {
        let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
        let s = c
            .self_heating(&op(), Celsius::new(40.0), KelvinPerWatt::new(30.0), 1.0)
            .unwrap();
        // Constant voltage: hot coil draws less, so the rise is below the cold-resistance estimate
        // (P = V²/R falls as R rises: Joule heating, textbook, from memory).
        let cold = c
            .coil_dissipation(
                &OperatingPoint::new(Volts::new(24.0), Celsius::new(40.0)),
                1.0,
            )
            .unwrap()
            .value();
        assert!(s.temperature.value() > 40.0);
        assert!(s.temperature.value() < 40.0 + 30.0 * cold);
        assert_eq!(
            c.self_heating(&op(), Celsius::new(40.0), KelvinPerWatt::new(2000.0), 1.0),
            Err(Error::OutsideModel(Limit::Overtemperature))
        );
        // Duty 0: no heating.
        let z = c
            .self_heating(&op(), Celsius::new(40.0), KelvinPerWatt::new(30.0), 0.0)
            .unwrap();
        assert_eq!(z.temperature.value(), 40.0);
        assert!(c
            .self_heating(&op(), Celsius::new(40.0), KelvinPerWatt::new(0.0), 1.0)
            .is_err());
        assert!(c
            .self_heating(&op(), Celsius::new(f32::NAN), KelvinPerWatt::new(10.0), 1.0)
            .is_err());
    }

    #[test]
    fn low_resistance_winding_behind_a_big_series_resistor_still_has_one_root() {
        // R_w (0.5 Ω) < R_x (the 180 Ω "wiring"): P rises with T; the equilibrium must still
        // satisfy T = T_amb + R_th·P(T).
        let coil = crate::Coil::new(
            Ohms::new(0.5),
            Celsius::new(20.0),
            crate::units::Henries::new(1e-3),
            crate::units::Henries::new(1e-3),
            Volts::new(0.01),
            Volts::new(0.001),
        )
        .unwrap();
        let c = Circuit::new(
            coil,
            Switch::Mosfet {
                on_resistance: Ohms::new(0.0),
                breakdown: Volts::new(60.0),
            },
            Topology::LowSide,
            Ohms::new(0.0),
            Ohms::new(180.0),
            Clamp::diode(Volts::new(0.8)).unwrap(),
        )
        .unwrap();
        let s = c
            .self_heating(&op(), Celsius::new(25.0), KelvinPerWatt::new(2000.0), 1.0)
            .unwrap();
        let back = 25.0 + 2000.0 * s.power.value();
        assert!((back - s.temperature.value()).abs() < 0.01, "{s:?}");
    }

    /// Issue 11 item 12: a supply of 1e19 V against an on-resistance of 1e30 Ω made `V²·R_w` and
    /// `(R_w + R_x)²` both overflow, and the reported power was ∞/∞ = NaN.
    #[test]
    fn extreme_on_resistance_gives_a_finite_power_or_an_error() {
        let coil = *valve(Clamp::diode(Volts::new(0.8)).unwrap()).coil();
        for (v, r_on) in [
            (1.0e19f32, 1.0e30f32),
            (1.0e20, 1.0e30),
            (1.0e19, f32::MAX),
            (1.0e19, 1.0e9),
            (3.0e38, 1.0e9),
        ] {
            // On-resistances above the model's 1 GΩ are refused outright.
            let c = Circuit::new(
                coil,
                Switch::Mosfet {
                    on_resistance: Ohms::new(r_on),
                    breakdown: Volts::new(f32::MAX),
                },
                Topology::LowSide,
                Ohms::new(0.0),
                Ohms::new(0.0),
                Clamp::diode(Volts::new(0.8)).unwrap(),
            );
            let Ok(c) = c else {
                assert!(r_on > 1.0e9, "{c:?}");
                continue;
            };
            let op = OperatingPoint::new(Volts::new(v), Celsius::new(20.0));
            if let Ok(s) = c.self_heating(&op, Celsius::new(25.0), KelvinPerWatt::new(40.0), 1.0) {
                for x in [
                    s.temperature.value(),
                    s.winding.value(),
                    s.current.value(),
                    s.power.value(),
                ] {
                    assert!(x.is_finite() && x >= 0.0, "{r_on}: {s:?}");
                }
                // Joule heating, P = I²·R (textbook, from memory).
                let p = s.current.value() * s.current.value() * s.winding.value();
                assert!((s.power.value() - p).abs() <= 1e-5 * p, "{s:?}");
            }
        }
    }
}
