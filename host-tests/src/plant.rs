//! The per-channel circuit and armature equations (right-hand side of the ODE).
//!
//! State per channel: flux linkage `λ` (Wb), armature position `p` (m),
//! velocity `u` (m/s), snubber capacitor voltage `vc` (V), and energy
//! integrals (J). The coil current follows from `i = λ / L(x)`.
//!
//! Electrical loop (low-side form; see [`crate::Topology`] for the high side):
//!
//! ```text
//!  rail V+ ──┬──────────────┬────────────┐
//!            │            clamp        snubber (Rsn + C)
//!          coil (R + L(x))   │            │
//!            │               │            │
//!  node w ───┴───────────────┴────────────┘
//!            │
//!          switch ─ Rsense ─ ground
//! ```
//!
//! `dλ/dt = V+ − w − R_series·i` and Kirchhoff's current law at node `w`:
//! `i = i_switch(w) + i_clamp(w − V+) + i_snubber(w − V+ − vc)`.
//! The node voltage `w` is algebraic (solved in `node.rs`).

use crate::node::{solve_node, Node};
use crate::params::{Armature, ChannelParams, Fault, Mechanics};

/// Number of state slots per channel.
pub(crate) const K: usize = 14;
pub(crate) const LAM: usize = 0;
pub(crate) const POS: usize = 1;
pub(crate) const VEL: usize = 2;
pub(crate) const VC: usize = 3;
pub(crate) const E_RAIL: usize = 4;
pub(crate) const E_WIND: usize = 5;
pub(crate) const E_WIRE: usize = 6;
pub(crate) const E_SENSE: usize = 7;
pub(crate) const E_SWC: usize = 8;
pub(crate) const E_SWA: usize = 9;
pub(crate) const E_CLAMP: usize = 10;
pub(crate) const E_SNUB: usize = 11;
pub(crate) const E_MECH: usize = 12;
pub(crate) const E_DAMP: usize = 13;
/// Number of dynamic (error-controlled) slots; the rest are energy integrals.
pub(crate) const DYN: usize = 4;

/// Active faults of one channel.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct FaultSet {
    pub open: bool,
    pub short: Option<(f64, f64)>,
    pub shorted_fraction: f64,
    pub extra_ohms: f64,
    pub stuck: bool,
}

impl FaultSet {
    pub(crate) fn apply(&mut self, f: Fault) {
        match f {
            Fault::Open => self.open = true,
            Fault::Short {
                residual_ohms,
                residual_henries,
            } => self.short = Some((residual_ohms, residual_henries)),
            Fault::ShortedTurns { fraction } => self.shorted_fraction = fraction,
            Fault::SeriesResistance { ohms } => self.extra_ohms = ohms,
            Fault::StuckArmature => self.stuck = true,
        }
    }
}

/// Effective (fault-adjusted) channel constants, cached for the RHS.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Eff {
    pub open: bool,
    /// Winding (or short) resistance.
    pub r_coil: f64,
    /// Wiring + added series resistance.
    pub r_wire: f64,
    /// `L_op` of the law `L = L_op/(1 + k(1−x))`.
    pub l_op: f64,
    pub k: f64,
    /// Stroke in metres (1.0 for a fixed armature, whose `p` is then `x`).
    pub stroke: f64,
    /// Whether the armature can move now.
    pub moving: bool,
    pub arm: Armature,
}

impl Eff {
    pub(crate) fn new(p: &ChannelParams, f: &FaultSet) -> Eff {
        let scale_r = 1.0 - f.shorted_fraction;
        let scale_l = scale_r * scale_r;
        let (r_coil, l_op, k) = match f.short {
            Some((r, l)) => (r, l, 0.0),
            None => (
                p.coil.resistance_ohms * scale_r,
                p.coil.inductance_operated_henries * scale_l,
                p.coil.inductance_operated_henries / p.coil.inductance_released_henries - 1.0,
            ),
        };
        let (stroke, moving, arm) = match p.mechanics {
            Mechanics::Fixed { .. } => (
                1.0,
                false,
                Armature {
                    stroke_m: 1.0,
                    mass_kg: 1.0,
                    preload_newtons: 0.0,
                    spring_newtons_per_m: 0.0,
                    damping_newton_s_per_m: 0.0,
                    restitution: 0.0,
                },
            ),
            Mechanics::Moving(a) => (a.stroke_m, !f.stuck, a),
        };
        Eff {
            open: f.open,
            r_coil,
            r_wire: p.coil.wiring_ohms + f.extra_ohms,
            l_op,
            k,
            stroke,
            moving,
            arm,
        }
    }

    /// `(L, dL/dx)` at normalised position `x` (clamped to [0, 1]).
    #[inline]
    pub(crate) fn inductance(&self, x: f64) -> (f64, f64) {
        let x = x.clamp(0.0, 1.0);
        let d = 1.0 + self.k * (1.0 - x);
        let l = self.l_op / d;
        (l, l * self.k / d)
    }

    /// Spring potential energy (J) at position `p` (m).
    pub(crate) fn spring_energy(&self, p: f64) -> f64 {
        self.arm.preload_newtons * p + 0.5 * self.arm.spring_newtons_per_m * p * p
    }
}

/// Operating point of one channel at a given state.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct Op {
    pub x: f64,
    pub l: f64,
    pub dldx: f64,
    pub i: f64,
    pub node: Node,
    /// Magnetic force along the stroke (N).
    pub force: f64,
    /// Net force (N) on the armature, before stop reactions.
    pub net_force: f64,
    pub pinned: bool,
}

pub(crate) fn operate(
    p: &ChannelParams,
    e: &Eff,
    y: &[f64; K],
    vp: f64,
    gate: bool,
    blocked: bool,
) -> Op {
    let pos = y[POS];
    let vel = y[VEL];
    let x = pos / e.stroke;
    let (l, dldx) = e.inductance(x);
    let i = if e.open { 0.0 } else { y[LAM] / l };
    let node = if e.open {
        solve_node(p, gate, 0.0, vp, y[VC], p.snubber.is_none())
    } else {
        solve_node(p, gate, i, vp, y[VC], blocked)
    };
    let force = 0.5 * i * i * dldx / e.stroke;
    let a = &e.arm;
    let net =
        force - (a.preload_newtons + a.spring_newtons_per_m * pos) - a.damping_newton_s_per_m * vel;
    let pinned = !e.moving
        || (pos <= 0.0 && vel <= 0.0 && net <= 0.0)
        || (pos >= e.stroke && vel >= 0.0 && net >= 0.0);
    Op {
        x,
        l,
        dldx,
        i,
        node,
        force,
        net_force: net,
        pinned,
    }
}

/// Time derivative of one channel's state. Returns the switch current drawn
/// from the rail (A).
#[allow(clippy::too_many_arguments)]
pub(crate) fn derive(
    p: &ChannelParams,
    e: &Eff,
    y: &[f64; K],
    vp: f64,
    gate: bool,
    blocked: bool,
    out: &mut [f64; K],
) -> f64 {
    let op = operate(p, e, y, vp, gate, blocked);
    let i = op.i;
    let n = op.node;
    let r_series = e.r_coil + e.r_wire;
    out[LAM] = if e.open || (blocked && p.snubber.is_none() && !gate) {
        0.0
    } else {
        vp - n.w - r_series * i
    };
    let vel = y[VEL];
    if op.pinned {
        out[POS] = 0.0;
        out[VEL] = 0.0;
    } else {
        out[POS] = vel;
        out[VEL] = op.net_force / e.arm.mass_kg;
    }
    out[VC] = match p.snubber {
        Some(s) => n.i_sn / s.farads,
        None => 0.0,
    };
    let rs = p.sense_ohms;
    let v_sw = n.w - n.i_sw * rs;
    out[E_RAIL] = vp * n.i_sw;
    out[E_WIND] = e.r_coil * i * i;
    out[E_WIRE] = e.r_wire * i * i;
    out[E_SENSE] = rs * n.i_sw * n.i_sw;
    let p_sw = v_sw * n.i_sw;
    if !gate && v_sw > 0.0 {
        out[E_SWC] = 0.0;
        out[E_SWA] = p_sw;
    } else {
        out[E_SWC] = p_sw;
        out[E_SWA] = 0.0;
    }
    out[E_CLAMP] = (n.w - vp) * n.i_cl;
    out[E_SNUB] = match p.snubber {
        Some(s) => s.ohms * n.i_sn * n.i_sn,
        None => 0.0,
    };
    let moving_vel = if op.pinned { 0.0 } else { vel };
    out[E_MECH] = op.force * moving_vel;
    out[E_DAMP] = e.arm.damping_newton_s_per_m * moving_vel * moving_vel;
    n.i_sw
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn reluctance_law_end_points() {
        let p = crate::demo::valve_24v();
        let e = Eff::new(&p, &FaultSet::default());
        let (l0, _) = e.inductance(0.0);
        let (l1, d1) = e.inductance(1.0);
        assert!((l0 - 0.35).abs() < 1e-15 && (l1 - 0.70).abs() < 1e-15);
        // Numerical derivative (central difference) agrees with the closed form.
        let h = 1e-6;
        let (a, _) = e.inductance(0.5 - h);
        let (b, _) = e.inductance(0.5 + h);
        let (_, d) = e.inductance(0.5);
        assert!(((b - a) / (2.0 * h) - d).abs() < 1e-8);
        assert!(d1 > d);
    }
}
