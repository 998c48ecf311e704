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

mod actuation;
pub(crate) mod envelope;
mod rise;
mod threshold;

pub use actuation::judge_actuation;
pub use rise::{judge_response, judge_rise, judge_trace};
pub use threshold::{judge_steady, judge_threshold, ThresholdReading};

use super::armature::{Movement, MovementCriteria};
use super::band::Expected;
use super::fit::{FitQuality, TraceFault};
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
    /// The trace passes every sensor check and is smooth, but its shape is neither a healthy coil
    /// nor a modelled fault (a plant the model leaves out: strong saturation, a moving armature,
    /// an unusual coupled loop). Not a sensor fault and not a coil fault by itself: firmware
    /// should not isolate on it unless another measurement (comparator, steady current)
    /// confirms a fault. Neither [`Finding::is_coil_fault`] nor a sensor finding.
    ShapeUnexplained,
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
    pub(super) fn new(finding: Finding, estimates: Estimates) -> Self {
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
    /// The smallest inductance at switch-on, as a fraction of the band's minimum, that a coil
    /// with shorted turns can show (default 0.005): a bridged section of a fraction f of the
    /// turns coupled k leaves about `(1 − f)²·(1 − k²)` of L as leakage, 0.005 for half the
    /// turns at k = 0.99. A trace reaching the converter's full scale too fast is named
    /// [`Finding::ShortCircuit`] only when it bounds the inductance below this; otherwise
    /// [`Finding::ShortedTurns`] (both isolate; the name says what to look for).
    pub turns_floor: f32,
    /// Mean current below this fraction of the band's minimum final current is no current
    /// (default 0.02).
    pub open_fraction: f32,
    /// The part of a rise used for the coil fit when the armature moved: samples up to this
    /// fraction of the peak before the dip (default 0.8).
    pub pre_movement_fraction: f32,
    /// Dip detection settings.
    pub movement: MovementCriteria,
    /// Free-level verdicts ([`judge_response`]): how much higher than the first-order model the
    /// slope of a healthy coil with an eddy-current path may read (default 0.34). Sized for an
    /// eddy path whose fast mode takes 0.5–5 % of the current with a time constant of 3–20 % of
    /// τ: the worst slope bias measured over that range on a diagnostic pulse was +34 %
    /// (`docs/diagnosis.md` §9). A coil known to have a weaker eddy path can use less and gains
    /// resistance sensitivity.
    pub fast_slope: f32,
    /// The same for τ reading low (default 0.63; worst measured −63 % over that range): the
    /// fitted τ may be as low as `(1 − fast_tau)` of the true one, which may then be
    /// `1/(1 − fast_tau)` (2.7) times the fitted one. Below 1 (0.99 is used above).
    pub fast_tau: f32,
    /// How much longer than the first-order model τ of a healthy coil whose inductance falls
    /// with the current (saturation) may read (default 0.69: the worst measured over an
    /// inductance down by up to 25 % at full current on a diagnostic pulse, `docs/diagnosis.md`
    /// §9). 0 for a coil declared not to saturate within its current range.
    pub slow_tau: f32,
    /// How much lower than the first-order model the slope of a saturating healthy coil may read
    /// (default 0.022: the worst measured over the same range, §9). Below 1.
    pub slow_slope: f32,
    /// Largest head shortfall below the slow mode a healthy coil may show, as a fraction of the
    /// final current (default 0.03): beyond it the fast component is a tightly coupled closed
    /// loop (shorted turns).
    pub head_fraction: f32,
    /// Residuals with a Durbin–Watson statistic below this are smooth: a shape, not noise
    /// (default 1.0; white noise gives ≈ 2).
    pub smooth_dw: f32,
    /// Baseline verdicts: relative allowance on top of the standard errors for what changes
    /// between learning and now besides the coil (default 0.02: a ±1 % supply reading then and
    /// now).
    pub baseline_margin: f32,
    /// Baseline verdicts: how far the winding may be from the board temperature reading, K
    /// (default 5; at start-up the winding is at ambient).
    pub board_kelvin: f32,
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
            turns_floor: 0.005,
            open_fraction: 0.02,
            pre_movement_fraction: 0.8,
            movement: MovementCriteria::default(),
            fast_slope: 0.34,
            fast_tau: 0.63,
            slow_tau: 0.69,
            slow_slope: 0.022,
            head_fraction: 0.03,
            smooth_dw: 1.0,
            baseline_margin: 0.02,
            board_kelvin: 5.0,
        }
    }
}

impl Criteria {
    /// The criteria for a coil declared with a laminated magnetic circuit and no solid
    /// conducting part coupled to the winding (no solid plunger, sleeve or bobbin former): the
    /// eddy path is sized for a loop carrying at most 2 % of the current. Its worst bias is the
    /// default's (+34 % slope, −63 % τ, for 5 %) scaled in logarithms by the analytic two-loop
    /// rise's ratio between a 2 % and a 5 % path (τ −22 % against −41 %: 0.47; slope +8 %
    /// against +21 %: 0.41, `docs/diagnosis.md` §9): +13 % slope, −37 % τ. The
    /// saturation allowance is kept: a laminated core saturates too. Everything else as
    /// [`Criteria::default`], which is the conservative declaration (a solid eddy path of up
    /// to 5 % of the current).
    pub fn laminated() -> Self {
        Self {
            fast_slope: 0.13,
            fast_tau: 0.37,
            ..Self::default()
        }
    }

    /// The bias envelope of a healthy coil under these criteria, the eddy part scaled by
    /// `eddy_scale` (the window-length law, in `[0, 1]`).
    pub(crate) fn envelope(&self, eddy_scale: f32) -> envelope::Envelope {
        envelope::Envelope::new(
            (self.fast_slope, self.fast_tau),
            (self.slow_tau, self.slow_slope),
            eddy_scale,
        )
    }
}

/// `x ≤ limit`, false when either is NaN (so a NaN figure never passes a check).
pub(super) fn at_most(x: f32, limit: f32) -> bool {
    x <= limit
}

pub(super) fn finite_pos(x: f32) -> Option<f32> {
    // Two plain compares (NaN fails both); `is_finite` compiles to integer bit tests.
    if x > 0.0 && x < f32::INFINITY {
        Some(x)
    } else {
        None
    }
}

/// Estimates from a final current and (optionally) a time constant.
pub(super) fn estimates(expected: &Expected, final_current: f32, tau: Option<f32>) -> Estimates {
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
pub(super) fn healthy_or_supply(expected: &Expected) -> Finding {
    if expected.supply_below_design {
        Finding::SupplyLow
    } else {
        Finding::Healthy
    }
}

#[cfg(test)]
mod tests;
