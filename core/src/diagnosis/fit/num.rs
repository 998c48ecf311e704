//! Small numerical helpers that compile to plain instructions on the target.

/// `√x` for the standard errors and RMS figures, relative error below 2·10⁻⁷ (tested against
/// f64 over the normal f32 range). On a target without an FPU correctly rounded in integers: the
/// mantissa's root by the digit-by-digit method (24 steps on a 48-bit radicand) and the exponent
/// halved (about 800 instructions on a Cortex-M0, where three soft-float Newton steps cost about
/// 1 100); with an FPU three Newton steps (`libm::sqrtf` is a software loop there). Subnormal x
/// are scaled by 2²⁴ first. Returns 0 for x ≤ 0 or NaN and x for +∞.
pub(crate) fn sqrt(x: f32) -> f32 {
    if x.is_nan() || x <= 0.0 {
        return 0.0;
    }
    if x == f32::INFINITY {
        return x;
    }
    if cfg!(target_abi = "eabihf") {
        sqrt_newton(x)
    } else {
        sqrt_digits(x)
    }
}

/// [`sqrt`] on a target with an FPU: a bit-level first guess (≈ 3 % off) and three Newton steps
/// `y ← ½(y + x/y)`, relative error below 2·10⁻⁷ (about 12 instructions on a Cortex-M4F). For
/// normal x > 0.
pub(super) fn sqrt_newton(x: f32) -> f32 {
    let mut y = f32::from_bits((x.to_bits() >> 1) + 0x1fbd_1df5);
    y = 0.5 * (y + x / y);
    y = 0.5 * (y + x / y);
    0.5 * (y + x / y)
}

/// [`sqrt`] in integers, correctly rounded (module docs). For finite x > 0.
fn sqrt_digits(x: f32) -> f32 {
    let bits = x.to_bits();
    let (mant, e) = if bits >> 23 == 0 {
        // Subnormal: x·2²⁴ is normal; its root is then 2¹² too large.
        let y = (x * 16_777_216.0).to_bits();
        ((y & 0x7f_ffff) | 0x80_0000, (y >> 23) as i32 - 24)
    } else {
        ((bits & 0x7f_ffff) | 0x80_0000, (bits >> 23) as i32)
    };
    // x = mant·2^(e − 150) with mant ∈ [2²³, 2²⁴). Make the exponent even: x = M·2^(2h − 23·…).
    let unbiased = e - 127;
    let (m, half) = if unbiased & 1 != 0 {
        ((mant as u64) << 1, (unbiased - 1) / 2)
    } else {
        (mant as u64, unbiased / 2)
    };
    // √(M/2²³)·2²³ = √(M·2²³), in [2²³, 2²⁴·√2).
    let mut op = m << 23;
    let mut res = 0u64;
    let mut one = 1u64 << 48;
    while one > op {
        one >>= 2;
    }
    while one != 0 {
        if op >= res + one {
            op -= res + one;
            res = (res >> 1) + one;
        } else {
            res >>= 1;
        }
        one >>= 2;
    }
    // Round to nearest: (r + ½)² = r² + r + ¼.
    if op > res {
        res += 1;
    }
    let (mut r, mut h) = (res as u32, half);
    if r >= 1 << 24 {
        r >>= 1;
        h += 1;
    }
    f32::from_bits((((h + 127) as u32) << 23) | (r & 0x7f_ffff))
}

/// The larger of two numbers by a plain compare (`a` when `b` is NaN). `f32::max` may compile to
/// a library call on the target.
pub(crate) fn larger(a: f32, b: f32) -> f32 {
    if b > a {
        b
    } else {
        a
    }
}

/// `x` limited to `[lo, hi]`; NaN goes to `lo`.
pub(crate) fn clamp(x: f32, lo: f32, hi: f32) -> f32 {
    if x > hi {
        hi
    } else if x >= lo {
        x
    } else {
        lo
    }
}

pub(crate) fn finite_or_zero(x: f32) -> f32 {
    if x.is_finite() {
        x
    } else {
        0.0
    }
}

/// Whether every figure is finite ([`crate::error::is_finite_bits`]: integer tests only, no
/// soft-float operation on a target without an FPU).
pub(crate) fn all_finite(figures: &[f32]) -> bool {
    figures.iter().all(|&x| crate::error::is_finite_bits(x))
}
