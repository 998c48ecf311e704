//! The service loop: [`Driver::service`] applies the scheduler's due edges to the pins, advances
//! a diagnostic pulse, collects finished rise captures and judges them, and says when it must
//! be called next.
//!
//! Call it at the instant it returns (a timer-compare interrupt set to it, a main loop that
//! sleeps until it, or an async task's timer) and after every [`Driver::request`] or
//! [`Driver::cancel`]. Calling it early is harmless; calling it late makes the edges late in the
//! real world (the scheduler still guarantees the *scheduled* sequence). It never blocks.
//!
//! A finding acts on its channel: a coil or sensor fault isolates it (its pulse ends as soon as
//! the minimum on-time allows, its queued pulses are dropped); a low supply flags its supply
//! group (the coil is not blamed); "cannot tell" keeps it in service. A hardware error takes
//! only its channel out of service ([`EventKind::HardwareFault`]).

use coilwise::diagnosis::verdict::{judge_actuation, judge_threshold};
use coilwise::diagnosis::{Finding, ThresholdReading, Undetermined, Verdict};
use coilwise::schedule::{
    ChannelId, EdgeBuffer, PinAction, PinEvent, Stopping, WakeCause, KEEP_ALIVE,
};
use coilwise::{Instant, Ticks};
use embedded_hal::digital::OutputPin;
use embedded_hal::pwm::SetDutyCycle;

use crate::channel::{Health, RiseWatch, SAMPLES};
use crate::commission::{classify, Class};
use crate::error::{DriverError, ErrorKind};
use crate::event::{ComparatorReading, EventKind, Source};
use crate::request::Refused;
use crate::sense::{Crossing, CurrentSense, SenseError, SensePlan};
use crate::Driver;

/// Edges taken from the scheduler per poll.
const EDGES: usize = 8;

/// One finding from the converter fit and the comparator of the same rise: a coil fault named
/// by either wins (the fit's first: it names the fault more precisely), then a sensor fault,
/// then healthy only when both agree.
pub fn combine(fit: Finding, comparator: Finding) -> Finding {
    if fit.is_coil_fault() {
        fit
    } else if comparator.is_coil_fault() {
        comparator
    } else if matches!(fit, Finding::SensorImplausible(_)) {
        fit
    } else if fit == Finding::Healthy {
        comparator
    } else {
        fit
    }
}

/// The earlier of two optional instants (wrap-safe).
fn earlier(a: Option<Instant>, b: Instant) -> Option<Instant> {
    Some(match a {
        Some(a) if a.since(b) <= 0 => a,
        _ => b,
    })
}

impl<Sw, Pwm, Sense, const N: usize, const Q: usize, const E: usize>
    Driver<'_, Sw, Pwm, Sense, N, Q, E>
where
    Sw: OutputPin,
    Pwm: SetDutyCycle,
    Sense: CurrentSense,
{
    /// Does what is due at `now` (see the module docs) and returns the instant it must be
    /// called next (at most 2³⁰ ticks ahead). O(channels + queue) per call, plus one fit of
    /// [`SAMPLES`] samples per capture judged (see `docs/performance.md`, case
    /// `driver_service`).
    ///
    /// # Errors
    /// [`ErrorKind::TimeWentBackwards`] when `now` is before an earlier call's (or more than
    /// 2³¹ ticks after it); nothing was done.
    pub fn service(&mut self, now: Instant) -> Result<Instant, DriverError> {
        let mut edges = EdgeBuffer::<EDGES>::new();
        loop {
            edges.clear();
            let wake = self
                .st
                .sched
                .as_mut()
                .ok_or(DriverError::general(ErrorKind::Phase))?
                .poll(now, &mut edges)
                .map_err(|e| DriverError::general(e.into()))?;
            for e in edges.iter() {
                self.apply(now, e);
            }
            if wake.cause != WakeCause::OutputFull {
                break;
            }
        }
        let mut next: Option<Instant> = None;
        if let Some(t) = self.probe_step(now) {
            next = earlier(next, t);
        }
        for i in 0..N {
            if let Some(t) = self.collect(i, now) {
                next = earlier(next, t);
            }
        }
        if let Some(t) = self.try_start_probe(now) {
            next = earlier(next, t);
        }
        if let Some(p) = self.st.probe {
            next = earlier(next, if p.switched_off { p.done } else { p.off_at });
        }
        if let Some(w) = self.st.next_wake() {
            next = earlier(next, w);
        }
        Ok(next.unwrap_or(now.after(KEEP_ALIVE)))
    }

    /// Applies one scheduler edge to the pins (a failure takes the channel out of service).
    #[inline(never)]
    fn apply(&mut self, now: Instant, e: &PinEvent) {
        let i = usize::from(e.channel.0);
        if i >= N {
            return;
        }
        let r = match e.action {
            PinAction::On => self.switch_on(now, i),
            PinAction::HoldStart { duty } => {
                let hold = &mut self.hw[i].hold;
                let max = u32::from(hold.max_duty_cycle());
                let compare = duty.compare(max).min(max) as u16;
                hold.set_duty_cycle(compare).map_err(|_| ErrorKind::Pwm)
            }
            PinAction::Off => {
                let c = &mut self.st.chans[i];
                c.on = false;
                if c.held_pending && e.at.is_at_or_after(c.on_at) {
                    c.held_pending = false;
                }
                let hw = &mut self.hw[i];
                let a = hw.switch.set_low().map_err(|_| ErrorKind::Switch);
                let b = hw.hold.set_duty_cycle(0).map_err(|_| ErrorKind::Pwm);
                a.and(b)
            }
        };
        if let Err(kind) = r {
            self.fault(now, i, kind);
        }
    }

    /// Arms the rise capture and switches channel `i` on.
    fn switch_on(&mut self, now: Instant, i: usize) -> Result<(), ErrorKind> {
        let c = &self.st.chans[i];
        let capture = match (self.configs[i].diagnosis.as_ref(), c.setup) {
            (Some(d), Some(s)) => Some((d.rise_period, s.trip_counts)),
            _ => None,
        };
        let hw = &mut self.hw[i];
        if let Some((period, trip)) = capture {
            let plan = SensePlan {
                first: period,
                period,
                samples: SAMPLES,
                trip_level: trip,
            };
            hw.sense
                .arm(&plan)
                .map_err(|e| ErrorKind::Sense(e.kind()))?;
        }
        hw.switch.set_high().map_err(|_| ErrorKind::Switch)?;
        let c = &mut self.st.chans[i];
        c.on = true;
        c.on_at = now;
        c.pulses = c.pulses.wrapping_add(1);
        if let Some((period, _)) = capture {
            c.rise = Some(RiseWatch {
                on: now,
                done: now.after(Ticks(period.get().saturating_mul(SAMPLES as u32))),
                pulse: c.pulses,
                retries: 0,
            });
        }
        Ok(())
    }

    /// Judges channel `i`'s rise once its capture is complete; returns when to look again.
    #[inline(never)]
    fn collect(&mut self, i: usize, now: Instant) -> Option<Instant> {
        let mut w = self.st.chans[i].rise?;
        if !now.is_at_or_after(w.done) {
            return Some(w.done);
        }
        let cap = match self.hw[i].sense.samples(&mut self.st.buf) {
            Ok(Some(cap)) => cap,
            Ok(None) if w.retries < 2 => {
                w.retries += 1;
                w.done = now.after(Ticks((w.done.since(w.on).max(4) as u32) / 4));
                self.st.chans[i].rise = Some(w);
                return Some(w.done);
            }
            Ok(None) => {
                self.st.chans[i].rise = None;
                self.fault(now, i, ErrorKind::CaptureMissing);
                return None;
            }
            Err(e) => {
                self.st.chans[i].rise = None;
                self.fault(now, i, ErrorKind::Sense(e.kind()));
                return None;
            }
        };
        self.st.chans[i].rise = None;
        let crossing = match self.hw[i].sense.crossing() {
            Ok(c) => c,
            Err(e) => {
                self.fault(now, i, ErrorKind::Sense(e.kind()));
                return None;
            }
        };
        let scale = self.hw[i].sense.scale();
        self.judge_rise(i, now, w, cap, crossing, scale);
        None
    }

    /// Judges a complete rise capture of channel `i` and acts on the finding (out of line, and
    /// after every call into the board: the fit's working state never sits below a hardware
    /// call). The fit and the acting on its finding each have a frame of their own, so that only
    /// this small frame lies below the fit's.
    #[inline(never)]
    fn judge_rise(
        &mut self,
        i: usize,
        now: Instant,
        w: RiseWatch,
        cap: crate::sense::Capture,
        crossing: Crossing,
        scale: crate::sense::SenseScale,
    ) {
        let configs = self.configs;
        let Some(d) = configs[i].diagnosis.as_ref() else {
            return;
        };
        match self.rise_verdict(i, now, &w, &cap, crossing, &scale, d) {
            Some((verdict, cmp)) => self.act_on_rise(i, now, &w, crossing, &verdict, cmp),
            None => self.fault(
                now,
                i,
                ErrorKind::Sense(crate::SenseErrorKind::PeriodUnsupported),
            ),
        }
    }

    /// The fit and comparator verdicts of channel `i`'s rise capture (in the state's buffer):
    /// the combined verdict and the comparator's own finding. `None` when the capture's sample
    /// period is not one the fit takes.
    #[allow(clippy::too_many_arguments)]
    #[inline(never)]
    fn rise_verdict(
        &self,
        i: usize,
        now: Instant,
        w: &RiseWatch,
        cap: &crate::sense::Capture,
        crossing: Crossing,
        scale: &crate::sense::SenseScale,
        d: &crate::channel::Diagnosis,
    ) -> Option<(Verdict, Option<Finding>)> {
        let zero = self.st.chans[i].setup.map_or(0.0, |s| s.zero_counts);
        let sampling = crate::commission::sampling_of(
            self.rate.seconds(cap.period),
            self.rate.seconds(cap.first),
            scale.amps_per_count,
            zero,
            scale.full_scale_counts,
            d.noise_counts,
        )
        .ok()?;
        let n = cap.len.min(SAMPLES);
        let fit = judge_actuation(
            &self.st.buf[..n],
            &sampling,
            &d.expected,
            &d.criteria,
            &self.options,
        );
        let reading = match crossing {
            Crossing::After(t) => ThresholdReading::Crossed(self.rate.seconds(t)),
            Crossing::NotYet => ThresholdReading::NotCrossed {
                waited: self.rate.seconds(Ticks(now.since(w.on).max(0) as u32)),
            },
        };
        let band = self.st.chans[i].setup.and_then(|s| s.band);
        let cmp =
            band.map(|b| judge_threshold(reading, &b, None, &d.expected, &d.criteria).finding);
        let verdict = Verdict {
            finding: combine(
                fit.finding,
                cmp.unwrap_or(Finding::CannotTell(Undetermined::NotYet)),
            ),
            estimates: fit.estimates,
        };
        Some((verdict, cmp))
    }

    /// Records channel `i`'s rise verdict, reports it and acts on its finding.
    #[inline(never)]
    fn act_on_rise(
        &mut self,
        i: usize,
        now: Instant,
        w: &RiseWatch,
        crossing: Crossing,
        verdict: &Verdict,
        cmp: Option<Finding>,
    ) {
        self.st.chans[i].last_finding = Some(verdict.finding);
        self.st.chans[i].last_verdict = Some(*verdict);
        self.emit(
            w.on,
            i,
            EventKind::Judged {
                source: Source::Rise,
                purpose: None,
                pulse: w.pulse,
                finding: verdict.finding,
                comparator: cmp.map(|finding| ComparatorReading { crossing, finding }),
                baseline: false,
            },
        );
        match classify(&verdict.finding) {
            Class::Healthy | Class::Unsure => {}
            Class::SupplyLow => self.flag_supply(now, i),
            Class::Fault => self.isolate(now, i, verdict.finding),
        }
    }

    /// Flags channel `i`'s supply group low.
    pub(crate) fn flag_supply(&mut self, now: Instant, i: usize) {
        let g = usize::from(self.configs[i].supply_group);
        if !self.st.group_low[g] {
            self.st.group_low[g] = true;
            self.emit(now, i, EventKind::SupplyLow { group: g as u8 });
        }
    }

    /// Ends channel `i`'s pulses as soon as allowed; returns (off edge, pulses dropped).
    fn stop_channel(&mut self, now: Instant, i: usize) -> (Option<Instant>, u8) {
        let c = &mut self.st.chans[i];
        c.held_pending = false;
        let Some(sched) = self.st.sched.as_mut() else {
            return (None, 0);
        };
        match sched.stop(now, ChannelId(i as u8)) {
            Ok(Stopping::Ending {
                off_at, cancelled, ..
            }) => {
                c.rest_at = c
                    .rest_at
                    .latest(off_at.after(self.configs[i].limits.min_off()));
                (Some(off_at), cancelled)
            }
            Ok(Stopping::NotRunning { cancelled }) => (None, cancelled),
            Err(_) => (None, 0),
        }
    }

    /// Takes channel `i` out of service after a fault.
    pub(crate) fn isolate(&mut self, now: Instant, i: usize, finding: Finding) {
        self.st.chans[i].health = Health::Isolated(finding);
        let (off_at, dropped) = self.stop_channel(now, i);
        self.emit(
            now,
            i,
            EventKind::Isolated {
                finding,
                off_at,
                dropped,
            },
        );
        if self.st.chans[i].parked.take().is_some() {
            self.emit(now, i, EventKind::Refused(Refused::Isolated(finding)));
        }
    }

    /// Takes channel `i` out of service after a hardware error, and tries to switch it off.
    pub(crate) fn fault(&mut self, now: Instant, i: usize, kind: ErrorKind) {
        self.st.chans[i].health = Health::Faulted(kind);
        self.st.chans[i].probe_due = None;
        let _ = self.stop_channel(now, i);
        let hw = &mut self.hw[i];
        let _ = hw.hold.set_duty_cycle(0);
        let _ = hw.switch.set_low();
        self.st.chans[i].on = false;
        self.emit(now, i, EventKind::HardwareFault(kind));
        if self.st.chans[i].parked.take().is_some() {
            self.emit(now, i, EventKind::Refused(Refused::Faulted(kind)));
        }
        self.finish_commissioning(now);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use coilwise::diagnosis::TraceFault;

    /// The combination rule of the module docs, case by case.
    #[test]
    fn a_coil_fault_named_by_either_wins_and_healthy_needs_both() {
        let h = Finding::Healthy;
        let unsure = Finding::CannotTell(Undetermined::NotYet);
        let sensor = Finding::SensorImplausible(TraceFault::PoorFit);
        assert_eq!(combine(h, h), h);
        assert_eq!(combine(h, unsure), unsure);
        assert_eq!(combine(unsure, h), unsure);
        assert_eq!(combine(h, Finding::SlowRise), Finding::SlowRise);
        assert_eq!(
            combine(Finding::ShortedTurns, Finding::SlowRise),
            Finding::ShortedTurns
        );
        assert_eq!(combine(sensor, Finding::OpenCircuit), Finding::OpenCircuit);
        assert_eq!(combine(sensor, h), sensor);
        assert_eq!(combine(unsure, sensor), unsure);
    }

    /// An unexplained shape (a smooth misfit the model leaves out: saturation, an unusual
    /// coupled loop) never takes a channel out of service by itself; the comparator of the same
    /// rise naming a coil fault does.
    #[test]
    fn an_unexplained_shape_isolates_only_when_the_comparator_confirms_a_fault() {
        let shape = Finding::ShapeUnexplained;
        for cmp in [
            Finding::Healthy,
            Finding::CannotTell(Undetermined::NotYet),
            Finding::SensorImplausible(TraceFault::PoorFit),
        ] {
            let f = combine(shape, cmp);
            assert_eq!(f, shape, "comparator {cmp:?}");
            assert_ne!(classify(&f), Class::Fault);
        }
        for cmp in [
            Finding::SlowRise,
            Finding::OpenCircuit,
            Finding::ShortCircuit,
        ] {
            let f = combine(shape, cmp);
            assert_eq!(f, cmp);
            assert_eq!(classify(&f), Class::Fault);
        }
    }
}
