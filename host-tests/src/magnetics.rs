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
//! scalar equation, because `D` is diagonal and the winding has no leakage of
//! its own (`D₀ = 0`). With `μ = λ/P(x)`:
//!
//! * terminal loop carrying current: `Ψ(z) = μ₀/v₀` gives `z`, then
//!   `iⱼ = (μⱼ − vⱼ·Ψ(z))/Dⱼ` for the secondary loops and
//!   `i₀ = (z − Σⱼ vⱼ·iⱼ)/v₀`;
//! * terminal loop open (clamp blocking, open wire): `i₀ = 0`, and `z`
//!   solves `z + c·Ψ(z) = φ` with `c = Σⱼ vⱼ²/Dⱼ`, `φ = Σⱼ vⱼ·μⱼ/Dⱼ`.
//!
//! Both scalar equations are monotone in `z` (safeguarded Newton, ~1e-13
//! relative; closed form without saturation).

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
        if !cfg!(feature = "coupled-physics") && *self != Magnetics::LINEAR {
            return Err(SimError::InvalidParameter(
                "magnetics (needs the `coupled-physics` feature)",
            ));
        }
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
///
/// Kept small (it lives in every bench, also in firmware RAM); no matrix
/// inverse is needed (see the module docs).
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
    /// Saturation `(d, z_s)`; `d = 0` for none.
    pub sat: [f64; 2],
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

/// Solves `α·z + β·Ψ(z) = a` for `z ≥ 0` (`a ≥ 0`, `α ≥ 0`, `β > 0`).
/// Since `(1 − d)·z ≤ Ψ(z) ≤ z`, the root lies in
/// `[a/(α + β), a/(α + β·(1 − d))]`; the left side is increasing
/// (`Ψ' > 0` for `d ≤ 0.8`). Safeguarded Newton from the fixed-point guess.
#[inline(never)]
fn solve_core(alpha: f64, beta: f64, a: f64, d: f64, zs: f64) -> f64 {
    let lo = a / (alpha + beta);
    let hi = a / (alpha + beta * (1.0 - d));
    let u = lo / zs;
    let z0 = a / (alpha + beta * (1.0 - d * u * u / (1.0 + u * u)));
    let f = |z: f64| {
        let (ps, dps) = psi(z, d, zs);
        (alpha * z + beta * ps - a, alpha + beta * dps)
    };
    crate::node::solve_increasing(f, lo, hi, z0)
}

/// `∫₀^z Ψ(ζ) dζ = z²/2 − d·(z²/2 − (z_s²/2)·ln(1 + z²/z_s²))`.
#[inline]
fn psi_integral(z: f64, d: f64, zs: f64) -> f64 {
    let u = z / zs;
    0.5 * z * z - d * 0.5 * (z * z - zs * zs * libm::log1p(u * u))
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
    #[cfg(feature = "coupled-physics")]
    #[inline(never)]
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
        let sat = match mag.saturation {
            Some(s) if s.drop > 0.0 => [s.drop, libm::sqrt(l_intact) * s.knee_amps],
            _ => [0.0, 1.0],
        };
        Loops {
            active,
            r: res,
            bridge,
            leak,
            v,
            sat,
        }
    }

    /// The plain winding of resistance `r` (no secondary loop, no
    /// saturation; the coupling vector is unused on the plain path).
    #[cfg(not(feature = "coupled-physics"))]
    pub(crate) const fn plain(r: f64) -> Loops {
        Loops {
            active: [true, false, false],
            r: [r, 0.0, 0.0],
            bridge: 0.0,
            leak: [0.0; 3],
            v: [0.0; 3],
            sat: [0.0, 1.0],
        }
    }

    /// Whether the core branch saturates.
    #[inline]
    pub(crate) fn saturates(&self) -> bool {
        self.sat[0] > 0.0
    }

    /// Self inductance of loop `j` at the operated position, H (1 for an
    /// absent loop): the scale of its flux linkage for error control.
    pub(crate) fn self_henries(&self, j: usize) -> f64 {
        if self.active[j] {
            self.leak[j] + self.v[j] * self.v[j]
        } else {
            1.0
        }
    }

    /// Loop currents (A) from flux linkages `lam` (Wb) at permeance ratio `p`.
    /// `terminal_off`: the terminal loop is open (carries no current).
    /// Closed form, or one monotone scalar equation with saturation (see the
    /// module docs).
    #[allow(clippy::needless_range_loop)] // four arrays indexed by loop
    pub(crate) fn currents(&self, lam: &[f64; 3], p: f64, terminal_off: bool) -> [f64; 3] {
        let mu = [lam[0] / p, lam[1] / p, lam[2] / p];
        // The scalar equation α·z + β·Ψ(z) = t: (1, c, φ) with the terminal
        // loop open, (0, 1, μ₀/v₀) with it carrying current.
        let (alpha, beta, t) = if terminal_off {
            let (mut c, mut phi) = (0.0, 0.0);
            for j in 1..3 {
                if self.active[j] {
                    c += self.v[j] * self.v[j] / self.leak[j];
                    phi += self.v[j] * mu[j] / self.leak[j];
                }
            }
            (1.0, c, phi)
        } else {
            (0.0, 1.0, mu[WIND] / self.v[WIND])
        };
        let z = if self.saturates() {
            let [d, zs] = self.sat;
            solve_core(alpha, beta, t.abs(), d, zs).copysign(t)
        } else {
            t / (alpha + beta)
        };
        let ps = if !terminal_off {
            t // Ψ(z) = μ₀/v₀ by construction
        } else if self.saturates() {
            psi(z, self.sat[0], self.sat[1]).0
        } else {
            z
        };
        let mut i = [0.0; 3];
        let mut rest = z;
        for j in 1..3 {
            if self.active[j] {
                i[j] = (mu[j] - self.v[j] * ps) / self.leak[j];
                rest -= self.v[j] * i[j];
            }
        }
        if terminal_off {
            return i;
        }
        i[WIND] = rest / self.v[WIND];
        i
    }

    /// Flux linkages (Wb) from loop currents at permeance ratio `p`.
    pub(crate) fn fluxes(&self, i: &[f64; 3], p: f64) -> [f64; 3] {
        let z = dot(&self.v, i);
        let ps = if self.saturates() {
            psi(z, self.sat[0], self.sat[1]).0
        } else {
            z
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
        let core = if self.saturates() {
            psi_integral(z, self.sat[0], self.sat[1])
        } else {
            0.5 * z * z
        };
        0.5 * (self.leak[0] * i[0] * i[0] + self.leak[1] * i[1] * i[1] + self.leak[2] * i[2] * i[2])
            + core
    }

    /// Stored magnetic energy `W = iᵀλ − W'` (J).
    pub(crate) fn stored(&self, lam: &[f64; 3], i: &[f64; 3], p: f64) -> f64 {
        dot(lam, i) - p * self.coenergy_unit(i)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fault::Section;
    use crate::sense::Prng;

    fn random_loops(r: &mut Prng) -> Loops {
        let l = 0.05 + r.uniform();
        let section = (r.uniform() < 0.6).then(|| Section {
            fraction: 0.05 + 0.9 * r.uniform(),
            coupling: 0.5 + 0.49 * r.uniform(),
            bridge_ohms: r.uniform(),
        });
        let mag = Magnetics {
            eddy: (r.uniform() < 0.6).then(|| CoupledLoop {
                ohms: 1.0,
                henries: l * (0.01 + 0.2 * r.uniform()),
                coupling: 0.95 * r.uniform(),
            }),
            saturation: (r.uniform() < 0.6).then(|| Saturation {
                drop: 0.8 * r.uniform(),
                knee_amps: 0.05 + r.uniform(),
            }),
        };
        Loops::new(l, 100.0, 1.0 + r.uniform(), l, section, &mag)
    }

    fn random_currents(r: &mut Prng, lp: &Loops) -> [f64; 3] {
        core::array::from_fn(|j| {
            if lp.active[j] {
                2.0 * r.uniform() - 0.5
            } else {
                0.0
            }
        })
    }

    /// Currents recovered from flux linkages are the currents that made them
    /// (the inversion of the flux law), with the terminal loop on and off.
    #[test]
    fn currents_invert_fluxes() {
        let mut r = Prng::new(7);
        for _ in 0..2000 {
            let lp = random_loops(&mut r);
            let p = 0.3 + r.uniform();
            let mut i = random_currents(&mut r, &lp);
            let lam = lp.fluxes(&i, p);
            let got = lp.currents(&lam, p, false);
            for j in 0..3 {
                assert!(
                    (got[j] - i[j]).abs() < 1e-9 * (1.0 + i[j].abs()),
                    "{lp:?} {i:?} {got:?}"
                );
            }
            i[WIND] = 0.0;
            let lam = lp.fluxes(&i, p);
            let got = lp.currents(&lam, p, true);
            for j in 0..3 {
                assert!((got[j] - i[j]).abs() < 1e-9 * (1.0 + i[j].abs()));
            }
        }
    }

    /// The stored energy `iᵀλ − W'` equals the work `∫ iᵀ dλ` done by the
    /// sources to build the field along a straight path in current space
    /// (definition of magnetic energy; trapezoid rule, 4000 steps), and the
    /// force `∂W'/∂x` at fixed currents equals `−∂W/∂x` at fixed flux
    /// linkages (virtual work, textbook, from memory; central difference).
    #[test]
    fn energy_is_the_work_of_the_sources_and_force_is_virtual_work() {
        let mut r = Prng::new(8);
        for _ in 0..200 {
            let lp = random_loops(&mut r);
            let p = 0.3 + r.uniform();
            let i1 = random_currents(&mut r, &lp);
            let n = 4000;
            let mut work = 0.0;
            let mut prev_i = [0.0; 3];
            let mut prev_l = [0.0; 3];
            for k in 1..=n {
                let s = k as f64 / n as f64;
                let i: [f64; 3] = core::array::from_fn(|j| s * i1[j]);
                let l = lp.fluxes(&i, p);
                for j in 0..3 {
                    work += 0.5 * (i[j] + prev_i[j]) * (l[j] - prev_l[j]);
                }
                prev_i = i;
                prev_l = l;
            }
            let lam = lp.fluxes(&i1, p);
            let w = lp.stored(&lam, &i1, p);
            assert!((w - work).abs() < 1e-6 * w.abs().max(1e-9), "{w} vs {work}");
            // Virtual work: W(λ, P) at fixed λ, force along P.
            let h = 1e-6 * p;
            let w_at = |pp: f64| {
                let i = lp.currents(&lam, pp, false);
                lp.stored(&lam, &i, pp)
            };
            let dw_dp = (w_at(p + h) - w_at(p - h)) / (2.0 * h);
            let f = lp.coenergy_unit(&i1);
            assert!(
                (f + dw_dp).abs() < 1e-5 * f.abs().max(1e-9),
                "{f} vs {dw_dp}"
            );
        }
    }

    /// The saturation law's secant inductance: 1 at zero current, `1 − d/2`
    /// at the knee, towards `1 − d` at large current.
    #[test]
    fn saturation_law_end_points() {
        let s = Saturation::dropping(0.2, 0.5);
        assert_eq!(s.inductance_ratio(0.0), 1.0);
        assert!((s.inductance_ratio(0.5) - 0.8).abs() < 1e-15);
        assert!((s.inductance_ratio(500.0) - 0.6).abs() < 1e-6);
        // Lone winding: λ = L·i·ratio(i) through the common-flux form.
        let lp = Loops::new(
            0.3,
            10.0,
            1.0,
            0.3,
            None,
            &Magnetics {
                eddy: None,
                saturation: Some(s),
            },
        );
        for i in [0.1, 0.5, 1.3] {
            let lam = lp.fluxes(&[i, 0.0, 0.0], 1.0);
            assert!((lam[0] - 0.3 * i * s.inductance_ratio(i)).abs() < 1e-14);
        }
    }
}
