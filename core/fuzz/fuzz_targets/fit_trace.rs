//! Fuzz the estimator and the trace verdicts: any sampling settings, any samples (u16 counts or
//! raw f32 bit patterns). Invariant: no panic; every field of the fit, the movement estimate and
//! the verdicts finite, times and depths ≥ 0 (see `common.rs`).
#![no_main]

use coilwise::diagnosis::verdict::{judge_actuation, judge_rise, judge_trace};
use coilwise::diagnosis::{
    detect_movement, fit_rise, Conditions, Criteria, Expected, FitOptions, MovementCriteria, Probe,
    Sampling,
};
use coilwise::Seconds;
use libfuzzer_sys::fuzz_target;

mod common;
use common::{check, check_fit, check_movement, design, Bytes};

fuzz_target!(|data: &[u8]| {
    let mut b = Bytes(data);
    let mode = b.u8();
    let period = b.mostly(1e-4);
    let Ok(mut sampling) = Sampling::new(Seconds::new(period), b.mostly(1e-4)) else {
        return;
    };
    for (bit, step) in [(1u8, 0u8), (2, 1), (4, 2), (8, 3)] {
        if mode & bit != 0 {
            let x = b.mostly(match step {
                0 => 1e-4,
                1 => 50.0,
                2 => 4095.0,
                _ => 2.0,
            });
            let next = match step {
                0 => sampling.with_first_sample(Seconds::new(x)),
                1 => sampling.with_zero(x),
                2 => sampling.with_full_scale(x),
                _ => sampling.with_noise(x),
            };
            if let Ok(s) = next {
                sampling = s;
            }
        }
    }
    let options = FitOptions::default().with_refinements(b.u8() % 8);
    let d = design();
    let expected = Expected::new(&d, &Conditions::default()).unwrap();
    let criteria = Criteria::default();
    let rest = b.0;
    if mode & 16 == 0 {
        let samples: Vec<u16> = rest
            .chunks_exact(2)
            .map(|c| u16::from_le_bytes([c[0], c[1]]))
            .collect();
        run(&samples, &sampling, &expected, &criteria, &options);
    } else {
        let samples: Vec<f32> = rest
            .chunks_exact(4)
            .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]))
            .collect();
        run(&samples, &sampling, &expected, &criteria, &options);
    }
    if let Ok(p) = Probe::new(&d, 0.5) {
        let _ = p.sample_period(rest.len());
        let samples: Vec<u16> = rest.iter().map(|&x| x as u16 * 16).collect();
        check(&p.judge(&samples, &sampling, &expected, &criteria, &options));
    }
});

fn run<S: coilwise::diagnosis::Sample>(
    samples: &[S],
    sampling: &Sampling,
    expected: &Expected,
    criteria: &Criteria,
    options: &FitOptions,
) {
    if let Ok(f) = fit_rise(samples, sampling, options) {
        check_fit(&f);
        check(&judge_rise(&f, expected, criteria));
    }
    if let Ok(m) = detect_movement(samples, sampling, &MovementCriteria::default()) {
        check_movement(&m);
    }
    check(&judge_trace(samples, sampling, expected, criteria, options));
    check(&judge_actuation(
        samples, sampling, expected, criteria, options,
    ));
}
