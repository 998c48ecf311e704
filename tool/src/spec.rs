//! From checked inputs to a core [`DriverDesign`] plus the tool's own settings (comparison set,
//! thresholds, hold and drive details). Every rejected value is reported at its key.

use coilwise::{
    Celsius, Circuit, Clamp, Coil, DriverDesign, Henries, Hertz, Ohms, PerKelvin, Seconds,
    SupplyRange, Switch, TemperatureRange, TickRate, Tolerances, Topology, Volts, Watts,
};

use crate::error::{ErrorClass, ToolError};
use crate::input::Inputs;
use crate::quantity::eng;

/// Bipolar base drive, for the saturation check.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BaseDrive {
    /// Voltage driving the base resistor, V.
    pub drive_voltage: f64,
    /// Base resistor, Ω.
    pub base_resistor: f64,
    /// Base-emitter voltage in saturation, V.
    pub base_emitter: f64,
    /// Minimum DC gain at the coil current.
    pub min_gain: f64,
}

/// MOSFET gate drive, for the enhancement check.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GateDrive {
    /// Applied gate-source voltage, V.
    pub applied: f64,
    /// Gate-source voltage at which the on-resistance is specified, V.
    pub rated: f64,
}

/// Self-heating check settings.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SelfHeatingSpec {
    /// Hottest ambient, °C.
    pub ambient: f64,
    /// Thermal resistance winding to ambient, K/W.
    pub r_th: f64,
}

/// Hold (economiser) phase settings.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Hold {
    /// Hold current, A.
    pub current: f64,
    /// PWM frequency, Hz.
    pub pwm_frequency: f64,
}

/// A design file, read and validated.
#[derive(Clone, Debug)]
pub struct Spec {
    /// The inputs it was built from (for placing later errors).
    pub inputs: Inputs,
    /// `design.name`.
    pub name: String,
    /// `design.notes`.
    pub notes: Option<String>,
    /// The core design.
    pub design: DriverDesign,
    /// `clamp.kind` as written.
    pub clamp_kind: &'static str,
    /// `switch.kind` as written.
    pub switch_kind: &'static str,
    /// Switch single-pulse avalanche rating, J.
    pub avalanche_energy: Option<f64>,
    /// Bipolar base drive, when all its keys are given.
    pub base_drive: Option<BaseDrive>,
    /// MOSFET gate drive, when both keys are given.
    pub gate_drive: Option<GateDrive>,
    /// Hold phase, when `hold.current` is given.
    pub hold: Option<Hold>,
    /// Self-heating check, when ambient and thermal resistance are given.
    pub self_heating: Option<SelfHeatingSpec>,
    /// Diagnosis thresholds, A (never empty).
    pub thresholds: Vec<f64>,
    /// Diagnostic pulse: fraction of the pull-in current it must stay below.
    pub probe_fraction: f64,
    /// Zener voltages to compare, V (`None`: choose defaults).
    pub compare_zener: Option<Vec<f64>>,
    /// Clamp resistors to compare, Ω (`None`: choose defaults).
    pub compare_resistor: Option<Vec<f64>>,
    /// Diode drop for the compared clamps, V.
    pub compare_diode_drop: f64,
    /// Planned pulse length and repetition rate, s and Hz.
    pub planned: Option<(f64, f64)>,
}

/// Maps a core error to the key that caused it.
pub(crate) fn core_error(inputs: &Inputs, key: &str, err: coilwise::Error) -> ToolError {
    inputs
        .error(key, ErrorClass::Impossible, err.to_string())
        .hint("see docs/design-file.md for the allowed range")
}

fn f(x: f64) -> f32 {
    x as f32
}

impl Spec {
    /// Builds and validates a design from its inputs.
    ///
    /// # Errors
    /// Missing keys, bad values, and combinations no real circuit has, each at its key.
    pub fn build(inputs: Inputs) -> Result<Self, ToolError> {
        let i = &inputs;
        let name = i
            .text("design.name")
            .ok_or_else(|| i.missing("design.name", ""))?;
        let notes = i.text("design.notes");

        // Coil.
        let resistance = i.required("coil.resistance")?;
        let t_ref = i.quantity_or_default("coil.reference_temperature")?;
        let single = i.quantity("coil.inductance")?;
        let released = i.quantity("coil.inductance_released")?;
        let operated = i.quantity("coil.inductance_operated")?;
        let (l_rel, l_op, l_rel_key, l_op_key) = match (single, released, operated) {
            (Some(l), None, None) => (l, l, "coil.inductance", "coil.inductance"),
            (None, Some(r), Some(o)) => {
                (r, o, "coil.inductance_released", "coil.inductance_operated")
            }
            (Some(_), _, _) => {
                let other = if released.is_some() {
                    "coil.inductance_released"
                } else {
                    "coil.inductance_operated"
                };
                return Err(i
                    .error(
                        other,
                        ErrorClass::BadValue,
                        "give either coil.inductance or the pair coil.inductance_released / coil.inductance_operated, not both",
                    ));
            }
            (None, Some(_), None) => {
                return Err(i.missing(
                    "coil.inductance_operated",
                    " (it goes with coil.inductance_released)",
                ))
            }
            (None, None, Some(_)) => {
                return Err(i.missing(
                    "coil.inductance_released",
                    " (it goes with coil.inductance_operated)",
                ))
            }
            (None, None, None) => {
                return Err(i.missing(
                    "coil.inductance",
                    " (or give coil.inductance_released and coil.inductance_operated)",
                ))
            }
        };
        let must_operate = i.required("coil.must_operate")?;
        let must_release = i.required("coil.must_release")?;
        for (key, v) in [
            ("coil.resistance", resistance),
            (l_rel_key, l_rel),
            (l_op_key, l_op),
            ("coil.must_operate", must_operate),
            ("coil.must_release", must_release),
        ] {
            if v <= 0.0 {
                return Err(i.error(key, ErrorClass::Impossible, "must be greater than zero"));
            }
        }
        if must_release >= must_operate {
            return Err(i.error(
                "coil.must_release",
                ErrorClass::Impossible,
                format!(
                    "must-release voltage ({}) must be below the must-operate voltage ({}): a coil releases at a lower voltage than it operates at",
                    eng(must_release, "V"),
                    eng(must_operate, "V")
                ),
            ));
        }
        let mut coil = Coil::new(
            Ohms::new(f(resistance)),
            Celsius::new(f(t_ref)),
            Henries::new(f(l_rel)),
            Henries::new(f(l_op)),
            Volts::new(f(must_operate)),
            Volts::new(f(must_release)),
        )
        .map_err(|e| {
            let key = match e {
                coilwise::Error::Invalid {
                    param: coilwise::Param::Temperature,
                    ..
                } => "coil.reference_temperature",
                coilwise::Error::Invalid {
                    param: coilwise::Param::InductanceReleased,
                    ..
                } => l_rel_key,
                coilwise::Error::Invalid {
                    param: coilwise::Param::InductanceOperated,
                    ..
                } => l_op_key,
                coilwise::Error::Invalid {
                    param: coilwise::Param::MustOperateVoltage,
                    ..
                } => "coil.must_operate",
                coilwise::Error::Invalid {
                    param: coilwise::Param::MustReleaseVoltage,
                    ..
                } => "coil.must_release",
                _ => "coil.resistance",
            };
            core_error(i, key, e)
        })?;
        if i.has("coil.temperature_coefficient") {
            let alpha = i.quantity_or_default("coil.temperature_coefficient")?;
            coil = coil
                .with_temperature_coefficient(PerKelvin::new(f(alpha)))
                .map_err(|e| core_error(i, "coil.temperature_coefficient", e))?;
        }

        // Supply and temperature.
        let nominal = i.required("supply.nominal")?;
        let supply = match (
            i.quantity("supply.min")?,
            i.quantity("supply.max")?,
            i.quantity("supply.tolerance")?,
        ) {
            (Some(lo), Some(hi), None) => {
                if lo > nominal {
                    return Err(i.error(
                        "supply.min",
                        ErrorClass::Impossible,
                        format!(
                            "lowest supply ({}) is above the nominal ({})",
                            eng(lo, "V"),
                            eng(nominal, "V")
                        ),
                    ));
                }
                if hi < nominal {
                    return Err(i.error(
                        "supply.max",
                        ErrorClass::Impossible,
                        format!(
                            "highest supply ({}) is below the nominal ({})",
                            eng(hi, "V"),
                            eng(nominal, "V")
                        ),
                    ));
                }
                SupplyRange::new(Volts::new(f(lo)), Volts::new(f(nominal)), Volts::new(f(hi)))
                    .map_err(|e| core_error(i, "supply.min", e))?
            }
            (None, None, Some(tol)) => SupplyRange::with_tolerance(Volts::new(f(nominal)), f(tol))
                .map_err(|e| core_error(i, "supply.tolerance", e))?,
            (None, None, None) => {
                return Err(i.missing(
                    "supply.min",
                    " (give supply.min and supply.max, or supply.tolerance)",
                ))
            }
            (_, _, Some(_)) => {
                return Err(i.error(
                    "supply.tolerance",
                    ErrorClass::BadValue,
                    "give either supply.tolerance or supply.min and supply.max, not both",
                ))
            }
            (Some(_), None, None) => {
                return Err(i.missing("supply.max", " (it goes with supply.min)"))
            }
            (None, Some(_), None) => {
                return Err(i.missing("supply.min", " (it goes with supply.max)"))
            }
        };
        let t_min = i.required("temperature.min")?;
        let t_max = i.required("temperature.max")?;
        if t_min > t_max {
            return Err(i.error(
                "temperature.min",
                ErrorClass::Impossible,
                format!("coldest winding ({t_min} °C) is above the hottest ({t_max} °C)"),
            ));
        }
        let temperature = TemperatureRange::new(Celsius::new(f(t_min)), Celsius::new(f(t_max)))
            .map_err(|e| core_error(i, "temperature.max", e))?;

        // Switch.
        let switch_kind = i
            .choice("switch.kind")?
            .ok_or_else(|| i.missing("switch.kind", ""))?;
        let side = i.choice("switch.side")?.unwrap_or("low");
        let breakdown = i.required("switch.breakdown")?;
        let only = |key: &str, kind: &str| -> Result<(), ToolError> {
            if i.has(key) {
                Err(i.error(
                    key,
                    ErrorClass::Impossible,
                    format!("applies to a {kind} switch, but switch.kind is \"{switch_kind}\""),
                ))
            } else {
                Ok(())
            }
        };
        let switch = if switch_kind == "mosfet" {
            for k in [
                "switch.saturation",
                "switch.drive_voltage",
                "switch.base_resistor",
                "switch.base_emitter",
                "switch.min_gain",
            ] {
                only(k, "bipolar")?;
            }
            let r_on = i.quantity("switch.on_resistance")?.ok_or_else(|| {
                i.missing("switch.on_resistance", " (required for a MOSFET switch)")
            })?;
            Switch::Mosfet {
                on_resistance: Ohms::new(f(r_on)),
                breakdown: Volts::new(f(breakdown)),
            }
        } else {
            for k in [
                "switch.on_resistance",
                "switch.gate_voltage",
                "switch.rated_gate_voltage",
            ] {
                only(k, "MOSFET")?;
            }
            let sat = i.quantity("switch.saturation")?.ok_or_else(|| {
                i.missing("switch.saturation", " (required for a bipolar switch)")
            })?;
            if sat >= supply.min().value() as f64 {
                return Err(i.error(
                    "switch.saturation",
                    ErrorClass::Impossible,
                    format!(
                        "a saturation voltage of {} leaves no voltage across the coil at the lowest supply ({})",
                        eng(sat, "V"),
                        eng(supply.min().value() as f64, "V")
                    ),
                ));
            }
            Switch::Bipolar {
                saturation: Volts::new(f(sat)),
                breakdown: Volts::new(f(breakdown)),
            }
        };
        if breakdown <= supply.max().value() as f64 {
            return Err(i.error(
                "switch.breakdown",
                ErrorClass::Impossible,
                format!(
                    "a breakdown voltage of {} is not above the highest supply ({}): the switch would conduct while off",
                    eng(breakdown, "V"),
                    eng(supply.max().value() as f64, "V")
                ),
            ));
        }
        let avalanche_energy = i.quantity("switch.avalanche_energy")?;
        let base_drive = if switch_kind == "bipolar" {
            let keys = [
                "switch.drive_voltage",
                "switch.base_resistor",
                "switch.min_gain",
            ];
            let given: Vec<bool> = keys.iter().map(|k| i.has(k)).collect();
            if given.iter().all(|&g| g) {
                let d = BaseDrive {
                    drive_voltage: i.required("switch.drive_voltage")?,
                    base_resistor: i.required("switch.base_resistor")?,
                    base_emitter: i.quantity_or_default("switch.base_emitter")?,
                    min_gain: i.required("switch.min_gain")?,
                };
                if d.base_resistor <= 0.0 {
                    return Err(i.error(
                        "switch.base_resistor",
                        ErrorClass::Impossible,
                        "must be greater than zero",
                    ));
                }
                if d.base_emitter < 0.0 {
                    return Err(i.error(
                        "switch.base_emitter",
                        ErrorClass::Impossible,
                        "must not be negative",
                    ));
                }
                if d.min_gain <= 0.0 {
                    return Err(i.error(
                        "switch.min_gain",
                        ErrorClass::Impossible,
                        "must be greater than zero",
                    ));
                }
                if d.drive_voltage <= d.base_emitter {
                    return Err(i.error(
                        "switch.drive_voltage",
                        ErrorClass::Impossible,
                        format!(
                            "a drive of {} does not exceed the base-emitter voltage ({}): no base current flows",
                            eng(d.drive_voltage, "V"),
                            eng(d.base_emitter, "V")
                        ),
                    ));
                }
                Some(d)
            } else if given.iter().any(|&g| g) {
                let missing = keys
                    .iter()
                    .zip(&given)
                    .find(|(_, &g)| !g)
                    .map_or(keys[0], |(k, _)| *k);
                return Err(i.missing(
                    missing,
                    " (the base-drive check needs switch.drive_voltage, switch.base_resistor and switch.min_gain)",
                ));
            } else {
                None
            }
        } else {
            None
        };
        let gate_drive = match (
            i.quantity("switch.gate_voltage")?,
            i.quantity("switch.rated_gate_voltage")?,
        ) {
            (Some(_), Some(rated)) if rated <= 0.0 => {
                return Err(i.error(
                    "switch.rated_gate_voltage",
                    ErrorClass::Impossible,
                    "must be greater than zero",
                ))
            }
            (Some(applied), Some(rated)) => Some(GateDrive { applied, rated }),
            (None, None) => None,
            (Some(_), None) => {
                return Err(i.missing(
                    "switch.rated_gate_voltage",
                    " (it goes with switch.gate_voltage)",
                ))
            }
            (None, Some(_)) => {
                return Err(i.missing(
                    "switch.gate_voltage",
                    " (it goes with switch.rated_gate_voltage)",
                ))
            }
        };

        // Self-heating.
        let self_heating = match (
            i.quantity("temperature.ambient")?,
            i.quantity("coil.thermal_resistance")?,
        ) {
            (Some(ambient), Some(r_th)) => {
                if r_th <= 0.0 {
                    return Err(i.error(
                        "coil.thermal_resistance",
                        ErrorClass::Impossible,
                        "must be greater than zero",
                    ));
                }
                if ambient > t_max {
                    return Err(i.error(
                        "temperature.ambient",
                        ErrorClass::Impossible,
                        format!(
                            "an ambient of {ambient} °C is above the hottest winding ({t_max} °C): a coil is never cooler than its surroundings"
                        ),
                    ));
                }
                Some(SelfHeatingSpec { ambient, r_th })
            }
            (None, None) => None,
            (Some(_), None) => {
                return Err(i.missing(
                    "coil.thermal_resistance",
                    " (it goes with temperature.ambient)",
                ))
            }
            (None, Some(_)) => {
                return Err(i.missing(
                    "temperature.ambient",
                    " (it goes with coil.thermal_resistance)",
                ))
            }
        };

        // Wiring.
        let sense = i.quantity_or_default("wiring.sense")?;
        let harness = i.quantity_or_default("wiring.harness")?;

        // Clamp.
        let clamp_kind = i
            .choice("clamp.kind")?
            .ok_or_else(|| i.missing("clamp.kind", ""))?;
        let needs_diode = matches!(clamp_kind, "diode" | "zener" | "resistor");
        let diode = if needs_diode {
            Some(i.quantity("clamp.diode_drop")?.ok_or_else(|| {
                i.missing(
                    "clamp.diode_drop",
                    &format!(" (clamp.kind = \"{clamp_kind}\" has a diode)"),
                )
            })?)
        } else {
            only_clamp(i, "clamp.diode_drop", clamp_kind)?;
            None
        };
        let zener = if matches!(clamp_kind, "zener" | "switch-zener" | "tvs-across-coil") {
            Some(i.quantity("clamp.zener")?.ok_or_else(|| {
                i.missing(
                    "clamp.zener",
                    &format!(" (clamp.kind = \"{clamp_kind}\" has a zener or TVS)"),
                )
            })?)
        } else {
            only_clamp(i, "clamp.zener", clamp_kind)?;
            None
        };
        let clamp_r = if matches!(clamp_kind, "resistor" | "snubber") {
            Some(i.quantity("clamp.resistance")?.ok_or_else(|| {
                i.missing(
                    "clamp.resistance",
                    &format!(" (clamp.kind = \"{clamp_kind}\")"),
                )
            })?)
        } else {
            only_clamp(i, "clamp.resistance", clamp_kind)?;
            None
        };
        let clamp_c = if clamp_kind == "snubber" {
            Some(
                i.quantity("clamp.capacitance")?
                    .ok_or_else(|| i.missing("clamp.capacitance", " (clamp.kind = \"snubber\")"))?,
            )
        } else {
            only_clamp(i, "clamp.capacitance", clamp_kind)?;
            None
        };
        let standoff = if clamp_kind == "tvs-across-coil" {
            Some(i.quantity("clamp.standoff")?.ok_or_else(|| {
                i.missing("clamp.standoff", " (clamp.kind = \"tvs-across-coil\")")
            })?)
        } else {
            only_clamp(i, "clamp.standoff", clamp_kind)?;
            None
        };
        let vf = diode.unwrap_or(0.8);
        let clamp = match clamp_kind {
            "diode" => Clamp::diode(Volts::new(f(vf))),
            "zener" => Clamp::diode_zener(
                Volts::new(f(vf)),
                Volts::new(f(zener.unwrap_or(0.0) + vf)),
            ),
            "resistor" => Clamp::diode_resistor(Volts::new(f(vf)), Ohms::new(f(clamp_r.unwrap_or(0.0)))),
            "switch-zener" => {
                let vz = zener.unwrap_or(0.0);
                if vz <= supply.max().value() as f64 {
                    return Err(i.error(
                        "clamp.zener",
                        ErrorClass::Impossible,
                        format!(
                            "a zener of {} across the switch is not above the highest supply ({}): it would conduct while the coil is off",
                            eng(vz, "V"),
                            eng(supply.max().value() as f64, "V")
                        ),
                    ));
                }
                Ok(Clamp::AcrossSwitch {
                    clamp_voltage: Volts::new(f(vz)),
                })
            }
            "snubber" => {
                let c = Clamp::RcSnubber {
                    resistance: Ohms::new(f(clamp_r.unwrap_or(0.0))),
                    capacitance: coilwise::Farads::new(f(clamp_c.unwrap_or(0.0))),
                };
                c.validate().map(|()| c)
            }
            "tvs-across-coil" => Clamp::tvs_across_coil(
                Volts::new(f(zener.unwrap_or(0.0))),
                Volts::new(f(standoff.unwrap_or(0.0))),
            ),
            _ => Ok(Clamp::Unclamped),
        }
        .map_err(|e| {
            let key = match e {
                coilwise::Error::Invalid {
                    param: coilwise::Param::ClampVoltage,
                    ..
                } => "clamp.zener",
                coilwise::Error::Invalid {
                    param: coilwise::Param::ClampResistance,
                    ..
                } => "clamp.resistance",
                coilwise::Error::Invalid {
                    param: coilwise::Param::Capacitance,
                    ..
                } => "clamp.capacitance",
                coilwise::Error::Invalid {
                    param: coilwise::Param::StandoffVoltage,
                    ..
                } => "clamp.standoff",
                _ => "clamp.diode_drop",
            };
            core_error(i, key, e)
        })?;
        let clamp_rating = i.quantity("clamp.power_rating")?;
        if let Some(p) = clamp_rating {
            if p <= 0.0 {
                return Err(i.error(
                    "clamp.power_rating",
                    ErrorClass::Impossible,
                    "must be greater than zero",
                ));
            }
        }

        let topology = if side == "high" {
            Topology::HighSide
        } else {
            Topology::LowSide
        };
        let circuit = Circuit::new(
            coil,
            switch,
            topology,
            Ohms::new(f(sense)),
            Ohms::new(f(harness)),
            clamp,
        )
        .map_err(|e| {
            let key = match e {
                coilwise::Error::Invalid {
                    param: coilwise::Param::OnResistance,
                    ..
                } => "switch.on_resistance",
                coilwise::Error::Invalid {
                    param: coilwise::Param::SaturationVoltage,
                    ..
                } => "switch.saturation",
                coilwise::Error::Invalid {
                    param: coilwise::Param::SenseResistance,
                    ..
                } => "wiring.sense",
                coilwise::Error::Invalid {
                    param: coilwise::Param::WiringResistance,
                    ..
                } => "wiring.harness",
                _ => "switch.breakdown",
            };
            core_error(i, key, e)
        })?;

        // Timing.
        let tick_hz = i
            .quantity("timing.tick_rate")?
            .ok_or_else(|| i.missing("timing.tick_rate", ""))?;
        if tick_hz.fract() != 0.0 || tick_hz < 1.0 || tick_hz > u32::MAX as f64 {
            return Err(i.error(
                "timing.tick_rate",
                ErrorClass::Impossible,
                format!("{tick_hz} Hz is not a whole number of ticks per second between 1 Hz and 4.29 GHz"),
            ));
        }
        let tick_rate =
            TickRate::new(tick_hz as u32).map_err(|e| core_error(i, "timing.tick_rate", e))?;

        let mut design = DriverDesign::new(circuit, supply, temperature, tick_rate);
        let tolerance = |key: &str| -> Result<f32, ToolError> {
            let t = i.quantity_or_default(key)?;
            if !(0.0..=0.9).contains(&t) {
                return Err(i.error(
                    key,
                    ErrorClass::Impossible,
                    "a tolerance must be between 0 % and 90 %",
                ));
            }
            Ok(f(t))
        };
        design.tolerances = Tolerances {
            resistance: tolerance("coil.resistance_tolerance")?,
            inductance: tolerance("coil.inductance_tolerance")?,
            sense: tolerance("wiring.sense_tolerance")?,
        };
        let non_negative = |key: &str| -> Result<f64, ToolError> {
            let v = i.quantity_or_default(key)?;
            if v < 0.0 {
                return Err(i.error(key, ErrorClass::Impossible, "must not be negative"));
            }
            Ok(v)
        };
        design.operate_allowance = Seconds::new(f(non_negative("timing.operate_allowance")?));
        design.release_allowance = Seconds::new(f(non_negative("timing.release_allowance")?));
        design.residual_current = coilwise::Amps::new(f(non_negative("timing.residual_current")?));
        let planned = match (
            i.quantity("timing.on_time")?,
            i.quantity("timing.repetition")?,
        ) {
            (Some(on), Some(rate)) => {
                if on <= 0.0 {
                    return Err(i.error(
                        "timing.on_time",
                        ErrorClass::Impossible,
                        "must be greater than zero",
                    ));
                }
                if rate <= 0.0 {
                    return Err(i.error(
                        "timing.repetition",
                        ErrorClass::Impossible,
                        "must be greater than zero",
                    ));
                }
                if on >= 1.0 / rate {
                    return Err(i.error(
                        "timing.on_time",
                        ErrorClass::Impossible,
                        format!(
                            "a {} pulse does not fit its period of {} (timing.repetition = {}): no off-time is left",
                            eng(on, "s"),
                            eng(1.0 / rate, "s"),
                            eng(rate, "Hz")
                        ),
                    ));
                }
                Some((on, rate))
            }
            (None, None) => None,
            (Some(_), None) => {
                return Err(i.missing("timing.repetition", " (it goes with timing.on_time)"))
            }
            (None, Some(_)) => {
                return Err(i.missing("timing.on_time", " (it goes with timing.repetition)"))
            }
        };
        design.duty = planned.map(|(on, rate)| (Seconds::new(f(on)), Hertz::new(f(rate))));
        design.clamp_rating = clamp_rating.map(|p| Watts::new(f(p)));

        // Hold.
        let hold = match (
            i.quantity("hold.current")?,
            i.quantity("hold.pwm_frequency")?,
        ) {
            (Some(current), Some(pwm)) => {
                if current <= 0.0 {
                    return Err(i.error(
                        "hold.current",
                        ErrorClass::Impossible,
                        "must be greater than zero",
                    ));
                }
                if pwm <= 0.0 {
                    return Err(i.error(
                        "hold.pwm_frequency",
                        ErrorClass::Impossible,
                        "must be greater than zero",
                    ));
                }
                Some(Hold {
                    current,
                    pwm_frequency: pwm,
                })
            }
            (None, None) => None,
            (Some(_), None) => {
                return Err(i.missing("hold.pwm_frequency", " (it goes with hold.current)"))
            }
            (None, Some(_)) => {
                return Err(i.missing("hold.current", " (it goes with hold.pwm_frequency)"))
            }
        };

        // Diagnosis thresholds.
        let pull_in = coil.pull_in_current().value() as f64;
        let thresholds = match i.quantities("diagnosis.thresholds")? {
            Some(list) => {
                if list.is_empty() {
                    return Err(i.error(
                        "diagnosis.thresholds",
                        ErrorClass::BadValue,
                        "the list is empty; leave the key out to use half the pull-in current",
                    ));
                }
                let mut out = Vec::new();
                for (v, place) in list {
                    if v <= 0.0 {
                        return Err(ToolError::new(
                            ErrorClass::Impossible,
                            format!("threshold {} must be greater than zero", eng(v, "A")),
                        )
                        .at(place, Some("diagnosis.thresholds")));
                    }
                    out.push(v);
                }
                out
            }
            None => vec![0.5 * pull_in],
        };

        let probe_fraction = i.quantity_or_default("diagnosis.probe_fraction")?;
        if !(probe_fraction > 0.0 && probe_fraction < 1.0) {
            return Err(i.error(
                "diagnosis.probe_fraction",
                ErrorClass::Impossible,
                "must lie between 0 % and 100 % (exclusive): a diagnostic pulse stays below pull-in",
            ));
        }

        // Comparison set.
        let positive_list = |key: &str| -> Result<Option<Vec<f64>>, ToolError> {
            match i.quantities(key)? {
                None => Ok(None),
                Some(list) => {
                    let mut out = Vec::new();
                    for (v, place) in list {
                        if v <= 0.0 {
                            return Err(ToolError::new(
                                ErrorClass::Impossible,
                                format!("{v} must be greater than zero"),
                            )
                            .at(place, Some(key)));
                        }
                        out.push(v);
                    }
                    Ok(Some(out))
                }
            }
        };
        let compare_zener = positive_list("compare.zener")?;
        let compare_resistor = positive_list("compare.resistor")?;
        let compare_diode_drop = match i.quantity("compare.diode_drop")? {
            Some(v) if v <= 0.0 => {
                return Err(i.error(
                    "compare.diode_drop",
                    ErrorClass::Impossible,
                    "must be greater than zero",
                ))
            }
            Some(v) => v,
            None => diode.unwrap_or(0.8),
        };

        Ok(Spec {
            name,
            notes,
            design,
            clamp_kind,
            switch_kind,
            avalanche_energy,
            base_drive,
            gate_drive,
            hold,
            self_heating,
            thresholds,
            probe_fraction,
            compare_zener,
            compare_resistor,
            compare_diode_drop,
            planned,
            inputs,
        })
    }
}

fn only_clamp(i: &Inputs, key: &str, kind: &str) -> Result<(), ToolError> {
    if i.has(key) {
        Err(i.error(
            key,
            ErrorClass::Impossible,
            format!("does not apply to clamp.kind = \"{kind}\""),
        ))
    } else {
        Ok(())
    }
}
