//! Tests of the fit.

use super::*;
extern crate std;
use std::vec::Vec;

/// Noise-free model samples (f64 evaluation, rounded once to f32).
pub(crate) fn model(i_inf: f64, tau: f64, period: f64, first: f64, n: usize) -> Vec<f32> {
    (0..n)
        .map(|k| {
            let t = first + k as f64 * period;
            (i_inf * -(-t / tau).exp_m1()) as f32
        })
        .collect()
}

fn amps_sampling(period: f32) -> Sampling {
    Sampling::new(Seconds::new(period), 1.0).unwrap()
}

#[test]
fn recovers_a_noise_free_rise() {
    // Long window (3τ), short window (early rise, 30 % of I∞), late first sample.
    for &(tau, period, first) in &[
        (2.0e-3, 1.0e-4, 0.0),
        (2.0e-3, 1.0e-5, 0.0),
        (1.0e-3, 5.0e-5, 2.0e-4),
    ] {
        let s = model(0.12, tau, period, first, 64);
        let sm = amps_sampling(period as f32)
            .with_first_sample(Seconds::new(first as f32))
            .unwrap();
        let f = fit_rise(&s, &sm, &FitOptions::default()).unwrap();
        let rel = |a: f32, b: f64| ((a as f64 - b) / b).abs();
        assert!(
            rel(f.tau.value(), tau) < 2e-5,
            "tau {} vs {tau}",
            f.tau.value()
        );
        assert!(rel(f.final_current.value(), 0.12) < 2e-5);
        assert!(rel(f.slope, 0.12 / tau) < 2e-5);
        assert!(f.quality.noise_ratio < 3.0);
    }
}

#[test]
fn integer_counts_with_offset() {
    let s: Vec<u16> = model(3000.0, 2.0e-3, 1.0e-4, 0.0, 64)
        .iter()
        .map(|&c| (c + 100.0).round() as u16)
        .collect();
    let sm = Sampling::adc(Seconds::new(1.0e-4), 12, Amps::new(0.4095))
        .unwrap()
        .with_zero(100.0)
        .unwrap();
    let f = fit_rise(&s, &sm, &FitOptions::default()).unwrap();
    assert!((f.final_current.value() - 0.3).abs() < 1e-3);
    assert!((f.tau.value() - 2.0e-3).abs() < 2e-5);
    assert!(f.quality.noise_ratio < 1.5);
}

#[test]
fn implausible_traces_are_trace_faults() {
    let sm = Sampling::adc(Seconds::new(1.0e-4), 12, Amps::new(0.4095)).unwrap();
    let o = FitOptions::default();
    assert_eq!(
        fit_rise::<u16>(&[], &sm, &o),
        Err(TraceFault::TooFewSamples { usable: 0 })
    );
    assert_eq!(
        fit_rise(&[4095u16; 64], &sm, &o),
        Err(TraceFault::SaturatedEarly { index: 0 })
    );
    assert!(matches!(
        fit_rise(&[0u16; 64], &sm, &o),
        Err(TraceFault::Flat { .. })
    ));
    assert!(matches!(
        fit_rise(&[1234u16; 64], &sm, &o),
        Err(TraceFault::Flat { .. })
    ));
    let mut up: Vec<u16> = (0..64).map(|k| (k * 40) as u16).collect();
    up[30] = 100;
    assert!(matches!(
        fit_rise(&up, &sm, &o),
        Err(TraceFault::NotMonotone { index: 30 })
    ));
    let f: Vec<f32> = (0..64).map(|k| k as f32 * 0.01 - 0.3).collect();
    let fm = Sampling::new(Seconds::new(1e-4), 1.0)
        .unwrap()
        .with_noise(0.001)
        .unwrap();
    assert!(matches!(
        fit_rise(&f, &fm, &o),
        Err(TraceFault::BelowZero { index: 0 })
    ));
    let mut nan = model(0.1, 1e-3, 1e-4, 0.0, 32);
    nan[5] = f32::NAN;
    assert_eq!(
        fit_rise(&nan, &fm, &o),
        Err(TraceFault::NotFinite { index: 5 })
    );
}

#[test]
fn newton_square_root_is_accurate() {
    // Against f64 `sqrt` (IEEE 754 correctly rounded) over the normal f32 range.
    let mut x = f32::MIN_POSITIVE;
    while x < 1.0e38 {
        let r = sqrt(x) as f64;
        let exact = (x as f64).sqrt();
        assert!(((r - exact) / exact).abs() < 2e-7, "{x}: {r} vs {exact}");
        x *= 1.37;
    }
    assert_eq!(sqrt(0.0), 0.0);
    assert_eq!(sqrt(-1.0), 0.0);
    assert_eq!(sqrt(f32::NAN), 0.0);
    assert_eq!(sqrt(f32::INFINITY), f32::INFINITY);
}

#[test]
fn integer_check_matches_the_float_check() {
    // u16 takes the integer survey (EXACT_COUNT), u32 the f32 one: same counts, same result,
    // for rising, dithered, falling, saturating and too-short traces.
    let sm = Sampling::adc(Seconds::new(1.0e-4), 12, Amps::new(0.4095))
        .unwrap()
        .with_zero(37.0)
        .unwrap()
        .with_noise(0.6)
        .unwrap();
    let o = FitOptions::default();
    let rise = model(3000.0, 2.0e-3, 1.0e-4, 0.0, 64);
    let mut traces: Vec<Vec<u16>> = Vec::new();
    for (i_inf, dither) in [
        (3000.0f32, 0.0f32),
        (3000.0, 1.6),
        (8000.0, 0.7),
        (30.0, 0.9),
    ] {
        traces.push(
            rise.iter()
                .enumerate()
                .map(|(k, &c)| {
                    let d = dither * [0.3f32, -0.9, 0.1, -0.6, 0.8][k % 5];
                    (c * i_inf / 3000.0 + 37.0 + d).round().clamp(0.0, 4095.0) as u16
                })
                .collect(),
        );
    }
    let mut dip = traces[0].clone();
    dip[40] -= 300;
    traces.push(dip);
    let mut early = traces[0].clone();
    early[3] = 4095;
    traces.push(early);
    let mut late = traces[1].clone();
    late[50] = 4095;
    late[60] = 10;
    traces.push(late);
    traces.push(traces[1][..5].to_vec());
    for t in &traces {
        let wide: Vec<u32> = t.iter().map(|&c| u32::from(c)).collect();
        assert_eq!(fit_rise(t, &sm, &o), fit_rise(&wide, &sm, &o), "{t:?}");
    }
    assert!(fit_rise(&traces[1], &sm, &o).is_ok());
    assert!(fit_rise(&traces[2], &sm, &o).unwrap().quality.truncated);
    assert!(matches!(
        fit_rise(&traces[4], &sm, &o),
        Err(TraceFault::NotMonotone { index: 40 })
    ));
    assert_eq!(
        fit_rise(&traces[5], &sm, &o),
        Err(TraceFault::SaturatedEarly { index: 3 })
    );
    assert_eq!(fit_rise(&traces[6], &sm, &o).unwrap().quality.samples, 50);
}

#[test]
fn saturation_ends_the_window() {
    let sm = Sampling::adc(Seconds::new(1.0e-4), 12, Amps::new(0.4095)).unwrap();
    let s: Vec<u16> = model(8000.0, 2.0e-3, 1.0e-4, 0.0, 64)
        .iter()
        .map(|&c| c.round().min(4095.0) as u16)
        .collect();
    let f = fit_rise(&s, &sm, &FitOptions::default()).unwrap();
    assert!(f.quality.truncated);
    assert!(f.quality.samples < 64);
    assert!((f.final_current.value() - 0.8).abs() < 0.8 * 0.01);
}
