//! Monte-Carlo campaign timing: N invented valve coils with part spread,
//! one 30 ms pulse each plus the decay, single core.
//!
//! `cargo run --release -p coilwise-host-tests --example monte_carlo -- [N] [max_step_us]`
//!
//! Prints the wall time per coil and the spread of the results. Wall time
//! is machine-dependent: this is a measurement script, not a test.

use coilwise_host_tests::{
    demo, Bench, Comparator, Mechanics, Prng, SensePoint, SolverSettings, Supply,
};
use std::time::Instant;

struct Outcome {
    trip_ns: Option<u64>,
    operated_ns: Option<u64>,
    released_after_off_ns: Option<u64>,
    peak_switch_volts: f64,
}

fn run_one(rng: &mut Prng, settings: SolverSettings) -> Outcome {
    let mut p = demo::valve_24v();
    p.coil.resistance_ohms *= rng.normal(1.0, 0.05);
    let l = rng.normal(1.0, 0.07);
    p.coil.inductance_released_henries *= l;
    p.coil.inductance_operated_henries *= l;
    if let Mechanics::Moving(ref mut a) = p.mechanics {
        a.preload_newtons *= rng.normal(1.0, 0.08);
        a.mass_kg *= rng.normal(1.0, 0.05);
    }
    let volts = 21.6 + 4.8 * rng.uniform();
    let mut b = Bench::single(Supply::ideal(volts), p, settings).expect("valid invented parts");
    b.set_comparator(
        0,
        Some(Comparator {
            threshold_amps: 0.06,
            sense: SensePoint::Switch,
        }),
    )
    .unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(30_000_000);
    let st_on = b.stats(0).unwrap();
    b.set_gate(0, false).unwrap();
    b.advance_ns(30_000_000);
    let st = b.stats(0).unwrap();
    Outcome {
        trip_ns: st_on.comparator_ns_since_on(),
        operated_ns: st_on.operated_ns,
        released_after_off_ns: st.released_ns.map(|t| t - 30_000_000),
        peak_switch_volts: st.peak_switch_volts,
    }
}

fn campaign(n: usize, settings: SolverSettings) -> (f64, Vec<Outcome>) {
    let mut rng = Prng::new(2024);
    let t = Instant::now();
    let out: Vec<Outcome> = (0..n).map(|_| run_one(&mut rng, settings)).collect();
    (t.elapsed().as_secs_f64(), out)
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let n: usize = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(10_000);
    let steps: Vec<f64> = match args.get(2).and_then(|s| s.parse::<f64>().ok()) {
        Some(us) => vec![us],
        None => vec![10.0, 25.0, 50.0],
    };
    let mut reference: Option<Vec<Outcome>> = None;
    for us in steps {
        let settings = SolverSettings::with_max_step(us * 1e-6);
        let (secs, out) = campaign(n, settings);
        let operated = out.iter().filter(|o| o.operated_ns.is_some()).count();
        let released = out
            .iter()
            .filter(|o| o.released_after_off_ns.is_some())
            .count();
        let peak = out.iter().map(|o| o.peak_switch_volts).fold(0.0, f64::max);
        println!(
            "max step {us:>4} µs: {n} coils in {secs:.2} s = {:.1} µs/coil; operated {operated}, released {released}, max switch {peak:.2} V",
            secs / n as f64 * 1e6
        );
        if let Some(r) = &reference {
            let mut d_trip = 0i64;
            let mut d_op = 0i64;
            let mut d_rel = 0i64;
            for (a, b) in r.iter().zip(out.iter()) {
                let diff = |x: Option<u64>, y: Option<u64>| match (x, y) {
                    (Some(x), Some(y)) => (x as i64 - y as i64).abs(),
                    (None, None) => 0,
                    _ => i64::MAX,
                };
                d_trip = d_trip.max(diff(a.trip_ns, b.trip_ns));
                d_op = d_op.max(diff(a.operated_ns, b.operated_ns));
                d_rel = d_rel.max(diff(a.released_after_off_ns, b.released_after_off_ns));
            }
            println!("   vs 10 µs: worst Δ comparator {d_trip} ns, Δ operate {d_op} ns, Δ release {d_rel} ns");
        } else {
            reference = Some(out);
        }
    }
}
