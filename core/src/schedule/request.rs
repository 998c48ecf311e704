//! What firmware asks for, and what it gets back.

use super::errors::DelayReason;
use crate::time::{Instant, Ticks};

/// A channel (one coil driver output), numbered from 0.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ChannelId(pub u8);

/// When a pulse should start.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Start {
    /// As soon as every constraint allows, from the `now` of the submit call.
    Now,
    /// At this tick or, if a constraint forbids it, as soon after as allowed. Must not be before
    /// `now` and less than 2³¹ ticks after it.
    At(Instant),
}

/// One pulse: turn `channel` on for `duration` ticks (pull-in and any hold phase included).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Request {
    /// The channel.
    pub channel: ChannelId,
    /// Total on-time from on edge to off edge, ticks.
    pub duration: Ticks,
    /// The asked start.
    pub start: Start,
    /// The longest the caller accepts the start to slip, ticks; `None` = any delay.
    pub max_delay: Option<Ticks>,
}

impl Request {
    /// A pulse of `duration` ticks on `channel`, as soon as possible, any delay accepted.
    pub const fn now(channel: ChannelId, duration: Ticks) -> Self {
        Self {
            channel,
            duration,
            start: Start::Now,
            max_delay: None,
        }
    }

    /// A pulse of `duration` ticks on `channel` from tick `at`, any delay accepted.
    pub const fn at(channel: ChannelId, duration: Ticks, at: Instant) -> Self {
        Self {
            channel,
            duration,
            start: Start::At(at),
            max_delay: None,
        }
    }

    /// The same request, refused ([`super::Refusal::TooLate`]) rather than started more than
    /// `max_delay` ticks after the asked start.
    pub const fn within(mut self, max_delay: Ticks) -> Self {
        self.max_delay = Some(max_delay);
        self
    }
}

/// A request the scheduler took: it *will* emit the pulse, from the start tick given here, for the
/// requested duration (unless stopped).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Admission {
    /// Starts at the asked tick.
    Accepted {
        /// The on edge.
        start: Instant,
    },
    /// Starts later than asked.
    Delayed {
        /// The constraint that set the start (the last one that moved it).
        reason: DelayReason,
        /// The on edge.
        until: Instant,
    },
}

impl Admission {
    /// The on edge, whichever the case.
    pub const fn start(&self) -> Instant {
        match *self {
            Admission::Accepted { start } => start,
            Admission::Delayed { until, .. } => until,
        }
    }
}

/// What [`super::Scheduler::stop`] did.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Stopping {
    /// The channel was not on. `cancelled` queued pulses were removed.
    NotRunning {
        /// Pulses removed before they started.
        cancelled: u8,
    },
    /// The pulse in flight goes off at `off_at` (poll to get the edge); `cancelled` queued pulses
    /// were removed.
    Ending {
        /// The off edge: `now`, or later when the minimum on-time has not run yet.
        off_at: Instant,
        /// `Some(DelayReason::MinOnTime)` when the off edge is later than `now`.
        deferred: Option<DelayReason>,
        /// Pulses removed before they started.
        cancelled: u8,
    },
}
