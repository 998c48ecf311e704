//! A learned per-coil baseline: the healthy coil's own signature, to judge later pulses against.
//!
//! # Why
//!
//! The design bands must hold every coil of the design: ±10 % resistance, ±10 % inductance, the
//! whole temperature range, the eddy path of any sample of the part. One coil, once fitted, has
//! one resistance at 20 °C, one inductance and one eddy signature. Learned at commissioning, they
//! replace the part-to-part tolerance by the pulse-to-pulse repeatability, and the eddy path's
//! bias on the fitted slope and τ (the same every pulse) cancels in the comparison.
//!
//! # What is learned
//!
//! Over a few diagnostic pulses (each first judged [`Finding::Healthy`] against the design bands
//! by [`judge_response`], so a faulty coil is never learned as healthy):
//!
//! - the inductance in measured terms, `L = k_s·V_d/s` at the mid-band drive ([`Expected`], with
//!   the supply reading when there is one);
//! - the winding resistance `R_w = k_s·V_d/I∞ − R_ext`, referred to the coil's reference
//!   temperature with the copper law `R(T) = R_ref·(1 + α(T − T_ref))` and the board temperature
//!   (when given);
//! - the fast component: the head shortfall over the final current;
//! - the spread of L and R across the pulses.
//!
//! # How later pulses are judged ([`judge_baseline`])
//!
//! Design bands first (open, short, sensor, shape, supply: all as without a baseline). A pulse the
//! bands pass is compared with the baseline: `L/L_b` outside `1 ± (k·√(sd² + spread²) + margin)`
//! → [`Finding::ShortedTurns`] (below) or [`Finding::InductanceHigh`] (above); with both
//! temperatures known, `R₂₀/R_b` likewise → [`Finding::HighResistance`] above, and below with
//! the inductance kept [`Finding::ShapeUnexplained`] (shorted turns lower L at least as much), the window widened by `α·board_kelvin` for the winding's
//! offset from the board sensor; a head shortfall grown by more than `head_fraction` of the final
//! current → [`Finding::ShortedTurns`] (a coupled shorted loop appeared).
//!
//! Each window also keeps the part of the healthy coil's bias envelope that a change of
//! operating point moves (`verdict/envelope.rs`): the eddy part in proportion to the log change
//! of the coil's τ between learning and now (from the two board readings), the saturation part
//! whole (the current the learning pulses reached is not recorded), the whole envelope when the
//! fit left the window's head out now and not at learning or the reverse.
//!
//! Results are engineering estimates; a learned baseline is only as good as the coil it was
//! learned on. Follow the component datasheets and licensed practice.

mod record;
#[cfg(test)]
mod tests;

pub use record::{crc32, RecordError, RECORD_LEN, RECORD_VERSION};

use super::band::Expected;
use super::fit::{sqrt, ResponseFit};
use super::verdict::{judge_response, Criteria, Finding, Verdict};
use crate::units::{Celsius, Henries, Ohms, Seconds};

/// A coil's learned signature (see the module docs). Figures in the measured terms of the sense
/// input; finite and positive (spreads and head fraction ≥ 0).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Baseline {
    pulses: u8,
    temperature_known: bool,
    inductance: f32,
    resistance: f32,
    temperature: f32,
    head_fraction: f32,
    spread_inductance: f32,
    spread_resistance: f32,
    tau: f32,
}

impl Baseline {
    fn is_valid(&self) -> bool {
        let pos = |x: f32| x > 0.0 && x < f32::INFINITY;
        let non_neg = |x: f32| (0.0..f32::INFINITY).contains(&x);
        pos(self.inductance)
            && pos(self.resistance)
            && pos(self.tau)
            && self.temperature.is_finite()
            && non_neg(self.head_fraction)
            && non_neg(self.spread_inductance)
            && non_neg(self.spread_resistance)
            && self.pulses > 0
    }
    /// Pulses the baseline was learned from.
    pub const fn pulses(&self) -> u8 {
        self.pulses
    }
    /// Inductance in measured terms (`k_s·V_d/s`), H.
    pub const fn inductance(&self) -> Henries {
        Henries::new(self.inductance)
    }
    /// Winding resistance in measured terms, referred to the coil's reference temperature when
    /// [`Baseline::temperature`] is known (else at the learning temperature), Ω.
    pub const fn resistance(&self) -> Ohms {
        Ohms::new(self.resistance)
    }
    /// Board temperature at learning, when known.
    pub fn temperature(&self) -> Option<Celsius> {
        self.temperature_known
            .then_some(Celsius::new(self.temperature))
    }
    /// Time constant at learning (mean), s.
    pub const fn tau(&self) -> Seconds {
        Seconds::new(self.tau)
    }
    /// Fast component learned: head shortfall over the final current.
    pub const fn head_fraction(&self) -> f32 {
        self.head_fraction
    }
}

/// Why no baseline was learned.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum LearnError {
    /// Fewer healthy pulses than asked for.
    TooFewPulses {
        /// Pulses accumulated.
        have: u8,
    },
    /// A pulse was not healthy against the design bands: the coil is not learned (the finding of
    /// the first refused pulse).
    Refused(Finding),
    /// The pulses disagree on whether the board temperature is known.
    MixedTemperature,
}

/// Accumulates diagnostic pulses into a [`Baseline`] (running sums, no heap).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Learning {
    n: u8,
    sum_l: f32,
    sum_l2: f32,
    sum_r: f32,
    sum_r2: f32,
    sum_h: f32,
    sum_tau: f32,
    sum_t: f32,
    with_t: u8,
    refused: Option<Finding>,
}

impl Default for Learning {
    fn default() -> Self {
        Self::new()
    }
}

/// `(L, R_w at the learning/judging temperature, head fraction)` from a fit, or `None` when a
/// figure is not finite and positive.
fn signature(fit: &ResponseFit, expected: &Expected) -> Option<(f32, f32, f32)> {
    let drive = expected.nominal_drive().value();
    let p = fit.rise.final_current.value();
    let l = drive / fit.rise.slope;
    let r = drive / p - expected.external_resistance().value();
    let h = fit.shape.head_deficit.value() / p;
    let pos = |x: f32| x > 0.0 && x < f32::INFINITY;
    (pos(l) && pos(r) && h.is_finite()).then_some((l, r, if h > 0.0 { h } else { 0.0 }))
}

/// `R(T)/R(T_ref) = 1 + α(T − T_ref)` of the design's coil, or `None` outside the copper model's
/// domain (factor not positive).
fn copper_factor(expected: &Expected, t: Celsius) -> Option<f32> {
    let c = expected.coil();
    let f =
        1.0 + c.temperature_coefficient().value() * (t.value() - c.reference_temperature().value());
    (f > 0.0 && f.is_finite()).then_some(f)
}

impl Learning {
    /// Nothing learned yet (usable in a `static`).
    pub const fn new() -> Self {
        Self {
            n: 0,
            sum_l: 0.0,
            sum_l2: 0.0,
            sum_r: 0.0,
            sum_r2: 0.0,
            sum_h: 0.0,
            sum_tau: 0.0,
            sum_t: 0.0,
            with_t: 0,
            refused: None,
        }
    }

    /// Adds one diagnostic pulse, judged first against the design bands (`expected`, which should
    /// carry the supply reading and temperature window when there are any). `board`: the board
    /// temperature now. Returns the design verdict; a pulse that is not [`Finding::Healthy`]
    /// voids the learning ([`LearnError::Refused`]). At most 255 pulses count.
    pub fn add(
        &mut self,
        fit: &ResponseFit,
        expected: &Expected,
        board: Option<Celsius>,
        criteria: &Criteria,
    ) -> Verdict {
        let v = judge_response(fit, expected, criteria);
        let sig = signature(fit, expected);
        let factor = match board {
            Some(t) => copper_factor(expected, t),
            None => Some(1.0),
        };
        match (v.finding, sig, factor) {
            (Finding::Healthy, Some((l, r, h)), Some(f)) if self.n < u8::MAX => {
                let r = r / f;
                self.n += 1;
                self.sum_l += l;
                self.sum_l2 += l * l;
                self.sum_r += r;
                self.sum_r2 += r * r;
                self.sum_h += h;
                self.sum_tau += fit.rise.tau.value();
                if let Some(t) = board {
                    self.sum_t += t.value();
                    self.with_t += 1;
                }
            }
            (Finding::Healthy, _, _) if self.n == u8::MAX => {}
            (f, _, _) => {
                if self.refused.is_none() {
                    self.refused = Some(if f == Finding::Healthy {
                        Finding::CannotTell(super::Undetermined::NoConvergence)
                    } else {
                        f
                    });
                }
            }
        }
        v
    }

    /// Pulses accumulated so far.
    pub const fn pulses(&self) -> u8 {
        self.n
    }

    /// The baseline: means of the pulses, their relative spread (sample standard deviation over
    /// the mean, 0 for one pulse).
    ///
    /// # Errors
    /// [`LearnError`]: a refused pulse, fewer than `min_pulses` (at least 1), or some pulses with
    /// and some without a board temperature.
    pub fn finish(&self, min_pulses: u8) -> Result<Baseline, LearnError> {
        if let Some(f) = self.refused {
            return Err(LearnError::Refused(f));
        }
        if self.n == 0 || self.n < min_pulses {
            return Err(LearnError::TooFewPulses { have: self.n });
        }
        if self.with_t != 0 && self.with_t != self.n {
            return Err(LearnError::MixedTemperature);
        }
        let n = f32::from(self.n);
        let spread = |s: f32, s2: f32| {
            let mean = s / n;
            if self.n < 2 {
                return 0.0;
            }
            let var = (s2 - s * mean) / (n - 1.0);
            if var > 0.0 {
                sqrt(var) / mean
            } else {
                0.0
            }
        };
        let b = Baseline {
            pulses: self.n,
            temperature_known: self.with_t == self.n,
            inductance: self.sum_l / n,
            resistance: self.sum_r / n,
            temperature: if self.with_t == self.n {
                self.sum_t / n
            } else {
                0.0
            },
            head_fraction: self.sum_h / n,
            spread_inductance: spread(self.sum_l, self.sum_l2),
            spread_resistance: spread(self.sum_r, self.sum_r2),
            tau: self.sum_tau / n,
        };
        if b.is_valid() {
            Ok(b)
        } else {
            Err(LearnError::TooFewPulses { have: self.n })
        }
    }
}

/// Judges a free-level fit against the design bands and then against the coil's `baseline`
/// (see the module docs for the windows). `board`: the board temperature now; the resistance is
/// compared only when it and the baseline's temperature are both known.
///
/// Windows, in logarithms: `L`: `ln(1 + k·√(sd_s² + spread_L²) + baseline_margin) + D_L`; `R`:
/// `ln(1 + k·√(sd_I∞² + spread_R²) + baseline_margin + α·board_kelvin) + D_R`, with `D_L`, `D_R`
/// the drift of the bias envelope between learning and now (module docs; `docs/diagnosis.md`
/// §10). Never panics (NaN figures fail every comparison and keep the design verdict's finding
/// or the healthy one); the estimates are those of [`judge_response`].
pub fn judge_baseline(
    fit: &ResponseFit,
    baseline: &Baseline,
    expected: &Expected,
    board: Option<Celsius>,
    criteria: &Criteria,
) -> Verdict {
    let mut v = judge_response(fit, expected, criteria);
    if v.finding != Finding::Healthy {
        return v;
    }
    let Some((l, r, h)) = signature(fit, expected) else {
        return v;
    };
    let q = fit.rise.quality;
    let k = criteria.sigmas;
    let m = criteria.baseline_margin;
    let hypot = |a: f32, b: f32| sqrt(a * a + b * b);
    let alpha = expected.coil().temperature_coefficient().value();
    // The operating point's log change between learning and now (envelope.rs): the coil's τ
    // moves as 1/R(T) — from the two board readings, each up to board_kelvin off the winding;
    // without them, the whole design window of τ. The current the window reaches is not known
    // at learning (the baseline keeps the drive-normalised figures), so the saturation part
    // is kept whole.
    let factors = match (board, baseline.temperature()) {
        (Some(t), Some(tb)) => copper_factor(expected, t).zip(copper_factor(expected, tb)),
        _ => None,
    };
    let ln_tau_change = match factors {
        Some((f, fb)) => libm::logf(f / fb).abs() + 2.0 * alpha * criteria.board_kelvin,
        None => libm::logf(expected.tau.max.value() / expected.tau.min.value()),
    };
    // The fit keeps a shorter window when a fast mode holds the head back (fit/free.rs); with
    // the head left out now and not at learning (or the other way) the two biases are those of
    // different windows, not of a moved operating point: the whole envelope.
    let head_now = fit.shape.skipped > 0;
    let head_then = baseline.head_fraction > 0.0;
    let ln_tau_change = if head_now == head_then {
        ln_tau_change
    } else {
        f32::INFINITY
    };
    let drift = criteria.envelope(1.0).drift(ln_tau_change, f32::INFINITY);
    // Both pulses carry a bias inside the envelope; their ratio moves by the drift alone.
    let (dl_lo, dl_hi) = drift.ln_inductance();
    let dl = dl_lo + dl_hi;
    let (dr_lo, dr_hi) = drift.ln_resistance();
    let tol_l = k * hypot(q.rel_sd_slope, baseline.spread_inductance) + m;
    let ratio_l = l / baseline.inductance;
    let l_low = libm::logf(ratio_l) < -(libm::log1pf(tol_l) + dl);
    let l_high = libm::logf(ratio_l) > libm::log1pf(tol_l) + dl;
    let r_check = factors.map(|(f, _)| {
        let tol = k * hypot(q.rel_sd_final, baseline.spread_resistance)
            + m
            + alpha * criteria.board_kelvin;
        let ln_ratio = libm::logf(r / f / baseline.resistance);
        let span = libm::log1pf(tol) + dr_lo + dr_hi;
        (ln_ratio < -span, ln_ratio > span)
    });
    let grown = h - baseline.head_fraction > criteria.head_fraction && fit.shape.head_sigmas > k;
    let r_low = matches!(r_check, Some((true, _)));
    v.finding = if l_low || grown {
        Finding::ShortedTurns
    } else if r_low {
        // Resistance down with the inductance kept: not shorted turns (see judge_response).
        Finding::ShapeUnexplained
    } else if matches!(r_check, Some((_, true))) {
        Finding::HighResistance
    } else if l_high {
        Finding::InductanceHigh
    } else {
        Finding::Healthy
    };
    v
}
