//! Operating conditions: the supply range, the winding temperature range, and the self-heating
//! inputs (hottest ambient and thermal resistance).

use coilwise::{Celsius, Coil, SupplyRange, TemperatureRange, Volts};

use super::{core_error, f, SelfHeatingSpec};
use crate::error::{ErrorClass, ToolError};
use crate::input::Inputs;
use crate::quantity::eng;

/// The supply range: nominal with min and max, or nominal with a symmetric tolerance.
pub(super) fn supply(i: &Inputs) -> Result<SupplyRange, ToolError> {
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
        (Some(_), None, None) => return Err(i.missing("supply.max", " (it goes with supply.min)")),
        (None, Some(_), None) => return Err(i.missing("supply.min", " (it goes with supply.max)")),
    };
    Ok(supply)
}

/// The winding temperature range, and its hottest value as written, °C.
pub(super) fn temperature(i: &Inputs) -> Result<(TemperatureRange, f64), ToolError> {
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
    Ok((temperature, t_max))
}

/// The self-heating check's inputs, when both are given; `t_max` is the hottest winding, °C.
pub(super) fn self_heating(i: &Inputs, t_max: f64) -> Result<Option<SelfHeatingSpec>, ToolError> {
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

    Ok(self_heating)
}

/// Checks that the winding resistance law `R(T) = R_ref·(1 + α·(T − T_ref))` stays positive at
/// the coldest temperatures the tool evaluates: `temperature.min` and, for the self-heating
/// solve, `temperature.ambient`. The linear law reaches zero at `T_ref − 1/α` (−234.5 °C for
/// annealed copper specified at 20 °C, IEC 60028); a reference temperature written far too
/// high (or a coefficient referred to another temperature) moves that zero into the range. The
/// check is the core's own ([`Coil::resistance_at`]), so it refuses exactly what the analysis
/// could not evaluate.
///
/// # Errors
/// [`ErrorClass::Impossible`] at the colder key, naming the reference temperature and the zero.
pub(super) fn resistance_stays_positive(
    i: &Inputs,
    coil: &Coil,
    self_heating: Option<&SelfHeatingSpec>,
) -> Result<(), ToolError> {
    let t_min = i.required("temperature.min")?;
    let mut coldest = vec![("temperature.min", t_min)];
    if let Some(s) = self_heating {
        coldest.push(("temperature.ambient", s.ambient));
    }
    for (key, t) in coldest {
        if coil.resistance_at(Celsius::new(f(t))).is_ok() {
            continue;
        }
        // Shown at f32's shortest form (the values the core holds); the zero worked in f64.
        let (t_ref, alpha) = (
            coil.reference_temperature().value(),
            coil.temperature_coefficient().value(),
        );
        // resistance_at fails on a non-positive scale only, so alpha > 0 here.
        let zero = f64::from(t_ref) - 1.0 / f64::from(alpha);
        let round = |x: f64| (x * 10.0).round() / 10.0;
        return Err(i
            .error(
                key,
                ErrorClass::Impossible,
                format!(
                    "at {t} °C the winding resistance, extrapolated from coil.resistance at coil.reference_temperature ({t_ref} °C) with {alpha} /K, is not positive: the linear law reaches zero at {} °C",
                    round(zero)
                ),
            )
            .hint("coil.reference_temperature is the temperature at which coil.resistance is specified (usually 20 °C), and coil.temperature_coefficient is referred to it: check both"));
    }
    Ok(())
}
