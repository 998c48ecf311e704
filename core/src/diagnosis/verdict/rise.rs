//! Judging a fitted rise against the bands, and what a trace fault means for the coil.

use super::envelope::Envelope;
use super::Estimates;
use super::{at_most, estimates, healthy_or_supply, Criteria, Finding, Undetermined, Verdict};
use crate::diagnosis::band::Expected;
use crate::diagnosis::fit::{exp_neg, fit_response, FitOptions, ResponseFit, RiseFit, TraceFault};
use crate::diagnosis::sample::{Sample, Sampling};

/// What the physics of a real coil allows on top of the fit's errors (see [`judge_response`]).
#[derive(Clone, Copy)]
pub(super) struct Allowances {
    /// How far slope and τ of a healthy coil may read off the first-order model.
    pub(super) envelope: Envelope,
    /// The finding for a resistance below the band with the inductance inside it.
    pub(super) r_low_alone: Finding,
}

impl Allowances {
    /// The ideal first-order coil: no allowance; a low resistance is shorted turns.
    pub(super) const FIRST_ORDER: Self = Self {
        envelope: Envelope::NONE,
        r_low_alone: Finding::ShortedTurns,
    };
}

/// Judges slope and τ with their relative half-widths (already including sigmas and margin),
/// the healthy coil's bias envelope (`envelope.rs`: R = L/τ compounds the slope's and τ's
/// biases), and `reached`, the current the window shows (A); the fitted figures are
/// `(slope A/s, τ s, reached A)`.
///
/// The interval arithmetic of the module docs in ratio form (no logarithms): a relative
/// half-width `w` widens `[a, b]` to `[a/(1 + w), b·(1 + w)]`, which is `ln(1 + w) ≈ w` wide
/// either side in logarithms.
pub(super) fn judge_slope_tau(
    (slope, tau, reached): (f32, f32, f32),
    half_slope: f32,
    half_tau: Option<f32>,
    physics: Allowances,
    expected: &Expected,
    criteria: &Criteria,
) -> Finding {
    let Allowances {
        envelope,
        r_low_alone,
    } = physics;
    let ws = 1.0 + half_slope;
    // One-sided allowances, on the side the physics biases: the true slope may be 1/fs of the
    // fitted one (and up to slope_up times it), the true τ up to ft times and down to 1/fh of
    // it (envelope.rs).
    let (fs, ft, fh) = (
        envelope.slope_down(),
        envelope.tau_up(),
        envelope.tau_down(),
    );
    // Inductance the slope implies: L = k_s·V_d / s.
    let l_lo = expected.sensed_drive.min.value() / (slope * ws * envelope.slope_up());
    let l_hi = expected.sensed_drive.max.value() * ws * fs / slope;
    let ell_lo = expected.inductance.min.value();
    let ell_hi = expected.inductance.max.value();
    if l_hi < ell_lo {
        // Inductance nearly gone *and* a current far beyond the band: the winding is bypassed.
        // A coupled shorted section also leaves little inductance at first (its leakage), and
        // its current never exceeds its final one, V/(R_rest + R_b∥R_short) ≤ V/(R·(1 − f)):
        // a current *reached* (not extrapolated by a τ its fast mode corrupts) beyond
        // `short_current` times the band excludes sections below 1 − 1/short_current of the
        // turns. Otherwise: shorted turns (both isolate; the name says what to look for).
        let bypassed = reached > criteria.short_current * expected.final_current.max.value()
            || tau.is_nan()
            || tau <= 0.0;
        return if l_hi < ell_lo * criteria.short_fraction && bypassed {
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
    let r_lo = l_lo.max(ell_lo) / (tau * wt * ft);
    let r_hi = l_hi.min(ell_hi) * wt * fh / tau;
    if r_hi < expected.loop_resistance.min.value() {
        r_low_alone
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
        (
            fit.slope,
            fit.tau.value(),
            fit.slope * fit.tau.value() * q.rise_covered,
        ),
        k * q.rel_sd_slope + m,
        half_tau,
        Allowances::FIRST_ORDER,
        expected,
        criteria,
    );
    fail(finding)
}

/// The window's length in time constants of the slowest healthy coil: `t_last/τ_max`, with
/// `t_last = window_tau·τ_fit` (the fit's `t_last/τ`, no logarithm needed). Taken against the
/// band's longest τ rather than the fitted one, because an eddy path biases the fitted τ short,
/// which would make the window look longer exactly when the allowance is needed. 0 when not
/// finite.
fn window_in_tau(fit: &ResponseFit, expected: &Expected) -> f32 {
    let w = fit.shape.window_tau * fit.rise.tau.value() / expected.tau.max.value();
    if w > 0.0 && w < f32::INFINITY {
        w
    } else {
        0.0
    }
}

/// How much of the diagnostic-pulse eddy allowance applies to a window `w` time constants long:
/// `min(1, e^(−(w − 0.36)/0.45))`. The eddy path's bias falls fast as the window grows past the
/// fast mode: measured on the analytic two-loop rise for the worst path of the range (5 % of the
/// current, τ_f 20 % of τ), τ −41 % at w = 0.36, −19 % at 0.7, −4 % at 1.2, −1 % at 1.8; the law
/// bounds every point (`docs/diagnosis.md` §9).
fn eddy_scale(w: f32) -> f32 {
    if w > 0.36 {
        exp_neg((w - 0.36) / 0.45)
    } else {
        1.0
    }
}

/// Judges a free-level fit ([`fit_response`]) against the bands: as [`judge_rise`], with four
/// differences that follow the physics of a real coil.
///
/// 1. A residual far above noise is [`Finding::ShapeUnexplained`] when the residuals are smooth
///    (Durbin–Watson below `criteria.smooth_dw`: a shape the model does not have, from a plant
///    the model leaves out) and [`Finding::SensorImplausible`]`(PoorFit)` only when they are
///    noise-like (a noisy or intermittent sensor).
/// 2. Slope and τ are judged with the healthy coil's bias envelope (`envelope.rs`): the slope may
///    read up to `fast_slope` high and τ `fast_tau` low (an eddy path; the true τ may then be
///    `1/(1 − fast_tau)` times the fitted one), scaled down for windows longer than a diagnostic
///    pulse's (see `eddy_scale`); τ `slow_tau` long and the slope `slow_slope` low
///    (saturation). R = L/τ compounds both.
/// 3. A resistance below the band with the inductance inside it is [`Finding::ShapeUnexplained`]:
///    shorted turns lower the inductance at least as much (turns squared against turns), while
///    saturation lengthens the fitted τ of a short window and looks like exactly this.
/// 4. A fast early component larger than an eddy path can carry — the left-out head of the window
///    short of the slow mode by more than `head_fraction` of the final current and by more than
///    `sigmas` standard errors — is a closed loop tightly coupled to the winding:
///    [`Finding::ShortedTurns`].
///
/// Never panics; the estimates are finite or `None`.
pub fn judge_response(fit: &ResponseFit, expected: &Expected, criteria: &Criteria) -> Verdict {
    let r = &fit.rise;
    let q = r.quality;
    let sh = fit.shape;
    let mut est = estimates(expected, r.final_current.value(), Some(r.tau.value()));
    est.quality = Some(q);
    let fail = |f| Verdict::new(f, est);
    if !at_most(q.noise_ratio, criteria.max_noise_ratio) {
        let smooth = matches!(sh.durbin_watson, Some(d) if d < criteria.smooth_dw);
        return fail(if smooth {
            Finding::ShapeUnexplained
        } else {
            Finding::SensorImplausible(TraceFault::PoorFit)
        });
    }
    if !at_most(q.rel_sd_slope, criteria.max_rel_sd) || !at_most(f32::MIN_POSITIVE, r.slope) {
        return fail(Finding::CannotTell(Undetermined::TooLittleSignal));
    }
    let k = criteria.sigmas;
    let m = criteria.model_margin;
    let half_tau = if q.rel_sd_tau <= criteria.max_rel_sd && r.tau.value() > 0.0 {
        Some(k * q.rel_sd_tau + m)
    } else {
        None
    };
    let scale = eddy_scale(window_in_tau(fit, expected));
    let finding = judge_slope_tau(
        (
            r.slope,
            r.tau.value(),
            r.slope * r.tau.value() * q.rise_covered,
        ),
        k * q.rel_sd_slope + m,
        half_tau,
        Allowances {
            envelope: criteria.envelope(scale),
            // Shorted turns lower the inductance (turns squared) at least as much as the
            // resistance; a resistance below the band with the inductance inside it is not their
            // physics (it is what saturation does to τ on a short window): a shape, not a fault.
            r_low_alone: Finding::ShapeUnexplained,
        },
        expected,
        criteria,
    );
    // A supply read below the design's range explains a weak rise, and bands and biases are
    // those of a supply the coil was not designed for: that is the finding.
    if expected.supply_below_design && finding.is_coil_fault() {
        return fail(Finding::SupplyLow);
    }
    let held_back = sh.head_deficit.value() > criteria.head_fraction * r.final_current.value()
        && sh.head_sigmas > k;
    if held_back && !finding.is_coil_fault() && !matches!(finding, Finding::CannotTell(_)) {
        return fail(Finding::ShortedTurns);
    }
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
            // Too fast for a healthy coil. A bypassed winding, or shorted turns: a bridged
            // section leaves at least its leakage, about L_rest·(1 − k²) (turns_floor of the
            // band's minimum). Reaching full scale by t means an inductance of at most
            // V_max·t/I_fs (from rest; any resistance only lowers the current): "short" only
            // when that bound is below what shorted turns can leave.
            let l_bound = expected.sensed_drive.max.value() * t / full;
            let floor = criteria.turns_floor * expected.inductance.min.value();
            if full > healthy_max * (1.0 + criteria.model_margin) {
                if l_bound < floor {
                    Finding::ShortCircuit
                } else {
                    Finding::ShortedTurns
                }
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
/// without a moving armature) with the free-level estimator. See [`fit_response`] and
/// [`judge_response`].
///
/// Out of line, so that a caller judging several windows (as [`super::judge_actuation`] does)
/// stacks one fit, not one per call site. Never panics, for any samples.
#[inline(never)]
pub fn judge_trace<S: Sample>(
    samples: &[S],
    sampling: &Sampling,
    expected: &Expected,
    criteria: &Criteria,
    options: &FitOptions,
) -> Verdict {
    match fit_response(samples, sampling, options) {
        Ok(fit) => judge_response(&fit, expected, criteria),
        Err(fault) => judge_trace_fault(fault, sampling, expected, criteria),
    }
}
