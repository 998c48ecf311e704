//! A small Monte-Carlo population through the plant: every coil's
//! comparator time agrees with its own first-order closed form.

use coilwise_host_tests::{
    demo, Bench, Comparator, Mechanics, Prng, SensePoint, SolverSettings, Supply,
};

/// For each invented coil with part spread (R, L, preload, supply), the time
/// to a 60 mA threshold — reached before the armature moves — is
/// `−τ·ln(1 − I_th/I∞)` with `τ = L_rel/R_total`, `I∞ = V/R_total` (textbook
/// RL closed form, from memory). 400 coils at the coarse campaign step.
#[test]
fn population_threshold_times_match_closed_form() {
    let mut rng = Prng::new(7);
    let ith = 0.06;
    let mut worst: f64 = 0.0;
    let mut spread = (f64::INFINITY, 0.0f64);
    for _ in 0..400 {
        let mut p = demo::valve_24v();
        p.coil.resistance_ohms *= rng.normal(1.0, 0.05);
        let l = rng.normal(1.0, 0.07);
        p.coil.inductance_released_henries *= l;
        p.coil.inductance_operated_henries *= l;
        if let Mechanics::Moving(ref mut a) = p.mechanics {
            a.preload_newtons *= rng.normal(1.0, 0.05);
        }
        let v = 21.6 + 4.8 * rng.uniform();
        let mut b =
            Bench::single(Supply::ideal(v), p, SolverSettings::with_max_step(50e-6)).unwrap();
        b.set_comparator(
            0,
            Some(Comparator {
                threshold_amps: ith,
                sense: SensePoint::Switch,
            }),
        )
        .unwrap();
        b.set_gate(0, true).unwrap();
        b.advance_ns(30_000_000);
        let st = b.stats(0).unwrap();
        let got = st.comparator_ns_since_on().unwrap() as f64 * 1e-9;
        assert!(
            st.moved_ns.unwrap() as f64 * 1e-9 > got,
            "threshold before motion"
        );
        let r = p.coil.resistance_ohms + p.coil.wiring_ohms + 0.05 + p.sense_ohms;
        let tau = p.coil.inductance_released_henries / r;
        let expect = -tau * (1.0 - ith * r / v).ln();
        worst = worst.max((got - expect).abs());
        spread = (spread.0.min(got), spread.1.max(got));
    }
    eprintln!(
        "400 coils: threshold times {:.4}..{:.4} ms, worst |Δt| {:.0} ns",
        spread.0 * 1e3,
        spread.1 * 1e3,
        worst * 1e9
    );
    assert!(worst < 300e-9);
    assert!(spread.1 > 1.3 * spread.0, "the population really spreads");
}
