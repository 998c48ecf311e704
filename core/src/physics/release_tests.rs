//! Tests of [`super`]: release waveform, energy balance and stress for every clamp type.

use super::*;
use crate::physics::circuit::tests::valve;
use crate::physics::clamp::ClampKind;
use crate::units::{Celsius, Farads, Ohms};

fn op() -> OperatingPoint {
    OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0))
}

fn every_clamp() -> [Clamp; 7] {
    [
        Clamp::diode(Volts::new(0.8)).unwrap(),
        Clamp::diode_zener(Volts::new(0.8), Volts::new(34.0)).unwrap(),
        Clamp::diode_resistor(Volts::new(0.8), Ohms::new(220.0)).unwrap(),
        Clamp::AcrossSwitch {
            clamp_voltage: Volts::new(47.0),
        },
        Clamp::Unclamped,
        Clamp::rc_snubber(Ohms::new(1000.0), Farads::from_micro(10.0)).unwrap(),
        Clamp::tvs_across_coil(Volts::new(34.0), Volts::new(26.0)).unwrap(),
    ]
}

#[test]
fn tvs_across_the_coil_releases_like_a_diode_and_zener_of_the_same_voltage() {
    // Kirchhoff's voltage law around the freewheel loop (textbook, from memory): only the
    // voltage across the coil while clamping matters to the release, not whether it is made
    // of a zener plus diode or one bidirectional TVS.
    let tvs = valve(Clamp::tvs_across_coil(Volts::new(34.0), Volts::new(26.0)).unwrap())
        .release(&op(), Amps::new(0.13))
        .unwrap();
    let dz = valve(Clamp::diode_zener(Volts::new(0.8), Volts::new(34.0)).unwrap())
        .release(&op(), Amps::new(0.13))
        .unwrap();
    assert_eq!(tvs.time_to_zero(), dz.time_to_zero());
    assert_eq!(tvs.energy(), dz.energy());
    assert!((tvs.peak_switch_voltage().value() - 58.0).abs() < 1e-5);
    assert_eq!(tvs.peak_switch_voltage(), dz.peak_switch_voltage());
}

#[test]
fn tvs_across_the_coil_must_stand_off_the_drive_voltage() {
    // A TVS conducts above its standoff (common practice, no source): at 24 V, one with a
    // 22 V standoff straight across the coil would conduct while the switch is on.
    let low = valve(Clamp::tvs_across_coil(Volts::new(34.0), Volts::new(22.0)).unwrap());
    assert_eq!(
        low.release(&op(), Amps::new(0.1)),
        Err(Error::invalid(Param::StandoffVoltage, Why::BelowSupply))
    );
    // Exactly at the drive voltage: refused too (it starts to conduct there).
    let at = valve(Clamp::tvs_across_coil(Volts::new(34.0), Volts::new(24.0)).unwrap());
    assert!(at.release(&op(), Amps::new(0.1)).is_err());
}

#[test]
fn energy_balances_for_every_clamp() {
    for clamp in every_clamp() {
        let c = valve(clamp);
        let rel = c.release(&op(), Amps::new(0.13)).unwrap();
        let e = rel.energy().unwrap();
        let rhs = e.stored.value() + e.supply.value() + e.capacitor.value();
        // Textbook, from memory: conservation of energy, ½·L·I₀² (plus what the supply and
        // any capacitor deliver) ends up in the clamp and the winding resistance.
        assert!(
            e.imbalance().value().abs() <= 1e-5 * rhs,
            "{clamp:?}: {e:?}"
        );
    }
}

#[test]
fn plain_diode_puts_switch_at_supply_plus_one_drop() {
    // Common practice, no source: a freewheel diode holds the switch at V_supply + V_F.
    let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
    let rel = c.release(&op(), Amps::new(0.13)).unwrap();
    assert!((rel.peak_switch_voltage().value() - 24.8).abs() < 1e-5);
    assert!((rel.peak_node_voltage().value() - 24.8).abs() < 1e-5);
}

#[test]
fn switch_voltage_follows_the_clamp_then_returns_to_the_supply() {
    // Common practice, no source: while a freewheel diode conducts the switch sits at
    // V_supply + V_F; a resistor adds i·R; once the current is zero the node returns to the
    // supply.
    let d = valve(Clamp::diode(Volts::new(0.8)).unwrap())
        .release(&op(), Amps::new(0.13))
        .unwrap();
    let t0 = d.time_to_zero().unwrap().value();
    assert!((d.switch_voltage_at(Seconds::new(0.0)).unwrap().value() - 24.8).abs() < 1e-5);
    assert!((d.switch_voltage_at(Seconds::new(0.5 * t0)).unwrap().value() - 24.8).abs() < 1e-5);
    assert_eq!(
        d.switch_voltage_at(Seconds::new(2.0 * t0)).unwrap().value(),
        24.0
    );
    let r = valve(Clamp::diode_resistor(Volts::new(0.8), Ohms::new(220.0)).unwrap())
        .release(&op(), Amps::new(0.13))
        .unwrap();
    let t = Seconds::new(0.3 * r.time_to_zero().unwrap().value());
    let i = r.current_at(t).unwrap().value();
    let v = r.switch_voltage_at(t).unwrap().value();
    assert!((v - (24.0 + 0.8 + 220.0 * i)).abs() < 1e-4, "{v}");
    assert_eq!(
        r.switch_voltage_at(Seconds::new(0.0)).unwrap(),
        r.peak_switch_voltage()
    );
    assert!(r.switch_voltage_at(Seconds::new(-1.0)).is_err());
}

#[test]
fn high_side_node_goes_below_ground() {
    let mut c = valve(Clamp::diode_zener(Volts::new(0.8), Volts::new(30.0)).unwrap());
    c = Circuit::new(
        *c.coil(),
        *c.switch(),
        Topology::HighSide,
        c.sense(),
        c.wiring(),
        *c.clamp(),
    )
    .unwrap();
    let rel = c.release(&op(), Amps::new(0.13)).unwrap();
    // Common practice, no source: a high-side switch's load node flies below ground by the
    // clamp voltage, so the switch sees supply + clamp (24 + 30 V).
    assert!((rel.peak_node_voltage().value() + 30.0).abs() < 1e-5);
    assert!((rel.peak_switch_voltage().value() - 54.0).abs() < 1e-4);
}

#[test]
fn avalanche_tends_to_the_unclamped_inductive_switching_formula() {
    // E_AS (single-pulse unclamped inductive switching, JEDEC JESD24 family; from memory):
    // E_AS = ½·L·I²·V_BR/(V_BR − V_DD), derived for a lossless inductor. With R small against (V_BR − V_DD)/I it is approached.
    let c = valve(Clamp::Unclamped);
    let rel = c.release(&op(), Amps::new(0.13)).unwrap();
    let e = rel.energy().unwrap();
    let uis = e.stored.value() * 60.0 / (60.0 - 24.0);
    // Winding loss here is ~ R·I/(V_BR − V) ≈ 181·0.13/36 /2 of the stored energy; allow it.
    assert!(e.clamp.value() < uis && e.clamp.value() > 0.6 * uis);
}

#[test]
fn zener_releases_faster_than_plain_diode() {
    let d = valve(every_clamp()[0])
        .release(&op(), Amps::new(0.13))
        .unwrap();
    let z = valve(every_clamp()[1])
        .release(&op(), Amps::new(0.13))
        .unwrap();
    let drop = Amps::new(2.4 / 180.0);
    // Common practice, no source: a diode + zener clamp releases faster than a plain diode
    // and costs a higher switch voltage.
    assert!(z.time_to_current(drop).unwrap() < d.time_to_current(drop).unwrap());
    assert!(z.time_to_zero().unwrap() < d.time_to_zero().unwrap());
    assert!(z.peak_switch_voltage() > d.peak_switch_voltage());
}

#[test]
fn series_and_direct_forms_agree_at_the_switchover() {
    for x in [0.2499f32, 0.2501] {
        let direct = x as f64 - (x as f64).ln_1p();
        let (q, s, _) = log_tails(x);
        assert!((q as f64 - direct).abs() < 1e-6 * direct);
        let direct2 = (x as f64).ln_1p() - x as f64 + 0.5 * (x as f64) * (x as f64);
        assert!((s as f64 - direct2).abs() < 1e-4 * direct2);
    }
}

#[test]
fn snubber_release_through_the_circuit() {
    let c = valve(Clamp::rc_snubber(Ohms::new(1000.0), Farads::from_micro(10.0)).unwrap());
    let i0 = c.final_current(&op()).unwrap();
    let rel = c.release(&op(), i0).unwrap();
    let s = rel.snubber().expect("snubber shape");
    // Textbook, from memory: Ohm's law in the settled on-state — the capacitor holds I₀ times
    // the freewheel loop (winding + wiring).
    assert!((s.precharge().value() - i0.value() * 180.4).abs() < 1e-4);
    assert_eq!(rel.tau(), s.slow_time_constant());
    assert_eq!(
        rel.current_at(Seconds::new(1e-3)).unwrap(),
        s.current_at(Seconds::new(1e-3)).unwrap()
    );
    // The switch sees supply + the snubber's peak reverse voltage.
    let peak = rel.peak_switch_voltage().value();
    assert!((peak - 24.0 - s.peak_reverse_voltage().value()).abs() < 1e-4);
    // Peak at least R_s·I₀ − V₀ (its value at switch-off).
    assert!(peak >= 24.0 + 1000.0 * i0.value() - s.precharge().value() - 1e-4);
    assert!(rel.settle_time(Amps::new(0.0)).unwrap() == rel.time_to_zero().unwrap());
    assert!(valve(Clamp::diode(Volts::new(0.8)).unwrap())
        .release(&op(), i0)
        .unwrap()
        .snubber()
        .is_none());
    // Ringing snubber: error, not a wrong answer.
    let ring = valve(Clamp::rc_snubber(Ohms::new(100.0), Farads::from_micro(1.0)).unwrap());
    assert_eq!(
        ring.release(&op(), i0),
        Err(Error::OutsideModel(crate::error::Limit::SnubberUnderdamped))
    );
    assert!(Clamp::rc_snubber(Ohms::new(0.0), Farads::from_micro(1.0)).is_err());
    assert!(Clamp::rc_snubber(Ohms::new(10.0), Farads::new(f32::INFINITY)).is_err());
    assert_eq!(
        Clamp::rc_snubber(Ohms::new(10.0), Farads::new(1e-6))
            .unwrap()
            .kind(),
        ClampKind::RcSnubber
    );
}
