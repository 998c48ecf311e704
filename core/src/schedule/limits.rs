//! What one channel may do, in ticks: minimum on- and off-time, maximum on-time, inrush window,
//! optional peak-and-hold, and its thermal buckets.

use super::errors::LimitsError;
use super::thermal::{joules_to_uj_up, EnergyRate, ThermalBucket};
use crate::design::{DriverDesign, TimingBudget};
use crate::time::{TickRate, Ticks};
use crate::units::{Amps, Hertz, Joules, Seconds, Watts};

/// The longest time limit a channel may have, ticks (2³⁰): keeps every sum of limits inside the
/// 2³¹-tick span in which instants compare unambiguously.
pub const MAX_LIMIT: Ticks = Ticks(1 << 30);

/// A PWM duty for the hold phase, as a fraction `value / 65 536` (so `HoldDuty(32_768)` is 50 %).
///
/// Firmware sets its PWM compare to `⌈period·duty/65 536⌉` ([`HoldDuty::compare`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct HoldDuty(pub u16);

impl HoldDuty {
    /// The raw fraction, 1/65 536 units.
    pub const fn get(self) -> u16 {
        self.0
    }

    /// A duty from a fraction in (0, 1), rounded **up** to the next 1/65 536 (more hold current,
    /// so the armature stays held), e.g. the economiser duty the physics computes for the present
    /// supply.
    ///
    /// # Errors
    /// [`LimitsError::NotAFraction`] for NaN, ±∞, ≤ 0 or a value that rounds to 1 or more (a
    /// duty of 100 % is no hold phase at all).
    pub fn from_fraction(x: f32) -> Result<Self, LimitsError> {
        if !(x.is_finite() && x > 0.0 && x < 1.0) {
            return Err(LimitsError::NotAFraction);
        }
        let v = libm::ceil(x as f64 * 65_536.0);
        if v >= 65_536.0 {
            return Err(LimitsError::NotAFraction);
        }
        Ok(HoldDuty(v as u16))
    }

    /// The duty as a fraction (exact in f32).
    pub fn fraction(self) -> f32 {
        self.0 as f32 / 65_536.0
    }

    /// PWM compare value for a timer period of `period` counts: `⌈period·duty/65 536⌉`.
    pub const fn compare(self, period: u32) -> u32 {
        (period as u64 * self.0 as u64).div_ceil(65_536) as u32
    }
}

/// Peak-and-hold: full drive for `after` ticks (the pull-in phase, at least the minimum on-time),
/// then PWM at a hold duty until the off edge.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct HoldPhase {
    after: Ticks,
    duty: HoldDuty,
    ceiling: HoldDuty,
}

impl HoldPhase {
    /// Hold at `duty` from `after` ticks into each pulse. The duty may later be lowered or raised
    /// at run time (for the present supply) up to a ceiling, which is `duty` unless
    /// [`HoldPhase::with_ceiling`] raises it.
    ///
    /// # Errors
    /// [`LimitsError::ZeroDuty`]; [`LimitsError::TooLong`] for `after` above [`MAX_LIMIT`].
    pub const fn new(after: Ticks, duty: HoldDuty) -> Result<Self, LimitsError> {
        if duty.0 == 0 {
            return Err(LimitsError::ZeroDuty);
        }
        if after.0 > MAX_LIMIT.0 {
            return Err(LimitsError::TooLong);
        }
        Ok(Self {
            after,
            duty,
            ceiling: duty,
        })
    }

    /// The same hold phase allowing run-time duties up to `ceiling` (≥ the initial duty).
    ///
    /// # Errors
    /// [`LimitsError::DutyAboveCeiling`] when the initial duty is above `ceiling`.
    pub const fn with_ceiling(mut self, ceiling: HoldDuty) -> Result<Self, LimitsError> {
        if self.duty.0 > ceiling.0 {
            return Err(LimitsError::DutyAboveCeiling);
        }
        self.ceiling = ceiling;
        Ok(self)
    }

    /// Length of the pull-in phase, ticks.
    pub const fn after(&self) -> Ticks {
        self.after
    }
    /// Initial hold duty.
    pub const fn duty(&self) -> HoldDuty {
        self.duty
    }
    /// Highest duty allowed at run time.
    pub const fn ceiling(&self) -> HoldDuty {
        self.ceiling
    }
}

/// A power rating and thermal time constant of one part, for a thermal bucket.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct HeatRating {
    /// Average power the part may dissipate indefinitely, W.
    pub power: Watts,
    /// Its thermal time constant `R_th·C_th`, s.
    pub time_constant: Seconds,
}

/// Peak-and-hold as the physics should size it: hold `current` with PWM at `frequency`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct HoldPlan {
    /// Current to hold the armature with, A (above the coil's drop-out, with margin).
    pub current: Amps,
    /// PWM frequency, Hz.
    pub frequency: Hertz,
}

/// Which parts of a channel get a thermal bucket when limits are derived from a design.
#[derive(Clone, Copy, Debug, PartialEq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct HeatRatings {
    /// The clamp (diode, zener, resistor, or the switch itself when unclamped).
    pub clamp: Option<HeatRating>,
    /// The winding.
    pub coil: Option<HeatRating>,
}

/// Everything the scheduler must respect for one channel, in ticks.
///
/// Built by [`ChannelLimits::new`] and the `with_*` methods (each re-validates the whole set), or
/// from a driver design by [`ChannelLimits::from_budget`] / [`ChannelLimits::from_design`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ChannelLimits {
    min_on: Ticks,
    min_off: Ticks,
    max_on: Option<Ticks>,
    inrush_window: Ticks,
    hold: Option<HoldPhase>,
    clamp_heat: Option<ThermalBucket>,
    coil_heat: Option<ThermalBucket>,
}

/// How many thermal buckets a channel can have: clamp and winding with feature
/// `thermal-budget`, none without it.
pub(crate) const BUCKETS: usize = if cfg!(feature = "thermal-budget") {
    2
} else {
    0
};

/// `Ok` with feature `thermal-budget`, else [`LimitsError::FeatureDisabled`].
const fn thermal_built() -> Result<(), LimitsError> {
    if cfg!(feature = "thermal-budget") {
        Ok(())
    } else {
        Err(LimitsError::FeatureDisabled)
    }
}

impl ChannelLimits {
    /// All zero (not valid limits): placeholder storage that [`super::Scheduler::new_in`]
    /// overwrites before use.
    pub(crate) const BLANK: ChannelLimits = ChannelLimits {
        min_on: Ticks(0),
        min_off: Ticks(0),
        max_on: None,
        inrush_window: Ticks(0),
        hold: None,
        clamp_heat: None,
        coil_heat: None,
    };

    /// A channel that must stay on at least `min_on` ticks and off at least `min_off` ticks (both
    /// ≥ 1, ≤ [`MAX_LIMIT`]); no maximum on-time, no inrush window, no hold phase, no thermal
    /// buckets.
    ///
    /// # Errors
    /// [`LimitsError::ZeroMinOn`], [`LimitsError::ZeroMinOff`], [`LimitsError::TooLong`].
    pub fn new(min_on: Ticks, min_off: Ticks) -> Result<Self, LimitsError> {
        Self {
            min_on,
            min_off,
            max_on: None,
            inrush_window: Ticks(0),
            hold: None,
            clamp_heat: None,
            coil_heat: None,
        }
        .validated()
    }

    /// The same limits with a maximum on-time (≥ `min_on`).
    pub fn with_max_on(mut self, max_on: Ticks) -> Result<Self, LimitsError> {
        self.max_on = Some(max_on);
        self.validated()
    }

    /// The same limits where each turn-on counts against the scheduler's inrush cap for `window`
    /// ticks from its on edge (typically the worst-case pull-in time); 0 = never counts.
    pub fn with_inrush_window(mut self, window: Ticks) -> Result<Self, LimitsError> {
        self.inrush_window = window;
        self.validated()
    }

    /// The same limits with a peak-and-hold phase (its `after` ≥ `min_on`).
    pub fn with_hold(mut self, hold: HoldPhase) -> Result<Self, LimitsError> {
        self.hold = Some(hold);
        self.validated()
    }

    /// The same limits with a thermal bucket for the clamp.
    ///
    /// # Errors
    /// [`LimitsError::FeatureDisabled`] without feature `thermal-budget`; as
    /// [`ChannelLimits::new`] otherwise, and [`LimitsError::BucketTooSmall`].
    pub fn with_clamp_heat(mut self, bucket: ThermalBucket) -> Result<Self, LimitsError> {
        thermal_built()?;
        self.clamp_heat = Some(bucket);
        self.validated()
    }

    /// The same limits with a thermal bucket for the winding.
    ///
    /// # Errors
    /// As [`ChannelLimits::with_clamp_heat`].
    pub fn with_coil_heat(mut self, bucket: ThermalBucket) -> Result<Self, LimitsError> {
        thermal_built()?;
        self.coil_heat = Some(bucket);
        self.validated()
    }

    fn validated(self) -> Result<Self, LimitsError> {
        self.check()?;
        Ok(self)
    }

    /// The checks of [`ChannelLimits::validated`], in place.
    fn check(&self) -> Result<(), LimitsError> {
        if self.min_on.0 == 0 {
            return Err(LimitsError::ZeroMinOn);
        }
        if self.min_off.0 == 0 {
            return Err(LimitsError::ZeroMinOff);
        }
        if self.min_on.0 > MAX_LIMIT.0
            || self.min_off.0 > MAX_LIMIT.0
            || self.inrush_window.0 > MAX_LIMIT.0
        {
            return Err(LimitsError::TooLong);
        }
        if let Some(max) = self.max_on {
            if max.0 > MAX_LIMIT.0 {
                return Err(LimitsError::TooLong);
            }
            if max.0 < self.min_on.0 {
                return Err(LimitsError::MaxOnBelowMinOn);
            }
        }
        if let Some(h) = self.hold {
            if h.after.0 < self.min_on.0 {
                return Err(LimitsError::HoldBeforeMinOn);
            }
        }
        // Without feature `thermal-budget` no bucket can be set: nothing to check or link.
        if cfg!(feature = "thermal-budget") {
            if let Some(b) = self.clamp_heat {
                if !b.admits_min_pulse(self.min_on.0) {
                    return Err(LimitsError::BucketTooSmall);
                }
            }
            if let Some(b) = self.coil_heat {
                if !b.admits_min_pulse(self.min_on.0) {
                    return Err(LimitsError::BucketTooSmall);
                }
            }
        }
        Ok(())
    }

    /// Limits from a timing budget computed at tick rate `rate` (the design's), rounding toward
    /// safety:
    ///
    /// - `min_on = ticks.min_on` (worst-corner pull-in + operate allowance, rounded up), `min_off =
    ///   ticks.min_off` (worst-corner safe off-time, rounded up), each at least 1 tick;
    /// - inrush window = `ticks.pull_in` (worst-corner electrical pull-in, rounded up);
    /// - hold (if `hold_duty` is given): pull-in phase of `min_on` ticks, then that duty (ceiling =
    ///   that duty);
    /// - clamp bucket (if rated): `per_pulse = ⌈max over corners of E_clamp⌉` µJ;
    /// - winding bucket (if rated): `per_pulse = ⌈max E_winding⌉` (release energy dissipated in the
    ///   winding), full-drive rate `⌈max V·I∞⌉` per tick (supply power, an upper bound of the
    ///   winding's dissipation), hold rate that times the duty ceiling.
    ///
    /// # Errors
    /// [`LimitsError::Design`] for a time constant that does not fit the ticks, any conversion out
    /// of range, and every check of [`ChannelLimits::new`] and the `with_*` methods;
    /// [`LimitsError::FeatureDisabled`] for a heat rating without feature `thermal-budget`.
    pub fn from_budget(
        budget: &TimingBudget,
        rate: TickRate,
        heat: &HeatRatings,
        hold_duty: Option<HoldDuty>,
    ) -> Result<Self, LimitsError> {
        Self::from_summary(&BudgetSummary::of(budget), rate, heat, hold_duty)
    }

    /// [`ChannelLimits::from_budget`] from the few budget figures it uses (out of line: its
    /// bucket arithmetic does not sit below the budget in `from_design`).
    #[inline(never)]
    fn from_summary(
        s: &BudgetSummary,
        rate: TickRate,
        heat: &HeatRatings,
        hold_duty: Option<HoldDuty>,
    ) -> Result<Self, LimitsError> {
        // The same steps and checks as `new(..)?.with_inrush_window(..)?.with_hold(..)?…`, on one
        // value in place (each `with_*` would return a copy).
        let t = &s.ticks;
        let min_on = t.min_on.max(Ticks(1));
        let mut limits = Self {
            min_on,
            min_off: t.min_off.max(Ticks(1)),
            max_on: None,
            inrush_window: Ticks(0),
            hold: None,
            clamp_heat: None,
            coil_heat: None,
        };
        limits.check()?;
        limits.inrush_window = t.pull_in.min(min_on);
        limits.check()?;
        if let Some(d) = hold_duty {
            limits.hold = Some(HoldPhase::new(min_on, d)?);
            limits.check()?;
        }
        if heat.clamp.is_some() || heat.coil.is_some() {
            thermal_built()?;
        }
        if let Some(r) = heat.clamp {
            let b = ThermalBucket::from_rating(r.power, r.time_constant, rate)?
                .with_per_pulse(joules_to_uj_up(Joules::new(s.clamp_energy))?);
            limits.clamp_heat = Some(b);
            limits.check()?;
        }
        if let Some(r) = heat.coil {
            let on = EnergyRate::from_watts(Watts::new(s.supply_power), rate)?;
            let hold = match limits.hold {
                Some(h) => on.scaled_by(h.ceiling),
                None => on,
            };
            let b = ThermalBucket::from_rating(r.power, r.time_constant, rate)?
                .with_per_pulse(joules_to_uj_up(Joules::new(s.winding_energy))?)
                .with_rates(on, hold);
            limits.coil_heat = Some(b);
            limits.check()?;
        }
        Ok(limits)
    }

    /// [`ChannelLimits::from_budget`] of `design.budget()` at the design's tick rate, with the hold
    /// duty from the physics: the PWM duty that holds `hold.current` ([`crate::Circuit::hold`]),
    /// highest over the design's corners ([`DriverDesign::hold_at_corners`]; the hot, low-supply
    /// corner needs most), rounded up. That duty is both the initial duty and the ceiling; at run
    /// time firmware may lower it to the duty for the present supply
    /// ([`super::Scheduler::set_hold_duty`]).
    ///
    /// Stack: the budget and the hold figures are reduced to the few numbers the limits need in
    /// frames of their own, so they never sit on the stack together.
    ///
    /// # Errors
    /// As [`ChannelLimits::from_budget`]; a hold current the coil cannot reach, or a PWM too slow
    /// for continuous conduction, as [`LimitsError::Design`].
    pub fn from_design(
        design: &DriverDesign,
        heat: &HeatRatings,
        hold: Option<HoldPlan>,
    ) -> Result<Self, LimitsError> {
        let summary = BudgetSummary::of_design(design)?;
        let duty = match hold {
            Some(h) => Some(hold_duty_of(design, &h)?),
            None => None,
        };
        Self::from_summary(&summary, design.tick_rate, heat, duty)
    }

    /// Minimum on-time, ticks.
    pub const fn min_on(&self) -> Ticks {
        self.min_on
    }
    /// Minimum off-time, ticks (measured from the actual off edge).
    pub const fn min_off(&self) -> Ticks {
        self.min_off
    }
    /// Maximum on-time, ticks, if any.
    pub const fn max_on(&self) -> Option<Ticks> {
        self.max_on
    }
    /// How long each turn-on counts against the inrush cap, ticks (0 = never).
    pub const fn inrush_window(&self) -> Ticks {
        self.inrush_window
    }
    /// The hold phase, if any.
    pub const fn hold(&self) -> Option<HoldPhase> {
        self.hold
    }
    /// The clamp's thermal bucket, if any.
    pub const fn clamp_heat(&self) -> Option<ThermalBucket> {
        self.clamp_heat
    }
    /// The winding's thermal bucket, if any.
    pub const fn coil_heat(&self) -> Option<ThermalBucket> {
        self.coil_heat
    }

    /// Ticks at full drive and ticks holding, for a pulse of `duration` ticks.
    pub(crate) const fn phases(&self, duration: u32) -> (u32, u32) {
        match self.hold {
            Some(h) if duration > h.after.0 => (h.after.0, duration - h.after.0),
            _ => (duration, 0),
        }
    }

    /// The buckets in the scheduler's fixed order: clamp, winding.
    ///
    /// Without feature `thermal-budget` an empty array (none can be set): the scheduler's loops
    /// over the buckets then have no body to link.
    pub(crate) const fn buckets(&self) -> [Option<ThermalBucket>; BUCKETS] {
        #[cfg(feature = "thermal-budget")]
        {
            [self.clamp_heat, self.coil_heat]
        }
        #[cfg(not(feature = "thermal-budget"))]
        {
            []
        }
    }
}

/// The figures of a timing budget that channel limits are built from: its tick constants and
/// the largest clamp energy, winding energy and supply power `V·I∞` over its three points.
struct BudgetSummary {
    ticks: crate::design::TickBudget,
    clamp_energy: f32,
    winding_energy: f32,
    supply_power: f32,
}

impl BudgetSummary {
    fn of(b: &TimingBudget) -> Self {
        let corners = [&b.nominal, &b.pull_in_corner, &b.release_corner];
        let max_of = |f: &dyn Fn(&crate::design::Figures) -> f32| {
            corners.iter().fold(0.0f32, |m, c| libm::fmaxf(m, f(c)))
        };
        Self {
            ticks: b.ticks,
            clamp_energy: max_of(&|c| c.energy.clamp.value()),
            winding_energy: max_of(&|c| c.energy.winding.value()),
            supply_power: max_of(&|c| c.point.supply.value() * c.final_current.value()),
        }
    }

    /// The summary of `design.budget()`, computed with one point's figures on the stack at a
    /// time (folded into the maxima before the next point is built in the same place).
    #[inline(never)]
    fn of_design(design: &DriverDesign) -> Result<Self, LimitsError> {
        let mut fold = Folding {
            scratch: crate::design::Figures::UNSET,
            maxima: [0.0; 3],
            started: false,
        };
        let t = design.budget_core(&mut fold).map_err(LimitsError::Design)?;
        fold.fold();
        Ok(Self {
            ticks: t.ticks,
            clamp_energy: fold.maxima[0],
            winding_energy: fold.maxima[1],
            supply_power: fold.maxima[2],
        })
    }
}

/// One figure slot handed out for every point of the budget, its previous point folded into the
/// maxima of [`BudgetSummary`] first (same order and the same `fmaxf` as [`BudgetSummary::of`]).
struct Folding {
    scratch: crate::design::Figures,
    /// Clamp energy, winding energy, supply power.
    maxima: [f32; 3],
    started: bool,
}

impl Folding {
    fn fold(&mut self) {
        let c = &self.scratch;
        let m = &mut self.maxima;
        m[0] = libm::fmaxf(m[0], c.energy.clamp.value());
        m[1] = libm::fmaxf(m[1], c.energy.winding.value());
        m[2] = libm::fmaxf(m[2], c.point.supply.value() * c.final_current.value());
    }
}

impl crate::design::FigureSlots for Folding {
    fn slot(&mut self, _point: usize) -> &mut crate::design::Figures {
        if self.started {
            self.fold();
        }
        self.started = true;
        &mut self.scratch
    }
}

/// The highest hold duty over the design's corners for `hold`, rounded up (its own frame: the
/// three hold figures never sit below the budget).
#[inline(never)]
fn hold_duty_of(design: &DriverDesign, hold: &HoldPlan) -> Result<HoldDuty, LimitsError> {
    let corners = design
        .hold_at_corners(hold.current, hold.frequency)
        .map_err(LimitsError::Design)?;
    let d = corners.iter().fold(0.0f32, |m, c| libm::fmaxf(m, c.duty));
    HoldDuty::from_fraction(d)
}

#[cfg(test)]
#[path = "limits_tests.rs"]
mod tests;
