//! Magnetically coupled secondary loops (eddy-current path, bridged section
//! of shorted turns) against the closed-form step response of two coupled
//! RL loops, and their energy books.
//!
//! Closed form (textbook coupled-circuit analysis, from memory): two loops
//! with inductance matrix `L = [[L₁, M], [M, L₂]]` and resistance matrix `R`
//! driven by a voltage step `V` on loop 1 obey `L·di/dt = V·e₁ − R·i`. With
//! `i = i∞ + Σₖ aₖ·uₖ·e^{sₖt}`, the natural frequencies are the roots of
//! `det(s·L + R) = 0`:
//!
//! `(L₁L₂ − M²)·s² + (L₁R₂₂ + L₂R₁₁ − 2M·R₁₂)·s + (R₁₁R₂₂ − R₁₂²) = 0`,
//!
//! both real and negative (L and R symmetric positive definite), so the
//! terminal current is a two-exponential rise. The mode shapes are
//! `uₖ = [sₖL₂ + R₂₂, −(sₖM + R₁₂)]` and `aₖ` follow from `i(0) = 0`.

mod sim_common;
use sim_common::*;

use coilwise_host_tests::{Bench, Clamp, CoupledLoop, Fault, Magnetics, SolverSettings, Supply};

/// Two coupled RL loops, closed form.
struct TwoLoops {
    /// Steady currents.
    inf: [f64; 2],
    s: [f64; 2],
    /// `aₖ·uₖ` per mode.
    modes: [[f64; 2]; 2],
}

impl TwoLoops {
    fn new(l: [[f64; 2]; 2], r: [[f64; 2]; 2], v: f64) -> TwoLoops {
        let a = l[0][0] * l[1][1] - l[0][1] * l[0][1];
        let b = l[0][0] * r[1][1] + l[1][1] * r[0][0] - 2.0 * l[0][1] * r[0][1];
        let c = r[0][0] * r[1][1] - r[0][1] * r[0][1];
        let disc = (b * b - 4.0 * a * c).sqrt();
        let s = [(-b + disc) / (2.0 * a), (-b - disc) / (2.0 * a)];
        // i∞ = R⁻¹·[V, 0].
        let inf = [v * r[1][1] / c, -v * r[1][0] / c];
        let u: [[f64; 2]; 2] =
            core::array::from_fn(|k| [s[k] * l[1][1] + r[1][1], -(s[k] * l[0][1] + r[1][0])]);
        // a₀u₀ + a₁u₁ = −i∞.
        let det = u[0][0] * u[1][1] - u[1][0] * u[0][1];
        let a0 = (-inf[0] * u[1][1] + inf[1] * u[1][0]) / det;
        let a1 = (-inf[1] * u[0][0] + inf[0] * u[0][1]) / det;
        TwoLoops {
            inf,
            s,
            modes: [[a0 * u[0][0], a0 * u[0][1]], [a1 * u[1][0], a1 * u[1][1]]],
        }
    }

    fn at(&self, t: f64) -> [f64; 2] {
        core::array::from_fn(|j| {
            self.inf[j]
                + self.modes[0][j] * (self.s[0] * t).exp()
                + self.modes[1][j] * (self.s[1] * t).exp()
        })
    }
}

/// Invented eddy loop: 2 % of the winding's inductance, coupled 0.6, with a
/// loop time constant of a tenth of the coil's.
fn eddy() -> CoupledLoop {
    let le = 0.02 * LCOIL;
    let tau_coil = LCOIL / r_on_loop(RCOIL);
    CoupledLoop {
        ohms: le / (0.1 * tau_coil),
        henries: le,
        coupling: 0.6,
    }
}

/// Largest deviation from the closed form over a 6 ms rise sampled every
/// 10 µs, relative to the final terminal current; and the worst secondary
/// current deviation relative to the same.
fn compare(
    b: &mut Bench<1>,
    cf: &TwoLoops,
    secondary: impl Fn(&coilwise_host_tests::Probe) -> f64,
) -> (f64, f64) {
    b.set_gate(0, true).unwrap();
    let scale = cf.inf[0];
    let (mut w0, mut w1) = (0.0f64, 0.0f64);
    for k in 1..=600u64 {
        b.advance_to(k * 10_000);
        let p = b.probe(0).unwrap();
        let want = cf.at(k as f64 * 10e-6);
        w0 = w0.max((p.coil_amps - want[0]).abs() / scale);
        w1 = w1.max((secondary(&p) - want[1]).abs() / scale);
    }
    (w0, w1)
}

#[test]
fn eddy_loop_step_response_is_the_two_exponential_closed_form() {
    let e = eddy();
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None));
    b.set_magnetics(
        0,
        Magnetics {
            eddy: Some(e),
            saturation: None,
        },
    )
    .unwrap();
    let m = e.coupling * (LCOIL * e.henries).sqrt();
    let cf = TwoLoops::new(
        [[LCOIL, m], [m, e.henries]],
        [[r_on_loop(RCOIL), 0.0], [0.0, e.ohms]],
        24.0,
    );
    let (w0, w1) = compare(&mut b, &cf, |p| p.eddy_amps);
    eprintln!(
        "eddy loop: s = {:.1} /s, {:.1} /s; worst |Δi|/I∞ terminal {w0:.2e}, eddy {w1:.2e}",
        cf.s[0], cf.s[1]
    );
    // Two distinct natural frequencies, the fast one well apart.
    assert!(cf.s[1] < 5.0 * cf.s[0]);
    assert!(w0 < 1e-6 && w1 < 1e-6, "{w0} {w1}");
}

#[test]
fn bridged_section_step_response_is_the_two_exponential_closed_form() {
    for &(f, k, rb) in &[(0.25, 0.9, 0.5), (0.1, 0.6, 5.0), (0.5, 0.98, 0.05)] {
        let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None));
        b.inject(
            0,
            Fault::ShortedTurns {
                fraction: f,
                coupling: k,
                bridge_ohms: rb,
            },
        )
        .unwrap();
        // Turns-squared split that keeps the intact series inductance L.
        let g = 1.0 - f;
        let a = LCOIL / (g * g + f * f + 2.0 * k * f * g);
        let (l0, l1) = (a * g * g, a * f * f);
        let m = k * (l0 * l1).sqrt();
        assert!((l0 + l1 + 2.0 * m - LCOIL).abs() < 1e-12);
        let r0 = RCOIL * g + RWIRE + RON + RSENSE;
        let r1 = RCOIL * f;
        let cf = TwoLoops::new([[l0, m], [m, l1]], [[r0 + rb, -rb], [-rb, r1 + rb]], 24.0);
        let (w0, w1) = compare(&mut b, &cf, |p| p.section_amps);
        eprintln!(
            "section f={f} k={k} Rb={rb}: s = {:.1} /s, {:.1} /s; worst |Δi|/I∞ terminal {w0:.2e}, section {w1:.2e}",
            cf.s[0], cf.s[1]
        );
        // The plant controls the error of flux linkages (1e-7 relative per
        // step); currents are flux linkages through `L⁻¹`, whose
        // conditioning grows as 1/(1 − k²) for tightly coupled turns.
        let bound = 1e-6 / (1.0 - k * k);
        assert!(w0 < bound && w1 < bound, "{w0} {w1} vs {bound}");
    }
}

/// Energy balance with coupled loops (conservation of energy): over a pulse
/// and its clamped decay, supply energy = winding + bridge + eddy + wiring +
/// sense + switch + clamp losses + Δ stored `½·iᵀL·i`.
#[test]
fn energy_books_close_with_coupled_loops() {
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, diode()));
    b.set_magnetics(
        0,
        Magnetics {
            eddy: Some(eddy()),
            saturation: None,
        },
    )
    .unwrap();
    b.inject(
        0,
        Fault::ShortedTurns {
            fraction: 0.25,
            coupling: 0.9,
            bridge_ohms: 0.5,
        },
    )
    .unwrap();
    let e0 = b.energy(0).unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(3_000_000);
    let mid = b.energy(0).unwrap();
    // Mid-pulse, energy is stored in the coupled field.
    assert!(mid.magnetic_stored > 0.0);
    let err_mid = mid.balance_error_since(&e0);
    b.set_gate(0, false).unwrap();
    b.advance_ns(30_000_000);
    let end = b.energy(0).unwrap();
    let err = end.balance_error_since(&e0);
    eprintln!(
        "coupled loops: rail {:.4e} J, winding {:.4e}, bridge {:.4e}, eddy {:.4e}, clamp {:.4e}, stored mid {:.4e}, balance error mid {err_mid:.2e}, end {err:.2e} J",
        end.from_rail, end.winding, end.bridge, end.eddy, end.clamp, mid.magnetic_stored
    );
    assert!(end.bridge > 0.0 && end.eddy > 0.0);
    assert!(err_mid.abs() < 1e-6 * mid.from_rail);
    assert!(err.abs() < 1e-6 * end.from_rail);
}

#[test]
fn secondary_loops_reject_values_outside_their_domain() {
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, diode()));
    for bad in [
        Fault::ShortedTurns {
            fraction: 0.0,
            coupling: 0.9,
            bridge_ohms: 0.1,
        },
        Fault::ShortedTurns {
            fraction: 0.2,
            coupling: 1.0,
            bridge_ohms: 0.1,
        },
        Fault::ShortedTurns {
            fraction: 0.2,
            coupling: 0.9,
            bridge_ohms: f64::NAN,
        },
    ] {
        assert!(b.inject(0, bad).is_err(), "{bad:?}");
    }
    let bad = Magnetics {
        eddy: Some(CoupledLoop {
            ohms: 1.0,
            henries: 1e-3,
            coupling: 1.0,
        }),
        saturation: None,
    };
    assert!(b.set_magnetics(0, bad).is_err());
    assert!(b.set_current(0, -1.0).is_err());
    let _ = Bench::single(
        Supply::ideal(1.0),
        fixed_channel(1.0, 1.0, diode()),
        SolverSettings::default(),
    )
    .unwrap();
}
