//! Tests of the baseline: record, learning, comparison.

use super::*;
use crate::diagnosis::band::tests::valve_design;
use crate::diagnosis::band::{Conditions, SupplyReading};
use crate::diagnosis::fit::tests::Noise;
use crate::diagnosis::fit::{fit_response, FitOptions};
use crate::diagnosis::sample::Sampling;
use crate::physics::circuit::TemperatureRange;
use crate::units::{Amps, Volts};
extern crate std;
use proptest::prelude::*;
use std::vec::Vec;

#[test]
fn crc32_matches_the_published_check_value() {
    // CRC-32 (IEEE 802.3, as in zlib/PNG): check value of "123456789" is 0xCBF43926 (the CRC
    // catalogue's "check" entry for CRC-32/ISO-HDLC; from memory) and of "" is 0.
    assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
    assert_eq!(crc32(b""), 0);
    // "The quick brown fox jumps over the lazy dog" → 0x414FA339 (a widely quoted test vector
    // of the same CRC; from memory).
    assert_eq!(
        crc32(b"The quick brown fox jumps over the lazy dog"),
        0x414F_A339
    );
    // The table form equals the bitwise definition on every byte string tried.
    let bitwise = |bytes: &[u8]| {
        let mut crc = 0xFFFF_FFFFu32;
        for &b in bytes {
            crc ^= u32::from(b);
            for _ in 0..8 {
                crc = (crc >> 1) ^ (0xEDB8_8320 & (crc & 1).wrapping_neg());
            }
        }
        !crc
    };
    let data: Vec<u8> = (0..300u32).map(|i| (i * 37 + 11) as u8).collect();
    for n in 0..data.len() {
        assert_eq!(crc32(&data[..n]), bitwise(&data[..n]));
    }
}

/// 64 counts of the invented valve (winding `r_w` Ω at `v` volts, inductance `l`) on the probe
/// sampling, with 1 count RMS noise, an initial current `i0` A.
fn pulse(r_w: f64, l: f64, v: f64, i0: f64, rng: &mut Noise) -> Vec<u16> {
    let r_on = r_w + 1.0;
    let (i_inf, tau) = (v / r_on, l / r_on);
    let apc = 0.1 / 4095.0;
    (1..=64)
        .map(|k| {
            let t = k as f64 * 15e-6;
            let i = i_inf - (i_inf - i0) * (-t / tau).exp();
            (i / apc + rng.normal()).round().clamp(0.0, 4095.0) as u16
        })
        .collect()
}

fn sampling() -> Sampling {
    Sampling::adc(Seconds::from_micros(15.0), 12, Amps::new(0.1))
        .unwrap()
        .with_first_sample(Seconds::from_micros(15.0))
        .unwrap()
        .with_noise(1.0)
        .unwrap()
}

fn at(v: f32, t: f32) -> Expected {
    let c = Conditions {
        supply: Some(SupplyReading::new(Volts::new(v), 0.01).unwrap()),
        winding_temperature: Some(
            TemperatureRange::new(Celsius::new(t - 5.0), Celsius::new(t + 5.0)).unwrap(),
        ),
    };
    Expected::new(&valve_design(), &c).unwrap()
}

/// Learns a coil of winding `r20` Ω (at 20 °C) and `l` H from four pulses at 20 °C, 24 V.
fn learned(r20: f64, l: f64, rng: &mut Noise) -> Result<Baseline, LearnError> {
    let mut learn = Learning::new();
    let e = at(24.0, 20.0);
    for _ in 0..4 {
        let c = pulse(r20, l, 24.0, 0.0, rng);
        let f = fit_response(&c, &sampling(), &FitOptions::default()).unwrap();
        learn.add(&f, &e, Some(Celsius::new(20.0)), &Criteria::default());
    }
    learn.finish(3)
}

fn judge_at(b: &Baseline, r_w: f64, l: f64, t: f32, i0: f64, rng: &mut Noise) -> Finding {
    judge_with(b, r_w, l, t, i0, rng, &Criteria::default())
}

/// A first-order coil declared as such: no eddy path, no saturation within its current range
/// (the plant of these tests is first order).
fn first_order() -> Criteria {
    Criteria {
        fast_slope: 0.0,
        fast_tau: 0.0,
        slow_tau: 0.0,
        ..Criteria::default()
    }
}

fn judge_with(
    b: &Baseline,
    r_w: f64,
    l: f64,
    t: f32,
    i0: f64,
    rng: &mut Noise,
    criteria: &Criteria,
) -> Finding {
    let c = pulse(r_w, l, 24.0, i0, rng);
    let f = fit_response(&c, &sampling(), &FitOptions::default()).unwrap();
    judge_baseline(&f, b, &at(24.0, t), Some(Celsius::new(t)), criteria).finding
}

#[test]
fn record_round_trip_and_every_corruption_is_an_error() {
    let mut rng = Noise::new(11);
    let b = learned(185.0, 0.31, &mut rng).unwrap();
    let rec = b.encode();
    assert_eq!(Baseline::decode(&rec), Ok(b));
    // Every single-bit flip is caught (CRC-32 detects all 1-bit errors; common practice).
    for byte in 0..RECORD_LEN {
        for bit in 0..8 {
            let mut bad = rec;
            bad[byte] ^= 1 << bit;
            assert!(Baseline::decode(&bad).is_err(), "flip {byte}.{bit}");
        }
    }
    assert_eq!(
        Baseline::decode(&[0xFF; RECORD_LEN]),
        Err(RecordError::NoMarker)
    );
    assert_eq!(
        Baseline::decode(&rec[..39]),
        Err(RecordError::Length { found: 39 })
    );
    let mut v2 = rec;
    v2[2] = 2;
    assert_eq!(
        Baseline::decode(&v2),
        Err(RecordError::Version { found: 2 })
    );
    // A consistent checksum over a nonsense field is still refused.
    let mut nan = rec;
    nan[8..12].copy_from_slice(&f32::NAN.to_le_bytes());
    let crc = crc32(&nan[..36]);
    nan[36..].copy_from_slice(&crc.to_le_bytes());
    assert_eq!(Baseline::decode(&nan), Err(RecordError::Field));
}

#[test]
fn a_faulty_coil_is_never_learned() {
    let mut rng = Noise::new(12);
    // 25 % shorted turns: R × 0.75, L × 0.5625.
    assert!(matches!(
        learned(135.0, 0.30 * 0.5625, &mut rng),
        Err(LearnError::Refused(Finding::ShortedTurns))
    ));
    assert_eq!(
        Learning::new().finish(1),
        Err(LearnError::TooFewPulses { have: 0 })
    );
}

#[test]
fn baseline_finds_what_the_bands_cannot() {
    let mut rng = Noise::new(13);
    let b = learned(185.0, 0.31, &mut rng).unwrap();
    assert_eq!(b.pulses(), 4);
    assert!(
        (b.resistance().value() - 185.0).abs() < 185.0 * 0.03,
        "{b:?}"
    );
    // The same coil, 50 K warmer (copper law: R × (1 + 0.00393·40) at 60 °C), with 5 % initial
    // current: healthy.
    let hot = 185.0 * (1.0 + 0.00393 * 40.0);
    for _ in 0..20 {
        assert_eq!(
            judge_at(&b, hot, 0.31, 60.0, 0.005, &mut rng),
            Finding::Healthy
        );
    }
    // +20 % of R_ref in series at 60 °C: named by the baseline of a coil declared first order.
    for _ in 0..20 {
        assert_eq!(
            judge_with(&b, hot + 37.0, 0.31, 60.0, 0.0, &mut rng, &first_order()),
            Finding::HighResistance
        );
    }
    // With the conservative default (a saturating core whose operating current is not known at
    // learning: τ may read up to 69 % long, envelope.rs), +20 % is inside what a healthy coil
    // could show between the two pulses: not named, and not a false alarm either.
    for _ in 0..20 {
        assert_ne!(
            judge_at(&b, hot + 37.0, 0.31, 60.0, 0.0, &mut rng),
            Finding::HighResistance
        );
    }
    // Inductance down 8 % (shorted turns the bands pass): found.
    for _ in 0..20 {
        assert_eq!(
            judge_at(&b, 185.0, 0.31 * 0.92, 20.0, 0.0, &mut rng),
            Finding::ShortedTurns
        );
    }
}

proptest! {
    #[test]
    fn decode_never_panics(bytes in proptest::collection::vec(any::<u8>(), 0..64)) {
        if let Ok(b) = Baseline::decode(&bytes) {
            prop_assert!(b.inductance().value() > 0.0 && b.resistance().value().is_finite());
            prop_assert_eq!(Baseline::decode(&b.encode()), Ok(b));
        }
    }
}
