//! Judging a fitted rise against the bands, and what a trace fault means for the coil.

use super::Estimates;
use super::{at_most, estimates, healthy_or_supply, Criteria, Finding, Undetermined, Verdict};
use crate::diagnosis::band::Expected;
use crate::diagnosis::fit::{fit_rise, FitOptions, RiseFit, TraceFault};
use crate::diagnosis::sample::{Sample, Sampling};

/// Judges slope and τ with their relative half-widths (already including sigmas and margin).
///
/// The interval arithmetic of the module docs in ratio form (no logarithms): a relative
/// half-width `w` widens `[a, b]` to `[a/(1 + w), b·(1 + w)]`, which is `ln(1 + w) ≈ w` wide
/// either side in logarithms.
pub(super) fn judge_slope_tau(
    slope: f32,
    tau: f32,
    half_slope: f32,
    half_tau: Option<f32>,
    expected: &Expected,
    criteria: &Criteria,
) -> Finding {
    let ws = 1.0 + half_slope;
    // Inductance the slope implies: L = k_s·V_d / s.
    let l_lo = expected.sensed_drive.min.value() / (slope * ws);
    let l_hi = expected.sensed_drive.max.value() * ws / slope;
    let ell_lo = expected.inductance.min.value();
    let ell_hi = expected.inductance.max.value();
    if l_hi < ell_lo {
        return if l_hi < ell_lo * criteria.short_fraction {
            Finding::ShortCircuit
        } else {
            Finding::ShortedTurns
        };
    }
    if l_lo > ell_hi {
        return if expected.supply_measured && !expected.supply_below_design {
            Finding::InductanceHigh
        } else {
            Finding::SupplyLow
        };
    }
    let Some(half_tau) = half_tau else {
        return Finding::CannotTell(Undetermined::WindowTooShort);
    };
    let wt = 1.0 + half_tau;
    // The inductance both the slope and the band allow, over τ: R_on = L/τ.
    let r_lo = l_lo.max(ell_lo) / (tau * wt);
    let r_hi = l_hi.min(ell_hi) * wt / tau;
    if r_hi < expected.loop_resistance.min.value() {
        Finding::ShortedTurns
    } else if r_lo > expected.loop_resistance.max.value() {
        Finding::HighResistance
    } else {
        healthy_or_supply(expected)
    }
}

/// Judges a fitted rise against the bands (see the module docs).
///
/// Never [`Finding::Healthy`] when `fit.quality.noise_ratio > max_noise_ratio` or a relative
/// standard error of slope or τ exceeds `max_rel_sd`. Never panics; the estimates are finite or
/// `None`.
pub fn judge_rise(fit: &RiseFit, expected: &Expected, criteria: &Criteria) -> Verdict {
    let q = fit.quality;
    let mut est = estimates(expected, fit.final_current.value(), Some(fit.tau.value()));
    est.quality = Some(q);
    let fail = |f| Verdict::new(f, est);
    // A NaN ratio or error fails every comparison below and so is never trusted.
    if !at_most(q.noise_ratio, criteria.max_noise_ratio) {
        return fail(Finding::SensorImplausible(TraceFault::PoorFit));
    }
    if !at_most(q.rel_sd_slope, criteria.max_rel_sd) || !at_most(f32::MIN_POSITIVE, fit.slope) {
        return fail(Finding::CannotTell(Undetermined::TooLittleSignal));
    }
    let k = criteria.sigmas;
    let m = criteria.model_margin;
    let half_tau = if q.rel_sd_tau <= criteria.max_rel_sd && fit.tau.value() > 0.0 {
        Some(k * q.rel_sd_tau + m)
    } else {
        None
    };
    let finding = judge_slope_tau(
        fit.slope,
        fit.tau.value(),
        k * q.rel_sd_slope + m,
        half_tau,
        expected,
        criteria,
    );
    fail(finding)
}

/// What the fit's trace fault means for the coil, given the bands and the sampling.
pub(super) fn judge_trace_fault(
    fault: TraceFault,
    sampling: &Sampling,
    expected: &Expected,
    criteria: &Criteria,
) -> Verdict {
    let none = Estimates::default();
    let finding = match fault {
        TraceFault::TooFewSamples { .. } => Finding::CannotTell(Undetermined::TooFewSamples),
        TraceFault::NoConvergence => Finding::CannotTell(Undetermined::NoConvergence),
        TraceFault::SaturatedEarly { index } => {
            // Could a healthy coil have reached full scale by then? Its current is at most
            // min(s_max·t, I∞,max).
            let t = sampling.time_of(index as usize).value();
            let full = sampling.amps(sampling.full_scale());
            let healthy_max = (expected.slope.max * t).min(expected.final_current.max.value());
            if full > healthy_max * (1.0 + criteria.model_margin) {
                Finding::ShortCircuit
            } else {
                Finding::CannotTell(Undetermined::RangeTooSmall)
            }
        }
        TraceFault::Flat { level } => {
            let l = level.value();
            if l <= criteria.open_fraction * expected.final_current.min.value() {
                if expected.supply_below_design {
                    Finding::SupplyLow
                } else {
                    Finding::OpenCircuit
                }
            } else if l > expected.final_current.max.value() * (1.0 + criteria.model_margin) {
                Finding::ShortCircuit
            } else {
                Finding::SensorImplausible(fault)
            }
        }
        other => Finding::SensorImplausible(other),
    };
    Verdict::new(finding, none)
}

/// Fits and judges a sampled rise with no armature movement in it (a diagnostic pulse, or a coil
/// without a moving armature). See [`fit_rise`] and [`judge_rise`].
///
/// Never panics, for any samples.
pub fn judge_trace<S: Sample>(
    samples: &[S],
    sampling: &Sampling,
    expected: &Expected,
    criteria: &Criteria,
    options: &FitOptions,
) -> Verdict {
    match fit_rise(samples, sampling, options) {
        Ok(fit) => judge_rise(&fit, expected, criteria),
        Err(fault) => judge_trace_fault(fault, sampling, expected, criteria),
    }
}
