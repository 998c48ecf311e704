//! Magnetic model of a winding with coupled secondary loops and saturation.
//!
//! ## Loops
//!
//! Up to three closed loops share the magnetic circuit: loop 0 is the
//! winding (or, with [`crate::Fault::ShortedTurns`], its healthy part, which
//! carries the terminal current), loop 1 the bridged section of shorted
//! turns, loop 2 an eddy-current path ([`CoupledLoop`]). Each loop `j` has a
//! flux linkage `λⱼ` as a state of the integration and obeys
//! `dλⱼ/dt = vⱼ − Rⱼ·iⱼ` (Faraday's law with its own resistance).
//!
//! ## Common-flux (leakage) form
//!
//! Every loop links a common core flux with a coupling `kⱼ` (`k₀ = 1`: the
//! winding defines the core flux) and has its own leakage; at the armature's
//! operated position
//!
//! `L̂ = D + v·vᵀ`, `D = diag((1 − kⱼ²)·Lⱼ)`, `vⱼ = kⱼ·sqrt(Lⱼ)`,
//!
//! so `Mᵢⱼ = kᵢ·kⱼ·sqrt(Lᵢ·Lⱼ)` (a winding–loop mutual is
//! `M = k·sqrt(L₁·L₂)`) and `L̂` is positive definite whenever every `kⱼ < 1`
//! for `j ≥ 1`. The armature position scales all of it by the permeance ratio
//! `P(x) = L(x)/L_op` of the coil's reluctance law ([`crate::Coil`]).
//!
//! ## Saturation
//!
//! The core (mutual) branch saturates with the magnetising variable
//! `z = vᵀ·i` (√H·A; for a lone winding `z = sqrt(L)·i`):
//!
//! `λ = P(x)·(D·i + v·Ψ(z))`, `Ψ(z) = z·(1 − d·s(z/z_s))`, `s(u) = u²/(1 + u²)`,
//!
//! with `z_s = sqrt(L_op)·i_knee`. For a lone winding this is
//! `L(i) = L₀·(1 − d·s(i/i_knee))`: the secant inductance falls smoothly by
//! `d/2` at the knee current and tends to `(1 − d)·L₀` at large current.
//! The incremental inductance `dλ/di = L₀·(1 − d·(3u² + u⁴)/(1 + u²)²)` is
//! smallest (`1 − 1.125·d`) at `u = √3`, so `d ≤ 0.8` keeps it positive.
//! Because `λ` is the gradient of the co-energy
//! `W'(i, x) = P(x)·(½·iᵀD·i + ∫₀^z Ψ)`, the model is conservative: the
//! stored energy is `W = iᵀλ − W'` (not `½·L·i²`), the armature force is
//! `∂W'/∂x` at fixed currents, and the energy books close.
//!
//! The currents follow from the flux linkages in closed form up to one
//! scalar equation: with `μ = λ/P(x)`, `i = L̂⁻¹·μ − L̂⁻¹·v·(Ψ(z) − z)` where
//! `z` solves `(1 − c)·z + c·Ψ(z) = vᵀ·L̂⁻¹·μ`, `c = vᵀ·L̂⁻¹·v ∈ (0, 1]`
//! (monotone in `z`; safeguarded Newton, ~1e-13 relative).

use crate::params::{check, finite_gt0, SimError};

/// A closed loop magnetically coupled to the winding: an eddy-current path
/// in the iron or a shorted sleeve/bobbin (one turn of its own).
///
/// Its self inductance is given at the armature's released position and
/// scales with the coil's reluctance law like the winding's. The current it
/// takes at switch-on is a fast, decaying part of the terminal current with a
/// time constant near `L_e·(1 − k²)/R_e` (exactly: the fast eigenvalue of
/// the coupled pair).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CoupledLoop {
    /// Loop resistance `R_e`, ohms (> 0, finite).
    pub ohms: f64,
    /// Loop self inductance `L_e` at the released position, henries (> 0, finite).
    pub henries: f64,
    /// Magnetic coupling `k` to the winding, in [0, 1).
    pub coupling: f64,
}

/// Current-dependent inductance of the iron (see the module docs for the law).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Saturation {
    /// Limiting relative drop `d` of the inductance at large current, in [0, 0.8].
    /// The drop is `d/2` at the knee current.
    pub drop: f64,
    /// Knee current `i_knee` of the intact winding, amperes (> 0, finite).
    pub knee_amps: f64,
}

impl Saturation {
    /// The law for a wanted relative drop `drop_at` of the secant inductance
    /// at a current `amps` (e.g. 20 % at the coil's full current), with the
    /// knee placed at that current: `d = 2·drop_at`. Domain: `drop_at` in
    /// [0, 0.4], `amps > 0`.
    pub fn dropping(drop_at: f64, amps: f64) -> Self {
        Saturation {
            drop: 2.0 * drop_at,
            knee_amps: amps,
        }
    }

    /// Secant inductance ratio `L(i)/L₀ = 1 − d·u²/(1 + u²)`, `u = i/i_knee`,
    /// for a lone winding.
    pub fn inductance_ratio(&self, amps: f64) -> f64 {
        let u = amps / self.knee_amps;
        let u2 = u * u;
        1.0 - self.drop * u2 / (1.0 + u2)
    }
}

/// The magnetic extras of one channel's coil, beyond its linear
/// self inductance: an eddy-current loop and saturation. Set with
/// [`crate::Bench::set_magnetics`] (at any time).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Magnetics {
    /// A coupled eddy-current loop, if any.
    pub eddy: Option<CoupledLoop>,
    /// Saturation of the iron, if any.
    pub saturation: Option<Saturation>,
}

impl Magnetics {
    /// No eddy loop, no saturation: the linear coil.
    pub const LINEAR: Self = Magnetics {
        eddy: None,
        saturation: None,
    };

    pub(crate) fn validate(&self) -> Result<(), SimError> {
        if let Some(e) = self.eddy {
            finite_gt0(e.ohms, "eddy.ohms")?;
            finite_gt0(e.henries, "eddy.henries")?;
            check(e.coupling >= 0.0 && e.coupling < 1.0, "eddy.coupling")?;
        }
        if let Some(s) = self.saturation {
            check(s.drop >= 0.0 && s.drop <= 0.8, "saturation.drop")?;
            finite_gt0(s.knee_amps, "saturation.knee_amps")?;
        }
        Ok(())
    }
}

/// Loop indices.
pub(crate) const WIND: usize = 0;
pub(crate) const SECT: usize = 1;
pub(crate) const EDDY: usize = 2;

/// The coupled-loop model of one channel (referred to the operated position).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Loops {
    /// Which loops exist.
    pub active: [bool; 3],
    /// Loop resistances (healthy winding part, section, eddy), ohms.
    pub r: [f64; 3],
    /// Bridge resistance between loops 0 and 1 (only with a section), ohms.
    pub bridge: f64,
    /// Leakage diagonal `D`, henries.
    pub leak: [f64; 3],
    /// Core coupling vector `v`, √H.
    pub v: [f64; 3],
    /// `L̂⁻¹` (inactive loops padded as identity), with `w = L̂⁻¹·v`, `c = vᵀw`;
    /// index 0: all loops; index 1: the terminal loop carrying no current.
    pub inv: [[[f64; 3]; 3]; 2],
    pub w: [[f64; 3]; 2],
    pub c: [f64; 2],
    /// Saturation `(d, z_s)`.
    pub sat: Option<(f64, f64)>,
    /// Self inductance of each loop (error-control scale), henries.
    pub scale: [f64; 3],
}

/// `Ψ(z)` and `Ψ'(z)` of the saturation law.
#[inline]
fn psi(z: f64, d: f64, zs: f64) -> (f64, f64) {
    let u = z / zs;
    let u2 = u * u;
    let q = 1.0 + u2;
    (
        z * (1.0 - d * u2 / q),
        1.0 - d * (3.0 * u2 + u2 * u2) / (q * q),
    )
}

/// `∫₀^z Ψ(ζ) dζ = z²/2 − d·(z²/2 − (z_s²/2)·ln(1 + z²/z_s²))`.
#[inline]
fn psi_integral(z: f64, d: f64, zs: f64) -> f64 {
    let u = z / zs;
    0.5 * z * z - d * 0.5 * (z * z - zs * zs * libm::log1p(u * u))
}

fn inverse3(m: &[[f64; 3]; 3]) -> [[f64; 3]; 3] {
    let c00 = m[1][1] * m[2][2] - m[1][2] * m[2][1];
    let c01 = m[1][2] * m[2][0] - m[1][0] * m[2][2];
    let c02 = m[1][0] * m[2][1] - m[1][1] * m[2][0];
    let det = m[0][0] * c00 + m[0][1] * c01 + m[0][2] * c02;
    let inv_det = 1.0 / det;
    [
        [
            c00 * inv_det,
            (m[0][2] * m[2][1] - m[0][1] * m[2][2]) * inv_det,
            (m[0][1] * m[1][2] - m[0][2] * m[1][1]) * inv_det,
        ],
        [
            c01 * inv_det,
            (m[0][0] * m[2][2] - m[0][2] * m[2][0]) * inv_det,
            (m[0][2] * m[1][0] - m[0][0] * m[1][2]) * inv_det,
        ],
        [
            c02 * inv_det,
            (m[0][1] * m[2][0] - m[0][0] * m[2][1]) * inv_det,
            (m[0][0] * m[1][1] - m[0][1] * m[1][0]) * inv_det,
        ],
    ]
}

fn mat_vec(m: &[[f64; 3]; 3], x: &[f64; 3]) -> [f64; 3] {
    core::array::from_fn(|r| m[r][0] * x[0] + m[r][1] * x[1] + m[r][2] * x[2])
}

fn dot(a: &[f64; 3], b: &[f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

impl Loops {
    /// Build the model.
    ///
    /// `l_op`, `r`: the winding's operated inductance and resistance (after
    /// lumped faults); `l_rel_ratio = L_op/L_rel`; `l_intact`: the intact
    /// winding's operated inductance (reference of the saturation knee).
    pub(crate) fn new(
        l_op: f64,
        r: f64,
        l_op_over_rel: f64,
        l_intact: f64,
        section: Option<crate::fault::Section>,
        mag: &Magnetics,
    ) -> Loops {
        let mut active = [true, false, false];
        let mut self_l = [l_op, 1.0, 1.0];
        let mut k = [1.0, 0.0, 0.0];
        let mut res = [r, 0.0, 0.0];
        let mut bridge = 0.0;
        if let Some(s) = section {
            let f = s.fraction;
            let g = 1.0 - f;
            let a = l_op / (g * g + f * f + 2.0 * s.coupling * f * g);
            self_l[WIND] = a * g * g;
            self_l[SECT] = a * f * f;
            k[SECT] = s.coupling;
            res[WIND] = r * g;
            res[SECT] = r * f;
            bridge = s.bridge_ohms;
            active[SECT] = true;
        }
        if let Some(e) = mag.eddy {
            self_l[EDDY] = e.henries * l_op_over_rel;
            k[EDDY] = e.coupling;
            res[EDDY] = e.ohms;
            active[EDDY] = true;
        }
        let mut leak = [0.0; 3];
        let mut v = [0.0; 3];
        for j in 0..3 {
            if active[j] {
                leak[j] = (1.0 - k[j] * k[j]) * self_l[j];
                v[j] = k[j] * libm::sqrt(self_l[j]);
            }
        }
        let build = |terminal: bool| {
            let mut m = [[0.0; 3]; 3];
            for rr in 0..3 {
                for cc in 0..3 {
                    let on = |j: usize| active[j] && (terminal || j != WIND);
                    m[rr][cc] = if on(rr) && on(cc) {
                        v[rr] * v[cc] + if rr == cc { leak[rr] } else { 0.0 }
                    } else if rr == cc {
                        1.0
                    } else {
                        0.0
                    };
                }
            }
            let inv = inverse3(&m);
            let mut vv = v;
            if !terminal {
                vv[WIND] = 0.0;
            }
            let w = mat_vec(&inv, &vv);
            (inv, w, dot(&vv, &w))
        };
        let (inv0, w0, c0) = build(true);
        let (inv1, w1, c1) = build(false);
        Loops {
            active,
            r: res,
            bridge,
            leak,
            v,
            inv: [inv0, inv1],
            w: [w0, w1],
            c: [c0, c1],
            sat: mag
                .saturation
                .filter(|s| s.drop > 0.0)
                .map(|s| (s.drop, libm::sqrt(l_intact) * s.knee_amps)),
            scale: self_l,
        }
    }

    /// Loop currents (A) from flux linkages `lam` (Wb) at permeance ratio `p`.
    /// `terminal_off`: the terminal loop is open (carries no current).
    pub(crate) fn currents(&self, lam: &[f64; 3], p: f64, terminal_off: bool) -> [f64; 3] {
        let m = usize::from(terminal_off);
        let mut mu: [f64; 3] =
            core::array::from_fn(|j| if self.active[j] { lam[j] / p } else { 0.0 });
        if terminal_off {
            mu[WIND] = 0.0;
        }
        let lin = mat_vec(&self.inv[m], &mu);
        let Some((d, zs)) = self.sat else {
            return lin;
        };
        let phi = dot(&self.w[m], &mu);
        let c = self.c[m];
        if phi == 0.0 || c <= 0.0 {
            return lin;
        }
        let a = phi.abs();
        // (1 − c)·z + c·Ψ(z) = |φ|, increasing in z; root in [|φ|, |φ|/(1 − c·d)].
        let f = |z: f64| {
            let (ps, dps) = psi(z, d, zs);
            ((1.0 - c) * z + c * ps - a, (1.0 - c) + c * dps)
        };
        let z = crate::node::solve_increasing(f, a, a / (1.0 - c * d), a);
        let z = if phi < 0.0 { -z } else { z };
        let (ps, _) = psi(z, d, zs);
        let corr = ps - z;
        core::array::from_fn(|j| lin[j] - self.w[m][j] * corr)
    }

    /// Flux linkages (Wb) from loop currents at permeance ratio `p`.
    pub(crate) fn fluxes(&self, i: &[f64; 3], p: f64) -> [f64; 3] {
        let z = dot(&self.v, i);
        let ps = match self.sat {
            Some((d, zs)) => psi(z, d, zs).0,
            None => z,
        };
        core::array::from_fn(|j| {
            if self.active[j] {
                p * (self.leak[j] * i[j] + self.v[j] * ps)
            } else {
                0.0
            }
        })
    }

    /// Co-energy per unit permeance ratio, `W'/P` (J), at loop currents `i`.
    pub(crate) fn coenergy_unit(&self, i: &[f64; 3]) -> f64 {
        let z = dot(&self.v, i);
        let core = match self.sat {
            Some((d, zs)) => psi_integral(z, d, zs),
            None => 0.5 * z * z,
        };
        0.5 * (self.leak[0] * i[0] * i[0] + self.leak[1] * i[1] * i[1] + self.leak[2] * i[2] * i[2])
            + core
    }

    /// Stored magnetic energy `W = iᵀλ − W'` (J).
    pub(crate) fn stored(&self, lam: &[f64; 3], i: &[f64; 3], p: f64) -> f64 {
        dot(lam, i) - p * self.coenergy_unit(i)
    }
}
