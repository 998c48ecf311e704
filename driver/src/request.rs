//! Pulse requests: asking for a pulse, cancelling it, releasing a held one.
//!
//! Every request goes through the core's scheduler, which never admits a pulse that would break
//! the channel's limits (minimum on/off-time, thermal budget, inrush stagger); the driver adds
//! the channel's health and its supply group:
//!
//! - an isolated (or not yet commissioned) channel refuses;
//! - on a supply group flagged low, the request waits for a diagnostic pulse
//!   ([`Granted::AwaitingSupplyCheck`]); its outcome comes as an event;
//! - a request asking to start while a diagnostic pulse is in its window, or before a channel
//!   is at rest after one, starts after it ([`Granted::Delayed`]).

use coilwise::diagnosis::Finding;
use coilwise::schedule::{Admission, ChannelId, DelayReason, Refusal, Request, Stopping};
use coilwise::{Instant, Ticks};
use embedded_hal::digital::OutputPin;
use embedded_hal::pwm::SetDutyCycle;

use crate::channel::Health;
use crate::error::{DriverError, ErrorKind};
use crate::event::{EventKind, ProbePurpose};
use crate::sense::CurrentSense;
use crate::Driver;

/// How long a pulse lasts.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Length {
    /// This many ticks from on edge to off edge (pull-in and any hold phase included).
    Fixed(Ticks),
    /// Until [`Driver::release`] — but never longer than `at_most` ticks (the scheduler budgets
    /// the pulse at that length) nor shorter than the channel's minimum on-time.
    UntilReleased {
        /// The longest the pulse may run, ticks.
        at_most: Ticks,
    },
}

impl Length {
    /// The length the scheduler budgets for.
    pub const fn ticks(&self) -> Ticks {
        match *self {
            Length::Fixed(t) => t,
            Length::UntilReleased { at_most } => at_most,
        }
    }
}

/// When a pulse should start.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Start {
    /// As soon as every constraint allows.
    Now,
    /// At this instant, or as soon after as allowed (not before `now`, less than 2³¹ ticks
    /// ahead).
    At(Instant),
}

/// One pulse request.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Pulse {
    /// How long.
    pub length: Length,
    /// When.
    pub start: Start,
    /// Refuse rather than start more than this many ticks after the asked start (`None`: any
    /// delay).
    pub within: Option<Ticks>,
}

impl Pulse {
    /// A pulse of `ticks`, as soon as allowed.
    pub const fn now(ticks: Ticks) -> Self {
        Self {
            length: Length::Fixed(ticks),
            start: Start::Now,
            within: None,
        }
    }

    /// A pulse of `ticks` from `at` (or as soon after as allowed).
    pub const fn at(at: Instant, ticks: Ticks) -> Self {
        Self {
            length: Length::Fixed(ticks),
            start: Start::At(at),
            within: None,
        }
    }

    /// A pulse held on until [`Driver::release`], at most `at_most` ticks, as soon as allowed.
    pub const fn held(at_most: Ticks) -> Self {
        Self {
            length: Length::UntilReleased { at_most },
            start: Start::Now,
            within: None,
        }
    }

    /// The same pulse, refused rather than started more than `ticks` late.
    pub const fn within(mut self, ticks: Ticks) -> Self {
        self.within = Some(ticks);
        self
    }
}

/// A request the driver took.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Granted {
    /// Starts when asked.
    Accepted {
        /// On edge.
        start: Instant,
    },
    /// Starts later than asked.
    Delayed {
        /// The constraint that set the start.
        reason: DelayReason,
        /// On edge.
        start: Instant,
    },
    /// The channel's supply group is flagged low: a diagnostic pulse re-checks it first; an
    /// [`EventKind::Accepted`], [`EventKind::Delayed`] or [`EventKind::Refused`] follows.
    AwaitingSupplyCheck,
}

/// Why the driver refused a request.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Refused {
    /// The scheduler refused it (limits, queue, time), with its reason.
    Schedule(Refusal),
    /// The channel is isolated after this finding.
    Isolated(Finding),
    /// The channel is out of service after a hardware error.
    Faulted(ErrorKind),
    /// The supply group is still low (a diagnostic pulse confirmed it).
    SupplyLow,
    /// Commissioning has not finished (or failed), or the channel waits for its re-check pulse.
    NotCommissioned,
    /// A request already waits for this channel's supply re-check, or a held pulse is queued or
    /// running (nothing may queue behind it: release it first).
    Busy,
}

impl<Sw, Pwm, Sense, const N: usize, const Q: usize, const E: usize>
    Driver<'_, Sw, Pwm, Sense, N, Q, E>
where
    Sw: OutputPin,
    Pwm: SetDutyCycle,
    Sense: CurrentSense,
{
    /// Asks for `pulse` on `channel` at `now` (see the module docs). The outcome is also queued
    /// as an event ([`EventKind::Accepted`] / [`EventKind::Delayed`] / [`EventKind::Refused`]).
    /// O(channels + queue); no hardware is touched (the edges come from [`Driver::service`]):
    /// call `service` before the returned start.
    ///
    /// # Errors
    /// A [`Refused`] reason; nothing changed.
    pub fn request(
        &mut self,
        now: Instant,
        channel: usize,
        pulse: Pulse,
    ) -> Result<Granted, Refused> {
        let r = self.request_inner(now, channel, pulse);
        let kind = match r {
            Ok(Granted::Accepted { start }) => Some(EventKind::Accepted { start }),
            Ok(Granted::Delayed { reason, start }) => Some(EventKind::Delayed { reason, start }),
            Ok(Granted::AwaitingSupplyCheck) => None,
            Err(why) => Some(EventKind::Refused(why)),
        };
        if let Some(kind) = kind {
            self.emit(now, channel, kind);
        }
        r
    }

    fn request_inner(
        &mut self,
        now: Instant,
        channel: usize,
        pulse: Pulse,
    ) -> Result<Granted, Refused> {
        let c = self
            .st
            .chans
            .get(channel)
            .ok_or(Refused::Schedule(Refusal::UnknownChannel))?;
        match c.health {
            Health::InService | Health::Unverified => {}
            Health::Isolated(f) => return Err(Refused::Isolated(f)),
            Health::Faulted(k) => return Err(Refused::Faulted(k)),
            Health::Commissioning | Health::Rechecking => return Err(Refused::NotCommissioned),
        }
        if c.parked.is_some() || c.held_pending {
            return Err(Refused::Busy);
        }
        let cfg = &self.configs[channel];
        let g = usize::from(cfg.supply_group);
        if self.st.group_low[g] && cfg.diagnosis.is_some() {
            // Checked against the scheduler's clock first, so a refusal comes now, not later.
            if self
                .st
                .sched
                .as_ref()
                .is_some_and(|s| now.since(s.now()) < 0)
            {
                return Err(Refused::Schedule(Refusal::TimeWentBackwards));
            }
            let c = &mut self.st.chans[channel];
            c.parked = Some(pulse);
            c.probe_due = Some(ProbePurpose::SupplyCheck);
            return Ok(Granted::AwaitingSupplyCheck);
        }
        self.submit(now, channel, pulse)
    }

    /// Submits to the scheduler, after any diagnostic pulse's window and rest.
    pub(crate) fn submit(
        &mut self,
        now: Instant,
        channel: usize,
        pulse: Pulse,
    ) -> Result<Granted, Refused> {
        let asked = match pulse.start {
            Start::Now => now,
            Start::At(t) => t,
        };
        // No start inside a diagnostic pulse's window (it counts against the inrush cap) nor,
        // on its own channel, before the coil is at rest after it.
        // Which constraint a push past it is: the coil's own rest after its diagnostic pulse
        // (minimum off-time), or another coil's diagnostic pulse in progress (inrush).
        let mut floor = self.probe_window_end(now);
        let mut why = DelayReason::Inrush;
        let rest = self.st.chans[channel].probe_rest_at;
        if rest.since(floor) >= 0 {
            floor = rest;
            why = DelayReason::OffTime;
        }
        let pushed = floor.since(asked) > 0 && pulse.start == Start::Now
            || matches!(pulse.start, Start::At(t) if floor.since(t) > 0);
        let id = ChannelId(channel as u8);
        let duration = pulse.length.ticks();
        let mut req = if pushed {
            Request::at(id, duration, floor)
        } else {
            match pulse.start {
                Start::Now => Request::now(id, duration),
                Start::At(t) => Request::at(id, duration, t),
            }
        };
        if let Some(w) = pulse.within {
            let used = if pushed {
                floor.since(asked).max(0) as u32
            } else {
                0
            };
            if used > w.get() {
                return Err(Refused::Schedule(Refusal::TooLate {
                    earliest: floor,
                    reason: why,
                }));
            }
            req = req.within(Ticks(w.get() - used));
        }
        let sched = self.st.sched.as_mut().ok_or(Refused::NotCommissioned)?;
        let admission = sched.submit(now, req).map_err(Refused::Schedule)?;
        let start = admission.start();
        let c = &mut self.st.chans[channel];
        let end = start
            .after(duration)
            .after(self.configs[channel].limits.min_off());
        if end.since(c.rest_at) > 0 {
            c.rest_at = end;
        }
        c.held_pending = matches!(pulse.length, Length::UntilReleased { .. });
        Ok(match admission {
            Admission::Accepted { start } if !pushed => Granted::Accepted { start },
            Admission::Accepted { start } => Granted::Delayed { reason: why, start },
            Admission::Delayed { reason, until } => Granted::Delayed {
                reason,
                start: until,
            },
        })
    }

    /// Ends `channel`'s pulse in flight as soon as allowed (at `now`, or at its minimum on-time),
    /// drops its queued pulses and any request waiting for a supply re-check. The off edge comes
    /// from [`Driver::service`].
    ///
    /// # Errors
    /// [`ErrorKind::UnknownChannel`], [`ErrorKind::TimeWentBackwards`]; nothing changed.
    pub fn cancel(&mut self, now: Instant, channel: usize) -> Result<Stopping, DriverError> {
        if channel >= N {
            return Err(DriverError::on(channel, ErrorKind::UnknownChannel));
        }
        let s = self
            .st
            .sched
            .as_mut()
            .ok_or(DriverError::on(channel, ErrorKind::Phase))?
            .stop(now, ChannelId(channel as u8))
            .map_err(|e| DriverError::on(channel, e.into()))?;
        let c = &mut self.st.chans[channel];
        c.parked = None;
        c.held_pending = false;
        if let Stopping::Ending { off_at, .. } = s {
            c.rest_at = off_at.after(self.configs[channel].limits.min_off());
        }
        Ok(s)
    }

    /// Releases a pulse requested with [`Length::UntilReleased`]: it goes off at `now`, or at
    /// its minimum on-time if that has not run yet. Nothing queues behind a held pulse, so
    /// this is [`Driver::cancel`] for it.
    ///
    /// # Errors
    /// As [`Driver::cancel`].
    pub fn release(&mut self, now: Instant, channel: usize) -> Result<Stopping, DriverError> {
        self.cancel(now, channel)
    }

    /// The operator's action on an isolated (or faulted) channel, e.g. after the coil or its
    /// wiring was replaced: a diagnostic pulse is run at the next quiet moment, and only a
    /// healthy (or undetermined) verdict brings the channel back ([`EventKind::Reenabled`]);
    /// a fault isolates it again.
    ///
    /// # Errors
    /// [`ErrorKind::NotIsolated`] for a channel in service; [`ErrorKind::UnknownChannel`].
    pub fn reenable(&mut self, now: Instant, channel: usize) -> Result<(), DriverError> {
        let c = self
            .st
            .chans
            .get_mut(channel)
            .ok_or(DriverError::on(channel, ErrorKind::UnknownChannel))?;
        match c.health {
            Health::Isolated(_) | Health::Faulted(_) => {}
            _ => return Err(DriverError::on(channel, ErrorKind::NotIsolated)),
        }
        c.health = Health::Rechecking;
        if self.configs[channel].diagnosis.is_some() {
            c.probe_due = Some(ProbePurpose::Reenable);
        } else {
            c.health = Health::InService;
            self.emit(now, channel, EventKind::Reenabled);
        }
        Ok(())
    }
}
