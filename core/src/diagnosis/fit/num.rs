//! Small numerical helpers that compile to plain instructions on the target.

/// `√x` for the standard errors and RMS figures: a bit-level first guess (≈ 3 % off) and three
/// Newton steps `y ← ½(y + x/y)`, relative error below 2·10⁻⁷ over the normal f32 range (tested
/// against f64). About 12 instructions on a Cortex-M4F, where `libm::sqrtf` is a software loop.
/// Returns 0 for x ≤ 0 or NaN and x for +∞.
pub(crate) fn sqrt(x: f32) -> f32 {
    if x.is_nan() || x <= 0.0 {
        return 0.0;
    }
    if x == f32::INFINITY {
        return x;
    }
    let mut y = f32::from_bits((x.to_bits() >> 1) + 0x1fbd_1df5);
    y = 0.5 * (y + x / y);
    y = 0.5 * (y + x / y);
    0.5 * (y + x / y)
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
