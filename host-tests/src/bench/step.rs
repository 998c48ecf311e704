//! The integrator: Bogacki–Shampine 3(2) steps with error control, landing on
//! end stops and on current zero.

use super::{Bench, State, R_V, STOP_TOL};
use crate::plant::{self, DYN, K};
use crate::settings::Stepping;

/// Smallest step the adaptive controller will try, seconds.
const H_MIN: f64 = 1e-15;
/// Absolute error tolerance of the energy integrals of coupled-loop
/// channels, joules.
const ENERGY_ATOL: f64 = 1e-12;
/// Retries to land a step on an end stop or on current zero.
const MAX_REFINE: u32 = 12;

impl<const N: usize> State<N> {
    pub(super) const ZERO: Self = State {
        ch: [[0.0; K]; N],
        rail: [0.0; 3],
    };

    /// `self = y + Σ (h·c_m)·k_m`, fixed arity so the loops unroll.
    #[inline(always)]
    pub(super) fn lin<const M: usize>(&mut self, y: &Self, h: f64, c: [f64; M], k: [&Self; M]) {
        let hc: [f64; M] = core::array::from_fn(|m| h * c[m]);
        for ch in 0..N {
            for j in 0..K {
                let mut acc = y.ch[ch][j];
                for m in 0..M {
                    acc += hc[m] * k[m].ch[ch][j];
                }
                self.ch[ch][j] = acc;
            }
        }
        for j in 0..3 {
            let mut acc = y.rail[j];
            for m in 0..M {
                acc += hc[m] * k[m].rail[j];
            }
            self.rail[j] = acc;
        }
    }
}

impl<const N: usize> Bench<N> {
    pub(super) fn ensure_k1(&mut self) {
        if !self.k1_valid {
            let mut k = State::ZERO;
            self.deriv(&self.y, &mut k);
            self.counters.evaluations += 1;
            self.k1 = k;
            self.k1_valid = true;
        }
    }

    pub(super) fn quiescent(&self) -> bool {
        self.k1.ch.iter().all(|row| row.iter().all(|v| *v == 0.0))
            && self.k1.rail.iter().all(|v| *v == 0.0)
    }

    /// Error norm of a trial step (∞-norm of scaled errors).
    pub(super) fn error_norm(
        &self,
        y0: &State<N>,
        y1: &State<N>,
        h: f64,
        k: [&State<N>; 4],
        rtol: f64,
        atol_i: f64,
    ) -> f64 {
        // Bogacki–Shampine error weights b − b*.
        const E: [f64; 4] = [-5.0 / 72.0, 1.0 / 12.0, 1.0 / 9.0, -1.0 / 8.0];
        let mut m: f64 = 0.0;
        for c in 0..N {
            let e = &self.eff[c];
            let (l, _) = e.inductance(y0.ch[c][plant::POS] / e.stroke);
            let atol = [
                atol_i * l,
                1e-7 * e.stroke,
                1e-4 * e.stroke,
                1e-6,
                atol_i * e.loops.self_henries(crate::magnetics::SECT),
                atol_i * e.loops.self_henries(crate::magnetics::EDDY),
            ];
            for (j, at) in atol.iter().enumerate().take(DYN) {
                let err = h
                    * (E[0] * k[0].ch[c][j]
                        + E[1] * k[1].ch[c][j]
                        + E[2] * k[2].ch[c][j]
                        + E[3] * k[3].ch[c][j]);
                let sc = at + rtol * y0.ch[c][j].abs().max(y1.ch[c][j].abs());
                let r = err.abs() / sc;
                if r.is_nan() {
                    return f64::INFINITY;
                }
                m = m.max(r);
            }
            if !e.plain() {
                // Coupled loops can be stiff: control the energy integrals
                // too, so the energy books stay as tight as for a plain coil.
                let kc = [&k[0].ch[c], &k[1].ch[c], &k[2].ch[c], &k[3].ch[c]];
                m = m.max(energy_error(&y0.ch[c], &y1.ch[c], h, kc, rtol));
            }
        }
        if self.supply.source_ohms > 0.0 {
            let err = h
                * (E[0] * k[0].rail[R_V]
                    + E[1] * k[1].rail[R_V]
                    + E[2] * k[2].rail[R_V]
                    + E[3] * k[3].rail[R_V]);
            let sc = 1e-6 + rtol * y0.rail[R_V].abs().max(y1.rail[R_V].abs());
            let r = err.abs() / sc;
            if r.is_nan() {
                return f64::INFINITY;
            }
            m = m.max(r);
        }
        m
    }

    /// Fraction θ ∈ (0, 1) of the trial step at which the first event
    /// (end-stop contact or current zero) needs the step to end, if the
    /// trial overshoots one by more than the tolerance.
    pub(super) fn event_fraction(&self, y1: &State<N>) -> Option<f64> {
        let mut theta: Option<f64> = None;
        let mut take = |t: f64| {
            let t = t.clamp(1e-9, 1.0);
            theta = Some(match theta {
                Some(o) => o.min(t),
                None => t,
            });
        };
        for c in 0..N {
            let e = &self.eff[c];
            if e.moving {
                let p0 = self.y.ch[c][plant::POS];
                let p1 = y1.ch[c][plant::POS];
                let tol = STOP_TOL * e.stroke;
                if p1 < -tol && p0 > 0.0 {
                    take(p0 / (p0 - p1) * (1.0 + 1e-9));
                } else if p1 > e.stroke + tol && p0 < e.stroke {
                    take((e.stroke - p0) / (p1 - p0) * (1.0 + 1e-9));
                }
            }
            if !self.gate[c] && !self.blocked[c] && !e.open && self.params[c].snubber.is_none() {
                let (i0, i1) = if e.plain() {
                    let (l0, _) = e.inductance(self.y.ch[c][plant::POS] / e.stroke);
                    let (l1, _) = e.inductance(y1.ch[c][plant::POS] / e.stroke);
                    (self.y.ch[c][plant::LAM] / l0, y1.ch[c][plant::LAM] / l1)
                } else {
                    (
                        e.currents(&self.y.ch[c], false)[0],
                        e.currents(&y1.ch[c], false)[0],
                    )
                };
                let floor = self.settings.current_floor_amps;
                if i1 < -floor && i0 > 0.0 {
                    take(i0 / (i0 - i1));
                }
            }
        }
        theta
    }

    pub(super) fn integrate_to(&mut self, end_ns: u64) {
        let span = (end_ns - self.now_ns) as f64 * 1e-9;
        let t0_ns = self.now_ns as f64;
        let mut t = 0.0;
        let (adaptive, rtol, atol_i, hmax) = match self.settings.stepping {
            Stepping::Adaptive {
                rel_tol,
                abs_tol_amps,
                max_step_s,
            } => (true, rel_tol, abs_tol_amps, max_step_s),
            Stepping::Fixed { step_s } => (false, 0.0, 0.0, step_s),
        };
        let mut k2 = State::<N>::ZERO;
        let mut k3 = State::<N>::ZERO;
        let mut k4 = State::<N>::ZERO;
        // One state buffer serves the stage points and then the trial result.
        let mut y1 = State::<N>::ZERO;
        while t < span {
            self.ensure_k1();
            if self.quiescent() {
                break;
            }
            let rem = span - t;
            let mut h = if adaptive {
                self.h_next.min(hmax)
            } else {
                hmax
            };
            if h >= rem * (1.0 - 1e-12) {
                h = rem;
            }
            let mut refines = 0u32;
            loop {
                let y0 = &self.y;
                let k1 = &self.k1;
                y1.lin(y0, h, [0.5], [k1]);
                self.deriv(&y1, &mut k2);
                y1.lin(y0, h, [0.75], [&k2]);
                self.deriv(&y1, &mut k3);
                y1.lin(y0, h, [2.0 / 9.0, 1.0 / 3.0, 4.0 / 9.0], [k1, &k2, &k3]);
                self.deriv(&y1, &mut k4);
                let mut en = 0.0;
                if adaptive {
                    en = self.error_norm(y0, &y1, h, [k1, &k2, &k3, &k4], rtol, atol_i);
                }
                self.counters.evaluations += 3;
                if adaptive && en > 1.0 && h > H_MIN {
                    let fac = (0.9 * libm::cbrt(1.0 / en)).clamp(0.1, 0.9);
                    h = (h * fac).max(H_MIN);
                    self.counters.rejected += 1;
                    continue;
                }
                if refines < MAX_REFINE {
                    if let Some(theta) = self.event_fraction(&y1) {
                        h = (h * theta).max(H_MIN);
                        refines += 1;
                        self.counters.refined += 1;
                        continue;
                    }
                }
                // Accept.
                let landed = h == rem;
                core::mem::swap(&mut self.y, &mut y1);
                core::mem::swap(&mut self.k1, &mut k4);
                self.k1_valid = true;
                self.counters.steps += 1;
                t = if landed { span } else { t + h };
                if adaptive {
                    let fac = if en > 0.0 {
                        (0.9 * libm::cbrt(1.0 / en)).clamp(0.2, 5.0)
                    } else {
                        5.0
                    };
                    // A step cut short to land on an edge says little about
                    // the next one: do not shrink because of it.
                    let hn = h * fac;
                    self.h_next = if landed || refines > 0 {
                        hn.max(self.h_next)
                    } else {
                        hn
                    }
                    .min(hmax);
                }
                self.after_step(t0_ns + t * 1e9);
                break;
            }
        }
    }
}

/// Scaled error of the energy integrals of one channel over a trial step
/// (∞-norm; `ENERGY_ATOL` absolute, `rtol` relative). Out of line: only
/// channels with coupled loops or saturation use it.
#[inline(never)]
fn energy_error(y0: &[f64; K], y1: &[f64; K], h: f64, k: [&[f64; K]; 4], rtol: f64) -> f64 {
    const E: [f64; 4] = [-5.0 / 72.0, 1.0 / 12.0, 1.0 / 9.0, -1.0 / 8.0];
    let mut m: f64 = 0.0;
    for j in DYN..K {
        let err = h * (E[0] * k[0][j] + E[1] * k[1][j] + E[2] * k[2][j] + E[3] * k[3][j]);
        let sc = ENERGY_ATOL + rtol * y0[j].abs().max(y1[j].abs());
        let r = err.abs() / sc;
        if r.is_nan() {
            return f64::INFINITY;
        }
        m = m.max(r);
    }
    m
}
