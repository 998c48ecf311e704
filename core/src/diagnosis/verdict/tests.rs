//! Tests of the verdicts.

use super::*;
use crate::diagnosis::band::tests::valve_design;
use crate::diagnosis::band::ThresholdBand;
use crate::diagnosis::band::{Conditions, SupplyReading};
use crate::diagnosis::fit::{fit_rise, FitOptions, FitQuality, RiseFit, TraceFault};
use crate::diagnosis::sample::Sampling;
use crate::physics::circuit::TemperatureRange;
use crate::time::{Instant, TickRate};
use crate::units::Volts;
extern crate std;
use proptest::prelude::*;
use std::vec::Vec;

/// A 12-bit converter reading 0.25 A at full scale, 64 samples 75 µs apart (invented).
fn adc() -> Sampling {
    Sampling::adc(Seconds::from_micros(75.0), 12, Amps::new(0.25))
        .unwrap()
        .with_noise(0.5)
        .unwrap()
}

/// Closed-form counts of a coil with winding `r_w` Ω and `l` H at `v` volts (the valve's
/// wiring, sense and MOSFET added), with a deterministic ±1 count dither.
fn counts(r_w: f64, l: f64, v: f64, n: usize) -> Vec<u16> {
    let r_on = r_w + 0.4 + 0.5 + 0.1;
    let (i_inf, tau) = (v / r_on, l / r_on);
    let apc = 0.25 / 4095.0;
    (0..n)
        .map(|k| {
            let t = (k as f64) * 75e-6;
            let dither = [0.3, -0.4, 0.1, -0.2, 0.45][k % 5];
            ((i_inf * -(-t / tau).exp_m1() / apc + dither).round()).clamp(0.0, 4095.0) as u16
        })
        .collect()
}

fn at_20c() -> Conditions {
    Conditions {
        supply: Some(SupplyReading::new(Volts::new(24.0), 0.01).unwrap()),
        winding_temperature: Some(
            TemperatureRange::new(Celsius::new(15.0), Celsius::new(25.0)).unwrap(),
        ),
    }
}

fn judge(c: &[u16], cond: &Conditions) -> Verdict {
    let e = Expected::new(&valve_design(), cond).unwrap();
    judge_trace(c, &adc(), &e, &Criteria::default(), &FitOptions::default())
}

#[test]
fn a_nominal_coil_is_healthy_with_sensible_estimates() {
    let v = judge(&counts(180.0, 0.30, 24.0, 64), &at_20c());
    assert_eq!(v.finding, Finding::Healthy, "{v:?}");
    let e = v.estimates;
    // Resistance to ±2 %, inductance to ±2 %, temperature to ±5 K of the invented truth.
    assert!((e.resistance.unwrap().value() - 180.0).abs() < 3.6, "{e:?}");
    assert!((e.inductance.unwrap().value() - 0.30).abs() < 0.006);
    assert!((e.temperature.unwrap().value() - 20.0).abs() < 5.0);
    let q = e.quality.unwrap();
    assert!(q.noise_ratio < 2.0 && q.rel_sd_tau < 0.01);
}

#[test]
fn named_faults() {
    // Shorted turns, 25 %: R × 0.75, L × 0.75² (inductance goes with turns squared).
    let v = judge(&counts(135.0, 0.30 * 0.5625, 24.0, 64), &at_20c());
    assert_eq!(v.finding, Finding::ShortedTurns, "{v:?}");
    // A connector adding 90 Ω (+50 %) at a known temperature. The window covers 99 % of the rise,
    // so the eddy allowance (sized for a diagnostic pulse's 30 %) has shrunk to nothing.
    let v = judge(&counts(270.0, 0.30, 24.0, 64), &at_20c());
    assert_eq!(v.finding, Finding::HighResistance, "{v:?}");
    // On the first 9 samples (34 % of the rise) the full allowance applies: a healthy coil with
    // an eddy path of 5 % of the current can shorten τ as much, so the same +50 % is not named;
    // a coil declared free of eddy paths (no allowance) is.
    let head = &counts(270.0, 0.30, 24.0, 64)[..9];
    let e = Expected::new(&valve_design(), &at_20c()).unwrap();
    let no_eddy = Criteria {
        fast_slope: 0.0,
        fast_tau: 0.0,
        ..Criteria::default()
    };
    let o = FitOptions::default();
    let with = judge_trace(head, &adc(), &e, &Criteria::default(), &o);
    let without = judge_trace(head, &adc(), &e, &no_eddy, &o);
    assert_ne!(with.finding, Finding::HighResistance, "{with:?}");
    assert_eq!(without.finding, Finding::HighResistance, "{without:?}");
    // A sagging 17 V supply that nobody measured.
    let none = Conditions::default();
    let v = judge(&counts(180.0, 0.30, 17.0, 64), &none);
    assert_eq!(v.finding, Finding::SupplyLow, "{v:?}");
    // The same with a reading: the coil itself is fine, the supply is not.
    let low = Conditions {
        supply: Some(SupplyReading::new(Volts::new(17.0), 0.01).unwrap()),
        ..at_20c()
    };
    assert_eq!(
        judge(&counts(180.0, 0.30, 17.0, 64), &low).finding,
        Finding::SupplyLow
    );
    assert_eq!(judge(&[0u16; 64], &at_20c()).finding, Finding::OpenCircuit);
    assert_eq!(
        judge(&[4095u16; 64], &at_20c()).finding,
        Finding::ShortCircuit
    );
    let Finding::SensorImplausible(TraceFault::Flat { level }) =
        judge(&[2000u16; 64], &at_20c()).finding
    else {
        panic!("a flat mid-scale trace must be a sensor fault");
    };
    assert!((level.value() - 2000.0 * 0.25 / 4095.0).abs() < 1e-6);
    // Erratic sensor: a rise with every fourth sample reading 600 counts low.
    let mut erratic = counts(180.0, 0.30, 24.0, 64);
    for k in (3..64).step_by(4) {
        erratic[k] = erratic[k].saturating_sub(600);
    }
    assert!(matches!(
        judge(&erratic, &at_20c()).finding,
        Finding::SensorImplausible(_)
    ));
}

#[test]
fn comparator_readings() {
    let d = valve_design();
    let cond = Conditions::default();
    let e = Expected::new(&d, &cond).unwrap();
    let band = ThresholdBand::new(&d, &cond, Amps::new(0.05)).unwrap();
    let c = Criteria::default();
    let mid = Seconds::new(0.5 * (band.time.min.value() + band.time.max.value()));
    let j = |r| judge_threshold(r, &band, None, &e, &c).finding;
    assert_eq!(j(ThresholdReading::Crossed(mid)), Finding::Healthy);
    assert_eq!(
        j(ThresholdReading::Crossed(Seconds::new(
            band.time.min.value() * 0.7
        ))),
        Finding::ShortedTurns
    );
    assert_eq!(
        j(ThresholdReading::Crossed(Seconds::new(1e-6))),
        Finding::ShortCircuit
    );
    assert_eq!(
        j(ThresholdReading::Crossed(Seconds::new(
            band.time.max.value() * 1.5
        ))),
        Finding::SlowRise
    );
    assert_eq!(
        j(ThresholdReading::NotCrossed {
            waited: Seconds::new(band.time.max.value() * 0.5)
        }),
        Finding::CannotTell(Undetermined::NotYet)
    );
    assert_eq!(
        j(ThresholdReading::NotCrossed {
            waited: Seconds::new(1.0)
        }),
        Finding::OpenCircuit
    );
    assert!(matches!(
        j(ThresholdReading::Crossed(Seconds::new(-1.0))),
        Finding::SensorImplausible(TraceFault::BadTime)
    ));
    // With a steady reading of a nominal coil at 24 V, 20 °C: healthy, with τ back.
    let r_on = 180.0 + 1.0;
    let (i_inf, tau) = (24.0 / r_on, 0.30 / r_on);
    let t = tau * libm::logf(i_inf / (i_inf - 0.05));
    let v = judge_threshold(
        ThresholdReading::Crossed(Seconds::new(t)),
        &band,
        Some(Amps::new(i_inf)),
        &e,
        &c,
    );
    assert_eq!(v.finding, Finding::Healthy);
    assert!((v.estimates.tau.unwrap().value() - tau).abs() < 1e-3 * tau);
    // Steady current only.
    let s = |i: f32| judge_steady(Amps::new(i), &e, &c).finding;
    assert_eq!(s(0.13), Finding::Healthy);
    assert_eq!(s(0.0), Finding::OpenCircuit);
    assert_eq!(s(0.05), Finding::HighResistance);
    assert_eq!(s(0.3), Finding::ShortedTurns);
    assert_eq!(s(2.0), Finding::ShortCircuit);
    assert!(matches!(s(f32::NAN), Finding::SensorImplausible(_)));
}

#[test]
fn threshold_readings_from_wrapping_instants() {
    let rate = TickRate::new(1_000_000).unwrap();
    let on = Instant(u32::MAX - 99);
    let r = ThresholdReading::from_instants(rate, on, Some(Instant(900)), Instant(2000)).unwrap();
    assert_eq!(r, ThresholdReading::Crossed(Seconds::new(1000e-6)));
    assert!(
        ThresholdReading::from_instants(rate, on, Some(Instant(u32::MAX - 200)), Instant(5))
            .is_err()
    );
    assert!(ThresholdReading::from_instants(rate, Instant(100), None, Instant(50)).is_err());
}

proptest! {
    #[test]
    fn never_healthy_below_the_quality_threshold(
        slope in 1.0f32..1000.0,
        tau in 1e-4f32..1e-2,
        ratio in 0.0f32..20.0,
        sd_s in 0.0f32..0.5,
        sd_t in 0.0f32..0.5,
    ) {
        let e = Expected::new(&valve_design(), &Conditions::default()).unwrap();
        let c = Criteria::default();
        let fit = RiseFit {
            slope,
            tau: Seconds::new(tau),
            final_current: Amps::new(slope * tau),
            quality: FitQuality {
                samples: 64, truncated: false, rms_residual: Amps::new(0.0),
                noise_ratio: ratio, rel_sd_slope: sd_s, rel_sd_tau: sd_t,
                rel_sd_final: sd_s + sd_t, correlation: 0.0, rise_covered: 0.5,
                peak: Amps::new(0.1),
            },
        };
        let v = judge_rise(&fit, &e, &c);
        if ratio > c.max_noise_ratio || sd_s > c.max_rel_sd || sd_t > c.max_rel_sd {
            prop_assert_ne!(v.finding, Finding::Healthy);
        }
    }

    #[test]
    fn noise_free_rises_are_recovered_to_f32_precision(
        i_inf in 0.01f64..10.0,
        tau in 1e-4f64..1e-1,
        span in 0.3f64..5.0,
        first in 0.0f64..1.0,
        n in 16usize..=128,
    ) {
        // `span`: window length in τ; `first`: first sample offset in periods.
        let period = span * tau / n as f64;
        let s = crate::diagnosis::fit::tests::model(i_inf, tau, period, first * period, n);
        let sm = Sampling::new(Seconds::new(period as f32), 1.0).unwrap()
            .with_first_sample(Seconds::new((first * period) as f32)).unwrap();
        let f = fit_rise(&s, &sm, &FitOptions::default().with_refinements(4)).unwrap();
        let rel = |a: f32, b: f64| ((a as f64 - b) / b).abs();
        // f32 precision: the samples carry 2⁻²⁴ relative rounding, amplified by the
        // conditioning of a short window (≈ 1/span²).
        let tol = 3e-5 / (span * span).min(1.0);
        prop_assert!(rel(f.tau.value(), tau) < tol, "tau {} vs {}", f.tau.value(), tau);
        prop_assert!(rel(f.final_current.value(), i_inf) < tol);
        prop_assert!(rel(f.slope, i_inf / tau) < 3e-5);
    }

    #[test]
    fn any_counts_give_a_verdict_without_nan(
        raw in proptest::collection::vec(any::<u16>(), 0..80),
    ) {
        let v = judge(&raw, &at_20c());
        let e = v.estimates;
        for x in [e.final_current.map(|a| a.value()), e.tau.map(|t| t.value()),
                  e.resistance.map(|r| r.value()), e.inductance.map(|l| l.value()),
                  e.temperature.map(|t| t.value())].into_iter().flatten() {
            prop_assert!(x.is_finite());
        }
    }

    #[test]
    fn any_floats_give_a_verdict_without_nan(
        raw in proptest::collection::vec(any::<f32>(), 0..80),
    ) {
        let e = Expected::new(&valve_design(), &Conditions::default()).unwrap();
        let sm = Sampling::new(Seconds::new(1e-4), 1.0).unwrap();
        let v = judge_actuation(&raw, &sm, &e, &Criteria::default(), &FitOptions::default());
        if let Some(q) = v.estimates.quality {
            prop_assert!(q.noise_ratio.is_finite() && q.rel_sd_tau.is_finite());
        }
    }
}

#[test]
fn a_smooth_misfit_is_a_shape_and_a_noisy_one_a_sensor() {
    let e = Expected::new(&valve_design(), &at_20c()).unwrap();
    let c = Criteria::default();
    let o = FitOptions::default();
    // A smooth misfit: the rise with an extra ramp of 10 counts a sample from mid-window on
    // (still monotone: a shape no coil model here has; the residuals correlated from sample to
    // sample).
    let mut smooth = counts(180.0, 0.30, 24.0, 64);
    for (k, x) in smooth.iter_mut().enumerate() {
        *x += 10 * k.saturating_sub(32) as u16;
    }
    let v = judge_trace(&smooth, &adc(), &e, &c, &o);
    assert_eq!(v.finding, Finding::ShapeUnexplained, "{v:?}");
    assert!(!v.finding.is_coil_fault());
    // Noise of ±2 counts alternating sample to sample (within the monotone check): not smooth,
    // and 3.5 times the stated 0.5 RMS plus quantisation.
    let mut noisy = counts(180.0, 0.30, 24.0, 64);
    for (k, x) in noisy.iter_mut().enumerate() {
        *x = if k % 2 == 0 { *x + 2 } else { *x - 2 };
    }
    let v = judge_trace(&noisy, &adc(), &e, &c, &o);
    assert_eq!(
        v.finding,
        Finding::SensorImplausible(TraceFault::PoorFit),
        "{v:?}"
    );
}

/// A healthy valve at 20 °C (180 Ω winding, 0.30 H) fitted with an eddy path's worst bias and
/// with saturation's: judged with the default envelope it is healthy; declared first order, the
/// same figures are a fault. The biases are the worst measured on the simulator's diagnostic
/// pulse (`docs/diagnosis.md` §9); the expected figures follow from R = L/τ (arithmetic).
#[test]
fn the_envelope_keeps_a_biased_healthy_coil_healthy() {
    use super::rise::{judge_slope_tau, Allowances};
    let e = Expected::new(&valve_design(), &at_20c()).unwrap();
    let drive = e.nominal_drive().value();
    let r_on = 180.0 + e.external_resistance().value();
    let (slope, tau) = (drive / 0.30, 0.30 / r_on);
    let c = Criteria::default();
    let judged = |s: f32, t: f32, envelope| {
        judge_slope_tau(
            (s, t, s * t * 0.3),
            0.02,
            Some(0.02),
            Allowances {
                envelope,
                r_low_alone: Finding::ShapeUnexplained,
            },
            &e,
            &c,
        )
    };
    assert_eq!(judged(slope, tau, c.envelope(1.0)), Finding::Healthy);
    // Eddy path: slope +34 %, τ −60 % (0.40 of the true τ): R reads 1/(1.34·0.40) = 1.87 × high.
    let eddy = (slope * 1.34, tau * 0.40);
    assert_eq!(judged(eddy.0, eddy.1, c.envelope(1.0)), Finding::Healthy);
    // Declared first order, the same figures are a fault (L = 1/1.34 of the true one, below
    // the band).
    assert_eq!(
        judged(eddy.0, eddy.1, envelope::Envelope::NONE),
        Finding::ShortedTurns
    );
    // The ratio form used before (the true τ allowed 1 + 0.63 times the fitted one, where a τ
    // 60 % low means 1/0.40 = 2.5 times) names the healthy coil's resistance high.
    let old = envelope::Envelope::new((0.34, 1.0 - 1.0 / 1.63), (0.0, 0.0), 1.0);
    assert_eq!(judged(eddy.0, eddy.1, old), Finding::HighResistance);
    // Saturation: τ +60 %, slope −2 %: R reads 1/(0.98·1.6) = 0.64 of the true one.
    let sat = (slope * 0.98, tau * 1.6);
    assert_eq!(judged(sat.0, sat.1, c.envelope(1.0)), Finding::Healthy);
    assert_eq!(
        judged(sat.0, sat.1, envelope::Envelope::NONE),
        Finding::ShapeUnexplained
    );
    // A resistance beyond what the eddy path can fake (R_on × 4, τ a quarter; the envelope
    // allows 2.7) is still named.
    assert_eq!(
        judged(slope, tau / 4.0, c.envelope(1.0)),
        Finding::HighResistance
    );
}
