//! Heat as a leaky bucket, in integers only.
//!
//! A part that heats (the clamp, the winding) is a first-order thermal body: its stored heat `b`
//! obeys `db/dt = p(t) − b/τ`, with `τ = R_th·C_th` its thermal time constant. Holding a steady
//! power `P_rating` forever brings it to `b = P_rating·τ`, the hottest it may run, so that is the
//! bucket's **capacity**. A pulse pours heat in; between pulses it leaks out as `b·e^(−Δt/τ)`.
//!
//! # Units
//!
//! Heat in micro-joules (`u32` µJ, up to 4294 J), time in timer ticks, power as
//! [`EnergyRate`]: µJ per tick in 16.16 fixed point. Nothing on this path uses floating point, so a
//! Cortex-M0 without FPU pays a few integer multiplies per request.
//!
//! # The bound the scheduler keeps
//!
//! The scheduler never knows the true heat; it keeps an *upper bound* `U ≥ b` and admits a pulse only
//! while `U ≤ capacity` holds at all times. A pulse starting at `s` runs a pull-in phase of power
//! `P₁` for `d₁` ticks, then (peak-and-hold) a hold phase of power `P₂` for `d₂` ticks, and pours
//! `E` in at its off edge (release energy):
//!
//! 1. At `s` the bound is the previous one decayed from the previous off edge:
//!    `U(s) = ⌈U_prev · ĝ(Δt/τ)⌉`, where `ĝ(x) ≥ e^(−x)` (see below).
//! 2. Each phase of power `P` and length `d` starting from bound `u` is bounded by
//!    `φ(u) = min(u + P·d, max(u, P·τ))`: during it `b(t) = Pτ + (b₀ − Pτ)·e^(−t/τ)` lies between
//!    `b₀` and the steady level `Pτ`, and never exceeds `b₀ + P·t`.
//! 3. During the pulse the bound is `φ₂(φ₁(U(s)))`. At and after its off edge, by linearity of the
//!    equation, the heat present at `s` and the heat poured in add:
//!    `U_off = ⌈U(s)·ĝ(t_min/τ)⌉ + φ₂(φ₁(0)) + E`, where `t_min` is the channel's minimum on-time —
//!    the earliest a stop may end the pulse — and `U_off` decays from the actual off edge.
//!
//! Both are checked against the capacity when the pulse is admitted, and nothing needs checking
//! again: a pulse stopped early only shortens the phases (each `φ` is non-decreasing in `d`), its
//! off edge is still at least `t_min` after its start, and the release energy arrives at the off
//! edge whenever that is. Both bounds are non-decreasing in `U(s)`, and `U(s)` is non-increasing in
//! the wait, so "fits" is monotone in the start tick. The cost of this simplicity: decay during a
//! pulse longer than the minimum on-time is credited only for the minimum on-time.

//! # The decay factor ĝ
//!
//! Write `x = k/8 + u` with `0 ≤ u < 1/8`. Then `e^(−x) = e^(−k/8)·e^(−u)` and
//! `ĝ(x) = max(T[k]·q(u), T[k+1])`, where `T[k] ≥ e^(−k/8)` is a table (Q31, `2³¹` = 1, rounded
//! up) and `q(u) = 1 − u + u²/2 ≥ e^(−u)` (an alternating series with decreasing terms, cut after a
//! positive one). `q` exceeds `e^(−u)` by less than `u³/6` (relative 3.7·10⁻⁴ at the worst), and
//! the *decay* `1 − ĝ` is underestimated by about `u²/6` relative (less than `u²/5`) — negligible for the
//! frequent short pulses where the leak matters most. The `max` with `T[k+1]` (a smaller value, so
//! the bound still holds) makes `ĝ` non-increasing across table points despite rounding. Beyond
//! `x = 16`, `ĝ` stays at `T[128] ≈ 1.1·10⁻⁷`. The table is computed at compile time from the
//! Taylor series of `e^(−1/8)` in 62-bit fixed point, every rounding upward; `x = Δt/τ` is taken
//! rounded *down* (less decay), as `x·8·2¹⁶ = ⌊Δt·2¹⁹/τ⌋`.

use super::errors::LimitsError;
use crate::time::{TickRate, Ticks};
use crate::units::{Joules, Seconds, Watts};

/// Table points per unit of `x = Δt/τ`.
const POINTS_PER_UNIT: u32 = 8;
/// Number of chord segments: the table spans `x` from 0 to 16.
const SEGMENTS: usize = 128;
/// Fraction bits of the position inside a segment.
const FRAC_BITS: u32 = 16;
/// `x` scale: `x8q = x · 8 · 2¹⁶`, so `x8q = ⌊Δt·2¹⁹/τ⌋`.
const X_SHIFT: u32 = 19;
/// `x = 16` on the `x8q` scale; the decay factor is constant beyond.
pub(crate) const X_MAX: u32 = (SEGMENTS as u32) << FRAC_BITS;
/// 1.0 in Q31.
const ONE_Q31: u32 = 1 << 31;

/// `⌈e^(−k/8) · 2³¹⌉` (an upper bound, within 2 units), for k = 0…128.
static EXP_NEG_EIGHTHS: [u32; SEGMENTS + 1] = exp_table();

/// Builds [`EXP_NEG_EIGHTHS`] at compile time, in integers, rounding every step upward.
///
/// `e^(−1/8)` from its Taylor series `Σ (−1/8)ⁿ/n!` in Q62 (terms by floor division; 30 terms; the
/// truncation and floor errors together are below 64 units, which are added), then powers by
/// repeated multiplication rounded up, then rounded up to Q31.
const fn exp_table() -> [u32; SEGMENTS + 1] {
    let one: i128 = 1 << 62;
    let mut sum: i128 = one;
    let mut term: i128 = one;
    let mut n: i128 = 1;
    while n < 30 {
        term /= POINTS_PER_UNIT as i128 * n;
        if n % 2 == 1 {
            sum -= term;
        } else {
            sum += term;
        }
        n += 1;
    }
    let step = (sum + 64) as u128;
    let mut table = [0u32; SEGMENTS + 1];
    let mut p: u128 = one as u128;
    let mut k = 0;
    while k <= SEGMENTS {
        table[k] = p.div_ceil(1 << 31) as u32;
        p = (p * step).div_ceil(1 << 62);
        k += 1;
    }
    table
}

/// The decay factor `ĝ` at `x8q = x·8·2¹⁶`, Q31: `max(⌈T[k]·q(u)⌉, T[k+1])` with
/// `q(u) = 1 − u + u²/2` evaluated exactly in Q31 except for one upward rounding (module docs).
/// Non-increasing in `x8q`; `ĝ(0) = 2³¹`.
pub(crate) fn decay_factor(x8q: u32) -> u32 {
    let k = (x8q >> FRAC_BITS) as usize;
    if k >= SEGMENTS {
        return EXP_NEG_EIGHTHS[SEGMENTS];
    }
    let f = (x8q & ((1 << FRAC_BITS) - 1)) as u64;
    // u = f / 2¹⁹, so in Q31: u = f·2¹², u²/2 = f²/2⁸ (rounded up).
    let q = ONE_Q31 as u64 - (f << 12) + (f * f).div_ceil(1 << 8);
    let g = (EXP_NEG_EIGHTHS[k] as u64 * q).div_ceil(ONE_Q31 as u64) as u32;
    g.max(EXP_NEG_EIGHTHS[k + 1])
}

/// `⌈level · g / 2³¹⌉`, µJ (never above `level`, since `g ≤ 2³¹`).
fn decayed(level: u32, g: u32) -> u32 {
    ((level as u64 * g as u64 + (ONE_Q31 as u64 - 1)) >> 31) as u32
}

/// `x8q = ⌊Δt·2¹⁹/τ⌋`, at most [`X_MAX`] (x rounded down: less decay than the truth).
pub(crate) fn x_of(delta: u64, tau: u32) -> u32 {
    let tau = tau as u64;
    if delta >= tau * (SEGMENTS as u64 / POINTS_PER_UNIT as u64) {
        X_MAX
    } else {
        ((delta << X_SHIFT) / tau) as u32
    }
}

/// The fewest ticks whose `x8q` is at least `x8q`: `⌈x8q·τ/2¹⁹⌉`.
pub(crate) fn delta_of(x8q: u32, tau: u32) -> u64 {
    (x8q as u64 * tau as u64).div_ceil(1 << X_SHIFT)
}

/// Heat flow while a coil is on, in µJ per tick, 16.16 fixed point (`EnergyRate(1 << 16)` is
/// 1 µJ/tick). Range: up to 65 535.99 µJ per tick (e.g. 65 W at a 1 kHz tick).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EnergyRate(pub u32);

impl EnergyRate {
    /// No heat flow.
    pub const ZERO: EnergyRate = EnergyRate(0);

    /// A rate of `uj_per_tick` whole micro-joules per tick.
    pub const fn from_uj_per_tick(uj_per_tick: u16) -> Self {
        EnergyRate((uj_per_tick as u32) << 16)
    }

    /// A power converted to the tick rate, rounded **up**: `r = ⌈P·10⁶·2¹⁶ / f_tick⌉`.
    ///
    /// # Errors
    /// [`LimitsError::NotFiniteOrNegative`] for NaN, ±∞ or negative power;
    /// [`LimitsError::OutOfRange`] when the rate exceeds the 16.16 range.
    pub fn from_watts(power: Watts, rate: TickRate) -> Result<Self, LimitsError> {
        let p = non_negative(power.value())?;
        let r = libm::ceil(p * 1.0e6 * 65_536.0 / rate.hz() as f64);
        if r > u32::MAX as f64 {
            return Err(LimitsError::OutOfRange);
        }
        Ok(EnergyRate(r as u32))
    }

    /// This rate scaled by a hold duty (fraction `duty/65 536`), rounded up:
    /// `⌈r·duty/2¹⁶⌉`. An upper bound of the average *supply* power while a PWM economiser holds
    /// at that duty (supply current ≤ duty × full current), hence of the winding's dissipation.
    pub const fn scaled_by(self, duty: super::limits::HoldDuty) -> Self {
        let v = (self.0 as u64 * duty.get() as u64).div_ceil(1 << 16);
        EnergyRate(v as u32)
    }
}

/// One part's heat limit as a leaky bucket, and what each pulse pours into it.
///
/// Capacity and leak: `capacity` µJ, time constant `tau` ticks. Per pulse: `per_pulse` µJ at the
/// off edge (release energy), plus `on_rate` while the pulse is in its pull-in (full-drive) phase
/// and `hold_rate` while it holds (peak-and-hold; equal to `on_rate` unless set).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ThermalBucket {
    capacity: u32,
    tau: u32,
    per_pulse: u32,
    on_rate: EnergyRate,
    hold_rate: EnergyRate,
}

impl ThermalBucket {
    /// A bucket of `capacity_uj` µJ (≥ 1) leaking with time constant `tau` (≥ 1 tick), into which
    /// pulses pour nothing yet (set [`ThermalBucket::with_per_pulse`] and the rates).
    ///
    /// # Errors
    /// [`LimitsError::ZeroCapacity`], [`LimitsError::ZeroTimeConstant`].
    pub const fn new(capacity_uj: u32, tau: Ticks) -> Result<Self, LimitsError> {
        if capacity_uj == 0 {
            return Err(LimitsError::ZeroCapacity);
        }
        if tau.0 == 0 {
            return Err(LimitsError::ZeroTimeConstant);
        }
        Ok(Self {
            capacity: capacity_uj,
            tau: tau.0,
            per_pulse: 0,
            on_rate: EnergyRate::ZERO,
            hold_rate: EnergyRate::ZERO,
        })
    }

    /// A bucket from a power rating and a thermal time constant:
    /// `capacity = ⌊P_rating·τ·10⁶⌋` µJ (rounded down), `τ` in ticks rounded **up** (slower leak).
    /// Both roundings make the bucket stricter than the part.
    ///
    /// # Errors
    /// Non-finite or negative inputs, a capacity of zero or above 4294 J, a τ that does not fit
    /// the tick counter ([`LimitsError::Design`] with [`crate::Error::TickOverflow`]).
    pub fn from_rating(
        rating: Watts,
        time_constant: Seconds,
        rate: TickRate,
    ) -> Result<Self, LimitsError> {
        let p = non_negative(rating.value())?;
        let t = non_negative(time_constant.value())?;
        let cap = libm::floor(p * t * 1.0e6);
        if cap > u32::MAX as f64 {
            return Err(LimitsError::OutOfRange);
        }
        let tau = rate
            .ticks_at_least(time_constant)
            .map_err(LimitsError::Design)?;
        Self::new(cap as u32, tau)
    }

    /// The same bucket with `per_pulse_uj` µJ poured in at each off edge.
    pub const fn with_per_pulse(mut self, per_pulse_uj: u32) -> Self {
        self.per_pulse = per_pulse_uj;
        self
    }

    /// The same bucket with heat flows while on: `on` in the pull-in phase, `hold` in the hold
    /// phase of a peak-and-hold channel (ignored without a hold phase). `hold` must cover the
    /// highest hold duty the channel may be set to ([`super::HoldPhase`] ceiling).
    pub const fn with_rates(mut self, on: EnergyRate, hold: EnergyRate) -> Self {
        self.on_rate = on;
        self.hold_rate = hold;
        self
    }

    /// Capacity, µJ.
    pub const fn capacity_uj(&self) -> u32 {
        self.capacity
    }
    /// Thermal time constant, ticks.
    pub const fn time_constant(&self) -> Ticks {
        Ticks(self.tau)
    }
    /// Heat poured in per off edge, µJ.
    pub const fn per_pulse_uj(&self) -> u32 {
        self.per_pulse
    }
    /// Heat flow in the pull-in phase.
    pub const fn on_rate(&self) -> EnergyRate {
        self.on_rate
    }
    /// Heat flow in the hold phase.
    pub const fn hold_rate(&self) -> EnergyRate {
        self.hold_rate
    }

    /// The two constants of a phase of power `P` lasting `d` ticks: `(⌈P·d⌉, ⌈P·τ⌉)`, µJ.
    fn phase_terms(&self, rate: EnergyRate, d: u32) -> (u64, u64) {
        (
            (rate.0 as u64 * d as u64).div_ceil(1 << 16),
            (rate.0 as u64 * self.tau as u64).div_ceil(1 << 16),
        )
    }

    /// `φ₂(φ₁(u))` with `φ(u) = min(u + ⌈P·d⌉, max(u, ⌈P·τ⌉))`: the bound over a whole pulse's
    /// on-time from bound `u` at its start (module docs). Without a hold phase `φ₂` is the
    /// identity (both its constants are 0).
    fn on_bound(&self, u: u64, p: &PulseHeat) -> u64 {
        let phase = |u: u64, (poured, steady): (u64, u64)| (u + poured).min(u.max(steady));
        phase(phase(u, p.phases[0]), p.phases[1])
    }

    /// What a pulse of `pull_in` + `hold` ticks does to this bucket, on a channel whose minimum
    /// on-time is `min_on` (the earliest a stop may end it). Computed once per request, so that
    /// each step of the search below is a few additions and two multiplies.
    pub(crate) fn plan(&self, pull_in: u32, hold: u32, min_on: u32) -> PulseHeat {
        let first = self.phase_terms(self.on_rate, pull_in);
        let second = if hold > 0 {
            self.phase_terms(self.hold_rate, hold)
        } else {
            (0, 0)
        };
        let mut p = PulseHeat {
            phases: [first, second],
            poured: 0,
            credit: decay_factor(x_of(min_on as u64, self.tau)),
        };
        p.poured = self.on_bound(0, &p) + self.per_pulse as u64;
        p
    }

    /// The bound at and after the pulse's off edge, from bound `u` at its start:
    /// `⌈u·ĝ(t_min_on/τ)⌉ + φ₂(φ₁(0)) + E`. By linearity the heat present at the start and the heat
    /// poured in add; the first has decayed at least over the minimum on-time by the off edge.
    fn off_bound(&self, u: u64, p: &PulseHeat) -> u64 {
        decayed(u.min(u32::MAX as u64) as u32, p.credit) as u64 + p.poured
    }

    fn fits(&self, u: u64, p: &PulseHeat) -> bool {
        let cap = self.capacity as u64;
        self.on_bound(u, p) <= cap && self.off_bound(u, p) <= cap
    }

    /// The fewest ticks after the previous off edge (which left the bound at `level`) at which
    /// pulse `p` fits; `None` when it never fits (not even from the residue `ĝ(16)·level`).
    ///
    /// Method: bisection over `x8q ∈ [0, X_MAX]` (23 steps, each one table interpolation and a few
    /// multiplies) for the smallest x at which the pulse fits from `⌈level·ĝ(x)⌉`, then
    /// `Δt = ⌈x·τ⌉` — no division. Valid because fitting is monotone in the start bound.
    pub(crate) fn earliest(&self, level: u32, p: &PulseHeat) -> Option<u64> {
        let fits = |x: u32| self.fits(decayed(level, decay_factor(x)) as u64, p);
        if fits(0) {
            return Some(0);
        }
        if !fits(X_MAX) {
            return None;
        }
        let (mut lo, mut hi) = (0u32, X_MAX);
        while hi - lo > 1 {
            let mid = lo + (hi - lo) / 2;
            if fits(mid) {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        Some(delta_of(hi, self.tau))
    }

    /// The bound left at the off edge of pulse `p` admitted `delta` ticks after the previous off
    /// edge (which left `level`); `None` if the pulse does not fit there.
    pub(crate) fn commit(&self, level: u32, delta: u64, p: &PulseHeat) -> Option<u32> {
        let u = decayed(level, decay_factor(x_of(delta, self.tau))) as u64;
        if self.fits(u, p) {
            Some(self.off_bound(u, p) as u32)
        } else {
            None
        }
    }

    /// The bound `delta` ticks after an off edge that left it at `level`: `⌈level·ĝ(Δt/τ)⌉`, µJ.
    pub(crate) fn level_after(&self, level: u32, delta: u64) -> u32 {
        decayed(level, decay_factor(x_of(delta, self.tau)))
    }

    /// Whether a pulse of `min_on` ticks at full drive always fits eventually, whatever the level
    /// (up to the capacity) it finds, i.e. from the residue `⌈C·ĝ(16)⌉`.
    pub(crate) fn admits_min_pulse(&self, min_on: u32) -> bool {
        let residue = decayed(self.capacity, decay_factor(X_MAX)) as u64;
        self.fits(residue, &self.plan(min_on, 0, min_on))
    }
}

/// One pulse's effect on one bucket, prepared once per request.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) struct PulseHeat {
    /// `(⌈P·d⌉, ⌈P·τ⌉)` of the pull-in and the hold phase, µJ.
    phases: [(u64, u64); 2],
    /// `φ₂(φ₁(0)) + E`, µJ.
    poured: u64,
    /// `ĝ(t_min_on/τ)`, Q31.
    credit: u32,
}

/// Energy in joules to micro-joules, rounded **up**.
pub(crate) fn joules_to_uj_up(e: Joules) -> Result<u32, LimitsError> {
    let v = libm::ceil(non_negative(e.value())? * 1.0e6);
    if v > u32::MAX as f64 {
        Err(LimitsError::OutOfRange)
    } else {
        Ok(v as u32)
    }
}

fn non_negative(x: f32) -> Result<f64, LimitsError> {
    if x.is_finite() && x >= 0.0 {
        Ok(x as f64)
    } else {
        Err(LimitsError::NotFiniteOrNegative)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Reference: the standard library's f64 `exp` (correctly rounded to within 1 ulp).
    fn exp_neg(x: f64) -> f64 {
        (-x).exp()
    }

    #[test]
    fn table_is_a_tight_upper_bound_of_exp() {
        assert_eq!(EXP_NEG_EIGHTHS[0], ONE_Q31);
        for (k, &t) in EXP_NEG_EIGHTHS.iter().enumerate() {
            let exact = exp_neg(k as f64 / 8.0) * ONE_Q31 as f64;
            assert!(t as f64 >= exact, "k={k}: {t} < {exact}");
            assert!(t as f64 - exact <= 2.0, "k={k}: {t} vs {exact}");
        }
    }

    #[test]
    fn decay_factor_bounds_exp_from_above_tightly() {
        // 1 − u + u²/2 exceeds e^(−u) by less than u³/6 (Taylor remainder, from memory): at
        // u = 1/8 that is (u³/6)·e^u = 3.7·10⁻⁴ relative; the decay 1 − ĝ must be within u²/5 of
        // 1 − e^(−u).
        let chord = 3.7e-4;
        let mut prev = u32::MAX;
        for x8q in (0..=X_MAX + 5000).step_by(97) {
            let g = decay_factor(x8q);
            assert!(g <= prev, "not monotone at {x8q}");
            prev = g;
            let x = (x8q.min(X_MAX)) as f64 / (8.0 * 65_536.0);
            let exact = exp_neg(x) * ONE_Q31 as f64;
            assert!(g as f64 >= exact, "x8q={x8q}");
            assert!(g as f64 <= exact * (1.0 + chord) + 3.0, "x8q={x8q}");
        }
        for f in [1u32, 10, 100, 1000, 10_000] {
            let u = f as f64 / (8.0 * 65_536.0);
            let decay = 1.0 - decay_factor(f) as f64 / ONE_Q31 as f64;
            let exact = 1.0 - exp_neg(u);
            assert!(
                decay <= exact && decay >= exact * (1.0 - u * u / 5.0) - 2e-9,
                "f={f}"
            );
        }
    }

    #[test]
    fn tick_conversions_round_toward_less_decay() {
        for &tau in &[1u32, 7, 1000, 123_457, 3_000_000_000] {
            for &d in &[0u64, 1, 5, 999, 77_777, 1 << 33] {
                let x = x_of(d, tau);
                let exact = d as f64 * 8.0 * 65_536.0 / tau as f64;
                assert!(x as f64 <= exact + 1e-6);
                if x < X_MAX {
                    assert!(x as f64 > exact - 1.0);
                }
                // delta_of is the inverse: the fewest ticks reaching x.
                let back = delta_of(x, tau);
                assert!(back <= d, "tau={tau} d={d}: {back}");
                assert!(x_of(back, tau) >= x);
                if back > 0 {
                    assert!(x_of(back - 1, tau) < x);
                }
            }
        }
    }

    fn bucket() -> ThermalBucket {
        ThermalBucket::new(10_000, Ticks(1_000))
            .unwrap()
            .with_per_pulse(3_000)
    }

    #[test]
    fn earliest_is_the_first_tick_that_fits() {
        let b = bucket();
        // min_on = 0 here: no decay credited during the pulse.
        let p = b.plan(10, 0, 0);
        assert_eq!(b.off_bound(0, &p), 3_000);
        assert_eq!(b.earliest(7_000, &p), Some(0));
        let d = b.earliest(10_000, &p).unwrap();
        // e^(−Δ/τ)·10000 ≤ 7000 needs Δ ≥ τ·ln(10/7) ≈ 356.7 ticks (exact exponential);
        // the bound and roundings may only make it later, by a tick or so.
        let exact = 1000.0 * (10.0f64 / 7.0).ln();
        assert!(d as f64 >= exact, "{d} < {exact}");
        assert!((d as f64) < exact + 1.5, "{d}");
        assert_eq!(b.commit(10_000, d, &p).map(|v| v <= 10_000), Some(true));
        assert_eq!(b.commit(10_000, d - 1, &p), None);
        let big = b.with_per_pulse(10_001);
        assert_eq!(big.earliest(0, &big.plan(10, 0, 0)), None);
        // With a 100-tick minimum on-time, 100 ticks of the wait happen during the pulse.
        let q = b.plan(10, 0, 100);
        let d100 = b.earliest(10_000, &q).unwrap();
        assert!(d100 + 100 >= d && d100 + 100 <= d + 1, "{d100} vs {d}");
    }

    #[test]
    fn steady_power_saturates_at_p_tau() {
        // 2 µJ/tick forever, τ = 1000 ticks: the first-order steady state is P·τ = 2000 µJ
        // (textbook first-order response, from memory); a body already hotter only cools.
        let b = ThermalBucket::new(10_000, Ticks(1_000))
            .unwrap()
            .with_rates(
                EnergyRate::from_uj_per_tick(2),
                EnergyRate::from_uj_per_tick(1),
            );
        let on = |u: u64, pull_in: u32, hold: u32| b.on_bound(u, &b.plan(pull_in, hold, 1));
        assert_eq!(on(0, 100, 0), 200);
        assert_eq!(on(0, 1_000_000, 0), 2_000);
        assert_eq!(on(5_000, 1_000_000, 0), 5_000);
        // Hold at 1 µJ/tick after a pull-in: the steady level of the hold phase is 1000 µJ.
        assert_eq!(on(0, 100, 1_000_000), 1_000);
        assert_eq!(on(0, 100, 100), 300);
        assert!(b.admits_min_pulse(100));
        let tiny = ThermalBucket::new(150, Ticks(1_000))
            .unwrap()
            .with_rates(EnergyRate::from_uj_per_tick(2), EnergyRate::ZERO);
        assert!(!tiny.admits_min_pulse(100));
    }

    #[test]
    fn ratings_convert_toward_safety() {
        let rate = TickRate::new(1_000_000).unwrap();
        let b = ThermalBucket::from_rating(Watts::new(0.5), Seconds::new(2.0), rate).unwrap();
        assert!(b.capacity_uj() <= 1_000_000);
        assert!(b.capacity_uj() >= 999_999);
        assert!(b.time_constant().0 >= 2_000_000);
        let r = EnergyRate::from_watts(Watts::new(3.0), rate).unwrap();
        assert!(r.0 >= 3 << 16);
        assert!(EnergyRate::from_watts(Watts::new(f32::NAN), rate).is_err());
        assert!(EnergyRate::from_watts(Watts::new(1.0e6), rate).is_err());
        assert_eq!(joules_to_uj_up(Joules::new(1.0e-6)), Ok(1));
        assert!(joules_to_uj_up(Joules::new(-1.0)).is_err());
    }
}
