//! Saturating coils, with and without an eddy loop, against an independent
//! integrator: `ode_solvers::Dopri5` (Dormand–Prince 5(4), a general-purpose
//! ODE library from the package registry) integrating the *current* form of
//! the documented law, `J(i)·di/dt = v − R·i` with the incremental
//! inductance matrix `J = ∂λ/∂i` written out again here, while the plant
//! integrates flux linkages and inverts them. Plus: a residual current at
//! switch-on against the first-order closed form, and the energy books of a
//! moving armature with an eddy loop and saturation.

mod sim_common;
use sim_common::*;

use coilwise_host_tests::{
    demo, Bench, Clamp, CoupledLoop, Fault, Magnetics, Saturation, SolverSettings, Supply,
};
use ode_solvers::{Dopri5, System, Vector1, Vector2, Vector3};

/// Incremental inductance ratio of the law `λ = L₀·i·(1 − d·u²/(1 + u²))`,
/// `u = i/i_knee`: `1 − d·(3u² + u⁴)/(1 + u²)²` (differentiated by hand).
fn incremental(d: f64, u: f64) -> f64 {
    let u2 = u * u;
    1.0 - d * (3.0 * u2 + u2 * u2) / ((1.0 + u2) * (1.0 + u2))
}

struct LoneCoil {
    v: f64,
    r: f64,
    l0: f64,
    sat: Saturation,
}

impl System<f64, Vector1<f64>> for LoneCoil {
    fn system(&self, _t: f64, y: &Vector1<f64>, dy: &mut Vector1<f64>) {
        let i = y[0];
        let l_inc = self.l0 * incremental(self.sat.drop, i / self.sat.knee_amps);
        dy[0] = (self.v - self.r * i) / l_inc;
    }
}

/// Record a 6 ms rise at 20 µs and compare with Dopri5 at its output points.
fn worst_against(b: &mut Bench<1>, ts: &[f64], ys: &[f64], scale: f64) -> (usize, f64) {
    b.start_recording(20_000);
    b.set_gate(0, true).unwrap();
    b.advance_ns(6_000_000);
    let rec = b.recording().unwrap();
    let mut worst: f64 = 0.0;
    let mut n = 0;
    for (t, y) in ts.iter().zip(ys) {
        let t_ns = (t * 1e9).round() as u64;
        if !t_ns.is_multiple_of(20_000) {
            continue;
        }
        let got = rec.current_at(0, t_ns).unwrap();
        worst = worst.max((got - y).abs() / scale);
        n += 1;
    }
    (n, worst)
}

#[test]
fn saturating_coil_matches_dopri5() {
    let r = r_on_loop(RCOIL);
    let i_inf = 24.0 / r;
    // Inductance 20 % down at the final current (knee there).
    let sat = Saturation::dropping(0.2, i_inf);
    assert!((sat.inductance_ratio(i_inf) - 0.8).abs() < 1e-15);
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None));
    b.set_magnetics(
        0,
        Magnetics {
            eddy: None,
            saturation: Some(sat),
        },
    )
    .unwrap();
    let sys = LoneCoil {
        v: 24.0,
        r,
        l0: LCOIL,
        sat,
    };
    let mut st = Dopri5::new(sys, 0.0, 6e-3, 20e-6, Vector1::new(0.0), 1e-12, 1e-14);
    st.integrate().unwrap();
    let ys: Vec<f64> = st.y_out().iter().map(|y| y[0]).collect();
    let (n, worst) = worst_against(&mut b, st.x_out(), &ys, i_inf);
    // Saturation makes the rise faster than the linear coil's at the same time.
    let t = 1.5e-3;
    let lin = i_inf * (1.0 - (-t * r / LCOIL).exp());
    let mut b2 = bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None));
    b2.set_magnetics(
        0,
        Magnetics {
            eddy: None,
            saturation: Some(sat),
        },
    )
    .unwrap();
    b2.set_gate(0, true).unwrap();
    b2.advance_ns(1_500_000);
    let i_sat = b2.probe(0).unwrap().coil_amps;
    eprintln!(
        "saturating coil: {n} points, worst |Δi|/I∞ = {worst:.2e}; i(1.5 ms) {i_sat:.6} A vs linear {lin:.6} A"
    );
    assert!(n > 200);
    assert!(worst < 1e-6);
    assert!(i_sat > lin * 1.01);
}

/// Winding + eddy loop + saturation of the common core branch:
/// `λ = D·i + v·Ψ(vᵀi)`, `J = D + v·vᵀ·Ψ'(z)`, `J·di/dt = [V − R·i₀, −R_e·i_e]`.
struct EddySat {
    v_supply: f64,
    r: f64,
    re: f64,
    leak: [f64; 2],
    v: [f64; 2],
    d: f64,
    zs: f64,
}

impl System<f64, Vector2<f64>> for EddySat {
    fn system(&self, _t: f64, y: &Vector2<f64>, dy: &mut Vector2<f64>) {
        let z = self.v[0] * y[0] + self.v[1] * y[1];
        let g = incremental(self.d, z / self.zs);
        let j = [
            [
                self.leak[0] + self.v[0] * self.v[0] * g,
                self.v[0] * self.v[1] * g,
            ],
            [
                self.v[1] * self.v[0] * g,
                self.leak[1] + self.v[1] * self.v[1] * g,
            ],
        ];
        let rhs = [self.v_supply - self.r * y[0], -self.re * y[1]];
        let det = j[0][0] * j[1][1] - j[0][1] * j[1][0];
        dy[0] = (j[1][1] * rhs[0] - j[0][1] * rhs[1]) / det;
        dy[1] = (j[0][0] * rhs[1] - j[1][0] * rhs[0]) / det;
    }
}

#[test]
fn saturating_coil_with_eddy_loop_matches_dopri5() {
    let r = r_on_loop(RCOIL);
    let i_inf = 24.0 / r;
    let sat = Saturation::dropping(0.25, i_inf);
    let le = 0.03 * LCOIL;
    let tau = LCOIL / r;
    let eddy = CoupledLoop {
        ohms: le / (0.05 * tau),
        henries: le,
        coupling: 0.7,
    };
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None));
    b.set_magnetics(
        0,
        Magnetics {
            eddy: Some(eddy),
            saturation: Some(sat),
        },
    )
    .unwrap();
    let k = eddy.coupling;
    let sys = EddySat {
        v_supply: 24.0,
        r,
        re: eddy.ohms,
        leak: [0.0, (1.0 - k * k) * le],
        v: [LCOIL.sqrt(), k * le.sqrt()],
        d: sat.drop,
        zs: LCOIL.sqrt() * sat.knee_amps,
    };
    let mut st = Dopri5::new(sys, 0.0, 6e-3, 20e-6, Vector2::new(0.0, 0.0), 1e-12, 1e-14);
    st.integrate().unwrap();
    let ys: Vec<f64> = st.y_out().iter().map(|y| y[0]).collect();
    let (n, worst) = worst_against(&mut b, st.x_out(), &ys, i_inf);
    eprintln!("saturating coil + eddy loop: {n} points, worst |Δi|/I∞ = {worst:.2e}");
    assert!(n > 200);
    assert!(worst < 1e-6);
}

/// Three loops — healthy part of the winding, bridged section, eddy loop —
/// with a saturating core branch, in current form with the mesh resistance
/// matrix of the bridge: `J(i)·di/dt = [V, 0, 0] − R·i`,
/// `R = [[R₀ + R_b, −R_b, 0], [−R_b, R₁ + R_b, 0], [0, 0, R_e]]`,
/// `J = D + v·vᵀ·Ψ'(vᵀi)`, `vⱼ = kⱼ·sqrt(Lⱼ)`, `D = diag((1 − kⱼ²)·Lⱼ)`
/// (the common-flux form of the crate docs, written out again).
struct ThreeLoops {
    v_supply: f64,
    r: [[f64; 3]; 3],
    leak: [f64; 3],
    v: [f64; 3],
    d: f64,
    zs: f64,
}

fn det3(m: &[[f64; 3]; 3]) -> f64 {
    m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
        - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
        + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
}

impl System<f64, Vector3<f64>> for ThreeLoops {
    fn system(&self, _t: f64, y: &Vector3<f64>, dy: &mut Vector3<f64>) {
        let i = [y[0], y[1], y[2]];
        let z: f64 = (0..3).map(|j| self.v[j] * i[j]).sum();
        let g = incremental(self.d, z / self.zs);
        let j: [[f64; 3]; 3] = core::array::from_fn(|a| {
            core::array::from_fn(|b| {
                self.v[a] * self.v[b] * g + if a == b { self.leak[a] } else { 0.0 }
            })
        });
        let rhs: [f64; 3] = core::array::from_fn(|a| {
            (if a == 0 { self.v_supply } else { 0.0 })
                - (0..3).map(|b| self.r[a][b] * i[b]).sum::<f64>()
        });
        // Cramer's rule.
        let dj = det3(&j);
        for col in 0..3 {
            let mut m = j;
            for row in 0..3 {
                m[row][col] = rhs[row];
            }
            dy[col] = det3(&m) / dj;
        }
    }
}

#[test]
fn bridged_section_eddy_loop_and_saturation_match_dopri5() {
    let (f, k, rb) = (0.25, 0.9, 0.3);
    let r_rest = r_on_loop(RCOIL) - RCOIL * f;
    let i_inf = 24.0 / (r_rest + rb * RCOIL * f / (rb + RCOIL * f));
    let sat = Saturation::dropping(0.2, i_inf);
    let le = 0.03 * LCOIL;
    let eddy = CoupledLoop {
        ohms: le / (0.1 * LCOIL / r_on_loop(RCOIL)),
        henries: le,
        coupling: 0.6,
    };
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::None));
    b.set_magnetics(
        0,
        Magnetics {
            eddy: Some(eddy),
            saturation: Some(sat),
        },
    )
    .unwrap();
    b.inject(
        0,
        Fault::ShortedTurns {
            fraction: f,
            coupling: k,
            bridge_ohms: rb,
        },
    )
    .unwrap();
    let g = 1.0 - f;
    let a = LCOIL / (g * g + f * f + 2.0 * k * f * g);
    let l = [a * g * g, a * f * f, le];
    let kk = [1.0, k, eddy.coupling];
    let sys = ThreeLoops {
        v_supply: 24.0,
        r: [
            [r_rest + rb, -rb, 0.0],
            [-rb, RCOIL * f + rb, 0.0],
            [0.0, 0.0, eddy.ohms],
        ],
        leak: core::array::from_fn(|j| (1.0 - kk[j] * kk[j]) * l[j]),
        v: core::array::from_fn(|j| kk[j] * l[j].sqrt()),
        d: sat.drop,
        zs: LCOIL.sqrt() * sat.knee_amps,
    };
    let mut st = Dopri5::new(
        sys,
        0.0,
        6e-3,
        20e-6,
        Vector3::new(0.0, 0.0, 0.0),
        1e-12,
        1e-14,
    );
    st.integrate().unwrap();
    let ys: Vec<f64> = st.y_out().iter().map(|y| y[0]).collect();
    let (n, worst) = worst_against(&mut b, st.x_out(), &ys, i_inf);
    eprintln!("section + eddy loop + saturation: {n} points, worst |Δi|/I∞ = {worst:.2e}");
    assert!(n > 200);
    // Flux-linkage error control, currents through the inductance matrix:
    // conditioning 1/(1 − k²) as in the closed-form check (sim_coupled.rs).
    assert!(worst < 1e-6 / (1.0 - k * k));
}

/// A residual current at switch-on: with a linear coil the rise is
/// `i(t) = I∞ + (i₀ − I∞)·e^{−t/τ}`, `τ = L/R` (first-order RL step
/// response, textbook, from memory).
#[test]
fn residual_current_at_switch_on_follows_the_first_order_law() {
    let r = r_on_loop(RCOIL);
    let i_inf = 24.0 / r;
    let tau = LCOIL / r;
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, diode()));
    let e0 = b.energy(0).unwrap();
    let i0 = 0.1 * i_inf;
    b.set_current(0, i0).unwrap();
    b.set_gate(0, true).unwrap();
    let mut worst: f64 = 0.0;
    for k in 0..=300u64 {
        b.advance_to(k * 10_000);
        let t = k as f64 * 10e-6;
        let want = i_inf + (i0 - i_inf) * (-t / tau).exp();
        worst = worst.max((b.probe(0).unwrap().coil_amps - want).abs() / i_inf);
    }
    let e1 = b.energy(0).unwrap();
    // The energy put in by setting the current is booked (negative removal).
    let put_in = 0.5 * LCOIL * i0 * i0;
    eprintln!("residual current: worst |Δi|/I∞ = {worst:.2e}; booked {:.4e} J vs ½·L·i₀² = {put_in:.4e} J", -e1.removed_by_events);
    assert!(worst < 1e-6);
    assert!((-e1.removed_by_events - put_in).abs() < 1e-12 * put_in.max(1.0));
    assert!(e1.balance_error_since(&e0).abs() < 1e-6 * e1.from_rail);
    // Off with the gate: the set current decays through the clamp.
    let mut off = bench1(24.0, fixed_channel(RCOIL, LCOIL, diode()));
    off.set_current(0, i0).unwrap();
    off.advance_ns(100_000);
    let p = off.probe(0).unwrap();
    assert!(p.clamp_amps > 0.0 && p.coil_amps < i0);
}

/// Energy books (conservation of energy) of the demo valve pulled in and
/// released with an eddy loop and saturation: electrical and mechanical
/// balances close to the integration tolerance.
#[test]
fn moving_armature_with_eddy_and_saturation_keeps_the_books() {
    let p = demo::valve_24v();
    let mut b = Bench::single(Supply::ideal(24.0), p, SolverSettings::default()).unwrap();
    let i_full = 24.0 / (p.coil.resistance_ohms + p.coil.wiring_ohms + p.sense_ohms);
    b.set_magnetics(
        0,
        Magnetics {
            eddy: Some(CoupledLoop {
                ohms: 2.0,
                henries: 0.01,
                coupling: 0.5,
            }),
            saturation: Some(Saturation::dropping(0.2, i_full)),
        },
    )
    .unwrap();
    let e0 = b.energy(0).unwrap();
    b.set_gate(0, true).unwrap();
    b.advance_ns(60_000_000);
    let st = b.stats(0).unwrap();
    assert!(st.operated_ns.is_some(), "the valve must still pull in");
    b.set_gate(0, false).unwrap();
    b.advance_ns(80_000_000);
    let e1 = b.energy(0).unwrap();
    let err = e1.balance_error_since(&e0);
    let mech = e1.mechanical_error_since(&e0);
    eprintln!(
        "moving valve + eddy + saturation: rail {:.4e} J, eddy {:.3e} J, error {err:.2e} J, mechanical {mech:.2e} J",
        e1.from_rail, e1.eddy
    );
    assert!(e1.eddy > 0.0);
    assert!(err.abs() < 1e-6 * e1.from_rail);
    assert!(mech.abs() < 1e-6 * e1.from_rail);
}
