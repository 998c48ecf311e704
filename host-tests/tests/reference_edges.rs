//! Edge cases: tiny and huge time constants, thresholds at the final current, ±∞ and NaN. Every one
//! must give an error or a finite answer; none may panic or return NaN. (The rule is the core's own
//! contract; the expected "unreachable" cases follow from i∞ = V/R, textbook, from memory.)

use coilwise::physics::drive::{base_current, conduction_loss};
use coilwise::physics::rc_node::{inrush_peak, slew_rate, slew_time};
use coilwise::{
    Amps, Armature, Celsius, Circuit, Clamp, Coil, DriverDesign, Error, Farads, FirstOrder,
    Henries, Hertz, KelvinPerWatt, Ohms, OperatingPoint, RcNode, Seconds, SnubberRelease,
    SupplyRange, Switch, TemperatureRange, TickRate, Topology, Volts,
};

const ODD: [f32; 9] = [
    0.0,
    -0.0,
    -1.0,
    1e-30,
    1e30,
    f32::MIN_POSITIVE,
    f32::INFINITY,
    f32::NEG_INFINITY,
    f32::NAN,
];

fn finite_or_err<T>(r: Result<T, Error>, get: impl Fn(&T) -> Vec<f32>) {
    if let Ok(v) = r {
        for x in get(&v) {
            assert!(x.is_finite(), "{x} returned");
        }
    }
}

fn circuit(r: f32, l: f32, clamp: Clamp) -> Result<Circuit, Error> {
    let coil = Coil::new(
        Ohms::new(r),
        Celsius::new(20.0),
        Henries::new(l),
        Henries::new(l),
        Volts::new(1.0),
        Volts::new(0.1),
    )?;
    Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(0.0),
            breakdown: Volts::new(100.0),
        },
        Topology::LowSide,
        Ohms::new(0.0),
        Ohms::new(0.0),
        clamp,
    )
}

fn all_clamps() -> [Clamp; 6] {
    [
        Clamp::diode(Volts::new(0.7)).unwrap(),
        Clamp::diode_zener(Volts::new(0.7), Volts::new(30.0)).unwrap(),
        Clamp::diode_resistor(Volts::new(0.7), Ohms::new(100.0)).unwrap(),
        Clamp::AcrossSwitch {
            clamp_voltage: Volts::new(60.0),
        },
        Clamp::Unclamped,
        Clamp::rc_snubber(Ohms::new(100.0), Farads::new(1.0)).unwrap(),
    ]
}

#[test]
fn tiny_and_huge_time_constants_never_panic_or_nan() {
    let op = OperatingPoint::new(Volts::new(12.0), Celsius::new(20.0));
    for (r, l) in [
        (1e5f32, 1e-9f32),
        (1e-3, 1e4),
        (1e-6, 1e-9),
        (1e6, 1e6),
        (1.0, 1.0),
    ] {
        for clamp in all_clamps() {
            let Ok(c) = circuit(r, l, clamp) else {
                continue;
            };
            finite_or_err(c.pull_in_time(&op), |t| vec![t.value()]);
            let i0 = c.final_current(&op).unwrap();
            let rel = c.release(&op, i0);
            if let Ok(rel) = rel {
                finite_or_err(rel.time_to_zero(), |t| vec![t.value()]);
                finite_or_err(rel.time_to_current(Amps::new(i0.value() * 0.5)), |t| {
                    vec![t.value()]
                });
                finite_or_err(rel.energy(), |e| {
                    vec![e.clamp.value(), e.winding.value(), e.stored.value()]
                });
                assert!(!rel.peak_switch_voltage().value().is_nan());
                for t in [0.0, 1e-12, 1.0, 1e9, f32::INFINITY] {
                    finite_or_err(rel.current_at(Seconds::new(t)), |i| vec![i.value()]);
                }
            }
            finite_or_err(
                c.hold(&op, Amps::new(i0.value() * 0.5), Hertz::new(1e3)),
                |h| vec![h.duty, h.ripple.value(), h.average.value()],
            );
        }
    }
}

#[test]
fn thresholds_at_the_final_current_are_unreachable() {
    let c = circuit(100.0, 0.1, all_clamps()[0]).unwrap();
    let op = OperatingPoint::new(Volts::new(12.0), Celsius::new(20.0));
    let i_inf = c.final_current(&op).unwrap().value();
    let rise = c.energize(&op, Armature::Released, Amps::new(0.0)).unwrap();
    for target in [i_inf, i_inf * 1.01, f32::MAX] {
        assert!(matches!(
            rise.time_to(target),
            Err(Error::Unreachable { .. })
        ));
    }
    assert!(matches!(
        c.hold(&op, Amps::new(i_inf), Hertz::new(1e3)),
        Err(Error::Unreachable { .. })
    ));
    // A coil whose pull-in current is above I∞ (must-operate 1 V, supply 0.9 V).
    let low = OperatingPoint::new(Volts::new(0.9), Celsius::new(20.0));
    assert!(matches!(
        c.pull_in_time(&low),
        Err(Error::Unreachable { .. })
    ));
}

#[test]
fn infinities_and_nan_are_errors_everywhere() {
    for x in ODD {
        let v = Volts::new(x);
        let r = Ohms::new(x);
        if !x.is_finite() {
            assert!(Clamp::diode(v).is_err());
            assert!(Clamp::diode_zener(Volts::new(0.7), v).is_err());
            assert!(Clamp::diode_resistor(Volts::new(0.7), r).is_err());
            assert!(Clamp::rc_snubber(r, Farads::new(1e-6)).is_err());
            assert!(Clamp::rc_snubber(Ohms::new(1.0), Farads::new(x)).is_err());
            assert!(SupplyRange::new(v, Volts::new(24.0), Volts::new(28.0)).is_err());
            assert!(FirstOrder::new(0.0, 1.0, Seconds::new(x)).is_err());
            assert!(FirstOrder::new(x, 1.0, Seconds::new(1.0)).is_err());
            assert!(RcNode::new(r, Farads::new(1e-6)).is_err());
            assert!(base_current(v, Volts::new(0.7), Ohms::new(1e3)).is_err());
            assert!(conduction_loss(Amps::new(x), Ohms::new(1.0), 0.5).is_err());
            assert!(inrush_peak(v, Ohms::new(1.0)).is_err());
            assert!(slew_rate(Amps::new(x), Farads::new(1e-9)).is_err());
            assert!(slew_time(Amps::new(1.0), Farads::new(1e-9), v).is_err());
            assert!(SnubberRelease::new(
                Henries::new(x),
                Ohms::new(10.0),
                Ohms::new(100.0),
                Farads::new(1e-3),
                Amps::new(1.0),
                Volts::new(1.0)
            )
            .is_err());
            assert!(TemperatureRange::new(Celsius::new(x), Celsius::new(20.0)).is_err());
        }
        if x.is_nan() || x < 0.0 || x == f32::NEG_INFINITY {
            let rate = TickRate::new(1000).unwrap();
            assert!(rate.ticks_at_least(Seconds::new(x)).is_err());
        }
        // Every input of a circuit computation: finite answers or errors.
        let c = circuit(100.0, 0.1, all_clamps()[1]).unwrap();
        let op = OperatingPoint::new(v, Celsius::new(20.0));
        finite_or_err(c.final_current(&op), |i| vec![i.value()]);
        finite_or_err(c.pull_in_time(&op), |t| vec![t.value()]);
        let op_t = OperatingPoint::new(Volts::new(12.0), Celsius::new(x));
        finite_or_err(c.final_current(&op_t), |i| vec![i.value()]);
        finite_or_err(
            c.release(
                &OperatingPoint::new(Volts::new(12.0), Celsius::new(20.0)),
                Amps::new(x),
            ),
            |r| vec![r.peak_switch_voltage().value()],
        );
        finite_or_err(
            c.hold(
                &OperatingPoint::new(Volts::new(12.0), Celsius::new(20.0)),
                Amps::new(x),
                Hertz::new(1e3),
            ),
            |h| vec![h.duty],
        );
        finite_or_err(
            c.self_heating(
                &OperatingPoint::new(Volts::new(12.0), Celsius::new(20.0)),
                Celsius::new(25.0),
                KelvinPerWatt::new(x),
                0.5,
            ),
            |s| vec![s.temperature.value()],
        );
        finite_or_err(c.coil().temperature_from_resistance(r), |t| vec![t.value()]);
    }
}

#[test]
fn a_whole_budget_with_odd_inputs_is_finite_or_an_error() {
    for x in ODD {
        for clamp in all_clamps() {
            let Ok(c) = circuit(100.0, 0.1, clamp) else {
                continue;
            };
            let Ok(supply) = SupplyRange::new(Volts::new(10.0), Volts::new(12.0), Volts::new(14.0))
            else {
                continue;
            };
            let mut d = DriverDesign::new(
                c,
                supply,
                TemperatureRange::new(Celsius::new(-40.0), Celsius::new(85.0)).unwrap(),
                TickRate::new(1_000_000).unwrap(),
            );
            d.tolerances.resistance = x;
            d.operate_allowance = Seconds::new(x);
            d.residual_current = Amps::new(x.abs() * 1e-3);
            finite_or_err(d.budget(), |b| {
                vec![
                    b.min_on_time.value(),
                    b.min_off_time.value(),
                    b.release_corner.energy.clamp.value(),
                    b.release_corner.peak_switch_voltage.value(),
                ]
            });
        }
    }
}

#[test]
fn extreme_but_finite_levels_give_finite_answers_or_errors() {
    // Levels and time constants at the ends of f32: every answer finite or an error (the core's
    // own contract; the step-response form is textbook, from memory).
    let big = f32::MAX / 2.0;
    for (a, b) in [
        (-big, big),
        (big, -big),
        (f32::MAX, -f32::MAX),
        (0.0, f32::MAX),
    ] {
        for tau in [f32::MIN_POSITIVE, 1e-30, 1.0, 1e30, f32::MAX] {
            let Ok(f) = FirstOrder::new(a, b, Seconds::new(tau)) else {
                continue;
            };
            for t in [
                0.0,
                f32::MIN_POSITIVE,
                1e-20,
                1.0,
                1e20,
                f32::MAX,
                f32::INFINITY,
            ] {
                finite_or_err(f.value_at(Seconds::new(t)), |v| vec![*v]);
                finite_or_err(f.integral_to(Seconds::new(t)), |v| vec![*v]);
            }
            for target in [0.0, a * 0.5, b * 0.5, -1.0, 1.0] {
                finite_or_err(f.time_to(target), |t| vec![t.value()]);
            }
        }
    }
}

#[test]
fn extreme_rc_nodes_give_finite_times_or_errors() {
    // The 5τ rule (common practice, no source) must not overflow where τ itself does not.
    for (r, c) in [
        (f32::MAX, 1.0),
        (1e20, 1e18),
        (1.0, f32::MAX),
        (1e-30, 1e-30),
    ] {
        let Ok(node) = RcNode::new(Ohms::new(r), Farads::new(c)) else {
            continue;
        };
        assert!(node.tau().value().is_finite() && node.tau().value() > 0.0);
        assert!(
            node.settling_time().value().is_finite(),
            "5τ of R = {r}, C = {c}"
        );
        for v in [-f32::MAX, 0.0, f32::MAX] {
            finite_or_err(node.step_loss(Volts::new(-v), Volts::new(v)), |e| {
                vec![e.value()]
            });
            finite_or_err(node.inrush_peak(Volts::new(-v), Volts::new(v)), |i| {
                vec![i.value()]
            });
        }
    }
}

#[test]
fn huge_switch_off_currents_give_finite_stress_or_errors() {
    // ½·L·I² and V + I·R_clamp must not overflow silently (the core's own contract; formulas
    // textbook, from memory).
    let op = OperatingPoint::new(Volts::new(12.0), Celsius::new(20.0));
    for clamp in all_clamps() {
        let c = circuit(100.0, 0.1, clamp).unwrap();
        for i0 in [1e19f32, 1e30, f32::MAX] {
            let Ok(rel) = c.release(&op, Amps::new(i0)) else {
                continue;
            };
            assert!(
                rel.peak_switch_voltage().value().is_finite(),
                "{clamp:?} at {i0} A"
            );
            assert!(rel.peak_node_voltage().value().is_finite());
            finite_or_err(rel.energy(), |e| {
                vec![
                    e.stored.value(),
                    e.clamp.value(),
                    e.winding.value(),
                    e.supply.value(),
                    e.capacitor.value(),
                ]
            });
            finite_or_err(rel.time_to_zero(), |t| vec![t.value()]);
        }
    }
}

#[test]
fn extreme_coils_have_finite_pull_in_and_drop_out_currents_or_are_refused() {
    // I = V/R (Ohm's law, textbook, from memory) must not overflow silently for any accepted coil.
    for (r, v_op) in [
        (1e-30f32, 1e30f32),
        (f32::MIN_POSITIVE, 1.0),
        (1e-20, f32::MAX),
    ] {
        let Ok(coil) = Coil::new(
            Ohms::new(r),
            Celsius::new(20.0),
            Henries::new(1.0),
            Henries::new(1.0),
            Volts::new(v_op),
            Volts::new(v_op * 0.1),
        ) else {
            continue;
        };
        assert!(
            coil.pull_in_current().value().is_finite(),
            "R = {r}, V = {v_op}"
        );
        assert!(coil.drop_out_current().value().is_finite());
    }
}
