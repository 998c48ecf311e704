//! What the report evaluates beyond the design itself: diagnosis thresholds, the diagnostic pulse
//! fraction, and the clamp comparison set.

use crate::error::{ErrorClass, ToolError};
use crate::input::Inputs;
use crate::quantity::eng;

/// `diagnosis.thresholds` (default half the pull-in current `pull_in`, A) and
/// `diagnosis.probe_fraction`.
pub(super) fn diagnosis(i: &Inputs, pull_in: f64) -> Result<(Vec<f64>, f64), ToolError> {
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

    Ok((thresholds, probe_fraction))
}

/// The clamp comparison set as read.
pub(super) struct Comparison {
    /// Zener voltages, V (`None`: defaults).
    pub zener: Option<Vec<f64>>,
    /// Clamp resistors, Ω (`None`: defaults).
    pub resistor: Option<Vec<f64>>,
    /// Diode drop, V.
    pub diode_drop: f64,
}

/// The comparison set; the diode drop defaults to the fitted clamp's `diode`, else 0.8 V.
pub(super) fn comparison(i: &Inputs, diode: Option<f64>) -> Result<Comparison, ToolError> {
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
    Ok(Comparison {
        zener: compare_zener,
        resistor: compare_resistor,
        diode_drop: compare_diode_drop,
    })
}
