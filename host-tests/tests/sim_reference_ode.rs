//! The plant against an independent integrator: `ode_solvers::Dopri5`
//! (Dormand–Prince 5(4), a general-purpose ODE library from the package
//! registry) solving the same circuit equations, written out again here.

mod sim_common;
use sim_common::*;

use coilwise_host_tests::{demo, Bench, Clamp, DiodeLaw, Mechanics, SolverSettings, Supply};
use ode_solvers::{Dopri5, System, Vector1, Vector3};

/// Freewheel decay through an exponential (Shockley) diode with series
/// resistance: `L·di/dt = −R·i − n·Vt·ln(1 + i/Is) − Rs·i`.
struct DiodeDecay {
    l: f64,
    r: f64,
    d: DiodeLaw,
}

impl System<f64, Vector1<f64>> for DiodeDecay {
    fn system(&self, _t: f64, y: &Vector1<f64>, dy: &mut Vector1<f64>) {
        let i = y[0].max(0.0);
        let vd = self.d.ideality * self.d.thermal_volts * (i / self.d.saturation_amps).ln_1p()
            + self.d.series_ohms * i;
        dy[0] = (-self.r * i - vd) / self.l;
    }
}

#[test]
fn shockley_diode_decay_matches_dopri5() {
    let d = DiodeLaw::rectifier();
    let mut b = bench1(24.0, fixed_channel(RCOIL, LCOIL, Clamp::Diode(d)));
    b.set_gate(0, true).unwrap();
    b.advance_ns(25_000_000);
    let i0 = b.probe(0).unwrap().coil_amps;
    let t_off = b.now_ns();
    b.start_recording(50_000);
    b.set_gate(0, false).unwrap();
    b.advance_ns(12_000_000);
    let sys = DiodeDecay {
        l: LCOIL,
        r: RCOIL + RWIRE,
        d,
    };
    let mut st = Dopri5::new(sys, 0.0, 12e-3, 50e-6, Vector1::new(i0), 1e-11, 1e-13);
    st.integrate().unwrap();
    let (ts, ys) = (st.x_out(), st.y_out());
    let rec = b.recording().unwrap();
    let mut worst: f64 = 0.0;
    let mut compared = 0;
    for (t, y) in ts.iter().zip(ys.iter()) {
        if y[0] < 1e-3 {
            break; // stop before the tail the plant ends at its 1 µA floor
        }
        let t_ns = t_off + (t * 1e9).round() as u64;
        let got = rec.current_at(0, t_ns).unwrap();
        worst = worst.max((got - y[0]).abs() / i0);
        compared += 1;
    }
    eprintln!("diode decay: {compared} points, worst |Δi|/I0 = {worst:e}");
    assert!(compared > 100);
    assert!(worst < 1e-6);
}

/// Pull-in of the demo valve with a moving armature, until just before the
/// plunger reaches its stop. State (λ, p, v); the armature rests on its
/// released stop while the net force presses it there.
struct PullIn {
    v: f64,
    r: f64,
    l_op: f64,
    k: f64,
    stroke: f64,
    m: f64,
    f0: f64,
    ks: f64,
    c: f64,
}

impl System<f64, Vector3<f64>> for PullIn {
    fn system(&self, _t: f64, y: &Vector3<f64>, dy: &mut Vector3<f64>) {
        let (lam, p, vel) = (y[0], y[1], y[2]);
        let x = (p / self.stroke).clamp(0.0, 1.0);
        let den = 1.0 + self.k * (1.0 - x);
        let l = self.l_op / den;
        let i = lam / l;
        let dldp = self.l_op * self.k / (den * den) / self.stroke;
        let net = 0.5 * i * i * dldp - self.f0 - self.ks * p - self.c * vel;
        dy[0] = self.v - self.r * i;
        if p <= 0.0 && vel <= 0.0 && net <= 0.0 {
            dy[1] = 0.0;
            dy[2] = 0.0;
        } else {
            dy[1] = vel;
            dy[2] = net / self.m;
        }
    }
}

#[test]
fn moving_armature_pull_in_matches_dopri5() {
    let p = demo::valve_24v();
    let Mechanics::Moving(a) = p.mechanics else {
        unreachable!()
    };
    let mut b = Bench::single(Supply::ideal(24.0), p, SolverSettings::default()).unwrap();
    b.start_recording(20_000);
    b.set_gate(0, true).unwrap();
    b.advance_ns(15_000_000);
    let t_op = b.stats(0).unwrap().operated_ns.unwrap();
    let sys = PullIn {
        v: 24.0,
        r: p.coil.resistance_ohms + p.coil.wiring_ohms + 0.05 + p.sense_ohms,
        l_op: p.coil.inductance_operated_henries,
        k: p.coil.inductance_operated_henries / p.coil.inductance_released_henries - 1.0,
        stroke: a.stroke_m,
        m: a.mass_kg,
        f0: a.preload_newtons,
        ks: a.spring_newtons_per_m,
        c: a.damping_newton_s_per_m,
    };
    let t_end = (t_op as f64 * 1e-9 - 100e-6).max(0.0);
    let mut st = Dopri5::new(
        sys,
        0.0,
        t_end,
        20e-6,
        Vector3::new(0.0, 0.0, 0.0),
        1e-11,
        1e-14,
    );
    st.integrate().unwrap();
    let rec = b.recording().unwrap();
    let i_scale = 24.0 / 182.05;
    let (mut wi, mut wx): (f64, f64) = (0.0, 0.0);
    let mut n = 0;
    for (t, y) in st.x_out().iter().zip(st.y_out().iter()) {
        let t_ns = (t * 1e9).round() as u64;
        let Some(s) = rec.channel(0).find(|s| s.t_ns == t_ns) else {
            continue;
        };
        let x = (y[1] / a.stroke_m).clamp(0.0, 1.0);
        let l = p.coil.inductance_at(x);
        wi = wi.max((s.coil_amps - y[0] / l).abs() / i_scale);
        wx = wx.max((s.position - x).abs());
        n += 1;
    }
    eprintln!("pull-in: {n} points up to {t_end:e} s, worst |Δi|/I∞ = {wi:e}, worst |Δx| = {wx:e}");
    assert!(n > 300);
    assert!(wi < 1e-5, "current {wi:e}");
    assert!(wx < 1e-4, "position {wx:e}");
}
