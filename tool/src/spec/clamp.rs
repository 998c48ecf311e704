//! The `[clamp]` section: which clamp is fitted, its element values and its power rating.

use coilwise::{Clamp, Ohms, SupplyRange, Volts};

use super::{core_error, f};
use crate::error::{ErrorClass, ToolError};
use crate::input::Inputs;
use crate::quantity::eng;

/// The fitted clamp and what goes with it.
pub(super) struct ClampParts {
    /// `clamp.kind` as written.
    pub kind: &'static str,
    /// `clamp.diode_drop`, V, for the kinds that have a diode.
    pub diode: Option<f64>,
    /// The core clamp.
    pub clamp: Clamp,
    /// `clamp.power_rating`, W.
    pub rating: Option<f64>,
}

/// The clamp, checked against the supply range where it matters.
pub(super) fn clamp(i: &Inputs, supply: &SupplyRange) -> Result<ClampParts, ToolError> {
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
    let standoff =
        if clamp_kind == "tvs-across-coil" {
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
        if let coilwise::Error::Invalid {
            param: coilwise::Param::StandoffVoltage,
            why: coilwise::Why::Inverted,
        } = e
        {
            return i
                .error(
                    "clamp.standoff",
                    ErrorClass::Impossible,
                    format!(
                        "the TVS standoff ({}) must be below clamp.zener ({}), its clamping voltage",
                        eng(standoff.unwrap_or(0.0), "V"),
                        eng(zener.unwrap_or(0.0), "V")
                    ),
                )
                .hint("take both from the TVS datasheet: V_RWM for clamp.standoff, the clamping voltage at the coil current for clamp.zener");
        }
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
    if clamp_kind == "none" {
        // No clamp element to rate; the switch's own rating is switch.avalanche_energy.
        only_clamp(i, "clamp.power_rating", clamp_kind)?;
    }
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

    Ok(ClampParts {
        kind: clamp_kind,
        diode,
        clamp,
        rating: clamp_rating,
    })
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
