//! A fixed-capacity, multi-channel pulse scheduler on integer timer ticks.
//!
//! It never emits an edge sequence that violates a channel's limits ([`ChannelLimits`]): minimum
//! on-time, minimum off-time (from the actual off edge), maximum on-time, its thermal buckets, or
//! the cap on coils in their pull-in (inrush) window at once — whatever the requests and however
//! the timer wraps. Every delay and refusal carries a reason value.
//!
//! # Use from an interrupt-driven firmware
//!
//! ```
//! use coilwise::schedule::{ChannelId, ChannelLimits, EdgeBuffer, PinAction, Request, Scheduler};
//! use coilwise::{Instant, Ticks};
//!
//! // Invented demo: two greenhouse valves, ticks of 1 ms, at most one valve pulling in at a time.
//! let valve = ChannelLimits::new(Ticks(40), Ticks(60))?.with_inrush_window(Ticks(25))?;
//! let mut s: Scheduler<2, 8> = Scheduler::new([valve; 2], 1, Instant(0))?;
//! let a = s.submit(Instant(0), Request::now(ChannelId(0), Ticks(500)))?;
//! let b = s.submit(Instant(0), Request::now(ChannelId(1), Ticks(500)))?;
//! assert_eq!(a.start(), Instant(0));
//! assert_eq!(b.start(), Instant(25)); // staggered behind valve 0's inrush window
//!
//! let mut edges = EdgeBuffer::<4>::new();
//! let wake = s.poll(Instant(0), &mut edges)?; // from the timer interrupt
//! assert_eq!(edges[0].action, PinAction::On);
//! assert_eq!(wake.at, Instant(25)); // set the compare register to this
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! - [`Scheduler::submit`] → [`Admission::Accepted`] (starts when asked), [`Admission::Delayed`]
//!   (starts later: reason and start tick), or `Err(`[`Refusal`]`)` with the reason. An admitted
//!   pulse *will* be emitted at its reported start for its full duration, unless stopped.
//! - [`Scheduler::poll`] → the edges due at `now` into a caller-supplied buffer, in time order, and
//!   the tick to call again ([`Wake`]).
//! - [`Scheduler::stop`] ends a pulse early — never before its minimum on-time — and drops the
//!   channel's queued pulses.
//!
//! # Rules
//!
//! - Each channel runs its pulses first-in first-out; a request lands after the channel's last
//!   admitted pulse and its minimum off-time.
//! - Constraints are applied in order: channel free and off-time, thermal buckets (both monotone:
//!   once met, met at every later tick), then the inrush cap (staggering to the first tick at which
//!   the new window fits). The start is the earliest tick meeting all of them.
//! - Thermal buckets reserve each pulse's heat at its start; see [`thermal`] for the bound.
//!   Queued pulses dropped by a stop give their reservation back (they never run); a pulse stopped
//!   early keeps its whole reservation, decaying from its actual off edge, so the bound only
//!   overestimates.
//! - Inrush windows are reserved by admitted pulses; an edge the firmware applies late (poll called
//!   after [`Wake::at`]) is late in the real world too — the scheduler reports the scheduled tick in
//!   [`PinEvent::at`], and guarantees the *scheduled* sequence.
//! - Time: call with a `now` that never goes backwards and advances less than 2³¹ ticks between
//!   calls (poll at [`Wake::at`], at least every [`KEEP_ALIVE`] ticks). Internally time is a u64
//!   extended from each `now`, which never wraps; if the calls were too far apart,
//!   [`Scheduler::resync`] recovers conservatively.
//!
//! # Cost
//!
//! `poll` is O(1) when nothing is due and O(Q) per edge emitted (the edge's pulse is re-sorted in
//! a byte array of slot numbers, in place). `submit` is O(channels + Q) plus, only when the inrush
//! cap could be reached, a sort of at most 2·Q window edges; each thermal bucket costs two u64
//! divisions and a few multiplies, and a 23-step bisection only when it has to delay.
//!
//! Measured under QEMU (`-icount`, instruction counts, release build, 4 channels, 8 slots, one
//! clamp bucket, inrush cap 2): poll with 6 pending and nothing due 72 instructions on a
//! Cortex-M4F / 96 on a Cortex-M0; with one edge due 190 / 265; submit 896–1220 / 1854–2480, and
//! 3604 / 9169 when a full thermal bucket delays it (counts include the measuring harness's own
//! few instructions; the firmware's cost report is the reference).

mod clock;
mod errors;
mod event;
mod inrush;
mod limits;
mod request;
pub mod thermal;

#[cfg(test)]
mod tests;

pub use errors::{DelayReason, LimitsError, Refusal, ScheduleError};
pub use event::{PinAction, PinEvent, Wake, WakeCause};
pub use limits::{
    ChannelLimits, HeatRating, HeatRatings, HoldDuty, HoldPhase, HoldPlan, MAX_LIMIT,
};
pub use request::{Admission, ChannelId, Request, Start, Stopping};
pub use thermal::{EnergyRate, ThermalBucket};

use crate::time::{Instant, Ticks, MAX_SPAN};
use clock::Clock;

/// The caller-supplied buffer [`Scheduler::poll`] fills: a `heapless::Vec` of up to `N` edges
/// (named here so that firmware needs no direct dependency on `heapless`).
pub type EdgeBuffer<const N: usize> = heapless::Vec<PinEvent, N>;

/// When nothing is pending, [`Scheduler::poll`] asks to be called again this many ticks later
/// (2³⁰), keeping consecutive calls well inside the 2³¹-tick span.
pub const KEEP_ALIVE: Ticks = Ticks(1 << 30);

/// Where a pulse is in its life.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
enum Stage {
    /// Slot unused.
    Free,
    /// Admitted, not yet on.
    Queued,
    /// On at full drive.
    PullIn,
    /// Holding at PWM.
    Held,
}

/// A pending or running pulse. Times are extended ticks.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct Pulse {
    /// The tick of this pulse's next edge (the sort key).
    next: u64,
    /// On edge.
    start: u64,
    /// Length, ticks.
    duration: u32,
    /// Hold edge offset from `start`, ticks; 0 = no hold edge.
    hold: u32,
    /// Inrush window length from `start`, ticks.
    window: u32,
    /// Thermal bounds this pulse leaves at its off edge: clamp, winding (µJ).
    heat: [u32; 2],
    channel: u8,
    stage: Stage,
}

impl Pulse {
    const FREE: Pulse = Pulse {
        next: 0,
        start: 0,
        duration: 0,
        hold: 0,
        window: 0,
        heat: [0; 2],
        channel: 0,
        stage: Stage::Free,
    };

    const fn end(&self) -> u64 {
        self.start + self.duration as u64
    }
}

/// The state a channel's next pulse builds on: the off edge of its last pulse and the thermal
/// bounds that pulse left.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct Tail {
    end: u64,
    heat: [u32; 2],
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct Channel {
    /// After the last admitted pulse (completed, running or queued).
    tail: Option<Tail>,
    /// After the last pulse that has been switched on (what remains if the queue is dropped).
    started: Option<Tail>,
    /// Present hold duty.
    duty: HoldDuty,
}

/// The scheduler for `CHANNELS` channels (≤ 256) and `QUEUE` pulses pending or in flight
/// (1…255) in total.
///
/// Memory: about 40 bytes per queue slot, 48 per channel plus its limits. `Clone` + `PartialEq`
/// make a snapshot cheap to take and compare.
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Scheduler<const CHANNELS: usize, const QUEUE: usize> {
    limits: [ChannelLimits; CHANNELS],
    channels: [Channel; CHANNELS],
    slots: [Pulse; QUEUE],
    /// Occupied slot numbers sorted by `next` *descending*: the next edge is `order[len − 1]`, so
    /// it is removed by shortening. Among equal `next`, the one sorted in first is nearer the end.
    order: [u8; QUEUE],
    len: u8,
    inrush_cap: u8,
    clock: Clock,
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
        #[allow(clippy::let_unit_value)]
        let () = Self::CAPACITY_OK;
        if inrush_cap == 0 {
            return Err(LimitsError::ZeroInrushCap);
        }
        let channels = core::array::from_fn(|i| Channel {
            tail: None,
            started: None,
            duty: match limits[i].hold() {
                Some(h) => h.duty(),
                None => HoldDuty(0),
            },
        });
        Ok(Self {
            limits,
            channels,
            slots: [Pulse::FREE; QUEUE],
            order: [0; QUEUE],
            len: 0,
            inrush_cap,
            clock: Clock::new(now),
        })
    }

    /// The limits of `channel`.
    pub fn limits(&self, channel: ChannelId) -> Option<&ChannelLimits> {
        self.limits.get(channel.0 as usize)
    }

    /// Pulses pending or in flight.
    pub fn pending(&self) -> usize {
        self.len as usize
    }

    /// The latest `now` seen.
    pub fn now(&self) -> Instant {
        self.clock.instant(self.clock.ticks())
    }

    /// The thermal bounds of `channel` as of the latest `now`, µJ: `[clamp, winding]` (0 where the
    /// channel has no such bucket). Includes heat reserved by pulses still queued.
    pub fn heat(&self, channel: ChannelId) -> Option<[u32; 2]> {
        let c = self.channels.get(channel.0 as usize)?;
        let l = self.limits.get(channel.0 as usize)?;
        let Some(tail) = c.tail else {
            return Some([0; 2]);
        };
        let elapsed = self.clock.ticks().saturating_sub(tail.end);
        let mut out = [0; 2];
        for (k, b) in l.buckets().iter().enumerate() {
            if let Some(b) = b {
                out[k] = b.level_after(tail.heat[k], elapsed);
            }
        }
        Some(out)
    }

    /// Sets the hold duty used by `channel`'s future hold edges (e.g. recomputed for the present
    /// supply), up to the ceiling its limits were built for.
    ///
    /// # Errors
    /// [`ScheduleError::UnknownChannel`], [`ScheduleError::NoHoldPhase`],
    /// [`ScheduleError::DutyAboveCeiling`] (also for a duty of zero); nothing changes.
    pub fn set_hold_duty(
        &mut self,
        channel: ChannelId,
        duty: HoldDuty,
    ) -> Result<(), ScheduleError> {
        let i = channel.0 as usize;
        let l = self.limits.get(i).ok_or(ScheduleError::UnknownChannel)?;
        let h = l.hold().ok_or(ScheduleError::NoHoldPhase)?;
        if duty > h.ceiling() || duty.0 == 0 {
            return Err(ScheduleError::DutyAboveCeiling);
        }
        if let Some(c) = self.channels.get_mut(i) {
            c.duty = duty;
        }
        Ok(())
    }

    /// Takes a pulse request at `now`.
    ///
    /// The start is the earliest tick at or after the asked one at which the channel is free and
    /// past its minimum off-time, every thermal bucket of the channel has room for the pulse, and
    /// the inrush window fits under the cap (see the module docs). Reported as `Accepted` if that
    /// is the asked tick, else `Delayed` with the constraint that set it.
    ///
    /// # Errors
    /// A [`Refusal`]; the scheduler is then exactly as before the call.
    pub fn submit(&mut self, now: Instant, req: Request) -> Result<Admission, Refusal> {
        let t = self.clock.extend(now).ok_or(Refusal::TimeWentBackwards)?;
        let ch = req.channel.0 as usize;
        let lim = *self.limits.get(ch).ok_or(Refusal::UnknownChannel)?;
        let chan = self.channels[ch];
        let d = req.duration.0;
        if d == 0 {
            return Err(Refusal::ZeroDuration);
        }
        if d < lim.min_on().0 {
            return Err(Refusal::BelowMinOn {
                min_on: lim.min_on(),
            });
        }
        if let Some(max_on) = lim.max_on() {
            if d > max_on.0 {
                return Err(Refusal::AboveMaxOn { max_on });
            }
        }
        if d > MAX_SPAN.0 {
            return Err(Refusal::BeyondHorizon);
        }
        let wanted = match req.start {
            Start::Now => t,
            Start::At(at) => {
                let ahead = at.since(now);
                if ahead < 0 {
                    return Err(Refusal::StartPassed);
                }
                t + ahead as u64
            }
        };
        if self.len as usize >= QUEUE {
            return Err(Refusal::QueueFull);
        }

        // 1. The channel: after its last pulse and the minimum off-time.
        let mut start = wanted;
        let mut reason = None;
        if let Some(tail) = chan.tail {
            let ready = tail.end + lim.min_off().0 as u64;
            if start < ready {
                reason = Some(if start < tail.end {
                    DelayReason::ChannelBusy
                } else {
                    DelayReason::OffTime
                });
                start = ready;
            }
        }

        // 2. Thermal buckets: room for this pulse's heat.
        let (pull_in, held) = lim.phases(d);
        let buckets = lim.buckets();
        let mut plans = [None; 2];
        for (k, b) in buckets.iter().enumerate() {
            let Some(b) = b else { continue };
            let plan = b.plan(pull_in, held, lim.min_on().0);
            plans[k] = Some(plan);
            let (level, since) = match chan.tail {
                Some(tail) => (tail.heat[k], tail.end),
                None => (0, 0),
            };
            let wait = b.earliest(level, &plan).ok_or(Refusal::ThermalBudget)?;
            let fits = since + wait;
            if fits > start {
                start = fits;
                reason = Some(DelayReason::Thermal);
            }
        }

        // 3. Inrush: stagger behind other windows.
        let window = lim.inrush_window().0.min(d);
        if window > 0 && (self.inrush_cap as usize) < QUEUE {
            let mut open: heapless::Vec<(u64, u64), QUEUE> = heapless::Vec::new();
            for &slot in &self.order[..self.len as usize] {
                let p = &self.slots[slot as usize];
                if p.window > 0 {
                    let _ = open.push((p.start, p.start + p.window as u64));
                }
            }
            let s = inrush::earliest_start(&open, start, window as u64, self.inrush_cap);
            if s > start {
                start = s;
                reason = Some(DelayReason::Inrush);
            }
        }

        // Horizon and the caller's patience.
        if start + d as u64 - t > MAX_SPAN.0 as u64 {
            return Err(Refusal::BeyondHorizon);
        }
        if let (Some(max), Some(why)) = (req.max_delay, reason) {
            if start - wanted > max.0 as u64 {
                return Err(Refusal::TooLate {
                    earliest: self.clock.instant(start),
                    reason: why,
                });
            }
        }

        // The new bounds (checked again: the scheduler never commits a bound above capacity).
        let mut heat = [0u32; 2];
        for (k, b) in buckets.iter().enumerate() {
            let (Some(b), Some(plan)) = (b, &plans[k]) else {
                continue;
            };
            let (level, since) = match chan.tail {
                Some(tail) => (tail.heat[k], tail.end),
                None => (0, start),
            };
            heat[k] = b
                .commit(level, start - since, plan)
                .ok_or(Refusal::ThermalBudget)?;
        }

        // Commit.
        let hold = match lim.hold() {
            Some(h) if d > h.after().0 => h.after().0,
            _ => 0,
        };
        let pulse = Pulse {
            next: start,
            start,
            duration: d,
            hold,
            window,
            heat,
            channel: req.channel.0,
            stage: Stage::Queued,
        };
        let Some(slot) = self.slots.iter().position(|p| p.stage == Stage::Free) else {
            return Err(Refusal::QueueFull);
        };
        self.slots[slot] = pulse;
        self.insert_sorted(slot as u8);
        self.channels[ch].tail = Some(Tail {
            end: pulse.end(),
            heat,
        });
        self.clock.commit(now, t);
        let at = self.clock.instant(start);
        Ok(match reason {
            Some(reason) if start != wanted => Admission::Delayed { reason, until: at },
            _ => Admission::Accepted { start: at },
        })
    }

    /// The edges due at `now`, pushed onto `out` in time order (at most until it is full), and
    /// when to call again.
    ///
    /// Edges already due but not fitting into `out` stay pending: [`WakeCause::OutputFull`] with
    /// `at = now`. With nothing pending, [`WakeCause::KeepAlive`] [`KEEP_ALIVE`] ticks ahead.
    ///
    /// # Errors
    /// [`ScheduleError::TimeWentBackwards`]; nothing changes.
    pub fn poll<const N: usize>(
        &mut self,
        now: Instant,
        out: &mut EdgeBuffer<N>,
    ) -> Result<Wake, ScheduleError> {
        let t = self
            .clock
            .extend(now)
            .ok_or(ScheduleError::TimeWentBackwards)?;
        self.clock.commit(now, t);
        while self.len > 0 {
            let slot = self.order[self.len as usize - 1] as usize;
            let p = self.slots[slot];
            if p.next > t {
                break;
            }
            if out.is_full() {
                return Ok(Wake {
                    at: now,
                    cause: WakeCause::OutputFull,
                });
            }
            let ch = p.channel as usize;
            let action = match p.stage {
                Stage::Queued => {
                    self.channels[ch].started = Some(Tail {
                        end: p.end(),
                        heat: p.heat,
                    });
                    PinAction::On
                }
                Stage::PullIn if p.hold > 0 => PinAction::HoldStart {
                    duty: self.channels[ch].duty,
                },
                _ => PinAction::Off,
            };
            let _ = out.push(PinEvent {
                channel: ChannelId(p.channel),
                at: self.clock.instant(p.next),
                action,
            });
            let (stage, next) = match action {
                PinAction::On if p.hold > 0 => (Stage::PullIn, p.start + p.hold as u64),
                PinAction::On => (Stage::PullIn, p.end()),
                PinAction::HoldStart { .. } => (Stage::Held, p.end()),
                PinAction::Off => (Stage::Free, 0),
            };
            self.slots[slot].stage = stage;
            self.slots[slot].next = next;
            if stage == Stage::Free {
                self.len -= 1;
            } else {
                self.sift_head();
            }
        }
        Ok(self.wake(now, t))
    }

    /// Ends `channel`'s pulse in flight as soon as allowed — at `now`, or at its minimum on-time
    /// if that has not run yet — and removes the channel's queued pulses. Poll afterwards for the
    /// edge. The channel's next pulse waits for the minimum off-time from the new off edge.
    ///
    /// # Errors
    /// [`ScheduleError::TimeWentBackwards`], [`ScheduleError::UnknownChannel`]; nothing changes.
    pub fn stop(&mut self, now: Instant, channel: ChannelId) -> Result<Stopping, ScheduleError> {
        let t = self
            .clock
            .extend(now)
            .ok_or(ScheduleError::TimeWentBackwards)?;
        let ch = channel.0 as usize;
        let lim = *self.limits.get(ch).ok_or(ScheduleError::UnknownChannel)?;
        self.clock.commit(now, t);
        let mut cancelled = 0u8;
        let mut running = None;
        let mut i = 0;
        while i < self.len as usize {
            let slot = self.order[i] as usize;
            let p = self.slots[slot];
            if p.channel as usize != ch {
                i += 1;
            } else if p.stage == Stage::Queued {
                self.slots[slot] = Pulse::FREE;
                self.remove_at(i);
                cancelled += 1;
            } else {
                running = Some(slot);
                i += 1;
            }
        }
        let Some(slot) = running else {
            self.channels[ch].tail = self.channels[ch].started;
            return Ok(Stopping::NotRunning { cancelled });
        };
        let mut p = self.slots[slot];
        let earliest = p.start + lim.min_on().0 as u64;
        let off = t.max(earliest).min(p.end());
        p.duration = (off - p.start) as u32;
        p.window = p.window.min(p.duration);
        if p.stage == Stage::PullIn && p.hold >= p.duration {
            p.hold = 0;
        }
        p.next = match p.stage {
            Stage::PullIn if p.hold > 0 => p.start + p.hold as u64,
            _ => off,
        };
        self.slots[slot] = p;
        if let Some(pos) = self.order[..self.len as usize]
            .iter()
            .position(|&s| s as usize == slot)
        {
            self.remove_at(pos);
            self.insert_sorted(slot as u8);
        }
        let started = Tail {
            end: off,
            heat: p.heat,
        };
        self.channels[ch].started = Some(started);
        self.channels[ch].tail = Some(started);
        Ok(Stopping::Ending {
            off_at: self.clock.instant(off),
            deferred: if off > t {
                Some(DelayReason::MinOnTime)
            } else {
                None
            },
            cancelled,
        })
    }

    /// When to call [`Scheduler::poll`] next, as of the latest `now` (no state change).
    pub fn next_wake(&self) -> Wake {
        let t = self.clock.ticks();
        self.wake(self.clock.instant(t), t)
    }

    /// Recovers after calls more than 2³¹ ticks apart (which [`Scheduler::poll`] refuses as time
    /// going backwards): takes `now` to follow the latest `now` with *no* time elapsed. Off-times
    /// and thermal bounds then count from the latest known tick, which is conservative; edges that
    /// were due come out at the next poll, late.
    pub fn resync(&mut self, now: Instant) {
        self.clock.resync(now);
    }

    fn wake(&self, now: Instant, t: u64) -> Wake {
        if self.len == 0 {
            return Wake {
                at: now.after(KEEP_ALIVE),
                cause: WakeCause::KeepAlive,
            };
        }
        // After a poll the head is in the future; after a submit it may be due already (`now`).
        let next = self.slots[self.order[self.len as usize - 1] as usize].next;
        Wake {
            at: self.clock.instant(next.max(t)),
            cause: WakeCause::Event,
        }
    }

    /// Inserts `slot` into `order` so that it comes out after every slot whose `next` is at or
    /// before its own (descending order: after the prefix of later ones).
    fn insert_sorted(&mut self, slot: u8) {
        let key = self.slots[slot as usize].next;
        let len = self.len as usize;
        let mut i = 0;
        while i < len && self.slots[self.order[i] as usize].next > key {
            i += 1;
        }
        self.order.copy_within(i..len, i + 1);
        self.order[i] = slot;
        self.len += 1;
    }

    /// Moves the head (`order[len − 1]`), whose `next` just grew, to its place: before (towards
    /// index 0) every slot that is due at or before it. In place, no block move.
    fn sift_head(&mut self) {
        let mut i = self.len as usize - 1;
        let slot = self.order[i];
        let key = self.slots[slot as usize].next;
        while i > 0 {
            let prev = self.order[i - 1];
            if self.slots[prev as usize].next > key {
                break;
            }
            self.order[i] = prev;
            i -= 1;
        }
        self.order[i] = slot;
    }

    fn remove_at(&mut self, i: usize) {
        let len = self.len as usize;
        self.order.copy_within(i + 1..len, i);
        self.len -= 1;
    }
}
