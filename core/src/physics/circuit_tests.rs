use super::*;
use crate::units::Henries;

/// Invented demo circuit: a 24 V greenhouse valve, 180 Ω, low-side MOSFET, 0.5 Ω sense.
pub(crate) fn valve(clamp: Clamp) -> Circuit {
    try_valve(clamp).unwrap()
}

/// [`valve`] without the unwrap: the circuit's own validation result.
pub(crate) fn try_valve(clamp: Clamp) -> Result<Circuit, Error> {
    let coil = Coil::new(
        Ohms::new(180.0),
        Celsius::new(20.0),
        Henries::new(0.30),
        Henries::new(0.45),
        Volts::new(16.8),
        Volts::new(2.4),
    )
    .unwrap();
    Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(0.1),
            breakdown: Volts::new(60.0),
        },
        Topology::LowSide,
        Ohms::new(0.5),
        Ohms::new(0.4),
        clamp,
    )
}

#[test]
fn final_current_is_ohms_law() {
    let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
    let op = OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0));
    let i = c.final_current(&op).unwrap().value();
    // Textbook, from memory: Ohm's law, I = V/R over the whole on-loop (180 + 1 Ω).
    assert!((i - 24.0 / 181.0).abs() < 1e-6);
}

#[test]
fn hot_coil_at_low_supply_pulls_in_later() {
    let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
    let cold = OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0));
    let hot = OperatingPoint::new(Volts::new(21.6), Celsius::new(70.0));
    let t_cold = c.pull_in_time(&cold).unwrap().value();
    let t_hot = c.pull_in_time(&hot).unwrap().value();
    // Common practice, no source: a hot coil on a low supply is the slow pull-in corner.
    assert!(t_hot > t_cold);
    assert!(c.pull_in_margin(&hot).unwrap() < c.pull_in_margin(&cold).unwrap());
}

#[test]
fn a_coil_that_cannot_pull_in_is_an_error_not_nan() {
    let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
    let op = OperatingPoint::new(Volts::new(12.0), Celsius::new(85.0));
    assert!(matches!(
        c.pull_in_time(&op),
        Err(Error::Unreachable { .. })
    ));
    assert!(c.pull_in_margin(&op).unwrap() < 0.0);
}

#[test]
fn no_headroom_is_reported() {
    let mut c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
    c.switch = Switch::Bipolar {
        saturation: Volts::new(1.0),
        breakdown: Volts::new(60.0),
    };
    let op = OperatingPoint::new(Volts::new(0.9), Celsius::new(20.0));
    assert_eq!(
        c.final_current(&op),
        Err(Error::OutsideModel(Limit::NoHeadroom))
    );
}

#[test]
fn supply_range_validates() {
    assert!(SupplyRange::new(Volts::new(20.0), Volts::new(24.0), Volts::new(28.0)).is_ok());
    assert_eq!(
        SupplyRange::new(Volts::new(28.0), Volts::new(24.0), Volts::new(20.0)),
        Err(Error::invalid(Param::Supply, Why::Inverted))
    );
    assert!(SupplyRange::with_tolerance(Volts::new(24.0), 1.5).is_err());
    assert!(TemperatureRange::new(Celsius::new(85.0), Celsius::new(-40.0)).is_err());
}

/// Issue 11 item 12: a must-operate voltage near the smallest positive f32 made the pull-in
/// current 0 and the margin ∞; a supply near f32::MAX against a small loop resistance made
/// I∞ = ∞. Both are errors now (refused coil, or overflow), never a non-finite `Ok`.
#[test]
fn extreme_inputs_give_errors_not_infinities() {
    let tiny = Coil::new(
        Ohms::new(180.0),
        Celsius::new(20.0),
        Henries::new(0.3),
        Henries::new(0.45),
        Volts::new(1.0e-44),
        Volts::new(1.0e-45),
    );
    match tiny {
        Err(e) => assert_eq!(
            e,
            Error::invalid(Param::MustReleaseVoltage, Why::OutOfRange)
        ),
        Ok(coil) => {
            let c = Circuit::new(
                coil,
                Switch::Mosfet {
                    on_resistance: Ohms::new(0.1),
                    breakdown: Volts::new(60.0),
                },
                Topology::LowSide,
                Ohms::new(0.5),
                Ohms::new(0.4),
                Clamp::diode(Volts::new(0.8)).unwrap(),
            )
            .unwrap();
            let op = OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0));
            let m = c.pull_in_margin(&op);
            assert!(m.map_or(true, f32::is_finite), "{m:?}");
        }
    }
    let mut c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
    let full = c;
    c.sense = 0.0;
    c.wiring = 0.0;
    c.switch = Switch::Bipolar {
        saturation: Volts::new(0.0),
        breakdown: Volts::new(f32::MAX),
    };
    // A supply near f32::MAX on a 1.8 mΩ loop: I∞ = V/R overflows.
    c.coil = Coil::new(
        Ohms::new(0.18),
        Celsius::new(20.0),
        Henries::new(0.3),
        Henries::new(0.45),
        Volts::new(0.0168),
        Volts::new(0.0024),
    )
    .unwrap();
    let huge = OperatingPoint {
        resistance_factor: 0.01,
        ..OperatingPoint::new(Volts::new(f32::MAX), Celsius::new(20.0))
    };
    assert_eq!(
        c.final_current(&huge),
        Err(Error::OutsideModel(Limit::Overflow))
    );
    assert_eq!(
        c.pull_in_margin(&huge),
        Err(Error::OutsideModel(Limit::Overflow))
    );
    let near_max = OperatingPoint::new(Volts::new(f32::MAX), Celsius::new(20.0));
    let i = full.final_current(&near_max);
    assert!(i.map_or(true, |i| i.value().is_finite()), "{i:?}");
    // Part factors beyond two decades of nominal (a winding factor of 1e-45 underflowed to
    // 0 Ω before) are refused.
    for k in [1.0e-45f32, 1.0e-30, 0.009, 101.0, 1.0e16] {
        let op = OperatingPoint {
            resistance_factor: k,
            ..OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0))
        };
        assert_eq!(
            c.resolve(&op),
            Err(Error::invalid(Param::Tolerance, Why::OutOfRange)),
            "{k}"
        );
    }
}
