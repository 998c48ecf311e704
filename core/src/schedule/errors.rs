//! Why the scheduler delayed, refused or rejected something: small `Copy` values, no strings.

use core::fmt;

use crate::time::{Instant, Ticks};

/// The constraint that pushed a start (or an off edge) later than asked.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum DelayReason {
    /// The channel is on (or has a pulse queued) at the asked start: the pulse waits for it to end
    /// and for the minimum off-time after that.
    ChannelBusy,
    /// The minimum off-time after the channel's previous off edge has not run out.
    OffTime,
    /// A thermal bucket (clamp or winding) has no room yet; it leaks until it has.
    Thermal,
    /// Too many coils would be in their pull-in (inrush) window at once; staggered.
    Inrush,
    /// A stop request: the pulse in flight has not yet been on for its minimum on-time.
    MinOnTime,
}

/// Why a request was not scheduled. The scheduler's state is unchanged; the request is the
/// caller's to retry, change or drop.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Refusal {
    /// No channel with that number.
    UnknownChannel,
    /// A duration of zero ticks.
    ZeroDuration,
    /// Shorter than the channel's minimum on-time: the coil might not pull in.
    BelowMinOn {
        /// The channel's minimum on-time.
        min_on: Ticks,
    },
    /// Longer than the channel's maximum on-time.
    AboveMaxOn {
        /// The channel's maximum on-time.
        max_on: Ticks,
    },
    /// Every queue slot holds a pulse that is pending or in flight.
    QueueFull,
    /// The asked start tick is already past (use [`super::Start::Now`] for "as soon as possible").
    StartPassed,
    /// The pulse would end 2³¹ ticks or more after `now`, where instants become ambiguous.
    BeyondHorizon,
    /// The pulse alone (from a cold part) does not fit a thermal bucket: it can never run.
    ThermalBudget,
    /// The earliest start that meets every constraint is later than the caller's `max_delay`.
    TooLate {
        /// The earliest start that would have been possible.
        earliest: Instant,
        /// The constraint that set it.
        reason: DelayReason,
    },
    /// `now` is before the previous call's `now` (or more than 2³¹ ticks after it).
    TimeWentBackwards,
}

/// A call the scheduler cannot act on. Nothing was changed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ScheduleError {
    /// `now` is before the previous call's `now` (or more than 2³¹ ticks after it).
    TimeWentBackwards,
    /// No channel with that number.
    UnknownChannel,
    /// The channel has no hold phase to set a duty for.
    NoHoldPhase,
    /// The duty is above the ceiling the channel's limits (and thermal budget) were built for.
    DutyAboveCeiling,
}

/// A channel's limits, or a scheduler configuration, that cannot be used.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum LimitsError {
    /// A minimum on-time of zero ticks.
    ZeroMinOn,
    /// A minimum off-time of zero ticks (two pulses would merge into one).
    ZeroMinOff,
    /// A time limit above [`super::MAX_LIMIT`] ticks.
    TooLong,
    /// A maximum on-time below the minimum on-time.
    MaxOnBelowMinOn,
    /// A hold phase that starts before the minimum on-time has run.
    HoldBeforeMinOn,
    /// A hold duty of zero.
    ZeroDuty,
    /// A hold duty above its ceiling.
    DutyAboveCeiling,
    /// A fraction outside (0, 1), or not finite.
    NotAFraction,
    /// A thermal bucket of zero capacity.
    ZeroCapacity,
    /// A thermal time constant of zero ticks.
    ZeroTimeConstant,
    /// A thermal bucket so small that a minimum-length pulse may never fit it.
    BucketTooSmall,
    /// A value that does not fit its integer representation.
    OutOfRange,
    /// NaN, ±∞ or a negative value where a non-negative number is required.
    NotFiniteOrNegative,
    /// An inrush cap of zero coils.
    ZeroInrushCap,
    /// The driver design behind the limits could not be evaluated.
    Design(crate::Error),
    /// A thermal bucket or heat rating, but the crate is built without its `thermal-budget`
    /// feature.
    FeatureDisabled,
}

impl fmt::Display for DelayReason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            DelayReason::ChannelBusy => "channel busy with an earlier pulse",
            DelayReason::OffTime => "minimum off-time after the previous pulse",
            DelayReason::Thermal => "thermal budget needs time to recover",
            DelayReason::Inrush => "too many coils pulling in at once",
            DelayReason::MinOnTime => "pulse has not reached its minimum on-time",
        })
    }
}

impl fmt::Display for Refusal {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Refusal::UnknownChannel => f.write_str("unknown channel"),
            Refusal::ZeroDuration => f.write_str("zero duration"),
            Refusal::BelowMinOn { min_on } => {
                write!(f, "shorter than the minimum on-time of {} ticks", min_on.0)
            }
            Refusal::AboveMaxOn { max_on } => {
                write!(f, "longer than the maximum on-time of {} ticks", max_on.0)
            }
            Refusal::QueueFull => f.write_str("queue full"),
            Refusal::StartPassed => f.write_str("start tick already passed"),
            Refusal::BeyondHorizon => f.write_str("ends too far ahead (2^31 ticks or more)"),
            Refusal::ThermalBudget => f.write_str("pulse exceeds the thermal budget"),
            Refusal::TooLate { earliest, reason } => write!(
                f,
                "earliest start {} exceeds the allowed delay ({reason})",
                earliest.0
            ),
            Refusal::TimeWentBackwards => f.write_str("time went backwards"),
        }
    }
}

impl fmt::Display for ScheduleError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            ScheduleError::TimeWentBackwards => "time went backwards",
            ScheduleError::UnknownChannel => "unknown channel",
            ScheduleError::NoHoldPhase => "channel has no hold phase",
            ScheduleError::DutyAboveCeiling => "hold duty above the channel's ceiling",
        })
    }
}

impl fmt::Display for LimitsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LimitsError::ZeroMinOn => f.write_str("minimum on-time of zero"),
            LimitsError::ZeroMinOff => f.write_str("minimum off-time of zero"),
            LimitsError::TooLong => f.write_str("time limit too long for the scheduler"),
            LimitsError::MaxOnBelowMinOn => f.write_str("maximum on-time below minimum on-time"),
            LimitsError::HoldBeforeMinOn => f.write_str("hold phase starts before minimum on-time"),
            LimitsError::ZeroDuty => f.write_str("hold duty of zero"),
            LimitsError::DutyAboveCeiling => f.write_str("hold duty above its ceiling"),
            LimitsError::NotAFraction => f.write_str("not a fraction between 0 and 1"),
            LimitsError::ZeroCapacity => f.write_str("thermal bucket of zero capacity"),
            LimitsError::ZeroTimeConstant => f.write_str("thermal time constant of zero"),
            LimitsError::BucketTooSmall => {
                f.write_str("thermal bucket too small for a minimum-length pulse")
            }
            LimitsError::OutOfRange => f.write_str("value out of range"),
            LimitsError::NotFiniteOrNegative => f.write_str("not a finite non-negative number"),
            LimitsError::ZeroInrushCap => f.write_str("inrush cap of zero"),
            LimitsError::Design(e) => write!(f, "design: {e}"),
            LimitsError::FeatureDisabled => {
                f.write_str("thermal budget left out of this build (feature `thermal-budget`)")
            }
        }
    }
}

impl core::error::Error for Refusal {}
impl core::error::Error for ScheduleError {}
impl core::error::Error for LimitsError {}
