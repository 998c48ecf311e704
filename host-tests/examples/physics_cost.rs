//! Cost of the extra physics: integrator steps, right-hand-side evaluations
//! and wall time for one 20 ms pulse + 20 ms off of the demo valve (moving
//! armature, diode clamp), plain and with each phenomenon.
//!
//! `cargo run --release -p coilwise-host-tests --example physics_cost`

use std::time::Instant;

use coilwise_host_tests::{
    demo, Bench, CoupledLoop, Fault, Magnetics, Saturation, SolverSettings, Supply,
};

fn main() {
    let p = demo::valve_24v();
    let i_full = 24.0 / (p.coil.resistance_ohms + p.coil.wiring_ohms + p.sense_ohms);
    let tau = p.coil.inductance_released_henries / p.coil.resistance_ohms;
    let le = 0.02 * p.coil.inductance_released_henries;
    let eddy = CoupledLoop {
        ohms: le / (0.1 * tau),
        henries: le,
        coupling: 0.6,
    };
    let sat = Saturation::dropping(0.2, i_full);
    let section = |k: f64, rb: f64| Fault::ShortedTurns {
        fraction: 0.25,
        coupling: k,
        bridge_ohms: rb,
    };
    let cases: [(&str, Magnetics, Option<Fault>); 6] = [
        ("plain coil", Magnetics::LINEAR, None),
        (
            "eddy loop (2 % of L, tau/10, k 0.6)",
            Magnetics {
                eddy: Some(eddy),
                saturation: None,
            },
            None,
        ),
        (
            "saturation (-20 % at full current)",
            Magnetics {
                eddy: None,
                saturation: Some(sat),
            },
            None,
        ),
        (
            "25 % shorted, k 0.9, 0.5 ohm",
            Magnetics::LINEAR,
            Some(section(0.9, 0.5)),
        ),
        (
            "25 % shorted, k 0.98, 0.05 ohm",
            Magnetics::LINEAR,
            Some(section(0.98, 0.05)),
        ),
        (
            "all: eddy + saturation + 25 % shorted k 0.9",
            Magnetics {
                eddy: Some(eddy),
                saturation: Some(sat),
            },
            Some(section(0.9, 0.5)),
        ),
    ];
    println!("| case | steps | rejected | evaluations | µs per pulse |");
    println!("|---|---|---|---|---|");
    for (name, mag, fault) in cases {
        let reps = 50;
        let t0 = Instant::now();
        let mut last = None;
        for _ in 0..reps {
            let mut b = Bench::single(Supply::ideal(24.0), p, SolverSettings::default()).unwrap();
            b.set_magnetics(0, mag).unwrap();
            if let Some(f) = fault {
                b.inject(0, f).unwrap();
            }
            b.set_gate(0, true).unwrap();
            b.advance_ns(20_000_000);
            b.set_gate(0, false).unwrap();
            b.advance_ns(20_000_000);
            last = Some(b.counters());
        }
        let us = t0.elapsed().as_secs_f64() * 1e6 / reps as f64;
        let c = last.unwrap();
        println!(
            "| {name} | {} | {} | {} | {us:.0} |",
            c.steps, c.rejected, c.evaluations
        );
    }
}
