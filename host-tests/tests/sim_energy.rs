//! Energy bookkeeping of the plant at switch-off, per clamp type.

mod sim_common;
use sim_common::*;

use coilwise_host_tests::{
    demo, Bench, ChannelParams, Clamp, DiodeLaw, Snubber, SolverSettings, Supply,
};

/// Charge the coil, switch off, run until the current is gone; return
/// (I0, energy before switch-off, energy after).
fn switch_off_run(
    ch: ChannelParams,
    on_ns: u64,
    off_ns: u64,
) -> (
    f64,
    coilwise_host_tests::Energy,
    coilwise_host_tests::Energy,
    Bench<1>,
) {
    let mut b = bench1(24.0, ch);
    b.set_gate(0, true).unwrap();
    b.advance_ns(on_ns);
    let i0 = b.probe(0).unwrap().coil_amps;
    let e0 = b.energy(0).unwrap();
    b.set_gate(0, false).unwrap();
    b.advance_ns(off_ns);
    let e1 = b.energy(0).unwrap();
    (i0, e0, e1, b)
}

/// Over a switch-off with a fixed armature, the energy into clamp, winding,
/// wiring and switch, less what the supply delivered, equals the stored
/// `½·L·I0²` (conservation of energy; `½·L·I²` for an inductor, textbook,
/// from memory).
#[test]
fn switch_off_energy_equals_half_l_i_squared_for_every_clamp() {
    let clamps = [
        ("diode", Clamp::Diode(DiodeLaw::rectifier())),
        (
            "diode+zener",
            Clamp::DiodeZener {
                diode: DiodeLaw::rectifier(),
                zener_volts: 33.0,
                zener_ohms: 5.0,
            },
        ),
        (
            "diode+resistor",
            Clamp::DiodeResistor {
                diode: DiodeLaw::small_signal(),
                ohms: 220.0,
            },
        ),
        (
            "tvs",
            Clamp::Tvs {
                breakdown_volts: 36.0,
                dynamic_ohms: 1.0,
            },
        ),
        ("none (avalanche)", Clamp::None),
    ];
    for (name, clamp) in clamps {
        let (i0, e0, e1, b) =
            switch_off_run(fixed_channel(RCOIL, LCOIL, clamp), 20_000_000, 40_000_000);
        let stored = 0.5 * LCOIL * i0 * i0;
        let sinks = (e1.clamp - e0.clamp)
            + (e1.winding - e0.winding)
            + (e1.wiring - e0.wiring)
            + (e1.sense - e0.sense)
            + (e1.switch_conduction - e0.switch_conduction)
            + (e1.switch_avalanche - e0.switch_avalanche)
            + (e1.removed_by_events - e0.removed_by_events);
        let supplied = e1.from_rail - e0.from_rail;
        assert_eq!(b.probe(0).unwrap().coil_amps, 0.0, "{name}: current gone");
        let err = (sinks - supplied - stored).abs() / stored;
        eprintln!("{name}: I0 = {i0:.5} A, ½LI² = {stored:.6e} J, residual {err:e}");
        assert!(err < 1e-6, "{name}: residual {err:e}");
        // Only the no-clamp case puts energy into the switch (avalanche).
        let av = e1.switch_avalanche - e0.switch_avalanche;
        if matches!(clamp, Clamp::None) {
            assert!(av > 0.5 * stored, "{name}: avalanche {av}");
        } else {
            assert_eq!(av, 0.0, "{name}");
        }
    }
}

/// Avalanche of an unclamped switch: with the switch at a constant breakdown voltage Vbr,
/// `E_av = Vbr·(τ·I0 − (Va/R)·t_av)` with `Va = Vbr − V`, `t_av = τ·ln(1 + R·I0/Va)` (first-order
/// closed form, textbook, from memory); for small `R·I0/Va` it tends to the UIS rating formula
/// `E = ½·L·I0²·Vbr/(Vbr − V)` (single-pulse unclamped inductive switching, JEDEC JESD24 family; from memory).
#[test]
fn avalanche_energy_matches_uis_formula() {
    // Invented low-resistance test inductor: 0.1 Ω, 5 mH.
    let l = 5e-3;
    let r_coil = 0.1;
    let mut ch = fixed_channel(r_coil, l, Clamp::None);
    ch.coil.wiring_ohms = 0.0;
    ch.sense_ohms = 0.0;
    let vbr = 68.0;
    let (i0, e0, e1, _) = switch_off_run(ch, 1_000_000, 5_000_000);
    let e_av = e1.switch_avalanche - e0.switch_avalanche;
    let r = r_coil; // loop in avalanche: coil only (Rav = 0, no shunt)
    let va = vbr - 24.0;
    let tau = l / r;
    let t_av = tau * (1.0 + r * i0 / va).ln();
    let exact = vbr * (tau * i0 - va / r * t_av);
    let uis = 0.5 * l * i0 * i0 * vbr / va;
    eprintln!("I0 {i0:.4} A: E_av {e_av:.6e}, closed form {exact:.6e}, UIS {uis:.6e}");
    assert!(rel(e_av, exact) < 1e-5, "{e_av} vs {exact}");
    // The UIS formula drops the winding loss: its relative excess is
    // ≈ (2/3)·R·I0/Va to first order (series of the closed form), ≈ 0.7 % here.
    assert!(r * i0 / va < 0.015);
    assert!(rel(e_av, uis) < 0.015, "{e_av} vs UIS {uis}");
    // More energy than was stored: the supply keeps feeding during avalanche.
    assert!(e_av > 0.5 * l * i0 * i0);
}

/// RC snubber: the energy balance closes with the capacitor state, the
/// lightly damped loop rings (current reverses: series RLC with ζ < 1,
/// textbook, from memory), and the capacitor never holds more than the energy that was
/// available (conservation).
#[test]
fn snubber_energy_balance_and_ringing() {
    let mut ch = fixed_channel(RCOIL, LCOIL, Clamp::None);
    ch.snubber = Some(Snubber {
        ohms: 10.0,
        farads: 4.7e-6,
    });
    let mut b = bench1(24.0, ch);
    b.set_gate(0, true).unwrap();
    b.advance_ns(20_000_000);
    let e0 = b.energy(0).unwrap();
    let i0 = b.probe(0).unwrap().coil_amps;
    b.start_recording(5_000);
    b.set_gate(0, false).unwrap();
    b.advance_ns(40_000_000);
    let e1 = b.energy(0).unwrap();
    let err = e1.balance_error_since(&e0).abs() / e0.magnetic_stored;
    eprintln!("snubber: balance residual {err:e}");
    assert!(err < 1e-6);
    let rec = b.recording().unwrap();
    let min_i = rec
        .channel(0)
        .map(|s| s.coil_amps)
        .fold(f64::INFINITY, f64::min);
    // ζ = (R/2)·sqrt(C/L) for the series loop.
    let zeta = 0.5 * (RCOIL + RWIRE + 10.0) * (4.7e-6_f64 / LCOIL).sqrt();
    assert!(zeta < 1.0);
    assert!(min_i < -0.01 * i0, "no reversal: min {min_i}");
    let max_cap = rec
        .channel(0)
        .map(|s| s.node_volts - 24.0)
        .fold(f64::NEG_INFINITY, f64::max);
    let available = e0.magnetic_stored + e0.capacitor_stored;
    assert!(0.5 * 4.7e-6 * max_cap * max_cap < available * 1.0001);
    assert!(e1.snubber_resistor > 0.0 && e1.clamp == 0.0);
}

/// With a moving armature the electrical balance includes the mechanical
/// work `∫F·v dt`, and that work equals kinetic + spring energy + damping and
/// impact losses (conservation of energy, textbook, from memory).
#[test]
fn moving_armature_energy_balance() {
    let mut b = Bench::single(
        Supply::ideal(24.0),
        demo::valve_24v(),
        SolverSettings::default(),
    )
    .unwrap();
    let e0 = b.energy(0).unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(6_000_000); // mid-stroke
    let mid = b.energy(0).unwrap();
    assert!(mid.kinetic > 0.0 && mid.spring > 0.0);
    b.advance_ns(34_000_000);
    let on = b.energy(0).unwrap();
    b.set_gate(0, false).unwrap();
    b.advance_ns(60_000_000);
    let e1 = b.energy(0).unwrap();
    for (name, e) in [("mid-stroke", mid), ("end of pulse", on), ("released", e1)] {
        let el = e.balance_error_since(&e0).abs() / e.from_rail;
        let me = e.mechanical_error_since(&e0).abs() / e1.mechanical_work;
        eprintln!("{name}: electrical residual {el:e}, mechanical residual {me:e}");
        assert!(el < 1e-7, "{name}: {el:e}");
        assert!(me < 1e-6, "{name}: {me:e}");
    }
    assert!(e1.mechanical_work > 0.0);
    assert!(e1.impact > 0.0, "plunger hits its stops");
}

/// Supply side: source energy = source-resistor heat + bulk-capacitor
/// change + what the channels took (conservation of energy).
#[test]
fn shared_supply_energy_balance() {
    let mut b = Bench::new(
        demo::supply_24v(),
        [demo::valve_24v(), demo::valve_24v(), demo::valve_24v()],
        SolverSettings::default(),
    )
    .unwrap();
    let s0 = b.supply_energy();
    for c in 0..3 {
        b.set_gate(c, true).unwrap();
    }
    b.advance_ns(30_000_000);
    for c in 0..3 {
        b.set_gate(c, false).unwrap();
    }
    b.advance_ns(50_000_000);
    let s1 = b.supply_energy();
    let took: f64 = (0..3).map(|c| b.energy(c).unwrap().from_rail).sum();
    assert_eq!(took, b.energy_total().from_rail);
    let lhs = s1.from_source - s0.from_source;
    let rhs = s1.source_resistor - s0.source_resistor + (s1.bulk_stored - s0.bulk_stored) + took;
    eprintln!("supply: source {lhs:e} J, residual {:e}", (lhs - rhs) / lhs);
    assert!(((lhs - rhs) / lhs).abs() < 1e-6);
    for c in 0..3 {
        let e = b.energy(c).unwrap();
        assert!(e.balance_error_since(&Default::default()).abs() < 1e-7 * e.from_rail);
    }
}

/// The energy residual is integration error, not a modelling gap: it falls
/// in proportion to the tolerance (local error control, ≈ 10× per decade;
/// numerical analysis, from memory). Fast invented coil, τ ≈ 47 µs, no clamp.
#[test]
fn energy_residual_scales_with_tolerance() {
    let residual = |rtol: f64| {
        let ch = coilwise_host_tests::ChannelParams {
            coil: coilwise_host_tests::Coil::fixed(420.0, 0.02, 1.0),
            ..fixed_channel(RCOIL, LCOIL, Clamp::None)
        };
        let st = SolverSettings {
            stepping: coilwise_host_tests::Stepping::Adaptive {
                rel_tol: rtol,
                abs_tol_amps: rtol * 0.1,
                max_step_s: 10e-6,
            },
            current_floor_amps: 1e-6,
        };
        let mut b = Bench::single(Supply::ideal(24.0), ch, st).unwrap();
        b.set_gate(0, true).unwrap();
        b.advance_ns(5_000_000);
        let e0 = b.energy(0).unwrap();
        b.set_gate(0, false).unwrap();
        b.advance_ns(5_000_000);
        (b.energy(0).unwrap().balance_error_since(&e0) / e0.magnetic_stored).abs()
    };
    let (a, c) = (residual(1e-7), residual(1e-9));
    eprintln!("residual/stored: {a:e} at rel_tol 1e-7, {c:e} at 1e-9");
    assert!(a < 2e-6);
    assert!(c < a / 30.0);
}
