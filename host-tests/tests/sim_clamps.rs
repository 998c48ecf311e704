//! Switch voltage and decay behaviour per clamp, and topology.

mod sim_common;
use sim_common::*;

use coilwise_host_tests::{Clamp, DiodeLaw, Switch, Topology};

fn off_peak_and_zero_time(clamp: Clamp) -> (f64, f64, f64) {
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, clamp));
    b.set_gate(0, true).unwrap();
    b.advance_ns(20_000_000);
    let i0 = b.probe(0).unwrap().coil_amps;
    b.reset_stats(0).unwrap();
    let t_off = b.now_ns();
    b.set_gate(0, false).unwrap();
    b.advance_ns(30_000_000);
    let st = b.stats(0).unwrap();
    let tz = (st.current_zero_ns.unwrap() - t_off) as f64 * 1e-9;
    (st.peak_switch_volts, tz, i0)
}

/// A plain freewheel diode holds the switch at supply + one silicon diode
/// drop, ≈ 0.6…1.0 V at ~0.1 A (common practice, no source).
#[test]
fn plain_diode_clamps_at_supply_plus_one_diode_drop() {
    let (peak, _, i0) = off_peak_and_zero_time(Clamp::Diode(DiodeLaw::rectifier()));
    let drop = peak - 24.0;
    eprintln!("diode: I0 {i0:.4} A, peak switch {peak:.4} V, drop {drop:.3} V");
    assert!((0.6..1.0).contains(&drop), "drop {drop}");
}

/// A diode + zener clamp: switch sees supply + Vz + a diode drop, and the
/// current is gone far sooner than with a plain diode (common practice, no
/// source: "a plain diode releases slowly, a zener fast").
#[test]
fn zener_clamp_is_faster_and_higher_than_plain_diode() {
    let (p_d, t_d, _) = off_peak_and_zero_time(Clamp::Diode(DiodeLaw::rectifier()));
    let (p_z, t_z, i0) = off_peak_and_zero_time(Clamp::DiodeZener {
        diode: DiodeLaw::rectifier(),
        zener_volts: 33.0,
        zener_ohms: 0.0,
    });
    eprintln!("diode: {p_d:.2} V, zero after {t_d:e} s; zener: {p_z:.2} V, zero after {t_z:e} s");
    assert!(
        (24.0 + 33.0 + 0.6..24.0 + 33.0 + 1.0).contains(&p_z),
        "{p_z}"
    );
    assert!(t_z < 0.5 * t_d);
    // Upper bound for the zener case: ignoring R, t ≤ L·I0/Vz (textbook, from memory).
    assert!(t_z < LCOIL * i0 / 33.0);
}

/// Without a clamp the switch goes to its breakdown voltage (plus
/// `Rav·I`) (common practice, no source).
#[test]
fn no_clamp_puts_switch_at_breakdown() {
    let mut ch = fixed_channel(RCOIL, LCOIL, Clamp::None);
    ch.switch = Switch::Mosfet {
        on_ohms: RON,
        breakdown_volts: 60.0,
        avalanche_ohms: 2.0,
        body_diode_volts: 0.7,
    };
    let mut b = bench1(24.0, ch);
    b.set_gate(0, true).unwrap();
    b.advance_ns(20_000_000);
    let i0 = b.probe(0).unwrap().coil_amps;
    b.set_gate(0, false).unwrap();
    b.advance_ns(5_000_000);
    let peak = b.stats(0).unwrap().peak_switch_volts;
    assert!((peak - (60.0 + 2.0 * i0)).abs() < 1e-6, "{peak}");
}

/// If the zener voltage is above the switch's breakdown headroom, the switch
/// avalanches and shares the current with the clamp; its voltage then stays
/// at breakdown (common practice, no source).
#[test]
fn clamp_above_breakdown_shares_with_avalanche() {
    let mut b = bench1(
        24.0,
        fixed_channel(
            RCOIL,
            LCOIL,
            Clamp::DiodeZener {
                diode: DiodeLaw::rectifier(),
                zener_volts: 44.0,
                zener_ohms: 50.0,
            },
        ),
    );
    b.set_gate(0, true).unwrap();
    b.advance_ns(20_000_000);
    let e0 = b.energy(0).unwrap();
    b.set_gate(0, false).unwrap();
    b.advance_ns(1000);
    let p = b.probe(0).unwrap();
    // Breakdown is at 68 V with Rav = 0 in the test switch.
    assert!((p.switch_volts - 68.0).abs() < 1e-6, "{}", p.switch_volts);
    assert!(p.clamp_amps > 0.0 && p.switch_amps > 0.0);
    assert!((p.clamp_amps + p.switch_amps - p.coil_amps).abs() < 1e-12);
    b.advance_ns(20_000_000);
    let e1 = b.energy(0).unwrap();
    assert!(e1.switch_avalanche > e0.switch_avalanche && e1.clamp > e0.clamp);
    assert!(e1.balance_error_since(&e0).abs() < 1e-6 * e0.magnetic_stored);
}

/// High-side switch: the switched coil terminal sits near the supply while
/// on and swings one diode drop *below ground* at switch-off; the switch
/// still sees supply + diode drop (common practice, no source).
#[test]
fn high_side_node_swings_below_ground() {
    let mut ch = fixed_channel(RCOIL, LCOIL, Clamp::Diode(DiodeLaw::rectifier()));
    ch.topology = Topology::HighSide;
    let mut b = bench1(24.0, ch);
    b.set_gate(0, true).unwrap();
    b.advance_ns(20_000_000);
    let on = b.probe(0).unwrap();
    assert!(on.node_volts > 23.9 && on.node_volts < 24.0);
    b.set_gate(0, false).unwrap();
    b.advance_ns(10);
    let off = b.probe(0).unwrap();
    assert!((-1.0..-0.6).contains(&off.node_volts), "{}", off.node_volts);
    assert!((off.switch_volts - (24.0 - off.node_volts)).abs() < 1e-9);
    assert!(b.stats(0).unwrap().min_node_volts < -0.6);
}

/// A bipolar switch in saturation: on-state drop `Vsat + Rsat·I`
/// (the saturated-transistor model of the datasheets, common practice).
#[test]
fn bipolar_switch_saturation_drop() {
    let mut ch = fixed_channel(RCOIL, LCOIL, Clamp::Diode(DiodeLaw::rectifier()));
    ch.switch = Switch::Bipolar {
        saturation_volts: 0.15,
        saturation_ohms: 1.0,
        breakdown_volts: 45.0,
        avalanche_ohms: 0.5,
    };
    let mut b = bench1(24.0, ch);
    b.set_gate(0, true).unwrap();
    b.advance_ns(50_000_000); // 26 τ
    let p = b.probe(0).unwrap();
    let r = RCOIL + RWIRE + 1.0 + RSENSE;
    let i_inf = (24.0 - 0.15) / r;
    assert!(rel(p.coil_amps, i_inf) < 1e-6, "{} vs {i_inf}", p.coil_amps);
    assert!((p.switch_volts - (0.15 + 1.0 * p.coil_amps)).abs() < 1e-9);
}
