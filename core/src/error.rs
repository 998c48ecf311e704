//! The crate's one error type.
//!
//! Small, `Copy`, and specific: a rejected input says *which* parameter and *why*, so firmware can
//! log it without strings. No function of this crate returns NaN or panics on bad input; it
//! returns one of these instead.

use core::fmt;

/// Which input a [`Error::Invalid`] refers to.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Param {
    /// Winding resistance at the reference temperature.
    WindingResistance,
    /// Temperature coefficient of the winding resistance.
    TemperatureCoefficient,
    /// A temperature (reference, operating, ambient).
    Temperature,
    /// Inductance with the armature released (open air gap).
    InductanceReleased,
    /// Inductance with the armature operated (closed air gap).
    InductanceOperated,
    /// Coil must-operate (pick-up) voltage.
    MustOperateVoltage,
    /// Coil must-release (drop-out) voltage.
    MustReleaseVoltage,
    /// Supply voltage or supply range.
    Supply,
    /// Winding temperature range.
    TemperatureRange,
    /// Switch saturation voltage (bipolar) or on-state drop.
    SaturationVoltage,
    /// Switch on-resistance (MOSFET).
    OnResistance,
    /// Switch breakdown (avalanche) voltage.
    BreakdownVoltage,
    /// Current-sense resistor.
    SenseResistance,
    /// Wiring / connector resistance.
    WiringResistance,
    /// Clamp diode forward drop.
    DiodeDrop,
    /// Clamp voltage (zener / TVS) across the coil.
    ClampVoltage,
    /// Clamp resistor.
    ClampResistance,
    /// Reverse standoff voltage of a TVS straight across the coil.
    StandoffVoltage,
    /// Snubber or node capacitance.
    Capacitance,
    /// A resistance in a capacitive node.
    NodeResistance,
    /// A current (target, threshold, initial, hold).
    Current,
    /// A time or time allowance.
    Time,
    /// A tolerance fraction.
    Tolerance,
    /// A power rating.
    PowerRating,
    /// A repetition rate or frequency.
    Frequency,
    /// A duty cycle.
    Duty,
    /// A thermal resistance.
    ThermalResistance,
    /// A timer tick rate.
    TickRate,
    /// A voltage (drive, threshold) not covered above.
    Voltage,
    /// A transistor gain.
    Gain,
    /// A resistance not covered above (base resistor, load).
    Resistance,
    /// The clamp type ([`crate::ClampKind`]) itself.
    ClampType,
}

/// Why a parameter was rejected.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Why {
    /// NaN or ±∞.
    NotFinite,
    /// Zero or negative where a strictly positive value is required.
    NotPositive,
    /// Negative where zero or more is required.
    Negative,
    /// Outside the range this model is valid for.
    OutOfRange,
    /// A lower bound above its upper bound (min > max, or nominal outside [min, max]).
    Inverted,
    /// A clamp voltage at or below the clamp diode's own forward drop.
    BelowDiodeDrop,
    /// A voltage that must block the supply is at or below it: the switch breakdown or a clamp
    /// across the switch (it would conduct while off), or the standoff of a TVS across the coil (it
    /// would conduct while on).
    BelowSupply,
    /// A must-release voltage at or above the must-operate voltage.
    ReleaseAboveOperate,
    /// Supported by the crate but left out of this build: its cargo feature is off (a clamp type
    /// whose `clamp-…` feature is not enabled, see [`crate::ClampKind::is_built`]).
    FeatureDisabled,
}

/// Which modelling limit made an answer impossible.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Limit {
    /// The RC snubber is underdamped: the current rings and reverses, outside the model.
    SnubberUnderdamped,
    /// The switch drop is at or above the supply: no current can flow.
    NoHeadroom,
    /// A result does not fit an `f32` (overflow to infinity).
    Overflow,
    /// The drive voltage is at or below the base-emitter (or gate) voltage: the switch stays off.
    NoDrive,
    /// The calculation needs a first-order clamp loop; the RC snubber is second-order.
    NotFirstOrder,
    /// PWM too slow for the coil: the current falls to zero in every off phase (discontinuous
    /// conduction), outside the continuous-conduction hold model.
    DiscontinuousConduction,
    /// The winding would settle above the copper model's temperature range: it overheats.
    Overtemperature,
    /// The answer hangs on a difference below f32 rounding (a PWM off fraction `1 − D` or a
    /// ripple too small against the current to resolve).
    Resolution,
}

/// Error returned by every fallible function of the crate.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Error {
    /// An input is outside its domain.
    Invalid {
        /// The input.
        param: Param,
        /// What is wrong with it.
        why: Why,
    },
    /// A current was asked for that the circuit never reaches: at or beyond the final (asymptotic)
    /// current of the phase. For a coil this means it never pulls in at this supply and temperature.
    Unreachable {
        /// The requested current, A.
        target: f32,
        /// The asymptote the current tends to, A.
        asymptote: f32,
    },
    /// A time does not fit the timer's tick counter.
    TickOverflow,
    /// The answer lies outside what the model covers.
    OutsideModel(Limit),
}

impl Error {
    /// Shorthand for [`Error::Invalid`].
    pub const fn invalid(param: Param, why: Why) -> Self {
        Error::Invalid { param, why }
    }
}

impl fmt::Display for Param {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let s = match self {
            Param::WindingResistance => "winding resistance",
            Param::TemperatureCoefficient => "temperature coefficient",
            Param::Temperature => "temperature",
            Param::InductanceReleased => "inductance (armature released)",
            Param::InductanceOperated => "inductance (armature operated)",
            Param::MustOperateVoltage => "must-operate voltage",
            Param::MustReleaseVoltage => "must-release voltage",
            Param::Supply => "supply voltage",
            Param::TemperatureRange => "temperature range",
            Param::SaturationVoltage => "switch saturation voltage",
            Param::OnResistance => "switch on-resistance",
            Param::BreakdownVoltage => "switch breakdown voltage",
            Param::SenseResistance => "sense resistance",
            Param::WiringResistance => "wiring resistance",
            Param::DiodeDrop => "diode forward drop",
            Param::ClampVoltage => "clamp voltage",
            Param::ClampResistance => "clamp resistance",
            Param::StandoffVoltage => "TVS standoff voltage",
            Param::Capacitance => "capacitance",
            Param::NodeResistance => "node resistance",
            Param::Current => "current",
            Param::Time => "time",
            Param::Tolerance => "tolerance",
            Param::PowerRating => "power rating",
            Param::Frequency => "frequency",
            Param::Duty => "duty cycle",
            Param::ThermalResistance => "thermal resistance",
            Param::TickRate => "tick rate",
            Param::Voltage => "voltage",
            Param::Gain => "gain",
            Param::Resistance => "resistance",
            Param::ClampType => "clamp type",
        };
        f.write_str(s)
    }
}

impl fmt::Display for Why {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let s = match self {
            Why::NotFinite => "is not a finite number",
            Why::NotPositive => "must be greater than zero",
            Why::Negative => "must not be negative",
            Why::OutOfRange => "is outside the range the model covers",
            Why::Inverted => "has its bounds the wrong way round",
            Why::BelowDiodeDrop => "must be above the clamp diode's forward drop",
            Why::BelowSupply => "must be above the supply voltage",
            Why::ReleaseAboveOperate => "must be below the must-operate voltage",
            Why::FeatureDisabled => "is left out of this build (its cargo feature is off)",
        };
        f.write_str(s)
    }
}

impl fmt::Display for Limit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let s = match self {
            Limit::SnubberUnderdamped => "RC snubber is underdamped (current rings)",
            Limit::NoHeadroom => "switch drop leaves no voltage across the coil",
            Limit::Overflow => "result overflows f32",
            Limit::NoDrive => "drive voltage does not exceed the base-emitter or gate voltage",
            Limit::NotFirstOrder => "needs a first-order clamp; the RC snubber is second-order",
            Limit::DiscontinuousConduction => {
                "PWM too slow: the coil current falls to zero every period"
            }
            Limit::Overtemperature => "winding would settle above the model's temperature range",
            Limit::Resolution => "the answer is below f32 rounding (duty off fraction or ripple)",
        };
        f.write_str(s)
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::Invalid { param, why } => write!(f, "{param} {why}"),
            Error::Unreachable { target, asymptote } => write!(
                f,
                "current {target} A is never reached: the current tends to {asymptote} A"
            ),
            Error::TickOverflow => f.write_str("time does not fit the tick counter"),
            Error::OutsideModel(limit) => write!(f, "outside the model: {limit}"),
        }
    }
}

impl core::error::Error for Error {}

// The checks below test the bits (integer compares): a float compare is a library call on a core
// without an FPU, and these run on every hot path. Same results as the float tests they stand
// for (`is_finite`, `x <= 0`, `x < 0`; −0 counts as zero).

/// Bits of +∞: a finite float's magnitude bits are below it.
const INF_BITS: u32 = 0x7F80_0000;

/// `x.is_finite()` from the bits.
#[inline]
pub(crate) const fn is_finite_bits(x: f32) -> bool {
    x.to_bits() & 0x7FFF_FFFF < INF_BITS
}

/// `0 < x < ∞` from the bits (NaN, ±0 and negatives fail): the bits 1 ..= largest finite.
#[inline]
pub(crate) const fn is_positive_finite_bits(x: f32) -> bool {
    x.to_bits().wrapping_sub(1) < INF_BITS - 1
}

/// `Ok(x)` when `x` is finite and > 0.
#[inline]
pub(crate) fn positive(x: f32, param: Param) -> Result<f32, Error> {
    if is_positive_finite_bits(x) {
        Ok(x)
    } else {
        Err(invalid_reason(x, param, Why::NotPositive))
    }
}

/// `Ok(x)` when `x` is finite and ≥ 0 (−0 included).
#[inline]
pub(crate) fn non_negative(x: f32, param: Param) -> Result<f32, Error> {
    let b = x.to_bits();
    if b < INF_BITS || b == 0x8000_0000 {
        Ok(x)
    } else {
        Err(invalid_reason(x, param, Why::Negative))
    }
}

/// Why a finite-and-signed check failed on `x`: not finite, else `finite_why` (the sign).
#[cold]
fn invalid_reason(x: f32, param: Param, finite_why: Why) -> Error {
    let why = if is_finite_bits(x) {
        finite_why
    } else {
        Why::NotFinite
    };
    Error::invalid(param, why)
}

/// `Ok(x)` when `x` is finite.
#[inline]
pub(crate) fn finite(x: f32, param: Param) -> Result<f32, Error> {
    if is_finite_bits(x) {
        Ok(x)
    } else {
        Err(Error::invalid(param, Why::NotFinite))
    }
}

/// `Ok(x)` when a computed result is finite, else an overflow error.
#[inline]
pub(crate) fn result(x: f32) -> Result<f32, Error> {
    if is_finite_bits(x) {
        Ok(x)
    } else {
        Err(Error::OutsideModel(Limit::Overflow))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The bit tests give what the float tests they replace gave (the earlier definitions,
    /// written out here), on every class of f32.
    #[test]
    fn bit_checks_agree_with_the_float_definitions() {
        let p = Param::Current;
        let samples = [
            0.0f32,
            -0.0,
            1.0e-45,
            -1.0e-45,
            f32::MIN_POSITIVE,
            1.0,
            -1.0,
            f32::MAX,
            f32::MIN,
            f32::INFINITY,
            f32::NEG_INFINITY,
            f32::NAN,
            -f32::NAN,
            0.9,
        ];
        for x in samples {
            let positive_ref = if !x.is_finite() {
                Err(Error::invalid(p, Why::NotFinite))
            } else if x <= 0.0 {
                Err(Error::invalid(p, Why::NotPositive))
            } else {
                Ok(x)
            };
            let non_negative_ref = if !x.is_finite() {
                Err(Error::invalid(p, Why::NotFinite))
            } else if x < 0.0 {
                Err(Error::invalid(p, Why::Negative))
            } else {
                Ok(x)
            };
            let same = |a: Result<f32, Error>, b: Result<f32, Error>| match (a, b) {
                (Ok(a), Ok(b)) => a.to_bits() == b.to_bits(),
                (a, b) => a == b,
            };
            assert!(same(positive(x, p), positive_ref), "{x}");
            assert!(same(non_negative(x, p), non_negative_ref), "{x}");
            assert_eq!(finite(x, p).is_ok(), x.is_finite(), "{x}");
            assert_eq!(result(x).is_ok(), x.is_finite(), "{x}");
            assert_eq!(is_finite_bits(x), x.is_finite(), "{x}");
        }
    }
}
