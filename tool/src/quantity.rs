//! Values with units, as a person types them in a design file: `"24 V"`, `"160 ohm"`, `"0.35 H"`,
//! `"5 ms"`, `"4.7 kohm"`, `"-40 degC"`, `"5 %"`; and the engineering notation the report prints.
//!
//! Grammar (the one place it is implemented; `docs/design-file.md` states the same):
//!
//! ```text
//! VALUE    = NUMBER [spaces] UNIT          (UNIT absent for a plain number)
//! NUMBER   = [SIGN] MANTISSA [EXPONENT]
//! MANTISSA = DIGITS ["." DIGITS] | "." DIGITS
//! EXPONENT = ("e" | "E") [SIGN] DIGITS
//! DIGITS   = DIGIT { ["_"] DIGIT }         (`_` only singly, between two digits)
//! SIGN     = "+" | "-"
//! ```
//!
//! `UNIT` is an SI prefix (`p n u µ m k M G`) followed by the base symbol of the expected
//! quantity. Temperatures, percentages and the temperature coefficient take no prefix. A value
//! whose SI magnitude lies outside the computable range (see [`in_range`]) is refused — also one
//! written non-zero that rounds to zero (`"1e-400 %"`) or to infinity (`"1e999 V"`) in `f64`. The
//! same grammar reads the decimal numbers TOML writes bare (`min_gain = 1e2`).

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
    /// A number that breaks the grammar: a `_` not between two digits, a point without digits
    /// after it.
    MalformedNumber,
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
            QuantityError::MalformedNumber => f.write_str(
                "is not a number as the design file writes them (`_` only singly between digits, digits after a decimal point)",
            ),
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

/// The one physical-range check per quantity, applied to every key of that quantity: every
/// temperature (winding range, ambient, reference) lies within the copper resistance model's
/// range, `MIN_WINDING_TEMPERATURE ..= MAX_WINDING_TEMPERATURE` of the core (−100 °C to
/// +250 °C). Other quantities are held to their ranges by the checks of `spec`, which know what
/// each key means (a resistance > 0, a tolerance ≤ 90 %).
///
/// # Errors
/// Why the value is outside, in a sentence.
pub fn physical_range(dim: Dim, value: f64) -> Result<(), String> {
    use coilwise::physics::coil::{MAX_WINDING_TEMPERATURE, MIN_WINDING_TEMPERATURE};
    if dim != Dim::Temperature {
        return Ok(());
    }
    let lo = f64::from(MIN_WINDING_TEMPERATURE.value());
    let hi = f64::from(MAX_WINDING_TEMPERATURE.value());
    if (lo..=hi).contains(&value) {
        return Ok(());
    }
    // −273.15 °C: absolute zero (the kelvin's definition, SI Brochure).
    let below_zero = if value < -273.15 {
        " (it is below absolute zero)"
    } else {
        ""
    };
    Err(format!(
        "a temperature of {value} °C is outside {lo} °C to {hi} °C, the range of the copper resistance model{below_zero}"
    ))
}

/// The end of a run of digits starting at `i` (`DIGITS = DIGIT { ["_"] DIGIT }`), or `None` when
/// there is no digit at `i`.
///
/// # Errors
/// [`QuantityError::MalformedNumber`] for a `_` that does not stand between two digits.
fn digits(b: &[u8], mut i: usize) -> Result<Option<usize>, QuantityError> {
    if i >= b.len() || !b[i].is_ascii_digit() {
        return Ok(None);
    }
    while i < b.len() {
        if b[i].is_ascii_digit() {
            i += 1;
        } else if b[i] == b'_' {
            if i + 1 < b.len() && b[i + 1].is_ascii_digit() {
                i += 1;
            } else {
                return Err(QuantityError::MalformedNumber);
            }
        } else {
            break;
        }
    }
    Ok(Some(i))
}

/// Splits `"4.7 kohm"` into `(4.7, "kohm")` by the number grammar of the module doc. The unit
/// part is trimmed and may be empty. The value is finite; it is zero only when every digit
/// written is zero (a written non-zero that rounds to zero or infinity in `f64` is
/// [`QuantityError::OutOfRange`], like any other value outside the tool's range).
fn split_number(text: &str) -> Result<(f64, &str), QuantityError> {
    let s = text.trim();
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    if i < b.len() && b[i] == b'_' {
        return Err(QuantityError::MalformedNumber);
    }
    let whole = digits(b, i)?;
    let mut end = whole.unwrap_or(i);
    let mut fraction = None;
    if end < b.len() && b[end] == b'.' {
        if end + 1 < b.len() && b[end + 1] == b'_' {
            return Err(QuantityError::MalformedNumber);
        }
        fraction = digits(b, end + 1)?;
        match fraction {
            Some(e) => end = e,
            // `5.` is not a number of the grammar; `.` alone is no number at all.
            None if whole.is_some() => return Err(QuantityError::MalformedNumber),
            None => {}
        }
    }
    if whole.is_none() && fraction.is_none() {
        return Err(QuantityError::NotANumber);
    }
    // Exponent: only when `e`/`E` is followed by a digit (or a sign and a digit), so that a unit
    // starting with `e` is not swallowed.
    if end < b.len() && (b[end] == b'e' || b[end] == b'E') {
        let mut j = end + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        if let Some(e) = digits(b, j)? {
            end = e;
        }
    }
    if end < b.len() && b[end] == b'_' {
        return Err(QuantityError::MalformedNumber);
    }
    let written = &s[..end];
    let number: String = written.chars().filter(|&c| c != '_').collect();
    let value: f64 = number.parse().map_err(|_| QuantityError::NotANumber)?;
    // Digits of the mantissa only (the exponent's digits do not make a zero non-zero).
    let mantissa = written.split(['e', 'E']).next().unwrap_or("");
    let non_zero = mantissa.bytes().any(|c| (b'1'..=b'9').contains(&c));
    if !value.is_finite() || (non_zero && value == 0.0) {
        return Err(QuantityError::OutOfRange);
    }
    Ok((value, s[end..].trim()))
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
        let si = value * k;
        if value != 0.0 && si == 0.0 {
            // `"1e-310 pF"`: the prefix underflows what the number alone did not.
            return Err(QuantityError::OutOfRange);
        }
        return in_range(si);
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
    fn the_number_grammar_of_the_docs() {
        for (text, want) in [
            ("1_000 V", 1000.0),
            ("1_0.2_5 V", 10.25),
            ("+.5 V", 0.5),
            ("-0.5e-1_0 V", -0.5e-10),
            ("2E3V", 2000.0),
            ("0e999 V", 0.0),
            ("0.000 V", 0.0),
        ] {
            assert_eq!(parse(Dim::Voltage, text), Ok(want), "{text}");
        }
        for text in [
            "_1__6__0_ ohm",
            "1__6 ohm",
            "16_ ohm",
            "_16 ohm",
            "1_.5 ohm",
            "1._5 ohm",
            "5. ohm",
            "1e5_ ohm",
        ] {
            assert_eq!(
                parse(Dim::Resistance, text),
                Err(QuantityError::MalformedNumber),
                "{text}"
            );
        }
        // `e` not followed by an exponent starts the unit, which is then unknown.
        assert!(matches!(
            parse(Dim::Resistance, "1e_5 ohm"),
            Err(QuantityError::UnknownUnit(_))
        ));
        assert_eq!(parse(Dim::Voltage, ". V"), Err(QuantityError::NotANumber));
        assert_eq!(parse(Dim::Voltage, "e5 V"), Err(QuantityError::NotANumber));
    }

    #[test]
    fn underflow_and_overflow_are_out_of_range_not_zero_or_infinite() {
        // "1e-30 %" was refused, "1e-400 %" read as 0 and accepted.
        for text in ["1e-30 %", "1e-400 %", "0.1e-330 %", "1e-310 %"] {
            assert_eq!(
                parse(Dim::Percent, text),
                Err(QuantityError::OutOfRange),
                "{text}"
            );
        }
        assert_eq!(
            parse(Dim::Capacitance, "1e-305 pF"),
            Err(QuantityError::OutOfRange)
        );
        assert_eq!(
            parse(Dim::Voltage, "1e999 V"),
            Err(QuantityError::OutOfRange)
        );
        assert_eq!(parse(Dim::Number, "1e-400"), Err(QuantityError::OutOfRange));
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
