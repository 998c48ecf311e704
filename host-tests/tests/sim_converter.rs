//! Converter errors of the simulated ADC, checked statistically: offset of
//! either sign, clipping at zero and full scale, gain error, noise variance,
//! sampling-start latency and jitter.
//!
//! Reference facts: a uniform quantiser adds `1/12` LSB² of variance to a
//! signal whose noise is at least about half an LSB RMS, and its mean is
//! then unbiased (Widrow's quantisation theorem, from memory); the mean of a
//! sample of `n` draws has standard deviation `σ/√n`, and a sample variance
//! has relative standard deviation `√(2/(n − 1))` for Gaussian data
//! (textbook sampling statistics, from memory); a uniform draw on `[0, J]`
//! has mean `J/2` and variance `J²/12`.

mod sim_common;
use sim_common::*;

use coilwise_host_tests::{AdcConfig, Clamp, Comparator, ComparatorErrors, Prng, Rig, SensePoint};

const N: usize = 40_000;

/// Mean and sample variance of `N` conversions of `amps`.
fn stats(cfg: &AdcConfig, amps: f64, seed: u64) -> (f64, f64) {
    let mut rng = Prng::new(seed);
    let codes: Vec<f64> = (0..N).map(|_| cfg.convert(amps, &mut rng) as f64).collect();
    let mean = codes.iter().sum::<f64>() / N as f64;
    let var = codes.iter().map(|c| (c - mean) * (c - mean)).sum::<f64>() / (N - 1) as f64;
    (mean, var)
}

/// 12 bits over 0.5 A: 8192 counts per ampere.
fn adc() -> AdcConfig {
    AdcConfig::new(0.5)
}

#[test]
fn offset_of_either_sign_and_noise_variance() {
    let amps = 1000.3 / 8192.0; // 1000.3 counts ideal
    for &offset in &[-3.7, -1.0, 0.0, 2.5, 4.0] {
        for &sd in &[1.0, 2.0] {
            let cfg = adc().with_errors(offset, 0.0, sd, 11);
            let (mean, var) = stats(&cfg, amps, 99);
            let want_mean = 1000.3 + offset;
            let want_var = sd * sd + 1.0 / 12.0;
            let se = (want_var / N as f64).sqrt();
            eprintln!(
                "offset {offset:+}, noise {sd}: mean {mean:.4} (want {want_mean:.4}, ±{se:.4}), var {var:.4} (want {want_var:.4})"
            );
            assert!((mean - want_mean).abs() < 5.0 * se);
            let rel_sd = (2.0 / (N - 1) as f64).sqrt();
            assert!((var / want_var - 1.0).abs() < 5.0 * rel_sd);
        }
    }
}

#[test]
fn gain_error_scales_the_slope() {
    for &g in &[-0.01, 0.004, 0.01] {
        let cfg = adc().with_errors(1.0, g, 1.0, 5);
        let (m1, _) = stats(&cfg, 500.0 / 8192.0, 1);
        let (m2, _) = stats(&cfg, 3500.0 / 8192.0, 2);
        let slope = (m2 - m1) / 3000.0;
        let se = (2.0 * (1.0 + 1.0 / 12.0) / N as f64).sqrt() / 3000.0;
        eprintln!(
            "gain error {g:+}: slope {slope:.6} (want {:.6} ± {se:.1e})",
            1.0 + g
        );
        assert!((slope - (1.0 + g)).abs() < 5.0 * se);
    }
}

#[test]
fn unipolar_converter_clips_at_zero_and_full_scale() {
    // Zero current with a −3 count offset and 1 count of noise: the code is
    // 0 whenever offset + noise < 0.5, i.e. with probability Φ(3.5) ≈ 0.99977.
    let cfg = adc().with_errors(-3.0, 0.0, 1.0, 3);
    let mut rng = Prng::new(8);
    let zeros = (0..N).filter(|_| cfg.convert(0.0, &mut rng) == 0).count();
    let frac = zeros as f64 / N as f64;
    eprintln!("offset −3, noise 1, zero current: {frac:.5} of codes at 0");
    assert!(frac > 0.999 && frac <= 1.0);
    // Noise-free: a small current below the offset reads exactly zero.
    let quiet = adc().with_errors(-4.0, 0.0, 0.0, 0);
    let mut rng = Prng::new(1);
    assert_eq!(quiet.convert(3.0 / 8192.0, &mut rng), 0);
    assert_eq!(quiet.convert(10.0 / 8192.0, &mut rng), 6);
    // Above full scale (and with a positive offset near it): 2^12 − 1.
    let hi = adc().with_errors(4.0, 0.01, 2.0, 4);
    let mut rng = Prng::new(2);
    assert!((0..1000).all(|_| hi.convert(0.499, &mut rng) == 4095));
    assert_eq!(hi.convert(f64::NAN, &mut rng), 0);
    assert_eq!(hi.convert(1e9, &mut rng), 4095);
    // Domain of the gain error.
    assert!(
        Rig::new(bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None)))
            .adc(0, adc().with_errors(0.0, -1.0, 0.0, 0))
            .is_err()
    );
}

#[test]
fn start_jitter_is_uniform_over_its_span() {
    let cfg = adc().with_start_delay(2_000, 5_000);
    let mut rng = Prng::new(21);
    let d: Vec<f64> = (0..N)
        .map(|_| cfg.start_delay_ns(&mut rng) as f64)
        .collect();
    let mean = d.iter().sum::<f64>() / N as f64;
    let var = d.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / (N - 1) as f64;
    let (lo, hi) = d
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), &x| (a.min(x), b.max(x)));
    // Whole ns on [2000, 7000]: discrete uniform, mean 4500, variance (5001² − 1)/12.
    let want_var = (5001.0f64 * 5001.0 - 1.0) / 12.0;
    let se = (want_var / N as f64).sqrt();
    eprintln!("start delay: mean {mean:.1} ns (±{se:.1}), var {var:.0} (want {want_var:.0}), span [{lo}, {hi}]");
    assert!(lo >= 2_000.0 && hi <= 7_000.0);
    assert!((mean - 4_500.0).abs() < 5.0 * se);
    // Uniform variance: 4th central moment 9/5·σ⁴ gives a relative SD √(0.8/n).
    assert!((var / want_var - 1.0).abs() < 5.0 * (0.8 / N as f64).sqrt());
    // No jitter: the fixed latency, no draw.
    let fixed = adc().with_start_delay(3_000, 0);
    let mut a = Prng::new(4);
    assert_eq!(fixed.start_delay_ns(&mut a), 3_000);
    assert_eq!(a, Prng::new(4));
}

/// A capture started with a latency of exactly one sample interval reads,
/// sample for sample, what an ideal capture reads one interval later: the
/// latency shifts the trace in time and nothing else.
#[test]
fn start_latency_shifts_the_captured_rise() {
    let interval = 20_000u64;
    let run = |cfg: AdcConfig| {
        let rig = Rig::new(bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None)));
        rig.bench_mut().set_gate(0, true).unwrap();
        let mut adc = rig.adc(0, cfg).unwrap();
        let mut buf = [0u16; 64];
        adc.capture(&mut buf, interval);
        buf
    };
    let full = AdcConfig::new(0.2);
    let ideal = run(full);
    let late = run(full.with_start_delay(interval, 0));
    assert!(ideal[1] > ideal[0] + 10 && ideal[63] > ideal[1] + 1000);
    for k in 0..63 {
        assert_eq!(late[k], ideal[k + 1], "sample {k}");
    }
    // Half an interval late: every sample lies between its two ideal neighbours.
    let half = run(full.with_start_delay(interval / 2, 0));
    for k in 0..63 {
        assert!(half[k] >= ideal[k] && half[k] <= ideal[k + 1], "sample {k}");
    }
}

/// Comparator errors: an input offset moves the trip to the time the rise
/// reaches `threshold + offset`, `t = −τ·ln(1 − I/I∞)` (first-order RL step
/// response, textbook, from memory); a propagation delay adds itself.
#[test]
fn comparator_offset_and_delay_move_the_trip() {
    let r = r_on_loop(RCOIL);
    let (i_inf, tau) = (24.0 / r, LCOIL / r);
    let th = 0.05;
    let trip = |errors: ComparatorErrors| {
        let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None));
        b.set_comparator(
            0,
            Some(Comparator {
                threshold_amps: th,
                sense: SensePoint::Coil,
            }),
        )
        .unwrap();
        b.set_comparator_errors(0, errors).unwrap();
        b.set_gate(0, true).unwrap();
        b.advance_ns(10_000_000);
        b.stats(0).unwrap().comparator_ns_since_on().unwrap() as f64
    };
    let t_at = |i: f64| -tau * (1.0 - i / i_inf).ln() * 1e9;
    let ideal = trip(ComparatorErrors::NONE);
    let late = trip(ComparatorErrors {
        offset_amps: 0.0,
        delay_ns: 1_500,
    });
    let high = trip(ComparatorErrors {
        offset_amps: 0.004,
        delay_ns: 0,
    });
    let low = trip(ComparatorErrors {
        offset_amps: -0.004,
        delay_ns: 700,
    });
    eprintln!(
        "comparator: ideal {ideal} ns (law {:.0}), +1.5 µs delay {late}, +4 mA {high} (law {:.0}), −4 mA +0.7 µs {low} (law {:.0})",
        t_at(th),
        t_at(th + 0.004),
        t_at(th - 0.004) + 700.0
    );
    assert_eq!(late, ideal + 1_500.0);
    // The crossing is interpolated linearly inside a step of at most 10 µs:
    // time error up to h²/(8τ) on an exponential rise, plus 1 ns of rounding.
    let bound = (10e-6f64).powi(2) / (8.0 * tau) * 1e9 + 1.0;
    assert!((ideal - t_at(th)).abs() < bound);
    assert!((high - t_at(th + 0.004)).abs() < bound, "{bound}");
    assert!((low - t_at(th - 0.004) - 700.0).abs() < bound);
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None));
    let bad = ComparatorErrors {
        offset_amps: f64::NAN,
        delay_ns: 0,
    };
    assert!(b.set_comparator_errors(0, bad).is_err());
}
