//! Injected faults change the rise as physics says they must.

mod sim_common;
use sim_common::*;

use coilwise_host_tests::{demo, Bench, Comparator, Fault, SensePoint, SolverSettings, Supply};

/// Run a 60 ms pulse (≫ 5τ) with a fault injected before switch-on; return
/// (final current, comparator time to `ith` in ns).
fn rise_with(fault: Option<Fault>, ith: f64) -> (f64, Option<u64>) {
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, diode()));
    if let Some(f) = fault {
        b.inject(0, f).unwrap();
    }
    b.set_comparator(
        0,
        Some(Comparator {
            threshold_amps: ith,
            sense: SensePoint::Switch,
        }),
    )
    .unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(60_000_000);
    (
        b.probe(0).unwrap().coil_amps,
        b.stats(0).unwrap().comparator_ns_since_on(),
    )
}

/// Lumped shorted turns: R·(1 − f), L·(1 − f)² ⇒ higher `I∞ = V/R_total` (Ohm's
/// law) and a faster rise to a fixed threshold (τ = L/R shrinks) (textbook,
/// from memory).
#[test]
fn lumped_shorted_turns_rise_faster_to_higher_current() {
    let (i_ok, t_ok) = rise_with(None, 0.08);
    let f = 0.3;
    let (i_st, t_st) = rise_with(Some(Fault::ShortedTurnsLumped { fraction: f }), 0.08);
    let r = RCOIL * (1.0 - f) + RWIRE + RON + RSENSE;
    assert!(rel(i_ok, 24.0 / r_on_loop(RCOIL)) < 1e-7);
    assert!(rel(i_st, 24.0 / r) < 1e-7, "{i_st} vs {}", 24.0 / r);
    assert!(i_st > i_ok);
    let (t_ok, t_st) = (t_ok.unwrap() as f64, t_st.unwrap() as f64);
    // Closed-form time to threshold with the faulted τ and I∞.
    let tau = LCOIL * (1.0 - f) * (1.0 - f) / r;
    let expect = -tau * (1.0 - 0.08 * r / 24.0).ln() * 1e9;
    eprintln!(
        "threshold time healthy {t_ok} ns, shorted turns {t_st} ns (closed form {expect:.0})"
    );
    assert!(t_st < 0.6 * t_ok);
    assert!((t_st - expect).abs() < 100.0);
}

/// Added series resistance (corroded connector) lowers `I∞ = V/(R + ΔR)`
/// (Ohm's law) and delays the threshold.
#[test]
fn series_resistance_lowers_final_current() {
    let (i_ok, t_ok) = rise_with(None, 0.08);
    let (i_hr, t_hr) = rise_with(Some(Fault::SeriesResistance { ohms: 40.0 }), 0.08);
    assert!(rel(i_hr, 24.0 / (r_on_loop(RCOIL) + 40.0)) < 1e-7);
    assert!(i_hr < i_ok);
    assert!(t_hr.unwrap() > t_ok.unwrap());
    // Enough resistance and the threshold is never reached.
    let (i_bad, t_bad) = rise_with(Some(Fault::SeriesResistance { ohms: 200.0 }), 0.08);
    assert!(i_bad < 0.08);
    assert_eq!(t_bad, None);
}

/// Open circuit: no current, and the off-state node sits at the supply.
#[test]
fn open_circuit_carries_no_current() {
    let (i, t) = rise_with(Some(Fault::Open), 0.001);
    assert_eq!(i, 0.0);
    assert_eq!(t, None);
}

/// Dead short across the coil: the current is limited by switch, shunt and
/// wiring, `I = V/(R_short + R_wire + Ron + Rsense)` (Ohm's law).
#[test]
fn short_circuit_current_is_limited_by_the_rest_of_the_loop() {
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, diode()));
    b.inject(
        0,
        Fault::Short {
            residual_ohms: 0.05,
            residual_henries: 2e-6,
        },
    )
    .unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(200_000); // τ ≈ 1 µs
    let i = b.probe(0).unwrap().coil_amps;
    let expect = 24.0 / (0.05 + RWIRE + RON + RSENSE);
    assert!(rel(i, expect) < 1e-7, "{i} vs {expect}");
    // Switch-off of the short still closes its energy books.
    let e0 = b.energy(0).unwrap();
    b.set_gate(0, false).unwrap();
    b.advance_ns(1_000_000);
    let e1 = b.energy(0).unwrap();
    assert_eq!(b.probe(0).unwrap().coil_amps, 0.0);
    assert!(e1.balance_error_since(&e0).abs() < 1e-6 * e0.magnetic_stored);
}

/// Supply sag mid-pulse: the current settles to the new `V/R` (Ohm's law)
/// with the same τ.
#[test]
fn supply_sag_mid_pulse() {
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, diode()));
    b.set_gate(0, true).unwrap();
    b.advance_ns(30_000_000);
    let i1 = b.probe(0).unwrap().coil_amps;
    b.set_supply_volts(18.0).unwrap();
    let r = r_on_loop(RCOIL);
    let tau = LCOIL / r;
    b.advance_ns(2_000_000);
    let i2 = b.probe(0).unwrap().coil_amps;
    let expect = 18.0 / r + (i1 - 18.0 / r) * (-2e-3 / tau).exp();
    assert!(rel(i2, expect) < 1e-6, "{i2} vs {expect}");
}

/// Opening the circuit while current flows removes the stored energy from
/// the books as an event, so the balance still closes.
#[test]
fn opening_mid_pulse_is_booked() {
    let mut b = Bench::single(
        Supply::ideal(24.0),
        demo::valve_24v(),
        SolverSettings::default(),
    )
    .unwrap();
    let e0 = b.energy(0).unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(30_000_000);
    let w = b.energy(0).unwrap().magnetic_stored;
    b.inject(0, Fault::Open).unwrap();
    b.advance_ns(30_000_000);
    let e1 = b.energy(0).unwrap();
    assert_eq!(b.probe(0).unwrap().coil_amps, 0.0);
    assert!((e1.removed_by_events - w).abs() < 1e-6 * w);
    assert!(e1.balance_error_since(&e0).abs() < 1e-7 * e1.from_rail);
    // The plunger falls back once the current is gone.
    assert_eq!(
        b.armature(0).unwrap(),
        coilwise_host_tests::ArmatureState::Released
    );
    b.clear_faults(0).unwrap();
    b.advance_ns(30_000_000);
    assert!(b.probe(0).unwrap().coil_amps > 0.1);
}
