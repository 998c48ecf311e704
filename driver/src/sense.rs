//! The current-sense seam: what the driver needs from a board's converter and comparator.
//!
//! A coil channel on a real board is a low-side switch, an optional hold PWM, a current-sense
//! resistor into an ADC, and (often) a comparator on the same sense voltage feeding a timer
//! capture input. The driver sees it through:
//!
//! | role | trait |
//! |---|---|
//! | switch on/off | [`embedded_hal::digital::OutputPin`] |
//! | hold (economiser) PWM after pull-in | [`embedded_hal::pwm::SetDutyCycle`] |
//! | waits of the blocking helpers only | [`embedded_hal::delay::DelayNs`] |
//! | rise of the coil current | [`CurrentSense`] (this module) |
//! | time | [`crate::TickSource`] |
//!
//! `docs/porting.md` says what a real board implements.

use coilwise::{Amps, Ticks};

/// Why a current-sense operation failed. Small and `Copy`, like the embedded-hal error kinds.
#[non_exhaustive]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum SenseErrorKind {
    /// The converter or comparator is in use by another channel or still busy.
    Busy,
    /// The board cannot sample at the requested period (too fast, or zero).
    PeriodUnsupported,
    /// The caller's buffer is shorter than the capture, or a plan asks for more samples than the
    /// board can take in one capture.
    BufferLength,
    /// Samples were lost (the converter outran the transfer into the buffer).
    Overrun,
    /// The requested comparator level is outside the converter's range.
    LevelOutOfRange,
    /// Any other hardware failure.
    Other,
}

/// Errors of a [`CurrentSense`] implementation map onto a [`SenseErrorKind`].
pub trait SenseError: core::fmt::Debug {
    /// The kind of this error.
    fn kind(&self) -> SenseErrorKind;
}

impl SenseError for SenseErrorKind {
    fn kind(&self) -> SenseErrorKind {
        *self
    }
}

/// Conversion between converter counts and coil current.
///
/// `i = (counts − offset_counts) · amps_per_count`, in amperes. For a shunt `R_s` (Ω) into an
/// amplifier of gain `G` and an `N`-bit converter with reference `V_ref` (V):
/// `amps_per_count = V_ref / (2^N · G · R_s)`. Example (invented values): 3.3 V, 12 bit, G = 20,
/// R_s = 0.1 Ω → 4.03 mA per count, full scale 16.5 A.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SenseScale {
    /// Current of one count, A. Finite and > 0 for a usable channel.
    pub amps_per_count: f32,
    /// Count that reads at zero current (amplifier offset), counts.
    pub offset_counts: u16,
    /// Largest count the converter returns (e.g. 4095 for 12 bit).
    pub full_scale_counts: u16,
}

impl SenseScale {
    /// Current for a converter reading, `(counts − offset) · amps_per_count`, A; readings below
    /// the offset give a negative current (noise around zero). Exact to f32 rounding; never NaN
    /// for a finite scale.
    pub fn amps(&self, counts: u16) -> Amps {
        Amps::new((f32::from(counts) - f32::from(self.offset_counts)) * self.amps_per_count)
    }
}

/// What to measure at the next switch-on of a channel: a sample buffer and a comparator level.
///
/// On a real board both are started by hardware from the edge that switches the coil on (the
/// timer that drives the switch triggers the ADC sequence and arms the capture input), so the
/// application only prepares them and reads them later; nothing blocks.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SensePlan {
    /// Time of sample 0 after the switch-on edge, ticks.
    pub first: Ticks,
    /// Spacing of the samples, ticks (> 0).
    pub period: Ticks,
    /// Number of samples (≤ the board's [`CurrentSense::MAX_SAMPLES`]; 0 = no capture).
    pub samples: usize,
    /// Comparator trip level in converter counts (`None`: no comparator reading).
    pub trip_level: Option<u16>,
}

/// Result of one completed capture.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Capture {
    /// Number of samples written to the front of the caller's buffer.
    pub len: usize,
    /// Time of sample 0 after switch-on actually used, ticks.
    pub first: Ticks,
    /// Sample period actually used, in ticks of the board's [`TickSource`]
    /// (may differ from the plan when the converter timer rounds it).
    ///
    /// [`TickSource`]: crate::TickSource
    pub period: Ticks,
}

/// What the comparator saw since the latest switch-on.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Crossing {
    /// The sensed current first reached the trip level this many ticks after the switch-on edge.
    After(Ticks),
    /// No crossing so far (the application decides when "so far" means never: open coil, high
    /// resistance, low supply — or a broken comparator).
    NotYet,
}

/// Current sensing on one coil channel: equally spaced samples, and a comparator time-to-level,
/// both started by the channel's switch-on edge.
///
/// Time zero is the most recent switch-on edge of the channel's drive output (a rising
/// `OutputPin::set_high` from off). Counts are raw converter counts; [`CurrentSense::scale`]
/// converts them to amperes.
///
/// The calls never block: [`CurrentSense::arm`] prepares the next switch-on,
/// [`CurrentSense::samples`] and [`CurrentSense::crossing`] report what the hardware has
/// captured so far.
pub trait CurrentSense {
    /// The board's error type.
    type Error: SenseError;

    /// Largest number of samples one capture can hold.
    const MAX_SAMPLES: usize;

    /// Counts-to-amperes conversion of this channel.
    fn scale(&self) -> SenseScale;

    /// One conversion now (for the zero offset, taken with the coil off).
    fn sample_now(&mut self) -> Result<u16, Self::Error>;

    /// Prepares the capture and the comparator for the next switch-on edge of this channel
    /// (replacing any previous plan). `plan.samples = 0` and `trip_level = None` disarm.
    fn arm(&mut self, plan: &SensePlan) -> Result<(), Self::Error>;

    /// Copies the capture started by the latest switch-on into `out` once it is complete:
    /// `Ok(Some(capture))`; `Ok(None)` while samples are still being taken (or nothing was armed).
    /// Sample `k` was taken `first + k·period` ticks after switch-on. A buffer shorter than the
    /// capture is [`SenseErrorKind::BufferLength`].
    fn samples(&mut self, out: &mut [u16]) -> Result<Option<Capture>, Self::Error>;

    /// The comparator's first crossing of the trip level since the latest switch-on.
    fn crossing(&mut self) -> Result<Crossing, Self::Error>;
}
