//! Timer ticks: the integer time base of the firmware.
//!
//! Physics works in [`Seconds`]; firmware works in ticks of a hardware timer. The conversion is
//! explicit and rounds toward safety: a *minimum* time rounds up ([`TickRate::ticks_at_least`]),
//! so that a tick count never undershoots the real time it stands for.

use crate::error::{Error, Param, Why};
use crate::units::{Hertz, Seconds};

/// A duration in timer ticks.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Ticks(pub u32);

impl Ticks {
    /// Zero ticks.
    pub const ZERO: Ticks = Ticks(0);

    /// The count.
    pub const fn get(self) -> u32 {
        self.0
    }

    /// `self + other`, or `None` on u32 overflow.
    pub const fn checked_add(self, other: Ticks) -> Option<Ticks> {
        match self.0.checked_add(other.0) {
            Some(v) => Some(Ticks(v)),
            None => None,
        }
    }

    /// The larger of two durations.
    pub const fn max(self, other: Ticks) -> Ticks {
        if self.0 >= other.0 {
            self
        } else {
            other
        }
    }
}

/// A point on a free-running u32 tick counter that wraps around.
///
/// Ordering is wrap-safe for instants less than 2³¹ ticks apart: `a` is before `b` when
/// `b − a` (mod 2³²) is in (0, 2³¹).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Instant(pub u32);

impl Instant {
    /// The instant `d` ticks later (wrapping).
    pub const fn after(self, d: Ticks) -> Instant {
        Instant(self.0.wrapping_add(d.0))
    }

    /// Signed distance `self − earlier` in ticks, wrap-safe (|distance| < 2³¹).
    pub const fn since(self, earlier: Instant) -> i32 {
        self.0.wrapping_sub(earlier.0) as i32
    }

    /// Whether `self` is at or after `other` (wrap-safe).
    pub const fn is_at_or_after(self, other: Instant) -> bool {
        self.since(other) >= 0
    }

    /// The later of two instants (wrap-safe).
    pub const fn latest(self, other: Instant) -> Instant {
        if self.is_at_or_after(other) {
            self
        } else {
            other
        }
    }
}

/// The largest duration an [`Instant`] comparison stays unambiguous for: 2³¹ − 1 ticks.
pub const MAX_SPAN: Ticks = Ticks(i32::MAX as u32);

/// Timer tick rate, ticks per second.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TickRate(u32);

impl TickRate {
    /// A tick rate in hertz (> 0).
    pub const fn new(hz: u32) -> Result<Self, Error> {
        if hz == 0 {
            Err(Error::invalid(Param::TickRate, Why::NotPositive))
        } else {
            Ok(TickRate(hz))
        }
    }

    /// Ticks per second.
    pub const fn hz(self) -> u32 {
        self.0
    }

    /// The rate as a frequency.
    pub fn as_hertz(self) -> Hertz {
        Hertz::new(self.0 as f32)
    }

    /// Smallest tick count not shorter than `t`: `n = ⌈t·f⌉`, exact.
    ///
    /// The f32 `t = m·2^e` is split into its integer mantissa and exponent, `m·f` is formed exactly
    /// in u64 (24 + 32 bits) and shifted with the rounding applied to the bits shifted out: no
    /// float rounding can leave the count short, and no FPU or soft-double code is needed.
    ///
    /// Guarantee: `n / f ≥ t` for every finite t ≥ 0 (property-tested against f64).
    ///
    /// # Errors
    /// Negative or NaN t: [`Error::Invalid`] ([`Param::Time`]); a count above [`MAX_SPAN`]
    /// (or +∞): [`Error::TickOverflow`].
    pub fn ticks_at_least(self, t: Seconds) -> Result<Ticks, Error> {
        self.convert(t, true)
    }

    /// Largest tick count not longer than `t`: `n = ⌊t·f⌋`, exact (for maximum times and timeouts
    /// that must not be overrun). Errors as [`TickRate::ticks_at_least`].
    pub fn ticks_at_most(self, t: Seconds) -> Result<Ticks, Error> {
        self.convert(t, false)
    }

    fn convert(self, t: Seconds, round_up: bool) -> Result<Ticks, Error> {
        // Tests on the bits (a float compare is a library call without an FPU): NaN, then ±0,
        // then a set sign bit, as `is_nan`, `== 0.0` and `< 0.0` would.
        let bits = t.value().to_bits();
        let magnitude = bits & 0x7FFF_FFFF;
        if magnitude > 0x7F80_0000 {
            return Err(Error::invalid(Param::Time, Why::NotFinite));
        }
        if magnitude == 0 {
            return Ok(Ticks(0));
        }
        if bits >> 31 == 1 {
            return Err(Error::invalid(Param::Time, Why::Negative));
        }
        let field = ((bits >> 23) & 0xff) as i32;
        if field == 0xff {
            return Err(Error::TickOverflow); // +∞
        }
        let mantissa = bits & 0x7f_ffff;
        let (m, e) = if field == 0 {
            (mantissa, -149) // subnormal
        } else {
            (mantissa | 0x80_0000, field - 150)
        };
        let product = m as u64 * self.0 as u64; // < 2^56, exact
        let n = if e >= 0 {
            if e >= 8 || product > (u64::MAX >> e) {
                return Err(Error::TickOverflow);
            }
            product << e
        } else {
            let shift = (-e) as u32;
            if shift >= 64 {
                u64::from(round_up) // 0 < t·f < 1
            } else {
                let whole = product >> shift;
                let rest = product & ((1u64 << shift) - 1);
                whole + u64::from(round_up && rest != 0)
            }
        };
        if n > MAX_SPAN.0 as u64 {
            return Err(Error::TickOverflow);
        }
        Ok(Ticks(n as u32))
    }

    /// The time a tick count stands for: `t = n / f`, s (f32 rounding).
    pub fn seconds(self, n: Ticks) -> Seconds {
        Seconds::new(n.0 as f32 / self.0 as f32)
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn signs_zeros_and_nan_are_read_from_the_bits_as_the_compares_read_them() {
        let r = TickRate::new(1_000).unwrap();
        assert_eq!(r.ticks_at_least(Seconds::new(-0.0)), Ok(Ticks(0)));
        assert_eq!(r.ticks_at_least(Seconds::new(0.0)), Ok(Ticks(0)));
        assert_eq!(
            r.ticks_at_least(Seconds::new(f32::NEG_INFINITY)),
            Err(Error::invalid(Param::Time, Why::Negative))
        );
        assert_eq!(
            r.ticks_at_most(Seconds::new(-1.0e-45)),
            Err(Error::invalid(Param::Time, Why::Negative))
        );
        assert_eq!(
            r.ticks_at_least(Seconds::new(-f32::NAN)),
            Err(Error::invalid(Param::Time, Why::NotFinite))
        );
        assert_eq!(
            r.ticks_at_least(Seconds::new(f32::INFINITY)),
            Err(Error::TickOverflow)
        );
        assert_eq!(r.ticks_at_least(Seconds::new(1.0e-45)), Ok(Ticks(1)));
    }

    use super::*;

    #[test]
    fn minimum_times_round_up() {
        let r = TickRate::new(1_000_000).unwrap();
        assert_eq!(r.ticks_at_least(Seconds::new(0.0)).unwrap(), Ticks(0));
        assert_eq!(
            r.ticks_at_least(Seconds::from_micros(10.2)).unwrap(),
            Ticks(11)
        );
        assert_eq!(
            r.ticks_at_most(Seconds::from_micros(10.8)).unwrap(),
            Ticks(10)
        );
        let k = TickRate::new(32_768).unwrap();
        let n = k.ticks_at_least(Seconds::new(0.015)).unwrap();
        assert!(n.0 as f64 / 32_768.0 >= 0.015f32 as f64);
    }

    #[test]
    fn conversion_is_exact_against_f64() {
        // Reference: f64 holds every f32 exactly and t·f exactly for f < 2^29, so ceil/floor of the
        // f64 product is the exact answer.
        let rates = [1u32, 1_000, 32_768, 1_000_000, 16_000_000, 480_000_000];
        let mut x = 0x3000_0000u32; // ~4.7e-10 s
        while x < 0x4120_0000 {
            // up to 10 s
            let t = f32::from_bits(x);
            for hz in rates {
                let r = TickRate::new(hz).unwrap();
                let exact = t as f64 * hz as f64;
                match r.ticks_at_least(Seconds::new(t)) {
                    Ok(n) => {
                        assert_eq!(n.0 as f64, exact.ceil(), "{t} s at {hz} Hz");
                        assert!(n.0 as f64 >= exact);
                    }
                    Err(e) => {
                        assert_eq!(e, Error::TickOverflow);
                        assert!(exact.ceil() > MAX_SPAN.0 as f64);
                    }
                }
                if let Ok(n) = r.ticks_at_most(Seconds::new(t)) {
                    assert_eq!(n.0 as f64, exact.floor());
                }
            }
            x += 0x1357; // a spread of mantissas and exponents
        }
        let r = TickRate::new(1_000_000).unwrap();
        assert_eq!(r.ticks_at_least(Seconds::new(1.0e-45)).unwrap(), Ticks(1));
        assert_eq!(r.ticks_at_most(Seconds::new(1.0e-45)).unwrap(), Ticks(0));
    }

    #[test]
    fn overflow_and_bad_input_are_errors() {
        let r = TickRate::new(1_000_000).unwrap();
        assert_eq!(
            r.ticks_at_least(Seconds::new(1.0e4)),
            Err(Error::TickOverflow)
        );
        assert_eq!(
            r.ticks_at_least(Seconds::new(f32::INFINITY)),
            Err(Error::TickOverflow)
        );
        assert!(r.ticks_at_least(Seconds::new(f32::NAN)).is_err());
        assert!(r.ticks_at_least(Seconds::new(-1e-9)).is_err());
        assert!(TickRate::new(0).is_err());
    }

    #[test]
    fn instants_compare_across_wrap() {
        let a = Instant(u32::MAX - 5);
        let b = a.after(Ticks(10));
        assert_eq!(b, Instant(4));
        assert!(b.is_at_or_after(a));
        assert!(!a.is_at_or_after(b));
        assert_eq!(b.since(a), 10);
        assert_eq!(a.since(b), -10);
        assert_eq!(a.latest(b), b);
    }
}
