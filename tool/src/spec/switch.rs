//! The `[switch]` section: the switch itself (MOSFET or bipolar), its ratings, and the drive
//! details for the saturation and gate checks.

use coilwise::{Ohms, SupplyRange, Switch, Volts};

use super::{f, BaseDrive, GateDrive};
use crate::error::{ErrorClass, ToolError};
use crate::input::Inputs;
use crate::quantity::eng;

/// The switch and what goes with it.
pub(super) struct SwitchParts {
    /// `switch.kind` as written.
    pub kind: &'static str,
    /// `switch.side` as written (default "low").
    pub side: &'static str,
    /// The core switch.
    pub switch: Switch,
    /// Single-pulse avalanche rating, J.
    pub avalanche_energy: Option<f64>,
    /// Bipolar base drive.
    pub base_drive: Option<BaseDrive>,
    /// MOSFET gate drive.
    pub gate_drive: Option<GateDrive>,
}

/// The switch, checked against the supply range.
pub(super) fn switch(i: &Inputs, supply: &SupplyRange) -> Result<SwitchParts, ToolError> {
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
        let r_on = i
            .quantity("switch.on_resistance")?
            .ok_or_else(|| i.missing("switch.on_resistance", " (required for a MOSFET switch)"))?;
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
        let sat = i
            .quantity("switch.saturation")?
            .ok_or_else(|| i.missing("switch.saturation", " (required for a bipolar switch)"))?;
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

    Ok(SwitchParts {
        kind: switch_kind,
        side,
        switch,
        avalanche_energy,
        base_drive,
        gate_drive,
    })
}
