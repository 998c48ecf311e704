//! SI quantities as newtypes.
//!
//! Every physical value that crosses a public boundary of this crate is one of these types, so a
//! time cannot be passed where a current is expected. The inner value is an `f32` in the SI base
//! unit named by the type (volts, amperes, ohms, henries, farads, seconds, joules, watts, degrees
//! Celsius, hertz). Construction is `const` and does not validate: validation happens where a
//! value becomes part of a model (for example [`crate::Coil::new`]), because the legal range depends
//! on the role (a temperature may be negative, a resistance may not).

use core::fmt;

macro_rules! quantity {
    ($(#[$doc:meta])* $name:ident, $symbol:literal) => {
        $(#[$doc])*
        #[derive(Clone, Copy, Debug, Default, PartialEq, PartialOrd)]
        #[cfg_attr(feature = "defmt", derive(defmt::Format))]
        pub struct $name(f32);

        impl $name {
            /// Wraps a value given in the SI unit of this quantity.
            #[inline]
            pub const fn new(value: f32) -> Self {
                Self(value)
            }

            /// The value in the SI unit of this quantity.
            #[inline]
            pub const fn value(self) -> f32 {
                self.0
            }

            /// The unit symbol used when printing this quantity.
            pub const SYMBOL: &'static str = $symbol;
        }

        impl fmt::Display for $name {
            fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                if let Some(p) = f.precision() {
                    write!(f, "{:.*} {}", p, self.0, $symbol)
                } else {
                    write!(f, "{} {}", self.0, $symbol)
                }
            }
        }
    };
}

quantity!(
    /// Electric potential difference in volts (V).
    Volts,
    "V"
);
quantity!(
    /// Electric current in amperes (A).
    Amps,
    "A"
);
quantity!(
    /// Resistance in ohms (Ω).
    Ohms,
    "ohm"
);
quantity!(
    /// Inductance in henries (H).
    Henries,
    "H"
);
quantity!(
    /// Capacitance in farads (F).
    Farads,
    "F"
);
quantity!(
    /// Time in seconds (s).
    Seconds,
    "s"
);
quantity!(
    /// Energy in joules (J).
    Joules,
    "J"
);
quantity!(
    /// Power in watts (W).
    Watts,
    "W"
);
quantity!(
    /// Temperature in degrees Celsius (°C).
    Celsius,
    "degC"
);
quantity!(
    /// Frequency in hertz (Hz).
    Hertz,
    "Hz"
);
quantity!(
    /// Temperature coefficient of resistance in 1/K (per kelvin).
    PerKelvin,
    "1/K"
);
quantity!(
    /// Thermal resistance in kelvin per watt (K/W).
    KelvinPerWatt,
    "K/W"
);

quantity!(
    /// Rate of change of voltage in volts per second (V/s).
    VoltsPerSecond,
    "V/s"
);

impl Seconds {
    /// `t = ms · 10⁻³ s`.
    #[inline]
    pub const fn from_millis(ms: f32) -> Self {
        Self(ms * 1.0e-3)
    }
    /// `t = µs · 10⁻⁶ s`.
    #[inline]
    pub const fn from_micros(us: f32) -> Self {
        Self(us * 1.0e-6)
    }
    /// The time in milliseconds.
    #[inline]
    pub const fn as_millis(self) -> f32 {
        self.0 * 1.0e3
    }
}

impl Amps {
    /// `I = mA · 10⁻³ A`.
    #[inline]
    pub const fn from_milli(ma: f32) -> Self {
        Self(ma * 1.0e-3)
    }
}

impl Henries {
    /// `L = mH · 10⁻³ H`.
    #[inline]
    pub const fn from_milli(mh: f32) -> Self {
        Self(mh * 1.0e-3)
    }
}

impl Farads {
    /// `C = µF · 10⁻⁶ F`.
    #[inline]
    pub const fn from_micro(uf: f32) -> Self {
        Self(uf * 1.0e-6)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scaled_constructors_are_si() {
        let close = |a: f32, b: f32| (a - b).abs() <= 1e-6 * b.abs();
        assert!(close(Seconds::from_millis(5.0).value(), 0.005));
        assert!(close(Seconds::from_micros(250.0).value(), 250.0e-6));
        assert!(close(Amps::from_milli(120.0).value(), 0.12));
        assert!(close(Henries::from_milli(350.0).value(), 0.35));
        assert!(close(Farads::from_micro(4.7).value(), 4.7e-6));
        assert!(close(Seconds::new(0.0125).as_millis(), 12.5));
    }

    #[test]
    fn display_carries_the_unit() {
        extern crate std;
        use std::format;
        assert_eq!(format!("{}", Volts::new(24.0)), "24 V");
        assert_eq!(format!("{:.2}", Amps::new(0.126)), "0.13 A");
    }
}
