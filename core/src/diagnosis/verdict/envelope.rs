//! The bias envelope of a healthy coil's fitted slope and τ, and what it implies for every figure
//! derived from them. One place: the design verdict ([`super::judge_response`]) and the baseline
//! comparison ([`crate::diagnosis::judge_baseline`]) both take their allowances from here.
//!
//! # The physics
//!
//! A first-order fit of a diagnostic pulse (about 30 % of the rise) reads a real healthy coil
//! with a bias the residuals do not show:
//!
//! - an eddy-current path (a closed loop coupled to the winding) adds a fast mode: the slope
//!   `s` reads high by up to `e_s` and τ low by up to `e_t` (relative: `τ_fit ≥ (1 − e_t)·τ`);
//! - saturation (inductance falling with current) makes the rise accelerate late: τ reads high
//!   by up to `e_sat` (`τ_fit ≤ (1 + e_sat)·τ`), the slope low by up to `e_sl` (a few per cent).
//!
//! In ratio form, the true figures from the fitted ones:
//!
//! ```text
//! s   ∈ [s_fit/(1 + e_s), s_fit/(1 − e_sl)]
//! τ   ∈ [τ_fit/(1 + e_sat), τ_fit/(1 − e_t)]
//! L   = k_s·V_d/s         ∈ [L_fit·(1 − e_sl), L_fit·(1 + e_s)]
//! R   = L/τ               ∈ [R_fit·(1 − e_sl)(1 − e_t), R_fit·(1 + e_s)(1 + e_sat)]
//! I∞  = s·τ               ∈ [I_fit/((1 + e_s)(1 + e_sat)), I_fit/((1 − e_sl)(1 − e_t))]
//! ```
//!
//! R and I∞ compound both biases. (`1 − e_t` and not `1/(1 + e_t)`: a τ that reads 63 % low is
//! 0.37 of the true one, and the true one may be 2.7 times the fitted one.)
//!
//! # What the baseline keeps
//!
//! A learned baseline removes the part-to-part tolerance, and the part of the bias that is the
//! same at every pulse. The bias depends on the operating point too: the eddy bias on the ratio
//! of the window and of the loop's time constant to the coil's τ, which the winding temperature
//! moves (`τ = L/R(T)`); the saturation bias on the current the window reaches, which supply and
//! temperature move. On the analytic two-loop rise the eddy bias of ln τ falls by 0.48 per unit
//! ln of the window in time constants (worst path: −41 % at 0.36 τ, −19 % at 0.7 τ, −4 % at
//! 1.2 τ), about its own size per unit: a bias proportional to `τ/window` to first order. A
//! change of the coil's τ moves two arguments of the bias by the same log step — the window in
//! time constants and the loop's time constant over the coil's (the loop's resistance need not
//! follow the winding's temperature) — each with unit log sensitivity: `g = 2`. The comparison
//! therefore keeps `min(E, g·E·|Δ|)` of each log envelope E, with `Δ` the log change of the
//! operating point between learning and now; saturation's secant-inductance drop grows as the
//! square of the current (`L(i) = L₀(1 − d·u²/(1 + u²))`), `g = 2` against the log change of
//! the current reached. The ratio of two biased figures moves by at most the sum of the lower
//! and upper drift envelopes.

/// The envelope, relative biases (all ≥ 0).
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Envelope {
    /// The slope may read high by this (eddy path).
    pub(crate) slope_high: f32,
    /// τ may read low by this, `τ_fit ≥ (1 − tau_low)·τ` (eddy path); below 1.
    pub(crate) tau_low: f32,
    /// τ may read high by this (saturation).
    pub(crate) tau_high: f32,
    /// The slope may read low by this (saturation), `s_fit ≥ (1 − slope_low)·s`; below 1.
    pub(crate) slope_low: f32,
}

/// Largest `tau_low` honoured: a τ allowed to read 99 % low is no constraint at all.
const TAU_LOW_MAX: f32 = 0.99;

fn clamp(x: f32, hi: f32) -> f32 {
    if x > 0.0 {
        x.min(hi)
    } else {
        0.0
    }
}

impl Envelope {
    /// No allowance: the ideal first-order coil.
    pub(crate) const NONE: Self = Self {
        slope_high: 0.0,
        tau_low: 0.0,
        tau_high: 0.0,
        slope_low: 0.0,
    };

    /// The envelope of the criteria, the eddy part scaled by `eddy_scale` (in `[0, 1]`, the
    /// window-length law of [`super::judge_response`]). NaN or negative inputs count as 0.
    /// `(slope_high, tau_low)` are the eddy path's, `(tau_high, slope_low)` saturation's.
    pub(crate) fn new(eddy: (f32, f32), saturation: (f32, f32), eddy_scale: f32) -> Self {
        let s = clamp(eddy_scale, 1.0);
        Self {
            slope_high: clamp(eddy.0, f32::MAX) * s,
            tau_low: clamp(eddy.1 * s, TAU_LOW_MAX),
            tau_high: clamp(saturation.0, f32::MAX),
            slope_low: clamp(saturation.1, TAU_LOW_MAX),
        }
    }

    /// `τ_true/τ_fit` may reach this (≥ 1): `1/(1 − tau_low)`.
    pub(crate) fn tau_up(&self) -> f32 {
        1.0 / (1.0 - self.tau_low)
    }

    /// `τ_fit/τ_true` may reach this (≥ 1): `1 + tau_high`.
    pub(crate) fn tau_down(&self) -> f32 {
        1.0 + self.tau_high
    }

    /// `s_fit/s_true` may reach this (≥ 1): `1 + slope_high`.
    pub(crate) fn slope_down(&self) -> f32 {
        1.0 + self.slope_high
    }

    /// `s_true/s_fit` may reach this (≥ 1): `1/(1 − slope_low)`.
    pub(crate) fn slope_up(&self) -> f32 {
        1.0 / (1.0 - self.slope_low)
    }

    /// Log half-widths (lower, upper) of the true over the fitted inductance `k_s·V_d/s`.
    pub(crate) fn ln_inductance(&self) -> (f32, f32) {
        (libm::logf(self.slope_up()), libm::logf(self.slope_down()))
    }

    /// Log half-widths (lower, upper) of the true over the fitted resistance `k_s·V_d/I∞`
    /// (`I∞ = s·τ`): below by `ln(1/((1 − e_sl)(1 − e_t)))`, above by `ln((1 + e_s)(1 + e_sat))`.
    pub(crate) fn ln_resistance(&self) -> (f32, f32) {
        (
            libm::logf(self.slope_up() * self.tau_up()),
            libm::logf(self.slope_down() * self.tau_down()),
        )
    }

    /// The part of the envelope that a change of operating point can move between a learned
    /// baseline and now (module docs): each log envelope E kept as `min(E, g·E·|Δ|)`, with `Δ_t`
    /// the log change of the coil's τ (eddy part, g = 2) and `Δ_i` the log change of the current
    /// the window reaches (saturation part, g = 2). Non-finite changes keep the whole envelope.
    pub(crate) fn drift(&self, ln_tau_change: f32, ln_current_change: f32) -> Self {
        let part = |g: f32, d: f32| {
            let f = g * d.abs();
            if f.is_finite() {
                f.min(1.0)
            } else {
                1.0
            }
        };
        let pe = part(2.0, ln_tau_change);
        let ps = part(2.0, ln_current_change);
        // Scale the log envelopes, then back to relative figures.
        let ln_s = libm::logf(self.slope_down()) * pe;
        let ln_t = libm::logf(self.tau_up()) * pe;
        let ln_h = libm::logf(self.tau_down()) * ps;
        let ln_l = libm::logf(self.slope_up()) * ps;
        Self {
            slope_high: libm::expf(ln_s) - 1.0,
            tau_low: 1.0 - libm::expf(-ln_t),
            tau_high: libm::expf(ln_h) - 1.0,
            slope_low: 1.0 - libm::expf(-ln_l),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_tau_sixty_three_percent_low_allows_two_point_seven_times() {
        // τ_fit = 0.37·τ: the true τ is 1/0.37 = 2.70 times the fitted one (arithmetic).
        let e = Envelope::new((0.34, 0.63), (0.0, 0.0), 1.0);
        assert!((e.tau_up() - 2.7027).abs() < 1e-3);
        // R = L/τ compounds: the true R may be as low as 0.37 of the fitted one, and as high as
        // 1.34 times it (L reads low by the slope's bias).
        let (lo, hi) = e.ln_resistance();
        assert!((libm::expf(-lo) - 0.37).abs() < 1e-5);
        assert!((libm::expf(hi) - 1.34).abs() < 1e-5);
    }

    #[test]
    fn no_drift_no_allowance_and_large_drift_the_whole_envelope() {
        let e = Envelope::new((0.34, 0.63), (0.69, 0.022), 1.0);
        assert_eq!(e.drift(0.0, 0.0), Envelope::NONE);
        let full = e.drift(5.0, 5.0);
        assert!((full.slope_high - e.slope_high).abs() < 1e-5);
        assert!((full.tau_low - e.tau_low).abs() < 1e-5);
        assert!((full.tau_high - e.tau_high).abs() < 1e-5);
        let nan = e.drift(f32::NAN, f32::NAN);
        assert!((nan.tau_low - e.tau_low).abs() < 1e-5);
        // A quarter of a log step of τ keeps half of the eddy log envelope (g = 2); an eighth of
        // one of the current too (g = 2).
        let half = e.drift(0.25, 0.25);
        assert!((libm::logf(1.0 + half.slope_high) - 0.5 * libm::logf(1.34)).abs() < 1e-5);
        assert!((libm::logf(1.0 + half.tau_high) - 0.5 * libm::logf(1.69)).abs() < 1e-5);
    }

    #[test]
    fn bad_inputs_are_no_allowance_and_tau_low_stays_below_one() {
        assert_eq!(
            Envelope::new((f32::NAN, -1.0), (f32::NAN, -2.0), 1.0),
            Envelope::NONE
        );
        let e = Envelope::new((0.1, 3.0), (0.1, 0.0), f32::NAN);
        assert_eq!((e.slope_high, e.tau_low, e.tau_high), (0.0, 0.0, 0.1));
        let e = Envelope::new((0.1, 3.0), (0.1, 5.0), 1.0);
        assert!(e.slope_up().is_finite() && e.slope_low < 1.0);
        assert!(e.tau_up().is_finite() && e.tau_low < 1.0);
    }
}
