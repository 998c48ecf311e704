//! Fixed-point exponentials for the fits and the verdict: `e^(−x)` from a 16-entry table of
//! `2^(−j/16)` and a five-term series in Q32 integer arithmetic.
//!
//! `x = (16n + j)·ln2/16 + g` with `0 ≤ g < ln2/16` (the reduction in Q48 integers), then `e^(−x) = 2^(−n)·2^(−j/16)·(1 − t)`, `t = 1 − e^(−g)`
//! summed as `g − g²/2 + g³/6 − g⁴/24 + g⁵/120` in Q32 (the first term left out, `g⁶/720`, is
//! below 10⁻¹¹). Every product is `⌊a·b/2³²⌋`, exact in integers: the result is bit-identical on
//! every target. Accuracy (tested against f64): the Q32 mantissa within 8·10⁻⁹ relative for
//! `x < 88`; as f32 within 1.2·10⁻⁷ relative of the true value (the mantissa's error and one
//! rounding to f32).
//!
//! Why not libm: on a Cortex-M0 without an FPU `libm::expf` works in soft f64 and costs about
//! 2 000 instructions; this uses no floating-point operation at all (the argument and the result
//! are taken apart and put together by their bits) and costs a few hundred. On a Cortex-M4F the
//! products are one `UMULL` each.

use crate::wide::{mul_hi, mul_hi_approx};

/// `round(2³²·2^(−j/16))`, j = 1…15 (j = 0 is 2³², handled apart).
const POW2: [u32; 15] = [
    4_112_874_773,
    3_938_502_376,
    3_771_522_796,
    3_611_622_603,
    3_458_501_653,
    3_311_872_529,
    3_171_459_999,
    3_037_000_500,
    2_908_241_642,
    2_784_941_738,
    2_666_869_345,
    2_553_802_834,
    2_445_529_972,
    2_341_847_524,
    2_242_560_872,
];

/// ln2/16 in Q48, `round(2⁴⁸·ln2/16)`.
const C_Q48: u64 = 12_193_974_156_573;
/// ⌊2³²·(16/ln2)/2²⁴⌋: `mul_hi(x_Q24, INV_C) ≈ x·16/ln2` from below, off by at most one.
const INV_C: u32 = 5_909;
/// ⌊2³²/3⌋ and ⌊2³²/5⌋.
const THIRD: u32 = 1_431_655_765;
const FIFTH: u32 = 858_993_459;

/// Largest argument handled: `e^(−x)` is below f32's normal range beyond it (and 0 is returned).
pub(crate) const EXP_MAX: f32 = 87.0;

/// `x` (finite, 0 ≤ x < 2⁸) in Q48 from its bits: exact for x ≥ 2⁻²⁵, truncated below.
fn to_q48(x: f32) -> u64 {
    let bits = x.to_bits();
    let e = (bits >> 23) as i32;
    let mant = ((bits & 0x7f_ffff) | 0x80_0000) as u64;
    // x = mant·2^(e − 150); in Q48: mant·2^(e − 102).
    let sh = e - 102;
    if e == 0 {
        0
    } else if sh >= 0 {
        mant << (sh as u32 & 63)
    } else if sh > -24 {
        mant >> ((-sh) as u32)
    } else {
        0
    }
}

/// `v·2⁻³²` as f32, rounded to nearest (integer operations only).
fn q32_to_f32(v: u32) -> f32 {
    if v == 0 {
        return 0.0;
    }
    let lz = v.leading_zeros();
    // v ∈ [2^(31 − lz), 2^(32 − lz)): the value's exponent field is 126 − lz.
    let (mut m24, mut exp) = if lz < 8 {
        let sh = 8 - lz;
        ((v >> sh) + ((v >> (sh - 1)) & 1), 126 - lz)
    } else {
        (v << (lz - 8), 126 - lz)
    };
    if m24 >= 1 << 24 {
        m24 >>= 1;
        exp += 1;
    }
    f32::from_bits((exp << 23) | (m24 & 0x7f_ffff))
}

/// `f·2⁻ⁿ` for a normal f32 f by its exponent field (0 when it would leave the normal range).
fn scale_down(f: f32, n: u32) -> f32 {
    let bits = f.to_bits();
    let e = bits >> 23;
    if e > n {
        f32::from_bits(bits - (n << 23))
    } else {
        0.0
    }
}

/// `e^(−x)` for `0 ≤ x < EXP_MAX` as `(m, n)`: `e^(−x) = m·2^(−32−n)` with the mantissa
/// `m ∈ (2³¹, 2³²]` as u64. `None` for x outside the range or NaN. The reduction is in
/// integers: x in Q48 (exact for x ≥ 2⁻²⁵), `k = ⌊x·16/ln2⌋` and `g = x − k·ln2/16` in Q48
/// (`ln2/16` to 2⁻⁴⁹, so `g` is within 10⁻¹¹).
fn exp_parts(x: f32) -> Option<(u64, u32)> {
    if !(0.0..EXP_MAX).contains(&x) {
        return None;
    }
    let (k, g) = reduce(x);
    // The last two terms need not be exact (below 10⁻⁷ of the sum; each product at most 2⁻³¹
    // low).
    let p2 = mul_hi(g, g) >> 1;
    let p3 = mul_hi(mul_hi(p2, g), THIRD);
    let p4 = mul_hi_approx(p3, g) >> 2;
    let p5 = mul_hi_approx(mul_hi_approx(p4, g), FIFTH);
    // Alternating and decreasing: no step wraps.
    let t = g - p2 + p3 - p4 + p5;
    let (j, n) = (k & 15, k >> 4);
    let m = match j.checked_sub(1).and_then(|i| POW2.get(i as usize)) {
        Some(&p) => (p - mul_hi(p, t)) as u64,
        None => (1u64 << 32) - t as u64,
    };
    Some((m, n))
}

/// `x = k·ln2/16 + g`: `(k, round(2³²·g))`, `0 ≤ g < ln2/16`, for `0 ≤ x < EXP_MAX`. With an
/// FPU in f32 (Cody–Waite: the high part of ln2/16 has 12 bits, so `k·C_HI` is exact; g within
/// 2·10⁻⁹); without one in Q48 integers (g within 10⁻¹¹), where each f32 operation would cost
/// about a hundred instructions.
fn reduce(x: f32) -> (u32, u32) {
    if cfg!(target_abi = "eabihf") {
        const C_HI: f32 = 2839.0 / 65536.0;
        const C_LO: f32 = 1.996_636_5e-6;
        const INV_C_F: f32 = 23.083_12;
        let k = (x * INV_C_F) as u32;
        let kf = k as f32;
        let g = (x - kf * C_HI) - kf * C_LO;
        // Rounding can put g a hair outside [0, ln2/16): clamp (an error of ~10⁻⁹).
        let g = if g > 0.0 { g } else { 0.0 };
        (k, (g * 4_294_967_296.0 + 0.5) as u32)
    } else {
        let xq = to_q48(x);
        let mut k = mul_hi((xq >> 24) as u32, INV_C);
        let mut kc = k as u64 * C_Q48;
        while kc > xq {
            k -= 1;
            kc -= C_Q48;
        }
        let mut g = xq - kc;
        while g >= C_Q48 {
            k += 1;
            g -= C_Q48;
        }
        // g < ln2/16 < 2⁻⁴: g·2³² < 2²⁸.
        (k, ((g + (1 << 15)) >> 16) as u32)
    }
}

/// `m·2^(−32−n)` as f32 (m ≤ 2³²).
fn from_parts(m: u64, n: u32) -> f32 {
    if cfg!(target_abi = "eabihf") {
        return scale_down(m as f32 * (1.0 / 4_294_967_296.0), n);
    }
    if m >= 1 << 32 {
        scale_down(1.0, n)
    } else {
        scale_down(q32_to_f32(m as u32), n)
    }
}

/// `e^(−x)` for x ≥ 0: within one f32 rounding; 0 for x ≥ [`EXP_MAX`] and for +∞; NaN for NaN;
/// 1 for x ≤ 0 (callers pass x ≥ 0).
pub(crate) fn exp_neg(x: f32) -> f32 {
    if x.is_nan() {
        return x;
    }
    if x <= 0.0 {
        return 1.0;
    }
    match exp_parts(x) {
        Some((m, n)) => from_parts(m, n),
        None => 0.0,
    }
}

/// `e^x` for x ≥ 0 as `1/e^(−x)`: within two f32 roundings; +∞ for x ≥ [`EXP_MAX`].
pub(crate) fn exp_pos(x: f32) -> f32 {
    1.0 / exp_neg(x)
}

/// `1 − e^(−x)` for x ≥ 0, relative error about 2·10⁻⁷ also for small x (`x − x²/2` below
/// 2⁻¹⁰, the mantissa's complement in integers below ln2); 1 for x ≥ [`EXP_MAX`].
pub(crate) fn one_minus_exp_neg(x: f32) -> f32 {
    if x.is_nan() {
        return x;
    }
    if x <= 0.0 {
        return 0.0;
    }
    if x < 1.0 / 1024.0 {
        // Below the Q32 series' relative resolution: x − x²/2, relative error x²/6 < 2·10⁻⁷.
        return x - 0.5 * x * x;
    }
    match exp_parts(x) {
        // Below ln2 the complement of the mantissa is exact in integers.
        Some((m, 0)) => q32_to_f32(((1u64 << 32) - m) as u32),
        Some((m, n)) => 1.0 - from_parts(m, n),
        None => 1.0,
    }
}

/// `round(2³²·e^(−x))` saturated to `u32::MAX`, for the weight recurrence of the count fit;
/// `None` outside `0 < x < EXP_MAX`. Relative error below 8·10⁻⁹ (tested): half an ulp of the reduced argument (2·10⁻⁹) and the
/// truncations of the series.
pub(crate) fn exp_neg_q32(x: f32) -> Option<u32> {
    if x.is_nan() || x <= 0.0 {
        return None;
    }
    let (m, n) = exp_parts(x)?;
    let q = if n >= 33 { 0 } else { m >> n };
    Some(if q > u32::MAX as u64 {
        u32::MAX
    } else {
        q as u32
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exponentials_match_f64_exp() {
        // Reference: Rust's f64 `exp`/`exp_m1` (the platform libm, correctly rounded to ~1 ulp
        // of f64).
        let mut x = 1.0e-7f32;
        while x < 86.0 {
            let want = (-(x as f64)).exp();
            let got = exp_neg(x) as f64;
            assert!(
                (got / want - 1.0).abs() < 1.2e-7,
                "exp_neg({x}) = {got}, {want}"
            );
            let want = -(-(x as f64)).exp_m1();
            let got = one_minus_exp_neg(x) as f64;
            assert!(
                (got / want - 1.0).abs() < 2.0e-7,
                "1 − e^−{x} = {got}, {want}"
            );
            if x < 20.0 {
                let q = exp_neg_q32(x).unwrap() as f64;
                let want = (-(x as f64)).exp() * 4_294_967_296.0;
                assert!(
                    (q - want).abs() <= 8.0e-9 * want + 1.0,
                    "q32({x}) = {q}, {want}"
                );
            }
            x *= 1.013;
        }
        assert_eq!(exp_neg(0.0), 1.0);
        assert_eq!(exp_neg(100.0), 0.0);
        assert_eq!(exp_neg(f32::INFINITY), 0.0);
        assert!(exp_neg(f32::NAN).is_nan());
        assert_eq!(exp_pos(100.0), f32::INFINITY);
        assert_eq!(one_minus_exp_neg(0.0), 0.0);
        assert_eq!(one_minus_exp_neg(1.0e3), 1.0);
        assert_eq!(exp_neg_q32(0.0), None);
        assert!(exp_neg_q32(1.0e-9).unwrap() >= u32::MAX - 5);
        assert_eq!(exp_neg_q32(50.0), Some(0));
    }
}
