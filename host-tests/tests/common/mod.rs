//! Shared pieces of the diagnosis tests: a seeded generator and a numerical coil plant.
//!
//! The plant integrates the coil's flux linkage with classical fourth-order Runge–Kutta in f64:
//! `dλ/dt = V − R·i`, `i = λ/L(x)`, with the armature's gap reluctance making `1/L(x)` linear in
//! the travel x, the magnetic force `F = ½·i²·dL/dx` (co-energy of a linear magnetic circuit,
//! textbook electromechanics, from memory) against a preloaded spring, viscous damping and hard
//! stops. It never uses the closed-form rise the estimator assumes.
#![allow(dead_code)]

pub mod free_lm;

/// SplitMix64: small, seedable, the same on every platform.
pub struct Rng(u64);

impl Rng {
    pub fn new(seed: u64) -> Self {
        Rng(seed)
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    pub fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }
    /// Standard normal by the Box–Muller transform.
    pub fn normal(&mut self) -> f64 {
        let u1 = 1.0 - self.unit();
        let u2 = self.unit();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

/// The armature: travel, mass, spring, damping. `stuck` holds it at rest.
#[derive(Clone, Copy, Debug)]
pub struct Mechanics {
    /// Travel from rest to seated, m.
    pub gap: f64,
    /// Moving mass, kg.
    pub mass: f64,
    /// Spring preload at rest, N.
    pub preload: f64,
    /// Spring rate, N/m.
    pub rate: f64,
    /// Viscous damping, N·s/m.
    pub damping: f64,
    pub stuck: bool,
}

/// A coil in its drive loop, as the plant sees it.
#[derive(Clone, Copy, Debug)]
pub struct Plant {
    /// Drive voltage across the loop, V.
    pub drive: f64,
    /// Total loop resistance, Ω.
    pub resistance: f64,
    /// Inductance at rest (gap open), H.
    pub l_released: f64,
    /// Inductance seated (gap closed), H.
    pub l_operated: f64,
    pub mech: Mechanics,
}

impl Plant {
    fn inv_l(&self, x: f64) -> f64 {
        let (a, b) = (1.0 / self.l_released, 1.0 / self.l_operated);
        a + (b - a) * (x / self.mech.gap).clamp(0.0, 1.0)
    }
    /// dL/dx = −(d(1/L)/dx)·L².
    fn dl_dx(&self, x: f64) -> f64 {
        let l = 1.0 / self.inv_l(x);
        (1.0 / self.l_released - 1.0 / self.l_operated) / self.mech.gap * l * l
    }
    /// Spring preload that starts the armature moving at `current` amperes.
    pub fn preload_for(&self, current: f64) -> f64 {
        0.5 * current * current * self.dl_dx(0.0)
    }

    fn deriv(&self, s: [f64; 3]) -> [f64; 3] {
        let [lam, x, v] = s;
        let i = lam * self.inv_l(x);
        let dlam = self.drive - self.resistance * i;
        if self.mech.stuck {
            return [dlam, 0.0, 0.0];
        }
        let m = &self.mech;
        let force = 0.5 * i * i * self.dl_dx(x) - (m.preload + m.rate * x) - m.damping * v;
        let at_rest = x <= 0.0 && v <= 0.0 && force <= 0.0;
        let seated = x >= m.gap && v >= 0.0 && force >= 0.0;
        if at_rest || seated {
            [dlam, 0.0, 0.0]
        } else {
            [dlam, v, force / m.mass]
        }
    }

    /// Current at each time in `times` (ascending, s) from switch-on with no current, integrated
    /// with RK4 steps no longer than `max_step` seconds. Also returns the final armature position.
    pub fn simulate(&self, times: &[f64], max_step: f64) -> (Vec<f64>, f64) {
        let mut s = [0.0f64, 0.0, 0.0];
        let mut t = 0.0f64;
        let mut out = Vec::with_capacity(times.len());
        for &target in times {
            while t < target {
                let h = (target - t).min(max_step);
                let k1 = self.deriv(s);
                let k2 = self.deriv(add(s, k1, 0.5 * h));
                let k3 = self.deriv(add(s, k2, 0.5 * h));
                let k4 = self.deriv(add(s, k3, h));
                for j in 0..3 {
                    s[j] += h / 6.0 * (k1[j] + 2.0 * k2[j] + 2.0 * k3[j] + k4[j]);
                }
                // Hard stops: the armature neither passes its rest nor its seat.
                if s[1] <= 0.0 {
                    s[1] = 0.0;
                    s[2] = s[2].max(0.0);
                }
                if s[1] >= self.mech.gap {
                    s[1] = self.mech.gap;
                    s[2] = 0.0;
                }
                t += h;
            }
            out.push(s[0] * self.inv_l(s[1]));
        }
        (out, s[1])
    }
}

fn add(s: [f64; 3], k: [f64; 3], h: f64) -> [f64; 3] {
    [s[0] + h * k[0], s[1] + h * k[1], s[2] + h * k[2]]
}

/// Quantises currents to a `bits`-bit converter reading `full_scale` A at its top count, with
/// Gaussian noise of `noise` counts RMS added before rounding; clipped to the converter's range.
pub fn adc(currents: &[f64], full_scale: f64, bits: u32, noise: f64, rng: &mut Rng) -> Vec<u16> {
    let top = ((1u32 << bits) - 1) as f64;
    currents
        .iter()
        .map(|&i| {
            let c = i / full_scale * top + noise * rng.normal();
            c.round().clamp(0.0, top) as u16
        })
        .collect()
}

#[cfg(test)]
mod checks {
    use super::*;

    #[test]
    fn plant_matches_the_rl_step_when_the_armature_is_held() {
        // Textbook RL step (from memory): i(t) = V/R·(1 − e^(−tR/L)); RK4 at 1/50 τ is far more
        // accurate than the f32 estimator needs.
        let p = Plant {
            drive: 24.0,
            resistance: 181.0,
            l_released: 0.3,
            l_operated: 0.45,
            mech: Mechanics {
                gap: 1e-3,
                mass: 5e-3,
                preload: 1.0,
                rate: 100.0,
                damping: 0.5,
                stuck: true,
            },
        };
        let tau = 0.3 / 181.0;
        let times: Vec<f64> = (1..=50).map(|k| k as f64 * tau / 10.0).collect();
        let (i, _) = p.simulate(&times, tau / 50.0);
        for (t, i) in times.iter().zip(&i) {
            let exact = 24.0 / 181.0 * -(-t / tau).exp_m1();
            assert!(
                (i - exact).abs() < 1e-9 * 24.0 / 181.0,
                "{t}: {i} vs {exact}"
            );
        }
    }
}
