//! One comparator's state across arm, switch-on edge and trip, with the reference's settling
//! time (see [`crate::reference`]). Times are TIMER ticks; every comparison is wrap-safe.

use coilwise::{Instant, Ticks};
use coilwise_driver::SenseErrorKind;

use crate::reference::{compare_for, SETTLE_TICKS};

/// Where the comparator is in its pulse.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Watch {
    /// No trip level armed for this pulse.
    Off,
    /// Armed: watch from the next switch-on edge.
    Armed,
    /// The reference had not settled at the edge: no reading for this pulse.
    Unsettled,
    /// Watching since the edge at `on`.
    Since {
        /// The switch-on edge.
        on: Instant,
    },
    /// Tripped this many ticks after the edge.
    Tripped(Ticks),
}

/// One channel's comparator.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Threshold {
    level: Option<u16>,
    ready_at: Instant,
    watch: Watch,
}

impl Threshold {
    /// No level set, nothing armed.
    pub const fn new(now: Instant) -> Self {
        Self {
            level: None,
            ready_at: now,
            watch: Watch::Off,
        }
    }

    /// Arms the next edge at `level` counts (`None`: no reading). Returns the compare value to
    /// write when the reference must change (the settling time restarts at `now`).
    /// `LevelOutOfRange` above 4095 (nothing changes).
    pub fn arm(&mut self, level: Option<u16>, now: Instant) -> Result<Option<u16>, SenseErrorKind> {
        let Some(level) = level else {
            self.watch = Watch::Off;
            return Ok(None);
        };
        let write = self.set_level(level, now)?;
        self.watch = Watch::Armed;
        Ok(write)
    }

    /// Sets the reference for `level` without arming (ahead of the pulses that will use it).
    pub fn preset(&mut self, level: u16, now: Instant) -> Result<Option<u16>, SenseErrorKind> {
        self.set_level(level, now)
    }

    fn set_level(&mut self, level: u16, now: Instant) -> Result<Option<u16>, SenseErrorKind> {
        let compare = compare_for(level)?;
        if self.level == Some(level) {
            return Ok(None);
        }
        self.level = Some(level);
        self.ready_at = now.after(Ticks(SETTLE_TICKS));
        Ok(Some(compare))
    }

    /// The channel switched on at `on`; `true` when the trip interrupt must be enabled (it is
    /// disabled otherwise). An edge without a new arm drops the previous pulse's reading.
    pub fn edge(&mut self, on: Instant) -> bool {
        self.watch = match self.watch {
            Watch::Armed if on.is_at_or_after(self.ready_at) => Watch::Since { on },
            Watch::Armed => Watch::Unsettled,
            _ => Watch::Off,
        };
        matches!(self.watch, Watch::Since { .. })
    }

    /// The comparator output was seen high at `now`; `true` when this recorded the trip (then
    /// disable the interrupt).
    pub fn trip(&mut self, now: Instant) -> bool {
        if let Watch::Since { on } = self.watch {
            self.watch = Watch::Tripped(Ticks(now.since(on).max(0) as u32));
            true
        } else {
            false
        }
    }

    /// Whether a trip is being waited for.
    pub const fn watching(&self) -> bool {
        matches!(self.watch, Watch::Since { .. })
    }

    /// The reading of the latest pulse: `Ok(Some(t))` tripped `t` after the edge, `Ok(None)`
    /// not (yet), or no level armed; `Busy` when the reference was still settling at the edge.
    pub const fn reading(&self) -> Result<Option<Ticks>, SenseErrorKind> {
        match self.watch {
            Watch::Tripped(t) => Ok(Some(t)),
            Watch::Unsettled => Err(SenseErrorKind::Busy),
            _ => Ok(None),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn settled_edge_then_trip() {
        let t0 = Instant(1_000);
        let mut th = Threshold::new(t0);
        assert_eq!(th.arm(Some(2_000), t0), Ok(Some(500)));
        assert!(!th.edge(t0.after(Ticks(SETTLE_TICKS - 1))));
        assert_eq!(th.reading(), Err(SenseErrorKind::Busy));
        // Same level again: no rewrite, the settling clock keeps running.
        assert_eq!(th.arm(Some(2_000), t0.after(Ticks(10))), Ok(None));
        let on = t0.after(Ticks(SETTLE_TICKS));
        assert!(th.edge(on));
        assert_eq!(th.reading(), Ok(None));
        assert!(th.trip(on.after(Ticks(1_234))));
        assert!(!th.trip(on.after(Ticks(2_000)))); // only the first crossing counts
        assert_eq!(th.reading(), Ok(Some(Ticks(1_234))));
        // The next edge without an arm has no reading.
        assert!(!th.edge(on.after(Ticks(50_000))));
        assert_eq!(th.reading(), Ok(None));
    }

    #[test]
    fn settling_is_wrap_safe() {
        let t0 = Instant(u32::MAX - 100);
        let mut th = Threshold::new(t0);
        assert!(th.preset(4_000, t0).unwrap().is_some());
        th.arm(Some(4_000), t0).unwrap();
        // 200 ticks later the counter has wrapped to 99: still settling.
        assert!(!th.edge(Instant(99)));
        th.arm(Some(4_000), Instant(99)).unwrap();
        assert!(th.edge(t0.after(Ticks(SETTLE_TICKS))));
        assert!(th.trip(t0.after(Ticks(SETTLE_TICKS + 7))));
        assert_eq!(th.reading(), Ok(Some(Ticks(7))));
    }

    #[test]
    fn preset_keeps_the_watch_and_bad_levels_change_nothing() {
        let t0 = Instant(0);
        let mut th = Threshold::new(t0);
        assert_eq!(th.arm(None, t0), Ok(None));
        assert_eq!(th.preset(100, t0), Ok(Some(25)));
        assert!(!th.watching());
        let before = th;
        assert_eq!(
            th.arm(Some(4_096), t0),
            Err(SenseErrorKind::LevelOutOfRange)
        );
        assert_eq!(th, before);
        // A trip with nothing watched records nothing.
        assert!(!th.trip(Instant(5)));
        assert_eq!(th.reading(), Ok(None));
    }
}
