//! Release into a series R–C snubber across the coil: the one second-order clamp.
//!
//! Every other clamp of this crate leaves a first-order loop (a resistance against a constant
//! voltage). A series `R_s`–`C` across the coil adds a state, the capacitor voltage, and the loop
//! becomes
//!
//! `L·di/dt + (R + R_s)·i + u = 0`, `C·du/dt = i`,
//!
//! with `R` the winding + wiring resistance and `u` the capacitor voltage taken in the freewheel
//! direction. Eliminating `u`: `L·i'' + (R + R_s)·i' + i/C = 0`, characteristic polynomial
//! `L·s² + (R + R_s)·s + 1/C`. With `α = (R + R_s)/(2L)`, `ω₀² = 1/(L·C)` and the damping number
//! `ρ = ω₀²/α² = 4L/(C·(R + R_s)²)`:
//!
//! - `ρ < 1`, overdamped: two real roots `s₁ = −α·ρ/(1 + √(1−ρ))` (slow) and
//!   `s₂ = −α·(1 + √(1−ρ))` (fast), and `i(t) = A·e^(s₁t) + B·e^(s₂t)`;
//! - `ρ = 1`, critically damped: `i(t) = (I₀ + k·t)·e^(−αt)`;
//! - `ρ > 1`, underdamped: the current rings and reverses repeatedly; outside this model
//!   ([`Limit::SnubberUnderdamped`]).
//!
//! The two-exponential form is evaluated as `y(t) = e^(s₁t)·[y₀·(1 + E)/2 + k·(1 − E)/(2β)]` with
//! `β = α·√(1−ρ)`, `E = e^(−2βt)` and `k = y'(0) + α·y₀`, which is the same function
//! (`A = (k + βy₀)/(2β)`, `B = (βy₀ − k)/(2β)`) but stays exact down to critical damping, where
//! A and B themselves grow without bound.
//!
//! **Pre-charge.** While the switch is on, the capacitor sits across the coil terminals and holds
//! their on-state voltage `V₀` (≈ `I₀·R` once the current has settled). At switch-off `u(0) = −V₀`,
//! so `i'(0) = (V₀ − (R + R_s)·I₀)/L` and `k = V₀/L − α·I₀`. The pre-charge keeps pushing current
//! the original way: for a well-damped snubber the current has a slow tail of about
//! `V₀/(R + R_s)·e^(−t/(C·(R + R_s)))` that a first-order resistor-clamp model misses.
//!
//! **No diode.** Nothing blocks reverse current, so the waveform is followed for all t ≥ 0: it has
//! at most one extremum and crosses zero at most once (when `R·R_s < L/C` for a settled pre-charge).
//! After a crossing, the current swings negative and returns to zero; that lobe belongs to the same
//! release.
//!
//! **Where first-order stops.** With `ρ ≪ 1` the fast root tends to `−(R + R_s)/L` (the diode +
//! resistor clamp's decay) and the slow one to `−1/(C·(R + R_s))`. Treating the snubber as a plain
//! resistor `R_s` is good only while the slow tail stays below the current of interest
//! (`V₀/(R + R_s)` well under the drop-out current) and the capacitor's voltage rise during the
//! release is small. This crate always uses the exact form above for [`crate::Clamp::RcSnubber`].

use crate::error::{finite, non_negative, positive, result, Error, Limit, Param};
use crate::physics::first_order::FIVE_TAU_RESIDUAL;
use crate::units::{Amps, Farads, Henries, Joules, Ohms, Seconds, Volts};

/// Closest approach to critical damping accepted as such: `1 − ρ` below this is treated as `ρ = 1`
/// exactly (a relative change of the roots below 1e-3, inside every part tolerance).
const CRITICAL_BAND: f32 = 1.0e-6;

/// Iteration cap of the root finder (regula falsi, Illinois variant, with bisection safeguard).
const MAX_SOLVER_STEPS: u32 = 80;
/// Iteration cap of the doubling search for a bracket on the tail.
const MAX_BRACKET_STEPS: u32 = 140;

/// The release of a coil into a series R–C snubber, in closed form.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SnubberRelease {
    initial: f32,
    precharge: f32,
    inductance: f32,
    loop_resistance: f32,
    snubber_resistance: f32,
    capacitance: f32,
    alpha: f32,
    beta: f32,
    slow: f32,
}

/// A solution `y(t)` of the snubber's homogeneous equation, given by `y(0)` and `y'(0)`.
#[derive(Clone, Copy)]
struct Wave {
    y0: f32,
    dy0: f32,
}

impl SnubberRelease {
    /// Release of a coil of inductance `inductance` through the loop resistance `loop_resistance`
    /// (winding + wiring, ≥ 0 Ω) into a snubber `snubber_resistance` (> 0 Ω) in series with
    /// `capacitance` (> 0 F), from current `initial` (A, ≥ 0) with the capacitor pre-charged to the
    /// on-state coil voltage `precharge` (V, finite; positive in the on-state polarity).
    ///
    /// # Errors
    /// [`Error::Invalid`] for a bad input; [`Limit::SnubberUnderdamped`] when
    /// `4L/(C·(R + R_s)²) > 1` (the current would ring); [`Limit::Overflow`] when the roots or the
    /// stored energy do not fit an f32.
    pub fn new(
        inductance: Henries,
        loop_resistance: Ohms,
        snubber_resistance: Ohms,
        capacitance: Farads,
        initial: Amps,
        precharge: Volts,
    ) -> Result<Self, Error> {
        let l = positive(inductance.value(), Param::InductanceOperated)?;
        let r = non_negative(loop_resistance.value(), Param::WindingResistance)?;
        let rs = positive(snubber_resistance.value(), Param::ClampResistance)?;
        let c = positive(capacitance.value(), Param::Capacitance)?;
        let i0 = non_negative(initial.value(), Param::Current)?;
        let v0 = finite(precharge.value(), Param::Voltage)?;
        let r_tot = result(r + rs)?;
        let alpha = result(r_tot / (2.0 * l))?;
        result(1.0 / (l * c))?;
        // ρ = 4L/(C·R²), formed so that it does not overflow before the comparison.
        let rho = result((2.0 / r_tot) * (2.0 / r_tot) * (l / c))?;
        let mut gap = 1.0 - rho;
        if gap < 0.0 {
            if gap < -CRITICAL_BAND {
                return Err(Error::OutsideModel(Limit::SnubberUnderdamped));
            }
            gap = 0.0;
        } else if gap < CRITICAL_BAND {
            gap = 0.0;
        }
        let sq = libm::sqrtf(gap);
        let beta = alpha * sq;
        let fast = -alpha * (1.0 + sq);
        let slow = -alpha * (1.0 - gap) / (1.0 + sq);
        result((v0 - r_tot * i0) / l)?;
        result(fast)?;
        result(slow)?;
        if slow >= 0.0 {
            return Err(Error::OutsideModel(Limit::Overflow));
        }
        // The energy split (½·L·I₀² + ½·C·V₀², see `energy`) must be finite too.
        result(0.5 * l * i0 * i0 + 0.5 * c * v0 * v0)?;
        Ok(Self {
            initial: i0,
            precharge: v0,
            inductance: l,
            loop_resistance: r,
            snubber_resistance: rs,
            capacitance: c,
            alpha,
            beta,
            slow,
        })
    }

    /// Current at switch-off I₀, A.
    pub const fn initial(&self) -> Amps {
        Amps::new(self.initial)
    }

    /// Capacitor voltage at switch-off (the on-state coil voltage) V₀, V.
    pub const fn precharge(&self) -> Volts {
        Volts::new(self.precharge)
    }

    /// Damping ratio `ζ = (R + R_s)/2·√(C/L)` (≥ 1 here; 1 = critical).
    pub fn damping_ratio(&self) -> f32 {
        // As (R + R_s)/2·√C/√L: α/ω₀ overflows when L·C does (ω₀² → 0).
        0.5 * (self.loop_resistance + self.snubber_resistance) * libm::sqrtf(self.capacitance)
            / libm::sqrtf(self.inductance)
    }

    /// `ω₀² = 1/(L·C)`, 1/s².
    fn omega2(&self) -> f32 {
        1.0 / (self.inductance * self.capacitance)
    }

    /// The fast root `s₂ = −(α + β)`, 1/s.
    fn fast(&self) -> f32 {
        -(self.alpha + self.beta)
    }

    /// `i'(0) = (V₀ − (R + R_s)·I₀)/L`, A/s.
    fn di0(&self) -> f32 {
        (self.precharge - (self.loop_resistance + self.snubber_resistance) * self.initial)
            / self.inductance
    }

    /// Slow time constant `−1/s₁`, s: the decay of the current's tail.
    pub fn slow_time_constant(&self) -> Seconds {
        Seconds::new(-1.0 / self.slow)
    }

    /// Fast time constant `−1/s₂`, s (tends to `L/(R + R_s)` as C → ∞: the resistor clamp;
    /// derived by hand from the series RLC loop, textbook second-order circuit, from memory).
    pub fn fast_time_constant(&self) -> Seconds {
        Seconds::new(-1.0 / self.fast())
    }

    fn current_wave(&self) -> Wave {
        Wave {
            y0: self.initial,
            dy0: self.di0(),
        }
    }

    fn current_slope_wave(&self) -> Wave {
        Wave {
            y0: self.di0(),
            dy0: -2.0 * self.alpha * self.di0() - self.omega2() * self.initial,
        }
    }

    /// Reverse voltage across the coil, `v = R_s·i + u` (u in the freewheel direction).
    fn reverse_voltage_wave(&self) -> Wave {
        Wave {
            y0: self.snubber_resistance * self.initial - self.precharge,
            dy0: self.snubber_resistance * self.di0() + self.initial / self.capacitance,
        }
    }

    fn capacitor_wave(&self) -> Wave {
        Wave {
            y0: self.precharge,
            dy0: -self.initial / self.capacitance,
        }
    }

    /// `y(t) = e^(s₁t)·[y₀·(1 + E)/2 + k·W]`, `E = e^(−2βt)`, `W = (1 − E)/(2β)` (→ t as β → 0).
    fn eval(&self, w: Wave, t: f32) -> f32 {
        if t == f32::INFINITY {
            return 0.0;
        }
        let decay = libm::expf(self.slow * t);
        if decay == 0.0 {
            return 0.0;
        }
        let k = w.dy0 + self.alpha * w.y0;
        let x = 2.0 * self.beta * t;
        let m = libm::expm1f(-x);
        let weight = if x > 0.0 { -m / (2.0 * self.beta) } else { t };
        decay * (w.y0 * (1.0 + 0.5 * m) + k * weight)
    }

    /// Time t > 0 of the one extremum of `y`, if it has one.
    ///
    /// `e^(−2βt) − 1 = x = 2β(k − αy₀)/((k − βy₀)·s₂)`, so
    /// `t = −(k − αy₀)/((k − βy₀)·s₂) · ln(1 + x)/x`, which is finite at β = 0.
    fn extremum(&self, w: Wave) -> Option<f32> {
        let k = w.dy0 + self.alpha * w.y0;
        let b = k - self.beta * w.y0;
        if b == 0.0 {
            return None; // pure slow mode: monotone
        }
        let lead = -(k - self.alpha * w.y0) / (b * self.fast());
        let x = -2.0 * self.beta * lead;
        if x <= -1.0 || !x.is_finite() {
            return None;
        }
        let l1 = if x == 0.0 { 1.0 } else { libm::log1pf(x) / x };
        let t = lead * l1;
        if t > 0.0 && t.is_finite() {
            Some(t)
        } else {
            None
        }
    }

    /// Coil current at time t after switch-off, A (negative during a reverse lobe).
    ///
    /// Domain: t ≥ 0 (NaN or negative is an error; +∞ gives 0). Accuracy: a few f32 ulp of the
    /// larger of I₀ and V₀/(R + R_s), relative to the exact two-exponential solution.
    pub fn current_at(&self, t: Seconds) -> Result<Amps, Error> {
        let t = time_arg(t)?;
        Ok(Amps::new(self.eval(self.current_wave(), t)))
    }

    /// Capacitor voltage at time t, V, in the on-state polarity (V₀ at t = 0, → 0 as t → ∞).
    pub fn capacitor_voltage_at(&self, t: Seconds) -> Result<Volts, Error> {
        let t = time_arg(t)?;
        Ok(Volts::new(self.eval(self.capacitor_wave(), t)))
    }

    /// Reverse voltage across the coil terminals at time t, `v = R_s·i − v_C`, V (positive when
    /// the terminal that was at the supply is the lower one, i.e. the switch node flies out).
    pub fn reverse_voltage_at(&self, t: Seconds) -> Result<Volts, Error> {
        let t = time_arg(t)?;
        Ok(Volts::new(self.eval(self.reverse_voltage_wave(), t)))
    }

    /// Largest reverse voltage across the coil over the release, V: the largest of its value at
    /// switch-off `R_s·I₀ − V₀`, its one extremum (closed form) and 0. Add the supply for the
    /// voltage across a low-side switch.
    pub fn peak_reverse_voltage(&self) -> Volts {
        let w = self.reverse_voltage_wave();
        let mut peak = libm::fmaxf(w.y0, 0.0);
        if let Some(t) = self.extremum(w) {
            peak = libm::fmaxf(peak, self.eval(w, t));
        }
        Volts::new(peak)
    }

    /// Magnitude of the reverse current lobe, A: `−min i(t)` when the current swings through zero,
    /// else 0. Magnetic force goes with i², so a lobe above the drop-out current can pull the
    /// armature back in.
    pub fn reverse_current_peak(&self) -> Amps {
        let w = self.current_wave();
        match self.extremum(w) {
            Some(t) => Amps::new(libm::fmaxf(-self.eval(w, t), 0.0)),
            None => Amps::new(0.0),
        }
    }

    /// First time the current falls to `target` (A, ≥ 0), s. A target at or above I₀ gives 0 s.
    ///
    /// Method: the current has at most one extremum (closed form), which splits t ≥ 0 into two
    /// monotone pieces; the crossing is bracketed on the first piece that contains it (the tail by
    /// doubling from the slow time constant) and solved by regula falsi with bisection safeguard,
    /// at most 80 steps, to ~1e-6 relative. The result is the bracket end past the target (never
    /// early).
    ///
    /// # Errors
    /// [`Error::Unreachable`] for a target of 0 A when the current only tends to zero without
    /// crossing it; [`Limit::Overflow`] if no bracket fits an f32.
    pub fn time_to_current(&self, target: Amps) -> Result<Seconds, Error> {
        let target = non_negative(target.value(), Param::Current)?;
        if target >= self.initial {
            return Ok(Seconds::new(0.0));
        }
        let w = self.current_wave();
        let mut start = 0.0;
        if let Some(te) = self.extremum(w) {
            let ie = self.eval(w, te);
            if ie <= target {
                return Ok(Seconds::new(self.solve(w, target, 0.0, te)));
            }
            start = te;
        }
        if target == 0.0 {
            return Err(Error::Unreachable {
                target,
                asymptote: 0.0,
            });
        }
        self.tail_crossing(w, start, target).map(Seconds::new)
    }

    /// Time after which `|i| ≤ residual` for good, s (`residual` in A, > 0; the reverse lobe
    /// counts). Same method and accuracy as [`SnubberRelease::time_to_current`].
    ///
    /// # Errors
    /// [`Error::Unreachable`] for a residual of 0 A unless the current is identically zero.
    pub fn settle_time(&self, residual: Amps) -> Result<Seconds, Error> {
        let residual = non_negative(residual.value(), Param::Current)?;
        let w = self.current_wave();
        if residual == 0.0 {
            if self.initial == 0.0 && self.precharge == 0.0 {
                return Ok(Seconds::new(0.0));
            }
            return Err(Error::Unreachable {
                target: 0.0,
                asymptote: 0.0,
            });
        }
        let start = self.extremum(w).unwrap_or(0.0);
        let at_start = self.eval(w, start);
        if libm::fabsf(at_start) <= residual {
            // The tail is inside the band already. Before `start` the current runs monotonically
            // from I₀ to `at_start`, so the last exit is its fall through +residual, if any.
            if self.initial <= residual {
                return Ok(Seconds::new(0.0));
            }
            return self.time_to_current(Amps::new(residual));
        }
        let level = if at_start > 0.0 { residual } else { -residual };
        self.tail_crossing(w, start, level).map(Seconds::new)
    }

    /// "At rest": the settle time to `e⁻⁵·I₀` ([`FIVE_TAU_RESIDUAL`] of the switch-off current),
    /// the snubber's counterpart of "time to zero" (its current reaches zero only asymptotically
    /// or swings through it). 0 s when I₀ = V₀ = 0.
    ///
    /// # Errors
    /// [`Error::Unreachable`] when I₀ = 0 but the capacitor is charged (it drives a current of its
    /// own; ask [`SnubberRelease::settle_time`] with an absolute residual).
    pub fn time_to_rest(&self) -> Result<Seconds, Error> {
        self.settle_time(Amps::new(FIVE_TAU_RESIDUAL * self.initial))
    }

    /// Energy over the whole release (t → ∞, current and capacitor voltage back to zero), J.
    ///
    /// `E_total = ½·L·I₀² + ½·C·V₀²` is dissipated in the one loop current, so the snubber
    /// resistor takes `E_total·R_s/(R + R_s)` and the winding `E_total·R/(R + R_s)`; the
    /// capacitor gives up its pre-charge `½·C·V₀²` (exact, f32 rounding only).
    ///
    /// The recharge of the capacitor at the next switch-on (≈ `½·C·V₀²` more in `R_s`) is not
    /// included.
    pub fn energy(&self) -> SnubberEnergy {
        let stored = 0.5 * self.inductance * self.initial * self.initial;
        let cap = 0.5 * self.capacitance * self.precharge * self.precharge;
        let total = stored + cap;
        let r_tot = self.loop_resistance + self.snubber_resistance;
        SnubberEnergy {
            stored: Joules::new(stored),
            capacitor: Joules::new(cap),
            // Shares formed as fractions first, so that neither product overflows.
            snubber_resistor: Joules::new(total * (self.snubber_resistance / r_tot)),
            winding: Joules::new(total * (self.loop_resistance / r_tot)),
        }
    }

    /// Slope of the current at switch-off, `i'(0) = (V₀ − (R + R_s)·I₀)/L`, A/s.
    pub fn initial_slope(&self) -> f32 {
        self.di0()
    }

    /// Slope of the current at t, A/s (same domain and accuracy as [`SnubberRelease::current_at`]).
    pub fn slope_at(&self, t: Seconds) -> Result<f32, Error> {
        let t = time_arg(t)?;
        Ok(self.eval(self.current_slope_wave(), t))
    }

    /// Crossing of `level` on the monotone tail after `start`, where y tends to 0.
    fn tail_crossing(&self, w: Wave, start: f32, level: f32) -> Result<f32, Error> {
        let tau = -1.0 / self.slow;
        let above = self.eval(w, start) > level;
        let mut lo = start;
        let mut step = tau;
        for _ in 0..MAX_BRACKET_STEPS {
            let hi = lo + step;
            if !hi.is_finite() {
                break;
            }
            let v = self.eval(w, hi);
            if (v > level) != above || v == level {
                return Ok(self.solve(w, level, lo, hi));
            }
            lo = hi;
            step *= 2.0;
        }
        Err(Error::OutsideModel(Limit::Overflow))
    }

    /// Solves `y(t) = level` on a bracket [lo, hi] where `y − level` changes sign; returns the
    /// end on the far side of the crossing (the later time).
    fn solve(&self, w: Wave, level: f32, lo: f32, hi: f32) -> f32 {
        super::root::illinois(
            |t| self.eval(w, t) - level,
            lo,
            hi,
            MAX_SOLVER_STEPS,
            1.0e-6,
        )
    }
}

/// Where the energy of a snubbed release goes (whole release), J.
///
/// Balance: `stored + capacitor = snubber_resistor + winding`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SnubberEnergy {
    /// ½·L·I₀², stored in the coil at switch-off.
    pub stored: Joules,
    /// ½·C·V₀², given up by the pre-charged capacitor.
    pub capacitor: Joules,
    /// Dissipated in the snubber resistor.
    pub snubber_resistor: Joules,
    /// Dissipated in the winding and wiring.
    pub winding: Joules,
}

fn time_arg(t: Seconds) -> Result<f32, Error> {
    let t = t.value();
    if t.is_nan() {
        return Err(Error::invalid(Param::Time, crate::error::Why::NotFinite));
    }
    if t < 0.0 {
        return Err(Error::invalid(Param::Time, crate::error::Why::Negative));
    }
    Ok(t)
}

#[cfg(test)]
mod tests;
