//! Commissioning and diagnostic pulses.
//!
//! [`Driver::commission`] runs, in order:
//!
//! 1. the core's calculations against reference values ([`crate::selfcheck`]) — a miscompiled
//!    float path, a wrong FPU mode or a broken libm stops everything before a coil is driven;
//! 2. per diagnosed channel, the converter's zero (16 readings with the coil off) and the
//!    comparator level with its healthy crossing band at the level actually set;
//! 3. per diagnosed channel, a diagnostic pulse that stays below pull-in at every corner,
//!    sampled and judged; run by [`Driver::service`] one channel at a time, never while another
//!    coil is in its pull-in window or an edge is due before the pulse ends.
//!
//! A faulty channel is isolated before it is ever actuated. The same diagnostic pulse re-checks
//! a supply group flagged low and an isolated channel the operator re-enables. Nothing blocks:
//! the pulse's edges and its capture are driven by `service`; [`Driver::commission_blocking`]
//! wraps the whole for start-up code that can wait.

use coilwise::diagnosis::{Conditions, Finding, Sampling, ThresholdBand};
use coilwise::{Amps, Instant, Seconds, Ticks};
use embedded_hal::delay::DelayNs;
use embedded_hal::digital::OutputPin;
use embedded_hal::pwm::SetDutyCycle;

use crate::channel::{Health, SenseSetup, SAMPLES};
use crate::error::{DriverError, ErrorKind};
use crate::event::{EventKind, ProbePurpose, Source};
use crate::selfcheck;
use crate::sense::{CurrentSense, SenseError, SensePlan};
use crate::ticks::TickSource;
use crate::Driver;

/// Converter readings averaged for the zero offset.
pub const ZERO_READINGS: u32 = 16;

/// Where commissioning is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Phase {
    /// [`Driver::commission`] not called yet: nothing is driven.
    NotStarted,
    /// Diagnostic pulses still to run.
    Running,
    /// Done: requests are taken.
    Ready,
    /// The self-check failed: nothing will be driven.
    Failed,
}

/// A diagnostic pulse in progress.
#[derive(Clone, Copy, Debug)]
pub(crate) struct ActiveProbe {
    pub channel: usize,
    pub purpose: ProbePurpose,
    pub on: Instant,
    pub off_at: Instant,
    pub done: Instant,
    pub switched_off: bool,
    pub retries: u8,
}

/// How a finding is acted on.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Class {
    Healthy,
    Unsure,
    SupplyLow,
    Fault,
}

/// Healthy; cannot tell; supply low (the coil is not blamed); a fault of the coil, its wiring
/// or its sensor (isolate). A finding this driver does not know yet is treated as "cannot tell".
pub(crate) fn classify(f: &Finding) -> Class {
    match f {
        Finding::Healthy => Class::Healthy,
        Finding::CannotTell(_) => Class::Unsure,
        Finding::SupplyLow => Class::SupplyLow,
        // A smooth trace the model does not explain: not a fault by itself. Only a confirming
        // measurement (the comparator of the same rise, see `service::combine`) isolates.
        Finding::ShapeUnexplained => Class::Unsure,
        Finding::SensorImplausible(_) => Class::Fault,
        f if f.is_coil_fault() => Class::Fault,
        _ => Class::Unsure,
    }
}

/// The sampling description of a capture (out of line: its temporaries stay out of the
/// callers' frames).
#[inline(never)]
pub(crate) fn sampling_of(
    period: Seconds,
    first: Seconds,
    amps_per_count: f32,
    zero: f32,
    full_scale: u16,
    noise_counts: f32,
) -> Result<Sampling, coilwise::Error> {
    Sampling::new(period, amps_per_count)
        .and_then(|s| s.with_first_sample(first))
        .and_then(|s| s.with_zero(zero))
        .and_then(|s| s.with_full_scale(f32::from(full_scale)))
        .and_then(|s| s.with_noise(noise_counts))
}

/// The healthy crossing band at `level` (out of line, as [`sampling_of`]).
#[inline(never)]
fn band_of(design: &coilwise::DriverDesign, level: Amps) -> Option<ThresholdBand> {
    ThresholdBand::new(design, &Conditions::default(), level).ok()
}

impl<Sw, Pwm, Sense, const N: usize, const Q: usize, const E: usize>
    Driver<'_, Sw, Pwm, Sense, N, Q, E>
where
    Sw: OutputPin,
    Pwm: SetDutyCycle,
    Sense: CurrentSense,
{
    /// Starts commissioning at `now` (see the module docs): runs the self-check vectors and
    /// measures each channel's converter zero now (a few conversions per channel), and leaves
    /// the diagnostic pulses to [`Driver::service`]. Channels without a design go into service
    /// at once. An [`EventKind::Commissioned`] marks the end.
    ///
    /// The vectors themselves, for a log, come from [`selfcheck::compute`] (deterministic: the
    /// same values the driver checks).
    ///
    /// # Errors
    /// [`ErrorKind::SelfCheck`] when a vector does not hold (nothing will ever be driven);
    /// [`ErrorKind::Phase`] when called twice. A converter error takes only its channel out of
    /// service ([`EventKind::HardwareFault`]).
    #[inline(never)]
    pub fn commission(&mut self, now: Instant) -> Result<(), DriverError> {
        if self.st.phase != Phase::NotStarted {
            return Err(DriverError::general(ErrorKind::Phase));
        }
        if !selfcheck::holds() {
            self.st.phase = Phase::Failed;
            return Err(DriverError::general(ErrorKind::SelfCheck));
        }
        for i in 0..N {
            if self.configs[i].diagnosis.is_none() {
                self.st.chans[i].health = Health::InService;
                continue;
            }
            match self.measure_zero(i) {
                Ok(()) => {
                    self.start_learning(i);
                    self.st.chans[i].probe_due = Some(ProbePurpose::Commission);
                }
                Err(kind) => self.fault(now, i, kind),
            }
        }
        self.st.phase = Phase::Running;
        self.finish_commissioning(now);
        Ok(())
    }

    /// [`Driver::commission`], then [`Driver::service`] and waits on `clock` until every
    /// diagnostic pulse has been judged. For start-up code only: it blocks (for about a
    /// millisecond per channel, plus the minimum off-time it waits for nothing).
    ///
    /// # Errors
    /// As [`Driver::commission`] and [`Driver::service`].
    pub fn commission_blocking<C: TickSource + DelayNs>(
        &mut self,
        clock: &mut C,
    ) -> Result<(), DriverError> {
        self.commission(clock.now())?;
        while self.st.phase == Phase::Running {
            let next = self.service(clock.now())?;
            if self.st.phase != Phase::Running {
                break;
            }
            let d = next.since(clock.now());
            if d > 0 {
                // ticks → ns, rounded up; 64-bit so that long waits do not overflow.
                let ns = (d as u64 * 1_000_000_000).div_ceil(u64::from(self.rate.hz()));
                clock.delay_ns(ns.min(u64::from(u32::MAX)) as u32);
            }
        }
        Ok(())
    }

    /// Where commissioning is.
    pub const fn phase(&self) -> Phase {
        self.st.phase
    }

    /// Averages [`ZERO_READINGS`] conversions with the coil off: the converter's zero; then sets
    /// the comparator level and its band.
    #[inline(never)]
    fn measure_zero(&mut self, i: usize) -> Result<(), ErrorKind> {
        // Borrowed, not copied (the diagnosis is about 350 bytes; this frame sits below the
        // converter calls).
        let configs = self.configs;
        let Some(d) = configs[i].diagnosis.as_ref() else {
            return Ok(());
        };
        let sense = &mut self.hw[i].sense;
        let mut sum = 0u32;
        for _ in 0..ZERO_READINGS {
            let c = sense.sample_now().map_err(|e| ErrorKind::Sense(e.kind()))?;
            sum += u32::from(c);
        }
        let zero = sum as f32 / ZERO_READINGS as f32;
        let scale = sense.scale();
        let apc = scale.amps_per_count;
        let top = scale.full_scale_counts;
        let pull_in = d.design.circuit.coil().pull_in_current().value();
        let wanted = d.trip_fraction * pull_in / apc + zero;
        let (trip, band, level) = if apc.is_finite() && apc > 0.0 && wanted.is_finite() && top >= 2
        {
            let hi = f32::from(top - 1);
            let t = libm::roundf(wanted).clamp(1.0, hi) as u16;
            let level = Amps::new((f32::from(t) - zero) * apc);
            (Some(t), band_of(&d.design, level), level)
        } else {
            (None, None, Amps::new(0.0))
        };
        self.st.chans[i].setup = Some(SenseSetup {
            zero_counts: zero,
            trip_counts: trip,
            trip_level: level,
            band,
        });
        Ok(())
    }

    /// Ends commissioning once no commissioning pulse is left.
    pub(crate) fn finish_commissioning(&mut self, now: Instant) {
        if self.st.phase != Phase::Running {
            return;
        }
        if self
            .st
            .chans
            .iter()
            .any(|c| c.probe_due == Some(ProbePurpose::Commission))
            || self
                .st
                .probe
                .is_some_and(|p| p.purpose == ProbePurpose::Commission)
        {
            return;
        }
        self.st.phase = Phase::Ready;
        let in_service = self
            .st
            .chans
            .iter()
            .filter(|c| c.health.in_service())
            .count();
        self.emit(
            now,
            0,
            EventKind::Commissioned {
                in_service: in_service.min(255) as u8,
            },
        );
    }

    /// The end of a diagnostic pulse's window (no pulse may start before it), or `now`.
    pub(crate) fn probe_window_end(&self, now: Instant) -> Instant {
        match self.st.probe {
            Some(p) if p.off_at.since(now) > 0 => p.off_at,
            _ => now,
        }
    }

    /// Whether another coil is in its pull-in window at `now`; the end of the latest such window.
    fn inrush_busy(&self, now: Instant) -> Option<Instant> {
        let mut busy: Option<Instant> = None;
        for (c, cfg) in self
            .st
            .chans
            .iter()
            .zip(self.configs.iter())
            .filter(|(c, _)| c.on)
        {
            let end = c.on_at.after(cfg.limits.inrush_window());
            if end.since(now) > 0 {
                busy = Some(busy.map_or(end, |b| b.latest(end)));
            }
        }
        busy
    }

    /// Starts a due diagnostic pulse when the coil is at rest and nothing else is due; returns
    /// when to try again if one is due but cannot start yet.
    pub(crate) fn try_start_probe(&mut self, now: Instant) -> Option<Instant> {
        let configs = self.configs;
        if self.st.probe.is_some() {
            return None;
        }
        let mut retry: Option<Instant> = None;
        let mut earliest = |t: Instant| {
            retry = Some(retry.map_or(t, |r| if t.since(r) < 0 { t } else { r }));
        };
        if let Some(end) = self.inrush_busy(now) {
            earliest(end);
            return retry;
        }
        for (i, config) in configs.iter().enumerate() {
            let c = &self.st.chans[i];
            let (Some(purpose), Some(d)) = (c.probe_due, config.diagnosis.as_ref()) else {
                continue;
            };
            let rest = c.rest_at.latest(c.probe_rest_at);
            if c.on || c.rise.is_some() || rest.since(now) > 0 {
                earliest(if rest.since(now) > 0 {
                    rest
                } else {
                    now.after(Ticks(1))
                });
                continue;
            }
            let off_at = now.after(d.probe.length);
            if self.st.next_wake().is_some_and(|w| off_at.since(w) > 0) {
                // An edge is due before the pulse would end: after it.
                continue;
            }
            let period = Ticks((d.probe.length.get() / SAMPLES as u32).max(1));
            let plan = SensePlan {
                first: period,
                period,
                samples: SAMPLES,
                trip_level: None,
            };
            let hw = &mut self.hw[i];
            if let Err(e) = hw.sense.arm(&plan) {
                self.fault(now, i, ErrorKind::Sense(e.kind()));
                continue;
            }
            if hw.switch.set_high().is_err() {
                self.fault(now, i, ErrorKind::Switch);
                continue;
            }
            self.st.chans[i].probe_due = None;
            self.st.probe = Some(ActiveProbe {
                channel: i,
                purpose,
                on: now,
                off_at,
                done: now.after(Ticks(period.get().saturating_mul(SAMPLES as u32))),
                switched_off: false,
                retries: 0,
            });
            return None;
        }
        retry
    }

    /// Advances the diagnostic pulse in progress: its off edge, then its capture and verdict.
    /// Returns when to be called next for it.
    pub(crate) fn probe_step(&mut self, now: Instant) -> Option<Instant> {
        let mut p = self.st.probe?;
        let i = p.channel;
        if !p.switched_off {
            if !now.is_at_or_after(p.off_at) {
                return Some(p.off_at);
            }
            let off_ok = self.hw[i].switch.set_low().is_ok();
            p.switched_off = true;
            let c = &mut self.st.chans[i];
            c.probe_rest_at = now.after(self.configs[i].limits.min_off());
            c.rest_at = c.rest_at.latest(c.probe_rest_at);
            self.st.probe = Some(p);
            if !off_ok {
                self.st.probe = None;
                self.fault(now, i, ErrorKind::Switch);
                return None;
            }
        }
        if !now.is_at_or_after(p.done) {
            return Some(p.done);
        }
        let cap = match self.hw[i].sense.samples(&mut self.st.buf) {
            Ok(Some(cap)) => cap,
            Ok(None) if p.retries < 2 => {
                p.retries += 1;
                p.done = now.after(Ticks((p.off_at.since(p.on).max(1) as u32).div_ceil(4)));
                self.st.probe = Some(p);
                return Some(p.done);
            }
            Ok(None) => {
                self.st.probe = None;
                self.fault(now, i, ErrorKind::CaptureMissing);
                return None;
            }
            Err(e) => {
                self.st.probe = None;
                self.fault(now, i, ErrorKind::Sense(e.kind()));
                return None;
            }
        };
        self.st.probe = None;
        let scale = self.hw[i].sense.scale();
        self.judge_probe(now, p, cap, scale);
        None
    }

    /// Judges a complete diagnostic-pulse capture and acts on it (out of line, after every call
    /// into the board, as the rise's).
    #[inline(never)]
    fn judge_probe(
        &mut self,
        now: Instant,
        p: ActiveProbe,
        cap: crate::sense::Capture,
        scale: crate::sense::SenseScale,
    ) {
        let i = p.channel;
        // Borrowed from the configurations, not copied (the diagnosis is about 350 bytes).
        let configs = self.configs;
        let Some(d) = configs[i].diagnosis.as_ref() else {
            return;
        };
        let zero = self.st.chans[i].setup.map_or(0.0, |s| s.zero_counts);
        let sampling = sampling_of(
            self.rate.seconds(cap.period),
            self.rate.seconds(cap.first),
            scale.amps_per_count,
            zero,
            scale.full_scale_counts,
            d.noise_counts,
        );
        let baseline = matches!(self.st.chans[i].base, crate::baseline::BaseState::Ready(_));
        let verdict = match sampling {
            Ok(s) => {
                // The probe's window: samples later than its end plus half a period are the
                // decay, not the rise (as `Probe::judge`).
                let end = d.probe.duration.value() + 0.5 * s.period().value();
                let n = (0..cap.len.min(SAMPLES))
                    .take_while(|&k| s.time_of(k).value() <= end)
                    .count();
                let st = &mut *self.st;
                crate::baseline::judge_probe_samples(
                    &st.buf[..n],
                    &s,
                    d,
                    &mut st.chans[i].base,
                    self.board,
                    &self.options,
                )
            }
            Err(_) => {
                self.fault(
                    now,
                    i,
                    ErrorKind::Sense(crate::sense::SenseErrorKind::PeriodUnsupported),
                );
                return;
            }
        };
        self.act_on_probe(now, &p, &verdict, baseline);
    }

    /// Records a diagnostic pulse's verdict, reports it and acts on it (out of line: this work
    /// does not sit below the fit in `judge_probe`'s frame).
    #[inline(never)]
    fn act_on_probe(
        &mut self,
        now: Instant,
        p: &ActiveProbe,
        verdict: &coilwise::Verdict,
        baseline: bool,
    ) {
        let i = p.channel;
        self.st.chans[i].last_finding = Some(verdict.finding);
        self.st.chans[i].last_verdict = Some(*verdict);
        self.emit(
            p.on,
            i,
            EventKind::Judged {
                source: Source::Probe,
                purpose: Some(p.purpose),
                pulse: 0,
                finding: verdict.finding,
                comparator: None,
                baseline,
            },
        );
        self.after_probe(now, i, p.purpose, verdict.finding);
    }

    /// Acts on a diagnostic pulse's finding, by purpose.
    fn after_probe(&mut self, now: Instant, i: usize, purpose: ProbePurpose, f: Finding) {
        let class = classify(&f);
        let g = usize::from(self.configs[i].supply_group);
        match purpose {
            ProbePurpose::Commission | ProbePurpose::Reenable => {
                // Learning a baseline: the channel stays out of service (no request can be
                // scheduled into a later learning pulse) until its last pulse is judged.
                if self.learning_step(now, i, f) && class == Class::Healthy {
                    self.st.chans[i].probe_due = Some(purpose);
                    return;
                }
                let was = self.st.chans[i].health;
                match class {
                    Class::Healthy | Class::SupplyLow => {
                        self.st.chans[i].health = Health::InService
                    }
                    Class::Unsure => self.st.chans[i].health = Health::Unverified,
                    Class::Fault => {}
                }
                match class {
                    Class::Fault => self.isolate(now, i, f),
                    Class::SupplyLow => self.flag_supply(now, i),
                    _ => {}
                }
                if purpose == ProbePurpose::Reenable
                    && was == Health::Rechecking
                    && self.st.chans[i].health.in_service()
                {
                    self.emit(now, i, EventKind::Reenabled);
                }
                self.finish_commissioning(now);
            }
            ProbePurpose::SupplyCheck => {
                let parked = self.st.chans[i].parked.take();
                match class {
                    Class::Healthy => {
                        if self.st.group_low[g] {
                            self.st.group_low[g] = false;
                            self.emit(now, i, EventKind::SupplyRecovered { group: g as u8 });
                        }
                        if let Some(p) = parked {
                            let kind = match self.submit(now, i, p) {
                                Ok(crate::Granted::Accepted { start }) => {
                                    EventKind::Accepted { start }
                                }
                                Ok(crate::Granted::Delayed { reason, start }) => {
                                    EventKind::Delayed { reason, start }
                                }
                                Ok(crate::Granted::AwaitingSupplyCheck) => return,
                                Err(why) => EventKind::Refused(why),
                            };
                            self.emit(now, i, kind);
                        }
                    }
                    Class::SupplyLow | Class::Unsure => {
                        if parked.is_some() {
                            self.emit(now, i, EventKind::Refused(crate::Refused::SupplyLow));
                        }
                    }
                    Class::Fault => {
                        self.isolate(now, i, f);
                        if parked.is_some() {
                            self.emit(now, i, EventKind::Refused(crate::Refused::Isolated(f)));
                        }
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use coilwise::diagnosis::{TraceFault, Undetermined};

    #[test]
    fn findings_are_acted_on_by_class() {
        assert_eq!(classify(&Finding::Healthy), Class::Healthy);
        assert_eq!(
            classify(&Finding::CannotTell(Undetermined::TooFewSamples)),
            Class::Unsure
        );
        assert_eq!(classify(&Finding::SupplyLow), Class::SupplyLow);
        // Not a fault by itself (kept in service, unverified).
        assert_eq!(classify(&Finding::ShapeUnexplained), Class::Unsure);
        assert_eq!(
            classify(&Finding::SensorImplausible(TraceFault::PoorFit)),
            Class::Fault
        );
        for f in [
            Finding::OpenCircuit,
            Finding::ShortCircuit,
            Finding::ShortedTurns,
            Finding::HighResistance,
            Finding::InductanceHigh,
            Finding::SlowRise,
            Finding::ArmatureStuck,
        ] {
            assert_eq!(classify(&f), Class::Fault, "{f:?}");
        }
    }
}
