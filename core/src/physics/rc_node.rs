//! Capacitive nodes: RC charge and discharge to a threshold, the 5τ settling rule, inrush at a
//! capacitor switch-on, and the slew of a switch node at turn-off.
//!
//! `v(t) = v∞ + (v(0) − v∞)·e^(−t/τ)`, `τ = R·C` (the same [`FirstOrder`] as the coil).
//! Inrush: a capacitor switched onto a stiff source through R draws `I_peak = (V − v_C(0))/R` at
//! t = 0⁺ and dissipates `½·C·(V − v_C(0))²` in R however large R is. Switch-off slew: while the
//! coil current I₀ (held by the inductance) charges the node capacitance, `dv/dt = I₀/C`, until
//! the clamp takes over.

use super::clamp::Release;
use super::first_order::FirstOrder;
#[cfg(test)]
use super::first_order::FIVE_TAU_RESIDUAL;
use crate::error::{finite, non_negative, positive, result, Error, Param, Why};
use crate::units::{Amps, Farads, Joules, Ohms, Seconds, Volts, VoltsPerSecond};

/// An RC node: a capacitance charged or discharged through a resistance.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct RcNode {
    resistance: f32,
    capacitance: f32,
}

impl RcNode {
    /// A node of `capacitance` (F, > 0) behind `resistance` (Ω, > 0).
    ///
    /// # Errors
    /// [`Error::Invalid`] for a bad R or C; [`crate::Limit::Overflow`] when 5·R·C overflows f32 or
    /// R·C underflows to 0 s (so that [`RcNode::tau`] and [`RcNode::settling_time`] are always
    /// finite and positive).
    pub fn new(resistance: Ohms, capacitance: Farads) -> Result<Self, Error> {
        let r = positive(resistance.value(), Param::NodeResistance)?;
        let c = positive(capacitance.value(), Param::Capacitance)?;
        let five_tau = result(5.0 * r * c)?;
        if five_tau <= 0.0 {
            return Err(Error::OutsideModel(crate::error::Limit::Overflow));
        }
        Ok(Self {
            resistance: r,
            capacitance: c,
        })
    }

    /// Time constant `τ = R·C`, s.
    pub fn tau(&self) -> Seconds {
        Seconds::new(self.resistance * self.capacitance)
    }

    /// The node voltage after a step of its source from `from` to `to` (V, finite):
    /// `v(t) = to + (from − to)·e^(−t/RC)`.
    pub fn step(&self, from: Volts, to: Volts) -> Result<FirstOrder, Error> {
        let a = finite(from.value(), Param::Voltage)?;
        let b = finite(to.value(), Param::Voltage)?;
        FirstOrder::new(a, b, self.tau())
    }

    /// Time for the node to reach `threshold` after a step from `from` to `to`:
    /// `t = RC·ln((from − to)/(threshold − to))`, s (0 s when already past).
    ///
    /// # Errors
    /// [`Error::Unreachable`] when the threshold is at or beyond `to` (e.g. a logic threshold
    /// above the supply the node charges to).
    pub fn time_to(&self, from: Volts, to: Volts, threshold: Volts) -> Result<Seconds, Error> {
        let t = finite(threshold.value(), Param::Voltage)?;
        self.step(from, to)?.time_to(t)
    }

    /// The 5τ settling time, s: after it a step is complete to within e⁻⁵ ≈ 0.67 % (under 1 %,
    /// common practice, no source).
    pub fn settling_time(&self) -> Seconds {
        Seconds::new(5.0 * self.resistance * self.capacitance)
    }

    /// Time to settle within a fraction `residual` of the step (0 < residual < 1):
    /// `t = RC·ln(1/residual)`, s ([`crate::physics::first_order::FIVE_TAU_RESIDUAL`] gives 5τ).
    pub fn settling_time_within(&self, residual: f32) -> Result<Seconds, Error> {
        let r = positive(residual, Param::Tolerance)?;
        if r >= 1.0 {
            return Err(Error::invalid(Param::Tolerance, Why::OutOfRange));
        }
        result(-self.tau().value() * libm::logf(r)).map(Seconds::new)
    }

    /// Peak current at the step, `I = |to − from|/R`, A (t = 0⁺, source and switch ideal).
    pub fn inrush_peak(&self, from: Volts, to: Volts) -> Result<Amps, Error> {
        let a = finite(from.value(), Param::Voltage)?;
        let b = finite(to.value(), Param::Voltage)?;
        result(libm::fabsf(b - a) / self.resistance).map(Amps::new)
    }

    /// Energy lost in the resistance over the whole step, `½·C·(to − from)²`, J.
    pub fn step_loss(&self, from: Volts, to: Volts) -> Result<Joules, Error> {
        let a = finite(from.value(), Param::Voltage)?;
        let b = finite(to.value(), Param::Voltage)?;
        let d = b - a;
        result(0.5 * self.capacitance * d * d).map(Joules::new)
    }
}

/// Inrush peak of a capacitor switched onto `voltage` through `series` resistance (source,
/// switch, ESR, wiring): `I = V/R`, A (capacitor initially empty).
pub fn inrush_peak(voltage: Volts, series: Ohms) -> Result<Amps, Error> {
    let v = finite(voltage.value(), Param::Voltage)?;
    let r = positive(series.value(), Param::NodeResistance)?;
    result(libm::fabsf(v) / r).map(Amps::new)
}

/// Slew rate of a node of capacitance C driven by a current I: `dv/dt = I/C`, V/s.
///
/// Domain: I finite, C > 0.
pub fn slew_rate(current: Amps, capacitance: Farads) -> Result<VoltsPerSecond, Error> {
    let i = finite(current.value(), Param::Current)?;
    let c = positive(capacitance.value(), Param::Capacitance)?;
    result(i / c).map(VoltsPerSecond::new)
}

/// Time for a current I to slew a node of capacitance C through `swing` volts: `t = C·ΔV/I`, s.
///
/// # Errors
/// [`Error::Unreachable`] for I = 0 (the node never moves).
pub fn slew_time(current: Amps, capacitance: Farads, swing: Volts) -> Result<Seconds, Error> {
    let i = non_negative(current.value(), Param::Current)?;
    let c = positive(capacitance.value(), Param::Capacitance)?;
    let dv = non_negative(swing.value(), Param::Voltage)?;
    if i == 0.0 {
        return Err(Error::Unreachable {
            target: dv,
            asymptote: 0.0,
        });
    }
    result(c * dv / i).map(Seconds::new)
}

/// The switch-node edge at turn-off.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SwitchOffEdge {
    /// `dv/dt = I₀/C_node`, V/s.
    pub slew_rate: VoltsPerSecond,
    /// Time from switch-off until the node reaches the clamping level, `C_node·V_peak/I₀`, s.
    pub rise_time: Seconds,
}

impl Release {
    /// The switch node's edge at turn-off with node capacitance `node` (switch output capacitance
    /// plus wiring, F, > 0): the coil current I₀ charges it at `dv/dt = I₀/C` from ≈ 0 V up to
    /// the peak switch voltage. Assumes the edge is short against the release τ (current constant) and
    /// an ideal, instant switch turn-off.
    pub fn switch_off_edge(&self, node: Farads) -> Result<SwitchOffEdge, Error> {
        let i0 = self.initial();
        Ok(SwitchOffEdge {
            slew_rate: slew_rate(i0, node)?,
            rise_time: slew_time(i0, node, self.peak_switch_voltage())?,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn node() -> RcNode {
        // 10 kΩ, 100 nF: τ = 1 ms.
        RcNode::new(Ohms::new(10_000.0), Farads::new(100e-9)).unwrap()
    }

    #[test]
    fn charge_to_a_logic_threshold() {
        // Textbook, from memory: charging to half the final value takes τ·ln 2 ≈ 0.693 τ.
        let t = node()
            .time_to(Volts::new(0.0), Volts::new(3.3), Volts::new(1.65))
            .unwrap()
            .value();
        assert!((t - 1e-3 * core::f32::consts::LN_2).abs() < 1e-8);
        // Discharge from 3.3 V to 0.8 V: τ·ln(3.3/0.8).
        let t = node()
            .time_to(Volts::new(3.3), Volts::new(0.0), Volts::new(0.8))
            .unwrap()
            .value();
        assert!((t - 1e-3 * libm::logf(3.3 / 0.8)).abs() < 1e-8);
        assert!(matches!(
            node().time_to(Volts::new(0.0), Volts::new(3.3), Volts::new(3.3)),
            Err(Error::Unreachable { .. })
        ));
    }

    #[test]
    fn five_tau_settles_within_one_percent() {
        // Common practice, no source: 5τ settles a step to better than 1 %.
        let n = node();
        let s = n.settling_time();
        assert!((s.value() - 5e-3).abs() < 1e-9);
        let v = n
            .step(Volts::new(0.0), Volts::new(1.0))
            .unwrap()
            .value_at(s)
            .unwrap();
        assert!(1.0 - v < 0.01);
        let w = n.settling_time_within(FIVE_TAU_RESIDUAL).unwrap();
        assert!((w.value() - s.value()).abs() < 1e-8);
        assert!(n.settling_time_within(1.0).is_err());
    }

    #[test]
    fn inrush_and_slew() {
        // Textbook, from memory: at t = 0⁺ the empty capacitor is a short (Ohm's law, I = V/R),
        // and charging it from a fixed source loses ½·C·V² in the resistance.
        // 24 V onto 470 µF through 0.5 Ω: 48 A peak; loss ½·C·V² = 0.135 J.
        let i = inrush_peak(Volts::new(24.0), Ohms::new(0.5)).unwrap();
        assert!((i.value() - 48.0).abs() < 1e-4);
        let n = RcNode::new(Ohms::new(0.5), Farads::from_micro(470.0)).unwrap();
        assert!(
            (n.inrush_peak(Volts::new(0.0), Volts::new(24.0))
                .unwrap()
                .value()
                - 48.0)
                .abs()
                < 1e-4
        );
        assert!(
            (n.step_loss(Volts::new(0.0), Volts::new(24.0))
                .unwrap()
                .value()
                - 0.135_36)
                .abs()
                < 1e-5
        );
        // Textbook, from memory: i = C·dv/dt.
        // 0.13 A into 200 pF: 0.65 V/ns; 48 V in 73.8 ns.
        let s = slew_rate(Amps::new(0.13), Farads::new(200e-12)).unwrap();
        assert!((s.value() - 6.5e8).abs() < 1e3);
        let t = slew_time(Amps::new(0.13), Farads::new(200e-12), Volts::new(48.0)).unwrap();
        assert!((t.value() - 200e-12 * 48.0 / 0.13).abs() < 1e-12);
        assert!(slew_time(Amps::new(0.0), Farads::new(1e-9), Volts::new(1.0)).is_err());
        assert!(slew_rate(Amps::new(1.0), Farads::new(0.0)).is_err());
        assert!(RcNode::new(Ohms::new(f32::INFINITY), Farads::new(1e-9)).is_err());
        assert!(inrush_peak(Volts::new(f32::NAN), Ohms::new(1.0)).is_err());
    }

    #[test]
    fn switch_off_edge_from_a_release() {
        let c = crate::physics::circuit::tests::valve(
            crate::physics::clamp::Clamp::diode(Volts::new(0.8)).unwrap(),
        );
        let op = crate::OperatingPoint::new(Volts::new(24.0), crate::Celsius::new(20.0));
        let r = c.release(&op, Amps::new(0.13)).unwrap();
        let e = r.switch_off_edge(Farads::new(100e-12)).unwrap();
        // Textbook, from memory: i = C·dv/dt, the coil current charging the node capacitance
        // up to supply + diode drop (24.8 V).
        assert!((e.slew_rate.value() - 1.3e9).abs() < 1e3);
        assert!((e.rise_time.value() - 100e-12 * 24.8 / 0.13).abs() < 1e-12);
    }
}
