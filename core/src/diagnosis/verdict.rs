//! Verdicts: healthy, a named fault, or cannot tell — with the estimates behind them.
//!
//! # How a fitted rise is judged
//!
//! A fit gives the initial slope `s = k_s·V_d/L` and the time constant `τ = L/R_on`. In logarithms,
//! with the healthy bands of [`Expected`] for the sensed drive `ν = ln(k_s·V_d)`, the inductance `ℓ`
//! and the on-loop resistance `h`:
//!
//! 1. the inductance the slope implies is `ln L ∈ ν − ln s` (widened by the slope's error). Below
//!    the band: the winding has lost turns → [`Finding::ShortedTurns`] (far below:
//!    [`Finding::ShortCircuit`]). Above: the drive is lower than the supply band allows →
//!    [`Finding::SupplyLow`], or, with a measured supply, [`Finding::InductanceHigh`];
//! 2. intersected with the band, that inductance and τ give `ln R_on ∈ (ℓ ∩ (ν − ln s)) − ln τ`.
//!    Below the resistance band → [`Finding::ShortedTurns`]; above → [`Finding::HighResistance`]
//!    (a connector, crimp or wire adding resistance in series);
//! 3. otherwise the coil is consistent with the design → [`Finding::Healthy`] (or
//!    [`Finding::SupplyLow`] when a supply reading lies below the design range).
//!
//! Each interval is widened by `sigmas` standard errors of the fit plus `model_margin`. The slope
//! does not depend on any resistance and τ not on the supply, which is what separates a low supply
//! (slope low, τ normal) from a high resistance (slope normal, τ low) and from shorted turns (slope
//! high). What cannot be separated is a resistance fault from a winding temperature inside the
//! band: without a temperature window (see [`super::band::Conditions`]) a +50 % connector on a cold
//! coil reads like a healthy hot coil.
//!
//! No verdict is [`Finding::Healthy`] unless the fit's noise ratio, slope error and τ error all
//! pass [`Criteria`].

use super::armature::{detect_movement, Movement, MovementCriteria};
use super::band::{Expected, ThresholdBand};
use super::fit::{fit_rise, FitOptions, FitQuality, RiseFit, TraceFault};
use super::sample::{Sample, Sampling};
use crate::error::{Error, Param, Why};
use crate::time::{Instant, TickRate};
use crate::units::{Amps, Celsius, Henries, Ohms, Seconds};

/// Why no coil verdict could be given although the trace looked like a sensor working.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Undetermined {
    /// Too few usable samples.
    TooFewSamples,
    /// The initial slope is not fixed precisely enough (too little signal above noise).
    TooLittleSignal,
    /// τ is not fixed precisely enough: the window covers too little of the rise.
    WindowTooShort,
    /// The fit did not settle.
    NoConvergence,
    /// The converter saturates so early that a healthy coil could have reached full scale too:
    /// the converter range is too small to tell.
    RangeTooSmall,
    /// The comparator has not crossed yet, and a healthy coil may still be rising.
    NotYet,
    /// The armature started to move so early that too little of the rise before it is left to
    /// judge the coil (sample faster, or judge the coil with a diagnostic pulse).
    MovementTooEarly,
}

/// The finding of a diagnosis.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Finding {
    /// The rise is consistent with the design within its tolerances and the given conditions.
    Healthy,
    /// No current: open winding, broken wire or connector (a dead sensor that reads zero looks the
    /// same; a second indication, e.g. the switch-node voltage, tells them apart).
    OpenCircuit,
    /// The winding is bypassed: the current is at or beyond full scale almost at once, or the
    /// inductance is nearly gone.
    ShortCircuit,
    /// Inductance and/or resistance below the band: turns shorted inside the winding.
    ShortedTurns,
    /// Resistance above the band with normal inductance: a resistive connector, crimp or wire.
    HighResistance,
    /// The drive voltage is below what the design allows.
    SupplyLow,
    /// Inductance above the band at a measured supply: a different coil fitted, or the armature
    /// held in its operated position.
    InductanceHigh,
    /// Comparator only: the threshold was reached later than the band allows. High resistance or a
    /// low supply; one time cannot tell which (add a steady-current reading).
    SlowRise,
    /// The current passed the point where the armature must move and no dip was seen.
    ArmatureStuck,
    /// The trace cannot come from a coil current: the sensor, its wiring or the converter.
    SensorImplausible(TraceFault),
    /// The measurement is plausible but does not settle the question.
    CannotTell(Undetermined),
}

impl Finding {
    /// Whether this names a fault of the coil, its wiring or its supply (not of the sensor, and not
    /// "cannot tell").
    pub const fn is_coil_fault(&self) -> bool {
        matches!(
            self,
            Finding::OpenCircuit
                | Finding::ShortCircuit
                | Finding::ShortedTurns
                | Finding::HighResistance
                | Finding::SupplyLow
                | Finding::InductanceHigh
                | Finding::SlowRise
                | Finding::ArmatureStuck
        )
    }
}

/// What the measurement says about the coil, for logging. `None` where the measurement does not
/// give it.
#[derive(Clone, Copy, Debug, PartialEq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Estimates {
    /// Final (steady) current, A in measured terms.
    pub final_current: Option<Amps>,
    /// Time constant, s.
    pub tau: Option<Seconds>,
    /// Winding resistance `R_w = k_s·V_d/I∞ − R_external`, Ω, at the mid-band drive (or the
    /// measured supply). Carries the supply's and sense resistor's uncertainty.
    pub resistance: Option<Ohms>,
    /// Inductance `L = τ·R_on`, H.
    pub inductance: Option<Henries>,
    /// Winding temperature `T_ref + (R_w/R_ref − 1)/α` with the nominal R_ref, °C: ±(resistance
    /// tolerance)/α, so ±25 K for a ±10 % copper winding; `None` outside the copper model's range.
    pub temperature: Option<Celsius>,
    /// Fit quality, for sampled traces.
    pub quality: Option<FitQuality>,
    /// Armature movement, for full actuation traces.
    pub movement: Option<Movement>,
}

/// A verdict: the finding and the estimates behind it.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Verdict {
    /// Healthy, a named fault, sensor implausible, or cannot tell.
    pub finding: Finding,
    /// The estimates the finding was drawn from.
    pub estimates: Estimates,
}

impl Verdict {
    fn new(finding: Finding, estimates: Estimates) -> Self {
        Self { finding, estimates }
    }
}

/// How strict the verdicts are.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub struct Criteria {
    /// Standard errors a fitted figure may lie outside a band before it counts (default 4).
    pub sigmas: f32,
    /// Relative allowance for what the model leaves out (default 0.01): eddy currents, converter
    /// gain error, timer resolution.
    pub model_margin: f32,
    /// Largest residual-to-noise ratio for a trustworthy fit (default 2.5).
    pub max_noise_ratio: f32,
    /// Largest relative standard error of slope or τ for a verdict that uses it (default 0.1).
    pub max_rel_sd: f32,
    /// Inductance below this fraction of the band's minimum is a short circuit (default 0.1).
    pub short_fraction: f32,
    /// Current above this multiple of the band's maximum is a short circuit (default 4).
    pub short_current: f32,
    /// Mean current below this fraction of the band's minimum final current is no current
    /// (default 0.02).
    pub open_fraction: f32,
    /// The part of a rise used for the coil fit when the armature moved: samples up to this
    /// fraction of the peak before the dip (default 0.8).
    pub pre_movement_fraction: f32,
    /// Dip detection settings.
    pub movement: MovementCriteria,
}

impl Default for Criteria {
    fn default() -> Self {
        Self {
            sigmas: 4.0,
            model_margin: 0.01,
            max_noise_ratio: 2.5,
            max_rel_sd: 0.1,
            short_fraction: 0.1,
            short_current: 4.0,
            open_fraction: 0.02,
            pre_movement_fraction: 0.8,
            movement: MovementCriteria::default(),
        }
    }
}

/// `x ≤ limit`, false when either is NaN (so a NaN figure never passes a check).
fn at_most(x: f32, limit: f32) -> bool {
    x <= limit
}

fn finite_pos(x: f32) -> Option<f32> {
    // Two plain compares (NaN fails both); `is_finite` compiles to integer bit tests.
    if x > 0.0 && x < f32::INFINITY {
        Some(x)
    } else {
        None
    }
}

/// Estimates from a final current and (optionally) a time constant.
fn estimates(expected: &Expected, final_current: f32, tau: Option<f32>) -> Estimates {
    let i = finite_pos(final_current);
    let r_on = i.and_then(|i| finite_pos(expected.nominal_drive().value() / i));
    let r_w = r_on.and_then(|r| finite_pos(r - expected.external_resistance().value()));
    let temperature = r_w.and_then(|r| {
        expected
            .coil()
            .temperature_from_resistance(Ohms::new(r))
            .ok()
    });
    let tau = tau.and_then(finite_pos);
    Estimates {
        final_current: i.map(Amps::new),
        tau: tau.map(Seconds::new),
        resistance: r_w.map(Ohms::new),
        inductance: match (tau, r_on) {
            (Some(t), Some(r)) => finite_pos(t * r).map(Henries::new),
            _ => None,
        },
        temperature,
        quality: None,
        movement: None,
    }
}

/// The finding for a healthy-looking coil: healthy, or supply low if a reading says so.
fn healthy_or_supply(expected: &Expected) -> Finding {
    if expected.supply_below_design {
        Finding::SupplyLow
    } else {
        Finding::Healthy
    }
}

/// Judges slope and τ with their relative half-widths (already including sigmas and margin).
///
/// The interval arithmetic of the module docs in ratio form (no logarithms): a relative
/// half-width `w` widens `[a, b]` to `[a/(1 + w), b·(1 + w)]`, which is `ln(1 + w) ≈ w` wide
/// either side in logarithms.
fn judge_slope_tau(
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
fn judge_trace_fault(
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

/// Judges a full actuation trace: finds the armature's dip ([`detect_movement`]), judges the coil
/// from the rise before the movement (up to `pre_movement_fraction` of the peak; when that fits
/// badly because the armature was already moving, once more on 60 % of it; failing that, a coil
/// fault found from the first 8 samples alone, else [`Undetermined::MovementTooEarly`]), and
/// reports [`Finding::ArmatureStuck`] when no dip was seen
/// although the current passed pull-in (measured, high sense corner) and the operate allowance has
/// run out, or the trace outlasts [`Expected::movement_by`].
///
/// A coil fault found in the rise takes precedence over the movement. Never panics.
pub fn judge_actuation<S: Sample>(
    samples: &[S],
    sampling: &Sampling,
    expected: &Expected,
    criteria: &Criteria,
    options: &FitOptions,
) -> Verdict {
    let movement = match detect_movement(samples, sampling, &criteria.movement) {
        Ok(m) => m,
        Err(f) => return judge_trace_fault(f, sampling, expected, criteria),
    };
    let prefix = |fraction: f32, peak: f32| {
        let limit = fraction * peak;
        let end = samples
            .iter()
            .position(|s| !at_most(sampling.amps(s.to_f32()), limit))
            .unwrap_or(samples.len());
        &samples[..end]
    };
    let mut v = match movement {
        Movement::Moved { peak, .. } => {
            // The rise before the dip, up to a fraction of the peak; if the armature was already
            // moving within it (residuals far above noise), once more on 60 % of that window.
            let f = criteria.pre_movement_fraction;
            let first = judge_trace(
                prefix(f, peak.value()),
                sampling,
                expected,
                criteria,
                options,
            );
            if first.finding == Finding::SensorImplausible(TraceFault::PoorFit) {
                let second = judge_trace(
                    prefix(0.6 * f, peak.value()),
                    sampling,
                    expected,
                    criteria,
                    options,
                );
                match second.finding {
                    Finding::SensorImplausible(TraceFault::PoorFit)
                    | Finding::CannotTell(Undetermined::TooFewSamples) => {
                        // Last resort: the slope alone from the first samples, before the
                        // armature has travelled far. Only an inductance fault is taken from it.
                        let head = &samples[..samples.len().min(EARLY_SAMPLES)];
                        let early = judge_trace(head, sampling, expected, criteria, options);
                        if early.finding.is_coil_fault() {
                            early
                        } else {
                            Verdict::new(
                                Finding::CannotTell(Undetermined::MovementTooEarly),
                                second.estimates,
                            )
                        }
                    }
                    _ => second,
                }
            } else {
                first
            }
        }
        Movement::NotSeen { .. } => judge_trace(samples, sampling, expected, criteria, options),
    };
    v.estimates.movement = Some(movement);
    if let Movement::NotSeen { by } = movement {
        if v.finding == Finding::Healthy {
            let crossed = samples
                .iter()
                .position(|s| sampling.amps(s.to_f32()) >= expected.pull_in_reading.value())
                .map(|k| sampling.time_of(k).value() + expected.operate_allowance.value());
            let due = match (crossed, expected.movement_by) {
                (Some(a), Some(b)) => Some(a.min(b.value())),
                (Some(a), None) => Some(a),
                (None, b) => b.map(|b| b.value()),
            };
            if let Some(due) = due {
                if by.value() >= due {
                    v.finding = Finding::ArmatureStuck;
                }
            }
        }
    }
    v
}

/// Samples of the slope-only last resort of [`judge_actuation`].
const EARLY_SAMPLES: usize = super::fit::MIN_SAMPLES + 2;

/// A comparator reading: when the measured current crossed the threshold, or how long it was
/// watched without crossing.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ThresholdReading {
    /// Crossed this long after switch-on.
    Crossed(Seconds),
    /// Not crossed within this long after switch-on.
    NotCrossed {
        /// Time watched, s.
        waited: Seconds,
    },
}

impl ThresholdReading {
    /// A reading from timer instants: switch-on, the capture of the crossing (if any) and now.
    /// Wrap-safe for spans below 2³¹ ticks ([`Instant::since`]).
    ///
    /// # Errors
    /// A crossing before switch-on, or `now` before switch-on (or before the crossing):
    /// [`Error::Invalid`] ([`Param::Time`], [`Why::Negative`]).
    pub fn from_instants(
        rate: TickRate,
        switch_on: Instant,
        crossing: Option<Instant>,
        now: Instant,
    ) -> Result<Self, Error> {
        let waited = now.since(switch_on);
        if waited < 0 {
            return Err(Error::invalid(Param::Time, Why::Negative));
        }
        match crossing {
            Some(c) => {
                let d = c.since(switch_on);
                if d < 0 || now.since(c) < 0 {
                    return Err(Error::invalid(Param::Time, Why::Negative));
                }
                Ok(Self::Crossed(rate.seconds(crate::time::Ticks(d as u32))))
            }
            None => Ok(Self::NotCrossed {
                waited: rate.seconds(crate::time::Ticks(waited as u32)),
            }),
        }
    }
}

/// Judges a comparator time-to-threshold, with a steady-current reading when there is one.
///
/// - Time only: before the band (less `model_margin`) → [`Finding::ShortedTurns`], before
///   `short_fraction` of the band's minimum → [`Finding::ShortCircuit`]; after the band →
///   [`Finding::SlowRise`]; never crossed although watched past the band → [`Finding::OpenCircuit`].
/// - With a steady current `I` (above the threshold): `τ = t/ln(I/(I − I_th))` and `s = I/τ` are
///   judged as a fitted rise, each with `model_margin` plus the sensitivity of τ to a
///   `model_margin` error in I. Not crossed: the steady reading is judged alone
///   ([`judge_steady`]).
///
/// Never panics; negative or non-finite times and currents are
/// [`Finding::SensorImplausible`].
pub fn judge_threshold(
    reading: ThresholdReading,
    band: &ThresholdBand,
    steady: Option<Amps>,
    expected: &Expected,
    criteria: &Criteria,
) -> Verdict {
    let m = criteria.model_margin;
    let none = Estimates::default();
    let t_lo = band.time.min.value() * (1.0 - m);
    let t_hi = band.time.max.value() * (1.0 + m);
    match reading {
        ThresholdReading::Crossed(t) => {
            let t = t.value();
            if !(t.is_finite() && t >= 0.0) {
                return Verdict::new(Finding::SensorImplausible(TraceFault::BadTime), none);
            }
            if let Some(i) = steady {
                let i = i.value();
                let i_th = band.threshold.value();
                if !i.is_finite() {
                    return Verdict::new(
                        Finding::SensorImplausible(TraceFault::NotFinite { index: 0 }),
                        none,
                    );
                }
                if i <= i_th * (1.0 + m) || t <= 0.0 {
                    return Verdict::new(
                        Finding::SensorImplausible(TraceFault::Inconsistent),
                        none,
                    );
                }
                // τ = t / ln(I/(I − I_th)); d ln τ / d ln I = (I_th/(I − I_th)) / ln(I/(I − I_th)).
                let g = libm::log1pf(i_th / (i - i_th));
                let tau = t / g;
                let sens = (i_th / (i - i_th)) / g;
                let half_tau = m + sens * m;
                let mut est = estimates(expected, i, Some(tau));
                let finding = if finite_pos(tau).is_none() {
                    Finding::SensorImplausible(TraceFault::Inconsistent)
                } else {
                    judge_slope_tau(
                        i / tau,
                        tau,
                        half_tau + m,
                        Some(half_tau),
                        expected,
                        criteria,
                    )
                };
                est.quality = None;
                return Verdict::new(finding, est);
            }
            let finding = if t < t_lo * criteria.short_fraction {
                Finding::ShortCircuit
            } else if t < t_lo {
                Finding::ShortedTurns
            } else if t > t_hi {
                Finding::SlowRise
            } else {
                healthy_or_supply(expected)
            };
            Verdict::new(finding, none)
        }
        ThresholdReading::NotCrossed { waited } => {
            let w = waited.value();
            if !(w.is_finite() && w >= 0.0) {
                return Verdict::new(Finding::SensorImplausible(TraceFault::BadTime), none);
            }
            if w <= t_hi {
                return Verdict::new(Finding::CannotTell(Undetermined::NotYet), none);
            }
            match steady {
                Some(i) => judge_steady(i, expected, criteria),
                None => Verdict::new(
                    if expected.supply_below_design {
                        Finding::SupplyLow
                    } else {
                        Finding::OpenCircuit
                    },
                    none,
                ),
            }
        }
    }
}

/// Judges a steady (final) current reading alone against the final-current band
/// ([`Expected::final_current`], the hull of `k_s·V_d/R_on`), widened by `model_margin`. Above
/// the band (too little resistance) → [`Finding::ShortedTurns`] (beyond `short_current` × the
/// band's top → [`Finding::ShortCircuit`]); below it → [`Finding::HighResistance`] (assuming the
/// supply within its band: without a supply reading a low supply reads the same, and a supply
/// known to be below the design's range gives [`Finding::SupplyLow`]); at or below
/// `open_fraction` of the band's bottom → [`Finding::OpenCircuit`].
///
/// Never panics.
pub fn judge_steady(current: Amps, expected: &Expected, criteria: &Criteria) -> Verdict {
    let i = current.value();
    let m = criteria.model_margin;
    if !i.is_finite() {
        return Verdict::new(
            Finding::SensorImplausible(TraceFault::NotFinite { index: 0 }),
            Estimates::default(),
        );
    }
    let est = estimates(expected, i, None);
    let i_min = expected.final_current.min.value();
    let i_max = expected.final_current.max.value();
    if i < -m * i_min {
        return Verdict::new(
            Finding::SensorImplausible(TraceFault::BelowZero { index: 0 }),
            est,
        );
    }
    if i <= criteria.open_fraction * i_min {
        return Verdict::new(
            if expected.supply_below_design {
                Finding::SupplyLow
            } else {
                Finding::OpenCircuit
            },
            est,
        );
    }
    let finding = if i > i_max * criteria.short_current {
        Finding::ShortCircuit
    } else if i > i_max * (1.0 + m) {
        Finding::ShortedTurns
    } else if i < i_min * (1.0 - m) {
        if expected.supply_below_design {
            Finding::SupplyLow
        } else {
            Finding::HighResistance
        }
    } else {
        healthy_or_supply(expected)
    };
    Verdict::new(finding, est)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnosis::band::tests::valve_design;
    use crate::diagnosis::band::{Conditions, SupplyReading};
    use crate::physics::circuit::TemperatureRange;
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
        // A connector adding 90 Ω (+50 %) at a known temperature.
        let v = judge(&counts(270.0, 0.30, 24.0, 64), &at_20c());
        assert_eq!(v.finding, Finding::HighResistance, "{v:?}");
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
        let r =
            ThresholdReading::from_instants(rate, on, Some(Instant(900)), Instant(2000)).unwrap();
        assert_eq!(r, ThresholdReading::Crossed(Seconds::new(1000e-6)));
        assert!(ThresholdReading::from_instants(
            rate,
            on,
            Some(Instant(u32::MAX - 200)),
            Instant(5)
        )
        .is_err());
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
            let f = fit_rise(&s, &sm, &FitOptions { refinements: 4 }).unwrap();
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
}
