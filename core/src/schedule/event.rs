//! What the scheduler tells the pins to do, and when to call it again.

use super::limits::HoldDuty;
use super::request::ChannelId;
use crate::time::Instant;

/// What to do to a channel's output.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum PinAction {
    /// Switch on at full drive (start of the pull-in phase).
    On,
    /// Pull-in is over: switch to PWM at this duty until the off edge.
    HoldStart {
        /// The hold duty, as set for the channel when the event was emitted.
        duty: HoldDuty,
    },
    /// Switch off.
    Off,
}

/// One edge on one channel.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PinEvent {
    /// The channel.
    pub channel: ChannelId,
    /// The tick the edge is scheduled for (at or before the `now` it was polled with).
    pub at: Instant,
    /// The edge.
    pub action: PinAction,
}

/// Why [`Wake::at`] is what it is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum WakeCause {
    /// The next scheduled edge.
    Event,
    /// The output buffer filled up with edges still due: call again at once (`at` is `now`).
    OutputFull,
    /// Nothing is pending: call again by then anyway, so that consecutive calls stay less than
    /// 2³¹ ticks apart ([`super::KEEP_ALIVE`] after `now`).
    KeepAlive,
}

/// When to call [`super::Scheduler::poll`] next.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Wake {
    /// The tick.
    pub at: Instant,
    /// Why.
    pub cause: WakeCause,
}
