//! One bounded root finder shared by the iterative closed forms (snubber times, self-heating).

/// Solves `f(x) = 0` on a bracket `[lo, hi]` where `f(lo)` and `f(hi)` have opposite signs (or one
/// is zero), by regula falsi in the Illinois variant with a bisection step every fourth step.
///
/// Stops after `max_steps` or when the bracket is narrower than `rel_tol·|hi|` (or exactly hits a
/// zero). Returns the bracket end on the side of `hi`'s sign, so a caller that orders the bracket
/// so that `hi` is the safe side never gets an answer on the unsafe side. Never panics; with NaN
/// from `f` it degrades to bisection.
pub(crate) fn illinois(
    f: impl Fn(f32) -> f32,
    mut lo: f32,
    mut hi: f32,
    max_steps: u32,
    rel_tol: f32,
) -> f32 {
    let mut f_lo = f(lo);
    let mut f_hi = f(hi);
    if f_hi == 0.0 {
        return hi;
    }
    if f_lo == 0.0 {
        return lo;
    }
    let hi_positive = f_hi > 0.0;
    let mut side = 0i8;
    for n in 0..max_steps {
        let width = hi - lo;
        if libm::fabsf(width) <= rel_tol * libm::fabsf(hi) {
            break;
        }
        let mut x = if n % 4 == 3 || f_lo == f_hi {
            lo + 0.5 * width
        } else {
            hi - f_hi * width / (f_hi - f_lo)
        };
        let inside = if width > 0.0 {
            x > lo && x < hi
        } else {
            x < lo && x > hi
        };
        if !inside {
            x = lo + 0.5 * width;
            if x == lo || x == hi {
                break; // adjacent floats
            }
        }
        let fx = f(x);
        if fx == 0.0 {
            return x;
        }
        if (fx > 0.0) == hi_positive {
            hi = x;
            f_hi = fx;
            if side == 1 {
                f_lo *= 0.5;
            }
            side = 1;
        } else {
            lo = x;
            f_lo = fx;
            if side == -1 {
                f_hi *= 0.5;
            }
            side = -1;
        }
    }
    hi
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_roots_from_either_side_within_the_bound() {
        // √2 (from memory: 1.41421356…).
        let r = illinois(|x| x * x - 2.0, 0.0, 2.0, 80, 1e-7);
        assert!((r - core::f32::consts::SQRT_2).abs() < 2e-7);
        assert!(r * r >= 2.0); // on hi's side
        let r = illinois(|x| 2.0 - x * x, 2.0, 0.0, 80, 1e-7);
        assert!((r - core::f32::consts::SQRT_2).abs() < 2e-7);
        // A step, not a root: still terminates at the jump.
        let r = illinois(|x| if x < 0.3 { -1.0 } else { 1.0 }, 0.0, 1.0, 80, 1e-6);
        assert!((r - 0.3).abs() < 1e-5);
        // NaN-producing function: terminates, no panic.
        let r = illinois(|_| f32::NAN, 0.0, 1.0, 80, 1e-6);
        assert!(r.is_finite());
    }
}
