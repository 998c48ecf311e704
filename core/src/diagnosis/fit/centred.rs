//! Gauss–Newton on the free-level model `c = Q + B − B·e`, `e_k = e^(−λ(k − k_c))`, for one
//! window: the step, the stopping rule and the covariance, shared by the float pass (below) and
//! the integer pass on exact counts ([`super::counts`]). A pass only has to deliver the sums of
//! [`Sums3`]; the step does not know which arithmetic made them.
//!
//! Columns of the Jacobian at (Q, B, λ): `1`, `−d` (d = e − 1) and `B·w` (w = (k − k_c)·e). Q is
//! eliminated exactly by the centred sums, the 2 × 2 rest solved by Cramer's rule.
//!
//! # Stopping
//!
//! A pass stops the iteration when the step changed B and λ by less than 10⁻⁵ (relative), or when
//! the step it took leaves a remainder far below the fit's own noise: Gauss–Newton on this model
//! converges quadratically, the next step being about `K·(Δλ/λ)²·λ` with `K ≈ λ·m/2` (the
//! second over the first derivative of `e^(−λx)` in λ across the window, `|x| ≤ m/2`). When
//! `λ·m·(Δλ/λ)²` is below [`SETTLE`] times the relative standard error of λ (the one the expected
//! noise alone gives, so that a misfit, whose residuals inflate the fit's own, does not stop a
//! far-off iteration early), a further pass would move λ by less than `SETTLE/2` of its standard
//! error and is not taken (measured: see `docs/diagnosis.md` §3a). The argument holds where the
//! residuals are at the noise (quadratic convergence is that of a zero-residual problem): a
//! window whose residual exceeds [`HEAD_RATIO`] × noise, and a shortened window of
//! [`super::fit_response`] (started far off, from the whole window's λ), take all their passes
//! (or stop when settled), as before the rule.

use super::num::{clamp, larger};
use super::{HEAD_RATIO, LAMBDA_MAX, LAMBDA_MIN, MAX_REFINEMENTS, MIN_SAMPLES};
use crate::diagnosis::fit::fixed::{exp_neg, exp_pos};
use crate::diagnosis::sample::Sample;

/// A step whose predicted remainder is below this fraction of λ's standard error ends the
/// iteration (module docs).
pub(super) const SETTLE: f32 = 0.05;

/// The sums of one pass at (Q, B, λ): raw `Σd, Σw, Σr, Σd·r, Σw·r, Σr²` and the centred
/// `Σd̃², Σd̃w̃, Σw̃², Σd̃r, Σw̃r` (`x̃ = x − x̄`).
#[derive(Default, Clone, Copy, Debug)]
pub(super) struct Sums3 {
    pub(super) d: f32,
    pub(super) w: f32,
    pub(super) r: f32,
    pub(super) dr: f32,
    pub(super) wr: f32,
    pub(super) rr: f32,
    pub(super) cdd: f32,
    pub(super) cdw: f32,
    pub(super) cww: f32,
    pub(super) cdr: f32,
    pub(super) cwr: f32,
}

/// The float pass, centred on the middle of the window (`k_c = (m − 1)/2`): 17 flops per sample,
/// two exponentials per pass.
fn pass3<S: Sample>(win: &[S], zero: f32, q_lvl: f32, b: f32, lambda: f32) -> Sums3 {
    let half = 0.5 * (win.len() as f32 - 1.0);
    let mut e = exp_pos(lambda * half);
    let q = exp_neg(lambda);
    let mut x = -half;
    let (mut sd, mut sw, mut sdd, mut sdw, mut sww) = (0.0f32, 0.0f32, 0.0f32, 0.0f32, 0.0f32);
    let (mut sr, mut sdr, mut swr, mut srr) = (0.0f32, 0.0f32, 0.0f32, 0.0f32);
    for v in win {
        let c = v.to_f32() - zero;
        let d = e - 1.0;
        let w = x * e;
        let r = c - q_lvl + b * d;
        sd += d;
        sw += w;
        sdd += d * d;
        sdw += d * w;
        sww += w * w;
        sr += r;
        sdr += d * r;
        swr += w * r;
        srr += r * r;
        e *= q;
        x += 1.0;
    }
    let mf = win.len() as f32;
    Sums3 {
        d: sd,
        w: sw,
        r: sr,
        dr: sdr,
        wr: swr,
        rr: srr,
        cdd: sdd - sd * sd / mf,
        cdw: sdw - sd * sw / mf,
        cww: sww - sw * sw / mf,
        cdr: sdr - sd * sr / mf,
        cwr: swr - sw * sr / mf,
    }
}

/// The result of the refinement on one window.
#[derive(Clone, Copy, Debug)]
pub(super) struct Fit3 {
    /// Index (in the window) the model is centred on, `k_c`.
    pub(super) centre: f32,
    /// Level at `k_c`, counts above zero.
    pub(super) q: f32,
    /// Amplitude at `k_c`, counts.
    pub(super) b: f32,
    pub(super) lambda: f32,
    pub(super) rr: f32,
    /// Variances and covariances of (Q, B, v = B·Δλ), over σ̂².
    pub(super) vqq: f32,
    pub(super) vbb: f32,
    pub(super) vvv: f32,
    pub(super) vqb: f32,
    pub(super) vqv: f32,
    pub(super) vbv: f32,
}

/// Which pass makes the sums.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub(super) enum Arith {
    /// f32 over the samples, centred mid-window.
    Float,
    /// Integer sums over exact counts ([`super::counts`]), centred on the window's first sample.
    Counts,
}

/// What the refinement of one window gave.
pub(super) enum Refined {
    Fit(Fit3),
    /// Singular, not settling, or not a rise.
    Failed,
    /// The integer pass met a window or value outside its bounds: redo in f32.
    OutOfBounds,
}

/// Gauss–Newton on one window from λ with at most `passes` passes (see the module docs for the
/// stopping rule, which applies only with `early`; `noise` is the expected noise, counts RMS). Out of line: a caller that tries
/// several windows keeps one frame of it, not one per window.
#[inline(never)]
pub(super) fn refine3<S: Sample>(
    win: &[S],
    zero: f32,
    lambda0: f32,
    passes: u8,
    noise: f32,
    arith: Arith,
    early: bool,
) -> Refined {
    let m = win.len();
    if m < MIN_SAMPLES {
        return Refined::Failed;
    }
    let mf = m as f32;
    let half = 0.5 * (mf - 1.0);
    let mut lambda = clamp(lambda0, LAMBDA_MIN, LAMBDA_MAX);
    let first = win[0].to_f32() - zero;
    let last = win[m - 1].to_f32() - zero;
    let mid = win[m / 2].to_f32() - zero;
    // The model's own rise across the window is B·(e^(λ·half) − e^(−λ·half)) with B at
    // mid-window. The integer pass is centred on the first sample: the same start, B·e^(λ·half).
    let grow = exp_pos(lambda * half);
    let span = grow - 1.0 / grow;
    let mut b = (last - first) / larger(span, 1.0e-12);
    let mut q = mid;
    let centre = match arith {
        Arith::Float => half,
        Arith::Counts => {
            let b0 = b * grow;
            q = mid + b - b0;
            b = b0;
            0.0
        }
    };
    let mut out = None;
    for _ in 0..passes.clamp(1, MAX_REFINEMENTS + 1) {
        let s = match arith {
            Arith::Float => pass3(win, zero, q, b, lambda),
            Arith::Counts => match super::counts::pass(win, zero, q, b, lambda) {
                Some(s) => s,
                None => return Refined::OutOfBounds,
            },
        };
        let (cdd, cdw, cww, cdr, cwr) = (s.cdd, s.cdw, s.cww, s.cdr, s.cwr);
        let det = cdd * cww - cdw * cdw;
        if !(det.is_finite() && det > 1.0e-9 * cdd * cww) {
            return Refined::Failed;
        }
        // Columns 1, −(e − 1)… in the model c = Q + B − B·e: ∂c/∂B = −(e − 1) = −d, ∂c/∂λ = B·w.
        let d_b = (-cdr * cww + cdw * cwr) / det;
        let v = (cdd * cwr - cdw * cdr) / det;
        let d_q = (s.r + s.d * d_b - s.w * v) / mf;
        if !(b.is_finite() && b > 0.0) {
            return Refined::Failed;
        }
        let d_lambda = v / b;
        let new_lambda = clamp(
            clamp(lambda + d_lambda, 0.25 * lambda, 4.0 * lambda),
            LAMBDA_MIN,
            LAMBDA_MAX,
        );
        let full = new_lambda == lambda + d_lambda;
        // Residual after the step, to second order: Σr² − gᵀΔ, g = (Σr, −Σd·r, Σw·r).
        let rr = if full {
            larger(s.rr - (d_q * s.r - d_b * s.dr + v * s.wr), 0.0)
        } else {
            s.rr
        };
        let settled = (d_lambda / lambda).abs() < 1.0e-5 && (d_b / b).abs() < 1.0e-5;
        // Covariance (over σ̂²): the centred 2 × 2 inverse for (B, v); Q = mean terms + a·(B, v)
        // with a = (Σd/m, −Σw/m).
        let (ibb, ivv, ibv) = (cww / det, cdd / det, cdw / det);
        // The step's remainder against λ's own standard error (module docs):
        // λm·(Δλ/λ)² ≤ SETTLE·sd(λ)/λ, squared to avoid a root.
        // Against the standard error the expected noise alone gives: a misfit (residuals far above
        // noise) inflates the fit's own, and would stop a far-off iteration early.
        let s2 = noise * noise;
        let rel = d_lambda / lambda;
        let lhs = lambda * mf * rel * rel;
        let var_rel = s2 * ivv / (b * lambda * b * lambda);
        // Quadratic convergence holds for residuals at the noise: a misfit (a fast component in
        // the window) converges only linearly, and runs until settled.
        let at_noise = rr <= HEAD_RATIO * HEAD_RATIO * noise * noise * larger(mf - 3.0, 1.0);
        let small = early && full && at_noise && lhs * lhs <= SETTLE * SETTLE * var_rel;
        q += d_q;
        b += d_b;
        lambda = new_lambda;
        let (a1, a2) = (s.d / mf, -s.w / mf);
        let vqb = a1 * ibb + a2 * ibv;
        let vqv = a1 * ibv + a2 * ivv;
        let vqq = 1.0 / mf + a1 * vqb + a2 * vqv;
        out = Some((
            full,
            Fit3 {
                centre,
                q,
                b,
                lambda,
                rr,
                vqq,
                vbb: ibb,
                vvv: ivv,
                vqb,
                vqv,
                vbv: ibv,
            },
        ));
        if settled || small {
            break;
        }
    }
    match out {
        Some((true, f)) if f.b > 0.0 && f.lambda.is_finite() => Refined::Fit(f),
        _ => Refined::Failed,
    }
}

/// Model value of a [`Fit3`] at index `k` of its window (counts above zero).
pub(super) fn model_at(f: &Fit3, k: f32) -> f32 {
    let x = k - f.centre;
    // e^(−λx) for either sign of x.
    let e = if x >= 0.0 {
        exp_neg(f.lambda * x)
    } else {
        exp_pos(-f.lambda * x)
    };
    f.q + f.b - f.b * e
}
