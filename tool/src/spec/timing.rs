//! Timing and hold: the firmware tick rate, part tolerances, allowances, the planned duty and the
//! hold (economiser) phase.

use coilwise::{Amps, Seconds, TickRate, Tolerances};

use super::{core_error, f, Hold};
use crate::error::{ErrorClass, ToolError};
use crate::input::Inputs;
use crate::quantity::eng;

/// `timing.tick_rate`, a whole number of Hz that fits a `u32`.
pub(super) fn tick_rate(i: &Inputs) -> Result<TickRate, ToolError> {
    let tick_hz = i
        .quantity("timing.tick_rate")?
        .ok_or_else(|| i.missing("timing.tick_rate", ""))?;
    if tick_hz.fract() != 0.0 || tick_hz < 1.0 || tick_hz > u32::MAX as f64 {
        return Err(i.error(
            "timing.tick_rate",
            ErrorClass::Impossible,
            format!(
                "{tick_hz} Hz is not a whole number of ticks per second between 1 Hz and 4.29 GHz"
            ),
        ));
    }
    let tick_rate =
        TickRate::new(tick_hz as u32).map_err(|e| core_error(i, "timing.tick_rate", e))?;
    Ok(tick_rate)
}

/// The part-to-part tolerances, each 0 % to 90 %.
pub(super) fn tolerances(i: &Inputs) -> Result<Tolerances, ToolError> {
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
    Ok(Tolerances {
        resistance: tolerance("coil.resistance_tolerance")?,
        inductance: tolerance("coil.inductance_tolerance")?,
        sense: tolerance("wiring.sense_tolerance")?,
    })
}

/// Operate allowance, release allowance and residual current, each not negative.
pub(super) fn allowances(i: &Inputs) -> Result<(Seconds, Seconds, Amps), ToolError> {
    let non_negative = |key: &str| -> Result<f64, ToolError> {
        let v = i.quantity_or_default(key)?;
        if v < 0.0 {
            return Err(i.error(key, ErrorClass::Impossible, "must not be negative"));
        }
        Ok(v)
    };
    Ok((
        Seconds::new(f(non_negative("timing.operate_allowance")?)),
        Seconds::new(f(non_negative("timing.release_allowance")?)),
        Amps::new(f(non_negative("timing.residual_current")?)),
    ))
}

/// The planned pulse length and repetition rate, s and Hz, when both are given.
pub(super) fn planned(i: &Inputs) -> Result<Option<(f64, f64)>, ToolError> {
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
    Ok(planned)
}

/// The hold phase, when both its keys are given.
pub(super) fn hold(i: &Inputs) -> Result<Option<Hold>, ToolError> {
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
    Ok(hold)
}
