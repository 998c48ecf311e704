//! The plant against first-order closed forms, and the integrator's order.

mod sim_common;
use sim_common::*;

use coilwise_host_tests::{Bench, Clamp, Comparator, SensePoint, SolverSettings, Stepping, Supply};

/// RL step response `i = I∞·(1 − e^(−t/τ))`, `τ = L/R`, `I∞ = V/R`
/// (textbook, from memory), fixed armature, 24 V, invented coil.
#[test]
fn rl_step_response_matches_closed_form() {
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, diode()));
    b.start_recording(10_000);
    b.set_gate(0, true).unwrap();
    b.advance_ns(12_000_000); // > 6 τ
    let r = r_on_loop(RCOIL);
    let tau = LCOIL / r;
    let i_inf = 24.0 / r;
    let rec = b.recording().unwrap();
    let mut worst: f64 = 0.0;
    let mut n = 0;
    for s in rec.channel(0) {
        let t = s.t_ns as f64 * 1e-9;
        let expect = i_inf * (1.0 - (-t / tau).exp());
        worst = worst.max((s.coil_amps - expect).abs() / i_inf);
        n += 1;
    }
    assert!(n > 1000);
    eprintln!("RL step: worst |error|/I∞ = {worst:e} over {n} samples");
    assert!(worst < 1e-6, "worst relative error {worst:e}");
    // Switch voltage in the on-state is I·(Ron) (Ohm's law, textbook, from memory).
    let p = b.probe(0).unwrap();
    assert!((p.switch_volts - p.coil_amps * RON).abs() < 1e-9);
}

fn error_at_2ms(step_s: f64) -> f64 {
    let settings = SolverSettings {
        stepping: Stepping::Fixed { step_s },
        ..SolverSettings::default()
    };
    let mut b = Bench::single(
        Supply::ideal(24.0),
        fixed_channel(RCOIL, LCOIL, diode()),
        settings,
    )
    .unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(2_000_000);
    let r = r_on_loop(RCOIL);
    let expect = 24.0 / r * (1.0 - (-2e-3 * r / LCOIL).exp());
    (b.probe(0).unwrap().coil_amps - expect).abs()
}

/// Halving a fixed step divides the global error by ≈ 2³ = 8: the
/// Bogacki–Shampine pair's solution is third order (Bogacki & Shampine 1989;
/// global error O(h^p), textbook numerical analysis, from memory).
#[test]
fn fixed_step_convergence_is_third_order() {
    let e1 = error_at_2ms(100e-6);
    let e2 = error_at_2ms(50e-6);
    let e3 = error_at_2ms(25e-6);
    let r1 = e1 / e2;
    let r2 = e2 / e3;
    assert!((6.5..9.5).contains(&r1), "ratio {r1} ({e1:e} → {e2:e})");
    assert!((6.5..9.5).contains(&r2), "ratio {r2} ({e2:e} → {e3:e})");
    let p = (r2).log2();
    eprintln!("fixed-step errors {e1:e} {e2:e} {e3:e}, ratios {r1:.2} {r2:.2}");
    assert!((2.7..3.3).contains(&p), "observed order {p}");
}

/// Comparator time to threshold `t = −τ·ln(1 − I_th/I∞)` (textbook RL
/// closed form, from memory).
#[test]
fn comparator_trip_time_matches_closed_form() {
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, diode()));
    let ith = 0.08;
    b.set_comparator(
        0,
        Some(Comparator {
            threshold_amps: ith,
            sense: SensePoint::Switch,
        }),
    )
    .unwrap();
    b.advance_ns(1_000_000);
    b.set_gate(0, true).unwrap();
    b.advance_ns(10_000_000);
    let r = r_on_loop(RCOIL);
    let tau = LCOIL / r;
    let expect_ns = -tau * (1.0 - ith * r / 24.0).ln() * 1e9;
    let st = b.stats(0).unwrap();
    let got = st.comparator_ns_since_on().unwrap() as f64;
    eprintln!("comparator: {got} ns vs closed form {expect_ns:.1} ns");
    assert!((got - expect_ns).abs() < 100.0, "{got} vs {expect_ns}");
    // A 1 MHz timer capture is the floor of the µs count.
    let ticks = st.comparator_ticks_since_on(1_000_000).unwrap();
    assert_eq!(ticks, (got / 1000.0).floor() as u64);
    // Re-armed at the next switch-on.
    b.set_gate(0, false).unwrap();
    b.advance_ns(20_000_000);
    assert_eq!(b.stats(0).unwrap().comparator_trip_ns.map(|_| ()), Some(()));
    b.set_gate(0, true).unwrap();
    assert_eq!(b.stats(0).unwrap().comparator_trip_ns, None);
    b.advance_ns(10_000_000);
    let again = b.stats(0).unwrap().comparator_ns_since_on().unwrap() as f64;
    assert!((again - expect_ns).abs() < 100.0);
}

/// Ideal constant-voltage clamp Vc across coil + wiring (R): after switch-off
/// `i(t) = (I0 + Vc/R)·e^(−t/τ) − Vc/R`, zero at `t0 = τ·ln(1 + R·I0/Vc)`,
/// clamp energy `Vc·∫i dt = Vc·(τ·I0 − Vc·t0/R)` (textbook first-order
/// closed form, from memory).
#[test]
fn constant_voltage_clamp_decay_matches_closed_form() {
    let vc = 30.0;
    let clamp = Clamp::Tvs {
        breakdown_volts: vc,
        dynamic_ohms: 0.0,
    };
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, clamp));
    b.set_gate(0, true).unwrap();
    b.advance_ns(20_000_000);
    let i0 = b.probe(0).unwrap().coil_amps;
    let e_before = b.energy(0).unwrap();
    b.start_recording(5_000);
    let t_off = b.now_ns();
    b.set_gate(0, false).unwrap();
    b.advance_ns(5_000_000);
    let r = RCOIL + RWIRE;
    let tau = LCOIL / r;
    let t0 = tau * (1.0 + r * i0 / vc).ln();
    let rec = b.recording().unwrap();
    let mut worst: f64 = 0.0;
    for s in rec.channel(0) {
        let t = (s.t_ns - t_off) as f64 * 1e-9;
        if t < t0 - 10e-6 {
            let expect = (i0 + vc / r) * (-t / tau).exp() - vc / r;
            worst = worst.max((s.coil_amps - expect).abs() / i0);
        }
    }
    eprintln!("constant-voltage clamp: worst {worst:e}");
    assert!(worst < 1e-6, "worst {worst:e}");
    let tz = (b.stats(0).unwrap().current_zero_ns.unwrap() - t_off) as f64 * 1e-9;
    // Landing tolerance: the current floor (1 µA) at a slope of ≈ Vc/L.
    assert!((tz - t0).abs() < 1e-6, "zero at {tz} vs {t0}");
    let e = b.energy(0).unwrap();
    let e_clamp = e.clamp - e_before.clamp;
    let expect_clamp = vc * (tau * i0 - vc * t0 / r);
    eprintln!("zero at {tz:e} vs {t0:e}; clamp energy {e_clamp:e} vs {expect_clamp:e}");
    assert!(
        rel(e_clamp, expect_clamp) < 1e-5,
        "{e_clamp} vs {expect_clamp}"
    );
    // Peak switch voltage: supply + clamp (textbook, from memory).
    assert!((b.stats(0).unwrap().peak_switch_volts - (24.0 + vc)).abs() < 1e-6);
}

/// Resistor clamp Rc behind an ideal diode (the TVS law with `Vbr = 0`):
/// `i = I0·e^(−t(R+Rc)/L)`, switch sees `V + I0·Rc` at t = 0+, and the
/// energy divides as `E_clamp / E_winding+wiring = Rc / R` (textbook, from
/// memory).
#[test]
fn resistor_clamp_matches_closed_form() {
    let rc = 100.0;
    let clamp = Clamp::Tvs {
        breakdown_volts: 0.0,
        dynamic_ohms: rc,
    };
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, clamp));
    b.set_gate(0, true).unwrap();
    b.advance_ns(20_000_000);
    let i0 = b.probe(0).unwrap().coil_amps;
    let e0 = b.energy(0).unwrap();
    b.reset_stats(0).unwrap();
    b.set_gate(0, false).unwrap();
    let r = RCOIL + RWIRE;
    let tau = LCOIL / (r + rc);
    b.advance_ns(1_000_000);
    let i1 = b.probe(0).unwrap().coil_amps;
    let expect = i0 * (-1e-3 / tau).exp();
    assert!(rel(i1, expect) < 1e-6, "{i1} vs {expect}");
    b.advance_ns(30_000_000);
    let e = b.energy(0).unwrap();
    let e_cl = e.clamp - e0.clamp;
    let e_r = (e.winding + e.wiring) - (e0.winding + e0.wiring);
    eprintln!(
        "resistor clamp: i {i1:e} vs {expect:e}; ratio {} vs {}",
        e_cl / e_r,
        rc / r
    );
    assert!(rel(e_cl / e_r, rc / r) < 1e-5, "ratio {}", e_cl / e_r);
    let peak = b.stats(0).unwrap().peak_switch_volts;
    assert!((peak - (24.0 + i0 * rc)).abs() < 1e-6, "{peak}");
}
