//! The free-running u32 tick counter, extended to a u64 that never wraps.
//!
//! Every call hands in `now` as an [`Instant`]. The scheduler keeps the previous one and advances a
//! u64 tick count by the wrap-safe distance `now − previous` (mod 2³²), which must lie in [0, 2³¹):
//! otherwise `now` is taken as time going backwards and refused. Internally every time is a u64
//! (no wrap for 584 years at 1 GHz); instants are produced only at the edges of the API.

use crate::time::{Instant, MAX_SPAN};

/// The extension state. `instant(t) = Instant(t mod 2³² + offset)`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub(crate) struct Clock {
    /// Extended ticks of the latest `now`.
    ticks: u64,
    /// The latest `now`.
    last: Instant,
    /// `last − (ticks mod 2³²)`.
    offset: u32,
}

impl Clock {
    /// A clock at extended tick 0 = `now`.
    pub(crate) const fn new(now: Instant) -> Self {
        Self {
            ticks: 0,
            last: now,
            offset: now.0,
        }
    }

    /// Extended ticks of the latest `now`.
    pub(crate) const fn ticks(&self) -> u64 {
        self.ticks
    }

    /// The extended tick of `now`, without committing it; `None` if `now` is before the latest
    /// `now` (or 2³¹ or more after it).
    pub(crate) const fn extend(&self, now: Instant) -> Option<u64> {
        let d = now.0.wrapping_sub(self.last.0);
        if d > MAX_SPAN.0 {
            None
        } else {
            Some(self.ticks + d as u64)
        }
    }

    /// Makes `now` (extended tick `t`, from [`Clock::extend`]) the latest.
    pub(crate) fn commit(&mut self, now: Instant, t: u64) {
        self.ticks = t;
        self.last = now;
    }

    /// Declares `now` to follow the latest instant with no time elapsed (recovery after calls
    /// more than 2³¹ ticks apart).
    pub(crate) fn resync(&mut self, now: Instant) {
        self.last = now;
        self.offset = now.0.wrapping_sub(self.ticks as u32);
    }

    /// The instant of extended tick `t`.
    pub(crate) const fn instant(&self, t: u64) -> Instant {
        Instant((t as u32).wrapping_add(self.offset))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn extends_across_the_wrap_and_refuses_backwards() {
        let start = Instant(u32::MAX - 2);
        let mut c = Clock::new(start);
        let t = c.extend(Instant(4)).unwrap();
        assert_eq!(t, 7);
        c.commit(Instant(4), t);
        assert_eq!(c.instant(7), Instant(4));
        assert_eq!(c.instant(0), start);
        assert_eq!(c.extend(Instant(3)), None);
        assert_eq!(c.extend(Instant(4)), Some(7));
        assert_eq!(c.extend(Instant(4u32.wrapping_add(1 << 31))), None);
        assert_eq!(
            c.extend(Instant(4 + (1 << 31) - 1)),
            Some(7 + (1 << 31) - 1)
        );
        c.resync(Instant(1000));
        assert_eq!(c.extend(Instant(1000)), Some(7));
        assert_eq!(c.instant(8), Instant(1001));
    }
}
