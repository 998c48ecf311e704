//! Building a [`Scheduler`]: by value ([`Scheduler::new`]) or in place ([`Scheduler::new_in`]),
//! both through one in-place initialisation, so that the scheduler (about 40 bytes per queue
//! slot) is never built in a temporary and moved.

use super::clock::Clock;
use super::{Channel, ChannelLimits, HoldDuty, LimitsError, Pulse, Scheduler};
use crate::time::Instant;

impl Channel {
    /// No pulse yet, hold duty 0.
    const IDLE: Channel = Channel {
        tail: None,
        started: None,
        duty: HoldDuty(0),
    };

    /// No pulse yet, at the initial hold duty of `limits` (0 without a hold phase).
    const fn for_limits(limits: &ChannelLimits) -> Channel {
        Channel {
            duty: match limits.hold() {
                Some(h) => h.duty(),
                None => HoldDuty(0),
            },
            ..Self::IDLE
        }
    }
}

impl<const CHANNELS: usize, const QUEUE: usize> Scheduler<CHANNELS, QUEUE> {
    const CAPACITY_OK: () = assert!(
        QUEUE >= 1 && QUEUE <= 255 && CHANNELS >= 1 && CHANNELS <= 256,
        "Scheduler needs 1..=255 queue slots and 1..=256 channels"
    );

    /// A scheduler with these channel limits, at most `inrush_cap` coils in their inrush window
    /// at once (≥ 1; use `CHANNELS` for no cap), its clock starting at `now`.
    ///
    /// # Errors
    /// [`LimitsError::ZeroInrushCap`].
    pub fn new(
        limits: [ChannelLimits; CHANNELS],
        inrush_cap: u8,
        now: Instant,
    ) -> Result<Self, LimitsError> {
        // Built in the return value itself by an out-of-line helper (not in a temporary and
        // moved).
        let mut r = Err(LimitsError::ZeroInrushCap);
        Self::new_result(&mut r, &limits, inrush_cap, now);
        r
    }

    /// [`Scheduler::new`] written over `r`.
    #[inline(never)]
    fn new_result(
        r: &mut Result<Self, LimitsError>,
        limits: &[ChannelLimits; CHANNELS],
        inrush_cap: u8,
        now: Instant,
    ) {
        #[allow(clippy::let_unit_value)]
        let () = Self::CAPACITY_OK;
        if inrush_cap == 0 {
            *r = Err(LimitsError::ZeroInrushCap);
            return;
        }
        *r = Ok(Self::BLANK);
        if let Ok(s) = r {
            s.reset(limits, inrush_cap, now);
        }
    }

    /// [`Scheduler::new`] built in place in `slot` (whatever it held is replaced), for start-up
    /// code that keeps the scheduler in a `static` or a caller-supplied state: the scheduler
    /// (about 40 bytes per queue slot) and its limits are never built on the stack and moved.
    /// Returns the scheduler in the slot.
    ///
    /// # Errors
    /// [`LimitsError::ZeroInrushCap`]; `slot` is then unchanged.
    pub fn new_in<'s>(
        slot: &'s mut Option<Self>,
        limits: &[ChannelLimits; CHANNELS],
        inrush_cap: u8,
        now: Instant,
    ) -> Result<&'s mut Self, LimitsError> {
        #[allow(clippy::let_unit_value)]
        let () = Self::CAPACITY_OK;
        if inrush_cap == 0 {
            return Err(LimitsError::ZeroInrushCap);
        }
        let s = slot.get_or_insert_with(|| Self::BLANK);
        s.reset(limits, inrush_cap, now);
        Ok(s)
    }

    /// Every field set as [`Scheduler::new`] sets it, in place (`inrush_cap` already checked).
    fn reset(&mut self, limits: &[ChannelLimits; CHANNELS], inrush_cap: u8, now: Instant) {
        self.limits.copy_from_slice(limits);
        for (c, l) in self.channels.iter_mut().zip(limits.iter()) {
            *c = Channel::for_limits(l);
        }
        for p in self.slots.iter_mut() {
            *p = Pulse::FREE;
        }
        self.order.fill(0);
        self.len = 0;
        self.inrush_cap = inrush_cap;
        self.clock = Clock::new(now);
    }

    /// Storage [`Scheduler::new_in`] and [`Scheduler::new`] overwrite entirely before use (never
    /// handed out as it is). All zero, so that writing it is a memory fill, not a copy of a
    /// scheduler-sized constant from flash.
    const BLANK: Self = Self {
        limits: [ChannelLimits::BLANK; CHANNELS],
        channels: [Channel::IDLE; CHANNELS],
        slots: [Pulse::FREE; QUEUE],
        order: [0; QUEUE],
        len: 0,
        inrush_cap: 0,
        clock: Clock::new(Instant(0)),
    };
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::schedule::{ChannelId, HoldPhase, Request};
    use crate::time::Ticks;

    #[test]
    fn built_in_place_equals_built_by_value_and_replaces_what_the_slot_held() {
        let plain = ChannelLimits::new(Ticks(10), Ticks(20)).unwrap();
        let held = plain
            .with_hold(HoldPhase::new(Ticks(12), HoldDuty(30_000)).unwrap())
            .unwrap();
        let limits = [plain, held, plain];
        let by_value = Scheduler::<3, 4>::new(limits, 2, Instant(7)).unwrap();
        let mut slot = None;
        let in_place = Scheduler::new_in(&mut slot, &limits, 2, Instant(7)).unwrap();
        assert_eq!(*in_place, by_value);
        // A used scheduler in the slot is replaced entirely.
        in_place
            .submit(Instant(8), Request::now(ChannelId(1), Ticks(40)))
            .unwrap();
        assert_eq!(in_place.pending(), 1);
        let again = Scheduler::new_in(&mut slot, &limits, 2, Instant(7)).unwrap();
        assert_eq!(*again, by_value);
        assert_eq!(
            Scheduler::new_in(&mut slot, &limits, 0, Instant(7)).map(|_| ()),
            Err(LimitsError::ZeroInrushCap)
        );
        assert_eq!(slot.as_ref(), Some(&by_value));
        assert_eq!(
            Scheduler::<3, 4>::new(limits, 0, Instant(7)),
            Err(LimitsError::ZeroInrushCap)
        );
    }
}
