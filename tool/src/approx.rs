//! Two small approximations the tool adds on top of the core's closed forms: the voltage across
//! the switch along a release (for the waveform plot) and the clamp's average power while a hold
//! PWM freewheels through it. Everything else the tool reports comes from the core.

use coilwise::Clamp;

/// Voltage across the coil opposing the freewheel current `i` (A) for a first-order clamp, V:
/// diode `V_F`; diode + zener `V_Z + V_F`; diode + resistor `V_F + i·R`; zener across the switch
/// `V_C − V_supply`; no clamp `V_BR − V_supply`. The RC snubber is not first-order: its voltage
/// comes from the core's `SnubberRelease::reverse_voltage_at`, and this returns `None`.
pub fn freewheel_voltage(clamp: &Clamp, i: f64, supply: f64, breakdown: f64) -> Option<f64> {
    Some(match *clamp {
        Clamp::Diode { forward } => forward.value() as f64,
        Clamp::DiodeZener { clamp_voltage, .. } => clamp_voltage.value() as f64,
        Clamp::DiodeResistor {
            forward,
            resistance,
        } => forward.value() as f64 + i * resistance.value() as f64,
        Clamp::AcrossSwitch { clamp_voltage } => {
            (clamp_voltage.value() as f64).min(breakdown) - supply
        }
        Clamp::Unclamped => breakdown - supply,
        _ => return None,
    })
}

/// Average power into the clamp while a hold PWM of duty `duty` freewheels the coil current
/// through it: `P ≈ (1 − D)·Ī·V_fw(Ī)`, W, with Ī the average hold current. The ripple is taken as
/// small (its second-order effect, `R_clamp·ΔI²/12`, is left out); `None` for the RC snubber.
///
/// For a zener clamp this is the price of fast release: the zener voltage is across the coil in
/// every PWM off-interval, not only at the final switch-off.
pub fn hold_clamp_power(
    clamp: &Clamp,
    duty: f64,
    average_current: f64,
    supply: f64,
    breakdown: f64,
) -> Option<f64> {
    let v = freewheel_voltage(clamp, average_current, supply, breakdown)?;
    Some((1.0 - duty).max(0.0) * average_current * v)
}

#[cfg(test)]
mod tests {
    use super::*;
    use coilwise::{Ohms, Volts};

    #[test]
    fn freewheel_voltages() {
        // Common practice, no source: a freewheel diode holds the coil at one diode drop, a
        // diode + zener at the zener voltage plus the drop, a resistor adds I·R.
        let d = Clamp::Diode {
            forward: Volts::new(0.75),
        };
        assert!((freewheel_voltage(&d, 0.1, 24.0, 60.0).unwrap() - 0.75).abs() < 1e-6);
        let r = Clamp::DiodeResistor {
            forward: Volts::new(0.75),
            resistance: Ohms::new(100.0),
        };
        assert!((freewheel_voltage(&r, 0.1, 24.0, 60.0).unwrap() - 10.75).abs() < 1e-5);
        assert!(
            (freewheel_voltage(&Clamp::Unclamped, 0.1, 24.0, 60.0).unwrap() - 36.0).abs() < 1e-9
        );
        // Hold: off 40 % of the time at 60 mA through 18.8 V.
        let z = Clamp::DiodeZener {
            forward: Volts::new(0.8),
            clamp_voltage: Volts::new(18.8),
        };
        let p = hold_clamp_power(&z, 0.6, 0.06, 24.0, 60.0).unwrap();
        assert!((p - 0.4 * 0.06 * 18.8).abs() < 1e-6);
    }
}
