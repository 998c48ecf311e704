//! The clamp comparison: the fitted clamp beside a plain diode, zeners, resistors and no clamp,
//! each at the release corner, and the clamp labels the outputs print.

use coilwise::{Clamp, Figures, Ohms, Volts};

use super::{wide, ClampRow, Status};
use crate::quantity::eng;
use crate::spec::Spec;

/// E12 mantissas (IEC 60063 preferred number series).
pub const E12: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];
/// E24 mantissas (IEC 60063 preferred number series).
pub const E24: [f64; 24] = [
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6,
    6.2, 6.8, 7.5, 8.2, 9.1,
];

/// The largest value of an E series not above `x` (x > 0).
pub fn e_series_down(x: f64, series: &[f64]) -> f64 {
    if !(x.is_finite() && x > 0.0) {
        return 0.0;
    }
    let decade = 10f64.powf(x.log10().floor());
    let m = x / decade;
    match series.iter().rev().find(|&&s| s <= m * (1.0 + 1e-9)) {
        Some(&s) => s * decade,
        None => series.last().copied().unwrap_or(1.0) * decade / 10.0,
    }
}

/// The comparison rows at the release corner (`release`: the fitted clamp's figures there): the
/// fitted clamp first, then the alternatives not equal to it.
pub(super) fn comparison(spec: &Spec, release: &Figures) -> Vec<ClampRow> {
    let d = &spec.design;
    let fitted_clamp = *d.circuit.clamp();
    let avalanche_rating = spec.avalanche_energy;
    let v_br = wide(d.circuit.switch().breakdown().value());
    let row_status = |clamp: &Clamp, f: &Figures| {
        let avalanche = matches!(clamp, Clamp::Unclamped);
        let e = wide(f.energy.clamp.value());
        voltage_status(
            wide(f.peak_switch_voltage.value()),
            v_br,
            avalanche,
            avalanche_rating.is_some_and(|r| e <= r),
        )
    };
    let mut comparison = vec![ClampRow {
        label: label_of(spec),
        kind: spec.clamp_kind,
        fitted: true,
        clamp: fitted_clamp,
        figures: Ok(*release),
        status: row_status(&fitted_clamp, release),
    }];
    for (label, kind, clamp) in comparison_clamps(spec, release) {
        if clamp == fitted_clamp || label == comparison[0].label {
            continue;
        }
        let mut alt = *d;
        let figures = match d.circuit.with_clamp(clamp) {
            Ok(c) => {
                alt.circuit = c;
                alt.figures(&alt.release_corner())
                    .map_err(|e| e.to_string())
            }
            Err(e) => Err(e.to_string()),
        };
        let status = match &figures {
            Ok(f) => row_status(&clamp, f),
            Err(_) => Status::Info,
        };
        comparison.push(ClampRow {
            label,
            kind,
            fitted: false,
            clamp,
            figures,
            status,
        });
    }
    comparison
}

/// The comparison set: the fitted clamp, a plain diode, zeners, resistors, and no clamp.
fn comparison_clamps(spec: &Spec, release: &Figures) -> Vec<(String, &'static str, Clamp)> {
    let d = &spec.design;
    let vf = spec.compare_diode_drop;
    let v_max = d.supply.max().value() as f64;
    let v_br = d.circuit.switch().breakdown().value() as f64;
    let headroom = (v_br - v_max - vf).max(0.0);
    let zeners = spec.compare_zener.clone().unwrap_or_else(|| {
        let mut z: Vec<f64> = [0.25, 0.5, 0.75]
            .iter()
            .map(|k| e_series_down(k * headroom, &E24))
            .filter(|&v| v > 0.0)
            .collect();
        z.dedup();
        z
    });
    let i0 = release.final_current.value() as f64;
    let resistors = spec.compare_resistor.clone().unwrap_or_else(|| {
        let mut r: Vec<f64> = [1.0 / 3.0, 2.0 / 3.0]
            .iter()
            .map(|k| e_series_down(k * headroom / i0, &E12))
            .filter(|&v| v > 0.0)
            .collect();
        r.dedup();
        r
    });
    let vf32 = Volts::new(vf as f32);
    let mut out = vec![(
        format!("diode ({})", eng(vf, "V")),
        "diode",
        Clamp::Diode { forward: vf32 },
    )];
    for z in zeners {
        out.push((
            format!("zener {} + diode", eng(z, "V")),
            "zener",
            Clamp::DiodeZener {
                forward: vf32,
                clamp_voltage: Volts::new((z + vf) as f32),
            },
        ));
    }
    for r in resistors {
        out.push((
            format!("resistor {} + diode", eng(r, "Ω")),
            "resistor",
            Clamp::DiodeResistor {
                forward: vf32,
                resistance: Ohms::new(r as f32),
            },
        ));
    }
    out.push((
        "none (switch avalanches)".to_string(),
        "none",
        Clamp::Unclamped,
    ));
    out
}

fn label_of(spec: &Spec) -> String {
    match *spec.design.circuit.clamp() {
        Clamp::Diode { forward } => format!("diode ({})", eng(wide(forward.value()), "V")),
        Clamp::DiodeZener {
            forward,
            clamp_voltage,
        } => format!(
            "zener {} + diode",
            eng(wide(clamp_voltage.value()) - wide(forward.value()), "V")
        ),
        Clamp::DiodeResistor { resistance, .. } => {
            format!("resistor {} + diode", eng(wide(resistance.value()), "Ω"))
        }
        Clamp::AcrossSwitch { clamp_voltage } => {
            format!(
                "zener {} across switch",
                eng(wide(clamp_voltage.value()), "V")
            )
        }
        Clamp::TvsAcrossCoil {
            clamp_voltage,
            standoff,
        } => format!(
            "TVS {} across coil (standoff {})",
            eng(wide(clamp_voltage.value()), "V"),
            eng(wide(standoff.value()), "V")
        ),
        Clamp::RcSnubber {
            resistance,
            capacitance,
        } => format!(
            "RC snubber {} + {}",
            eng(wide(resistance.value()), "Ω"),
            eng(wide(capacitance.value()), "F")
        ),
        Clamp::Unclamped => "none (switch avalanches)".to_string(),
    }
}

/// Fitted clamp's label, for the report.
pub fn fitted_label(spec: &Spec) -> String {
    label_of(spec)
}

/// Switch-voltage status: pass below 80 % of breakdown, warn up to breakdown, fail at or above;
/// an avalanching switch passes only as a warning within its avalanche rating.
pub(super) fn voltage_status(
    peak: f64,
    breakdown: f64,
    avalanche: bool,
    within_rating: bool,
) -> Status {
    if avalanche {
        if within_rating {
            Status::Warn
        } else {
            Status::Fail
        }
    } else if peak >= breakdown {
        Status::Fail
    } else if peak > 0.8 * breakdown {
        Status::Warn
    } else {
        Status::Pass
    }
}
