//! What can go wrong: at set-up ([`SetupError`]) and at run time ([`DriverError`]).
//!
//! Small `Copy` values, as the embedded-hal error kinds: a board's own error types are mapped to
//! an [`ErrorKind`] at the seam and never travel further.

use core::fmt;

use coilwise::schedule::{LimitsError, ScheduleError};

use crate::sense::SenseErrorKind;

/// Why a hardware or bookkeeping call of the driver failed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ErrorKind {
    /// The switch output (`OutputPin`) reported an error.
    Switch,
    /// The hold PWM (`SetDutyCycle`) reported an error.
    Pwm,
    /// The current sense reported an error of this kind.
    Sense(SenseErrorKind),
    /// A capture did not complete in twice its planned length (converter stalled).
    CaptureMissing,
    /// `now` went backwards, or more than 2³¹ ticks passed between calls.
    TimeWentBackwards,
    /// No channel with that number.
    UnknownChannel,
    /// The call needs a finished commissioning (or, for `commission`, one not yet started).
    Phase,
    /// The core's calculations failed their reference values on this device: nothing is driven.
    SelfCheck,
    /// The channel is not isolated (nothing to re-enable).
    NotIsolated,
    /// A stored baseline record was refused (the channel learns afresh).
    Baseline(crate::baseline::BaselineError),
}

/// A run-time error: which channel (if any) and what kind.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DriverError {
    /// The channel, when the error belongs to one.
    pub channel: Option<u8>,
    /// What failed.
    pub kind: ErrorKind,
}

impl DriverError {
    pub(crate) const fn on(channel: usize, kind: ErrorKind) -> Self {
        Self {
            // Channel counts are checked ≤ 256 at construction.
            channel: Some(channel as u8),
            kind,
        }
    }

    pub(crate) const fn general(kind: ErrorKind) -> Self {
        Self {
            channel: None,
            kind,
        }
    }
}

impl From<ScheduleError> for ErrorKind {
    fn from(e: ScheduleError) -> Self {
        match e {
            ScheduleError::UnknownChannel => ErrorKind::UnknownChannel,
            // The driver sets no hold duty through the scheduler; every other kind is time.
            _ => ErrorKind::TimeWentBackwards,
        }
    }
}

/// Why a driver could not be built from its channel configurations. Nothing was driven.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum SetupError {
    /// A channel's design could not be evaluated.
    Design {
        /// The channel.
        channel: u8,
        /// The core's reason.
        error: coilwise::Error,
    },
    /// A channel's scheduler limits could not be built (or the inrush cap is zero).
    Limits {
        /// The channel (0 for the inrush cap).
        channel: u8,
        /// The scheduler's reason.
        error: LimitsError,
    },
    /// A channel's supply group is not below the number of channels.
    SupplyGroup {
        /// The channel.
        channel: u8,
    },
    /// A capture plan asks for no samples, more than the driver's buffer or the board's
    /// `MAX_SAMPLES`, or a period of zero ticks.
    Capture {
        /// The channel.
        channel: u8,
    },
}

impl fmt::Display for ErrorKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ErrorKind::Switch => f.write_str("switch output failed"),
            ErrorKind::Pwm => f.write_str("hold PWM failed"),
            ErrorKind::Sense(k) => write!(f, "current sense failed ({k:?})"),
            ErrorKind::CaptureMissing => f.write_str("capture did not complete"),
            ErrorKind::TimeWentBackwards => f.write_str("time went backwards"),
            ErrorKind::UnknownChannel => f.write_str("unknown channel"),
            ErrorKind::Phase => f.write_str("not allowed in this phase of commissioning"),
            ErrorKind::SelfCheck => f.write_str("self-check vectors failed on this device"),
            ErrorKind::NotIsolated => f.write_str("channel is not isolated"),
            ErrorKind::Baseline(e) => write!(f, "baseline record refused ({e:?})"),
        }
    }
}

impl fmt::Display for DriverError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.channel {
            Some(c) => write!(f, "channel {c}: {}", self.kind),
            None => write!(f, "{}", self.kind),
        }
    }
}

impl fmt::Display for SetupError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SetupError::Design { channel, error } => write!(f, "channel {channel}: {error}"),
            SetupError::Limits { channel, error } => write!(f, "channel {channel}: {error}"),
            SetupError::SupplyGroup { channel } => {
                write!(f, "channel {channel}: supply group out of range")
            }
            SetupError::Capture { channel } => {
                write!(f, "channel {channel}: capture plan unusable")
            }
        }
    }
}

impl core::error::Error for DriverError {}
impl core::error::Error for SetupError {}
