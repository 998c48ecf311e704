//! Integer multiplies for cores without a widening multiply: ARMv6-M (Cortex-M0/M0+) has only a
//! 32 × 32 → 32 `MULS`, so a 64-bit product is built from 16-bit halves here (the compiler would
//! otherwise call its 64 × 64 library multiply). One place for the fixed-point arithmetic of
//! the physics (`physics/ln.rs`) and of the fits (`diagnosis/fit`).

/// `⌊a·b/2³²⌋`, exact: on ARMv6-M from 16-bit halves (four `MULS`), on every other target by
/// its widening multiply. Both give the same bits.
#[inline(always)]
pub(crate) fn mul_hi(a: u32, b: u32) -> u32 {
    if cfg!(all(target_arch = "arm", not(target_has_atomic = "32"))) {
        mul_hi_halves(a, b)
    } else {
        ((a as u64 * b as u64) >> 32) as u32
    }
}

/// [`mul_hi`] from the 16-bit halves (ARMv6-M's form; a function of its own so that it is
/// tested on every host).
#[inline(always)]
fn mul_hi_halves(a: u32, b: u32) -> u32 {
    let (a1, a0) = (a >> 16, a & 0xffff);
    let (b1, b0) = (b >> 16, b & 0xffff);
    // Each partial sum stays below 2³²: (2¹⁶ − 1)² + 2¹⁶ − 1 < 2³².
    let mid = a1 * b0 + ((a0 * b0) >> 16);
    let mid2 = (mid & 0xffff) + a0 * b1;
    a1 * b1 + (mid >> 16) + (mid2 >> 16)
}

/// `⌊a·b/2³²⌋` less at most 2: the three cross products of the 16-bit halves without the low
/// one and the carries below bit 32 (three `MULS`). For the weight recurrence of the count fit,
/// where an error of 2⁻³¹ per step is far below the Q15 weight's resolution. Written so that the
/// compiler does not recognise a full 32 × 32 → 64 product (on ARMv6-M it would call a library
/// multiply).
#[inline(always)]
pub(crate) fn mul_hi_approx(a: u32, b: u32) -> u32 {
    let (a1, a0) = (a >> 16, a & 0xffff);
    let (b1, b0) = (b >> 16, b & 0xffff);
    a1 * b1 + ((a1 * b0) >> 16) + ((a0 * b1) >> 16)
}

/// `a·b` exact in 64 bits from four 16×16-bit products (the compiler's 64 × 64 multiply routine
/// costs about twice as much on ARMv6-M).
#[inline]
pub(crate) const fn wide_mul(a: u32, b: u32) -> u64 {
    let (a0, a1) = (a & 0xFFFF, a >> 16);
    let (b0, b1) = (b & 0xFFFF, b >> 16);
    let low = a0 * b0;
    let (mid, carry) = (a0 * b1).overflowing_add(a1 * b0);
    let high = a1 * b1 + ((carry as u32) << 16) + (mid >> 16);
    let (low, c2) = low.overflowing_add(mid << 16);
    (((high + c2 as u32) as u64) << 32) | low as u64
}

/// `a·b` exact in 64 bits, signed ([`wide_mul`] of the magnitudes).
#[inline]
pub(crate) const fn signed_wide_mul(a: i32, b: i32) -> i64 {
    let p = wide_mul(a.unsigned_abs(), b.unsigned_abs()) as i64;
    if (a < 0) != (b < 0) {
        -p
    } else {
        p
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_product_from_halves_is_the_exact_high_word() {
        // Against the widening product (integer arithmetic), at the corners and on a sweep.
        let vals = [
            0u32,
            1,
            2,
            0xffff,
            0x1_0000,
            0x8000_0000,
            0xffff_fffe,
            u32::MAX,
        ];
        for &a in &vals {
            for &b in &vals {
                assert_eq!(mul_hi_halves(a, b), ((a as u64 * b as u64) >> 32) as u32);
            }
        }
        let mut x = 0x1234_5677u32;
        for _ in 0..10_000 {
            x = x.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
            let y = x.rotate_left(13) ^ 0x9e37_79b9;
            let exact = ((x as u64 * y as u64) >> 32) as u32;
            assert_eq!(mul_hi_halves(x, y), exact);
            assert_eq!(mul_hi(x, y), exact);
            let approx = mul_hi_approx(x, y);
            assert!(approx <= exact && exact - approx <= 2, "{x} × {y}");
        }
    }

    #[test]
    fn wide_products_are_exact() {
        for (a, b) in [
            (0u32, 0u32),
            (u32::MAX, u32::MAX),
            (0xFFFF_0000, 0x0001_FFFF),
            (0x8000_0000, 0xFC0F_C0FC),
            (123_456_789, 987_654_321),
            (0x0000_FFFF, 0xFFFF_0000),
        ] {
            assert_eq!(wide_mul(a, b), u64::from(a) * u64::from(b), "{a} {b}");
        }
        for (a, b) in [
            (-1i32, 1i32),
            (i32::MIN + 1, i32::MAX),
            (-5, -7),
            (1 << 30, -(1 << 30)),
        ] {
            assert_eq!(
                signed_wide_mul(a, b),
                i64::from(a) * i64::from(b),
                "{a} {b}"
            );
        }
    }
}
