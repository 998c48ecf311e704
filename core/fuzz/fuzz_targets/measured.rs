//! Fuzz the rest of what eats measured data: a measured winding resistance (temperature by the
//! copper law and by the resistance method), a measured supply, and traces from converters of
//! every sample type (`u8`, `i16`, `u32`, `i32`) with an `adc` sampling of any width.
//! Invariant: no panic; every field of every `Ok` finite (see `common.rs`); a temperature inside
//! the copper model's range; the movement estimate's contract.
#![no_main]

use coilwise::diagnosis::{
    detect_movement, fit_rise, Conditions, Criteria, Expected, FitOptions, MovementCriteria,
    Sample, Sampling, SupplyReading,
};
use coilwise::physics::coil::{MAX_WINDING_TEMPERATURE, MIN_WINDING_TEMPERATURE};
use coilwise::physics::heating::temperature_by_resistance;
use coilwise::{Amps, Celsius, Ohms, Seconds, Volts};
use libfuzzer_sys::fuzz_target;

mod common;
use common::{all_finite, check, check_fit, check_movement, design, Bytes};

fn in_copper_range(t: Celsius) {
    assert!(
        t >= MIN_WINDING_TEMPERATURE && t <= MAX_WINDING_TEMPERATURE,
        "{t:?}"
    );
}

fuzz_target!(|data: &[u8]| {
    let mut b = Bytes(data);
    let mode = b.u8();
    let d = design();
    // A measured resistance, both ways to a temperature.
    let r = Ohms::new(b.mostly(200.0));
    if let Ok(t) = d.circuit.coil().temperature_from_resistance(r) {
        in_copper_range(t);
    }
    let (r1, t1) = (Ohms::new(b.mostly(180.0)), Celsius::new(b.mostly(20.0)));
    if let Ok(t) = temperature_by_resistance(r1, t1, r) {
        in_copper_range(t);
    }
    // A measured supply narrows the bands.
    let cond = Conditions {
        supply: SupplyReading::new(Volts::new(b.mostly(24.0)), b.mostly(0.02)).ok(),
        winding_temperature: None,
    };
    if let Ok(e) = Expected::new(&d, &cond) {
        all_finite("expected", &e);
        let v = coilwise::diagnosis::verdict::judge_steady(
            Amps::new(b.f32()),
            &e,
            &Criteria::default(),
        );
        check(&v);
    }
    // A converter of any width and a trace of any sample type.
    let bits = b.u8() % 28;
    let Ok(mut s) = Sampling::adc(Seconds::new(b.mostly(1e-4)), bits, Amps::new(b.mostly(0.4)))
    else {
        return;
    };
    if mode & 1 != 0 {
        if let Ok(z) = s.with_zero(b.mostly(8.0)) {
            s = z;
        }
    }
    if mode & 2 != 0 {
        if let Ok(z) = s.with_first_sample(Seconds::new(b.mostly(1e-4))) {
            s = z;
        }
    }
    let rest = b.0;
    match (mode >> 2) & 3 {
        0 => run(rest, &s),
        1 => run(
            &rest
                .chunks_exact(2)
                .map(|c| i16::from_le_bytes([c[0], c[1]]))
                .collect::<Vec<_>>(),
            &s,
        ),
        2 => run(
            &rest
                .chunks_exact(4)
                .map(|c| u32::from_le_bytes([c[0], c[1], c[2], c[3]]))
                .collect::<Vec<_>>(),
            &s,
        ),
        _ => run(
            &rest
                .chunks_exact(4)
                .map(|c| i32::from_le_bytes([c[0], c[1], c[2], c[3]]))
                .collect::<Vec<_>>(),
            &s,
        ),
    }
});

fn run<S: Sample>(samples: &[S], sampling: &Sampling) {
    if let Ok(f) = fit_rise(samples, sampling, &FitOptions::default()) {
        check_fit(&f);
    }
    if let Ok(m) = detect_movement(samples, sampling, &MovementCriteria::default()) {
        check_movement(&m);
    }
}
