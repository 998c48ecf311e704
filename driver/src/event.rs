//! What the driver reports: a fixed-capacity queue of [`Event`]s, with losses counted.
//!
//! The driver pushes an event for every finding, delay, refusal, isolation and recovery; the
//! application pops them ([`crate::Driver::pop_event`]) when it likes (a main loop, a
//! lower-priority task). When the queue is full the event is dropped and *counted*: the first
//! pop after a loss puts an [`EventKind::Lost`] with the number dropped at the end of the queue
//! (where the dropped events would have been), and [`EventQueue::lost`] keeps the total. So `events popped (Lost excluded) + Σ Lost.count +
//! pending loss = events emitted`, always ([`EventQueue::emitted`]).

use coilwise::diagnosis::Finding;
use coilwise::schedule::DelayReason;
use coilwise::Instant;

use crate::error::ErrorKind;
use crate::request::Refused;
use crate::sense::Crossing;

/// Which measurement a verdict comes from.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Source {
    /// A diagnostic pulse below pull-in (commissioning, supply re-check, re-enable).
    Probe,
    /// The rise of a real pulse (converter fit and comparator, combined).
    Rise,
}

/// Why a diagnostic pulse was run.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ProbePurpose {
    /// Commissioning: before the channel is first used.
    Commission,
    /// The channel's supply group was flagged low: is it back in range?
    SupplyCheck,
    /// An operator asked to re-enable an isolated channel.
    Reenable,
}

/// The comparator's part of a rise verdict.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ComparatorReading {
    /// What the comparator saw.
    pub crossing: Crossing,
    /// Its finding alone, against the healthy crossing band.
    pub finding: Finding,
}

/// What happened.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum EventKind {
    /// A measurement was judged.
    Judged {
        /// Which measurement.
        source: Source,
        /// Why it was taken (diagnostic pulses only).
        purpose: Option<ProbePurpose>,
        /// The channel's pulse count at the measured pulse (rises only; 0 for probes).
        pulse: u32,
        /// The finding. Its estimates (current, time constant, resistance, inductance, fit
        /// quality) stay with the channel: [`crate::Driver::last_verdict`] until its next
        /// measurement, so that an event stays small.
        finding: Finding,
        /// The comparator's reading (rises with a comparator band only).
        comparator: Option<ComparatorReading>,
        /// Judged against the channel's learnt baseline (diagnostic pulses of a channel with a
        /// learnt or imported baseline; false for rises and during learning).
        baseline: bool,
    },
    /// A request was taken at its asked start.
    Accepted {
        /// On edge.
        start: Instant,
    },
    /// A request was taken, starting later than asked.
    Delayed {
        /// The constraint that set the start.
        reason: DelayReason,
        /// On edge.
        start: Instant,
    },
    /// A request was refused (also reported by the call's return value when refused there).
    Refused(Refused),
    /// The channel was taken out of service after a fault.
    Isolated {
        /// The finding that isolated it.
        finding: Finding,
        /// When its pulse in flight goes off (`None`: it was not on).
        off_at: Option<Instant>,
        /// Queued pulses dropped.
        dropped: u8,
    },
    /// A hardware error took the channel out of service.
    HardwareFault(ErrorKind),
    /// A rise or probe found the supply low: the channel's supply group is held back until a
    /// diagnostic pulse finds it in range again; the coil is not blamed.
    SupplyLow {
        /// The supply group.
        group: u8,
    },
    /// A diagnostic pulse found the supply group back in range.
    SupplyRecovered {
        /// The supply group.
        group: u8,
    },
    /// An isolated channel passed its diagnostic pulse after [`crate::Driver::reenable`] and is
    /// back in service.
    Reenabled,
    /// Commissioning finished.
    Commissioned {
        /// Channels in service (the rest are isolated).
        in_service: u8,
    },
    /// Commissioning learnt the channel's baseline from this many healthy diagnostic pulses:
    /// store [`crate::Driver::baseline_record`] (e.g. in flash) to keep it across resets.
    BaselineLearned {
        /// Pulses learnt.
        pulses: u8,
    },
    /// Commissioning learnt no baseline for the channel (a pulse was not healthy against the
    /// design bands, or too few pulses): later pulses are judged against the design bands.
    BaselineNotLearned(coilwise::diagnosis::LearnError),
    /// A stored baseline record was refused ([`crate::Driver::import_baseline`]): the channel
    /// learns afresh at commissioning.
    BaselineRejected(crate::baseline::BaselineError),
    /// This many events before this one were dropped because the queue was full.
    Lost {
        /// Number dropped.
        count: u32,
    },
}

/// One event: when, on which channel, what.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Event {
    /// When the driver noticed it (for a verdict: the measured pulse's switch-on edge).
    pub at: Instant,
    /// The channel (0 for driver-wide events such as [`EventKind::Commissioned`]).
    pub channel: u8,
    /// What.
    pub kind: EventKind,
}

/// A ring buffer of up to `E` events (1 ≤ E ≤ 255) that counts what it drops.
#[derive(Clone, Debug)]
pub struct EventQueue<const E: usize> {
    items: [Option<Event>; E],
    head: u8,
    len: u8,
    /// Dropped since the last [`EventKind::Lost`] was queued.
    pending_lost: u32,
    lost: u32,
    emitted: u32,
    /// Time and channel of the latest event dropped.
    last: (Instant, u8),
}

impl<const E: usize> Default for EventQueue<E> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const E: usize> EventQueue<E> {
    const CAPACITY_OK: () = assert!(E >= 2 && E <= 255, "EventQueue needs 2..=255 slots");

    /// An empty queue.
    pub const fn new() -> Self {
        #[allow(clippy::let_unit_value)]
        let () = Self::CAPACITY_OK;
        Self {
            items: [None; E],
            head: 0,
            len: 0,
            pending_lost: 0,
            lost: 0,
            emitted: 0,
            last: (Instant(0), 0),
        }
    }

    /// Empties the queue and its counts in place, as [`EventQueue::new`] builds it (no queue-sized
    /// temporary on the stack).
    pub(crate) fn reset(&mut self) {
        for item in self.items.iter_mut() {
            *item = None;
        }
        self.head = 0;
        self.len = 0;
        self.pending_lost = 0;
        self.lost = 0;
        self.emitted = 0;
        self.last = (Instant(0), 0);
    }

    /// Events waiting.
    pub const fn len(&self) -> usize {
        self.len as usize
    }

    /// Whether no event is waiting.
    pub const fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// Events dropped for want of room since the start (saturating at `u32::MAX`).
    pub const fn lost(&self) -> u32 {
        self.lost
    }

    /// Events emitted by the driver since the start (queued or lost; [`EventKind::Lost`] markers
    /// not counted), wrapping at 2³².
    pub const fn emitted(&self) -> u32 {
        self.emitted
    }

    fn put(&mut self, e: Event) {
        let at = (self.head as usize + self.len as usize) % E;
        self.items[at] = Some(e);
        self.len += 1;
    }

    /// Queues `e`, or counts it as lost when the queue is full. Never blocks, never panics.
    pub fn push(&mut self, e: Event) {
        self.emitted = self.emitted.wrapping_add(1);
        if self.len as usize >= E {
            self.pending_lost = self.pending_lost.saturating_add(1);
            self.lost = self.lost.saturating_add(1);
            self.last = (e.at, e.channel);
            return;
        }
        self.put(e);
    }

    /// The oldest event, removed from the queue.
    pub fn pop(&mut self) -> Option<Event> {
        if self.len == 0 {
            return None;
        }
        let e = self.items[self.head as usize].take();
        self.head = ((self.head as usize + 1) % E) as u8;
        self.len -= 1;
        // Everything dropped came after everything still queued: the marker goes last, in the
        // slot just freed, at the time and channel of the last event dropped.
        if self.pending_lost > 0 {
            let (at, channel) = self.last;
            self.put(Event {
                at,
                channel,
                kind: EventKind::Lost {
                    count: self.pending_lost,
                },
            });
            self.pending_lost = 0;
        }
        e
    }

    /// Events dropped that no [`EventKind::Lost`] in the queue reports yet (non-zero only while
    /// the queue is full).
    pub const fn unreported_loss(&self) -> u32 {
        self.pending_lost
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ev(i: u32) -> Event {
        Event {
            at: Instant(i),
            channel: 0,
            kind: EventKind::Reenabled,
        }
    }

    #[test]
    fn keeps_order_and_counts_losses() {
        let mut q = EventQueue::<3>::new();
        for i in 0..5 {
            q.push(ev(i));
        }
        assert_eq!(q.lost(), 2);
        assert_eq!(q.unreported_loss(), 2);
        assert_eq!(q.pop().map(|e| e.at), Some(Instant(0)));
        // The marker took the freed slot: still full.
        assert_eq!(q.unreported_loss(), 0);
        q.push(ev(9));
        assert_eq!(q.lost(), 3);
        assert_eq!(q.pop().map(|e| e.at), Some(Instant(1)));
        assert_eq!(q.pop().map(|e| e.at), Some(Instant(2)));
        assert_eq!(q.pop().map(|e| e.kind), Some(EventKind::Lost { count: 2 }));
        assert_eq!(q.pop().map(|e| e.kind), Some(EventKind::Lost { count: 1 }));
        assert_eq!(q.pop(), None);
        q.push(ev(10));
        assert_eq!(q.pop().map(|e| e.at), Some(Instant(10)));
        assert_eq!(q.emitted(), 7);
    }
}
