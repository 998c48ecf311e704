//! The invented installation this port drives: a small orchard irrigation station with one
//! 24 V DC irrigation valve (channel 0) and a 12 V DC relay that starts a fertiliser dosing pump
//! (channel 1), both on low-side MOSFETs with a shunt into a sense amplifier.
//!
//! Every value here is invented for the example and stands for no real part: take a real
//! design's values from the component datasheets. A coil stores energy and its switch sees the
//! clamp voltage on top of the supply: check any real design against the datasheets, local
//! electrical codes and licensed practice.

use coilwise::{
    Celsius, Circuit, Clamp, Coil, DriverDesign, Error, Henries, Ohms, Seconds, SupplyRange,
    Switch, TemperatureRange, TickRate, Tolerances, Topology, Volts,
};

use crate::clock::TICK_HZ;
use crate::seam::SenseScale;

/// ADC reference (ADC_AVDD on the 3.3 V rail), V.
pub const ADC_REF_VOLTS: f32 = 3.3;

/// Current per converter count of a shunt `r_s` (Ω) into an amplifier of gain `gain` on the
/// 12-bit ADC: `V_ref / (4096 · G · R_s)`, A per count.
pub fn amps_per_count(r_s: f32, gain: f32) -> f32 {
    ADC_REF_VOLTS / (4096.0 * gain * r_s)
}

/// Valve sense (invented): 0.1 Ω shunt, gain 30 → 0.269 mA per count, 1.10 A full scale (the
/// coldest valve at the highest supply draws ≈ 0.48 A).
pub const VALVE_SHUNT: f32 = 0.1;
/// Valve sense amplifier gain.
pub const VALVE_GAIN: f32 = 30.0;
/// Relay sense (invented): 0.47 Ω shunt, gain 20 → 85.7 µA per count, 0.351 A full scale (the
/// relay draws at most ≈ 0.1 A).
pub const RELAY_SHUNT: f32 = 0.47;
/// Relay sense amplifier gain.
pub const RELAY_GAIN: f32 = 20.0;

/// The converter scale of channel `ch` as built (the amplifier offset is measured at
/// commissioning, so the nominal offset here is 0).
pub fn scale(ch: usize) -> SenseScale {
    let apc = match ch {
        0 => amps_per_count(VALVE_SHUNT, VALVE_GAIN),
        _ => amps_per_count(RELAY_SHUNT, RELAY_GAIN),
    };
    SenseScale {
        amps_per_count: apc,
        offset_counts: 0,
        full_scale_counts: 4095,
    }
}

/// Channel 0, the irrigation valve (invented): 24 V ± 10 % DC coil, 68 Ω at 20 °C (≈ 8.5 W),
/// 0.28 H with the plunger out / 0.42 H in, must-operate 17.0 V, must-release 2.6 V; 100 V
/// MOSFET (0.03 Ω), 0.1 Ω shunt, 0.8 Ω of field cable; diode + 36 V zener clamp, so the switch
/// sees at most 26.4 + 36.7 = 63.1 V. Winding −10…+55 °C (outdoor valve box).
pub fn valve() -> Result<DriverDesign, Error> {
    let coil = Coil::new(
        Ohms::new(68.0),
        Celsius::new(20.0),
        Henries::new(0.28),
        Henries::new(0.42),
        Volts::new(17.0),
        Volts::new(2.6),
    )?;
    let circuit = Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(0.03),
            breakdown: Volts::new(100.0),
        },
        Topology::LowSide,
        Ohms::new(VALVE_SHUNT),
        Ohms::new(0.8),
        Clamp::diode_zener(Volts::new(0.7), Volts::new(36.0))?,
    )?;
    let mut d = DriverDesign::new(
        circuit,
        SupplyRange::with_tolerance(Volts::new(24.0), 0.10)?,
        TemperatureRange::new(Celsius::new(-10.0), Celsius::new(55.0))?,
        TickRate::new(TICK_HZ)?,
    );
    d.tolerances = Tolerances {
        resistance: 0.05,
        inductance: 0.10,
        sense: 0.01,
    };
    d.operate_allowance = Seconds::from_millis(10.0);
    d.release_allowance = Seconds::from_millis(12.0);
    Ok(d)
}

/// Channel 1, the dosing-pump relay (invented): 12 V ± 10 % DC coil, 160 Ω at 20 °C (≈ 0.9 W),
/// 0.09 H / 0.14 H, must-operate 8.4 V, must-release 1.2 V; 60 V MOSFET (0.08 Ω), 0.47 Ω
/// shunt, 0.2 Ω of wiring; plain freewheel diode (0.8 V). Winding −10…+60 °C.
pub fn relay() -> Result<DriverDesign, Error> {
    let coil = Coil::new(
        Ohms::new(160.0),
        Celsius::new(20.0),
        Henries::new(0.09),
        Henries::new(0.14),
        Volts::new(8.4),
        Volts::new(1.2),
    )?;
    let circuit = Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(0.08),
            breakdown: Volts::new(60.0),
        },
        Topology::LowSide,
        Ohms::new(RELAY_SHUNT),
        Ohms::new(0.2),
        Clamp::diode(Volts::new(0.8))?,
    )?;
    let mut d = DriverDesign::new(
        circuit,
        SupplyRange::with_tolerance(Volts::new(12.0), 0.10)?,
        TemperatureRange::new(Celsius::new(-10.0), Celsius::new(60.0))?,
        TickRate::new(TICK_HZ)?,
    );
    d.tolerances = Tolerances {
        resistance: 0.08,
        inductance: 0.15,
        sense: 0.01,
    };
    d.operate_allowance = Seconds::from_millis(6.0);
    d.release_allowance = Seconds::from_millis(8.0);
    Ok(d)
}
