//! The simulated channel hardware of the rig: one numerical coil bench per channel (the plant of
//! `coilwise-host-tests`), its converter and comparator, the switch and hold-PWM drive, the
//! timer-triggered rise capture, and the [`Monitor`] every drive change goes to.
//!
//! It is what the QEMU board and the driver's host tests have in common; each wraps it in its
//! own handles (`embedded-hal` pins and PWM, the driver's `CurrentSense` and `TickSource`), its
//! own script of faults and supply changes, and its own logging. Time is the plant's, in ns; the
//! driver's ticks are [`TICK_HZ`] (1 µs).
//!
//! The converter samples at the instants of the armed plan while time advances (as a
//! timer-triggered ADC with DMA would), starting at the switch-on edge; the comparator of the
//! plant arms itself at every switch-on and latches its first crossing.

use coilwise::Ticks;
use coilwise_driver::{Capture, Crossing, SenseErrorKind, SensePlan, SenseScale};
use coilwise_host_tests::{
    AdcConfig, ArmatureState, Bench, Comparator, Fault, Magnetics, Prng, SensePoint,
    SolverSettings, Stepping, Supply,
};

use crate::monitor::{DriveState, Monitor, PlantView, Violation};
use crate::parts;
use crate::scenario::{ChannelSpec, TICK_HZ};

/// Samples one capture can hold.
pub const MAX_SAMPLES: usize = 64;

/// Hold PWM carrier of the simulated timers, Hz (invented; every edge is integrated, so the
/// simulation cost grows with it).
pub const PWM_HZ: u32 = 2_000;

/// Duty resolution of the simulated PWM (`max_duty_cycle`).
pub const PWM_MAX_DUTY: u16 = 1_000;

/// Largest converter count (12 bits).
pub const FULL_SCALE_COUNTS: u16 = 4_095;

/// Plant time of one driver tick, ns.
pub const NS_PER_TICK: u64 = 1_000_000_000 / TICK_HZ as u64;

const PWM_PERIOD_NS: u64 = 1_000_000_000 / PWM_HZ as u64;

/// Solver settings of the rig: adaptive steps of at most 1 ms, tolerances loose enough to keep
/// the M0 run short and tight enough for the converter (1e-6 relative is 0.004 counts at full
/// scale) and the comparator (crossings within a few ns).
fn solver() -> SolverSettings {
    SolverSettings {
        stepping: Stepping::Adaptive {
            rel_tol: 1e-6,
            abs_tol_amps: 1e-7,
            max_step_s: 1e-3,
        },
        ..SolverSettings::default()
    }
}

/// Converter of one channel as built (invented): the scenario's shunt/gain/reference, an
/// amplifier offset of a few counts, and 0.6 counts RMS of noise from a fixed seed.
fn converter(spec: &ChannelSpec, channel: usize) -> AdcConfig {
    let apc = f64::from(spec.sense.amps_per_count());
    AdcConfig {
        bits: 12,
        full_scale_amps: apc * 4096.0,
        noise_lsb_rms: 0.6,
        offset_lsb: [3.0, 2.0, 4.0, 3.0][channel % 4],
        gain_error: 0.0,
        start_latency_ns: 0,
        start_jitter_ns: 0,
        seed: 0x5EED_0000 + channel as u64,
        sense: SensePoint::Switch,
    }
}

/// Gives a bench its magnetic extras (out of line: the rebuild's frame stays out of the
/// caller's).
#[inline(never)]
fn set_magnetics(bench: &mut Bench<1>, magnetics: Magnetics) -> Option<()> {
    bench.set_magnetics(0, magnetics).ok()
}

const NO_ADC: AdcConfig = AdcConfig {
    bits: 12,
    full_scale_amps: 1.0,
    noise_lsb_rms: 0.0,
    offset_lsb: 0.0,
    gain_error: 0.0,
    start_latency_ns: 0,
    start_jitter_ns: 0,
    seed: 0,
    sense: SensePoint::Switch,
};

#[derive(Clone, Copy)]
struct CaptureState {
    plan: SensePlan,
    /// Switch-on time of the capture in progress, ns; `None`: not started.
    started: Option<u64>,
    taken: usize,
    buf: [u16; MAX_SAMPLES],
}

const IDLE_CAPTURE: CaptureState = CaptureState {
    plan: SensePlan {
        first: Ticks(0),
        period: Ticks(1),
        samples: 0,
        trip_level: None,
    },
    started: None,
    taken: 0,
    buf: [0; MAX_SAMPLES],
};

/// The simulated hardware of `CH` channels (see the module docs); the monitor keeps up to
/// `PULSES` pulses for its inrush check.
pub struct Channels<const CH: usize, const PULSES: usize> {
    benches: [Option<Bench<1>>; CH],
    adc: [AdcConfig; CH],
    rng: [Prng; CH],
    rails: [u8; CH],
    /// Lowest supply each channel's design allows, V.
    design_min: [f64; CH],
    pin: [bool; CH],
    duty: [u16; CH],
    faulted: [bool; CH],
    /// Current left at the next switch-on, per channel.
    residual: [Option<f64>; CH],
    capture: [CaptureState; CH],
    now_ns: u64,
    /// The independent check of what the pins did.
    pub monitor: Monitor<CH, PULSES>,
}

impl<const CH: usize, const PULSES: usize> Default for Channels<CH, PULSES> {
    fn default() -> Self {
        Self::empty()
    }
}

impl<const CH: usize, const PULSES: usize> Channels<CH, PULSES> {
    /// Hardware with no coils fitted yet (usable in a `static`; see [`Channels::fit`]).
    pub const fn empty() -> Self {
        Self {
            benches: [const { None }; CH],
            adc: [NO_ADC; CH],
            rng: [Prng::new(0); CH],
            rails: [0; CH],
            design_min: [0.0; CH],
            pin: [false; CH],
            duty: [0; CH],
            faulted: [false; CH],
            residual: [None; CH],
            capture: [IDLE_CAPTURE; CH],
            now_ns: 0,
            monitor: Monitor::new(),
        }
    }

    /// Fits channel `ch` with the scenario's coil as built ([`parts::channel`]) at the design's
    /// nominal supply, its converter, and `magnetics` (eddy path, saturation). `None` for a
    /// channel outside the rig or a coil the plant refuses. Out of line, its bench built in
    /// place ([`Bench::single_into`]): a bench is about 1 KiB and a firmware fits its coils on a
    /// small stack.
    #[inline(never)]
    pub fn fit(&mut self, ch: usize, spec: &ChannelSpec, magnetics: Magnetics) -> Option<()> {
        let v = f64::from(spec.design.supply.nominal().value());
        let params = parts::channel(ch)?;
        let slot = self.benches.get_mut(ch)?;
        Bench::single_into(slot, Supply::ideal(v), params, solver()).ok()?;
        set_magnetics(slot.as_mut()?, magnetics)?;
        self.adc[ch] = converter(spec, ch);
        self.rng[ch] = Prng::new(self.adc[ch].seed);
        self.rails[ch] = spec.rail;
        self.design_min[ch] = f64::from(spec.design.supply.min().value());
        Some(())
    }

    /// Plant time, ns.
    pub fn now_ns(&self) -> u64 {
        self.now_ns
    }

    /// The bench of channel `ch`, if fitted.
    pub fn bench(&self, ch: usize) -> Option<&Bench<1>> {
        self.benches.get(ch)?.as_ref()
    }

    /// Injects `fault` on channel `ch` (it stays); false when the plant refuses it.
    pub fn inject(&mut self, ch: usize, fault: Fault) -> bool {
        let Some(Some(b)) = self.benches.get_mut(ch) else {
            return false;
        };
        let ok = b.inject(0, fault).is_ok();
        if ok {
            self.faulted[ch] = true;
        }
        ok
    }

    /// Clears channel `ch`'s injected faults (the coil or its wire replaced).
    pub fn repair(&mut self, ch: usize) {
        if let Some(Some(b)) = self.benches.get_mut(ch) {
            if b.clear_faults(0).is_ok() {
                self.faulted[ch] = false;
            }
        }
    }

    /// Sets the open-circuit voltage of every channel on supply group `rail`, V.
    pub fn set_rail_volts(&mut self, rail: u8, volts: f64) {
        for (ch, bench) in self.benches.iter_mut().enumerate() {
            if let (true, Some(b)) = (self.rails[ch] == rail, bench.as_mut()) {
                let _ = b.set_supply_volts(volts);
            }
        }
    }

    /// Channel `ch` will still carry `amps` at its next switch-on (a pulse soon after a
    /// release); put in after the monitor judged that edge, as the world's, not the driver's.
    pub fn leave_current(&mut self, ch: usize, amps: f64) {
        if let Some(r) = self.residual.get_mut(ch) {
            *r = Some(amps);
        }
    }

    /// Whether the channel's coil has an injected fault or its rail is below the design's range
    /// right now (the monitor does not expect such a coil to operate).
    fn degraded(&self, ch: usize) -> bool {
        self.faulted[ch]
            || self.benches[ch]
                .as_ref()
                .is_none_or(|b| b.supply().volts < self.design_min[ch])
    }

    fn view(&self, ch: usize) -> PlantView {
        let Some(b) = self.benches[ch].as_ref() else {
            return PlantView {
                coil_amps: 0.0,
                at_rest: true,
                moved: false,
                operated: false,
                degraded: true,
            };
        };
        let stats = b.stats(0).ok();
        PlantView {
            coil_amps: b.probe(0).map(|p| p.coil_amps).unwrap_or(0.0),
            at_rest: matches!(b.armature(0), Ok(ArmatureState::Released)),
            moved: stats.is_some_and(|s| s.moved_ns.is_some()),
            operated: stats.is_some_and(|s| s.operated_ns.is_some()),
            degraded: self.degraded(ch),
        }
    }

    /// Advances every channel to `until` (ns), taking the capture samples that fall due. Time
    /// never goes back: an `until` in the past changes nothing.
    pub fn advance_to(&mut self, until: u64) {
        if until <= self.now_ns {
            return;
        }
        for ch in 0..CH {
            self.advance_channel(ch, until);
        }
        self.now_ns = until;
    }

    fn advance_channel(&mut self, ch: usize, until: u64) {
        loop {
            let c = &self.capture[ch];
            let Some(on) = c.started else { break };
            if c.taken >= c.plan.samples {
                break;
            }
            let t = on
                + (u64::from(c.plan.first.get()) + c.taken as u64 * u64::from(c.plan.period.get()))
                    * NS_PER_TICK;
            if t > until {
                break;
            }
            let Some(b) = self.benches[ch].as_mut() else {
                return;
            };
            b.advance_to(t);
            let amps = b.probe(0).map(|p| p.switch_amps).unwrap_or(0.0);
            let code = self.adc[ch].convert(amps, &mut self.rng[ch]);
            let c = &mut self.capture[ch];
            c.buf[c.taken] = code;
            c.taken += 1;
        }
        if let Some(b) = self.benches[ch].as_mut() {
            b.advance_to(until);
        }
    }

    fn drive_state(&self, ch: usize) -> DriveState {
        if self.duty[ch] > 0 {
            DriveState::Pwm(self.duty[ch])
        } else if self.pin[ch] {
            DriveState::Full
        } else {
            DriveState::Off
        }
    }

    /// Sets channel `ch`'s switch pin (the hold duty stays).
    pub fn set_pin(
        &mut self,
        ch: usize,
        high: bool,
        sink: impl FnMut(&Violation),
    ) -> Option<DriveState> {
        let duty = *self.duty.get(ch)?;
        self.set_drive(ch, high, duty, sink)
    }

    /// Sets channel `ch`'s hold duty (of [`PWM_MAX_DUTY`]; the pin stays).
    pub fn set_duty(
        &mut self,
        ch: usize,
        duty: u16,
        sink: impl FnMut(&Violation),
    ) -> Option<DriveState> {
        let pin = *self.pin.get(ch)?;
        self.set_drive(ch, pin, duty, sink)
    }

    /// Applies a pin or duty change to the plant; the new drive state when it changed (the
    /// monitor judged it first, its findings to `sink`). A switch-on edge starts the armed
    /// capture (the comparator of the plant arms itself at every switch-on).
    fn set_drive(
        &mut self,
        ch: usize,
        pin: bool,
        duty: u16,
        sink: impl FnMut(&Violation),
    ) -> Option<DriveState> {
        let before = self.drive_state(ch);
        self.pin[ch] = pin;
        self.duty[ch] = duty.min(PWM_MAX_DUTY);
        let after = self.drive_state(ch);
        if before == after {
            return None;
        }
        let view = self.view(ch);
        self.monitor.drive(self.now_ns, ch, after, &view, sink);
        let Some(b) = self.benches[ch].as_mut() else {
            return Some(after);
        };
        let _ = match after {
            DriveState::Off => b.set_gate(0, false),
            DriveState::Full => b.set_gate(0, true),
            DriveState::Pwm(d) if d >= PWM_MAX_DUTY => b.set_gate(0, true),
            DriveState::Pwm(d) => b.set_pwm(
                0,
                PWM_PERIOD_NS,
                PWM_PERIOD_NS * u64::from(d) / u64::from(PWM_MAX_DUTY),
            ),
        };
        if before == DriveState::Off {
            if let Some(amps) = self.residual[ch].take() {
                let _ = b.set_current(0, amps);
            }
            let c = &mut self.capture[ch];
            c.started = (c.plan.samples > 0).then_some(self.now_ns);
            c.taken = 0;
        }
        Some(after)
    }

    /// The converter's scale on channel `ch`.
    pub fn scale(&self, ch: usize) -> SenseScale {
        SenseScale {
            amps_per_count: self.adc.get(ch).map_or(0.0, |a| a.amps_per_count() as f32),
            offset_counts: 0,
            full_scale_counts: FULL_SCALE_COUNTS,
        }
    }

    /// One conversion of channel `ch`'s switch current now.
    pub fn sample_now(&mut self, ch: usize) -> Result<u16, SenseErrorKind> {
        let amps = self
            .benches
            .get(ch)
            .ok_or(SenseErrorKind::Other)?
            .as_ref()
            .and_then(|b| b.probe(0).ok())
            .map_or(0.0, |x| x.switch_amps);
        Ok(self.adc[ch].convert(amps, &mut self.rng[ch]))
    }

    /// Arms channel `ch`'s capture and comparator for the next switch-on.
    pub fn arm(&mut self, ch: usize, plan: &SensePlan) -> Result<(), SenseErrorKind> {
        if plan.samples > MAX_SAMPLES {
            return Err(SenseErrorKind::BufferLength);
        }
        if plan.samples > 0 && plan.period.get() == 0 {
            return Err(SenseErrorKind::PeriodUnsupported);
        }
        let a = self.adc.get(ch).ok_or(SenseErrorKind::Other)?;
        let cmp = match plan.trip_level {
            Some(level) if level > FULL_SCALE_COUNTS => {
                return Err(SenseErrorKind::LevelOutOfRange)
            }
            // The comparator sees the amplified shunt voltage, offset included.
            Some(level) => Some(Comparator {
                threshold_amps: (f64::from(level) - a.offset_lsb) * a.amps_per_count(),
                sense: SensePoint::Switch,
            }),
            None => None,
        };
        self.benches[ch]
            .as_mut()
            .ok_or(SenseErrorKind::Other)?
            .set_comparator(0, cmp)
            .map_err(|_| SenseErrorKind::Other)?;
        let c = &mut self.capture[ch];
        c.plan = *plan;
        c.started = None;
        c.taken = 0;
        Ok(())
    }

    /// The completed capture of channel `ch` into `out`, or `None` while it is still running.
    pub fn samples(&self, ch: usize, out: &mut [u16]) -> Result<Option<Capture>, SenseErrorKind> {
        let c = self.capture.get(ch).ok_or(SenseErrorKind::Other)?;
        if c.started.is_none() || c.taken < c.plan.samples {
            return Ok(None);
        }
        let n = c.plan.samples;
        let dst = out.get_mut(..n).ok_or(SenseErrorKind::BufferLength)?;
        dst.copy_from_slice(&c.buf[..n]);
        Ok(Some(Capture {
            len: n,
            first: c.plan.first,
            period: c.plan.period,
        }))
    }

    /// When channel `ch`'s comparator tripped after the latest switch-on, in whole ticks (a
    /// capture timer counts whole ticks: the time rounds down).
    pub fn crossing(&self, ch: usize) -> Result<Crossing, SenseErrorKind> {
        let s = self
            .bench(ch)
            .and_then(|b| b.stats(0).ok())
            .ok_or(SenseErrorKind::Other)?;
        Ok(match s.comparator_ticks_since_on(TICK_HZ) {
            Some(t) => Crossing::After(Ticks(u32::try_from(t).unwrap_or(u32::MAX))),
            None => Crossing::NotYet,
        })
    }
}
