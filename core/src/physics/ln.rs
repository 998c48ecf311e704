//! `ln(1 + x)` in integer arithmetic, for the times of the first-order closed forms.
//!
//! Every time of a first-order response is `τ·ln(1 + x)` (see [`super::first_order`]), and the
//! timing budget takes three of them. On a core without an FPU, `libm::log1pf` costs about
//! 3 000 instructions there (two dozen soft-float operations and a division); the integer path
//! here costs about 400 on the M0, with the same result to within one unit in the last place.
//! On an FPU part `libm::log1pf` is the cheaper one and is kept ([`ln_1p`] chooses by target).
//!
//! Method (the classic table-driven logarithm): `y = 1 + x` is formed exactly as an integer
//! `Y·2^e` (at most 30 significant bits), normalised to `y = m·2^k` with `m` in [1, 2). The top
//! five bits of `m` below its leading one pick `c_j ≈ 1/(1 + (2j + 1)/64)` from a table, so that
//! `r = m·c_j − 1` has `|r| < 2⁻⁶`; then
//!
//! `ln y = k·ln 2 − ln c_j + ln(1 + r)`, `ln(1 + r) = r − r²/2 + r³/3 − r⁴/4 + r⁵/5` (+ < 2⁻³⁸),
//!
//! with `−ln c_j` tabulated for the rounded `c_j` itself (so its rounding costs nothing), all in
//! fixed point (Q37 sum, Q30 polynomial, 32×32→64-bit products), and the sum rounded once to the
//! nearest f32 (ties to even).
//!
//! Accuracy: the fixed-point sum is within 1.3·2⁻³³ of `ln(1 + x)`, which is at least 2⁻⁶·0.99 on
//! the fast range, so the result is within 0.66 ulp (f32) of the exact value (`libm::log1pf`:
//! below 1 ulp); tested against f64 `ln_1p` over the whole range. Domain of the integer path:
//! `2⁻⁶ ≤ x < 2²⁴`; anything else (tiny or huge x, 0, negative, NaN, ∞) is handed to
//! `libm::log1pf`.

use crate::wide::{signed_wide_mul, wide_mul};

/// `round(2³²/(1 + (2j + 1)/64))`, j = 0…31: the reciprocal of the middle of each sixteenth
/// of [1, 2), Q32.
const RECIP: [u32; 32] = [
    0xFC0F_C0FC,
    0xF489_8D60,
    0xED73_03B6,
    0xE6C2_B448,
    0xE070_381C,
    0xDA74_0DA7,
    0xD4C7_7B03,
    0xCF64_74A9,
    0xCA45_87E7,
    0xC565_C87B,
    0xC0C0_C0C1,
    0xBC52_640C,
    0xB817_02E0,
    0xB40B_40B4,
    0xB02C_0B03,
    0xAC76_9184,
    0xA8E8_3F57,
    0xA57E_B503,
    0xA237_C32B,
    0x9F11_65E7,
    0x9C09_C09C,
    0x991F_1A51,
    0x964F_DA6C,
    0x939A_85C4,
    0x90FD_BC09,
    0x8E78_356D,
    0x8C08_C08C,
    0x89AE_408A,
    0x8767_AB5F,
    0x8534_0853,
    0x8312_6E98,
    0x8102_0408,
];

/// `round(−ln(RECIP[j]/2³²)·2³²)`: the logarithm of each rounded reciprocal, Q32 (computed to 60
/// digits).
const LN_RECIP: [u32; 32] = [
    0x03F8_1516,
    0x0BBA_2C7B,
    0x1341_D796,
    0x1A92_6D3A,
    0x21AE_FCFA,
    0x289A_56DA,
    0x2F57_1205,
    0x35E7_929C,
    0x3C4E_0EDC,
    0x428C_938A,
    0x48A5_07EF,
    0x4E99_3155,
    0x546A_B61D,
    0x5A1B_207A,
    0x5FAB_E0EE,
    0x651E_5071,
    0x6A73_B26B,
    0x6FAD_3676,
    0x74CB_F9F8,
    0x79D1_0988,
    0x7EBD_623E,
    0x8391_F2E1,
    0x884F_9CF1,
    0x8CF7_35A3,
    0x9189_86BE,
    0x9607_4F6A,
    0x9A71_44ED,
    0x9EC8_1353,
    0xA30C_5E11,
    0xA73E_C08E,
    0xAB5F_CEAD,
    0xAF70_1549,
];

/// `round(ln 2·2³⁷)`.
const LN2_Q37: i64 = 95_265_423_098;

/// `round(2³⁰/n)`, n = 2…5: the series' coefficients, Q30.
const HALF_Q30: i64 = 536_870_912;
const THIRD_Q30: i64 = 357_913_941;
const QUARTER_Q30: i64 = 268_435_456;
const FIFTH_Q30: i64 = 214_748_365;
const ONE_Q30: i64 = 1 << 30;

/// Smallest and largest-plus-one x of the integer path, as f32 bit patterns (2⁻⁶ and 2²⁴;
/// positive floats order as their bits).
const FAST_LO: u32 = 0x3C80_0000;
const FAST_HI: u32 = 0x4B80_0000;

/// `ln(1 + x)` as the closed forms take it: the integer path ([`ln_1p_int`]) on a core without
/// an FPU (Arm targets of the soft-float ABI: M0/M0+/M3/M23 and the like), where it is about
/// 7× cheaper than `libm::log1pf`; `libm::log1pf` where floating point is in hardware (there
/// the library routine is the cheaper one). Both within one ulp of the exact value.
#[inline]
pub(crate) fn ln_1p(x: f32) -> f32 {
    #[cfg(all(target_arch = "arm", not(target_abi = "eabihf")))]
    {
        ln_1p_int(x)
    }
    #[cfg(not(all(target_arch = "arm", not(target_abi = "eabihf"))))]
    {
        libm::log1pf(x)
    }
}

/// `ln(1 + x)`, within 0.66 ulp of the exact value on `2⁻⁶ ≤ x < 2²⁴` (see the module docs);
/// `libm::log1pf(x)` elsewhere (NaN for x < −1 or NaN, −∞ at −1, +∞ at +∞).
#[cfg_attr(
    not(any(test, all(target_arch = "arm", not(target_abi = "eabihf")))),
    allow(dead_code)
)]
pub(crate) fn ln_1p_int(x: f32) -> f32 {
    let bits = x.to_bits();
    if !(FAST_LO..FAST_HI).contains(&bits) {
        return libm::log1pf(x);
    }
    // x = mant·2^(−shift), 0 ≤ shift ≤ 29: y = 1 + x = (mant + 2^shift)·2^(−shift), exact.
    let mant = (bits & 0x007F_FFFF) | 0x0080_0000;
    let shift = 150 - (bits >> 23) as i32;
    let y = mant + (1u32 << shift);
    let lz = y.leading_zeros();
    let m = y << lz; // m/2³¹ in [1, 2)
    let k = 31 - lz as i32 - shift; // y = (m/2³¹)·2^k
    let j = ((m >> 26) & 31) as usize;
    // r = m·c_j − 1, Q63 → Q37; |r| < 2⁻⁶, so it fits an i32.
    let prod = wide_mul(m, RECIP[j]);
    let r = ((prod.wrapping_sub(1 << 63) as i64) >> 26) as i32;
    let mul = |t: i64| signed_wide_mul(r, t as i32) >> 37; // r·t, t and the result Q30
    let mut t = FIFTH_Q30;
    t = QUARTER_Q30 - mul(t);
    t = THIRD_Q30 - mul(t);
    t = HALF_Q30 - mul(t);
    t = ONE_Q30 - mul(t);
    let ln_1p_r = signed_wide_mul(r, t as i32) >> 30; // Q37
                                                      // k·ln 2 with k = 0…24 from two 32-bit halves of LN2_Q37 (no 64×64 multiply).
    let k = k as u32;
    let k_ln2 = ((u64::from(k * (LN2_Q37 >> 32) as u32)) << 32) + wide_mul(k, LN2_Q37 as u32);
    let sum = k_ln2 as i64 + (i64::from(LN_RECIP[j]) << 5) + ln_1p_r;
    q37_to_f32(sum as u64)
}

/// `v·2⁻³⁷` rounded to the nearest f32, ties to even, for 2²⁵ ≤ v < 2⁶⁴ (the sums above lie in
/// 2³⁰…2⁴²): the integer conversion rounds, the scaling by a power of two is exact (the result
/// stays a normal float), done on the exponent bits.
fn q37_to_f32(v: u64) -> f32 {
    f32::from_bits((v as f32).to_bits() - (37 << 23))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Distance in f32 units in the last place between `got` and the exact `want` (f64).
    fn ulps(got: f32, want: f64) -> f64 {
        let w = want as f32;
        let ulp = (f32::from_bits(w.to_bits() + 1) - w) as f64;
        (got as f64 - want).abs() / ulp
    }

    #[test]
    fn within_two_thirds_of_an_ulp_of_f64_over_the_integer_range() {
        // Reference: f64 `ln_1p` of Rust's standard library (correct to about 1 ulp of f64,
        // i.e. 2⁻²⁹ of an f32 ulp here). Every 61st f32 of [2⁻⁶, 2²⁴), both ends included.
        let mut worst = 0.0f64;
        let mut b = FAST_LO;
        while b < FAST_HI {
            let x = f32::from_bits(b);
            let e = ulps(ln_1p_int(x), (x as f64).ln_1p());
            worst = worst.max(e);
            b += 61;
        }
        for b in [FAST_LO, FAST_LO + 1, FAST_HI - 1] {
            let x = f32::from_bits(b);
            worst = worst.max(ulps(ln_1p_int(x), (x as f64).ln_1p()));
        }
        assert!(worst <= 0.66, "worst error {worst} ulp");
    }

    #[test]
    fn agrees_with_libm_and_hands_the_rest_to_it() {
        // libm::log1pf (a general-purpose library) is correct to below 1 ulp: the two differ by
        // at most one unit in the last place.
        let mut b = FAST_LO;
        while b < FAST_HI {
            let x = f32::from_bits(b);
            let (a, l) = (ln_1p_int(x), libm::log1pf(x));
            assert!(a.to_bits().abs_diff(l.to_bits()) <= 1, "{x}: {a} vs {l}");
            b += 4099;
        }
        for x in [
            0.0f32,
            1e-30,
            1e-3,
            0.015,
            2.0e7,
            1e30,
            f32::MAX,
            f32::INFINITY,
            -0.5,
        ] {
            assert_eq!(ln_1p_int(x).to_bits(), libm::log1pf(x).to_bits(), "{x}");
        }
        assert!(ln_1p_int(f32::NAN).is_nan());
        assert!(ln_1p_int(-2.0).is_nan());
        // Exact values (textbook): ln 2 at x = 1, ln 8 at x = 7, 0 at 0.
        assert!((ln_1p_int(1.0) - core::f32::consts::LN_2).abs() <= f32::EPSILON * 0.5);
        assert!(ulps(ln_1p_int(7.0), 8f64.ln()) <= 0.5);
    }

    #[test]
    fn the_host_takes_the_library_routine() {
        // The integer path is for Arm cores without an FPU; test builds on the host use libm.
        for x in [0.02f32, 0.7, 3.0, 1234.5] {
            assert_eq!(ln_1p(x).to_bits(), libm::log1pf(x).to_bits());
        }
    }

    #[test]
    fn rounding_to_f32_is_to_nearest_even() {
        // 1.0 and its neighbours, in Q37.
        let one = 1u64 << 37;
        assert_eq!(q37_to_f32(one), 1.0);
        let ulp = 1u64 << (37 - 23);
        assert_eq!(q37_to_f32(one + ulp / 2), 1.0); // tie, even stays
        assert_eq!(
            q37_to_f32(one + ulp / 2 + 1),
            f32::from_bits(1.0f32.to_bits() + 1)
        );
        assert_eq!(
            q37_to_f32(one + ulp + ulp / 2),
            f32::from_bits(1.0f32.to_bits() + 2)
        );
        assert_eq!(q37_to_f32((one << 1) - 1), 2.0); // carry into the exponent
        assert_eq!(q37_to_f32(1 << 31), 1.0 / 64.0);
    }
}
