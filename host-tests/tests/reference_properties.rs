//! Property tests (proptest): invariants that must hold for every valid input, not only for the
//! demo values. Sources: energy conservation and monotonicity follow from the circuit equations
//! (textbook, from memory); the tick rule is the core's documented guarantee.

use coilwise::{
    Amps, Celsius, Circuit, Clamp, Coil, Farads, Henries, Ohms, OperatingPoint, Seconds, Switch,
    TickRate, Topology, Volts,
};
use proptest::prelude::*;

fn coil(r: f32, l: f32) -> Coil {
    Coil::new(
        Ohms::new(r),
        Celsius::new(20.0),
        Henries::new(l),
        Henries::new(l * 1.5),
        Volts::new(1.0),
        Volts::new(0.2),
    )
    .unwrap()
}

fn circuit(r: f32, l: f32, clamp: Clamp, breakdown: f32) -> Circuit {
    Circuit::new(
        coil(r, l),
        Switch::Mosfet {
            on_resistance: Ohms::new(0.05),
            breakdown: Volts::new(breakdown),
        },
        Topology::LowSide,
        Ohms::new(0.2),
        Ohms::new(0.3),
        clamp,
    )
    .unwrap()
}

/// Every clamp kind, parameterised from a few draws; the snubber's C is chosen overdamped over the
/// whole temperature range drawn (−40 °C gives the lowest winding resistance, hence the largest
/// critical capacitance 4L/R²).
fn clamps(v: f32, r: f32, l: f32, vf: f32, vz: f32, rc: f32, k: f32) -> Vec<Clamp> {
    let r_coldest = r * (1.0 + coilwise::physics::coil::COPPER_ALPHA_20C.value() * (-40.0 - 20.0));
    let r_tot = r_coldest + 0.3 + rc;
    let c_crit = 4.0 * l * 1.5 / (r_tot * r_tot);
    vec![
        Clamp::diode(Volts::new(vf)).unwrap(),
        Clamp::diode_zener(Volts::new(vf), Volts::new(vf + vz)).unwrap(),
        Clamp::diode_resistor(Volts::new(vf), Ohms::new(rc)).unwrap(),
        Clamp::AcrossSwitch {
            clamp_voltage: Volts::new(v + vz),
        },
        Clamp::Unclamped,
        Clamp::rc_snubber(Ohms::new(rc), Farads::new(c_crit * k)).unwrap(),
        // Standoff between the supply (the MOSFET's drive voltage) and the clamping voltage.
        Clamp::tvs_across_coil(Volts::new(v + vz), Volts::new(v + 0.5 * vz)).unwrap(),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    #[test]
    fn energy_balances_at_switch_off_for_every_clamp(
        v in 5.0f32..48.0, t in -40.0f32..125.0, r in 5.0f32..2000.0, l in 1e-3f32..2.0,
        vf in 0.3f32..1.2, vz in 2.0f32..80.0, rc in 1.0f32..5000.0, k in 1.01f32..100.0,
    ) {
        for clamp in clamps(v, r, l, vf, vz, rc, k) {
            let c = circuit(r, l, clamp, v + vz + 1.0);
            let op = OperatingPoint::new(Volts::new(v), Celsius::new(t));
            let i0 = c.final_current(&op).unwrap();
            let rel = c.release(&op, i0).unwrap();
            let e = rel.energy().unwrap();
            let scale = e.stored.value() + e.supply.value() + e.capacitor.value();
            prop_assert!(e.imbalance().value().abs() <= 1e-4 * scale, "{:?}: {:?}", clamp, e);
            prop_assert!(e.clamp.value() >= 0.0 && e.winding.value() >= 0.0);
        }
    }

    #[test]
    fn times_are_monotone_in_the_target_current(
        v in 5.0f32..48.0, r in 5.0f32..2000.0, l in 1e-3f32..2.0,
        vf in 0.3f32..1.2, vz in 2.0f32..80.0, rc in 1.0f32..5000.0, k in 1.01f32..100.0,
        a in 0.01f32..0.98, b in 0.01f32..0.98,
    ) {
        let (lo, hi) = if a <= b { (a, b) } else { (b, a) };
        let op = OperatingPoint::new(Volts::new(v), Celsius::new(20.0));
        for clamp in clamps(v, r, l, vf, vz, rc, k) {
            let c = circuit(r, l, clamp, v + vz + 1.0);
            let i_inf = c.final_current(&op).unwrap().value();
            // Rise: a higher target takes longer.
            let rise = c.energize(&op, coilwise::Armature::Released, Amps::new(0.0)).unwrap();
            let t_lo = rise.time_to(lo * i_inf).unwrap();
            let t_hi = rise.time_to(hi * i_inf).unwrap();
            prop_assert!(t_lo <= t_hi);
            // Release: a lower target takes longer.
            let rel = c.release(&op, Amps::new(i_inf)).unwrap();
            let r_lo = rel.time_to_current(Amps::new(lo * i_inf)).unwrap();
            let r_hi = rel.time_to_current(Amps::new(hi * i_inf)).unwrap();
            prop_assert!(r_lo >= r_hi, "{:?}: {:?} < {:?}", clamp, r_lo, r_hi);
        }
    }

    #[test]
    fn pull_in_takes_longer_on_a_hotter_coil(
        r in 5.0f32..2000.0, l in 1e-3f32..2.0, t1 in -40.0f32..125.0, t2 in -40.0f32..125.0,
    ) {
        let (cold, hot) = if t1 <= t2 { (t1, t2) } else { (t2, t1) };
        let c = circuit(r, l, Clamp::diode(Volts::new(0.7)).unwrap(), 60.0);
        // Supply chosen so the coil (must-operate 1 V at 20 °C) pulls in over the whole range.
        let v = Volts::new(2.0);
        let tc = c.pull_in_time(&OperatingPoint::new(v, Celsius::new(cold))).unwrap();
        let th = c.pull_in_time(&OperatingPoint::new(v, Celsius::new(hot))).unwrap();
        prop_assert!(tc <= th);
    }

    #[test]
    fn a_higher_clamp_voltage_releases_faster(
        v in 5.0f32..48.0, r in 5.0f32..2000.0, l in 1e-3f32..2.0,
        z1 in 1.0f32..100.0, z2 in 1.0f32..100.0,
    ) {
        let (low, high) = if z1 <= z2 { (z1, z2) } else { (z2, z1) };
        let op = OperatingPoint::new(Volts::new(v), Celsius::new(20.0));
        let rel = |vz: f32| {
            let c = circuit(r, l, Clamp::diode_zener(Volts::new(0.7), Volts::new(0.7 + vz)).unwrap(), 200.0);
            c.release(&op, c.final_current(&op).unwrap()).unwrap()
        };
        let (a, b) = (rel(low), rel(high));
        prop_assert!(b.time_to_zero().unwrap() <= a.time_to_zero().unwrap());
        let drop = Amps::new(0.2 / r);
        prop_assert!(b.time_to_current(drop).unwrap() <= a.time_to_current(drop).unwrap());
        prop_assert!(b.peak_switch_voltage() >= a.peak_switch_voltage());
        // The same for a TVS straight across the coil (standoff just above the supply).
        let tvs = |vc: f32| {
            let clamp = Clamp::tvs_across_coil(Volts::new(v + vc), Volts::new(v + 0.5)).unwrap();
            let c = circuit(r, l, clamp, 300.0);
            c.release(&op, c.final_current(&op).unwrap()).unwrap()
        };
        let (a, b) = (tvs(low), tvs(high));
        prop_assert!(b.time_to_zero().unwrap() <= a.time_to_zero().unwrap());
        prop_assert!(b.time_to_current(drop).unwrap() <= a.time_to_current(drop).unwrap());
        prop_assert!(b.peak_switch_voltage() >= a.peak_switch_voltage());
    }

    #[test]
    fn a_tvs_across_the_coil_is_refused_when_the_supply_reaches_its_standoff(
        v in 5.0f32..48.0, r in 5.0f32..2000.0, l in 1e-3f32..2.0, s in 0.1f32..2.0,
    ) {
        // Fact of the trade (common practice, no source): a TVS conducts above its standoff, so
        // one straight across the coil would conduct while the switch is on.
        let clamp = Clamp::tvs_across_coil(Volts::new(3.0 * v), Volts::new(s * v)).unwrap();
        let c = circuit(r, l, clamp, 300.0);
        let op = OperatingPoint::new(Volts::new(v), Celsius::new(20.0));
        let got = c.release(&op, Amps::new(0.01));
        if s * v <= v {
            prop_assert_eq!(got.err(), Some(coilwise::Error::invalid(
                coilwise::Param::StandoffVoltage, coilwise::Why::BelowSupply)));
        } else {
            prop_assert!(got.is_ok());
        }
    }

    #[test]
    fn tick_conversion_is_never_shorter_than_the_time(
        t in 0.0f32..2000.0, hz in 1u32..100_000_000,
    ) {
        let rate = TickRate::new(hz).unwrap();
        if let Ok(n) = rate.ticks_at_least(Seconds::new(t)) {
            prop_assert!(n.get() as f64 / hz as f64 >= t as f64);
            // and at most one tick longer
            let under = (n.get() as f64 - 1.0) / (hz as f64);
            prop_assert!(under < (t as f64) || n.get() == 0);
        }
        if let Ok(n) = rate.ticks_at_most(Seconds::new(t)) {
            prop_assert!(n.get() as f64 / hz as f64 <= t as f64);
        }
    }
}
