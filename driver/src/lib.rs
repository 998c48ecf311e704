//! # coilwise-driver: the coil-driver runtime on embedded-hal 1.0
//!
//! What a relay / solenoid-valve board needs between its HAL and the `coilwise` core: build
//! the channels from their designs, commission them (the core's arithmetic against reference
//! values, the converter's zero, a diagnostic pulse below pull-in per channel), then take pulse
//! requests and drive them through the core's scheduler — every real pulse's rise captured and
//! judged, a faulty coil isolated, a sagging supply held back until a diagnostic pulse finds it
//! in range again. The application calls it; it is not a programme the application hands over.
//!
//! ```ignore
//! let mut drv: Driver<_, _, _, 4> = Driver::new(configs, hw, clock.rate(), clock.now(), 1)?;
//! drv.commission(clock.now())?;                  // self-check + converter zero
//! loop {
//!     let next = drv.service(clock.now())?;      // edges, captures, verdicts
//!     while let Some(e) = drv.pop_event() { log(e) }
//!     if button() { drv.request(clock.now(), VALVE, Pulse::now(Ticks(80_000))).ok(); }
//!     timer.wake_at(next);                       // or: set the compare register
//! }
//! ```
//!
//! ## Layout
//!
//! | module | concern |
//! |---|---|
//! | [`sense`], [`ticks`] | the hardware seam: current sense and tick source (the switch and PWM are embedded-hal's) |
//! | [`channel`] | channel hardware, configuration from a design or from limits, status |
//! | [`commission`] | self-check vectors, converter zero, diagnostic pulses |
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

pub use channel::{
    ChannelConfig, ChannelHw, ChannelOptions, Diagnosis, Health, SenseSetup, Status, SAMPLES,
};
pub use error::{DriverError, ErrorKind, SetupError};
pub use event::{ComparatorReading, Event, EventKind, EventQueue, ProbePurpose, Source};
pub use request::{Granted, Length, Pulse, Refused, Start};
pub use sense::{
    Capture, Crossing, CurrentSense, SenseError, SenseErrorKind, SensePlan, SenseScale,
};
pub use ticks::TickSource;

use coilwise::diagnosis::{Criteria, FitOptions};
use coilwise::schedule::{ChannelLimits, Scheduler};
use coilwise::{Instant, TickRate};

use channel::ChanState;
use commission::{ActiveProbe, Phase};

/// The driver: `N` channels (1…256), `Q` pulses pending or in flight (1…255), `E` events
/// queued (2…255). Owns the channels' hardware; [`Driver::free`] gives it back.
///
/// Memory: a few hundred bytes per channel (its design, bands and limits), the scheduler
/// (about 40 bytes per queue slot), a 64-sample capture buffer and the event queue (about
/// 100 bytes per event). Build it straight into a `static` on a small part.
pub struct Driver<Sw, Pwm, Sense, const N: usize, const Q: usize = 8, const E: usize = 16> {
    pub(crate) hw: [ChannelHw<Sw, Pwm, Sense>; N],
    pub(crate) chans: [ChanState; N],
    pub(crate) sched: Scheduler<N, Q>,
    pub(crate) events: EventQueue<E>,
    /// Per supply group (numbered below `N`): flagged low.
    pub(crate) group_low: [bool; N],
    pub(crate) phase: Phase,
    pub(crate) probe: Option<ActiveProbe>,
    pub(crate) rate: TickRate,
    pub(crate) criteria: Criteria,
    pub(crate) options: FitOptions,
    pub(crate) buf: [u16; SAMPLES],
    pub(crate) inrush_cap: u8,
}

impl<Sw, Pwm, Sense, const N: usize, const Q: usize, const E: usize> Driver<Sw, Pwm, Sense, N, Q, E>
where
    Sense: CurrentSense,
{
    /// A driver for these channels, ticks at `rate`, its clock starting at `now`, at most
    /// `inrush_cap` coils in their pull-in window at once (≥ 1; `N` for no cap). Nothing is
    /// driven until [`Driver::commission`].
    ///
    /// # Errors
    /// [`SetupError::Limits`] for an inrush cap of zero; [`SetupError::SupplyGroup`] for a group
    /// number ≥ `N`; [`SetupError::Capture`] when a channel's rise capture does not fit the
    /// board's `MAX_SAMPLES` or the driver's buffer.
    pub fn new(
        configs: [ChannelConfig; N],
        hw: [ChannelHw<Sw, Pwm, Sense>; N],
        rate: TickRate,
        now: Instant,
        inrush_cap: u8,
    ) -> Result<Self, SetupError> {
        for (i, c) in configs.iter().enumerate() {
            let channel = i as u8;
            if usize::from(c.supply_group) >= N {
                return Err(SetupError::SupplyGroup { channel });
            }
            if c.diagnosis.is_some() && Sense::MAX_SAMPLES < SAMPLES {
                return Err(SetupError::Capture { channel });
            }
        }
        let limits: [ChannelLimits; N] = core::array::from_fn(|i| configs[i].limits);
        let sched = Scheduler::new(limits, inrush_cap, now)
            .map_err(|error| SetupError::Limits { channel: 0, error })?;
        Ok(Self {
            hw,
            chans: core::array::from_fn(|i| ChanState::new(configs[i], now)),
            sched,
            events: EventQueue::new(),
            group_low: [false; N],
            phase: Phase::NotStarted,
            probe: None,
            rate,
            criteria: Criteria::default(),
            options: FitOptions::default(),
            buf: [0; SAMPLES],
            inrush_cap,
        })
    }

    /// Gives the channels' hardware back (in whatever state it is: switch the outputs off
    /// first, e.g. with [`Driver::cancel`] and a last [`Driver::service`]).
    pub fn free(self) -> [ChannelHw<Sw, Pwm, Sense>; N] {
        self.hw
    }

    /// The oldest queued event.
    pub fn pop_event(&mut self) -> Option<Event> {
        self.events.pop()
    }

    /// The event queue (counts of events emitted and lost).
    pub fn events(&self) -> &EventQueue<E> {
        &self.events
    }

    /// Channel `i`'s status (`None` past the last channel).
    pub fn status(&self, i: usize) -> Option<Status> {
        let c = self.chans.get(i)?;
        Some(Status {
            health: c.health,
            on: c.on,
            measuring: c.rise.is_some() || self.probe.is_some_and(|p| p.channel == i),
            supply_low: self.group_low[usize::from(c.cfg.supply_group)],
            awaiting_supply_check: c.parked.is_some(),
            pulses: c.pulses,
            last_finding: c.last_finding,
            rest_at: c.rest_at,
        })
    }

    /// Channel `i`'s configuration.
    pub fn config(&self, i: usize) -> Option<&ChannelConfig> {
        self.chans.get(i).map(|c| &c.cfg)
    }

    /// Channel `i`'s converter zero and comparator, once commissioned.
    pub fn sense_setup(&self, i: usize) -> Option<&SenseSetup> {
        self.chans.get(i).and_then(|c| c.setup.as_ref())
    }

    /// The limits the scheduler enforces on every channel (e.g. for an independent monitor).
    pub fn limits(&self) -> [ChannelLimits; N] {
        core::array::from_fn(|i| self.chans[i].cfg.limits)
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
        self.events.push(Event {
            at,
            channel: channel as u8,
            kind,
        });
    }
}
