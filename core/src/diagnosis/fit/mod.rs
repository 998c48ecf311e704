//! Fitting the first-order rise to a sampled trace.
//!
//! # Model
//!
//! From switch-on at t = 0 with no current, the coil current is
//! `i(t) = s·τ·(1 − e^(−t/τ))`, s = initial slope (A/s), τ = time constant; `I∞ = s·τ`
//! ([`crate::FirstOrder`] with f(0) = 0). Samples are taken at `t_k = t₀ + k·Δt`. In sample units
//! (`κ_k = t_k/Δt`, `λ = Δt/τ`, `σ = s·Δt` in counts per sample) the model is
//! `c_k = σ·φ_k`, `φ_k = (1 − e^(−λκ_k))/λ`.
//!
//! # Estimator
//!
//! 1. **One pass, closed form** (integral equation). Integrating `τ·di/dt + i = I∞` from 0 gives
//!    `i(t) = s·t − (1/τ)·∫₀ᵗ i dt`, which is *linear* in (s, 1/τ). The running integral `J_k` is
//!    accumulated from the samples by the trapezoid rule (with i(0) = 0); the sums of the 2 × 2
//!    least-squares problem `c_k ≈ σ·κ_k − λ·J_k` follow by summation by parts from five running
//!    sums kept on the way (Σc, its prefix sums twice, Σ(prefix)², Σc²): O(1) memory, no libm
//!    call per sample. The same pass checks the trace (finite, unsaturated, not below zero,
//!    monotone within noise, not flat); for integer counts of at most 16 bits
//!    ([`Sample::EXACT_COUNT`]) it only ORs the sample differences, and the running maximum,
//!    largest drop and saturation cut are found by an integer rescan when the trace falls or
//!    reaches full scale somewhere.
//! 2. **Refinement**: a bounded number of Gauss–Newton passes over the buffer on the exact model,
//!    in the parameters (A = σ/λ, λ), in which the model `c_k = A·(1 − e^(−λκ_k))` is linear in A
//!    (the trapezoid rule and the noise in `J_k` bias step 1 slightly). Each pass computes
//!    `e_k = 1 − e^(−λκ_k)` by the recurrence `e_{k+1} = q·e_k + (1 − q)`, `q = e^(−λ)`, so a pass
//!    costs one or two `expm1f` calls in all, and 14 flops per sample. The last pass gives the
//!    residual and the curvature matrix, hence the goodness of fit and the standard errors
//!    (`cov = σ̂²·(JᵀJ)⁻¹`).
//!
//! Accuracy (measured in `host-tests/tests/diagnosis_estimator.rs`, 2000 traces per case, white
//! Gaussian noise): with the default one refinement the RMS error of τ and of R ∝ 1/I∞ is within
//! 2 % of the Cramér–Rao bound in every case tried (full rise, early rise of a diagnostic pulse,
//! 32 to 128 samples), the same as a general-purpose Levenberg–Marquardt fit in f64; the one-pass
//! estimate alone is within 17 %. A noise-free trace is recovered to f32 precision (property
//! test).
//!
//! Cost of [`fit_response`] with its verdict (QEMU instruction count, 64 `u16` samples,
//! `cargo xtask cost` case `fit_verdict_64`): 4 742 instructions on a Cortex-M4F (f32 path, one
//! refinement pass on a healthy rise), 960 bytes of stack; 57 059 on a Cortex-M0 without FPU (the
//! integer path, [`FitPath::Auto`] there), 1 276 bytes of stack. See `docs/diagnosis.md` §3b for
//! the two arithmetics, their accuracy against each other and where the instructions go.
//! [`fit_rise`] (zero start) was measured at 2 832 instructions on the M4F.

mod centred;
mod counts;
mod fixed;
mod free;
mod num;
mod refine;
mod survey;

pub(crate) use fixed::exp_neg;
pub use free::{fit_response, ResponseFit, Shape};
pub(crate) use num::sqrt;
use num::{all_finite, clamp, finite_or_zero, larger};
use refine::gn_pass;
use survey::{drop_index, survey};

use super::sample::{Sample, Sampling};
use crate::units::{Amps, Seconds};

/// Fewest usable samples the fit accepts.
pub const MIN_SAMPLES: usize = 6;
/// Most refinement passes [`FitOptions::refinements`] may ask for.
pub const MAX_REFINEMENTS: u8 = 6;

/// A trace drop below its running maximum larger than this many noise RMS is "not monotone".
pub const MONOTONE_SIGMAS: f32 = 8.0;
/// A trace whose first sample is below zero by more than this many noise RMS is implausible
/// (with the monotone check this bounds every sample from below).
pub const BELOW_ZERO_SIGMAS: f32 = 6.0;
/// A trace whose whole range is below this many noise RMS is flat.
pub const FLAT_SIGMAS: f32 = 10.0;

/// Smallest λ = Δt/τ the fit uses: τ = 10⁶ sample periods (a straight line).
pub(crate) const LAMBDA_MIN: f32 = 1.0e-6;
/// Largest λ: τ = 0.1 sample period (the rise is over before the second sample).
pub(crate) const LAMBDA_MAX: f32 = 10.0;

/// Fit settings.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub struct FitOptions {
    /// Gauss–Newton passes after the one-pass estimate, 0 ≤ n ≤ [`MAX_REFINEMENTS`] (clamped).
    /// Each costs one pass over the buffer. Passes stop early once a step changes both parameters
    /// by less than 10⁻⁵ (relative). 0 keeps the closed-form one-pass estimate and spends one pass
    /// on its residuals and standard errors only.
    pub refinements: u8,
    /// The arithmetic of [`fit_response`]'s refinement (default [`FitPath::Auto`]).
    pub path: FitPath,
}

impl Default for FitOptions {
    fn default() -> Self {
        Self {
            refinements: 1,
            path: FitPath::Auto,
        }
    }
}

/// The arithmetic of [`fit_response`]'s refinement. Both paths fit the same model by the same
/// Gauss–Newton step and give the same figures to well within their standard errors (see
/// `counts.rs` and `docs/diagnosis.md` §3a); they differ in cost.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum FitPath {
    /// [`FitPath::Counts`] on an ARM target without a floating-point unit (`target_abi` not
    /// `eabihf`: Cortex-M0/M0+/M3/M23), where f32 arithmetic is emulated; [`FitPath::Float`]
    /// elsewhere (a Cortex-M4F/M7 and the host, where f32 is as cheap as integers).
    Auto,
    /// f32 sums over the samples.
    Float,
    /// Integer sums over exact counts ([`Sample::EXACT_COUNT`]: `u8`, `u16`, `i16`) for windows
    /// of at most [`MAX_COUNT_WINDOW`] samples whose residuals stay below 2 048 counts; any
    /// other trace or window in f32.
    Counts,
}

/// Longest window the integer refinement takes (its sums are exact in 64 bits up to here).
pub const MAX_COUNT_WINDOW: usize = 256;

impl FitPath {
    /// Whether the integer refinement is asked for (resolving [`FitPath::Auto`] for the target
    /// being compiled).
    pub(crate) const fn counts(self) -> bool {
        match self {
            FitPath::Float => false,
            FitPath::Counts => true,
            FitPath::Auto => cfg!(all(target_arch = "arm", not(target_abi = "eabihf"))),
        }
    }
}

/// [`fit_response`]: a window whose residual RMS exceeds this many times the expected noise is
/// fitted again without its first quarter, then half.
pub const HEAD_RATIO: f32 = 2.0;

impl FitOptions {
    /// The same options with `refinements` passes (see the field).
    pub const fn with_refinements(mut self, refinements: u8) -> Self {
        self.refinements = refinements;
        self
    }

    /// The same options with the refinement's arithmetic `path` (see [`FitPath`]).
    pub const fn with_path(mut self, path: FitPath) -> Self {
        self.path = path;
        self
    }
}

/// Why a trace cannot be fitted: it is not the rise of a coil current as sampled.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum TraceFault {
    /// Fewer than [`MIN_SAMPLES`] usable samples (before any saturation).
    TooFewSamples {
        /// Usable samples.
        usable: u32,
    },
    /// A sample is NaN or infinite.
    NotFinite {
        /// Its index.
        index: u32,
    },
    /// The converter saturates before [`MIN_SAMPLES`] usable samples.
    SaturatedEarly {
        /// Index of the first saturated sample.
        index: u32,
    },
    /// The current reads below zero by more than noise (offset, polarity or wiring of the sensor).
    BelowZero {
        /// Index of the lowest sample.
        index: u32,
    },
    /// The current falls below its running maximum by more than noise (a coil current only rises).
    NotMonotone {
        /// Index of the largest drop.
        index: u32,
    },
    /// The trace does not rise by more than noise.
    Flat {
        /// Its mean level, A.
        level: Amps,
    },
    /// The refinement did not settle within its passes.
    NoConvergence,
    /// Reported by the verdict: the residuals are far above the expected noise, so the trace is
    /// not a first-order rise (a noisy or intermittent sensor, or a model that does not apply).
    PoorFit,
    /// Reported by the verdict: a measured time is negative or not finite.
    BadTime,
    /// Reported by the verdict: readings contradict each other (a threshold crossed by a current
    /// whose steady value stays below the threshold).
    Inconsistent,
}

/// How well the model fits, and how precisely the trace fixes its parameters.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FitQuality {
    /// Samples used (the trace up to its first saturated sample).
    pub samples: u32,
    /// Whether the trace was cut at a saturated sample.
    pub truncated: bool,
    /// RMS of the residuals, `√(Σr²/(n − 2))`, A.
    pub rms_residual: Amps,
    /// `rms_residual` over the expected noise (converter noise and quantisation): ≈ 1 for a good
    /// fit, larger when the trace is not a first-order rise.
    pub noise_ratio: f32,
    /// Relative standard error of the initial slope.
    pub rel_sd_slope: f32,
    /// Relative standard error of τ.
    pub rel_sd_tau: f32,
    /// Relative standard error of I∞.
    pub rel_sd_final: f32,
    /// Correlation of the errors of ln s and ln τ, in [−1, 1].
    pub correlation: f32,
    /// Fraction of the rise the window covers, `1 − e^(−t_last/τ)`.
    pub rise_covered: f32,
    /// Largest current in the window, A.
    pub peak: Amps,
}

/// The fitted rise.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct RiseFit {
    /// Initial slope `s = I∞/τ`, A/s (= `k_s·V_d/L`).
    pub slope: f32,
    /// Time constant τ, s.
    pub tau: Seconds,
    /// Final current `I∞ = s·τ`, A.
    pub final_current: Amps,
    /// Goodness of fit and standard errors.
    pub quality: FitQuality,
}

/// Fits `i(t) = s·τ·(1 − e^(−t/τ))` to `samples` taken as `sampling` describes (see the module
/// docs for the method).
///
/// Samples at or above the saturation level end the window. The trace is checked first; a trace
/// that cannot be a coil's rise is a [`TraceFault`], never a fit.
///
/// Cost: one survey pass plus `options.refinements` passes (at least one; fewer when converged),
/// O(1) memory, no heap; one or two `expm1f` per pass and no libm call per sample (see the
/// module docs for measured instruction counts).
///
/// Never panics and never returns a non-finite figure, for any input.
///
/// # Errors
/// [`TraceFault`] as documented on each variant.
pub fn fit_rise<S: Sample>(
    samples: &[S],
    sampling: &Sampling,
    options: &FitOptions,
) -> Result<RiseFit, TraceFault> {
    let sv = survey(samples, sampling, false)?;
    // The survey counts `used` among the trace's own samples, so the slice always exists.
    let window = samples.get(..sv.used).unwrap_or(samples);
    let n = sv.used as f32;
    let apc = sampling.amps_per_count();
    let period = sampling.period().value();
    let k0 = sampling.first().value() / period;
    let peak_raw = larger(sv.max.abs(), sv.first.abs());
    // Expected noise, raw units: converter noise and quantisation, floored at f32 resolution of
    // the signal so that float traces without noise are judged fairly.
    let quantum = if S::IS_INTEGER { 1.0 } else { 0.0 };
    let base = sqrt(sampling.noise() * sampling.noise() + quantum * quantum / 12.0);
    let noise = larger(larger(base, peak_raw * 7.6e-6), f32::MIN_POSITIVE);
    // A trace monotone within noise has no sample more than the drop limit below its first one,
    // so checking the first sample for "below zero" covers the whole trace to within that limit.
    if sv.first < -BELOW_ZERO_SIGMAS * noise {
        return Err(TraceFault::BelowZero { index: 0 });
    }
    if sv.max - sv.first < FLAT_SIGMAS * noise {
        return Err(TraceFault::Flat {
            level: Amps::new(finite_or_zero(sv.sum / n * apc)),
        });
    }
    if sv.drop > MONOTONE_SIGMAS * noise {
        return Err(TraceFault::NotMonotone {
            index: drop_index(window, sampling.zero()),
        });
    }
    let sigma = if sv.sigma.is_finite() && sv.sigma > 0.0 {
        sv.sigma
    } else {
        // Fall back to the mean slope through the origin.
        sv.max / (k0 + n)
    };
    if !(sigma.is_finite() && sigma > 0.0) {
        return Err(TraceFault::NoConvergence);
    }
    let mut lambda = clamp(sv.lambda, LAMBDA_MIN, LAMBDA_MAX);
    // The refinement works on A = σ/λ (I∞ in counts), in which the model is linear.
    let mut amp = sigma / lambda;
    let apply = options.refinements > 0;
    let passes = options.refinements.clamp(1, MAX_REFINEMENTS);
    let mut last = None;
    for _ in 0..passes {
        let p = gn_pass(window, sampling.zero(), k0, amp, lambda);
        let det = p.a11 * p.a22 - p.a12 * p.a12;
        if !(det.is_finite() && det > 0.0) {
            return Err(TraceFault::NoConvergence);
        }
        let d_amp = (p.a22 * p.b1 - p.a12 * p.b2) / det;
        let d_lambda = (p.a11 * p.b2 - p.a12 * p.b1) / (amp * det);
        let new_amp = clamp(amp + d_amp, 0.25 * amp, 4.0 * amp);
        let new_lambda = clamp(
            clamp(lambda + d_lambda, 0.25 * lambda, 4.0 * lambda),
            LAMBDA_MIN,
            LAMBDA_MAX,
        );
        if !apply {
            let rr = p.rr;
            last = Some((p, det, true, rr));
            break;
        }
        let full_step = new_amp == amp + d_amp && new_lambda == lambda + d_lambda;
        let settled = (d_amp / amp).abs() < 1.0e-5 && (d_lambda / lambda).abs() < 1.0e-5;
        // Residual after the step, predicted to second order: Σr² − gᵀΔ.
        let rr_after = if full_step {
            larger(p.rr - (d_amp * p.b1 + d_lambda * amp * p.b2), 0.0)
        } else {
            p.rr
        };
        amp = new_amp;
        lambda = new_lambda;
        last = Some((p, det, full_step, rr_after));
        if settled {
            break;
        }
    }
    let Some((p, det, full_step, rr)) = last else {
        return Err(TraceFault::NoConvergence);
    };
    let sigma = amp * lambda;
    if !(full_step && sigma.is_finite() && lambda.is_finite()) {
        return Err(TraceFault::NoConvergence);
    }
    let dof = larger(n - 2.0, 1.0);
    let rms = sqrt(rr / dof);
    let s_hat2 = {
        let s = larger(rms, noise);
        s * s
    };
    // cov(A, λ) = σ̂²·N⁻¹ with N = [[a11, A·a12], [A·a12, A²·a22]]; relative (logarithmic)
    // variances of A and λ and their covariance, then ln σ = ln A + ln λ.
    let scale = s_hat2 / (det * amp * amp);
    let v_a = scale * p.a22;
    let v_l = scale * p.a11 / (lambda * lambda);
    let c_al = -scale * p.a12 / lambda;
    let v_s = v_a + v_l + 2.0 * c_al;
    // cov(ln s, ln τ) = −cov(ln σ, ln λ), since ln τ = ln Δt − ln λ.
    let c_st = -(c_al + v_l);
    let rel_sd_slope = sqrt(v_s);
    let rel_sd_tau = sqrt(v_l);
    let rel_sd_final = sqrt(v_a);
    let correlation = if rel_sd_slope > 0.0 && rel_sd_tau > 0.0 {
        clamp(c_st / (rel_sd_slope * rel_sd_tau), -1.0, 1.0)
    } else {
        0.0
    };
    let slope = sigma * apc / period;
    let tau = period / lambda;
    let final_current = amp * apc;
    let rise_covered = -libm::expm1f(-lambda * (k0 + n - 1.0));
    let figures = [
        slope,
        tau,
        final_current,
        rms * apc,
        rms / noise,
        rel_sd_slope,
        rel_sd_tau,
        rel_sd_final,
        correlation,
        rise_covered,
        sv.max * apc,
    ];
    if !all_finite(&figures) {
        return Err(TraceFault::NoConvergence);
    }
    Ok(RiseFit {
        slope,
        tau: Seconds::new(tau),
        final_current: Amps::new(final_current),
        quality: FitQuality {
            samples: sv.used as u32,
            truncated: sv.truncated,
            rms_residual: Amps::new(rms * apc),
            noise_ratio: rms / noise,
            rel_sd_slope,
            rel_sd_tau,
            rel_sd_final,
            correlation,
            rise_covered,
            peak: Amps::new(sv.max * apc),
        },
    })
}

#[cfg(test)]
pub(crate) mod tests;
