//! The switch-off (release) phase for every clamp type.
//!
//! At switch-off the coil keeps its current and drives it through whatever path the clamp offers.
//! For every clamp here except the snubber the freewheel loop is a resistance `R` (winding + wiring
//! [+ clamp resistor]) against a constant opposing voltage `V`:
//!
//! `L·di/dt = −R·i − V`  ⇒  `i(t) = (I₀ + a)·e^(−t/τ) − a`, `τ = L/R`, `a = V/R`,
//!
//! which reaches zero in finite time `t₀ = τ·ln(1 + I₀/a)`. With `x = I₀/a`, the charge and the
//! square-current integral over the release are `Q = ∫i dt = τ·a·(x − ln(1+x))` and
//! `S = ∫i² dt = τ·a²·(ln(1+x) − x + x²/2)`, so that `R·S + V·Q = ½·L·I₀²` exactly.
//!
//! The series R–C snubber ([`Clamp::RcSnubber`]) adds the capacitor voltage as a second state; its
//! release is second-order and lives in [`super::snubber`]. [`Release`] carries either shape and
//! answers the same questions for both.

use super::circuit::{Circuit, OperatingPoint, Resolved, Topology};
use super::clamp::Clamp;
use super::first_order::FirstOrder;
use super::snubber::SnubberRelease;
use crate::error::{result, Error, Param, Why};
#[cfg(feature = "clamp-rc-snubber")]
use crate::units::Henries;
use crate::units::{Amps, Joules, Seconds, Volts};

/// Where the coil's stored energy goes during one release, J.
///
/// Balance: `clamp + winding = stored + supply + capacitor` (the supply term is non-zero only when
/// the clamp is across the switch or the switch avalanches, because the supply then stays in the
/// loop; the capacitor term only for the RC snubber).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EnergySplit {
    /// Energy stored in the coil at switch-off, ½·L·I₀².
    pub stored: Joules,
    /// Energy into the clamp (diode, zener, resistor), or into the switch when it avalanches.
    pub clamp: Joules,
    /// Energy into the winding and wiring resistance.
    pub winding: Joules,
    /// Energy drawn from the supply during the release.
    pub supply: Joules,
    /// Energy given up by a snubber capacitor over the release (its pre-charge ½·C·V₀²); 0 J for
    /// every other clamp.
    pub capacitor: Joules,
}

impl EnergySplit {
    /// What the balance leaves over: `clamp + winding − stored − supply − capacitor`, J (zero up to
    /// rounding for every release of this crate).
    pub fn imbalance(&self) -> Joules {
        Joules::new(
            self.clamp.value() + self.winding.value()
                - self.stored.value()
                - self.supply.value()
                - self.capacitor.value(),
        )
    }
}

/// Which waveform a release follows.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
enum Shape {
    /// First-order: resistance against a constant opposing voltage (every clamp but the snubber).
    Linear,
    /// Second-order: the series R–C snubber (only with feature `clamp-rc-snubber`: without it no
    /// release takes this shape, and none of its code is linked).
    #[cfg(feature = "clamp-rc-snubber")]
    Snubber(SnubberRelease),
}

/// The release after switch-off from current I₀, for one circuit at one operating point.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Release {
    curve: FirstOrder,
    /// Resistance the coil current flows through in the clamp loop outside the clamp, Ω.
    loop_resistance: f32,
    /// Clamp's own series resistance, Ω.
    clamp_resistance: f32,
    /// Constant opposing voltage V, V.
    opposing: f32,
    /// Energy bookkeeping: voltage of the element that takes the `V·Q` term, and the supply's.
    clamp_element_voltage: f32,
    supply_in_loop: f32,
    supply: f32,
    topology: Topology,
    inductance: f32,
    shape: Shape,
}

impl Circuit {
    /// The release after switch-off from `initial` amperes (≥ 0), armature operated, at `op`.
    ///
    /// For the RC snubber the capacitor's pre-charge is the on-state voltage across the coil
    /// terminals at I₀: `V₀ = V_drive − I₀·(R_sense + R_DS(on))` (= `I₀·R_loop` at the final current).
    ///
    /// # Errors
    /// Invalid operating point or current; [`Why::BelowSupply`] when the switch breakdown or a
    /// clamp across the switch does not exceed the supply, or when the drive voltage
    /// (`V_supply − V_CE(sat)`, the coil voltage at switch-on) reaches the standoff of a TVS across
    /// the coil ([`Param::StandoffVoltage`]: it would conduct while the switch is on); [`crate::Limit::SnubberUnderdamped`] for
    /// a snubber that would ring; [`crate::Limit::Overflow`] when the peak switch voltage
    /// `V_supply + V + I₀·R_clamp` overflows f32.
    pub fn release(&self, op: &OperatingPoint, initial: Amps) -> Result<Release, Error> {
        self.release_resolved(&self.resolve(op)?, initial)
    }

    /// [`Circuit::release`] on an already resolved operating point (saves resolving twice).
    pub(crate) fn release_resolved(&self, r: &Resolved, initial: Amps) -> Result<Release, Error> {
        // A clamp type left out of the build (refused by `Clamp::validate` already): its arm
        // below is dead code and not linked.
        self.clamp().kind().built()?;
        let i0 = crate::error::non_negative(initial.value(), Param::Current)?;
        let supply = r.supply.value();
        let r_loop = r.off_loop.value();
        let breakdown = self.switch().breakdown().value();
        // (clamp resistor, opposing V, V of the element taking V·Q, supply in loop)
        let (r_clamp, opposing, element, in_loop) = match *self.clamp() {
            Clamp::Diode { forward } => (0.0, forward.value(), forward.value(), 0.0),
            Clamp::DiodeZener { clamp_voltage, .. } => {
                (0.0, clamp_voltage.value(), clamp_voltage.value(), 0.0)
            }
            Clamp::DiodeResistor {
                forward,
                resistance,
            } => (resistance.value(), forward.value(), forward.value(), 0.0),
            Clamp::AcrossSwitch { clamp_voltage } => {
                let v = libm::fminf(clamp_voltage.value(), breakdown);
                if v <= supply {
                    return Err(Error::invalid(Param::ClampVoltage, Why::BelowSupply));
                }
                (0.0, v - supply, v, supply)
            }
            Clamp::TvsAcrossCoil {
                clamp_voltage,
                standoff,
            } => {
                // While the switch is on the coil carries the drive voltage the moment it turns on
                // (no current yet, no drop): above the standoff the TVS conducts forward.
                if r.drive.value() >= standoff.value() {
                    return Err(Error::invalid(Param::StandoffVoltage, Why::BelowSupply));
                }
                (0.0, clamp_voltage.value(), clamp_voltage.value(), 0.0)
            }
            Clamp::Unclamped => {
                if breakdown <= supply {
                    return Err(Error::invalid(Param::BreakdownVoltage, Why::BelowSupply));
                }
                (0.0, breakdown - supply, breakdown, supply)
            }
            #[cfg(not(feature = "clamp-rc-snubber"))]
            Clamp::RcSnubber { .. } => {
                return Err(Error::invalid(Param::ClampType, Why::FeatureDisabled))
            }
            #[cfg(feature = "clamp-rc-snubber")]
            Clamp::RcSnubber {
                resistance,
                capacitance,
            } => {
                // Pre-charge: the on-state voltage across the coil terminals at I₀.
                let precharge = r.drive.value() - i0 * (r.on_loop.value() - r_loop);
                let s = SnubberRelease::new(
                    Henries::new(r.inductance_operated),
                    r.off_loop,
                    resistance,
                    capacitance,
                    Amps::new(i0),
                    Volts::new(precharge),
                )?;
                return Ok(Release {
                    curve: FirstOrder::new(i0, 0.0, s.slow_time_constant())?,
                    loop_resistance: r_loop,
                    clamp_resistance: resistance.value(),
                    opposing: 0.0,
                    clamp_element_voltage: 0.0,
                    supply_in_loop: 0.0,
                    supply,
                    topology: self.topology(),
                    inductance: r.inductance_operated,
                    shape: Shape::Snubber(s),
                });
            }
        };
        let r_total = r_loop + r_clamp;
        let tau = r.inductance_operated / r_total;
        let a = opposing / r_total;
        // The peak coil voltage V + I₀·R_clamp must be finite for the stress figures.
        result(supply + opposing + i0 * r_clamp)?;
        Ok(Release {
            curve: FirstOrder::new(i0, -a, Seconds::new(tau))?,
            loop_resistance: r_loop,
            clamp_resistance: r_clamp,
            opposing,
            clamp_element_voltage: element,
            supply_in_loop: in_loop,
            supply,
            topology: self.topology(),
            inductance: r.inductance_operated,
            shape: Shape::Linear,
        })
    }
}

impl Release {
    /// The underlying first-order curve `i(t) = (I₀ + a)·e^(−t/τ) − a`, valid while i ≥ 0.
    ///
    /// For the RC snubber, which is not first-order, this is only the envelope of its slow mode:
    /// from I₀ towards 0 with the slow time constant (see [`Release::snubber`] for the waveform).
    pub const fn curve(&self) -> &FirstOrder {
        &self.curve
    }

    /// The exact second-order release when the clamp is an RC snubber, else `None` (always `None`
    /// without feature `clamp-rc-snubber`).
    pub const fn snubber(&self) -> Option<&SnubberRelease> {
        match &self.shape {
            #[cfg(feature = "clamp-rc-snubber")]
            Shape::Snubber(s) => Some(s),
            Shape::Linear => None,
        }
    }

    /// Current at switch-off, A.
    pub const fn initial(&self) -> Amps {
        Amps::new(self.curve.initial())
    }

    /// Release time constant `τ = L_operated / (R_loop + R_clamp)`, s; for the RC snubber its slow
    /// time constant `−1/s₁`.
    pub const fn tau(&self) -> Seconds {
        self.curve.tau()
    }

    /// Coil current at time t after switch-off, A: the curve above until it reaches zero, then 0
    /// (the diode blocks reverse current). For the RC snubber the exact second-order current,
    /// which may swing negative (no diode). Domain: t ≥ 0.
    pub fn current_at(&self, t: Seconds) -> Result<Amps, Error> {
        match &self.shape {
            Shape::Linear => Ok(Amps::new(libm::fmaxf(self.curve.value_at(t)?, 0.0))),
            #[cfg(feature = "clamp-rc-snubber")]
            Shape::Snubber(s) => s.current_at(t),
        }
    }

    /// Time for the current to fall to `target` (0 ≤ target; a target above I₀ gives 0 s):
    /// `t = τ·ln((I₀ + a)/(I_target + a))`, s. RC snubber: the first crossing, solved numerically
    /// (see [`SnubberRelease::time_to_current`]).
    pub fn time_to_current(&self, target: Amps) -> Result<Seconds, Error> {
        match &self.shape {
            Shape::Linear => {
                let target = crate::error::non_negative(target.value(), Param::Current)?;
                self.curve.time_to(target)
            }
            #[cfg(feature = "clamp-rc-snubber")]
            Shape::Snubber(s) => s.time_to_current(target),
        }
    }

    /// Time for the current to reach zero: `t₀ = τ·ln(1 + I₀/a)`, s. RC snubber: its current only
    /// tends to zero (or swings through it), so this is the time after which it stays within
    /// e⁻⁵·I₀ (see [`SnubberRelease::time_to_rest`]).
    pub fn time_to_zero(&self) -> Result<Seconds, Error> {
        match &self.shape {
            Shape::Linear => self.curve.time_to(0.0),
            #[cfg(feature = "clamp-rc-snubber")]
            Shape::Snubber(s) => s.time_to_rest(),
        }
    }

    /// Time after which the current stays at or below `residual` (A, ≥ 0), s. For the first-order
    /// clamps (the current falls monotonically to zero and stops) this equals
    /// [`Release::time_to_current`]; a residual of 0 A is [`Release::time_to_zero`]. RC snubber:
    /// `|i| ≤ residual` for good, the reverse lobe included.
    pub fn settle_time(&self, residual: Amps) -> Result<Seconds, Error> {
        let r = crate::error::non_negative(residual.value(), Param::Current)?;
        match &self.shape {
            Shape::Linear => self.curve.time_to(r),
            #[cfg(feature = "clamp-rc-snubber")]
            Shape::Snubber(s) if r == 0.0 => s.time_to_rest(),
            #[cfg(feature = "clamp-rc-snubber")]
            Shape::Snubber(s) => s.settle_time(residual),
        }
    }

    /// Peak voltage across the switch, V (magnitude): `V_supply + V + I₀·R_clamp`, reached at the
    /// instant of switch-off, where V is the clamp's opposing voltage (for a clamp across the
    /// switch or avalanche, simply the clamping / breakdown voltage). RC snubber:
    /// `V_supply + max_t(R_s·i − v_C)`, whose maximum may come after switch-off (closed form).
    pub fn peak_switch_voltage(&self) -> Volts {
        Volts::new(self.supply + self.peak_coil_voltage())
    }

    /// Peak voltage of the switch node against ground, V, signed: low side `+(V_supply + V_coil)`,
    /// high side `−V_coil` (the node flies below ground).
    pub fn peak_node_voltage(&self) -> Volts {
        let coil = self.peak_coil_voltage();
        Volts::new(match self.topology {
            Topology::LowSide => self.supply + coil,
            Topology::HighSide => -coil,
        })
    }

    /// Largest reverse voltage across the coil during the release, V (magnitude).
    fn peak_coil_voltage(&self) -> f32 {
        match &self.shape {
            Shape::Linear => self.coil_voltage_at_current(self.curve.initial()),
            #[cfg(feature = "clamp-rc-snubber")]
            Shape::Snubber(s) => s.peak_reverse_voltage().value(),
        }
    }

    /// Reverse voltage across the coil while the first-order clamp carries `i` amperes:
    /// `V + i·R_clamp`, V.
    fn coil_voltage_at_current(&self, i: f32) -> f32 {
        self.opposing + i * self.clamp_resistance
    }

    /// Voltage across the switch (magnitude) at time t after switch-off, V:
    /// `V_supply + V + i(t)·R_clamp` while the clamp conducts, `V_supply` once the current has
    /// reached zero (the clamp diode blocks); for the RC snubber `V_supply` plus its reverse coil
    /// voltage. Domain: t ≥ 0.
    pub fn switch_voltage_at(&self, t: Seconds) -> Result<Volts, Error> {
        let coil = match &self.shape {
            #[cfg(feature = "clamp-rc-snubber")]
            Shape::Snubber(s) => s.reverse_voltage_at(t)?.value(),
            Shape::Linear => {
                let i = self.current_at(t)?.value();
                if i > 0.0 {
                    self.coil_voltage_at_current(i)
                } else {
                    0.0
                }
            }
        };
        result(self.supply + coil).map(Volts::new)
    }

    /// Power into the clamp element while it carries a current of mean `mean` and triangular
    /// peak-to-peak ripple `ripple` (A): `V_element·ī + R_clamp·(ī² + ΔI²/12)`, W. The same split
    /// as [`EnergySplit::clamp`]; for the hold PWM's off phases.
    pub(crate) fn clamp_power_at(&self, mean: f32, ripple: f32) -> f32 {
        self.clamp_element_voltage * mean
            + self.clamp_resistance * (mean * mean + ripple * ripple / 12.0)
    }

    /// Energy balance over the whole release (to zero current), J:
    /// `stored = ½·L·I₀²`, `winding = R_loop·S`, `clamp = V_element·Q + R_clamp·S`,
    /// `supply = V_supply_in_loop·Q`, with Q and S from the module formulas.
    ///
    /// For a switch that avalanches (no clamp) this is the single-pulse unclamped inductive
    /// switching energy: as R → 0 it tends to `½·L·I₀²·V_BR/(V_BR − V_supply)`.
    ///
    /// RC snubber: `clamp` is the snubber resistor's share and `capacitor` the pre-charge given up,
    /// see [`SnubberRelease::energy`].
    ///
    /// Accuracy: relative error ≲ 1e-5 of `stored` (series evaluation for small I₀/a).
    pub fn energy(&self) -> Result<EnergySplit, Error> {
        #[cfg(feature = "clamp-rc-snubber")]
        if let Shape::Snubber(s) = &self.shape {
            let e = s.energy();
            return Ok(EnergySplit {
                stored: e.stored,
                clamp: e.snubber_resistor,
                winding: e.winding,
                supply: Joules::new(0.0),
                capacitor: e.capacitor,
            });
        }
        self.zero_time_and_energy().map(|(_, e)| e)
    }

    /// Time to zero and the energy split together, sharing one `log1p` for the first-order clamps
    /// (the budget's hot path). Same results as [`Release::time_to_zero`] and [`Release::energy`].
    pub(crate) fn zero_time_and_energy(&self) -> Result<(Seconds, EnergySplit), Error> {
        #[cfg(feature = "clamp-rc-snubber")]
        if matches!(self.shape, Shape::Snubber(_)) {
            return Ok((self.time_to_zero()?, self.energy()?));
        }
        self.linear_zero_and_energy()
    }

    /// First-order clamps: `t₀ = τ·ln(1 + x)` and the energy split with `x = I₀/a` (inlined into
    /// its one caller, [`Release::zero_time_and_energy`]: one frame less on the budget's path).
    #[inline(always)]
    fn linear_zero_and_energy(&self) -> Result<(Seconds, EnergySplit), Error> {
        let i0 = self.curve.initial();
        let tau = self.curve.tau().value();
        let a = -self.curve.asymptote();
        let x = i0 / a;
        let (q_shape, s_shape, ln_1p_x) = log_tails(x);
        let t0 = result(tau * ln_1p_x)?;
        let q = result(tau * a * q_shape)?;
        let s = result(tau * a * a * s_shape)?;
        Ok((
            Seconds::new(t0),
            EnergySplit {
                stored: Joules::new(result(0.5 * self.inductance * i0 * i0)?),
                clamp: Joules::new(result(
                    self.clamp_element_voltage * q + self.clamp_resistance * s,
                )?),
                winding: Joules::new(result(self.loop_resistance * s)?),
                supply: Joules::new(result(self.supply_in_loop * q)?),
                capacitor: Joules::new(0.0),
            },
        ))
    }
}

/// `(x − ln(1 + x), ln(1 + x) − x + x²/2, ln(1 + x))` for x ≥ 0 from one `log1p`; the first two
/// by a series below 0.25, where the direct forms cancel.
fn log_tails(x: f32) -> (f32, f32, f32) {
    let l = super::ln::ln_1p(x);
    if x < 0.25 {
        (alternating_log_tail(x, 2), -alternating_log_tail(x, 3), l)
    } else {
        (x - l, l - x + 0.5 * x * x, l)
    }
}

/// `Σ_{n ≥ k} (−1)^n·xⁿ/n` for 0 ≤ x < 0.25, i.e. the tail of `−ln(1+x)` from term k on (sign as
/// in `x − ln(1+x)` for k = 2). 16 terms: truncation below 1e-9 relative.
fn alternating_log_tail(x: f32, k: u32) -> f32 {
    let mut sum = 0.0f32;
    let mut p = 1.0f32;
    for _ in 0..k {
        p *= x;
    }
    let mut n = k;
    while n < k + 16 {
        let term = p / n as f32;
        sum += if n.is_multiple_of(2) { term } else { -term };
        p *= x;
        n += 1;
    }
    sum
}

#[cfg(test)]
#[path = "release_tests.rs"]
mod tests;
