//! The `[coil]` section: resistance, reference temperature, inductance (one value or the released /
//! operated pair), must-operate and must-release voltages, temperature coefficient.

use coilwise::{Celsius, Coil, Henries, Ohms, PerKelvin, Volts};

use super::{core_error, f};
use crate::error::{ErrorClass, ToolError};
use crate::input::Inputs;
use crate::quantity::eng;

/// The coil, validated by the core; every refusal at its own key.
pub(super) fn coil(i: &Inputs) -> Result<Coil, ToolError> {
    let resistance = i.required("coil.resistance")?;
    let t_ref = i.quantity_or_default("coil.reference_temperature")?;
    let single = i.quantity("coil.inductance")?;
    let released = i.quantity("coil.inductance_released")?;
    let operated = i.quantity("coil.inductance_operated")?;
    let (l_rel, l_op, l_rel_key, l_op_key) = match (single, released, operated) {
        (Some(l), None, None) => (l, l, "coil.inductance", "coil.inductance"),
        (None, Some(r), Some(o)) => (r, o, "coil.inductance_released", "coil.inductance_operated"),
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
            .map_err(|e| match e {
                coilwise::Error::Invalid {
                    why: coilwise::Why::OutOfRange,
                    ..
                } => i
                    .error(
                        "coil.temperature_coefficient",
                        ErrorClass::Impossible,
                        format!(
                            "{} 1/K is outside 0 to 0.01 1/K, the range of the linear resistance model",
                            f(alpha)
                        ),
                    )
                    .hint("annealed copper is 0.00393 1/K (IEC 60028), aluminium about 0.0040 1/K"),
                e => core_error(i, "coil.temperature_coefficient", e),
            })?;
    }
    Ok(coil)
}
