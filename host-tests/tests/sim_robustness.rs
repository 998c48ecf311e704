//! Random configurations and random drive sequences: no NaN, no hang, and
//! the energy books close (conservation of energy) for every run.

use coilwise_host_tests::{
    Armature, Bench, ChannelParams, Clamp, Coil, CoupledLoop, DiodeLaw, Fault, Magnetics,
    Mechanics, Prng, Saturation, Snubber, SolverSettings, Supply, Switch, Topology,
};

fn random_channel(r: &mut Prng) -> ChannelParams {
    let l_rel = 0.02 + 0.8 * r.uniform();
    let clamp = match (r.uniform() * 5.0) as u32 {
        0 => Clamp::None,
        1 => Clamp::Diode(DiodeLaw::rectifier()),
        2 => Clamp::DiodeZener {
            diode: DiodeLaw::small_signal(),
            zener_volts: 5.0 + 30.0 * r.uniform(),
            zener_ohms: 5.0 * r.uniform(),
        },
        3 => Clamp::DiodeResistor {
            diode: DiodeLaw::rectifier(),
            ohms: 1000.0 * r.uniform(),
        },
        _ => Clamp::Tvs {
            breakdown_volts: 40.0 * r.uniform(),
            dynamic_ohms: 2.0 * r.uniform(),
        },
    };
    ChannelParams {
        coil: Coil {
            resistance_ohms: 20.0 + 400.0 * r.uniform(),
            inductance_released_henries: l_rel,
            inductance_operated_henries: l_rel * (1.0 + 2.0 * r.uniform()),
            wiring_ohms: 3.0 * r.uniform(),
        },
        mechanics: if r.uniform() < 0.3 {
            Mechanics::Fixed {
                position: r.uniform(),
            }
        } else {
            Mechanics::Moving(Armature {
                stroke_m: 0.3e-3 + 2e-3 * r.uniform(),
                mass_kg: 1e-3 + 10e-3 * r.uniform(),
                preload_newtons: 0.5 * r.uniform(),
                spring_newtons_per_m: 600.0 * r.uniform(),
                damping_newton_s_per_m: r.uniform(),
                restitution: 0.6 * r.uniform(),
            })
        },
        switch: if r.uniform() < 0.5 {
            Switch::small_mosfet()
        } else {
            Switch::small_npn()
        },
        sense_ohms: r.uniform(),
        clamp,
        snubber: if r.uniform() < 0.2 {
            Some(Snubber {
                ohms: 10.0 + 200.0 * r.uniform(),
                farads: 0.1e-6 + 5e-6 * r.uniform(),
            })
        } else {
            None
        },
        topology: if r.uniform() < 0.5 {
            Topology::LowSide
        } else {
            Topology::HighSide
        },
    }
}

#[test]
fn random_benches_stay_finite_and_balanced() {
    let mut r = Prng::new(99);
    let mut worst: f64 = 0.0;
    let mut worst_supply: f64 = 0.0;
    for run in 0..25 {
        let chans = [random_channel(&mut r), random_channel(&mut r)];
        let supply = if r.uniform() < 0.5 {
            Supply::ideal(6.0 + 24.0 * r.uniform())
        } else {
            Supply {
                volts: 6.0 + 24.0 * r.uniform(),
                source_ohms: 0.05 + 1.0 * r.uniform(),
                bulk_farads: 100e-6 + 1e-3 * r.uniform(),
            }
        };
        let mut b = Bench::new(supply, chans, SolverSettings::default()).unwrap();
        let s0 = b.supply_energy();
        for _ in 0..12 {
            let ch = (r.uniform() * 2.0) as usize;
            match (r.uniform() * 8.0) as u32 {
                0..=3 => b.set_gate(ch, r.uniform() < 0.6).unwrap(),
                4 => b
                    .set_pwm(ch, 50_000, (50_000.0 * r.uniform()) as u64)
                    .unwrap(),
                5 => b
                    .inject(
                        ch,
                        match (r.uniform() * 4.0) as u32 {
                            0 => Fault::ShortedTurnsLumped {
                                fraction: 0.5 * r.uniform(),
                            },
                            1 => Fault::SeriesResistance {
                                ohms: 100.0 * r.uniform(),
                            },
                            2 => Fault::StuckArmature,
                            _ => Fault::Open,
                        },
                    )
                    .unwrap(),
                6 => b.clear_faults(ch).unwrap(),
                _ => b.set_supply_volts(5.0 + 25.0 * r.uniform()).unwrap(),
            }
            b.advance_ns((r.uniform() * 3e6) as u64);
            for c in 0..2 {
                let p = b.probe(c).unwrap();
                for v in [
                    p.coil_amps,
                    p.switch_volts,
                    p.node_volts,
                    p.position,
                    p.rail_volts,
                ] {
                    assert!(v.is_finite(), "run {run}: {p:?}");
                }
                assert!((0.0..=1.0).contains(&p.position));
            }
        }
        for c in 0..2 {
            let e = b.energy(c).unwrap();
            let scale = e.from_rail.abs().max(e.dissipated()).max(1e-9);
            let err = e.balance_error_since(&Default::default()).abs() / scale;
            // The books close to the integration tolerance: a few × rel_tol
            // (1e-7) of the energy moved (see sim_energy for the scaling).
            assert!(err < 1e-5, "run {run} ch {c}: residual {err:e} {e:?}");
            worst = worst.max(err);
        }
        let s1 = b.supply_energy();
        let took = b.energy_total().from_rail;
        let lhs = s1.from_source - s0.from_source;
        let rhs = s1.source_resistor - s0.source_resistor + s1.bulk_stored - s0.bulk_stored + took;
        let moved = lhs
            .abs()
            .max((s1.bulk_stored - s0.bulk_stored).abs())
            .max(s1.source_resistor - s0.source_resistor)
            .max(1e-9);
        let serr = (lhs - rhs).abs() / moved;
        assert!(serr <= 1e-5, "run {run}: supply {lhs} vs {rhs}");
        worst_supply = worst_supply.max(serr);
    }
    eprintln!("25 random benches: worst energy residual {worst:e} (channels), {worst_supply:e} (supply) of the energy moved");
}

/// Coupled loops, saturation and set currents injected at random times
/// into random benches (random clamps, snubbers, moving armatures, PWM,
/// opens, clears): every reported quantity stays finite and the energy books
/// close (conservation of energy) to the integration tolerance.
#[test]
fn random_coupled_loops_and_saturation_stay_finite_and_balanced() {
    let mut r = Prng::new(2026);
    let mut worst: f64 = 0.0;
    for run in 0..25 {
        let chans = [random_channel(&mut r), random_channel(&mut r)];
        let mut b = Bench::new(
            Supply::ideal(6.0 + 24.0 * r.uniform()),
            chans,
            SolverSettings::default(),
        )
        .unwrap();
        for _ in 0..12 {
            let ch = (r.uniform() * 2.0) as usize;
            let l = chans[ch].coil.inductance_released_henries;
            let i_full = 24.0 / chans[ch].coil.resistance_ohms;
            match (r.uniform() * 9.0) as u32 {
                0..=2 => b.set_gate(ch, r.uniform() < 0.6).unwrap(),
                3 => b
                    .set_pwm(ch, 50_000, (50_000.0 * r.uniform()) as u64)
                    .unwrap(),
                4 => b
                    .set_magnetics(
                        ch,
                        Magnetics {
                            eddy: (r.uniform() < 0.7).then(|| CoupledLoop {
                                ohms: 0.1 + 10.0 * r.uniform(),
                                henries: l * (0.005 + 0.1 * r.uniform()),
                                coupling: 0.95 * r.uniform(),
                            }),
                            saturation: (r.uniform() < 0.7).then(|| Saturation {
                                drop: 0.8 * r.uniform(),
                                knee_amps: i_full * (0.2 + 2.0 * r.uniform()),
                            }),
                        },
                    )
                    .unwrap(),
                5 => b
                    .inject(
                        ch,
                        Fault::ShortedTurns {
                            fraction: 0.05 + 0.9 * r.uniform(),
                            coupling: 0.5 + 0.49 * r.uniform(),
                            bridge_ohms: 5.0 * r.uniform(),
                        },
                    )
                    .unwrap(),
                6 => b.set_current(ch, i_full * 0.2 * r.uniform()).unwrap_or(()),
                7 => b.inject(ch, Fault::Open).unwrap(),
                _ => b.clear_faults(ch).unwrap(),
            }
            b.advance_ns((r.uniform() * 3e6) as u64);
            for c in 0..2 {
                let p = b.probe(c).unwrap();
                for v in [
                    p.coil_amps,
                    p.section_amps,
                    p.eddy_amps,
                    p.switch_volts,
                    p.node_volts,
                    p.position,
                    p.magnetic_force_newtons,
                ] {
                    assert!(v.is_finite(), "run {run}: {p:?}");
                }
                assert!((0.0..=1.0).contains(&p.position));
                let e = b.energy(c).unwrap();
                assert!(e.magnetic_stored.is_finite() && e.magnetic_stored >= -1e-12);
            }
        }
        for c in 0..2 {
            let e = b.energy(c).unwrap();
            let scale = e.from_rail.abs().max(e.dissipated()).max(1e-9);
            let err = e.balance_error_since(&Default::default()).abs() / scale;
            assert!(err < 1e-5, "run {run} ch {c}: residual {err:e} {e:?}");
            worst = worst.max(err);
        }
    }
    eprintln!("25 random benches with coupled loops and saturation: worst energy residual {worst:e} of the energy moved");
}
