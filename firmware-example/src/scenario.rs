//! The demo scenario: a greenhouse controller (invented). Every value here is invented for the
//! demo and stands for no real part; a real design takes its values from the datasheets.

use coilwise::{
    Celsius, Circuit, Clamp, Coil, DriverDesign, Error, Henries, Ohms, SupplyRange,
    TemperatureRange, TickRate, Tolerances, Topology, Volts,
};
use coilwise::{Seconds, Switch};

/// Irrigation valve drive (invented): a 24 V DC solenoid valve coil, 72 Ω at 20 °C (≈ 8 W),
/// 0.30 H with the plunger out / 0.45 H in, must-operate 16.8 V (70 %), must-release 2.4 V; low-side
/// MOSFET (0.05 Ω, 60 V), 0.1 Ω sense resistor, 0.5 Ω of cable; diode + 24 V zener clamp.
/// Supply 24 V ± 10 %, winding −20…+60 °C, parts ± 5 % (R), ± 10 % (L), ± 1 % (sense);
/// 5 ms operate and 10 ms release allowance; timer at `tick_hz`.
pub fn valve_design(tick_hz: u32) -> Result<DriverDesign, Error> {
    let coil = Coil::new(
        Ohms::new(72.0),
        Celsius::new(20.0),
        Henries::new(0.30),
        Henries::new(0.45),
        Volts::new(16.8),
        Volts::new(2.4),
    )?;
    let circuit = Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(0.05),
            breakdown: Volts::new(60.0),
        },
        Topology::LowSide,
        Ohms::new(0.1),
        Ohms::new(0.5),
        Clamp::diode_zener(Volts::new(0.7), Volts::new(24.7))?,
    )?;
    let mut design = DriverDesign::new(
        circuit,
        SupplyRange::with_tolerance(Volts::new(24.0), 0.10)?,
        TemperatureRange::new(Celsius::new(-20.0), Celsius::new(60.0))?,
        TickRate::new(tick_hz)?,
    );
    design.tolerances = Tolerances {
        resistance: 0.05,
        inductance: 0.10,
        sense: 0.01,
    };
    design.operate_allowance = Seconds::from_millis(5.0);
    design.release_allowance = Seconds::from_millis(10.0);
    Ok(design)
}
