//! The design-file schema: every key the tool reads, its type, and what it means.
//!
//! This table is the single source of truth: the reader rejects keys not listed here, the
//! `keys` subcommand prints it, and a test checks that `docs/design-file.md` documents every key.

use crate::quantity::Dim;

/// The type of a key's value.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    /// A string holding a number with a unit of this quantity.
    Quantity(Dim),
    /// An array of such strings.
    QuantityList(Dim),
    /// Free text.
    Text,
    /// One of a fixed set of words.
    Choice(&'static [&'static str]),
}

impl Kind {
    /// A short description of the expected value, for `keys` and messages.
    pub fn describe(self) -> String {
        match self {
            Kind::Quantity(Dim::Number) => "number".to_string(),
            Kind::Quantity(d) => format!("\"{}\"", d.example()),
            Kind::QuantityList(d) => format!("[\"{}\", ...]", d.example()),
            Kind::Text => "text".to_string(),
            Kind::Choice(words) => words.join(" | "),
        }
    }
}

/// One key of the design file.
#[derive(Clone, Copy, Debug)]
pub struct KeySpec {
    /// Dotted name, `section.key`.
    pub key: &'static str,
    /// Value type.
    pub kind: Kind,
    /// Whether the key must be present (some keys are required only for some choices; the
    /// reader checks those and says why).
    pub required: bool,
    /// Default, as it would be written, when optional and defaulted.
    pub default: Option<&'static str>,
    /// What the value means.
    pub help: &'static str,
    /// A typical value for this key as it would be written (quantities), for `keys` and hints.
    pub example: Option<&'static str>,
    /// The condition under which an optional key becomes required, in words.
    pub required_when: Option<&'static str>,
}

impl KeySpec {
    /// Sets the example value (`"0.8 V"` for a diode drop, not the unit's generic example).
    const fn eg(mut self, example: &'static str) -> Self {
        self.example = Some(example);
        self
    }

    /// Marks the key as required under a condition (the reader checks it and says why).
    const fn when(mut self, condition: &'static str) -> Self {
        self.required_when = Some(condition);
        self
    }

    /// The expected value written with this key's own example: `"0.8 V"`, `["40 mA", ...]`,
    /// `100`, `text`, or the list of words.
    pub fn format(&self) -> String {
        match (self.kind, self.example) {
            (Kind::Quantity(Dim::Number), Some(e)) => e.to_string(),
            (Kind::Quantity(_), Some(e)) => format!("\"{e}\""),
            (Kind::QuantityList(_), Some(e)) => format!("[\"{e}\", ...]"),
            (kind, _) => kind.describe(),
        }
    }

    /// The need column of `keys`: `required`, `required if …`, `required unless …`, `default …`,
    /// or `optional`.
    pub fn need(&self) -> String {
        match (self.required, self.required_when, self.default) {
            (true, _, _) => "required".to_string(),
            (false, Some(w), _) if w.starts_with("unless ") => format!("required {w}"),
            (false, Some(w), _) => format!("required if {w}"),
            (false, None, Some(d)) => format!("default {d}"),
            (false, None, None) => "optional".to_string(),
        }
    }
}

const fn key(
    key: &'static str,
    kind: Kind,
    required: bool,
    default: Option<&'static str>,
    help: &'static str,
) -> KeySpec {
    KeySpec {
        key,
        kind,
        required,
        default,
        help,
        example: None,
        required_when: None,
    }
}

use Dim::*;
use Kind::{Choice, Quantity, QuantityList, Text};

/// Switch kinds.
pub const SWITCH_KINDS: &[&str] = &["mosfet", "bipolar"];
/// Switch positions.
pub const SWITCH_SIDES: &[&str] = &["low", "high"];
/// Clamp kinds.
pub const CLAMP_KINDS: &[&str] = &[
    "diode",
    "zener",
    "resistor",
    "switch-zener",
    "tvs-across-coil",
    "snubber",
    "none",
];

/// Every key, in the order the documentation lists them.
pub const KEYS: &[KeySpec] = &[
    key("design.name", Text, true, None, "name of the design, printed in the report"),
    key("design.notes", Text, false, None, "free text, printed under the name"),
    key("coil.resistance", Quantity(Resistance), true, None, "winding resistance at coil.reference_temperature")
    .eg("160 ohm"),
    key("coil.reference_temperature", Quantity(Temperature), false, Some("20 degC"), "temperature at which resistance, must_operate and must_release are specified")
    .eg("20 degC"),
    key("coil.resistance_tolerance", Quantity(Percent), false, Some("0 %"), "part-to-part spread of the winding resistance, ±")
    .eg("7 %"),
    key("coil.temperature_coefficient", Quantity(PerKelvin), false, Some("0.00393 1/K"), "temperature coefficient of the winding resistance (annealed copper by default)")
    .eg("0.00393 1/K"),
    key("coil.inductance", Quantity(Inductance), false, None, "one inductance for both armature positions (instead of the two keys below)")
    .eg("0.4 H")
    .when("unless coil.inductance_released and coil.inductance_operated are given"),
    key("coil.inductance_released", Quantity(Inductance), false, None, "inductance with the armature released (air gap open): applies while pulling in")
    .eg("0.35 H")
    .when("unless coil.inductance is given"),
    key("coil.inductance_operated", Quantity(Inductance), false, None, "inductance with the armature operated (air gap closed): applies at switch-off")
    .eg("0.52 H")
    .when("unless coil.inductance is given"),
    key("coil.inductance_tolerance", Quantity(Percent), false, Some("0 %"), "part-to-part spread of the inductance, ±")
    .eg("15 %"),
    key("coil.must_operate", Quantity(Voltage), true, None, "must-operate (pick-up) voltage at the reference temperature")
    .eg("14.4 V"),
    key("coil.must_release", Quantity(Voltage), true, None, "must-release (drop-out) voltage at the reference temperature")
    .eg("2.4 V"),
    key("coil.thermal_resistance", Quantity(ThermalResistance), false, None, "thermal resistance winding to ambient, for the self-heating check (with temperature.ambient)")
    .eg("12 K/W")
    .when("temperature.ambient is given"),
    key("supply.nominal", Quantity(Voltage), true, None, "nominal supply voltage")
    .eg("24 V"),
    key("supply.min", Quantity(Voltage), false, None, "lowest supply voltage (or give supply.tolerance)")
    .eg("21.6 V")
    .when("unless supply.tolerance is given"),
    key("supply.max", Quantity(Voltage), false, None, "highest supply voltage (or give supply.tolerance)")
    .eg("26.4 V")
    .when("unless supply.tolerance is given"),
    key("supply.tolerance", Quantity(Percent), false, None, "symmetric supply tolerance, instead of supply.min and supply.max")
    .eg("10 %")
    .when("unless supply.min and supply.max are given"),
    key("temperature.min", Quantity(Temperature), true, None, "coldest winding temperature (cold start)")
    .eg("-20 degC"),
    key("temperature.max", Quantity(Temperature), true, None, "hottest winding temperature (hot ambient plus self-heating)")
    .eg("85 degC"),
    key("temperature.ambient", Quantity(Temperature), false, None, "hottest ambient around the coil, for the self-heating check (with coil.thermal_resistance)")
    .eg("50 degC")
    .when("coil.thermal_resistance is given"),
    key("switch.kind", Choice(SWITCH_KINDS), true, None, "the transistor that switches the coil"),
    key("switch.side", Choice(SWITCH_SIDES), false, Some("low"), "low-side (switch to ground) or high-side (switch to supply)"),
    key("switch.breakdown", Quantity(Voltage), true, None, "breakdown voltage: V(BR)DSS of a MOSFET, VCEO of a bipolar transistor")
    .eg("60 V"),
    key("switch.on_resistance", Quantity(Resistance), false, None, "MOSFET on-resistance RDS(on) at the operating junction temperature")
    .eg("50 mohm")
    .when("switch.kind = \"mosfet\""),
    key("switch.saturation", Quantity(Voltage), false, None, "bipolar saturation voltage VCE(sat) at the coil current")
    .eg("0.25 V")
    .when("switch.kind = \"bipolar\""),
    key("switch.avalanche_energy", Quantity(Energy), false, None, "single-pulse avalanche energy rating EAS, checked when clamp.kind = \"none\"")
    .eg("20 mJ"),
    key("switch.drive_voltage", Quantity(Voltage), false, None, "bipolar: voltage driving the base resistor (the GPIO high level)")
    .eg("3.3 V")
    .when("switch.base_resistor or switch.min_gain is given"),
    key("switch.base_resistor", Quantity(Resistance), false, None, "bipolar: base resistor")
    .eg("1 kohm")
    .when("switch.drive_voltage or switch.min_gain is given"),
    key("switch.base_emitter", Quantity(Voltage), false, Some("0.7 V"), "bipolar: base-emitter voltage in saturation")
    .eg("0.7 V"),
    key("switch.min_gain", Quantity(Number), false, None, "bipolar: minimum DC current gain hFE at the coil current")
    .eg("100")
    .when("switch.drive_voltage or switch.base_resistor is given"),
    key("switch.gate_voltage", Quantity(Voltage), false, None, "MOSFET: gate-source voltage the driver applies")
    .eg("5 V")
    .when("switch.rated_gate_voltage is given"),
    key("switch.rated_gate_voltage", Quantity(Voltage), false, None, "MOSFET: gate-source voltage at which switch.on_resistance is specified")
    .eg("4.5 V")
    .when("switch.gate_voltage is given"),
    key("wiring.sense", Quantity(Resistance), false, Some("0 ohm"), "current-sense resistor in the switch path (outside the freewheel loop)")
    .eg("0.5 ohm"),
    key("wiring.sense_tolerance", Quantity(Percent), false, Some("0 %"), "tolerance of the sense resistor, ±")
    .eg("1 %"),
    key("wiring.harness", Quantity(Resistance), false, Some("0 ohm"), "wiring and connector resistance to the coil (inside the freewheel loop)")
    .eg("0.4 ohm"),
    key("clamp.kind", Choice(CLAMP_KINDS), true, None, "what takes the coil's energy at switch-off"),
    key("clamp.diode_drop", Quantity(Voltage), false, None, "forward drop of the clamp diode at the coil current")
    .eg("0.8 V")
    .when("clamp.kind = \"diode\", \"zener\" or \"resistor\""),
    key("clamp.zener", Quantity(Voltage), false, None, "zener / TVS clamping voltage (zener: in series with the diode across the coil; switch-zener: across the switch; tvs-across-coil: the bidirectional TVS across the coil, at the coil current)")
    .eg("18 V")
    .when("clamp.kind = \"zener\", \"switch-zener\" or \"tvs-across-coil\""),
    key("clamp.standoff", Quantity(Voltage), false, None, "reverse standoff voltage V_RWM of the TVS across the coil: it must stay above the drive voltage, or the TVS conducts while the switch is on")
    .eg("28 V")
    .when("clamp.kind = \"tvs-across-coil\""),
    key("clamp.resistance", Quantity(Resistance), false, None, "clamp resistor: in series with the diode (resistor) or with the capacitor (snubber)")
    .eg("220 ohm")
    .when("clamp.kind = \"resistor\" or \"snubber\""),
    key("clamp.capacitance", Quantity(Capacitance), false, None, "snubber capacitor in series with clamp.resistance")
    .eg("10 uF")
    .when("clamp.kind = \"snubber\""),
    key("clamp.power_rating", Quantity(Power), false, None, "average power rating of the clamp element, for the repetition check (not with clamp.kind = \"none\")")
    .eg("0.5 W"),
    key("timing.tick_rate", Quantity(Frequency), true, None, "firmware timer tick rate")
    .eg("1 MHz"),
    key("timing.operate_allowance", Quantity(Time), false, Some("0 s"), "mechanical operate time after the current reaches pull-in")
    .eg("15 ms"),
    key("timing.release_allowance", Quantity(Time), false, Some("0 s"), "mechanical release time after the current falls below drop-out")
    .eg("20 ms"),
    key("timing.residual_current", Quantity(Current), false, Some("0 A"), "current the coil must have decayed to before the next pulse")
    .eg("1 mA"),
    key("timing.on_time", Quantity(Time), false, None, "planned pulse length (with timing.repetition)")
    .eg("4 s")
    .when("timing.repetition is given"),
    key("timing.repetition", Quantity(Frequency), false, None, "planned pulse repetition rate (with timing.on_time)")
    .eg("0.1 Hz")
    .when("timing.on_time is given"),
    key("hold.current", Quantity(Current), false, None, "hold (economiser) current after pull-in; enables the hold section")
    .eg("60 mA"),
    key("hold.pwm_frequency", Quantity(Frequency), false, None, "PWM frequency of the hold phase")
    .eg("20 kHz")
    .when("hold.current is given"),
    key("diagnosis.thresholds", QuantityList(Current), false, Some("[half the pull-in current]"), "comparator thresholds for the expected time-to-threshold bands")
    .eg("40 mA"),
    key("diagnosis.probe_fraction", Quantity(Percent), false, Some("50 %"), "diagnostic pulse: the longest pulse that keeps the current below this fraction of pull-in at every corner")
    .eg("50 %"),
    key("compare.zener", QuantityList(Voltage), false, Some("[three from the E24 series, IEC 60063]"), "zener / TVS voltages for the clamp comparison")
    .eg("15 V"),
    key("compare.resistor", QuantityList(Resistance), false, Some("[two from the E12 series, IEC 60063]"), "clamp resistors for the clamp comparison")
    .eg("220 ohm"),
    key("compare.diode_drop", Quantity(Voltage), false, Some("clamp.diode_drop, else 0.8 V"), "diode drop used for the compared clamps")
    .eg("0.8 V"),
];

/// The spec of a key, if it is part of the schema.
pub fn spec(key: &str) -> Option<&'static KeySpec> {
    KEYS.iter().find(|k| k.key == key)
}

/// The sections (the part before the dot), in order.
pub fn sections() -> Vec<&'static str> {
    let mut out: Vec<&'static str> = Vec::new();
    for k in KEYS {
        let s = k.key.split('.').next().unwrap_or(k.key);
        if !out.contains(&s) {
            out.push(s);
        }
    }
    out
}

/// The known key closest to `unknown` (edit distance ≤ 3), for "did you mean" hints.
pub fn closest(unknown: &str) -> Option<&'static str> {
    // The edit distance is at least the difference in length: a key more than 3 characters
    // longer than every schema key has no suggestion, and is not compared (a 1 MB key took
    // seconds).
    let longest = KEYS
        .iter()
        .map(|k| k.key.chars().count())
        .max()
        .unwrap_or(0);
    if unknown.chars().take(longest + 4).count() > longest + 3 {
        return None;
    }
    KEYS.iter()
        .map(|k| (edit_distance(unknown, k.key), k.key))
        .filter(|&(d, _)| d <= 3)
        .min_by_key(|&(d, _)| d)
        .map(|(_, k)| k)
}

/// Levenshtein distance over characters.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, &cb) in b.iter().enumerate() {
            let subst = prev[j] + usize::from(ca != cb);
            cur[j + 1] = subst.min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// The schema as an aligned text table (for `coilwise keys`).
pub fn table() -> String {
    let mut rows = vec![vec![
        "key".to_string(),
        "format".to_string(),
        "need".to_string(),
        "meaning".to_string(),
    ]];
    for k in KEYS {
        rows.push(vec![
            k.key.to_string(),
            k.format(),
            k.need(),
            k.help.to_string(),
        ]);
    }
    crate::table::render(&rows, &[false, false, false, false])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_are_unique_and_dotted() {
        for (i, k) in KEYS.iter().enumerate() {
            assert_eq!(k.key.split('.').count(), 2, "{}", k.key);
            assert!(KEYS[i + 1..].iter().all(|o| o.key != k.key), "{}", k.key);
            assert!(!(k.required && k.default.is_some()), "{}", k.key);
        }
    }

    #[test]
    fn every_quantity_key_has_its_own_example_of_its_own_unit() {
        for k in KEYS {
            match k.kind {
                Kind::Quantity(d) | Kind::QuantityList(d) => {
                    let e = k
                        .example
                        .unwrap_or_else(|| panic!("{} has no example", k.key));
                    assert!(
                        crate::quantity::parse(d, e).is_ok(),
                        "{}: example {e} does not parse",
                        k.key
                    );
                }
                _ => assert!(k.example.is_none(), "{}", k.key),
            }
            // A conditional need and a default do not mix: the need column shows one of them.
            assert!(
                !(k.required_when.is_some() && k.default.is_some()),
                "{}",
                k.key
            );
            assert!(!(k.required && k.required_when.is_some()), "{}", k.key);
        }
    }

    #[test]
    fn suggestions() {
        assert_eq!(closest("coil.resistanse"), Some("coil.resistance"));
        assert_eq!(closest("supply.minimum"), None);
        assert_eq!(edit_distance("kitten", "sitting"), 3);
    }
}
