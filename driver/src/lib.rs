//! # coilwise-driver: the coil-driver runtime on embedded-hal 1.0
//!
//! What a relay / solenoid-valve board needs between its HAL and the `coilwise` core: build
//! the channels from their designs, commission them (the core's arithmetic against reference
//! values, the converter's zero, a diagnostic pulse below pull-in per channel), then take pulse
//! requests and drive them through the core's scheduler — every real pulse's rise captured and
//! judged, a faulty coil isolated, a sagging supply held back until a diagnostic pulse finds it
//! in range again. The application calls it; it is not a programme the application hands over.
//!
//! A valve scheduled from the tool's tick constants (`coilwise constants
//! examples/greenhouse-valve.toml`: `MIN_ON_TICKS = 19_285`, `MIN_OFF_TICKS = 23_704` at 1 MHz),
//! on hardware that does nothing, serviced at the instants the driver asks for:
//!
//! ```
//! use coilwise::schedule::ChannelLimits;
//! use coilwise::{Instant, TickRate, Ticks};
//! use coilwise_driver::*;
//! # use core::convert::Infallible;
//! # struct Pin;
//! # impl embedded_hal::digital::ErrorType for Pin { type Error = Infallible; }
//! # impl embedded_hal::digital::OutputPin for Pin {
//! #     fn set_low(&mut self) -> Result<(), Infallible> { Ok(()) }
//! #     fn set_high(&mut self) -> Result<(), Infallible> { Ok(()) }
//! # }
//! # impl embedded_hal::pwm::ErrorType for Pin { type Error = Infallible; }
//! # impl embedded_hal::pwm::SetDutyCycle for Pin {
//! #     fn max_duty_cycle(&self) -> u16 { 1000 }
//! #     fn set_duty_cycle(&mut self, _: u16) -> Result<(), Infallible> { Ok(()) }
//! # }
//! # struct Adc;
//! # impl CurrentSense for Adc {
//! #     type Error = SenseErrorKind;
//! #     const MAX_SAMPLES: usize = 64;
//! #     fn scale(&self) -> SenseScale {
//! #         SenseScale { amps_per_count: 2e-4, offset_counts: 0, full_scale_counts: 4095 }
//! #     }
//! #     fn sample_now(&mut self) -> Result<u16, SenseErrorKind> { Ok(0) }
//! #     fn arm(&mut self, _: &SensePlan) -> Result<(), SenseErrorKind> { Ok(()) }
//! #     fn samples(&mut self, _: &mut [u16]) -> Result<Option<Capture>, SenseErrorKind> { Ok(None) }
//! #     fn crossing(&mut self) -> Result<Crossing, SenseErrorKind> { Ok(Crossing::NotYet) }
//! # }
//! let valve = ChannelLimits::new(Ticks(19_285), Ticks(23_704))?;
//! let configs = [ChannelConfig::from_limits(valve, 0)];
//! let mut state = DriverState::<1>::new();
//! let hw = [ChannelHw::new(Pin, Pin, Adc)];
//! let mut drv = Driver::new(&configs, &mut state, hw, TickRate::new(1_000_000)?, Instant(0), 1)?;
//! drv.commission(Instant(0))?;                   // self-check vectors; no design: no probe
//!
//! assert!(matches!(drv.request(Instant(0), 0, Pulse::now(Ticks(80_000))), Ok(Granted::Accepted { .. })));
//! // Too short to pull in: refused, with the reason.
//! assert!(drv.request(Instant(0), 0, Pulse::now(Ticks(5_000))).is_err());
//! let mut now = Instant(0);
//! while !drv.idle() {
//!     now = drv.service(now)?;                   // on at 0, off at 80 000: set a timer to it
//!     assert!(drv.status(0).unwrap().health.in_service());
//! }
//! assert_eq!(now, Instant(80_000).after(coilwise::schedule::KEEP_ALIVE));
//! while let Some(e) = drv.pop_event() {
//!     // Commissioned, Accepted, Refused: log them
//! }
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! ## Layout
//!
//! | module | concern |
//! |---|---|
//! | [`sense`], [`ticks`] | the hardware seam: current sense and tick source (the switch and PWM are embedded-hal's) |
//! | [`channel`] | channel hardware, configuration from a design or from limits, status |
//! | [`commission`] | self-check vectors, converter zero, diagnostic pulses |
//! | [`baseline`] | the learned per-coil baseline: learning, flash record export/import |
//! | [`request`] | pulse requests, cancel, release, re-enable |
//! | [`service`] | the service loop: edges, captures, verdicts, isolation |
//! | [`event`] | the event queue (losses counted) |
//! | [`error`] | set-up and run-time errors |
//! | [`selfcheck`], [`words`] | reference vectors; findings and reasons in words, for logs |
//!
//! ## Guarantees
//!
//! `no_std`, no heap, no `unsafe`, no panics on any input; nothing blocks while a capture runs
//! (`service` is O(channels + queue) plus one fit of 64 samples when a capture is complete; the
//! blocking helper [`Driver::commission_blocking`] is for start-up only). Every edge comes from
//! the core's scheduler, whose limits come from the design's worst corners.
//!
//! Verdicts are engineering estimates from first-order models and tolerance bands; they do not
//! make a coil, its wiring or the installation safe. Follow the datasheets, local electrical
//! codes and licensed practice.
//!
//! ## Features
//!
//! - `defmt`: `defmt::Format` on every public type (and the core's).
#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod baseline;
pub mod channel;
pub mod commission;
pub mod error;
pub mod event;
pub mod request;
pub mod selfcheck;
pub mod sense;
pub mod service;
pub mod ticks;
pub mod words;

pub use baseline::{BaselineError, LEARN_PULSES};
pub use channel::{
    ChannelConfig, ChannelHw, ChannelOptions, Diagnosis, Health, SenseSetup, Status, SAMPLES,
};
pub use commission::Phase;
pub use error::{DriverError, ErrorKind, SetupError};
pub use event::{ComparatorReading, Event, EventKind, EventQueue, ProbePurpose, Source};
pub use request::{Granted, Length, Pulse, Refused, Start};
pub use sense::{
    Capture, Crossing, CurrentSense, SenseError, SenseErrorKind, SensePlan, SenseScale,
};
pub use ticks::TickSource;

use coilwise::diagnosis::{FitOptions, Verdict};
use coilwise::schedule::{ChannelLimits, Scheduler, WakeCause};
use coilwise::{Celsius, Instant, TickRate};

use channel::ChanState;
use commission::ActiveProbe;

/// The driver's working state: per-channel bookkeeping, the scheduler, the event queue and
/// the capture buffer — the bulk of its memory (a few hundred bytes per channel, about 40 per
/// queue slot, about 30 per event, 128 for the buffer), supplied by the caller like a buffer:
/// [`DriverState::new`] is `const`, so it can sit in a `static` or in `main`'s frame without
/// being built on the stack and copied.
pub struct DriverState<const N: usize, const Q: usize = 8, const E: usize = 16> {
    pub(crate) chans: [ChanState; N],
    /// `None` until [`Driver::new`] builds it.
    pub(crate) sched: Option<Scheduler<N, Q>>,
    pub(crate) events: EventQueue<E>,
    /// Per supply group (numbered below `N`): flagged low.
    pub(crate) group_low: [bool; N],
    pub(crate) phase: Phase,
    pub(crate) probe: Option<ActiveProbe>,
    pub(crate) buf: [u16; SAMPLES],
}

impl<const N: usize, const Q: usize, const E: usize> Default for DriverState<N, Q, E> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: usize, const Q: usize, const E: usize> DriverState<N, Q, E> {
    /// Empty state, for [`Driver::new`].
    pub const fn new() -> Self {
        Self {
            chans: [ChanState::IDLE; N],
            sched: None,
            events: EventQueue::new(),
            group_low: [false; N],
            phase: Phase::NotStarted,
            probe: None,
            buf: [0; SAMPLES],
        }
    }

    /// The scheduler's next edge (`None`: nothing scheduled).
    pub(crate) fn next_wake(&self) -> Option<Instant> {
        let w = self.sched.as_ref()?.next_wake();
        (w.cause != WakeCause::KeepAlive).then_some(w.at)
    }
}

/// The scheduler for `configs`, built in place in `slot` (out of line: the limits array, the
/// only temporary, stays in this frame; the scheduler itself is never moved).
#[inline(never)]
fn build_scheduler<const N: usize, const Q: usize>(
    slot: &mut Option<Scheduler<N, Q>>,
    configs: &[ChannelConfig; N],
    inrush_cap: u8,
    now: Instant,
) -> Result<(), coilwise::schedule::LimitsError> {
    let limits: [ChannelLimits; N] = core::array::from_fn(|i| configs[i].limits);
    Scheduler::new_in(slot, &limits, inrush_cap, now)?;
    Ok(())
}

/// The driver: `N` channels (1…256), `Q` pulses pending or in flight (1…255), `E` events
/// queued (2…255). Borrows its channel configurations and its [`DriverState`] (`'c`); owns the
/// channels' hardware, which [`Driver::free`] gives back. Itself small (the handles, a few
/// references and the fit options).
pub struct Driver<'c, Sw, Pwm, Sense, const N: usize, const Q: usize = 8, const E: usize = 16> {
    pub(crate) configs: &'c [ChannelConfig; N],
    pub(crate) st: &'c mut DriverState<N, Q, E>,
    pub(crate) hw: [ChannelHw<Sw, Pwm, Sense>; N],
    pub(crate) rate: TickRate,
    pub(crate) options: FitOptions,
    pub(crate) inrush_cap: u8,
    /// Diagnostic pulses learnt per channel at commissioning.
    pub(crate) learn_pulses: u8,
    /// Board temperature reading, when the application gives one.
    pub(crate) board: Option<Celsius>,
}

impl<'c, Sw, Pwm, Sense, const N: usize, const Q: usize, const E: usize>
    Driver<'c, Sw, Pwm, Sense, N, Q, E>
where
    Sense: CurrentSense,
{
    /// A driver for these channels, in `state` (reset), ticks at `rate`, its clock starting at
    /// `now`, at most `inrush_cap` coils in their pull-in window at once (≥ 1; `N` for no cap).
    /// Nothing is driven until [`Driver::commission`]. The only temporary is the scheduler
    /// (about 40 bytes per queue slot).
    ///
    /// # Errors
    /// [`SetupError::Limits`] for an inrush cap of zero; [`SetupError::SupplyGroup`] for a group
    /// number ≥ `N`; [`SetupError::Capture`] when a diagnosed channel's capture does not fit the
    /// board's `MAX_SAMPLES`. `state` is then reset and unused.
    #[inline(never)]
    pub fn new(
        configs: &'c [ChannelConfig; N],
        state: &'c mut DriverState<N, Q, E>,
        hw: [ChannelHw<Sw, Pwm, Sense>; N],
        rate: TickRate,
        now: Instant,
        inrush_cap: u8,
    ) -> Result<Self, SetupError> {
        state.sched = None;
        state.events.reset();
        state.group_low = [false; N];
        state.phase = Phase::NotStarted;
        state.probe = None;
        for c in state.chans.iter_mut() {
            *c = ChanState::new(now);
        }
        for (i, c) in configs.iter().enumerate() {
            let channel = i as u8;
            if usize::from(c.supply_group) >= N {
                return Err(SetupError::SupplyGroup { channel });
            }
            if c.diagnosis.is_some() && Sense::MAX_SAMPLES < SAMPLES {
                return Err(SetupError::Capture { channel });
            }
        }
        build_scheduler(&mut state.sched, configs, inrush_cap, now)
            .map_err(|error| SetupError::Limits { channel: 0, error })?;
        Ok(Self {
            configs,
            st: state,
            hw,
            rate,
            options: FitOptions::default(),
            inrush_cap,
            learn_pulses: baseline::LEARN_PULSES,
            board: None,
        })
    }

    /// Gives the channels' hardware back (in whatever state it is: switch the outputs off
    /// first, e.g. with [`Driver::cancel`] and a last [`Driver::service`]).
    pub fn free(self) -> [ChannelHw<Sw, Pwm, Sense>; N] {
        self.hw
    }

    /// Whether nothing is pending: no pulse queued or on, no capture or diagnostic pulse in
    /// progress or due, no request waiting (the application may sleep until its next request;
    /// [`Driver::service`] still wants a call within 2³⁰ ticks).
    pub fn idle(&self) -> bool {
        self.st.sched.as_ref().is_none_or(|s| s.pending() == 0)
            && self.st.probe.is_none()
            && self
                .st
                .chans
                .iter()
                .all(|c| c.rise.is_none() && c.probe_due.is_none() && c.parked.is_none() && !c.on)
    }

    /// The oldest queued event.
    pub fn pop_event(&mut self) -> Option<Event> {
        self.st.events.pop()
    }

    /// The event queue (counts of events emitted and lost).
    pub fn events(&self) -> &EventQueue<E> {
        &self.st.events
    }

    /// Channel `i`'s status (`None` past the last channel).
    pub fn status(&self, i: usize) -> Option<Status> {
        let c = self.st.chans.get(i)?;
        Some(Status {
            health: c.health,
            on: c.on,
            measuring: c.rise.is_some() || self.st.probe.is_some_and(|p| p.channel == i),
            supply_low: self.st.group_low[usize::from(self.configs[i].supply_group)],
            awaiting_supply_check: c.parked.is_some(),
            pulses: c.pulses,
            last_finding: c.last_finding,
            rest_at: c.rest_at,
        })
    }

    /// Channel `i`'s latest verdict with its estimates (kept until its next measurement; the
    /// [`EventKind::Judged`] event carries the finding alone).
    pub fn last_verdict(&self, i: usize) -> Option<&Verdict> {
        self.st.chans.get(i).and_then(|c| c.last_verdict.as_ref())
    }

    /// Channel `i`'s configuration.
    pub fn config(&self, i: usize) -> Option<&'c ChannelConfig> {
        self.configs.get(i)
    }

    /// Channel `i`'s converter zero and comparator, once commissioned.
    pub fn sense_setup(&self, i: usize) -> Option<&SenseSetup> {
        self.st.chans.get(i).and_then(|c| c.setup.as_ref())
    }

    /// The limits the scheduler enforces on every channel (e.g. for an independent monitor).
    pub fn limits(&self) -> [ChannelLimits; N] {
        core::array::from_fn(|i| self.configs[i].limits)
    }

    /// The inrush cap the driver was built with.
    pub const fn inrush_cap(&self) -> u8 {
        self.inrush_cap
    }

    /// The tick rate the driver was built with.
    pub const fn rate(&self) -> TickRate {
        self.rate
    }

    /// Queues an event on `channel`.
    pub(crate) fn emit(&mut self, at: Instant, channel: usize, kind: EventKind) {
        self.st.events.push(Event {
            at,
            channel: channel as u8,
            kind,
        });
    }
}
