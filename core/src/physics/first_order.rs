//! The first-order step response every closed form of this crate is built on.
//!
//! `f(t) = f∞ + (f(0) − f∞)·e^(−t/τ)`, with τ = L/R for a coil and τ = R·C for a capacitive node.
//! Solved for time: `t = τ·ln((f(0) − f∞)/(f_target − f∞))`.

use crate::error::{positive, result, Error, Param};
use crate::units::Seconds;

/// Fraction of a step still outstanding after five time constants: e⁻⁵ ≈ 0.674 %.
///
/// The trade's "5τ settling" rule: after 5τ a first-order response is within 1 % of its final value.
pub const FIVE_TAU_RESIDUAL: f32 = 0.006_737_947;

/// A first-order response from `initial` towards `asymptote` with time constant `tau`.
///
/// The unit of `initial` and `asymptote` is the caller's (amperes for a coil current, volts for a
/// node); `tau` is in seconds.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FirstOrder {
    initial: f32,
    asymptote: f32,
    tau: f32,
}

impl FirstOrder {
    /// A response from `initial` towards `asymptote` with time constant `tau` (s, finite, > 0).
    ///
    /// # Errors
    /// [`Error::Invalid`] with [`Param::Current`] for a non-finite level, [`Param::Time`] for a
    /// non-finite or non-positive `tau`.
    pub fn new(initial: f32, asymptote: f32, tau: Seconds) -> Result<Self, Error> {
        crate::error::finite(initial, Param::Current)?;
        crate::error::finite(asymptote, Param::Current)?;
        let tau = positive(tau.value(), Param::Time)?;
        Ok(Self {
            initial,
            asymptote,
            tau,
        })
    }

    /// The starting value f(0).
    pub const fn initial(&self) -> f32 {
        self.initial
    }

    /// The final value f∞ the response tends to.
    pub const fn asymptote(&self) -> f32 {
        self.asymptote
    }

    /// The time constant τ, s.
    pub const fn tau(&self) -> Seconds {
        Seconds::new(self.tau)
    }

    /// `f(t) = f(0) + (f∞ − f(0))·(1 − e^(−t/τ))`, evaluated with `expm1` so that small `t` keeps
    /// full precision (relative error a few ulp of f32).
    ///
    /// Domain: `t ≥ 0`, finite; a negative or NaN `t` is an error, `t = +∞` gives f∞. Levels so
    /// far apart that `f∞ − f(0)` overflows f32 are evaluated as the weighted mean
    /// `f(0)·e^(−t/τ) + f∞·(1 − e^(−t/τ))` instead (never NaN).
    pub fn value_at(&self, t: Seconds) -> Result<f32, Error> {
        let t = t.value();
        if t.is_nan() || t < 0.0 {
            return Err(crate::error::Error::invalid(
                Param::Time,
                if t.is_nan() {
                    crate::error::Why::NotFinite
                } else {
                    crate::error::Why::Negative
                },
            ));
        }
        let done = -libm::expm1f(-t / self.tau); // 1 − e^(−t/τ), in [0, 1]
        let step = self.asymptote - self.initial;
        if step.is_finite() {
            return result(self.initial + step * done);
        }
        // Levels of opposite sign near ±f32::MAX: the step itself overflows (∞·0 would be NaN),
        // but the weighted mean of two finite levels does not.
        result(self.initial * (1.0 - done) + self.asymptote * done)
    }

    /// Time at which the response first reaches `target`:
    /// `t = τ·ln(1 + (f(0) − f_target)/(f_target − f∞))` (the `ln_1p` form keeps precision for
    /// short times; within one f32 ulp of the exact logarithm, in integer arithmetic for the
    /// usual ratios, see `physics::ln`).
    ///
    /// A target on the far side of f(0) (already passed) gives 0 s. A target at or beyond f∞ is
    /// never reached: [`Error::Unreachable`].
    pub fn time_to(&self, target: f32) -> Result<Seconds, Error> {
        crate::error::finite(target, Param::Current)?;
        let rising = self.asymptote > self.initial;
        // The two differences of the ratio, and the compares read from their signs: a float
        // difference is zero exactly when its operands are equal and otherwise has the sign of
        // the comparison (an overflow to ±∞ keeps it), and a compare is a library call without
        // an FPU. `ahead`: f(0) − target; `left`: target − f∞.
        let ahead = self.initial - target;
        let left = target - self.asymptote;
        let non_negative = |d: f32| d.to_bits() >> 31 == 0 || d.to_bits() == 0x8000_0000;
        let non_positive = |d: f32| d.to_bits() >> 31 == 1 || d.to_bits() == 0;
        let already = if rising {
            non_negative(ahead) // target <= f(0)
        } else {
            non_positive(ahead) // target >= f(0)
        };
        if already {
            return Ok(Seconds::new(0.0));
        }
        let beyond = if rising {
            non_negative(left) // target >= f∞
        } else {
            non_positive(left) // target <= f∞
        };
        if beyond {
            return Err(Error::Unreachable {
                target,
                asymptote: self.asymptote,
            });
        }
        // Both differences have the same sign here, so the ratio is > 0.
        let ratio = ahead / left;
        result(self.tau * super::ln::ln_1p(ratio)).map(Seconds::new)
    }

    /// Area under the response from 0 to `t`: `∫f dt = f∞·t + (f(0) − f∞)·τ·(1 − e^(−t/τ))`
    /// (unit × s). Domain as [`FirstOrder::value_at`].
    pub fn integral_to(&self, t: Seconds) -> Result<f32, Error> {
        self.value_at(t)?;
        let t = t.value();
        let done = -libm::expm1f(-t / self.tau);
        result(self.asymptote * t + (self.initial - self.asymptote) * self.tau * done)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rise() -> FirstOrder {
        FirstOrder::new(0.0, 1.0, Seconds::new(0.01)).unwrap()
    }

    #[test]
    fn one_tau_reaches_63_percent() {
        // Textbook, from memory: an RC or RL step reaches 1 − 1/e ≈ 63.2 % after one τ.
        let v = rise().value_at(Seconds::new(0.01)).unwrap();
        assert!((v - 0.632_120_6).abs() < 1e-6);
    }

    #[test]
    fn five_tau_is_within_one_percent() {
        // Common practice, no source: 5τ settles to better than 1 %.
        let v = rise().value_at(Seconds::new(0.05)).unwrap();
        assert!(1.0 - v < 0.01);
        assert!(((1.0 - v) - FIVE_TAU_RESIDUAL).abs() < 1e-6);
        assert!((libm::expf(-5.0) - FIVE_TAU_RESIDUAL).abs() < 1e-9);
    }

    #[test]
    fn time_to_inverts_value_at() {
        let r = rise();
        for k in 1..100 {
            let target = k as f32 / 100.0;
            let t = r.time_to(target).unwrap();
            let back = r.value_at(t).unwrap();
            assert!((back - target).abs() < 2e-6, "{target} -> {back}");
        }
    }

    #[test]
    fn falling_and_passed_and_unreachable() {
        let fall = FirstOrder::new(2.0, -0.5, Seconds::new(1.0)).unwrap();
        // Textbook, from memory: inverting the first-order step, t = τ·ln((f0 − f∞)/(f − f∞)).
        // Time to zero: τ·ln(2.5/0.5) = ln 5.
        let t0 = fall.time_to(0.0).unwrap().value();
        assert!((t0 - libm::logf(5.0)).abs() < 1e-6);
        assert_eq!(fall.time_to(3.0).unwrap().value(), 0.0);
        assert!(matches!(fall.time_to(-0.5), Err(Error::Unreachable { .. })));
        assert!(matches!(
            rise().time_to(1.0),
            Err(Error::Unreachable { .. })
        ));
        assert!(rise().time_to(f32::NAN).is_err());
        assert!(rise().value_at(Seconds::new(-1.0)).is_err());
        assert!(rise().value_at(Seconds::new(f32::NAN)).is_err());
        assert_eq!(rise().value_at(Seconds::new(f32::INFINITY)).unwrap(), 1.0);
    }

    #[test]
    fn bad_tau_is_an_error() {
        for tau in [0.0, -1.0, f32::NAN, f32::INFINITY] {
            assert!(FirstOrder::new(0.0, 1.0, Seconds::new(tau)).is_err());
        }
    }

    #[test]
    fn integral_of_a_rise() {
        // Textbook calculus, from memory: ∫0^t (1 − e^(−t/τ)) = t − τ(1 − e^(−t/τ)).
        let r = rise();
        let a = r.integral_to(Seconds::new(0.02)).unwrap();
        let expect = 0.02 - 0.01 * (1.0 - libm::expf(-2.0));
        assert!((a - expect).abs() < 1e-7);
    }
}
