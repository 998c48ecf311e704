//! Tests of the design budget: corners, tick budget, rounding, hold at corners.

use super::*;
use crate::physics::circuit::tests::valve;
use crate::physics::clamp::Clamp;
use crate::physics::off_time::min_off_time;
use crate::units::{Celsius, Farads, Ohms};

fn every_clamp() -> [Clamp; 6] {
    [
        Clamp::diode(Volts::new(0.8)).unwrap(),
        Clamp::diode_zener(Volts::new(0.8), Volts::new(34.0)).unwrap(),
        Clamp::diode_resistor(Volts::new(0.8), Ohms::new(220.0)).unwrap(),
        Clamp::AcrossSwitch {
            clamp_voltage: Volts::new(47.0),
        },
        Clamp::Unclamped,
        Clamp::rc_snubber(Ohms::new(1000.0), Farads::from_micro(10.0)).unwrap(),
    ]
}

/// Invented demo design: the 24 V greenhouse valve, 21.6…26.4 V, −25…+60 °C winding, ±5 % R,
/// ±20 % L, ±1 % sense, 1 MHz timer, 8 ms / 5 ms mechanical allowances.
fn design(clamp: Clamp) -> DriverDesign {
    let mut d = DriverDesign::new(
        valve(clamp),
        SupplyRange::new(Volts::new(21.6), Volts::new(24.0), Volts::new(26.4)).unwrap(),
        TemperatureRange::new(Celsius::new(-25.0), Celsius::new(60.0)).unwrap(),
        TickRate::new(1_000_000).unwrap(),
    );
    d.tolerances = Tolerances {
        resistance: 0.05,
        inductance: 0.2,
        sense: 0.01,
    };
    d.operate_allowance = Seconds::from_millis(8.0);
    d.release_allowance = Seconds::from_millis(5.0);
    d
}

fn corners(d: &DriverDesign) -> impl Iterator<Item = OperatingPoint> + '_ {
    (0..).map_while(|k| d.corner(k))
}

#[test]
fn tick_budget_equals_the_full_budget() {
    for clamp in every_clamp() {
        for (residual, duty) in [
            (0.0, None),
            (0.002, None),
            (0.0, Some((Seconds::from_millis(50.0), Hertz::new(2.0)))),
        ] {
            let mut d = design(clamp);
            d.residual_current = Amps::new(residual);
            d.duty = duty;
            d.clamp_rating = duty.map(|_| Watts::new(0.004));
            assert_eq!(
                d.tick_budget().unwrap(),
                d.budget().unwrap().ticks,
                "{clamp:?}"
            );
        }
    }
    let mut hopeless = design(every_clamp()[0]);
    hopeless.supply =
        SupplyRange::new(Volts::new(9.0), Volts::new(10.0), Volts::new(11.0)).unwrap();
    assert!(matches!(
        hopeless.tick_budget(),
        Err(Error::Unreachable { .. })
    ));
    assert!(matches!(hopeless.budget(), Err(Error::Unreachable { .. })));
}

#[test]
fn the_two_chosen_corners_are_the_worst_of_all_32() {
    // Common practice, no source: pull-in is slowest for a hot coil on a low supply, and
    // release, clamp energy and switch voltage are worst for a cold coil on a high supply.
    // Brute force over every combination of supply, temperature, R, L and sense extremes
    // (16 supply/temperature/R/L corners, each with both sense extremes).
    for clamp in every_clamp() {
        let mut d = design(clamp);
        d.duty = Some((Seconds::from_millis(50.0), Hertz::new(2.0)));
        d.clamp_rating = Some(Watts::new(0.25));
        let b = d.budget().unwrap();
        let p = &b.pull_in_corner;
        let r = &b.release_corner;
        let close = |worst: f32, any: f32| any <= worst * (1.0 + 2e-5) + 1e-9;
        let snubber = clamp.kind() == crate::physics::clamp::ClampKind::RcSnubber;
        assert_eq!(corners(&d).count(), 32);
        let mut longest = 0.0f32;
        for op in corners(&d) {
            let f = d.figures(&op).unwrap();
            let pull = f.pull_in_time.unwrap().value();
            longest = longest.max(f.release_time.value());
            assert!(
                close(p.pull_in_time.unwrap().value(), pull),
                "{clamp:?} pull-in {op:?}"
            );
            assert!(
                close(b.release_time.value(), f.release_time.value()),
                "{clamp:?} release {op:?}"
            );
            if !snubber {
                // First-order clamps: the release corner itself is the slowest.
                assert!(close(r.release_time.value(), f.release_time.value()));
                assert!(close(r.time_to_zero.value(), f.time_to_zero.value()));
            }
            assert!(
                close(r.peak_switch_voltage.value(), f.peak_switch_voltage.value()),
                "{clamp:?} peak {op:?}"
            );
            assert!(
                close(r.energy.clamp.value(), f.energy.clamp.value()),
                "{clamp:?} energy {op:?}"
            );
            assert!(
                close(r.energy.stored.value(), f.energy.stored.value()),
                "{clamp:?} stored"
            );
            assert!(
                close(b.min_off_time.value(), f.off_time.required.value()),
                "{clamp:?} off-time {op:?}"
            );
        }
        // The budget's release time is one of the corners' (not an overestimate either).
        assert!((b.release_time.value() - longest).abs() <= 1e-6 * longest);
    }
}

#[test]
fn budget_is_pull_in_plus_allowance_and_rounds_up() {
    for clamp in every_clamp() {
        let d = design(clamp);
        let b = d.budget().unwrap();
        let t_pull = b.pull_in_corner.pull_in_time.unwrap().value();
        // Common practice, no source: minimum on-time = worst electrical pull-in + mechanical
        // operate allowance, and timing limits round up to whole ticks.
        assert!((b.min_on_time.value() - (t_pull + 0.008)).abs() < 1e-7);
        let rate = 1.0e6f64;
        for (ticks, s) in [
            (b.ticks.min_on, b.min_on_time),
            (b.ticks.min_off, b.min_off_time),
            (b.ticks.pull_in, b.pull_in_corner.pull_in_time.unwrap()),
            (b.ticks.release, b.release_time),
        ] {
            assert!(ticks.get() as f64 / rate >= s.value() as f64);
            assert!((ticks.get() as f64 - 1.0) / rate < s.value() as f64);
        }
        assert!(b.min_off_time >= b.nominal.off_time.required);
    }
}

#[test]
fn the_fast_path_off_time_equals_the_public_one() {
    for clamp in every_clamp() {
        let mut d = design(clamp);
        d.duty = Some((Seconds::from_millis(50.0), Hertz::new(2.0)));
        d.clamp_rating = Some(Watts::new(0.05));
        for op in [d.nominal_point(), d.release_corner(), d.pull_in_corner()] {
            let f = d.figures(&op).unwrap();
            let rel = d.circuit.release(&op, f.final_current).unwrap();
            let needs = OffTimeNeeds {
                residual_current: d.residual_current,
                mechanical_release: d.release_allowance,
                clamp_thermal: Some((Watts::new(0.05), Seconds::from_millis(50.0))),
            };
            let slow = min_off_time(&rel, d.circuit.coil().drop_out_current(), &needs).unwrap();
            assert_eq!(slow, f.off_time, "{clamp:?}");
        }
    }
}

#[test]
fn a_coil_that_cannot_pull_in_at_the_corner_fails_the_budget() {
    let mut d = design(every_clamp()[0]);
    d.supply = SupplyRange::new(Volts::new(14.0), Volts::new(24.0), Volts::new(28.0)).unwrap();
    assert!(matches!(d.budget(), Err(Error::Unreachable { .. })));
    assert!(d
        .figures(&d.pull_in_corner())
        .unwrap()
        .pull_in_time
        .is_none());
}

#[test]
fn duty_gives_coil_power_and_hold_is_optional() {
    let mut d = design(every_clamp()[0]);
    d.duty = Some((Seconds::from_millis(100.0), Hertz::new(5.0)));
    let b = d.budget().unwrap();
    let f = &b.nominal;
    let r = d.circuit.resolve(&f.point).unwrap().winding.value();
    let i = f.final_current.value();
    let p = d.coil_power(&f.point).unwrap().unwrap().value();
    // Textbook, from memory: Joule heating, P = I²·R·D.
    assert!((p - i * i * r * 0.5).abs() < 1e-6);
    let [h, hot, cold] = d
        .hold_at_corners(Amps::new(0.05), Hertz::new(20_000.0))
        .unwrap();
    assert!(h.duty > 0.0 && h.duty < 1.0);
    // Common practice, no source: hold duty is highest at the hot, low-supply corner, lowest
    // at the cold, high one.
    assert!(hot.duty > h.duty && cold.duty < h.duty);
    d.duty = Some((Seconds::new(1.0), Hertz::new(5.0)));
    assert!(d.coil_power(&f.point).is_err());
    d.duty = None;
    assert_eq!(d.coil_power(&f.point), Ok(None));
}

/// Issue 11 item 13: `tick_budget()` accepted what `budget()` refused — a negative or NaN
/// repetition rate, a zero, negative, NaN or huge clamp rating. Both share one validation now.
#[test]
fn tick_budget_refuses_exactly_what_budget_refuses() {
    let on = Seconds::from_millis(50.0);
    let bad_duties = [
        Some((on, Hertz::new(-1.0))),
        Some((on, Hertz::new(f32::NAN))),
        Some((on, Hertz::new(f32::INFINITY))),
        Some((Seconds::new(-1.0), Hertz::new(2.0))),
        Some((Seconds::new(f32::NAN), Hertz::new(2.0))),
        Some((on, Hertz::new(f32::MAX))),
        Some((on, Hertz::new(2.0))),
        None,
    ];
    let ratings = [
        None,
        Some(Watts::new(0.0)),
        Some(Watts::new(-1.0)),
        Some(Watts::new(f32::NAN)),
        Some(Watts::new(f32::INFINITY)),
        Some(Watts::new(f32::MAX)),
        Some(Watts::new(1.0e-45)),
        Some(Watts::new(0.25)),
    ];
    let mut refused = 0;
    for clamp in every_clamp() {
        for duty in bad_duties {
            for rating in ratings {
                let mut d = design(clamp);
                d.duty = duty;
                d.clamp_rating = rating;
                let (full, ticks) = (d.budget(), d.tick_budget());
                match (&full, &ticks) {
                    (Ok(b), Ok(t)) => assert_eq!(&b.ticks, t, "{clamp:?} {duty:?} {rating:?}"),
                    (Err(a), Err(b)) => {
                        assert_eq!(a, b, "{clamp:?} {duty:?} {rating:?}");
                        refused += 1;
                    }
                    _ => panic!("{clamp:?} {duty:?} {rating:?}: {full:?} vs {ticks:?}"),
                }
            }
        }
    }
    assert!(refused > 0);
}

/// Issue 11 item 13: `hold_at_corners()` did not validate the tolerances.
#[test]
fn hold_at_corners_validates_the_tolerances() {
    for bad in [-0.1f32, 0.95, f32::NAN, f32::INFINITY] {
        let mut d = design(every_clamp()[0]);
        d.tolerances.resistance = bad;
        assert_eq!(
            d.hold_at_corners(Amps::new(0.05), Hertz::new(20_000.0))
                .map(|_| ()),
            d.tolerances.validate(),
            "{bad}"
        );
        assert!(d.tolerances.validate().is_err());
    }
}
