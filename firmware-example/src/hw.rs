//! The hardware seam the application is written against.
//!
//! A coil channel on a real board is a low-side switch, an optional hold PWM, a current-sense
//! resistor into an ADC, and (often) a comparator on the same sense voltage feeding a timer
//! capture input. The application sees it through:
//!
//! | role | trait |
//! |---|---|
//! | switch on/off | [`embedded_hal::digital::OutputPin`] |
//! | hold (economiser) PWM after pull-in | [`embedded_hal::pwm::SetDutyCycle`] |
//! | busy waits | [`embedded_hal::delay::DelayNs`] |
//! | rise of the coil current | [`CurrentSense`] (ours, below) |
//! | time | [`crate::ticks::TickSource`] |
//!
//! [`Channel`] bundles one coil's parts so the application can be generic over a board.
//! The QEMU board (a simulated coil plant behind these same traits) is added with the
//! application; `docs/porting.md` says what a real board implements.

use coilwise::{Amps, Ticks};
pub use embedded_hal::delay::DelayNs;
pub use embedded_hal::digital::OutputPin;
pub use embedded_hal::pwm::SetDutyCycle;

/// Why a current-sense operation failed. Small and `Copy`, like the embedded-hal error kinds.
#[non_exhaustive]
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum SenseErrorKind {
    /// The converter or comparator is in use by another channel or still busy.
    Busy,
    /// The board cannot sample at the requested period (too fast, or zero).
    PeriodUnsupported,
    /// The caller's buffer is empty or longer than the board can fill in one capture.
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
#[derive(Clone, Copy, Debug, PartialEq, defmt::Format)]
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

/// Result of one [`CurrentSense::capture`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub struct Capture {
    /// Number of samples written to the front of the buffer (`≤ buffer.len()`).
    pub len: usize,
    /// Sample period actually used, in ticks of the board's [`TickSource`]
    /// (may differ from the request when the converter timer rounds it).
    ///
    /// [`TickSource`]: crate::ticks::TickSource
    pub period: Ticks,
}

/// What the comparator saw after switch-on.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum Crossing {
    /// The sensed current first reached the trip level this many ticks after the switch-on edge.
    After(Ticks),
    /// No crossing within the timeout (open coil, high resistance, low supply — or a broken
    /// comparator; the application decides which, not the board).
    NoneBeforeTimeout,
}

/// Current sensing on one coil channel: equally spaced samples, and a comparator time-to-level.
///
/// Time zero for both is the most recent switch-on edge of the channel's drive output (on a real
/// board the converter and capture timer are started by the same timer that drives the switch).
/// Counts are raw converter counts; [`CurrentSense::scale`] converts them to amperes.
pub trait CurrentSense {
    /// The board's error type.
    type Error: SenseError;

    /// Counts-to-amperes conversion of this channel.
    fn scale(&self) -> SenseScale;

    /// Fills `samples` with equally spaced readings, the first taken at switch-on, sample `k` at
    /// `k · period` ticks after it. Blocks until the buffer is full or the board stops early
    /// (then `len < samples.len()`).
    fn capture(&mut self, period: Ticks, samples: &mut [u16]) -> Result<Capture, Self::Error>;

    /// Sets the comparator trip level, in converter counts.
    fn set_trip_level(&mut self, counts: u16) -> Result<(), Self::Error>;

    /// Waits for the comparator to trip, at most `timeout` after switch-on, and reports the
    /// crossing time in ticks since switch-on.
    fn crossing(&mut self, timeout: Ticks) -> Result<Crossing, Self::Error>;
}

/// One coil channel: drive switch, hold PWM, and current sense.
pub struct Channel<Sw, Pwm, Sense> {
    /// Low-side switch (`set_high` = coil energised).
    pub switch: Sw,
    /// Hold PWM on the same switch path (economiser); duty 0 when unused.
    pub hold: Pwm,
    /// Current sense of this coil.
    pub sense: Sense,
}

impl<Sw, Pwm, Sense> Channel<Sw, Pwm, Sense>
where
    Sw: OutputPin,
    Pwm: SetDutyCycle,
    Sense: CurrentSense,
{
    /// Bundles the three parts of a channel.
    pub fn new(switch: Sw, hold: Pwm, sense: Sense) -> Self {
        Self {
            switch,
            hold,
            sense,
        }
    }
}
