//! Values with units, as a person types them in a design file: `"24 V"`, `"160 ohm"`, `"0.35 H"`,
//! `"5 ms"`, `"4.7 kohm"`, `"-40 degC"`, `"5 %"`; and the engineering notation the report prints.
//!
//! Grammar: `NUMBER [space] UNIT`, where `NUMBER` is a decimal with optional sign, fraction and
//! exponent, and `UNIT` is an SI prefix (`p n u µ m k M G`) followed by the base symbol of the
//! expected quantity. Temperatures, percentages and the temperature coefficient take no prefix.

use std::fmt;

/// The kind of physical quantity a design-file key expects.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Dim {
    /// Volts.
    Voltage,
    /// Amperes.
    Current,
    /// Ohms.
    Resistance,
    /// Henries.
    Inductance,
    /// Seconds.
    Time,
    /// Joules.
    Energy,
    /// Watts.
    Power,
    /// Hertz.
    Frequency,
    /// Degrees Celsius.
    Temperature,
    /// A fraction written in percent (`"5 %"` is 0.05).
    Percent,
    /// Temperature coefficient, 1/K (`"0.00393 1/K"`, `"3930 ppm/K"`).
    PerKelvin,
    /// Farads.
    Capacitance,
    /// Thermal resistance, K/W.
    ThermalResistance,
    /// A plain number without unit (a transistor gain).
    Number,
}

impl Dim {
    /// The name of the quantity, for messages ("a resistance").
    pub fn name(self) -> &'static str {
        match self {
            Dim::Voltage => "a voltage",
            Dim::Current => "a current",
            Dim::Resistance => "a resistance",
            Dim::Inductance => "an inductance",
            Dim::Time => "a time",
            Dim::Energy => "an energy",
            Dim::Power => "a power",
            Dim::Frequency => "a frequency",
            Dim::Temperature => "a temperature",
            Dim::Percent => "a percentage",
            Dim::PerKelvin => "a temperature coefficient",
            Dim::Capacitance => "a capacitance",
            Dim::ThermalResistance => "a thermal resistance",
            Dim::Number => "a plain number",
        }
    }

    /// The unit a person should write, for messages and docs.
    pub fn unit_hint(self) -> &'static str {
        match self {
            Dim::Voltage => "V",
            Dim::Current => "A",
            Dim::Resistance => "ohm",
            Dim::Inductance => "H",
            Dim::Time => "s",
            Dim::Energy => "J",
            Dim::Power => "W",
            Dim::Frequency => "Hz",
            Dim::Temperature => "degC",
            Dim::Percent => "%",
            Dim::PerKelvin => "1/K",
            Dim::Capacitance => "F",
            Dim::ThermalResistance => "K/W",
            Dim::Number => "(no unit)",
        }
    }

    /// An example value, for messages.
    pub fn example(self) -> &'static str {
        match self {
            Dim::Voltage => "24 V",
            Dim::Current => "150 mA",
            Dim::Resistance => "160 ohm",
            Dim::Inductance => "0.35 H",
            Dim::Time => "5 ms",
            Dim::Energy => "20 mJ",
            Dim::Power => "0.5 W",
            Dim::Frequency => "1 MHz",
            Dim::Temperature => "85 degC",
            Dim::Percent => "5 %",
            Dim::PerKelvin => "0.00393 1/K",
            Dim::Capacitance => "1 uF",
            Dim::ThermalResistance => "25 K/W",
            Dim::Number => "100",
        }
    }

    const ALL: [Dim; 13] = [
        Dim::Voltage,
        Dim::Current,
        Dim::Resistance,
        Dim::Inductance,
        Dim::Time,
        Dim::Energy,
        Dim::Power,
        Dim::Frequency,
        Dim::Temperature,
        Dim::Percent,
        Dim::PerKelvin,
        Dim::Capacitance,
        Dim::ThermalResistance,
    ];

    /// Base symbols accepted for this quantity, and whether SI prefixes may precede them.
    fn symbols(self) -> (&'static [(&'static str, f64)], bool) {
        match self {
            Dim::Voltage => (&[("V", 1.0)], true),
            Dim::Current => (&[("A", 1.0)], true),
            Dim::Resistance => (
                &[("ohm", 1.0), ("ohms", 1.0), ("Ohm", 1.0), ("Ω", 1.0)],
                true,
            ),
            Dim::Inductance => (&[("H", 1.0)], true),
            Dim::Time => (&[("s", 1.0)], true),
            Dim::Energy => (&[("J", 1.0)], true),
            Dim::Power => (&[("W", 1.0)], true),
            Dim::Frequency => (&[("Hz", 1.0)], true),
            Dim::Temperature => (&[("degC", 1.0), ("°C", 1.0)], false),
            Dim::Percent => (&[("%", 0.01)], false),
            Dim::PerKelvin => (&[("1/K", 1.0), ("/K", 1.0), ("ppm/K", 1.0e-6)], false),
            Dim::Capacitance => (&[("F", 1.0)], true),
            Dim::ThermalResistance => (&[("K/W", 1.0)], false),
            Dim::Number => (&[], false),
        }
    }
}

const PREFIXES: [(&str, f64); 9] = [
    ("p", 1e-12),
    ("n", 1e-9),
    ("u", 1e-6),
    ("µ", 1e-6),
    ("μ", 1e-6),
    ("m", 1e-3),
    ("k", 1e3),
    ("M", 1e6),
    ("G", 1e9),
];

/// Why a value did not parse.
#[derive(Clone, Debug, PartialEq)]
pub enum QuantityError {
    /// No number at the start of the text.
    NotANumber,
    /// A number without a unit where a unit is required.
    MissingUnit,
    /// A known unit of another quantity.
    WrongUnit {
        /// What the unit measures.
        found: Dim,
        /// The unit as written.
        unit: String,
    },
    /// Not a unit this tool knows.
    UnknownUnit(String),
    /// A unit where a plain number is expected.
    UnexpectedUnit(String),
    /// NaN or infinite.
    NotFinite,
    /// Non-zero, but outside [`MIN_MAGNITUDE`] ..= [`MAX_MAGNITUDE`] in SI units.
    OutOfRange,
}

/// The smallest non-zero magnitude accepted, in SI units. The core computes in `f32`; inside
/// `1e-15 ..= 1e15` the quotients and products of two inputs stay far inside its range, and no
/// real coil, switch or clamp value comes near either end.
pub const MIN_MAGNITUDE: f64 = 1e-15;
/// The largest magnitude accepted, in SI units (see [`MIN_MAGNITUDE`]).
pub const MAX_MAGNITUDE: f64 = 1e15;

/// `value` if it is zero or its magnitude lies in [`MIN_MAGNITUDE`] ..= [`MAX_MAGNITUDE`].
///
/// # Errors
/// [`QuantityError::NotFinite`] for NaN or infinity, [`QuantityError::OutOfRange`] otherwise.
pub fn in_range(value: f64) -> Result<f64, QuantityError> {
    if !value.is_finite() {
        return Err(QuantityError::NotFinite);
    }
    let a = value.abs();
    if value == 0.0 || (MIN_MAGNITUDE..=MAX_MAGNITUDE).contains(&a) {
        Ok(value)
    } else {
        Err(QuantityError::OutOfRange)
    }
}

impl fmt::Display for QuantityError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            QuantityError::NotANumber => f.write_str("does not start with a number"),
            QuantityError::MissingUnit => f.write_str("has no unit"),
            QuantityError::WrongUnit { found, unit } => {
                write!(f, "has unit `{unit}`, which is {}", found.name())
            }
            QuantityError::UnknownUnit(u) => write!(f, "has unknown unit `{u}`"),
            QuantityError::UnexpectedUnit(u) => write!(f, "takes no unit, but has `{u}`"),
            QuantityError::NotFinite => f.write_str("is not a finite number"),
            QuantityError::OutOfRange => write!(
                f,
                "is outside the range the tool computes with (zero, or a magnitude from {MIN_MAGNITUDE:e} to {MAX_MAGNITUDE:e} in SI units)"
            ),
        }
    }
}

/// Splits `"4.7 kohm"` into `(4.7, "kohm")`. The unit part is trimmed and may be empty.
fn split_number(text: &str) -> Result<(f64, &str), QuantityError> {
    let s = text.trim();
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let digits_start = i;
    while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.' || b[i] == b'_') {
        i += 1;
    }
    if i == digits_start {
        return Err(QuantityError::NotANumber);
    }
    // Exponent: only when `e`/`E` is followed by a digit (or a sign and a digit), so that
    // a unit starting with `e` would not be swallowed.
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        if j < b.len() && b[j].is_ascii_digit() {
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
            i = j;
        }
    }
    let number: String = s[..i].chars().filter(|&c| c != '_').collect();
    let value: f64 = number.parse().map_err(|_| QuantityError::NotANumber)?;
    if !value.is_finite() {
        return Err(QuantityError::NotFinite);
    }
    Ok((value, s[i..].trim()))
}

/// The SI factor of `unit` if it is a unit of `dim`.
fn unit_factor(dim: Dim, unit: &str) -> Option<f64> {
    let (symbols, prefixed) = dim.symbols();
    for &(sym, k) in symbols {
        if unit == sym {
            return Some(k);
        }
        if prefixed {
            if let Some(pre) = unit.strip_suffix(sym) {
                if let Some(&(_, p)) = PREFIXES.iter().find(|(name, _)| *name == pre) {
                    return Some(k * p);
                }
            }
        }
    }
    None
}

/// Parses a value of quantity `dim` and returns it in the SI base unit.
///
/// `"4.7 kohm"` → 4700.0; `"5 %"` → 0.05; `"-40 degC"` → −40.0. A plain number is only accepted
/// for [`Dim::Number`].
pub fn parse(dim: Dim, text: &str) -> Result<f64, QuantityError> {
    let (value, unit) = split_number(text)?;
    if dim == Dim::Number {
        return if unit.is_empty() {
            in_range(value)
        } else {
            Err(QuantityError::UnexpectedUnit(unit.to_string()))
        };
    }
    if unit.is_empty() {
        return Err(QuantityError::MissingUnit);
    }
    if let Some(k) = unit_factor(dim, unit) {
        return in_range(value * k);
    }
    for other in Dim::ALL {
        if other != dim && unit_factor(other, unit).is_some() {
            return Err(QuantityError::WrongUnit {
                found: other,
                unit: unit.to_string(),
            });
        }
    }
    Err(QuantityError::UnknownUnit(unit.to_string()))
}

/// Engineering notation with an SI prefix and four significant digits: `0.0021875 s` →
/// `"2.188 ms"`, `0.15 A` → `"150.0 mA"`, `24.8 V` → `"24.80 V"`. Zero prints as `"0 s"`.
pub fn eng(value: f64, unit: &str) -> String {
    if !value.is_finite() {
        return format!("{value} {unit}");
    }
    if value == 0.0 {
        return format!("0 {unit}");
    }
    let a = value.abs();
    // Beyond the prefixes below, scientific notation (four significant digits as well).
    if !(0.999_95e-12..999.95e9).contains(&a) {
        return format!("{value:.3e} {unit}");
    }
    let steps: [(f64, &str); 8] = [
        (1e9, "G"),
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "µ"),
        (1e-9, "n"),
        (1e-12, "p"),
    ];
    let (scale, prefix) = steps
        .iter()
        .copied()
        .find(|&(s, _)| a >= s * 0.999_95)
        .unwrap_or((1e-12, "p"));
    let m = value / scale;
    let decimals = if m.abs() >= 99.995 {
        1
    } else if m.abs() >= 9.9995 {
        2
    } else {
        3
    };
    format!("{m:.decimals$} {prefix}{unit}")
}

/// A signed percentage with one decimal: `0.189` → `"+18.9 %"`; beyond ±1000 % it prints as
/// `"> +999 %"` (a margin that large is a ratio, not a percentage anyone reads).
pub fn percent(fraction: f64) -> String {
    let p = fraction * 100.0;
    if p >= 999.95 {
        "> +999 %".to_string()
    } else if p <= -999.95 {
        "< -999 %".to_string()
    } else {
        format!("{p:+.1} %")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1.0)
    }

    #[test]
    fn units_and_prefixes() {
        assert!(close(parse(Dim::Voltage, "24 V").unwrap(), 24.0));
        assert!(close(parse(Dim::Voltage, "24V").unwrap(), 24.0));
        assert!(close(parse(Dim::Resistance, "4.7 kohm").unwrap(), 4700.0));
        assert!(close(parse(Dim::Resistance, "100 mΩ").unwrap(), 0.1));
        assert!(close(parse(Dim::Inductance, "350 mH").unwrap(), 0.35));
        assert!(close(parse(Dim::Time, "250 us").unwrap(), 250e-6));
        assert!(close(parse(Dim::Time, "250 µs").unwrap(), 250e-6));
        assert!(close(parse(Dim::Frequency, "1 MHz").unwrap(), 1e6));
        assert!(close(parse(Dim::Current, "1.5e-1 A").unwrap(), 0.15));
        assert!(close(parse(Dim::Temperature, "-40 degC").unwrap(), -40.0));
        assert!(close(parse(Dim::Temperature, "85 °C").unwrap(), 85.0));
        assert!(close(parse(Dim::Percent, "5 %").unwrap(), 0.05));
        assert!(close(parse(Dim::PerKelvin, "3930 ppm/K").unwrap(), 0.00393));
        assert!(close(parse(Dim::Capacitance, "4.7 uF").unwrap(), 4.7e-6));
        assert!(close(
            parse(Dim::ThermalResistance, "25 K/W").unwrap(),
            25.0
        ));
        assert!(close(parse(Dim::Number, "100").unwrap(), 100.0));
    }

    #[test]
    fn bad_values_say_why() {
        assert_eq!(parse(Dim::Voltage, "24"), Err(QuantityError::MissingUnit));
        assert_eq!(parse(Dim::Voltage, "V"), Err(QuantityError::NotANumber));
        assert_eq!(
            parse(Dim::Resistance, "24 V"),
            Err(QuantityError::WrongUnit {
                found: Dim::Voltage,
                unit: "V".into()
            })
        );
        assert_eq!(
            parse(Dim::Voltage, "24 volts"),
            Err(QuantityError::UnknownUnit("volts".into()))
        );
        // A prefix on a temperature is not accepted.
        assert!(parse(Dim::Temperature, "85 mdegC").is_err());
        assert!(parse(Dim::Number, "100 x").is_err());
        assert!(parse(Dim::Voltage, "1e999 V").is_err());
    }

    #[test]
    fn engineering_notation() {
        assert_eq!(eng(0.002_187_5, "s"), "2.188 ms");
        assert_eq!(eng(0.15, "A"), "150.0 mA");
        assert_eq!(eng(24.8, "V"), "24.80 V");
        assert_eq!(eng(1.0, "A"), "1.000 A");
        assert_eq!(eng(0.0, "J"), "0 J");
        assert_eq!(eng(-30.0, "V"), "-30.00 V");
        assert_eq!(eng(999.99, "Hz"), "1.000 kHz");
        // Beyond the prefixes: scientific notation, never "0.000 p" or a 20-digit mantissa.
        assert_eq!(eng(1.0e-15, "ohm"), "1.000e-15 ohm");
        assert_eq!(eng(1.44e16, "A"), "1.440e16 A");
        assert_eq!(eng(-2.5e13, "W"), "-2.500e13 W");
        assert_eq!(eng(999.0e9, "Hz"), "999.0 GHz");
        assert_eq!(eng(1.0e-12, "F"), "1.000 pF");
        assert_eq!(percent(0.189), "+18.9 %");
        assert_eq!(percent(-0.05), "-5.0 %");
        assert_eq!(percent(250.0), "> +999 %");
    }
}
