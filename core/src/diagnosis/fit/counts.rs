//! The integer pass of the free-level refinement, for exact counts ([`Sample::EXACT_COUNT`]) on
//! targets without an FPU: the sums of [`Sums3`] in integer arithmetic, f32 only for the eleven
//! figures handed to the Gauss–Newton step ([`super::centred`]).
//!
//! # Equations and units
//!
//! The model is centred on the window's first sample: `e_k = q^k`, `q = e^(−λ)`, k = 0…m−1.
//!
//! - **Weights.** `u_k = q^k` in Q32 (`u32`, `u_0 = 2³² − 1`) by `u_(k+1) ≈ ⌊u_k·q/2³²⌋`
//!   ([`mul_hi_approx`], three `MULS`, at most 2·2⁻³² low per step; q in Q32 from
//!   [`exp_neg_q32`], relative error below 10⁻⁸: after 256 steps `u_k` is within 3·10⁻⁶ of
//!   `q^k`, a tenth of the weight's resolution), rounded to
//!   the Q15 weight `v_k = round(u_k/2¹⁷) ≤ 2¹⁵` for the sums. (A first version fitted the
//!   basis `{1, v_k, k·v_k}` itself, residuals included: its model then differed from the exact
//!   one by up to `A·2⁻¹⁶`, which moved the estimates by up to half a standard error on large
//!   quiet rises; the residual now comes from the Q32 weight.)
//! - **Residual** at the current (Q, B): `r_k = (x_k − x_0) − L + B·u_k/2³²` formed in Q10
//!   (`L = zero + Q + B − x_0` and B rounded to Q10 once per pass, `B·u_k` by one high product
//!   from the Q32 weight, so the residual is that of the exact model), then rounded to Q5
//!   (1/32 count): a rounding of RMS 1/(64√3) count that is noise-like from sample to sample,
//!   `Σr²` high by about m/12 288 counts² (0.1 % of the quantisation noise alone).
//! - **Jacobian** columns `{1, v_k, k·v_k}` with the Q15 weight `v_k`: off the exact ones by at
//!   most 2⁻¹⁶. An inexact Jacobian with exact residuals still converges to where the gradient
//!   with that Jacobian vanishes; it moves the estimate by about 2⁻¹⁶·√m of a noise-sized term, a
//!   few 10⁻⁵ of a standard error (measured: `host-tests/tests/diagnosis_paths.rs`).
//! - **Sums.** `Σv`, `Σv²` and `Σr·v` with their first (and for `v²` second) cascaded prefix
//!   sums, so that `Σk·x = m·Σx − Σ(prefix)` and `Σk²·x` follow by summation by parts with adds
//!   only; `Σr`, `Σr²` directly. All exact: `|x_k − x_0| ≤ 65 535`, `|r| < 2¹⁶` (Q5) and
//!   m ≤ [`MAX_COUNT_WINDOW`] bound every product by 2³² and every sum by 2⁵⁵ (`Σk²v²·m` by
//!   2⁶²), so `u32`/`u64`/`i64` never wrap.
//! - **Centring** in integers: `m·Σab − Σa·Σb`, exact in `i64`; only then to f32, once per
//!   figure. The constant column is thus eliminated exactly, and the 2 × 2 rest is as well
//!   conditioned in f32 as the float pass's centred sums (better: they are exact before the one
//!   rounding).
//!
//! A window longer than [`MAX_COUNT_WINDOW`], a residual of 2 048 counts or more, or B or L
//! outside ±2¹⁹ counts return `None`, and the window is fitted in f32.
//!
//! # Cost
//!
//! About 110 instructions per sample on a Cortex-M0 (measured; no soft-float operation in the
//! loop, but twelve accumulators for eight low registers) against about 1 700 for the f32 pass
//! there (17 soft-float operations); measured figures for the whole fit and verdict in
//! `docs/diagnosis.md` §3a.

use super::centred::Sums3;
use super::fixed::exp_neg_q32;
use super::MAX_COUNT_WINDOW;
use crate::diagnosis::sample::Sample;
use crate::wide::mul_hi_approx;

/// Largest |residual| the pass takes, Q5 (2 048 counts): keeps `r·v` and `r²` within 32 bits.
const R_LIMIT: u32 = 1 << 16;
/// Largest |B| and |L| the pass takes, counts (2¹⁹: beyond any 16-bit converter's range; keeps
/// the Q10 residual within 2³¹).
const LEVEL_LIMIT: f32 = 524_288.0;

/// `x` rounded to the nearest integer (half away from zero) as i32, for |x| < 2³⁰.
fn round_i32(x: f32) -> i32 {
    if x >= 0.0 {
        (x + 0.5) as i32
    } else {
        (x - 0.5) as i32
    }
}

/// The sums of one pass at (Q, B, λ), Q and B at the window's first sample (module docs).
/// `None` outside the integer bounds.
#[inline(never)]
pub(super) fn pass<S: Sample>(
    win: &[S],
    zero: f32,
    q_lvl: f32,
    b: f32,
    lambda: f32,
) -> Option<Sums3> {
    let m = win.len();
    if !S::EXACT_COUNT || !(2..=MAX_COUNT_WINDOW).contains(&m) {
        return None;
    }
    let q32 = exp_neg_q32(lambda)?;
    let base = win.first()?.to_count();
    let level = zero + q_lvl + b - base as f32;
    if !(level.abs() < LEVEL_LIMIT && (0.0..LEVEL_LIMIT).contains(&b)) {
        return None;
    }
    // L and B in Q10: their rounding (2⁻¹¹ count) is far below a residual's.
    let l_fix = round_i32(1024.0 * level);
    let a_q = round_i32(1024.0 * b) as u32;
    let mut u = u32::MAX;
    let (mut sv, mut tv) = (0u32, 0u32);
    let (mut s2, mut t2, mut w2) = (0u64, 0u64, 0u64);
    let (mut sr, mut srv, mut trv, mut srr) = (0i32, 0i64, 0i64, 0u64);
    let mut big = 0u32;
    for x in win {
        let v = ((u >> 16) + 1) >> 1;
        // B·q^k in Q10 from the Q32 weight itself (not the Q15 one): the residual is that of the
        // exact model; only the Jacobian columns below use the rounded weight.
        let model = mul_hi_approx(a_q, u);
        u = mul_hi_approx(u, q32);
        // |x − x₀| ≤ 65 535 for the exact-count types.
        let c = x.to_count().wrapping_sub(base);
        sv = sv.wrapping_add(v);
        tv = tv.wrapping_add(sv);
        let vv = (v * v) as u64;
        s2 = s2.wrapping_add(vv);
        t2 = t2.wrapping_add(s2);
        w2 = w2.wrapping_add(t2);
        // Q10: |c·2¹⁰| ≤ 2²⁶, |L|, B < 2²⁹, so no step wraps; then rounded to Q5.
        let r10 = c
            .wrapping_shl(10)
            .wrapping_sub(l_fix)
            .wrapping_add(model as i32);
        let r = r10.wrapping_add(16) >> 5;
        big |= (r ^ (r >> 31)) as u32;
        sr = sr.wrapping_add(r);
        srv = srv.wrapping_add(r.wrapping_mul(v as i32) as i64);
        trv = trv.wrapping_add(srv);
        srr = srr.wrapping_add(r.wrapping_mul(r) as u32 as u64);
    }
    // Some |r| ≥ 2¹⁶ (the products above may have wrapped): not for this pass.
    if big >= R_LIMIT {
        return None;
    }
    Some(figures(
        m as i64,
        (sv, tv),
        (s2, t2, w2),
        (sr, srv, trv, srr),
    ))
}

/// The figures of [`Sums3`] from the integer sums (module docs): `Σv` with its prefix sum,
/// `Σv²` with its two cascaded prefix sums, and `Σr`, `Σr·v` with its prefix sum, `Σr²`.
fn figures(
    m: i64,
    (sv, tv): (u32, u32),
    (s2, t2, w2): (u64, u64, u64),
    (sr, srv, trv, srr): (i32, i64, i64, u64),
) -> Sums3 {
    let (sv, tv) = (sv as i64, tv as i64);
    let (s2, t2, w2) = (s2 as i64, t2 as i64, w2 as i64);
    let sr = sr as i64;
    // Summation by parts (prefix sums inclusive): Σk·x = m·Σx − ΣT, and with a_k = m − k,
    // Σa²x = 2ΣW − ΣT, Σk²x = m²Σx − 2m·ΣT + Σa²x.
    let skv = m * sv - tv;
    let skvv = m * s2 - t2;
    let skkvv = (m * m * s2 - 2 * m * t2).wrapping_add(2 * w2 - t2);
    let skvr = m * srv - trv;
    // Centred numerators m·Σab − Σa·Σb, exact (module docs for the bounds).
    let ndd = m * s2 - sv * sv;
    let ndw = m * skvv - sv * skv;
    let nww = (m * skkvv).wrapping_sub(skv * skv);
    let ndr = m * srv - sv * sr;
    let nwr = m * skvr - skv * sr;
    let mf = m as f32;
    // Units: e = v/2¹⁵, w = k·e, r = (Q5)/32.
    const E: f32 = 1.0 / 32_768.0;
    const R: f32 = 1.0 / 32.0;
    let ee = E * E / mf;
    let er = E * R / mf;
    Sums3 {
        d: sv as f32 * E - mf,
        w: skv as f32 * E,
        r: sr as f32 * R,
        dr: srv as f32 * (E * R) - sr as f32 * R,
        wr: skvr as f32 * (E * R),
        rr: srr as f32 * (R * R),
        cdd: ndd as f32 * ee,
        cdw: ndw as f32 * ee,
        cww: nww as f32 * ee,
        cdr: ndr as f32 * er,
        cwr: nwr as f32 * er,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The integer sums against the same sums in f64 over the same rounded weights (a direct
    /// sum, no summation by parts), at the largest window and the largest weights.
    #[test]
    fn the_integer_sums_are_the_direct_sums() {
        for &(m, lambda, amp) in &[
            (256usize, 1.0e-6f32, 4000.0f32),
            (64, 0.024, 1600.0),
            (7, 0.9, 60.0),
        ] {
            let q = (-(lambda as f64)).exp();
            let trace: Vec<u16> = (0..m)
                .map(|k| (100.0 + amp as f64 * (1.0 - q.powi(k as i32)) + (k % 3) as f64) as u16)
                .collect();
            let (q_lvl, b) = (100.0f32, amp);
            let s = pass(&trace, 0.0, q_lvl, b, lambda).unwrap();
            // Reference: the weights the pass uses, then every sum in f64.
            let q32 = exp_neg_q32(lambda).unwrap();
            let mut u = u32::MAX;
            let level = (q_lvl + b - trace[0] as f32) as f64;
            let l_fix = (1024.0 * level).round();
            let a_q = (1024.0 * b as f64).round() as u32;
            let (mut d, mut w, mut r, mut dr, mut wr, mut rr) = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0);
            let mut cols = Vec::new();
            for (k, &x) in trace.iter().enumerate() {
                let v = (((u >> 16) + 1) >> 1) as f64;
                // The Q5 residual as the pass forms it: from B·u in Q10, rounded.
                let model = mul_hi_approx(a_q, u) as f64;
                u = mul_hi_approx(u, q32);
                let r10 = 1024.0 * (x as f64 - trace[0] as f64) - l_fix + model;
                let rq = ((r10 + 16.0) / 32.0).floor();
                let e = v / 32768.0;
                let (dk, wk, rk) = (e - 1.0, k as f64 * e, rq / 32.0);
                d += dk;
                w += wk;
                r += rk;
                dr += dk * rk;
                wr += wk * rk;
                rr += rk * rk;
                cols.push((dk, wk, rk));
            }
            let mf = m as f64;
            let (md, mw) = (d / mf, w / mf);
            let (mut cdd, mut cdw, mut cww, mut cdr, mut cwr) = (0.0, 0.0, 0.0, 0.0, 0.0);
            for &(dk, wk, rk) in &cols {
                cdd += (dk - md) * (dk - md);
                cdw += (dk - md) * (wk - mw);
                cww += (wk - mw) * (wk - mw);
                cdr += (dk - md) * rk;
                cwr += (wk - mw) * rk;
            }
            let close = |got: f32, want: f64, scale: f64| {
                assert!(
                    (got as f64 - want).abs() <= 1.0e-6 * scale,
                    "m {m} λ {lambda}: {got} vs {want}"
                );
            };
            close(s.d, d, mf);
            close(s.w, w, mf * mf);
            close(s.r, r, r.abs() + 1.0);
            close(s.dr, dr, dr.abs() + 1.0);
            close(s.wr, wr, wr.abs() + mf);
            close(s.rr, rr, rr);
            close(s.cdd, cdd, cdd);
            close(s.cdw, cdw, cdw.abs());
            close(s.cww, cww, cww);
            close(s.cdr, cdr, cdr.abs() + 1.0);
            close(s.cwr, cwr, cwr.abs() + mf);
        }
    }

    /// The Q32 weight recurrence stays within 3·10⁻⁶ of `q^k` (f64 `exp`, the outside reference)
    /// over the longest window, for λ from a near-straight line to a fast rise (module docs).
    #[test]
    fn the_weight_recurrence_tracks_the_exact_power() {
        for &lambda in &[1.0e-6f32, 1.0e-3, 0.024, 0.3, 2.0] {
            let q32 = exp_neg_q32(lambda).unwrap();
            let mut u = u32::MAX;
            for k in 0..MAX_COUNT_WINDOW {
                let exact = (-(lambda as f64) * k as f64).exp();
                let got = u as f64 / 4_294_967_296.0;
                assert!(
                    (got - exact).abs() <= 3.0e-6,
                    "λ {lambda}, k {k}: {got} vs {exact}"
                );
                u = mul_hi_approx(u, q32);
            }
        }
    }

    #[test]
    fn out_of_bounds_windows_and_values_are_refused() {
        let long = [1000u16; MAX_COUNT_WINDOW + 1];
        assert!(pass(&long, 0.0, 1000.0, 10.0, 0.01).is_none());
        let floats = [1.0f32; 16];
        assert!(pass(&floats, 0.0, 1.0, 1.0, 0.1).is_none());
        // A residual of 3 000 counts.
        let far = [0u16, 0, 0, 0, 0, 0, 0, 3000];
        assert!(pass(&far, 0.0, 0.0, 10.0, 0.1).is_none());
        assert!(pass(&far[..7], 0.0, 0.0, -1.0, 0.1).is_none());
        assert!(pass(&far[..7], 1.0e9, 0.0, 1.0, 0.1).is_none());
        assert!(pass(&far[..7], 0.0, 0.0, 1.0, f32::NAN).is_none());
    }
}
