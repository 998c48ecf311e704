//! The controller application, generic over the hardware seam ([`crate::hw`], [`crate::ticks`]):
//! any board that implements those traits runs it unchanged.
//!
//! 1. **Self-check** ([`Controller::self_check`]): the core's calculations against reference
//!    values ([`vectors`]); then, per channel, the converter's zero and a diagnostic pulse that
//!    stays below pull-in, fitted and classified. A faulty channel is isolated before it is ever
//!    actuated.
//! 2. **Run** ([`Controller::run`]): a timed programme of pulse requests goes through the core's
//!    scheduler, which delays or refuses what would break a coil's limits (minimum on/off-time,
//!    thermal budget, inrush stagger) and says why; every real pulse's rise is captured (64 ADC
//!    samples and a comparator time) and classified; a coil fault isolates its channel, a low
//!    supply holds back its rail until a diagnostic pulse finds it in range again.
//!
//! Everything is logged with defmt for a person to read, and reported to an [`Observer`] (the
//! demo's checker).
//!
//! Verdicts are engineering estimates from first-order models and tolerance bands; they do not
//! make a coil, its wiring or the installation safe. Follow the datasheets, local electrical codes
//! and licensed practice.

pub use coilwise_driver::selfcheck as vectors;
pub use coilwise_driver::words as text;

use core::mem::MaybeUninit;
use core::ptr::addr_of_mut;

use coilwise::diagnosis::verdict::{judge_actuation, judge_threshold};
use coilwise::diagnosis::{
    Conditions, Criteria, Expected, Finding, FitOptions, Probe, Sampling, ThresholdBand,
    ThresholdReading, Verdict,
};
use coilwise::schedule::{
    Admission, ChannelId, ChannelLimits, DelayReason, HeatRating, HeatRatings, HoldPlan,
    LimitsError, PinAction, PinEvent, Refusal, Request, ScheduleError, Scheduler, Stopping,
    WakeCause,
};
use coilwise::{Amps, Hertz, Instant, Seconds, Ticks, Watts};
use embedded_hal::delay::DelayNs;
use embedded_hal::digital::OutputPin;
use embedded_hal::pwm::SetDutyCycle;

use crate::hw::{Channel, Crossing, CurrentSense, SenseError, SenseErrorKind, SensePlan};
use crate::scenario::{ChannelSpec, Rail};
use crate::ticks::TickSource;

/// Pulses pending or in flight the scheduler holds at most.
pub const QUEUE: usize = 8;
/// Samples per rise capture (real pulse) and per diagnostic pulse.
pub const SAMPLES: usize = 64;
/// At most this many coils in their pull-in (inrush) window at once.
pub const INRUSH_CAP: u8 = 1;
/// The diagnostic pulse stays below this fraction of the pull-in current at every corner.
pub const PROBE_FRACTION: f32 = 0.5;
/// The comparator trips at this fraction of the pull-in current (measured terms).
pub const TRIP_FRACTION: f32 = 0.5;
/// Converter readings averaged for the zero offset at start-up.
const ZERO_READINGS: u32 = 16;
/// Edges taken from the scheduler per poll.
const EDGES: usize = 8;
/// Hold PWM frequency the economiser duty is computed for, Hz (the board's PWM carrier).
pub const HOLD_HZ: f32 = 2_000.0;

/// When a programme step asks its pulse to start.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum StartAt {
    /// As soon as the constraints allow.
    Now,
    /// At this time, ms after power-up (or as soon after as allowed).
    At(u32),
}

/// One request of the timed programme.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Step {
    /// When the request is made, ms after power-up (the controller's time origin).
    pub at_ms: u32,
    /// The channel.
    pub channel: usize,
    /// Pulse length, ms.
    pub duration_ms: u32,
    /// Asked start.
    pub start: StartAt,
    /// Refuse rather than start more than this late, ms (`None`: any delay).
    pub within_ms: Option<u32>,
}

/// What became of a request.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum Outcome {
    /// Starts when asked.
    Accepted {
        /// On edge.
        start: Instant,
    },
    /// Starts later.
    Delayed {
        /// The constraint that set the start.
        reason: DelayReason,
        /// On edge.
        start: Instant,
    },
    /// The scheduler refused it.
    Refused(Refusal),
    /// The channel was isolated after a fault.
    Isolated,
    /// The channel's supply rail is low (a diagnostic pulse confirmed it).
    SupplyLow,
}

/// Which measurement a verdict comes from.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum Kind {
    /// A diagnostic pulse below pull-in.
    Probe,
    /// The rise of a real pulse (ADC fit and comparator, combined).
    Rise,
}

/// A verdict as reported to the [`Observer`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Report {
    /// Switch-on edge of the measured pulse.
    pub at: Instant,
    /// The channel.
    pub channel: usize,
    /// Which measurement.
    pub kind: Kind,
    /// The finding.
    pub finding: Finding,
}

/// Receives what the application decides (the demo checks it against its script).
pub trait Observer {
    /// Programme step `index` was handled with `outcome`.
    fn request(&mut self, index: usize, outcome: &Outcome);
    /// A measurement was classified.
    fn verdict(&mut self, report: &Report);
}

/// Why the application stopped.
#[derive(Clone, Copy, Debug, PartialEq, defmt::Format)]
pub enum AppError {
    /// A channel's design could not be evaluated.
    Design(usize, coilwise::Error),
    /// A channel's scheduler limits could not be built.
    Limits(usize, LimitsError),
    /// The scheduler rejected a call.
    Schedule(ScheduleError),
    /// A channel's current sense failed.
    Sense(usize, SenseErrorKind),
    /// A channel's switch or PWM failed.
    Drive(usize),
    /// A core calculation failed its reference value: no coil is driven.
    SelfCheck,
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Health {
    Ok,
    Isolated(Finding),
}

/// A rise capture in progress.
#[derive(Clone, Copy, Debug)]
struct RiseWatch {
    on: Instant,
    done: Instant,
}

/// What the application keeps per channel.
#[derive(Clone, Copy, Debug)]
struct Chan {
    health: Health,
    limits: ChannelLimits,
    expected: Expected,
    probe: Probe,
    band: Option<ThresholdBand>,
    trip: u16,
    zero: f32,
    rise: Option<RiseWatch>,
    /// End of the last admitted pulse plus the minimum off-time: the channel is at rest after it.
    rest_at: Instant,
    /// The same after the latest diagnostic pulse (which the scheduler does not know of).
    probe_rest_at: Instant,
    pulses: u32,
}

/// The controller (see the module docs): `N` channels on one board.
pub struct Controller<'s, Sw, Pwm, Sense, Clk, const N: usize> {
    specs: &'s [ChannelSpec; N],
    hw: [Channel<Sw, Pwm, Sense>; N],
    clock: Clk,
    sched: Scheduler<N, QUEUE>,
    ch: [Chan; N],
    rail_low: [bool; 2],
    t0: Instant,
    criteria: Criteria,
    options: FitOptions,
    buf: [u16; SAMPLES],
    /// The edges of one scheduler poll (here rather than on [`Self::run`]'s stack).
    edges: heapless::Vec<PinEvent, EDGES>,
}

fn rail_index(r: Rail) -> usize {
    match r {
        Rail::Valves24V => 0,
        Rail::Pump12V => 1,
    }
}

/// The economiser plan of a channel: hold `hold_fraction × I_pull` with PWM at [`HOLD_HZ`]; the
/// scheduler's limits size the duty from the physics (highest over the design's corners).
fn hold_plan(spec: &ChannelSpec) -> Option<HoldPlan> {
    spec.hold_fraction.map(|f| HoldPlan {
        current: Amps::new(f * spec.design.circuit.coil().pull_in_current().value()),
        frequency: Hertz::new(HOLD_HZ),
    })
}

/// The scheduler limits of a channel (out of line: the timing budget's figures stay in this
/// frame only).
#[inline(never)]
fn limits_of(spec: &ChannelSpec, i: usize) -> Result<ChannelLimits, AppError> {
    let heat = HeatRatings {
        clamp: None,
        coil: spec.coil_rating.map(|(p, tau)| HeatRating {
            power: Watts::new(p),
            time_constant: Seconds::new(tau),
        }),
    };
    ChannelLimits::from_design(&spec.design, &heat, hold_plan(spec))
        .map_err(|e| AppError::Limits(i, e))
}

/// The healthy bands of a channel (out of line, as [`limits_of`]).
#[inline(never)]
fn expected_of(spec: &ChannelSpec, i: usize) -> Result<Expected, AppError> {
    Expected::new(&spec.design, &Conditions::default()).map_err(|e| AppError::Design(i, e))
}

/// The healthy crossing band of a channel's comparator set at `level` (out of line: its
/// working state stays out of [`Controller::self_check`]'s frame, which calls into the board).
#[inline(never)]
fn band_of(spec: &ChannelSpec, level: Amps) -> Result<ThresholdBand, coilwise::Error> {
    ThresholdBand::new(&spec.design, &Conditions::default(), level)
}

/// Builds the scheduler for the channels at `ch` (`N` of them, initialised) and writes it to
/// `dst` (out of line: the scheduler's one temporary copy, the returned `Result`, stays in this
/// frame only).
///
/// # Safety
/// `ch` points to `N` initialised channels; `dst` is valid for writing a scheduler.
#[inline(never)]
unsafe fn write_scheduler<const N: usize>(
    dst: *mut Scheduler<N, QUEUE>,
    ch: *const Chan,
    now: Instant,
) -> Result<(), AppError> {
    // SAFETY: the caller guarantees `N` initialised channels at `ch`.
    match unsafe { new_scheduler::<N>(ch, now) } {
        Ok(sched) => {
            // SAFETY: the caller guarantees `dst` is valid for a write.
            unsafe { dst.write(sched) };
            Ok(())
        }
        Err(e) => Err(AppError::Limits(0, e)),
    }
}

/// The scheduler for the channels at `ch` (out of line: the limits gathered for it and the
/// scheduler's own set-up temporaries stay in this frame, not in [`write_scheduler`]'s).
///
/// # Safety
/// `ch` points to `N` initialised channels.
#[inline(never)]
unsafe fn new_scheduler<const N: usize>(
    ch: *const Chan,
    now: Instant,
) -> Result<Scheduler<N, QUEUE>, LimitsError> {
    // SAFETY: the caller guarantees `N` initialised channels at `ch`.
    let limits: [ChannelLimits; N] = core::array::from_fn(|i| unsafe { (*ch.add(i)).limits });
    Scheduler::new(limits, INRUSH_CAP, now)
}

/// What channel `i` needs from its design: scheduler limits, healthy bands, diagnostic pulse,
/// written to `dst` (out of line, and written in place rather than returned: no copy of the
/// channel stays in the caller's frame). On an error `dst` is left unwritten.
///
/// # Safety
/// `dst` is valid for writing a channel.
#[inline(never)]
unsafe fn write_chan(
    dst: *mut Chan,
    spec: &ChannelSpec,
    i: usize,
    now: Instant,
) -> Result<(), AppError> {
    let limits = limits_of(spec, i)?;
    let expected = expected_of(spec, i)?;
    let probe = Probe::new(&spec.design, PROBE_FRACTION).map_err(|e| AppError::Design(i, e))?;
    // SAFETY: the caller guarantees `dst` is valid for a write.
    unsafe {
        dst.write(Chan {
            health: Health::Ok,
            limits,
            expected,
            probe,
            band: None,
            trip: 0,
            zero: 0.0,
            rise: None,
            rest_at: now,
            probe_rest_at: now,
            pulses: 0,
        })
    };
    Ok(())
}

/// The sampling description of a capture: `period` and `first` sample time, A per count, zero
/// offset and noise in counts, a 12-bit converter (out of line: built after the board calls, its
/// temporaries stay out of the callers' frames).
#[inline(never)]
fn sampling_of(
    period: Seconds,
    first: Seconds,
    amps_per_count: f32,
    zero: f32,
    noise_counts: f32,
) -> Result<Sampling, coilwise::Error> {
    Sampling::new(period, amps_per_count)
        .and_then(|s| s.with_first_sample(first))
        .and_then(|s| s.with_zero(zero))
        .and_then(|s| s.with_full_scale(4095.0))
        .and_then(|s| s.with_noise(noise_counts))
}

/// Self-check part 1: the core's calculations against reference values, each logged (out of
/// line: the computed values stay out of [`Controller::self_check`]'s frame, which calls into the
/// board). Returns whether every value holds.
#[inline(never)]
fn core_holds() -> bool {
    defmt::info!("self-check 1/2: core calculations against reference values");
    let mut ok = true;
    for v in vectors::compute().iter() {
        if v.holds() {
            defmt::info!("  ok   {=str}: {=f32} [{=str}]", v.what, v.got, v.source);
        } else {
            defmt::error!(
                "  FAIL {=str}: {=f32}, expected {=f32} +- {=f32} [{=str}]",
                v.what,
                v.got,
                v.want,
                v.tolerance,
                v.source
            );
            ok = false;
        }
    }
    ok
}

impl<'s, Sw, Pwm, Sense, Clk, const N: usize> Controller<'s, Sw, Pwm, Sense, Clk, N>
where
    Sw: OutputPin,
    Pwm: SetDutyCycle,
    Sense: CurrentSense,
    Clk: TickSource + DelayNs,
{
    /// Builds the per-channel limits, bands and diagnostic pulses from the designs, and the
    /// scheduler, straight into `slot` (e.g. a `static`): the controller is a few KiB, and a small
    /// part's stack should not hold another copy of it on the way. Nothing is driven yet.
    ///
    /// # Errors
    /// A design that cannot be evaluated or limits the scheduler cannot use; `slot` then stays
    /// uninitialised.
    #[inline(never)]
    pub fn init<'a>(
        slot: &'a mut MaybeUninit<Self>,
        specs: &'s [ChannelSpec; N],
        hw: [Channel<Sw, Pwm, Sense>; N],
        clock: Clk,
    ) -> Result<&'a mut Self, AppError> {
        let now = clock.now();
        let p = slot.as_mut_ptr();
        // SAFETY (all blocks below): `p` points to memory valid for a `Self` that nothing else
        // refers to (`slot` is borrowed mutably). Each field is written exactly once through a
        // raw field pointer, never read before it is written, and `&mut *p` is formed only after
        // every field has been written. On an early error some fields stay unwritten and the
        // `MaybeUninit` is simply never assumed initialised (no field needs dropping).
        let ch = unsafe { addr_of_mut!((*p).ch) }.cast::<Chan>();
        for (i, spec) in specs.iter().enumerate() {
            unsafe { write_chan(ch.add(i), spec, i, now)? };
        }
        unsafe { write_scheduler(addr_of_mut!((*p).sched), ch, now)? };
        unsafe {
            addr_of_mut!((*p).specs).write(specs);
            addr_of_mut!((*p).hw).write(hw);
            addr_of_mut!((*p).clock).write(clock);
            addr_of_mut!((*p).rail_low).write([false; 2]);
            addr_of_mut!((*p).t0).write(now);
            addr_of_mut!((*p).criteria).write(Criteria::default());
            addr_of_mut!((*p).options).write(FitOptions::default());
            addr_of_mut!((*p).buf).write([0; SAMPLES]);
            addr_of_mut!((*p).edges).write(heapless::Vec::new());
            Ok(&mut *p)
        }
    }

    /// The limits the scheduler enforces, per channel.
    pub fn limits(&self) -> [ChannelLimits; N] {
        core::array::from_fn(|i| self.ch[i].limits)
    }

    /// Milliseconds and microseconds since the run's time origin, for the log.
    fn stamp(&self, t: Instant) -> (u32, u32) {
        let us = t.since(self.t0).max(0) as u32;
        (us / 1000, us % 1000)
    }

    fn wait_until(&mut self, t: Instant) {
        let d = t.since(self.clock.now());
        if d > 0 {
            self.clock.delay_us(d as u32);
        }
    }

    /// Logs what the designs give each channel: the scheduler limits and the diagnostics set-up.
    #[inline(never)]
    pub fn log_design(&self) {
        defmt::info!(
            "design: {=usize} channels, scheduler ticks of 1 us, queue {=usize}, at most {=u8} coil(s) pulling in at once",
            N,
            QUEUE,
            INRUSH_CAP
        );
        for (i, c) in self.ch.iter().enumerate() {
            let l = &c.limits;
            defmt::info!(
                "  ch{=usize} {=str}: min on {=u32} us (worst pull-in {=u32} us + operate allowance), min off {=u32} us",
                i,
                self.specs[i].name,
                l.min_on().get(),
                l.inrush_window().get(),
                l.min_off().get()
            );
            match l.hold() {
                Some(h) => defmt::info!(
                    "      hold PWM from {=u32} us at {=f32} % duty ({=u32} Hz)",
                    h.after().get(),
                    h.duty().fraction() * 100.0,
                    HOLD_HZ as u32
                ),
                None => defmt::info!("      no economiser: full drive for the whole pulse"),
            }
            if let Some(b) = l.coil_heat() {
                defmt::info!(
                    "      winding heat budget {=u32} mJ, thermal time constant {=u32} ms",
                    b.capacity_uj() / 1000,
                    b.time_constant().get() / 1000
                );
            }
            defmt::info!(
                "      healthy bands: I_inf {=f32}..{=f32} A, tau {=f32}..{=f32} ms; diagnostic pulse {=u32} us (below {=f32} A)",
                c.expected.final_current.min.value(),
                c.expected.final_current.max.value(),
                c.expected.tau.min.value() * 1e3,
                c.expected.tau.max.value() * 1e3,
                c.probe.length.get(),
                c.probe.limit.value()
            );
        }
    }

    /// Start-up self-check (see the module docs). Returns the number of channels left in service.
    ///
    /// # Errors
    /// [`AppError::SelfCheck`] when a reference value does not hold (nothing is driven then);
    /// hardware errors.
    #[inline(never)]
    pub fn self_check(&mut self, obs: &mut impl Observer) -> Result<usize, AppError> {
        if !core_holds() {
            defmt::error!(
                "self-check: the core's arithmetic is wrong on this device; no coil will be driven"
            );
            return Err(AppError::SelfCheck);
        }
        defmt::info!(
            "self-check 2/2: converter zero and a diagnostic pulse below pull-in, per channel"
        );
        for i in 0..N {
            self.measure_zero(i)?;
            // Borrowed in place: moving the verdict out of the `Result` would copy it.
            let probed = self.probe(i);
            let v = match &probed {
                Ok(v) => v,
                Err(e) => return Err(*e),
            };
            let at = self.clock.now();
            self.log_verdict(i, Kind::Probe, v, None);
            obs.verdict(&Report {
                at,
                channel: i,
                kind: Kind::Probe,
                finding: v.finding,
            });
            match v.finding {
                Finding::Healthy => {}
                Finding::CannotTell(_) => defmt::warn!(
                    "  ch{=usize} {=str}: kept in service, unverified",
                    i,
                    self.specs[i].name
                ),
                f => self.isolate(i, f)?,
            }
        }
        let left = self.ch.iter().filter(|c| c.health == Health::Ok).count();
        defmt::info!(
            "self-check done: {=usize} of {=usize} channels in service",
            left,
            N
        );
        Ok(left)
    }

    /// Averages [`ZERO_READINGS`] conversions with the coil off: the converter's zero; then sets
    /// the comparator level and its time band.
    fn measure_zero(&mut self, i: usize) -> Result<(), AppError> {
        let sense = &mut self.hw[i].sense;
        let mut sum = 0u32;
        for _ in 0..ZERO_READINGS {
            sum += u32::from(
                sense
                    .sample_now()
                    .map_err(|e| AppError::Sense(i, e.kind()))?,
            );
        }
        let zero = sum as f32 / ZERO_READINGS as f32;
        let apc = sense.scale().amps_per_count;
        let d = &self.specs[i].design;
        let wanted = TRIP_FRACTION * d.circuit.coil().pull_in_current().value();
        let trip = libm::roundf(wanted / apc + zero).clamp(1.0, 4094.0) as u16;
        // The band for the level actually set (rounded to a count).
        let level = Amps::new((f32::from(trip) - zero) * apc);
        let band = band_of(&self.specs[i], level).map_err(|e| AppError::Design(i, e))?;
        let c = &mut self.ch[i];
        c.zero = zero;
        c.trip = trip;
        c.band = Some(band);
        defmt::info!(
            "  ch{=usize} {=str}: zero {=f32} counts; comparator at {=u16} counts = {=f32} A, healthy crossing {=f32}..{=f32} ms",
            i,
            self.specs[i].name,
            zero,
            trip,
            level.value(),
            band.time.min.value() * 1e3,
            band.time.max.value() * 1e3
        );
        Ok(())
    }

    fn sampling(&self, i: usize, first: Ticks, period: Ticks) -> Result<Sampling, AppError> {
        let rate = self.clock.rate();
        let apc = self.hw[i].sense.scale().amps_per_count;
        sampling_of(
            rate.seconds(period),
            rate.seconds(first),
            apc,
            self.ch[i].zero,
            self.specs[i].sense.noise_counts,
        )
        .map_err(|e| AppError::Design(i, e))
    }

    /// One diagnostic pulse on channel `i` (blocking, about a millisecond): sampled across the
    /// pulse and judged. The caller makes sure the coil is at rest and nothing else is due.
    #[inline(never)]
    fn probe(&mut self, i: usize) -> Result<Verdict, AppError> {
        let p = self.ch[i].probe;
        let period = Ticks((p.length.get() / SAMPLES as u32).max(1));
        let plan = SensePlan {
            first: period,
            period,
            samples: SAMPLES,
            trip_level: None,
        };
        let hw = &mut self.hw[i];
        hw.sense
            .arm(&plan)
            .map_err(|e| AppError::Sense(i, e.kind()))?;
        let on = self.clock.now();
        hw.switch.set_high().map_err(|_| AppError::Drive(i))?;
        self.wait_until(on.after(p.length));
        self.hw[i]
            .switch
            .set_low()
            .map_err(|_| AppError::Drive(i))?;
        let done = on.after(Ticks(period.get() * SAMPLES as u32));
        self.wait_until(done);
        let cap = self.hw[i]
            .sense
            .samples(&mut self.buf)
            .map_err(|e| AppError::Sense(i, e.kind()))?;
        let Some(cap) = cap else {
            return Err(AppError::Sense(i, SenseErrorKind::Other));
        };
        let sampling = self.sampling(i, cap.first, cap.period)?;
        let c = &self.ch[i];
        let v = p.judge(
            &self.buf[..cap.len],
            &sampling,
            &c.expected,
            &self.criteria,
            &self.options,
        );
        let rest = on.after(p.length).after(c.limits.min_off());
        self.ch[i].rest_at = rest;
        self.ch[i].probe_rest_at = rest;
        Ok(v)
    }

    fn log_verdict(&self, i: usize, kind: Kind, v: &Verdict, cmp: Option<(Finding, Crossing)>) {
        let what = match kind {
            Kind::Probe => "diagnostic pulse",
            Kind::Rise => "rise",
        };
        let name = self.specs[i].name;
        let e = &v.estimates;
        if v.finding == Finding::Healthy || matches!(v.finding, Finding::CannotTell(_)) {
            defmt::info!(
                "  ch{=usize} {=str} {=str}: {=str}",
                i,
                name,
                what,
                text::finding(&v.finding)
            );
        } else {
            defmt::error!(
                "  ch{=usize} {=str} {=str}: {=str}",
                i,
                name,
                what,
                text::finding(&v.finding)
            );
        }
        match (e.final_current, e.tau, e.resistance, e.inductance) {
            (Some(a), Some(t), Some(r), Some(l)) => defmt::info!(
                "      estimates: I_inf {=f32} A, tau {=f32} ms, R {=f32} ohm, L {=f32} H, winding {=f32} C",
                a.value(),
                t.value() * 1e3,
                r.value(),
                l.value(),
                e.temperature.map_or(f32::NAN, |c| c.value())
            ),
            _ => defmt::info!("      no estimates from this trace"),
        }
        if let Some(q) = e.quality {
            defmt::info!(
                "      fit: {=u32} samples, residual {=f32} x noise, sd(slope) {=f32} %, sd(tau) {=f32} %",
                q.samples,
                q.noise_ratio,
                q.rel_sd_slope * 100.0,
                q.rel_sd_tau * 100.0
            );
        }
        if let Some((f, c)) = cmp {
            let band = self.ch[i].band.map_or((0.0, 0.0), |b| {
                (b.time.min.value() * 1e3, b.time.max.value() * 1e3)
            });
            match c {
                Crossing::After(t) => defmt::info!(
                    "      comparator: crossed after {=u32} us (healthy {=f32}..{=f32} ms): {=str}",
                    t.get(),
                    band.0,
                    band.1,
                    text::finding(&f)
                ),
                Crossing::NotYet => defmt::info!(
                    "      comparator: never crossed (healthy {=f32}..{=f32} ms): {=str}",
                    band.0,
                    band.1,
                    text::finding(&f)
                ),
            }
        }
    }

    /// Takes channel `i` out of service after a fault: ends its pulse as soon as allowed and
    /// drops its queued pulses.
    #[inline(never)]
    fn isolate(&mut self, i: usize, f: Finding) -> Result<(), AppError> {
        self.ch[i].health = Health::Isolated(f);
        let now = self.clock.now();
        match self
            .sched
            .stop(now, ChannelId(i as u8))
            .map_err(AppError::Schedule)?
        {
            Stopping::Ending {
                off_at,
                deferred,
                cancelled,
            } => {
                let (ms, us) = self.stamp(off_at);
                defmt::error!(
                    "  ch{=usize} {=str} ISOLATED: pulse ends at t={=u32}.{=u32:03} ms{=str}, {=u8} queued pulse(s) dropped",
                    i,
                    self.specs[i].name,
                    ms,
                    us,
                    if deferred.is_some() {
                        " (after its minimum on-time)"
                    } else {
                        ""
                    },
                    cancelled
                );
            }
            Stopping::NotRunning { cancelled } => defmt::error!(
                "  ch{=usize} {=str} ISOLATED: not driven again; {=u8} queued pulse(s) dropped",
                i,
                self.specs[i].name,
                cancelled
            ),
        }
        Ok(())
    }

    /// Acts on a finding of channel `i`.
    fn act(&mut self, i: usize, f: Finding) -> Result<(), AppError> {
        match f {
            Finding::Healthy | Finding::CannotTell(_) => Ok(()),
            Finding::SupplyLow => {
                let r = rail_index(self.specs[i].rail);
                if !self.rail_low[r] {
                    defmt::warn!(
                        "  {} rail flagged LOW: the coil is not blamed; new pulses on this rail wait for a diagnostic pulse to find the supply back in range",
                        self.specs[i].rail
                    );
                }
                self.rail_low[r] = true;
                Ok(())
            }
            f => self.isolate(i, f),
        }
    }

    /// Applies one scheduler edge to the pins.
    #[inline(never)]
    fn apply(&mut self, e: &PinEvent) -> Result<(), AppError> {
        let i = usize::from(e.channel.0);
        let (ms, us) = self.stamp(e.at);
        let name = self.specs[i].name;
        match e.action {
            PinAction::On => {
                let period = Ticks(self.specs[i].rise_period);
                let plan = SensePlan {
                    first: period,
                    period,
                    samples: SAMPLES,
                    trip_level: Some(self.ch[i].trip),
                };
                let hw = &mut self.hw[i];
                hw.sense
                    .arm(&plan)
                    .map_err(|er| AppError::Sense(i, er.kind()))?;
                hw.switch.set_high().map_err(|_| AppError::Drive(i))?;
                let c = &mut self.ch[i];
                c.pulses += 1;
                c.rise = Some(RiseWatch {
                    on: e.at,
                    done: e.at.after(Ticks(period.get() * SAMPLES as u32)),
                });
                defmt::info!(
                    "t={=u32}.{=u32:03} ms  ch{=usize} {=str} ON (pulse {=u32}), capturing the rise",
                    ms,
                    us,
                    i,
                    name,
                    c.pulses
                );
            }
            PinAction::HoldStart { duty } => {
                let hw = &mut self.hw[i];
                let max = u32::from(hw.hold.max_duty_cycle());
                let compare = duty.compare(max).min(max) as u16;
                hw.hold
                    .set_duty_cycle(compare)
                    .map_err(|_| AppError::Drive(i))?;
                defmt::info!(
                    "t={=u32}.{=u32:03} ms  ch{=usize} {=str} hold at {=u16}/{=u32} duty",
                    ms,
                    us,
                    i,
                    name,
                    compare,
                    max
                );
            }
            PinAction::Off => {
                let hw = &mut self.hw[i];
                hw.switch.set_low().map_err(|_| AppError::Drive(i))?;
                hw.hold.set_duty_cycle(0).map_err(|_| AppError::Drive(i))?;
                defmt::info!(
                    "t={=u32}.{=u32:03} ms  ch{=usize} {=str} OFF",
                    ms,
                    us,
                    i,
                    name
                );
            }
        }
        Ok(())
    }

    /// Judges channel `i`'s rise once its capture is complete.
    #[inline(never)]
    fn collect(&mut self, i: usize, now: Instant, obs: &mut impl Observer) -> Result<(), AppError> {
        let Some(w) = self.ch[i].rise else {
            return Ok(());
        };
        if !now.is_at_or_after(w.done) {
            return Ok(());
        }
        self.ch[i].rise = None;
        let cap = self.hw[i]
            .sense
            .samples(&mut self.buf)
            .map_err(|e| AppError::Sense(i, e.kind()))?
            .ok_or(AppError::Sense(i, SenseErrorKind::Other))?;
        let crossing = self.hw[i]
            .sense
            .crossing()
            .map_err(|e| AppError::Sense(i, e.kind()))?;
        let sampling = self.sampling(i, cap.first, cap.period)?;
        let rate = self.clock.rate();
        let c = &self.ch[i];
        let fit = judge_actuation(
            &self.buf[..cap.len],
            &sampling,
            &c.expected,
            &self.criteria,
            &self.options,
        );
        let reading = match crossing {
            Crossing::After(t) => ThresholdReading::Crossed(rate.seconds(t)),
            Crossing::NotYet => ThresholdReading::NotCrossed {
                waited: rate.seconds(Ticks(now.since(w.on).max(0) as u32)),
            },
        };
        let cmp = match c.band {
            Some(band) => {
                judge_threshold(reading, &band, None, &c.expected, &self.criteria).finding
            }
            None => Finding::CannotTell(coilwise::diagnosis::Undetermined::NotYet),
        };
        let combined = Verdict {
            finding: combine(fit.finding, cmp),
            estimates: fit.estimates,
        };
        let (ms, us) = self.stamp(now);
        defmt::info!(
            "t={=u32}.{=u32:03} ms  ch{=usize} {=str} verdict on pulse {=u32}:",
            ms,
            us,
            i,
            self.specs[i].name,
            c.pulses
        );
        self.log_verdict(i, Kind::Rise, &combined, Some((cmp, crossing)));
        obs.verdict(&Report {
            at: w.on,
            channel: i,
            kind: Kind::Rise,
            finding: combined.finding,
        });
        self.act(i, combined.finding)
    }

    /// Whether nothing is scheduled before `until` (so a blocking diagnostic pulse delays no
    /// edge).
    fn quiet_until(&self, until: Instant) -> bool {
        let w = self.sched.next_wake();
        w.cause == WakeCause::KeepAlive || w.at.is_at_or_after(until)
    }

    /// Channel `i`'s rail `r` is flagged low: re-checks it with a diagnostic pulse when the coil
    /// is at rest and nothing else is due (out of line: the verdict stays out of
    /// [`Self::request`]'s frame). Returns whether the request goes ahead; when not, its outcome
    /// has been reported.
    #[inline(never)]
    fn recheck_rail(
        &mut self,
        index: usize,
        i: usize,
        r: usize,
        now: Instant,
        obs: &mut impl Observer,
    ) -> Result<bool, AppError> {
        let c = &self.ch[i];
        let window = now.after(c.probe.length).after(Ticks(1000));
        if c.rise.is_some() || !now.is_at_or_after(c.rest_at) || !self.quiet_until(window) {
            defmt::warn!("  refused: supply rail low and the coil is busy, cannot re-check now");
            obs.request(index, &Outcome::SupplyLow);
            return Ok(false);
        }
        defmt::info!("  supply rail flagged low: re-checking with a diagnostic pulse first");
        // Borrowed in place, as in `self_check`.
        let probed = self.probe(i);
        let v = match &probed {
            Ok(v) => v,
            Err(e) => return Err(*e),
        };
        self.log_verdict(i, Kind::Probe, v, None);
        obs.verdict(&Report {
            at: now,
            channel: i,
            kind: Kind::Probe,
            finding: v.finding,
        });
        match v.finding {
            Finding::Healthy => {
                self.rail_low[r] = false;
                defmt::info!(
                    "  {} rail back in range: request goes ahead",
                    self.specs[i].rail
                );
            }
            Finding::SupplyLow | Finding::CannotTell(_) => {
                defmt::warn!("  refused: supply still low");
                obs.request(index, &Outcome::SupplyLow);
                return Ok(false);
            }
            f => {
                self.isolate(i, f)?;
                obs.request(index, &Outcome::Isolated);
                return Ok(false);
            }
        }
        Ok(true)
    }

    /// The scheduler's admission of `req` (out of line: its working state stays out of
    /// [`Self::request`]'s frame, which calls into the board).
    #[inline(never)]
    fn submit(&mut self, now: Instant, req: Request) -> Result<Admission, Refusal> {
        self.sched.submit(now, req)
    }

    /// Handles programme step `index`.
    #[inline(never)]
    fn request(&mut self, index: usize, s: &Step, obs: &mut impl Observer) -> Result<(), AppError> {
        let now = self.clock.now();
        let i = s.channel.min(N - 1);
        let (ms, us) = self.stamp(now);
        let name = self.specs[i].name;
        defmt::info!(
            "t={=u32}.{=u32:03} ms  request: ch{=usize} {=str} for {=u32} ms{=str}",
            ms,
            us,
            i,
            name,
            s.duration_ms,
            match (s.start, s.within_ms) {
                (StartAt::Now, None) => ", as soon as allowed",
                (StartAt::Now, Some(_)) => ", now or refuse",
                (StartAt::At(_), _) => ", at a set time",
            }
        );
        if let Health::Isolated(f) = self.ch[i].health {
            defmt::warn!("  refused: channel isolated ({=str})", text::finding(&f));
            obs.request(index, &Outcome::Isolated);
            return Ok(());
        }
        let r = rail_index(self.specs[i].rail);
        if self.rail_low[r] && !self.recheck_rail(index, i, r, now, obs)? {
            return Ok(());
        }
        let now = self.clock.now();
        let duration = Ticks(s.duration_ms * 1000);
        let id = ChannelId(i as u8);
        // A diagnostic pulse of our own is unknown to the scheduler: no start before the coil is
        // at rest again after it.
        let rest = self.ch[i].probe_rest_at;
        let mut req = match s.start {
            StartAt::Now if rest.since(now) > 0 => {
                let (ms, us) = self.stamp(rest);
                defmt::info!(
                    "  asking for t={=u32}.{=u32:03} ms: the coil is at rest after the diagnostic pulse then",
                    ms,
                    us
                );
                Request::at(id, duration, rest)
            }
            StartAt::Now => Request::now(id, duration),
            StartAt::At(at) => {
                Request::at(id, duration, self.t0.after(Ticks(at * 1000)).latest(rest))
            }
        };
        if let Some(w) = s.within_ms {
            req = req.within(Ticks(w * 1000));
        }
        let outcome = match self.submit(now, req) {
            Ok(Admission::Accepted { start }) => {
                let (ms, us) = self.stamp(start);
                defmt::info!("  accepted: on at t={=u32}.{=u32:03} ms", ms, us);
                Outcome::Accepted { start }
            }
            Ok(Admission::Delayed { reason, until }) => {
                let (ms, us) = self.stamp(until);
                defmt::warn!(
                    "  delayed to t={=u32}.{=u32:03} ms: {=str}",
                    ms,
                    us,
                    text::delay(&reason)
                );
                Outcome::Delayed {
                    reason,
                    start: until,
                }
            }
            Err(refusal) => {
                match refusal {
                    Refusal::TooLate { earliest, reason } => {
                        let (ms, us) = self.stamp(earliest);
                        defmt::warn!(
                            "  refused: {=str}: earliest t={=u32}.{=u32:03} ms ({=str})",
                            text::refusal(&refusal),
                            ms,
                            us,
                            text::delay(&reason)
                        );
                    }
                    Refusal::BelowMinOn { min_on } => defmt::warn!(
                        "  refused: {=str} ({=u32} us)",
                        text::refusal(&refusal),
                        min_on.get()
                    ),
                    _ => defmt::warn!("  refused: {=str}", text::refusal(&refusal)),
                }
                Outcome::Refused(refusal)
            }
        };
        if let Outcome::Accepted { start } | Outcome::Delayed { start, .. } = outcome {
            let c = &mut self.ch[i];
            c.rest_at = start.after(duration).after(c.limits.min_off());
        }
        obs.request(index, &outcome);
        Ok(())
    }

    /// Runs the programme until every request is handled and every pulse and measurement has
    /// ended; returns the time of the end of the run, ms.
    ///
    /// # Errors
    /// Hardware or scheduler errors (the scheduler state stays consistent; the caller stops).
    #[inline(never)]
    pub fn run(&mut self, programme: &[Step], obs: &mut impl Observer) -> Result<u32, AppError> {
        defmt::info!(
            "run: {=usize} requests (times are from power-up)",
            programme.len()
        );
        let mut next = 0usize;
        loop {
            let now = self.clock.now();
            self.edges.clear();
            let wake = self
                .sched
                .poll(now, &mut self.edges)
                .map_err(AppError::Schedule)?;
            for k in 0..self.edges.len() {
                let e = self.edges[k];
                self.apply(&e)?;
            }
            for i in 0..N {
                self.collect(i, now, obs)?;
            }
            while let Some(s) = programme.get(next) {
                if !now.is_at_or_after(self.t0.after(Ticks(s.at_ms * 1000))) {
                    break;
                }
                self.request(next, s, obs)?;
                next += 1;
            }
            // When to look again: the next edge, the next request, the next capture.
            let mut at: Option<Instant> = match wake.cause {
                WakeCause::KeepAlive => None,
                _ => Some(wake.at),
            };
            let mut earliest = |t: Instant| {
                at = Some(match at {
                    Some(a) if a.is_at_or_after(t) => t,
                    Some(a) => a,
                    None => t,
                });
            };
            if let Some(s) = programme.get(next) {
                earliest(self.t0.after(Ticks(s.at_ms * 1000)));
            }
            for c in self.ch.iter() {
                if let Some(w) = c.rise {
                    earliest(w.done);
                }
            }
            let next_wake = self.sched.next_wake();
            if next_wake.cause != WakeCause::KeepAlive {
                earliest(next_wake.at);
            }
            match at {
                Some(t) => self.wait_until(t),
                None => break,
            }
        }
        let end = self.clock.now();
        let (ms, _) = self.stamp(end);
        defmt::info!("run: programme done at t={=u32} ms", ms);
        Ok(ms)
    }
}

/// One finding from the ADC fit and the comparator of the same rise: a coil fault named by
/// either wins (the fit's first: it names the fault more precisely), then a sensor fault, then
/// healthy only when both agree.
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
