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
//! The node voltage `w` is algebraic (no node capacitance), found by the
//! monotone solver below; the exponential diode law is used in its explicit
//! current→voltage direction, so no stiff node capacitance is needed.

use crate::params::{Armature, ChannelParams, Clamp, Fault, Mechanics, Switch};

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

/// Minimum resistance used where a vertical i–v characteristic must be
/// written as a conductance (avalanche with `Rav + Rsense = 0`).
const MIN_OHMS: f64 = 1e-6;
/// Slope resistance of the MOSFET body diode beyond its knee.
const BODY_DIODE_OHMS: f64 = 0.05;

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

/// Solution at the switched node.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct Node {
    /// Switch-plus-sense voltage `w` (V): drain to ground for a low-side switch.
    pub w: f64,
    /// Current through switch and sense resistor (A).
    pub i_sw: f64,
    /// Current through the clamp (A, ≥ 0).
    pub i_cl: f64,
    /// Current through the snubber (A).
    pub i_sn: f64,
}

/// Current into switch + sense at node voltage `w`, and its derivative.
#[inline]
fn switch_current(sw: &Switch, rs: f64, gate: bool, w: f64) -> (f64, f64) {
    match (*sw, gate) {
        (Switch::Mosfet { on_ohms, .. }, true) => {
            let g = 1.0 / (on_ohms + rs);
            (g * w, g)
        }
        (
            Switch::Bipolar {
                saturation_volts,
                saturation_ohms,
                ..
            },
            true,
        ) => {
            if w > saturation_volts {
                let g = 1.0 / (saturation_ohms + rs);
                (g * (w - saturation_volts), g)
            } else {
                (0.0, 0.0)
            }
        }
        (
            Switch::Mosfet {
                breakdown_volts,
                avalanche_ohms,
                body_diode_volts,
                ..
            },
            false,
        ) => {
            if w > breakdown_volts {
                let g = 1.0 / (avalanche_ohms + rs).max(MIN_OHMS);
                (g * (w - breakdown_volts), g)
            } else if w < -body_diode_volts {
                let g = 1.0 / (BODY_DIODE_OHMS + rs);
                (g * (w + body_diode_volts), g)
            } else {
                (0.0, 0.0)
            }
        }
        (
            Switch::Bipolar {
                breakdown_volts,
                avalanche_ohms,
                ..
            },
            false,
        ) => {
            if w > breakdown_volts {
                let g = 1.0 / (avalanche_ohms + rs).max(MIN_OHMS);
                (g * (w - breakdown_volts), g)
            } else {
                (0.0, 0.0)
            }
        }
    }
}

/// Safeguarded Newton for an increasing function on a bracket
/// `[lo, hi]` with `f(lo) ≤ 0 ≤ f(hi)`. Converges to ~1e-13 relative.
fn solve_increasing(f: impl Fn(f64) -> (f64, f64), mut lo: f64, mut hi: f64, x0: f64) -> f64 {
    // Not `f64::clamp`: its lo ≤ hi assertion formats two f64s, which drags ~10 KiB of float
    // formatting into no_std firmware that links the plant.
    let mut x = x0.max(lo).min(hi);
    for _ in 0..100 {
        let (fx, dfx) = f(x);
        if fx == 0.0 {
            return x;
        }
        if fx < 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        let mut next = if dfx > 0.0 { x - fx / dfx } else { f64::NAN };
        if !(next > lo && next < hi) {
            next = 0.5 * (lo + hi);
        }
        if (next - x).abs() <= 1e-13 * (1.0 + x.abs()) || hi - lo <= 1e-13 * (1.0 + x.abs()) {
            return next;
        }
        x = next;
    }
    x
}

/// Node solution for coil current `i`, rail `vp`, snubber voltage `vc`.
///
/// `blocked` means the channel is in the zero-current, nothing-conducts
/// state (gate off, no snubber).
pub(crate) fn solve_node(
    p: &ChannelParams,
    gate: bool,
    i: f64,
    vp: f64,
    vc: f64,
    blocked: bool,
) -> Node {
    let rs = p.sense_ohms;
    let clamp = &p.clamp;
    let has_clamp = !matches!(clamp, Clamp::None);
    let thr = clamp.threshold_volts();
    if p.snubber.is_none() {
        if gate {
            // Switch carries everything unless the clamp would conduct.
            let w = match p.switch {
                Switch::Mosfet { on_ohms, .. } => i * (on_ohms + rs),
                Switch::Bipolar {
                    saturation_volts,
                    saturation_ohms,
                    ..
                } => saturation_volts + i * (saturation_ohms + rs),
            };
            if !has_clamp || w <= vp + thr {
                return Node {
                    w,
                    i_sw: i,
                    i_cl: 0.0,
                    i_sn: 0.0,
                };
            }
        } else {
            if blocked {
                return Node {
                    w: vp,
                    i_sw: 0.0,
                    i_cl: 0.0,
                    i_sn: 0.0,
                };
            }
            let vbr = p.switch.breakdown_volts();
            let r_av = match p.switch {
                Switch::Mosfet { avalanche_ohms, .. } | Switch::Bipolar { avalanche_ohms, .. } => {
                    avalanche_ohms + rs
                }
            };
            if !has_clamp {
                // Avalanche; for i ≤ 0 the law is continued at Vbr (the
                // step that crosses zero is shortened, then blocked).
                let ia = i.max(0.0);
                return Node {
                    w: vbr + r_av * ia,
                    i_sw: i,
                    i_cl: 0.0,
                    i_sn: 0.0,
                };
            }
            if i <= 0.0 {
                return Node {
                    w: vp + thr,
                    i_sw: 0.0,
                    i_cl: i,
                    i_sn: 0.0,
                };
            }
            let w = vp + clamp.volts_at(i);
            if w <= vbr {
                return Node {
                    w,
                    i_sw: 0.0,
                    i_cl: i,
                    i_sn: 0.0,
                };
            }
            // Clamp and avalanche share: fall through to the general solve.
        }
    }
    general_node(p, gate, i, vp, vc)
}

fn general_node(p: &ChannelParams, gate: bool, i: f64, vp: f64, vc: f64) -> Node {
    let rs = p.sense_ohms;
    let clamp = &p.clamp;
    let sn_g = p.snubber.map(|s| 1.0 / s.ohms).unwrap_or(0.0);
    let total = |w: f64| {
        let (a, da) = switch_current(&p.switch, rs, gate, w);
        (a + sn_g * (w - vp - vc), da + sn_g)
    };
    let v0 = vp + clamp.threshold_volts();
    let (t0, _) = if v0.is_finite() {
        total(v0)
    } else {
        (f64::INFINITY, 0.0)
    };
    if t0 >= i {
        // Clamp off: solve total(w) = i for w ≤ v0 (unique when total is
        // strictly increasing; otherwise any point of the flat part).
        let g = |w: f64| {
            let (a, da) = total(w);
            (a - i, da)
        };
        let start = vp + vc;
        let (lo, hi) = bracket(&g, start, v0);
        let w = solve_increasing(g, lo, hi, start);
        let (a, _) = switch_current(&p.switch, rs, gate, w);
        return Node {
            w,
            i_sw: a,
            i_cl: 0.0,
            i_sn: sn_g * (w - vp - vc),
        };
    }
    // Clamp conducts: unknown is its current ic ∈ (0, i − total(v0)].
    let h = |ic: f64| {
        let w = vp + clamp.volts_at(ic);
        let (a, da) = total(w);
        (ic + a - i, 1.0 + da * clamp.slope_at(ic))
    };
    let hi = i - t0;
    let ic = solve_increasing(h, 0.0, hi, hi);
    let w = vp + clamp.volts_at(ic);
    let (a, _) = switch_current(&p.switch, rs, gate, w);
    Node {
        w,
        i_sw: a,
        i_cl: ic,
        i_sn: sn_g * (w - vp - vc),
    }
}

/// Find `[lo, hi]` with `g(lo) ≤ 0 ≤ g(hi)` by doubling outwards from `start`,
/// with `hi` capped at `cap` (where `g(cap) ≥ 0` is known when finite).
fn bracket(g: &impl Fn(f64) -> (f64, f64), start: f64, cap: f64) -> (f64, f64) {
    let start = if start > cap { cap } else { start };
    let (g0, _) = g(start);
    if g0 == 0.0 {
        return (start, start);
    }
    let mut step = 1.0;
    if g0 < 0.0 {
        let mut lo = start;
        for _ in 0..200 {
            let mut x = lo + step;
            if x >= cap {
                x = cap;
            }
            if g(x).0 >= 0.0 {
                return (lo, x);
            }
            lo = x;
            step *= 2.0;
        }
        (lo, lo)
    } else {
        let mut hi = start;
        for _ in 0..200 {
            let x = hi - step;
            if g(x).0 <= 0.0 {
                return (x, hi);
            }
            hi = x;
            step *= 2.0;
        }
        (hi, hi)
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
    use crate::params::{Coil, DiodeLaw, Snubber, Topology};
    use crate::sense::Prng;

    fn channel(clamp: Clamp, switch: Switch, snubber: Option<Snubber>) -> ChannelParams {
        ChannelParams {
            coil: Coil::fixed(100.0, 0.2, 1.0),
            mechanics: Mechanics::Fixed { position: 0.0 },
            switch,
            sense_ohms: 0.2,
            clamp,
            snubber,
            topology: Topology::LowSide,
        }
    }

    /// Kirchhoff's current law at the switched node (textbook, from memory) holds for
    /// every clamp / switch / snubber combination over random states.
    #[test]
    fn node_solution_satisfies_kcl() {
        let clamps = [
            Clamp::None,
            Clamp::Diode(DiodeLaw::rectifier()),
            Clamp::DiodeZener {
                diode: DiodeLaw::small_signal(),
                zener_volts: 30.0,
                zener_ohms: 3.0,
            },
            Clamp::DiodeResistor {
                diode: DiodeLaw::rectifier(),
                ohms: 330.0,
            },
            Clamp::Tvs {
                breakdown_volts: 40.0,
                dynamic_ohms: 0.0,
            },
        ];
        let switches = [Switch::small_mosfet(), Switch::small_npn()];
        let snubbers = [
            None,
            Some(Snubber {
                ohms: 47.0,
                farads: 1e-6,
            }),
        ];
        let mut rng = Prng::new(3);
        let mut cases = 0;
        for clamp in clamps {
            for sw in switches {
                for sn in snubbers {
                    let p = channel(clamp, sw, sn);
                    for _ in 0..300 {
                        let i = (rng.uniform() - 0.2) * 2.0;
                        let vp = 5.0 + 25.0 * rng.uniform();
                        let vc = (rng.uniform() - 0.5) * 80.0;
                        let gate = rng.uniform() < 0.5;
                        let n = solve_node(&p, gate, i, vp, vc, false);
                        assert!(
                            n.w.is_finite(),
                            "{clamp:?} {sw:?} {sn:?} {i} {vp} {vc} {gate}"
                        );
                        // Skip the states the plant never integrates: negative
                        // current with nothing that can carry it.
                        let can_carry_negative =
                            sn.is_some() || (gate && matches!(sw, Switch::Mosfet { .. }));
                        if i < 0.0 && !can_carry_negative {
                            continue;
                        }
                        let sum = n.i_sw + n.i_cl + n.i_sn;
                        assert!(
                            (sum - i).abs() <= 1e-9 * (1.0 + i.abs()),
                            "KCL {sum} vs {i}: {clamp:?} {sw:?} {sn:?} vp={vp} vc={vc} gate={gate}"
                        );
                        assert!(n.i_cl >= 0.0);
                        if n.i_cl > 0.0 {
                            let v = clamp.volts_at(n.i_cl);
                            assert!((n.w - vp - v).abs() < 1e-8 * (1.0 + v.abs()));
                        }
                        cases += 1;
                    }
                }
            }
        }
        assert!(cases > 4000);
    }

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
