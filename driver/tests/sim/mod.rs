//! The host rig: the driver's seam (switch, hold PWM, current sense, tick source) implemented on
//! the numerical coil plant of `coilwise-host-tests`, in simulated time, with an independent
//! edge monitor. This adapter lives in the driver's tests (the driver has `coilwise-host-tests`
//! as a dev-dependency), so the simulator itself stays free of the core and of the driver:
//! dependencies point one way, driver tests → simulator.
//!
//! It mirrors the QEMU board (`firmware-example/src/board/mod.rs`): one `Bench<1>` per channel;
//! the converter samples at the instants of the armed plan while time advances (as a
//! timer-triggered ADC with DMA would); the comparator latches the first crossing after each
//! switch-on; a script injects faults and supply changes; every drive change goes to the rig's
//! edge monitor (`coilwise_rig::monitor`, the firmware's too) with the plant's state.
#![allow(dead_code)]

pub use coilwise_rig::monitor;
pub mod parts;
pub mod run;

use std::cell::RefCell;
use std::convert::Infallible;
use std::rc::Rc;

use coilwise::{Instant, TickRate, Ticks};
use coilwise_driver::{
    Capture, ChannelHw, Crossing, CurrentSense, SenseErrorKind, SensePlan, SenseScale, TickSource,
};
use coilwise_host_tests::{
    AdcConfig, ArmatureState, Bench, Comparator, Fault, Prng, SensePoint, SolverSettings, Stepping,
    Supply,
};
use embedded_hal::digital::{ErrorType, OutputPin};
use embedded_hal::pwm::SetDutyCycle;

use monitor::{DriveState, PlantView, Violation};

/// Most pulses the monitor's inrush check keeps over one test run.
const MONITORED_PULSES: usize = 1024;

/// The rig's edge monitor.
pub type Monitor = monitor::Monitor<CHANNELS, MONITORED_PULSES>;

/// Prints one broken constraint the monitor found.
pub fn print_violation(v: &Violation) {
    eprintln!("[monitor] {v}");
}
pub use parts::{CHANNELS, TICK_HZ};

/// Samples one capture can hold.
pub const MAX_SAMPLES: usize = 64;
/// Hold PWM carrier of the simulated timers, Hz.
pub const PWM_HZ: u32 = 2_000;
/// Duty resolution of the simulated PWM.
pub const PWM_MAX_DUTY: u16 = 1_000;
const NS_PER_TICK: u64 = 1_000_000_000 / TICK_HZ as u64;
const PWM_PERIOD_NS: u64 = 1_000_000_000 / PWM_HZ as u64;

/// Something the script does to the simulated hardware.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Happening {
    /// A fault appears on a channel.
    Fault(usize, Fault),
    /// A supply group's voltage changes, V.
    Supply(usize, f64),
}

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

#[derive(Clone, Copy)]
struct CaptureState {
    plan: SensePlan,
    started: Option<u64>,
    taken: usize,
    buf: [u16; MAX_SAMPLES],
}

/// The simulated hardware.
pub struct Plant {
    benches: Vec<Bench<1>>,
    adc: Vec<AdcConfig>,
    rng: Vec<Prng>,
    design_min: Vec<f64>,
    pin: Vec<bool>,
    duty: Vec<u16>,
    faulted: Vec<bool>,
    capture: Vec<CaptureState>,
    script: Vec<(u64, Happening)>,
    now_ns: u64,
    /// The independent check of what the pins did.
    pub monitor: Monitor,
    /// Sense calls to fail from now on (tests of hardware errors): channel.
    pub broken_sense: Option<usize>,
    /// Every drive change: (ns, channel, new state).
    pub edges: Vec<(u64, usize, DriveState)>,
}

/// The shared plant, as peripherals share one chip.
pub type Shared = Rc<RefCell<Plant>>;

impl Plant {
    /// The greenhouse rig with `script` (ms, happening), sorted by time.
    pub fn greenhouse(script: &[(u32, Happening)]) -> Shared {
        let mut benches = Vec::new();
        let mut adc = Vec::new();
        let mut rng = Vec::new();
        let mut design_min = Vec::new();
        for ch in 0..CHANNELS {
            let cfg = parts::channel_config(ch);
            let d = cfg.diagnosis.expect("rig channels are diagnosed");
            let v = f64::from(d.design.supply.nominal().value());
            let params = parts::built::channel(ch).expect("rig part");
            benches.push(Bench::single(Supply::ideal(v), params, solver()).expect("bench"));
            let apc = f64::from(parts::amps_per_count(ch));
            let a = AdcConfig {
                bits: 12,
                full_scale_amps: apc * 4096.0,
                noise_lsb_rms: 0.6,
                offset_lsb: [3.0, 2.0, 4.0, 3.0][ch % 4],
                gain_error: 0.0,
                start_latency_ns: 0,
                start_jitter_ns: 0,
                seed: 0x5EED_0000 + ch as u64,
                sense: SensePoint::Switch,
            };
            rng.push(Prng::new(a.seed));
            adc.push(a);
            design_min.push(f64::from(d.design.supply.min().value()));
        }
        let mut script: Vec<(u64, Happening)> = script
            .iter()
            .map(|&(ms, h)| (u64::from(ms) * 1_000_000, h))
            .collect();
        script.sort_by_key(|e| e.0);
        let mut p = Plant {
            benches,
            adc,
            rng,
            design_min,
            pin: vec![false; CHANNELS],
            duty: vec![0; CHANNELS],
            faulted: vec![false; CHANNELS],
            capture: vec![
                CaptureState {
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
                CHANNELS
            ],
            script,
            now_ns: 0,
            monitor: Monitor::new(),
            broken_sense: None,
            edges: Vec::new(),
        };
        p.apply_due(0);
        Rc::new(RefCell::new(p))
    }

    /// Simulated time, ns.
    pub fn now_ns(&self) -> u64 {
        self.now_ns
    }

    /// The bench of channel `ch`.
    pub fn bench(&self, ch: usize) -> &Bench<1> {
        &self.benches[ch]
    }

    fn degraded(&self, ch: usize) -> bool {
        self.faulted[ch] || self.benches[ch].supply().volts < self.design_min[ch]
    }

    fn view(&self, ch: usize) -> PlantView {
        let b = &self.benches[ch];
        let stats = b.stats(0).ok();
        PlantView {
            coil_amps: b.probe(0).map(|p| p.coil_amps).unwrap_or(0.0),
            at_rest: matches!(b.armature(0), Ok(ArmatureState::Released)),
            moved: stats.is_some_and(|s| s.moved_ns.is_some()),
            operated: stats.is_some_and(|s| s.operated_ns.is_some()),
            degraded: self.degraded(ch),
        }
    }

    fn apply_due(&mut self, upto: u64) {
        while let Some(&(at, h)) = self.script.first() {
            if at > upto {
                break;
            }
            self.script.remove(0);
            match h {
                Happening::Fault(ch, f) => {
                    if self.benches[ch].inject(0, f).is_ok() {
                        self.faulted[ch] = true;
                    }
                }
                Happening::Supply(g, v) => {
                    for ch in (0..CHANNELS).filter(|&c| parts::group(c) == g) {
                        let _ = self.benches[ch].set_supply_volts(v);
                    }
                }
            }
        }
    }

    /// Advances every plant to `t_ns`, taking due samples and applying due script events.
    pub fn advance_to(&mut self, t_ns: u64) {
        while t_ns > self.now_ns {
            let next = self.script.first().map(|e| e.0).filter(|&at| at <= t_ns);
            let until = next.unwrap_or(t_ns).max(self.now_ns);
            for ch in 0..CHANNELS {
                self.advance_channel(ch, until);
            }
            self.now_ns = until;
            match next {
                Some(at) => self.apply_due(at),
                None => break,
            }
        }
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
            self.benches[ch].advance_to(t);
            let amps = self.benches[ch]
                .probe(0)
                .map(|p| p.switch_amps)
                .unwrap_or(0.0);
            let code = self.adc[ch].convert(amps, &mut self.rng[ch]);
            let c = &mut self.capture[ch];
            c.buf[c.taken] = code;
            c.taken += 1;
        }
        self.benches[ch].advance_to(until);
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

    fn set_drive(&mut self, ch: usize, pin: bool, duty: u16) {
        let before = self.drive_state(ch);
        self.pin[ch] = pin;
        self.duty[ch] = duty.min(PWM_MAX_DUTY);
        let after = self.drive_state(ch);
        if before == after {
            return;
        }
        let view = self.view(ch);
        self.monitor
            .drive(self.now_ns, ch, after, &view, print_violation);
        self.edges.push((self.now_ns, ch, after));
        let b = &mut self.benches[ch];
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
            let c = &mut self.capture[ch];
            c.started = (c.plan.samples > 0).then_some(self.now_ns);
            c.taken = 0;
        }
    }
}

/// Switch of one channel.
pub struct SimSwitch(Shared, usize);
/// Hold PWM of one channel.
pub struct SimHold(Shared, usize);
/// Converter and comparator of one channel.
pub struct SimSense(Shared, usize);
/// The plant's clock (1 µs ticks).
pub struct SimClock(pub Shared);

impl ErrorType for SimSwitch {
    type Error = Infallible;
}

impl OutputPin for SimSwitch {
    fn set_low(&mut self) -> Result<(), Infallible> {
        let mut p = self.0.borrow_mut();
        let d = p.duty[self.1];
        p.set_drive(self.1, false, d);
        Ok(())
    }
    fn set_high(&mut self) -> Result<(), Infallible> {
        let mut p = self.0.borrow_mut();
        let d = p.duty[self.1];
        p.set_drive(self.1, true, d);
        Ok(())
    }
}

impl embedded_hal::pwm::ErrorType for SimHold {
    type Error = Infallible;
}

impl SetDutyCycle for SimHold {
    fn max_duty_cycle(&self) -> u16 {
        PWM_MAX_DUTY
    }
    fn set_duty_cycle(&mut self, duty: u16) -> Result<(), Infallible> {
        let mut p = self.0.borrow_mut();
        let pin = p.pin[self.1];
        p.set_drive(self.1, pin, duty);
        Ok(())
    }
}

impl SimSense {
    fn check(&self) -> Result<(), SenseErrorKind> {
        if self.0.borrow().broken_sense == Some(self.1) {
            Err(SenseErrorKind::Overrun)
        } else {
            Ok(())
        }
    }
}

impl CurrentSense for SimSense {
    type Error = SenseErrorKind;
    const MAX_SAMPLES: usize = MAX_SAMPLES;

    fn scale(&self) -> SenseScale {
        SenseScale {
            amps_per_count: self.0.borrow().adc[self.1].amps_per_count() as f32,
            offset_counts: 0,
            full_scale_counts: 4095,
        }
    }

    fn sample_now(&mut self) -> Result<u16, SenseErrorKind> {
        self.check()?;
        let mut p = self.0.borrow_mut();
        let ch = self.1;
        let amps = p.benches[ch].probe(0).map_or(0.0, |x| x.switch_amps);
        let Plant { adc, rng, .. } = &mut *p;
        Ok(adc[ch].convert(amps, &mut rng[ch]))
    }

    fn arm(&mut self, plan: &SensePlan) -> Result<(), SenseErrorKind> {
        self.check()?;
        if plan.samples > MAX_SAMPLES {
            return Err(SenseErrorKind::BufferLength);
        }
        if plan.samples > 0 && plan.period.get() == 0 {
            return Err(SenseErrorKind::PeriodUnsupported);
        }
        let mut p = self.0.borrow_mut();
        let ch = self.1;
        let cmp = match plan.trip_level {
            Some(level) if level > 4095 => return Err(SenseErrorKind::LevelOutOfRange),
            Some(level) => {
                let a = &p.adc[ch];
                Some(Comparator {
                    threshold_amps: (f64::from(level) - a.offset_lsb) * a.amps_per_count(),
                    sense: SensePoint::Switch,
                })
            }
            None => None,
        };
        p.benches[ch]
            .set_comparator(0, cmp)
            .map_err(|_| SenseErrorKind::Other)?;
        let c = &mut p.capture[ch];
        c.plan = *plan;
        c.started = None;
        c.taken = 0;
        Ok(())
    }

    fn samples(&mut self, out: &mut [u16]) -> Result<Option<Capture>, SenseErrorKind> {
        self.check()?;
        let p = self.0.borrow();
        let c = &p.capture[self.1];
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

    fn crossing(&mut self) -> Result<Crossing, SenseErrorKind> {
        self.check()?;
        let p = self.0.borrow();
        let s = p.benches[self.1]
            .stats(0)
            .map_err(|_| SenseErrorKind::Other)?;
        Ok(match s.comparator_ticks_since_on(TICK_HZ) {
            Some(t) => Crossing::After(Ticks(u32::try_from(t).unwrap_or(u32::MAX))),
            None => Crossing::NotYet,
        })
    }
}

impl TickSource for SimClock {
    fn rate(&self) -> TickRate {
        TickRate::new(TICK_HZ).expect("1 MHz")
    }
    fn now(&self) -> Instant {
        Instant((self.0.borrow().now_ns / NS_PER_TICK) as u32)
    }
}

impl embedded_hal::delay::DelayNs for SimClock {
    fn delay_ns(&mut self, ns: u32) {
        let mut p = self.0.borrow_mut();
        let t = p.now_ns + u64::from(ns);
        p.advance_to(t);
    }
}

impl SimClock {
    /// Advances the plant to `t` (no-op if past).
    pub fn wait_until(&mut self, t: Instant) {
        let d = t.since(self.now());
        if d > 0 {
            let mut p = self.0.borrow_mut();
            let t = p.now_ns + d as u64 * NS_PER_TICK;
            p.advance_to(t);
        }
    }
}

/// The driver on the rig, with an event queue of `E`.
pub type RigDriverE<const E: usize> =
    coilwise_driver::Driver<'static, SimSwitch, SimHold, SimSense, CHANNELS, 8, E>;

/// The driver on the rig.
pub type RigDriver = RigDriverE<32>;

/// Builds the rig with `script` and the driver on it (monitor armed with the driver's limits).
pub fn rig(script: &[(u32, Happening)]) -> (Shared, SimClock, RigDriver) {
    rig_e::<32>(script)
}

/// [`rig`] with an event queue of `E`.
pub fn rig_e<const E: usize>(script: &[(u32, Happening)]) -> (Shared, SimClock, RigDriverE<E>) {
    let plant = Plant::greenhouse(script);
    let hw = core::array::from_fn(|ch| {
        ChannelHw::new(
            SimSwitch(plant.clone(), ch),
            SimHold(plant.clone(), ch),
            SimSense(plant.clone(), ch),
        )
    });
    // The driver borrows its configurations; a test leaks one small array per rig.
    let configs: &'static [coilwise_driver::ChannelConfig; CHANNELS] =
        Box::leak(Box::new(core::array::from_fn(parts::channel_config)));
    let clock = SimClock(plant.clone());
    let state = Box::leak(Box::new(coilwise_driver::DriverState::new()));
    let drv = RigDriverE::<E>::new(
        configs,
        state,
        hw,
        clock.rate(),
        clock.now(),
        parts::INRUSH_CAP,
    )
    .expect("rig driver");
    plant
        .borrow_mut()
        .monitor
        .set_limits(&drv.limits(), drv.inrush_cap());
    (plant, clock, drv)
}

impl Plant {
    /// Clears channel `ch`'s injected faults (the coil or its wire replaced).
    pub fn repair(&mut self, ch: usize) {
        if self.benches[ch].clear_faults(0).is_ok() {
            self.faulted[ch] = false;
        }
    }
}
