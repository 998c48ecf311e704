//! The model's domain: the ranges of resistance, inductance, clamp voltage and part factor the
//! closed forms are used over.
//!
//! Outside them no coil of this trade exists, and the f32 closed forms lose their figures: a time
//! constant `L/R` that underflows at one tolerance corner and not at another, or an energy split
//! whose `τ·a²` leaves f32's normal range so that the winding's share reads 0. Inputs outside are
//! refused with [`Why::OutOfRange`] naming the parameter.

use crate::error::{positive, Error, Param, Why};
use crate::units::{Henries, Ohms, Volts};

/// Largest resistance the model takes for any part of the drive loop (winding, switch, sense,
/// wiring, clamp resistor), Ω (1 GΩ).
pub const MAX_RESISTANCE: Ohms = Ohms::new(1.0e9);

/// Smallest inductance the model takes, H (1 nH: far below any relay or valve coil).
pub const MIN_INDUCTANCE: Henries = Henries::new(1.0e-9);

/// Range of clamp voltages (diode forward drop, zener/TVS clamp voltage, clamp across the
/// switch) the model takes, V: 1 nV … 100 kV (a drop of a few µV stands for an ideal
/// freewheeling path).
pub const CLAMP_VOLTAGE_RANGE: (Volts, Volts) = (Volts::new(1.0e-9), Volts::new(1.0e5));

/// Range of the part factors of an [`crate::OperatingPoint`]: within two decades of nominal.
/// Tolerance corners lie in 0.1 … 1.9; a part a hundred times off its nominal value is another
/// part.
pub const PART_FACTOR_RANGE: (f32, f32) = (0.01, 100.0);

/// `Ok(r)` for a resistance (already checked finite and ≥ 0) up to [`MAX_RESISTANCE`].
pub(crate) fn resistance_in_range(r: f32, param: Param) -> Result<f32, Error> {
    if r > MAX_RESISTANCE.value() {
        return Err(Error::invalid(param, Why::OutOfRange));
    }
    Ok(r)
}

/// `Ok(l)` for an inductance finite and at least [`MIN_INDUCTANCE`].
pub(crate) fn inductance_in_range(l: Henries, param: Param) -> Result<f32, Error> {
    let l = positive(l.value(), param)?;
    if l < MIN_INDUCTANCE.value() {
        return Err(Error::invalid(param, Why::OutOfRange));
    }
    Ok(l)
}

/// `Ok(v)` for a clamp voltage finite and within [`CLAMP_VOLTAGE_RANGE`].
pub(crate) fn clamp_voltage_in_range(v: Volts, param: Param) -> Result<f32, Error> {
    let v = positive(v.value(), param)?;
    if !(CLAMP_VOLTAGE_RANGE.0.value()..=CLAMP_VOLTAGE_RANGE.1.value()).contains(&v) {
        return Err(Error::invalid(param, Why::OutOfRange));
    }
    Ok(v)
}

/// `Ok(k)` for a part factor finite and within [`PART_FACTOR_RANGE`] ([`Param::Tolerance`]).
///
/// On the budget's hot path: one integer range test of the bits (positive finite floats order as
/// their bits; NaN, negatives and ±0 fall outside), the reason worked out only on failure.
#[inline]
pub(crate) fn part_factor(k: f32) -> Result<f32, Error> {
    const LO: u32 = PART_FACTOR_RANGE.0.to_bits();
    const HI: u32 = PART_FACTOR_RANGE.1.to_bits();
    if (LO..=HI).contains(&k.to_bits()) {
        return Ok(k);
    }
    Err(part_factor_error(k))
}

#[cold]
fn part_factor_error(k: f32) -> Error {
    match positive(k, Param::Tolerance) {
        Err(e) => e,
        Ok(_) => Error::invalid(Param::Tolerance, Why::OutOfRange),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::circuit::tests::valve;
    use crate::physics::circuit::OperatingPoint;
    use crate::physics::clamp::Clamp;
    use crate::units::{Amps, Celsius};

    /// Found by the public-API robustness test (issue 11): a diode drop of 5e23 V or 2e-18 V, or
    /// a winding factor of 7e16, gave releases whose energy split lost the clamp's or the
    /// winding's share (the books no longer closed). Such inputs are refused.
    #[test]
    fn inputs_beyond_the_model_are_refused_by_name() {
        fn out<T>(p: Param) -> Result<T, Error> {
            Err(Error::invalid(p, Why::OutOfRange))
        }
        assert_eq!(Clamp::diode(Volts::new(5.0e23)), out(Param::DiodeDrop));
        assert_eq!(Clamp::diode(Volts::new(2.0e-18)), out(Param::DiodeDrop));
        assert_eq!(
            Clamp::diode_zener(Volts::new(0.7), Volts::new(2.0e5)),
            out(Param::ClampVoltage)
        );
        assert!(Clamp::diode(Volts::new(1.0e-6)).is_ok()); // an ideal freewheel stand-in
        let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
        for k in [7.0e16f32, 101.0, 0.009] {
            let op = OperatingPoint {
                resistance_factor: k,
                ..OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0))
            };
            assert_eq!(
                c.release(&op, Amps::new(0.1)).map(|_| ()),
                out(Param::Tolerance)
            );
        }
        assert_eq!(part_factor(100.0), Ok(100.0));
        assert_eq!(
            resistance_in_range(2.0e9, Param::Resistance),
            out(Param::Resistance)
        );
        assert_eq!(
            inductance_in_range(Henries::new(1.0e-10), Param::InductanceReleased),
            out(Param::InductanceReleased)
        );
    }
}
