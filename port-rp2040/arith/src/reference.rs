//! The comparator threshold: a PWM output at 10 bits through a two-stage RC filter.
//!
//! Slice 3 runs at TOP = 1023 (122.07 kHz at 125 MHz). Filter (README wiring): 1 kΩ / 100 nF,
//! then 10 kΩ / 10 nF (the second stage ten times the impedance of the first, so it barely
//! loads it). Ripple at the filter output at 50 % duty is about 1 mV peak-to-peak (≈ 1 count of
//! the 12-bit ADC at 3.3 V); settling is [`SETTLE_TICKS`].

use coilwise_driver::SenseErrorKind;

/// Reference PWM steps per period (TOP + 1): 10 bits.
pub const REF_STEPS: u16 = 1024;
/// Largest trip level, converter counts (12 bits).
pub const MAX_LEVEL: u16 = 4095;
/// First filter stage: 1 kΩ, 100 nF.
pub const R1_OHMS: f64 = 1_000.0;
/// First stage capacitor, F.
pub const C1_FARADS: f64 = 100e-9;
/// Second filter stage: 10 kΩ, 10 nF.
pub const R2_OHMS: f64 = 10_000.0;
/// Second stage capacitor, F.
pub const C2_FARADS: f64 = 10e-9;
/// Time the reference needs after a level change, ticks (µs): the filter's step response is
/// within 1/4096 of its end value well before (checked in the tests from the exact two-pole
/// response of the ladder).
pub const SETTLE_TICKS: u32 = 1_500;

/// The compare value for a trip level of `level` 12-bit counts: `round(level · 1024 / 4096)`
/// (a compare of 1024 is always high, i.e. 4096 counts' worth); the level set is within 2
/// counts of the one asked. `LevelOutOfRange` above 4095.
pub const fn compare_for(level: u16) -> Result<u16, SenseErrorKind> {
    if level > MAX_LEVEL {
        return Err(SenseErrorKind::LevelOutOfRange);
    }
    Ok((level + 2) / 4)
}

/// The trip level, in 12-bit counts, that compare value `c` sets: `4c`.
pub const fn level_of(compare: u16) -> u32 {
    compare as u32 * 4
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_level_is_set_within_two_counts() {
        for level in 0..=MAX_LEVEL {
            let c = compare_for(level).unwrap();
            assert!(c <= REF_STEPS, "level {level}: compare {c}");
            let err = level_of(c) as i32 - i32::from(level);
            assert!(err.abs() <= 2, "level {level}: set {}", level_of(c));
        }
        assert_eq!(compare_for(4096), Err(SenseErrorKind::LevelOutOfRange));
        assert_eq!(compare_for(u16::MAX), Err(SenseErrorKind::LevelOutOfRange));
    }

    /// Step response of the RC ladder R1-C1-R2-C2 (textbook two-pole network, from memory):
    /// H(s) = 1 / (a s² + b s + 1), a = R1C1·R2C2, b = R1C1 + R2C2 + R1C2; with real poles
    /// p1, p2 the residual of a unit step is (p2·e^{p1 t} − p1·e^{p2 t}) / (p2 − p1).
    fn residual(t: f64) -> f64 {
        let a = R1_OHMS * C1_FARADS * R2_OHMS * C2_FARADS;
        let b = R1_OHMS * C1_FARADS + R2_OHMS * C2_FARADS + R1_OHMS * C2_FARADS;
        let disc = b * b - 4.0 * a;
        assert!(disc > 0.0, "the ladder has real poles");
        let p1 = (-b + libm::sqrt(disc)) / (2.0 * a);
        let p2 = (-b - libm::sqrt(disc)) / (2.0 * a);
        (p2 * libm::exp(p1 * t) - p1 * libm::exp(p2 * t)) / (p2 - p1)
    }

    #[test]
    fn reference_settles_to_a_quarter_count_in_settle_time() {
        // A full-scale step must be within a quarter of one 12-bit count.
        let t = f64::from(SETTLE_TICKS) * 1e-6;
        let r = residual(t);
        assert!(r.abs() < 0.25 / 4096.0, "residual {r:e} after {t} s");
        // The response starts at 1 (nothing moved) and decays monotonically.
        assert!((residual(0.0) - 1.0).abs() < 1e-12);
        assert!(residual(100e-6) > residual(200e-6));
    }

    #[test]
    fn settle_time_is_of_the_order_the_filter_needs() {
        // Two thirds of the settle time still leave more than a quarter count: SETTLE_TICKS is
        // sized by the filter, not padded (and a slower filter would fail the test above).
        let r = residual(f64::from(SETTLE_TICKS) * 1e-6 / 1.5);
        assert!(r.abs() > 0.25 / 4096.0, "{r:e}");
    }
}
