use coilwise_host_tests::*;
fn main() {
    let mut b = Bench::single(Supply::ideal(24.0), demo::valve_24v(), SolverSettings::default()).unwrap();
    b.start_recording(100_000);
    let e0 = b.energy(0).unwrap();
    b.set_gate(0, true).unwrap();
    let t = std::time::Instant::now();
    b.advance_ns(40_000_000);
    let eon = b.energy(0).unwrap();
    println!("after on: {:?}", b.probe(0).unwrap());
    b.set_gate(0, false).unwrap();
    b.advance_ns(60_000_000);
    let el = t.elapsed();
    let e1 = b.energy(0).unwrap();
    println!("stats {:?}", b.stats(0).unwrap());
    println!("counters {:?} elapsed {:?}", b.counters(), el);
    println!("energy {:?}", e1);
    println!("balance on {:e} total {:e} mech {:e}", eon.balance_error_since(&e0), e1.balance_error_since(&e0), e1.mechanical_error_since(&e0));
    let r = b.recording().unwrap();
    println!("dip at {:?}", r.rise_dip(0, 1e-5));
    for e in &r.events { println!("{:?}", e); }
    for s in r.channel(0).step_by(10).take(60) { println!("{} {:.5} {:.3} {:.3}", s.t_ns/1000, s.coil_amps, s.switch_volts, s.position); }
}
