//! From checked inputs to a core [`DriverDesign`] plus the tool's own settings (comparison set,
//! thresholds, hold and drive details). Every rejected value is reported at its key.

use coilwise::{Circuit, DriverDesign, Hertz, Ohms, Seconds, Topology, Watts};

use crate::error::{ErrorClass, ToolError};
use crate::input::Inputs;

mod checks;
mod clamp;
mod coil;
mod conditions;
mod switch;
mod timing;

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

        let coil = coil::coil(i)?;
        let supply = conditions::supply(i)?;
        let (temperature, t_max) = conditions::temperature(i)?;
        let sw = switch::switch(i, &supply)?;
        let self_heating = conditions::self_heating(i, t_max)?;
        conditions::resistance_stays_positive(i, &coil, self_heating.as_ref())?;

        // Wiring.
        let sense = i.quantity_or_default("wiring.sense")?;
        let harness = i.quantity_or_default("wiring.harness")?;

        let cl = clamp::clamp(i, &supply)?;
        let topology = if sw.side == "high" {
            Topology::HighSide
        } else {
            Topology::LowSide
        };
        let circuit = Circuit::new(
            coil,
            sw.switch,
            topology,
            Ohms::new(f(sense)),
            Ohms::new(f(harness)),
            cl.clamp,
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

        let tick_rate = timing::tick_rate(i)?;
        let mut design = DriverDesign::new(circuit, supply, temperature, tick_rate);
        design.tolerances = timing::tolerances(i)?;
        (
            design.operate_allowance,
            design.release_allowance,
            design.residual_current,
        ) = timing::allowances(i)?;
        let planned = timing::planned(i)?;
        design.duty = planned.map(|(on, rate)| (Seconds::new(f(on)), Hertz::new(f(rate))));
        design.clamp_rating = cl.rating.map(|p| Watts::new(f(p)));
        let hold = timing::hold(i)?;

        let (thresholds, probe_fraction) =
            checks::diagnosis(i, f64::from(coil.pull_in_current().value()))?;
        let compare = checks::comparison(i, cl.diode)?;

        Ok(Spec {
            name,
            notes,
            design,
            clamp_kind: cl.kind,
            switch_kind: sw.kind,
            avalanche_energy: sw.avalanche_energy,
            base_drive: sw.base_drive,
            gate_drive: sw.gate_drive,
            hold,
            self_heating,
            thresholds,
            probe_fraction,
            compare_zener: compare.zener,
            compare_resistor: compare.resistor,
            compare_diode_drop: compare.diode_drop,
            planned,
            inputs,
        })
    }
}
