//! Drive check of the switching transistor: is it really hard on, and what does it dissipate?
//!
//! - **Bipolar.** Base current `I_B = (V_drive − V_BE)/R_B`; forced gain `β_f = I_C/I_B`. The
//!   transistor is taken as saturated when its *minimum* gain exceeds the forced gain by an
//!   overdrive factor k: `h_FE(min)·I_B ≥ k·I_C`. Designers commonly use k = 2…3 for hard
//!   saturation over temperature and part spread (common practice, no source). Recommended base
//!   resistor: `R_B = (V_drive − V_BE)/(k·I_C/h_FE(min))`.
//! - **MOSFET.** Conduction loss `P = I²·R_DS(on)·D`; the gate is taken as sufficient when the
//!   gate-source voltage reaches the V_GS at which the datasheet rates R_DS(on).
//!
//! Check at the highest collector/drain current the design sees (the release corner's final
//! current) and with R_DS(on) at the hot junction. Datasheet values govern; these are estimates.

use super::circuit::{Circuit, OperatingPoint, Switch};
use crate::error::{finite, non_negative, positive, result, Error, Limit, Param, Why};
use crate::units::{Amps, Ohms, Volts, Watts};

/// Overdrive factor the trade commonly designs a saturated bipolar switch with: 2× the base
/// current the minimum gain needs (common practice, no source; 3× for very hard saturation).
pub const COMMON_OVERDRIVE: f32 = 2.0;

/// The base drive of a bipolar switch.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BaseDrive {
    /// Voltage driving the base resistor (the MCU pin's high level), V.
    pub drive: Volts,
    /// Base-emitter voltage in saturation, V (≈ 0.7…0.9 V for small-signal silicon).
    pub base_emitter: Volts,
    /// Base resistor, Ω (> 0).
    pub base_resistor: Ohms,
    /// Minimum DC current gain h_FE(min) at the collector current and temperature (> 0).
    pub min_gain: f32,
}

/// Result of [`check_bipolar`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BipolarCheck {
    /// `I_B = (V_drive − V_BE)/R_B`, A.
    pub base_current: Amps,
    /// Forced gain `β_f = I_C/I_B`.
    pub forced_gain: f32,
    /// Overdrive achieved: `h_FE(min)·I_B/I_C` (= h_FE(min)/β_f).
    pub overdrive: f32,
    /// Whether the achieved overdrive reaches the required one.
    pub saturated: bool,
    /// `overdrive / required − 1` (negative: not enough base current).
    pub margin: f32,
    /// Base resistor that gives exactly the required overdrive, Ω.
    pub recommended_base_resistor: Ohms,
}

/// The gate drive of a MOSFET switch.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct GateDrive {
    /// Gate-source voltage applied, V.
    pub gate_voltage: Volts,
    /// V_GS at which the datasheet specifies R_DS(on), V (> 0).
    pub rated_gate_voltage: Volts,
    /// R_DS(on) at that V_GS and the operating junction temperature, Ω (≥ 0).
    pub on_resistance: Ohms,
}

/// Result of [`check_mosfet`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct MosfetCheck {
    /// `P = I²·R_DS(on)·D`, W.
    pub conduction_loss: Watts,
    /// `V_GS − V_GS(rated)`, V (negative: R_DS(on) is not guaranteed).
    pub gate_margin: Volts,
    /// Whether V_GS reaches the rated V_GS.
    pub enhanced: bool,
}

/// Base current through the base resistor: `I_B = (V_drive − V_BE)/R_B`, A.
///
/// Domain: finite voltages, V_BE ≥ 0, R_B > 0.
///
/// # Errors
/// [`Limit::NoDrive`] when V_drive ≤ V_BE (no base current).
pub fn base_current(drive: Volts, base_emitter: Volts, base_resistor: Ohms) -> Result<Amps, Error> {
    let v = finite(drive.value(), Param::Voltage)?;
    let vbe = non_negative(base_emitter.value(), Param::Voltage)?;
    let rb = positive(base_resistor.value(), Param::Resistance)?;
    if v <= vbe {
        return Err(Error::OutsideModel(Limit::NoDrive));
    }
    result((v - vbe) / rb).map(Amps::new)
}

/// Base resistor for a required overdrive k: `R_B = (V_drive − V_BE)·h_FE(min)/(k·I_C)`, Ω.
///
/// Domain: I_C > 0, h_FE(min) > 0, k ≥ 1, V_drive > V_BE ≥ 0.
pub fn recommended_base_resistor(
    collector: Amps,
    drive: Volts,
    base_emitter: Volts,
    min_gain: f32,
    overdrive: f32,
) -> Result<Ohms, Error> {
    let ic = positive(collector.value(), Param::Current)?;
    let v = finite(drive.value(), Param::Voltage)?;
    let vbe = non_negative(base_emitter.value(), Param::Voltage)?;
    let h = positive(min_gain, Param::Gain)?;
    let k = overdrive_factor(overdrive)?;
    if v <= vbe {
        return Err(Error::OutsideModel(Limit::NoDrive));
    }
    result((v - vbe) * h / (k * ic)).map(Ohms::new)
}

/// Saturation check of a bipolar switch at collector current `collector` with the required
/// overdrive `overdrive` (k ≥ 1; [`COMMON_OVERDRIVE`] is the usual choice).
///
/// `β_f = I_C/I_B`; saturated when `h_FE(min)/β_f ≥ k`. Accuracy: as good as h_FE(min) and V_BE
/// from the datasheet at the actual current and temperature; V_BE(sat) rises with I_C.
pub fn check_bipolar(
    collector: Amps,
    drive: &BaseDrive,
    overdrive: f32,
) -> Result<BipolarCheck, Error> {
    let ic = positive(collector.value(), Param::Current)?;
    let h = positive(drive.min_gain, Param::Gain)?;
    let k = overdrive_factor(overdrive)?;
    let ib = base_current(drive.drive, drive.base_emitter, drive.base_resistor)?.value();
    let forced = result(ic / ib)?;
    let achieved = result(h * ib / ic)?;
    Ok(BipolarCheck {
        base_current: Amps::new(ib),
        forced_gain: forced,
        overdrive: achieved,
        saturated: achieved >= k,
        margin: achieved / k - 1.0,
        recommended_base_resistor: recommended_base_resistor(
            collector,
            drive.drive,
            drive.base_emitter,
            h,
            k,
        )?,
    })
}

/// MOSFET conduction loss at a duty: `P = I²·R_DS(on)·D`, W (the on-state current taken as flat;
/// exact for a settled coil current, an overestimate during the rise).
///
/// Domain: I finite, R ≥ 0, 0 ≤ D ≤ 1.
pub fn conduction_loss(current: Amps, on_resistance: Ohms, duty: f32) -> Result<Watts, Error> {
    let i = finite(current.value(), Param::Current)?;
    let r = non_negative(on_resistance.value(), Param::OnResistance)?;
    let d = duty_fraction(duty)?;
    result(i * i * r * d).map(Watts::new)
}

/// Bipolar saturation loss at a duty: `P = V_CE(sat)·I_C·D`, W (base drive loss not included).
pub fn saturation_loss(current: Amps, saturation: Volts, duty: f32) -> Result<Watts, Error> {
    let i = non_negative(current.value(), Param::Current)?;
    let v = non_negative(saturation.value(), Param::SaturationVoltage)?;
    let d = duty_fraction(duty)?;
    result(v * i * d).map(Watts::new)
}

/// Gate check and conduction loss of a MOSFET switch at drain current `current` and duty `duty`.
///
/// `P = I²·R_DS(on)·D`; the gate is "enhanced" when `V_GS ≥ V_GS(rated)`. Below the rated V_GS
/// the datasheet's R_DS(on) does not hold and the loss here is an underestimate.
pub fn check_mosfet(current: Amps, duty: f32, gate: &GateDrive) -> Result<MosfetCheck, Error> {
    let vgs = finite(gate.gate_voltage.value(), Param::Voltage)?;
    let rated = positive(gate.rated_gate_voltage.value(), Param::Voltage)?;
    Ok(MosfetCheck {
        conduction_loss: conduction_loss(current, gate.on_resistance, duty)?,
        gate_margin: Volts::new(result(vgs - rated)?),
        enhanced: vgs >= rated,
    })
}

impl Circuit {
    /// Conduction loss of this circuit's switch at an operating point and duty, from the final
    /// current `I∞`: bipolar `V_CE(sat)·I∞·D`, MOSFET `I∞²·R_DS(on)·D`, W.
    pub fn switch_loss(&self, op: &OperatingPoint, duty: f32) -> Result<Watts, Error> {
        let i = self.final_current(op)?;
        match *self.switch() {
            Switch::Bipolar { saturation, .. } => saturation_loss(i, saturation, duty),
            Switch::Mosfet { on_resistance, .. } => conduction_loss(i, on_resistance, duty),
        }
    }
}

pub(crate) fn duty_fraction(d: f32) -> Result<f32, Error> {
    let d = finite(d, Param::Duty)?;
    if !(0.0..=1.0).contains(&d) {
        return Err(Error::invalid(Param::Duty, Why::OutOfRange));
    }
    Ok(d)
}

fn overdrive_factor(k: f32) -> Result<f32, Error> {
    let k = finite(k, Param::Gain)?;
    if k < 1.0 {
        return Err(Error::invalid(Param::Gain, Why::OutOfRange));
    }
    Ok(k)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bipolar_from_a_3v3_pin() {
        // Hand calculation (textbook method, from memory): 3.3 V pin, V_BE = 0.75 V, 1 kΩ →
        // I_B = 2.55 mA; 133 mA coil → β_f = 52; with h_FE(min) = 100 the overdrive is 1.92 < 2.
        let d = BaseDrive {
            drive: Volts::new(3.3),
            base_emitter: Volts::new(0.75),
            base_resistor: Ohms::new(1000.0),
            min_gain: 100.0,
        };
        let c = check_bipolar(Amps::new(0.133), &d, COMMON_OVERDRIVE).unwrap();
        assert!((c.base_current.value() - 2.55e-3).abs() < 1e-8);
        assert!((c.forced_gain - 0.133 / 2.55e-3).abs() < 1e-3);
        assert!((c.overdrive - 100.0 * 2.55e-3 / 0.133).abs() < 1e-4);
        assert!(!c.saturated && c.margin < 0.0);
        // (3.3 − 0.75)·100/(2·0.133) = 958.6 Ω; with it the check passes exactly at k = 2.
        let rb = c.recommended_base_resistor.value();
        assert!((rb - 958.646).abs() < 0.01);
        let again = check_bipolar(
            Amps::new(0.133),
            &BaseDrive {
                base_resistor: Ohms::new(rb * 0.999),
                ..d
            },
            COMMON_OVERDRIVE,
        )
        .unwrap();
        assert!(again.saturated && again.margin >= 0.0);
    }

    #[test]
    fn no_drive_and_bad_inputs_are_errors() {
        assert_eq!(
            base_current(Volts::new(0.6), Volts::new(0.7), Ohms::new(1e3)),
            Err(Error::OutsideModel(Limit::NoDrive))
        );
        assert!(base_current(Volts::new(3.3), Volts::new(0.7), Ohms::new(0.0)).is_err());
        assert!(recommended_base_resistor(
            Amps::new(0.1),
            Volts::new(5.0),
            Volts::new(0.7),
            50.0,
            0.5
        )
        .is_err());
        assert!(conduction_loss(Amps::new(1.0), Ohms::new(0.1), 1.5).is_err());
        assert!(conduction_loss(Amps::new(f32::NAN), Ohms::new(0.1), 0.5).is_err());
    }

    #[test]
    fn mosfet_loss_and_gate() {
        // Textbook, from memory: Joule heating, P = I²·R·D: 2 A, 50 mΩ, 25 % → 50 mW; a
        // saturated bipolar switch loses I·V_CE(sat)·D.
        let g = GateDrive {
            gate_voltage: Volts::new(3.3),
            rated_gate_voltage: Volts::new(4.5),
            on_resistance: Ohms::new(0.05),
        };
        let m = check_mosfet(Amps::new(2.0), 0.25, &g).unwrap();
        assert!((m.conduction_loss.value() - 0.05).abs() < 1e-7);
        assert!(!m.enhanced);
        assert!((m.gate_margin.value() + 1.2).abs() < 1e-6);
        let s = saturation_loss(Amps::new(0.5), Volts::new(0.2), 0.5).unwrap();
        assert!((s.value() - 0.05).abs() < 1e-7);
    }

    #[test]
    fn circuit_switch_loss_uses_the_final_current() {
        let c = crate::physics::circuit::tests::valve(
            crate::physics::clamp::Clamp::diode(Volts::new(0.8)).unwrap(),
        );
        let op = OperatingPoint::new(Volts::new(24.0), crate::units::Celsius::new(20.0));
        let i = c.final_current(&op).unwrap().value();
        let p = c.switch_loss(&op, 0.5).unwrap().value();
        // Textbook, from memory: Joule heating in R_DS(on), P = I²·R·D.
        assert!((p - i * i * 0.1 * 0.5).abs() < 1e-9);
    }
}
