//! Closed forms the report needs that the core does not provide yet (hold economiser, bipolar
//! base drive, switch conduction loss). Each is the plain first-order result, documented with its
//! equation and limits; when the core gains the same function, the report switches to the core's
//! and this module shrinks.

use coilwise::physics::circuit::Resolved;
use coilwise::Clamp;

/// Voltage across the coil opposing the freewheel current at current `i` (A) for a clamp, V:
/// diode `V_F`; diode + zener `V_Z + V_F`; diode + resistor `V_F + i·R`; zener across the switch
/// `V_C − V_supply`; no clamp `V_BR − V_supply`.
pub fn freewheel_voltage(clamp: &Clamp, i: f64, supply: f64, breakdown: f64) -> f64 {
    match *clamp {
        Clamp::Diode { forward } => forward.value() as f64,
        Clamp::DiodeZener { clamp_voltage, .. } => clamp_voltage.value() as f64,
        Clamp::DiodeResistor {
            forward,
            resistance,
        } => forward.value() as f64 + i * resistance.value() as f64,
        Clamp::AcrossSwitch { clamp_voltage } => {
            (clamp_voltage.value() as f64).min(breakdown) - supply
        }
        _ => breakdown - supply,
    }
}

/// The hold (economiser) phase at one operating point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HoldPoint {
    /// PWM duty that holds the current on average (may exceed 1: cannot hold).
    pub duty: f64,
    /// Peak-to-peak ripple of the coil current, A.
    pub ripple: f64,
    /// Average power into the clamp while holding, W.
    pub clamp_power: f64,
    /// Winding dissipation while holding, W.
    pub coil_power: f64,
}

/// Hold phase: PWM on the switch, the clamp carrying the current while the switch is off.
///
/// Average volt-second balance over one period with the current near `I` (ripple small):
/// `D·(V_drive − I·R_on) = (1 − D)·(I·R_off + V_fw(I))`, so
/// `D = (I·R_off + V_fw) / (V_drive − I·R_on + I·R_off + V_fw)`;
/// ripple `ΔI = (V_drive − I·R_on)·D / (f·L)` (linearised, valid while ΔI ≪ I and 1/f ≪ L/R);
/// clamp power `(1 − D)·I·V_fw`; winding power `I²·R_winding`. L is the operated inductance.
pub fn hold_point(
    r: &Resolved,
    clamp: &Clamp,
    breakdown: f64,
    current: f64,
    pwm: f64,
) -> HoldPoint {
    let v_drive = r.drive.value() as f64;
    let r_on = r.on_loop.value() as f64;
    let r_off = r.off_loop.value() as f64;
    let supply = r.supply.value() as f64;
    let v_fw = freewheel_voltage(clamp, current, supply, breakdown);
    let up = v_drive - current * r_on;
    let down = current * r_off + v_fw;
    let duty = if up <= 0.0 {
        f64::INFINITY
    } else {
        down / (up + down)
    };
    let l = r.inductance_operated as f64;
    let d = duty.min(1.0);
    HoldPoint {
        duty,
        ripple: if up <= 0.0 { 0.0 } else { up * d / (pwm * l) },
        clamp_power: (1.0 - d) * current * v_fw,
        coil_power: current * current * r.winding.value() as f64,
    }
}

/// Bipolar base drive figures.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BaseDriveFigures {
    /// Base current `I_B = (V_drive − V_BE) / R_B`, A.
    pub base_current: f64,
    /// Forced gain `I_C / I_B`.
    pub forced_gain: f64,
    /// Overdrive `h_FE,min · I_B / I_C` (≥ 1: saturated at minimum gain).
    pub overdrive: f64,
    /// Largest base resistor (E12, rounded down) that gives an overdrive of 2, Ω.
    pub recommended_resistor: f64,
}

/// Saturation check of a bipolar switch carrying `collector` amperes.
pub fn base_drive(
    drive_voltage: f64,
    base_emitter: f64,
    base_resistor: f64,
    min_gain: f64,
    collector: f64,
) -> BaseDriveFigures {
    let ib = (drive_voltage - base_emitter) / base_resistor;
    let forced = collector / ib;
    let overdrive = min_gain * ib / collector;
    let r_for_two = (drive_voltage - base_emitter) * min_gain / (2.0 * collector);
    BaseDriveFigures {
        base_current: ib,
        forced_gain: forced,
        overdrive,
        recommended_resistor: crate::analysis::e_series_down(r_for_two, &crate::analysis::E12),
    }
}

/// Conduction loss of the switch while on, W: MOSFET `I²·R_DS(on)`, bipolar `V_CE(sat)·I`.
pub fn conduction_loss(switch: &coilwise::Switch, current: f64) -> f64 {
    match *switch {
        coilwise::Switch::Mosfet { on_resistance, .. } => {
            current * current * on_resistance.value() as f64
        }
        coilwise::Switch::Bipolar { saturation, .. } => saturation.value() as f64 * current,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use coilwise::{Amps, Ohms, Volts};

    fn resolved() -> Resolved {
        Resolved {
            winding: Ohms::new(100.0),
            on_loop: Ohms::new(100.0),
            off_loop: Ohms::new(100.0),
            drive: Volts::new(24.0),
            supply: Volts::new(24.0),
            inductance_released: 0.5,
            inductance_operated: 0.5,
        }
    }

    #[test]
    fn hold_duty_is_the_volt_second_balance() {
        // Common practice, no source: with an ideal freewheel (no drop) the PWM duty that holds
        // current I is the ratio of the voltage that drives I through R to the supply: D = I·R/V.
        let clamp = Clamp::Diode {
            forward: Volts::new(1e-9),
        };
        let h = hold_point(&resolved(), &clamp, 60.0, 0.12, 20e3);
        assert!((h.duty - 0.12 * 100.0 / 24.0).abs() < 1e-6);
        // Ripple: ΔI = (V − I·R)·D/(f·L) = 12·0.5/(2e4·0.5).
        assert!((h.ripple - 12.0 * 0.5 / (2e4 * 0.5)).abs() < 1e-9);
        assert!((h.coil_power - 0.12 * 0.12 * 100.0).abs() < 1e-12);
        let _ = Amps::new(0.0);
    }

    #[test]
    fn base_drive_overdrive() {
        // 3.3 V GPIO, 1 kΩ, VBE 0.7 V: IB = 2.6 mA; hFE 100, IC 50 mA → overdrive 5.2.
        let d = base_drive(3.3, 0.7, 1000.0, 100.0, 0.05);
        assert!((d.base_current - 2.6e-3).abs() < 1e-12);
        assert!((d.overdrive - 5.2).abs() < 1e-9);
        assert!((d.forced_gain - 0.05 / 2.6e-3).abs() < 1e-9);
        // R for overdrive 2 is 2.6 kΩ; E12 rounded down is 2.2 kΩ.
        assert!((d.recommended_resistor - 2200.0).abs() < 1e-6);
    }
}
