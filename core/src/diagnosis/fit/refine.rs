//! One Gauss–Newton pass of the refinement.

use crate::diagnosis::sample::Sample;

/// Sums of one Gauss–Newton pass at (A, λ): the model `c_k = A·e_k`, `e_k = 1 − e^(−λκ_k)`,
/// has the Jacobian columns `e_k` (∂/∂A) and `A·w_k`, `w_k = κ_k·(1 − e_k)` (∂/∂λ).
pub(super) struct Pass {
    /// Σe².
    pub(super) a11: f32,
    /// Σe·w.
    pub(super) a12: f32,
    /// Σw².
    pub(super) a22: f32,
    /// Σe·r.
    pub(super) b1: f32,
    /// Σw·r.
    pub(super) b2: f32,
    /// Σr².
    pub(super) rr: f32,
}

pub(super) fn gn_pass<S: Sample>(samples: &[S], zero: f32, k0: f32, amp: f32, lambda: f32) -> Pass {
    // d = 1 − e^(−λ) to full precision, q = 1 − d (q is near 1: its absolute error is the ulp).
    // The recurrence e ← q·e + d keeps e's error relative to e, also where e is small.
    let d = -libm::expm1f(-lambda);
    let q = 1.0 - d;
    let mut e = if k0 == 0.0 {
        0.0
    } else if k0 == 1.0 {
        d
    } else {
        -libm::expm1f(-lambda * k0)
    };
    let mut kap = k0;
    let mut p = Pass {
        a11: 0.0,
        a12: 0.0,
        a22: 0.0,
        b1: 0.0,
        b2: 0.0,
        rr: 0.0,
    };
    let mut step = |s: S| {
        let c = s.to_f32() - zero;
        let w = kap - kap * e;
        let r = c - amp * e;
        p.a11 += e * e;
        p.a12 += e * w;
        p.a22 += w * w;
        p.b1 += e * r;
        p.b2 += w * r;
        p.rr += r * r;
        e = e * q + d;
        kap += 1.0;
    };
    // Two samples per loop turn halve the loop overhead; the arithmetic is the same.
    let mut pairs = samples.chunks_exact(2);
    for pair in &mut pairs {
        step(pair[0]);
        step(pair[1]);
    }
    for &s in pairs.remainder() {
        step(s);
    }
    p
}
