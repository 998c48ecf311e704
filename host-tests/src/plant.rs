//! The per-channel circuit and armature equations (right-hand side of the ODE).
//!
//! State per channel: flux linkage `λ` (Wb) of the winding, armature
//! position `p` (m), velocity `u` (m/s), snubber capacitor voltage `vc` (V),
//! flux linkages of the secondary loops (shorted section, eddy path; Wb), and
//! energy integrals (J). For a linear coil with no secondary loop the coil
//! current is `i = λ / L(x)`; otherwise the loop currents follow from the
//! flux linkages as in [`crate::magnetics`].
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

use crate::fault::FaultSet;
use crate::magnetics::{Loops, Magnetics, EDDY, SECT, WIND};
use crate::node::{solve_node, Node};
use crate::params::{Armature, ChannelParams, Mechanics};

/// Number of state slots per channel.
pub(crate) const K: usize = 18;
pub(crate) const LAM: usize = 0;
pub(crate) const POS: usize = 1;
pub(crate) const VEL: usize = 2;
pub(crate) const VC: usize = 3;
/// Flux linkage of the shorted section's loop.
pub(crate) const LAM_S: usize = 4;
/// Flux linkage of the eddy-current loop.
pub(crate) const LAM_E: usize = 5;
pub(crate) const E_RAIL: usize = 6;
pub(crate) const E_WIND: usize = 7;
pub(crate) const E_WIRE: usize = 8;
pub(crate) const E_SENSE: usize = 9;
pub(crate) const E_SWC: usize = 10;
pub(crate) const E_SWA: usize = 11;
pub(crate) const E_CLAMP: usize = 12;
pub(crate) const E_SNUB: usize = 13;
pub(crate) const E_MECH: usize = 14;
pub(crate) const E_DAMP: usize = 15;
pub(crate) const E_BRIDGE: usize = 16;
pub(crate) const E_EDDY: usize = 17;
/// Number of dynamic (error-controlled) slots; the rest are energy integrals.
pub(crate) const DYN: usize = 6;

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
    /// Linear coil with no secondary loop and no saturation: the plain
    /// `i = λ/L(x)` path (kept arithmetic-for-arithmetic). Read it through
    /// [`Eff::plain`].
    pub simple: bool,
    /// The coupled-loop model (used when not `simple`).
    pub loops: Loops,
}

impl Eff {
    #[inline(always)]
    pub(crate) fn new(p: &ChannelParams, f: &FaultSet, mag: &Magnetics) -> Eff {
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
        #[cfg(not(feature = "coupled-physics"))]
        let loops = {
            let _ = mag;
            Loops::plain(r_coil)
        };
        #[cfg(feature = "coupled-physics")]
        let coil = &p.coil;
        #[cfg(feature = "coupled-physics")]
        let loops = match f.short {
            Some(_) => Loops::new(l_op, r_coil, 1.0, l_op, None, &Magnetics::LINEAR),
            None => Loops::new(
                l_op,
                r_coil,
                coil.inductance_operated_henries / coil.inductance_released_henries,
                coil.inductance_operated_henries,
                f.section,
                mag,
            ),
        };
        let simple = !loops.active[SECT] && !loops.active[EDDY] && !loops.saturates();
        Eff {
            open: f.open,
            r_coil: loops.r[WIND],
            r_wire: p.coil.wiring_ohms + f.extra_ohms,
            l_op,
            k,
            stroke,
            moving,
            arm,
            simple,
            loops,
        }
    }

    /// Whether the channel takes the plain-coil path: always without the
    /// `coupled-physics` feature (the coupled-loop code is then not linked).
    #[inline(always)]
    pub(crate) fn plain(&self) -> bool {
        !cfg!(feature = "coupled-physics") || self.simple
    }

    /// Flux linkages of the three loops in a state.
    #[inline]
    pub(crate) fn lams(y: &[f64; K]) -> [f64; 3] {
        [y[LAM], y[LAM_S], y[LAM_E]]
    }

    /// Loop currents (A) in state `y`; `terminal_off`: the terminal loop
    /// carries no current (open, or clamp blocking).
    #[inline(never)]
    pub(crate) fn currents(&self, y: &[f64; K], terminal_off: bool) -> [f64; 3] {
        let (l, _) = self.inductance(y[POS] / self.stroke);
        if self.plain() {
            let i = if terminal_off { 0.0 } else { y[LAM] / l };
            return [i, 0.0, 0.0];
        }
        self.loops
            .currents(&Self::lams(y), l / self.l_op, terminal_off)
    }

    /// Stored magnetic energy (J) in state `y` (see [`Eff::currents`]).
    #[inline(never)]
    pub(crate) fn stored(&self, y: &[f64; K], terminal_off: bool) -> f64 {
        let (l, _) = self.inductance(y[POS] / self.stroke);
        if self.plain() {
            let i = if terminal_off { 0.0 } else { y[LAM] / l };
            return 0.5 * l * i * i;
        }
        let i = self
            .loops
            .currents(&Self::lams(y), l / self.l_op, terminal_off);
        self.loops.stored(&Self::lams(y), &i, l / self.l_op)
    }

    /// Set the flux linkages of `y` from loop currents `i` (A).
    #[inline(never)]
    pub(crate) fn set_currents(&self, y: &mut [f64; K], i: &[f64; 3]) {
        let (l, _) = self.inductance(y[POS] / self.stroke);
        if self.plain() {
            y[LAM] = l * i[WIND];
            y[LAM_S] = 0.0;
            y[LAM_E] = 0.0;
            return;
        }
        let lam = self.loops.fluxes(i, l / self.l_op);
        y[LAM] = lam[WIND];
        y[LAM_S] = lam[SECT];
        y[LAM_E] = lam[EDDY];
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
    /// Terminal (winding) current, A.
    pub i: f64,
    /// The terminal loop carries no current (open or clamp blocking).
    pub terminal_off: bool,
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
    let terminal_off = e.open || (blocked && p.snubber.is_none() && !gate);
    let (i, force) = if e.plain() {
        let i = if e.open { 0.0 } else { y[LAM] / l };
        (i, 0.5 * i * i * dldx / e.stroke)
    } else {
        coupled_currents(e, y, l, dldx, terminal_off)
    };
    let node = if e.open {
        solve_node(p, gate, 0.0, vp, y[VC], p.snubber.is_none())
    } else {
        solve_node(p, gate, i, vp, y[VC], blocked)
    };
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
        terminal_off,
        node,
        force,
        net_force: net,
        pinned,
    }
}

/// Loop currents and magnetic force of a coil with coupled loops or
/// saturation (kept out of line so the plain coil's frames stay small).
#[inline(never)]
fn coupled_currents(e: &Eff, y: &[f64; K], l: f64, dldx: f64, off: bool) -> (f64, f64) {
    let il = e.loops.currents(&Eff::lams(y), l / e.l_op, off);
    // F = ∂W'/∂p at fixed currents = (dL/dx / L_op)·(W'/P) / stroke.
    let f = dldx / e.l_op * e.loops.coenergy_unit(&il) / e.stroke;
    (il[WIND], f)
}

/// Flux-linkage rates and loss powers of the coupled loops; `v_rest` is the
/// terminal loop's voltage before the bridge drop, `V+ − w − R_series·i₀`.
#[inline(never)]
fn coupled_rates(e: &Eff, y: &[f64; K], op: &Op, v_rest: f64, out: &mut [f64; K]) {
    let lp = &e.loops;
    let il = e.currents(y, op.terminal_off);
    let i = op.i;
    // Bridge current (terminal loop minus section loop) with a shorted section.
    let i_bridge = if lp.active[SECT] { i - il[SECT] } else { 0.0 };
    out[LAM] = if op.terminal_off {
        0.0
    } else {
        v_rest - lp.bridge * i_bridge
    };
    out[LAM_S] = if lp.active[SECT] {
        lp.bridge * i_bridge - lp.r[SECT] * il[SECT]
    } else {
        0.0
    };
    out[LAM_E] = if lp.active[EDDY] {
        -lp.r[EDDY] * il[EDDY]
    } else {
        0.0
    };
    out[E_WIND] = e.r_coil * i * i + lp.r[SECT] * il[SECT] * il[SECT];
    out[E_BRIDGE] = lp.bridge * i_bridge * i_bridge;
    out[E_EDDY] = lp.r[EDDY] * il[EDDY] * il[EDDY];
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
    if e.plain() {
        out[LAM] = if op.terminal_off {
            0.0
        } else {
            vp - n.w - r_series * i
        };
        out[LAM_S] = 0.0;
        out[LAM_E] = 0.0;
        out[E_WIND] = e.r_coil * i * i;
        out[E_BRIDGE] = 0.0;
        out[E_EDDY] = 0.0;
    } else {
        coupled_rates(e, y, &op, vp - n.w - r_series * i, out);
    }
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
        let e = Eff::new(&p, &FaultSet::default(), &Magnetics::LINEAR);
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
