//! The free-level fit: the slow mode of a real coil's rise, with no assumption about the current
//! at switch-on and a window that leaves out a fast early component.
//!
//! # Model
//!
//! `c(t) = P − A·e^(−t/τ)`: final current P, time constant τ, and a free level `c(0) = P − A` at
//! the nominal switch-on instant. Three things a real trace does are then part of the model,
//! exactly, and need no parameter of their own:
//!
//! - **initial current** `I₀` (a pulse soon after a release): `A = P − I₀`;
//! - **sampling-start latency** δ (the first sample taken δ later than the sampling says):
//!   `c(t + δ) = P − (A·e^(−δ/τ))·e^(−t/τ)`, the same model with a smaller A;
//! - **a fast component that has died out**, `−B·e^(−t/τ_f)` with `τ_f` ≪ the window: after a
//!   few `τ_f` the trace is the slow mode alone, whose level at t = 0 is `P − A = B` (a coupled
//!   loop takes current at first and hands it back).
//!
//! The slope `s = P/τ = k_s·V_d/L` and τ do not depend on A, so the verdict's bands apply
//! unchanged. A converter offset `o` adds `o` to P (`o/P` relative: 4 counts on a 5 000-count
//! asymptote is 0.08 %).
//!
//! # Method
//!
//! Centred on the middle of the window (`x = κ − κ_mid`, `e = e^(−λx)`, λ = Δt/τ) the model reads
//! `c = Q + B·(1 − e)` with `Q` the level at mid-window and `B = A·e^(−λκ_mid)`; its Jacobian
//! columns `1`, `e − 1` and `B·x·e` are small and nearly centred, which keeps the f32 normal
//! equations well conditioned on an early-rise window where `1`, `e^(−λκ)` and `κ·e^(−λκ)` are
//! almost collinear. Q is eliminated exactly (centred sums), the 2 × 2 rest solved by Cramer's
//! rule: 17 flops per sample and pass, two exponentials per pass (`centred.rs`). On exact counts
//! the sums can be made in integers instead ([`super::FitPath::Counts`], `counts.rs`; the default
//! on FPU-less targets), the step being the same. The start is the one-pass
//! regression of the survey with a free intercept (`c_k = a + λP·κ_k − λ·J_k`).
//!
//! # A fast early component
//!
//! When the whole window does not fit (residual above [`HEAD_RATIO`] × noise), the fit is repeated
//! without the first quarter, then without the first half of the window; the first window that
//! fits is kept. The samples left out are then compared with the kept model: their mean shortfall
//! below it (`head_deficit`) is the part of the current a coupled loop (eddy path or shorted turns)
//! held back early on.
//!
//! # Clipping
//!
//! Samples at or below the converter's floor ([`Sampling::floor`]) before the first reading
//! above it are bounds, not readings (a negative offset clipped at count 0): they are left out
//! and counted (`clipped`). Readings at full scale end the window as for [`super::fit_rise`].

use super::centred::{model_at, refine3, Arith, Fit3, Refined};
use super::fixed::{exp_pos, one_minus_exp_neg};
use super::num::{all_finite, clamp, larger, sqrt};
use super::survey::{drop_index, survey};
use super::{
    FitOptions, FitQuality, RiseFit, TraceFault, BELOW_ZERO_SIGMAS, FLAT_SIGMAS, HEAD_RATIO,
    MIN_SAMPLES, MONOTONE_SIGMAS,
};
use crate::diagnosis::sample::{Sample, Sampling};
use crate::units::{Amps, Seconds};

/// The shape of the trace beyond the slow mode: what the free-level fit saw besides it.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Shape {
    /// Level of the fitted slow mode at switch-on, `P − A`, A (may be negative: a converter offset,
    /// or noise). Initial current, sampling latency and a fast component that died out before the
    /// window are all in it.
    pub initial_current: Amps,
    /// Samples at the start of the window left out because the whole window did not fit.
    pub skipped: u32,
    /// Mean shortfall of the left-out samples below the kept model, A (0 when none left out).
    pub head_deficit: Amps,
    /// `head_deficit` over its noise standard error (`noise/√skipped`); 0 when none left out.
    pub head_sigmas: f32,
    /// Samples at the converter floor before the first reading above it, left out.
    pub clipped: u32,
    /// Durbin–Watson statistic of the residuals, `Σ(r_k − r_(k−1))²/Σr²` over the window kept:
    /// ≈ 2 for white noise, near 0 for a smooth misfit (a shape the model does not have). Computed
    /// only when the noise ratio exceeds [`HEAD_RATIO`] (otherwise `None`).
    pub durbin_watson: Option<f32>,
    /// Time of the window's last sample after switch-on over the fitted τ, `t_last/τ`
    /// (`rise_covered = 1 − e^(−window_tau)`).
    pub window_tau: f32,
}

/// The free-level fit of a rise: the slow mode (as [`RiseFit`]: slope `P/τ`, τ, `P`) and its
/// [`Shape`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ResponseFit {
    /// Slow mode and quality (on the window kept).
    pub rise: RiseFit,
    /// Initial level, head, clipping.
    pub shape: Shape,
}

/// Mean shortfall of `window[..skip]` below the model `f` fitted on `window[skip..]`, counts, and
/// that over its noise standard error `noise/√skip`.
fn head<S: Sample>(window: &[S], skip: usize, f: &Fit3, zero: f32, noise: f32) -> (f32, f32) {
    let (early, _) = window.split_at_checked(skip).unwrap_or((window, &[]));
    let mut sum = 0.0f32;
    for (k, v) in early.iter().enumerate() {
        let at = k as f32 - skip as f32;
        sum += model_at(f, at) - (v.to_f32() - zero);
    }
    let mean = sum / skip as f32;
    (mean, mean / (noise / sqrt(skip as f32)))
}

/// Standard errors by which the head left out must fall short of the kept model for the window
/// without it to be used.
pub const HEAD_SIGMAS: f32 = 4.0;

/// Durbin–Watson statistic of the residuals of `f` on `win`.
fn durbin_watson<S: Sample>(win: &[S], zero: f32, f: &Fit3) -> f32 {
    let (mut num, mut den, mut prev) = (0.0f32, 0.0f32, None);
    for (k, v) in win.iter().enumerate() {
        let r = v.to_f32() - zero - model_at(f, k as f32);
        if let Some(p) = prev {
            num += (r - p) * (r - p);
        }
        den += r * r;
        prev = Some(r);
    }
    if den > 0.0 {
        num / den
    } else {
        2.0
    }
}

/// Fits the slow mode `c(t) = P − A·e^(−t/τ)` to `samples` (see the module docs): initial
/// current, start latency and converter offset need no parameter; leading samples clipped at the
/// converter floor are left out; a window that does not fit is retried without its first
/// quarter, then half, when the residual exceeds `HEAD_RATIO` × the expected noise.
///
/// Accuracy: a noise-free rise with any initial level is recovered to f32 precision (relative
/// 10⁻⁴ on τ for a window covering 30 % of the rise, tested); with noise the standard errors of
/// the quality are the linearised least-squares ones (three parameters, so larger than
/// [`super::fit_rise`]'s for the same trace: the level at switch-on is no longer known).
///
/// Cost: one survey pass, then `options.refinements + 1` passes (at most 7) per window tried;
/// O(1) memory, no heap. Never panics; every figure is finite.
///
/// # Errors
/// [`TraceFault`] as for [`super::fit_rise`]; a trace at the floor but for fewer than
/// [`MIN_SAMPLES`] samples: `Flat`.
#[inline(always)]
pub fn fit_response<S: Sample>(
    samples: &[S],
    sampling: &Sampling,
    options: &FitOptions,
) -> Result<ResponseFit, TraceFault> {
    let counts = S::EXACT_COUNT && options.path.counts();
    let mut misfit = false;
    // Inlined into the caller: the result needs no slot of its own.
    let r = fit_body(samples, sampling, options, counts, &mut misfit);
    if misfit {
        // The integer path met a window that does not fit (a fast early component, or a plant
        // the model leaves out): its two passes and the shortened windows after it do not
        // converge, and where they end depends on the arithmetic. The whole fit is redone in f32
        // so that both paths give the same figures for such a trace; misfits are rare, a
        // healthy trace stays integer.
        return fit_body(samples, sampling, options, false, &mut misfit);
    }
    r
}

/// [`fit_response`] with the integer refinement (`counts`) or the f32 one; sets `misfit` (and
/// returns `NoConvergence`) when the integer path's whole window does not fit. Out of line, so
/// that a redo in f32 reuses the frame.
#[inline(never)]
fn fit_body<S: Sample>(
    samples: &[S],
    sampling: &Sampling,
    options: &FitOptions,
    counts: bool,
    misfit: &mut bool,
) -> Result<ResponseFit, TraceFault> {
    let floor = sampling.floor();
    let clipped = samples.iter().take_while(|v| v.to_f32() <= floor).count();
    let trace = &samples[clipped.min(samples.len())..];
    let period = sampling.period().value();
    let shifted = sampling
        .with_first_sample(Seconds::new(
            sampling.first().value() + clipped as f32 * period,
        ))
        .map_err(|_| TraceFault::NoConvergence)?;
    let arith = if counts { Arith::Counts } else { Arith::Float };
    let sv = match survey(trace, &shifted, arith == Arith::Counts) {
        Err(TraceFault::TooFewSamples { .. }) if clipped > 0 => {
            // Nearly all of the trace at the floor: no current to speak of.
            let sum: f32 = samples.iter().map(|v| v.to_f32() - sampling.zero()).sum();
            let level = sum / samples.len() as f32 * sampling.amps_per_count();
            return Err(TraceFault::Flat {
                level: Amps::new(super::num::finite_or_zero(level)),
            });
        }
        // Indices of the survey are into the clipped trace: give them in the caller's samples.
        Err(TraceFault::NotMonotone { index }) => {
            return Err(TraceFault::NotMonotone {
                index: index + clipped as u32,
            })
        }
        other => other?,
    };
    // The survey counts `used` among the trace's own samples, so the slice always exists.
    let window = trace.get(..sv.used).unwrap_or(trace);
    let zero = sampling.zero();
    let apc = sampling.amps_per_count();
    let k0 = shifted.first().value() / period;
    let peak_raw = larger(sv.max.abs(), sv.first.abs());
    let quantum = if S::IS_INTEGER { 1.0 } else { 0.0 };
    let base = sqrt(sampling.noise() * sampling.noise() + quantum * quantum / 12.0);
    let noise = larger(larger(base, peak_raw * 7.6e-6), f32::MIN_POSITIVE);
    if sv.first < -BELOW_ZERO_SIGMAS * noise {
        return Err(TraceFault::BelowZero {
            index: clipped as u32,
        });
    }
    if sv.max - sv.first < FLAT_SIGMAS * noise {
        return Err(TraceFault::Flat {
            level: Amps::new(super::num::finite_or_zero(sv.sum / sv.used as f32 * apc)),
        });
    }
    if sv.drop > MONOTONE_SIGMAS * noise {
        return Err(TraceFault::NotMonotone {
            index: clipped as u32 + drop_index(window, zero),
        });
    }
    let lambda0 = if sv.free_lambda > 0.0 && sv.free_lambda.is_finite() {
        sv.free_lambda
    } else if sv.lambda > 0.0 && sv.lambda.is_finite() {
        sv.lambda
    } else {
        // A straight line: one over the window length.
        1.0 / sv.used as f32
    };
    let passes = options.refinements.saturating_add(1);
    let m_all = window.len();
    let mut lambda_start = lambda0;
    let mut kept: Option<(usize, &[S], Fit3, f32)> = None;
    for skip in [0, m_all / 4, m_all / 2] {
        let Some(win) = window.get(skip..) else {
            break;
        };
        if win.len() < 2 * MIN_SAMPLES && skip > 0 {
            break;
        }
        // A shortened window starts from the whole window's λ, which the fast component it
        // leaves out biased, often far off: it takes its passes without the early stop. (Only
        // the float path gets here: the integer one hands a misfit to it, see `fit_response`.)
        let f = match refine3(win, zero, lambda_start, passes, noise, arith, skip == 0) {
            Refined::Fit(f) => f,
            Refined::Failed if arith == Arith::Counts => {
                *misfit = true;
                return Err(TraceFault::NoConvergence);
            }
            Refined::Failed => continue,
            // Beyond the integer pass's bounds: this window in f32.
            Refined::OutOfBounds => {
                match refine3(
                    win,
                    zero,
                    lambda_start,
                    passes,
                    noise,
                    Arith::Float,
                    skip == 0,
                ) {
                    Refined::Fit(f) => f,
                    _ => continue,
                }
            }
        };
        lambda_start = f.lambda;
        let ratio = sqrt(f.rr / larger(win.len() as f32 - 3.0, 1.0)) / noise;
        if arith == Arith::Counts && ratio > HEAD_RATIO {
            *misfit = true;
            return Err(TraceFault::NoConvergence);
        }
        // Leaving the head out is the physics of a coupled loop only if the head fell short of
        // the slow mode (the loop held current back); otherwise the misfit is a shape.
        if skip > 0 && head(window, skip, &f, zero, noise).1 <= HEAD_SIGMAS {
            continue;
        }
        let better = match &kept {
            None => true,
            Some((_, _, _, r)) => ratio < *r,
        };
        if better {
            kept = Some((skip, win, f, ratio));
        }
        if ratio <= HEAD_RATIO {
            break;
        }
    }
    let Some((skip, win, f, ratio)) = kept else {
        return Err(TraceFault::NoConvergence);
    };
    let m = win.len();
    let mf = m as f32;
    let durbin_watson = if ratio > HEAD_RATIO {
        Some(durbin_watson(win, zero, &f))
    } else {
        None
    };
    // The head left out: mean shortfall below the kept model, extrapolated back.
    let (head_deficit, head_sigmas) = if skip > 0 {
        head(window, skip, &f, zero, noise)
    } else {
        (0.0, 0.0)
    };
    // Window start in sample periods after switch-on, and the level there.
    let k_first = k0 + skip as f32;
    let p = f.q + f.b;
    let level0 = p - f.b * exp_pos(f.lambda * (f.centre + k_first));
    // The kept window's RMS residual is its ratio times the noise (the root taken once).
    let rms = ratio * noise;
    let s2 = {
        let s = larger(rms, noise);
        s * s
    };
    // Relative variances: ln P, ln λ (λ = λ̂ + v/B), and ln(Pλ).
    let var_p = s2 * (f.vqq + f.vbb + 2.0 * f.vqb);
    let bl = f.b * f.lambda;
    let var_ll = s2 * f.vvv / (bl * bl);
    let cov_pl = s2 * (f.vqv + f.vbv) / (f.b * p * f.lambda);
    let rel_p2 = var_p / (p * p);
    let rel_sd_final = sqrt(rel_p2);
    let rel_sd_tau = sqrt(var_ll);
    let var_s = rel_p2 + var_ll + 2.0 * cov_pl;
    let rel_sd_slope = sqrt(var_s);
    // cov(ln s, ln τ) = −cov(ln P + ln λ, ln λ).
    let c_st = -(cov_pl + var_ll);
    let correlation = if rel_sd_slope > 0.0 && rel_sd_tau > 0.0 {
        clamp(c_st / (rel_sd_slope * rel_sd_tau), -1.0, 1.0)
    } else {
        0.0
    };
    let tau = period / f.lambda;
    let final_current = p * apc;
    let slope = final_current / tau;
    // The last sample's time over τ, and the fraction of the rise the window covers.
    let window_tau = f.lambda * (k_first + mf - 1.0);
    let rise_covered = one_minus_exp_neg(window_tau);
    let figures = [
        slope,
        tau,
        final_current,
        rms * apc,
        ratio,
        rel_sd_slope,
        rel_sd_tau,
        rel_sd_final,
        correlation,
        rise_covered,
        level0 * apc,
        head_deficit * apc,
        head_sigmas,
        durbin_watson.unwrap_or(0.0),
        window_tau,
    ];
    if !all_finite(&figures) || p <= 0.0 {
        return Err(TraceFault::NoConvergence);
    }
    Ok(ResponseFit {
        rise: RiseFit {
            slope,
            tau: Seconds::new(tau),
            final_current: Amps::new(final_current),
            quality: FitQuality {
                samples: m as u32,
                truncated: sv.truncated,
                rms_residual: Amps::new(rms * apc),
                noise_ratio: ratio,
                rel_sd_slope,
                rel_sd_tau,
                rel_sd_final,
                correlation,
                rise_covered,
                peak: Amps::new(sv.max * apc),
            },
        },
        shape: Shape {
            initial_current: Amps::new(level0 * apc),
            skipped: skip as u32,
            head_deficit: Amps::new(head_deficit * apc),
            head_sigmas,
            clipped: clipped as u32,
            durbin_watson,
            window_tau,
        },
    })
}
