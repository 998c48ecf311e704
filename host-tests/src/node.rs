//! The algebraic node of a channel: the switched coil terminal `w`, solved
//! from Kirchhoff's current law with the switch, clamp and snubber laws.
//!
//! `i = i_switch(w) + i_clamp(w − V+) + i_snubber(w − V+ − vc)`. The node
//! voltage is algebraic (no node capacitance), found by the monotone solver
//! below; the exponential diode law is used in its explicit current→voltage
//! direction, so no stiff node capacitance is needed.

use crate::params::{ChannelParams, Clamp, Switch};

/// Minimum resistance used where a vertical i–v characteristic must be
/// written as a conductance (avalanche with `Rav + Rsense = 0`).
const MIN_OHMS: f64 = 1e-6;
/// Slope resistance of the MOSFET body diode beyond its knee.
const BODY_DIODE_OHMS: f64 = 0.05;

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
pub(crate) fn solve_increasing(
    f: impl Fn(f64) -> (f64, f64),
    mut lo: f64,
    mut hi: f64,
    x0: f64,
) -> f64 {
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::params::{Coil, DiodeLaw, Mechanics, Snubber, Topology};
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

    /// Kirchhoff's current law at the switched node (textbook) holds for
    /// every clamp / switch / snubber combination over random states.
    /// Kirchhoff's current law at the switched node (textbook) holds for
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
}
