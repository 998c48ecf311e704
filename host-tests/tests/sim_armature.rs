//! Moving armature: back-EMF dip, force law, operate and release.

use coilwise_host_tests::{
    demo, ArmatureState, Bench, EventKind, Fault, Mechanics, SolverSettings, Supply,
};

fn valve_bench() -> Bench<1> {
    Bench::single(
        Supply::ideal(24.0),
        demo::valve_24v(),
        SolverSettings::default(),
    )
    .unwrap()
}

/// A moving armature raises L while the current rises: the back-EMF
/// `i·dL/dt` makes the current fall and rise again (the current derivative
/// changes sign) (textbook, from memory). A stuck armature rises
/// monotonically.
#[test]
fn moving_armature_dips_and_stuck_one_does_not() {
    let mut b = valve_bench();
    b.start_recording(20_000);
    b.set_gate(0, true).unwrap();
    b.advance_ns(40_000_000);
    let rec = b.take_recording().unwrap();
    let t_dip = rec.rise_dip(0, 1e-4).expect("dip expected");
    let st = b.stats(0).unwrap();
    let moved = st.moved_ns.unwrap();
    let operated = st.operated_ns.unwrap();
    eprintln!("moved {moved} ns, current peak {t_dip} ns, operated {operated} ns");
    // The peak of the current is after motion starts, before contact.
    assert!(moved < t_dip && t_dip < operated);
    // The current minimum is at (or right at) contact: after it L is constant.
    let (t_min, _) = rec
        .channel(0)
        .filter(|s| s.t_ns > t_dip && s.t_ns < operated + 2_000_000)
        .map(|s| (s.t_ns, s.coil_amps))
        .fold((0, f64::INFINITY), |a, b| if b.1 < a.1 { b } else { a });
    assert!(
        (t_min as i64 - operated as i64).abs() <= 20_000,
        "{t_min} vs {operated}"
    );

    let mut s = valve_bench();
    s.inject(0, Fault::StuckArmature).unwrap();
    s.start_recording(20_000);
    s.set_gate(0, true).unwrap();
    s.advance_ns(40_000_000);
    let rec = s.take_recording().unwrap();
    assert_eq!(rec.rise_dip(0, 1e-9), None);
    let v: Vec<f64> = rec.channel(0).map(|x| x.coil_amps).collect();
    assert!(v.windows(2).all(|w| w[1] >= w[0]), "monotonic rise");
    assert_eq!(s.armature(0).unwrap(), ArmatureState::Released);
    assert_eq!(s.stats(0).unwrap().operated_ns, None);
}

/// The armature starts to move when the virtual-work force
/// `F = ½·i²·dL/dp` reaches the spring preload, i.e. at
/// `i = sqrt(2·F0·stroke / (dL/dx at x = 0))`; it leaves the operated stop
/// at switch-off when the force falls to `F0 + k·stroke` (virtual work,
/// textbook, from memory). With the reluctance law of the crate,
/// `dL/dx = L_op·k/(1 + k·(1 − x))²`.
#[test]
fn motion_starts_and_ends_at_virtual_work_currents() {
    let p = demo::valve_24v();
    let Mechanics::Moving(a) = p.mechanics else {
        unreachable!()
    };
    let l_rel = p.coil.inductance_released_henries;
    let l_op = p.coil.inductance_operated_henries;
    let k = l_op / l_rel - 1.0;
    let dldx0 = l_op * k / ((1.0 + k) * (1.0 + k));
    let dldx1 = l_op * k;
    let i_start = (2.0 * a.preload_newtons * a.stroke_m / dldx0).sqrt();
    let f_full = a.preload_newtons + a.spring_newtons_per_m * a.stroke_m;
    let i_drop = (2.0 * f_full * a.stroke_m / dldx1).sqrt();

    let mut b = valve_bench();
    b.start_recording(1_000); // 1 µs resolution on events
    b.set_gate(0, true).unwrap();
    b.advance_ns(40_000_000);
    b.set_gate(0, false).unwrap();
    b.advance_ns(30_000_000);
    let rec = b.take_recording().unwrap();
    let t_move = rec.first_event(0, EventKind::ArmatureMoving, 0).unwrap();
    let t_leave = rec
        .first_event(0, EventKind::ArmatureLeftOperated, 0)
        .unwrap();
    // The event is stamped at the end of the step in which it happened
    // (≤ 1 µs late here): compare with the current one sample earlier too.
    let i_m = rec.current_at(0, t_move).unwrap();
    let i_m0 = rec.current_at(0, t_move - 1_000).unwrap();
    let i_l = rec.current_at(0, t_leave).unwrap();
    let i_l0 = rec.current_at(0, t_leave - 1_000).unwrap();
    eprintln!(
        "start: {i_m0:.6}..{i_m:.6} A vs {i_start:.6}; leave: {i_l:.6}..{i_l0:.6} A vs {i_drop:.6}"
    );
    assert!(i_m0 <= i_start * (1.0 + 1e-6) && i_start <= i_m * (1.0 + 1e-6));
    assert!(i_l <= i_drop * (1.0 + 1e-6) && i_drop <= i_l0 * (1.0 + 1e-6));
    // And it really came back.
    assert!(rec.released_before(0, 70_000_000));
    assert_eq!(b.armature(0).unwrap(), ArmatureState::Released);
}

/// Below the pull-in current the armature never moves: a supply so low that
/// `I∞ < i_start` leaves it at rest (virtual work, as above).
#[test]
fn low_supply_never_pulls_in() {
    let p = demo::valve_24v();
    let r_total = p.coil.resistance_ohms + p.coil.wiring_ohms + 0.05 + p.sense_ohms;
    let mut b = valve_bench();
    // I∞ at 12 V ≈ 66 mA, below the ≈ 78.6 mA start current of the demo valve.
    b.set_supply_volts(12.0).unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(60_000_000);
    let pr = b.probe(0).unwrap();
    assert!((pr.coil_amps - 12.0 / r_total).abs() < 1e-6);
    assert_eq!(pr.position, 0.0);
    assert_eq!(b.stats(0).unwrap().moved_ns, None);
}

/// A bouncing armature (restitution > 0) comes to rest on the stop and loses
/// energy at each impact; the bookkeeping still closes (conservation).
#[test]
fn restitution_bounces_then_settles() {
    let mut p = demo::valve_24v();
    if let Mechanics::Moving(ref mut a) = p.mechanics {
        a.restitution = 0.5;
    }
    let mut b = Bench::single(Supply::ideal(24.0), p, SolverSettings::default()).unwrap();
    b.start_recording(50_000);
    let e0 = b.energy(0).unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(40_000_000);
    let rec = b.take_recording().unwrap();
    let arrivals = rec
        .events_of(0)
        .filter(|e| e.kind == EventKind::ArmatureOperated)
        .count();
    assert!(arrivals >= 2, "bounced {arrivals} times");
    assert_eq!(b.armature(0).unwrap(), ArmatureState::Operated);
    let e = b.energy(0).unwrap();
    assert!(e.balance_error_since(&e0).abs() < 1e-7 * e.from_rail);
    assert!(e.mechanical_error_since(&e0).abs() < 1e-6 * e.mechanical_work);
}
