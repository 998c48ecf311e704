//! The host rig: the driver's seam (switch, hold PWM, current sense, tick source) implemented on
//! the numerical coil plant of `coilwise-host-tests`, in simulated time, with an independent
//! edge monitor. This adapter lives in the driver's tests (the driver has `coilwise-host-tests`
//! as a dev-dependency), so the simulator itself stays free of the core and of the driver:
//! dependencies point one way, driver tests → simulator.
//!
//! The hardware is the rig's (`coilwise_rig::hardware`, the QEMU board's too): one `Bench<1>` per
//! channel; the converter samples at the instants of the armed plan while time advances (as a
//! timer-triggered ADC with DMA would); the comparator latches the first crossing after each
//! switch-on; every drive change goes to the rig's edge monitor with the plant's state. Here: a
//! script injects faults and supply changes, a sense can be broken on purpose, and every edge is
//! recorded.
#![allow(dead_code)]

pub use coilwise_rig::monitor;
pub mod parts;
pub mod run;

use std::cell::RefCell;
use std::convert::Infallible;
use std::rc::Rc;

use coilwise::{Instant, TickRate};
use coilwise_driver::{
    Capture, ChannelHw, Crossing, CurrentSense, SenseErrorKind, SensePlan, SenseScale, TickSource,
};
use coilwise_host_tests::{Fault, Magnetics};
use coilwise_rig::hardware::{Channels, NS_PER_TICK};
use embedded_hal::digital::{ErrorType, OutputPin};
use embedded_hal::pwm::SetDutyCycle;

use monitor::{DriveState, Violation};

pub use coilwise_rig::hardware::{MAX_SAMPLES, PWM_MAX_DUTY};

/// Most pulses the monitor's inrush check keeps over one test run.
const MONITORED_PULSES: usize = 1024;

/// Prints one broken constraint the monitor found.
pub fn print_violation(v: &Violation) {
    eprintln!("[monitor] {v}");
}
pub use parts::{CHANNELS, TICK_HZ};

/// Something the script does to the simulated hardware.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Happening {
    /// A fault appears on a channel.
    Fault(usize, Fault),
    /// A supply group's voltage changes, V.
    Supply(usize, f64),
}

/// The simulated hardware and its test harness.
pub struct Plant {
    /// Plants, converters, drive, capture, and the edge monitor (`hw.monitor`).
    pub hw: Channels<CHANNELS, MONITORED_PULSES>,
    script: Vec<(u64, Happening)>,
    /// Sense calls to fail from now on (tests of hardware errors): channel.
    pub broken_sense: Option<usize>,
    /// Every drive change: (ns, channel, new state).
    pub edges: Vec<(u64, usize, DriveState)>,
}

/// The shared plant, as peripherals share one chip.
pub type Shared = Rc<RefCell<Plant>>;

impl Plant {
    /// The greenhouse rig with `script` (ms, happening), sorted by time. Its coils are linear
    /// (no eddy path, no saturation: see `parts`).
    pub fn greenhouse(script: &[(u32, Happening)]) -> Shared {
        let mut hw = Channels::empty();
        for ch in 0..CHANNELS {
            let spec = coilwise_rig::scenario::channel(ch)
                .expect("rig channel")
                .expect("rig design");
            hw.fit(ch, &spec, Magnetics::LINEAR).expect("rig bench");
        }
        let mut script: Vec<(u64, Happening)> = script
            .iter()
            .map(|&(ms, h)| (u64::from(ms) * 1_000_000, h))
            .collect();
        script.sort_by_key(|e| e.0);
        let mut p = Plant {
            hw,
            script,
            broken_sense: None,
            edges: Vec::new(),
        };
        p.apply_due(0);
        Rc::new(RefCell::new(p))
    }

    /// Simulated time, ns.
    pub fn now_ns(&self) -> u64 {
        self.hw.now_ns()
    }

    fn apply_due(&mut self, upto: u64) {
        while let Some(&(at, h)) = self.script.first() {
            if at > upto {
                break;
            }
            self.script.remove(0);
            match h {
                Happening::Fault(ch, f) => {
                    self.hw.inject(ch, f);
                }
                Happening::Supply(g, v) => {
                    self.hw
                        .set_rail_volts(u8::try_from(g).expect("supply group"), v);
                }
            }
        }
    }

    /// Advances every plant to `t_ns`, taking due samples and applying due script events.
    pub fn advance_to(&mut self, t_ns: u64) {
        while t_ns > self.hw.now_ns() {
            let next = self.script.first().map(|e| e.0).filter(|&at| at <= t_ns);
            self.hw.advance_to(next.unwrap_or(t_ns));
            match next {
                Some(at) => self.apply_due(at),
                None => break,
            }
        }
    }

    fn record(&mut self, ch: usize, changed: Option<DriveState>) {
        if let Some(d) = changed {
            self.edges.push((self.hw.now_ns(), ch, d));
        }
    }

    fn set_pin(&mut self, ch: usize, high: bool) {
        let d = self.hw.set_pin(ch, high, print_violation);
        self.record(ch, d);
    }

    fn set_duty(&mut self, ch: usize, duty: u16) {
        let d = self.hw.set_duty(ch, duty, print_violation);
        self.record(ch, d);
    }

    /// Clears channel `ch`'s injected faults (the coil or its wire replaced).
    pub fn repair(&mut self, ch: usize) {
        self.hw.repair(ch);
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
        self.0.borrow_mut().set_pin(self.1, false);
        Ok(())
    }
    fn set_high(&mut self) -> Result<(), Infallible> {
        self.0.borrow_mut().set_pin(self.1, true);
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
        self.0.borrow_mut().set_duty(self.1, duty);
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
        self.0.borrow().hw.scale(self.1)
    }

    fn sample_now(&mut self) -> Result<u16, SenseErrorKind> {
        self.check()?;
        self.0.borrow_mut().hw.sample_now(self.1)
    }

    fn arm(&mut self, plan: &SensePlan) -> Result<(), SenseErrorKind> {
        self.check()?;
        self.0.borrow_mut().hw.arm(self.1, plan)
    }

    fn samples(&mut self, out: &mut [u16]) -> Result<Option<Capture>, SenseErrorKind> {
        self.check()?;
        self.0.borrow().hw.samples(self.1, out)
    }

    fn crossing(&mut self) -> Result<Crossing, SenseErrorKind> {
        self.check()?;
        self.0.borrow().hw.crossing(self.1)
    }
}

impl TickSource for SimClock {
    fn rate(&self) -> TickRate {
        TickRate::new(TICK_HZ).expect("1 MHz")
    }
    fn now(&self) -> Instant {
        Instant((self.0.borrow().now_ns() / NS_PER_TICK) as u32)
    }
}

impl embedded_hal::delay::DelayNs for SimClock {
    fn delay_ns(&mut self, ns: u32) {
        let mut p = self.0.borrow_mut();
        let t = p.now_ns() + u64::from(ns);
        p.advance_to(t);
    }
}

impl SimClock {
    /// Advances the plant to `t` (no-op if past).
    pub fn wait_until(&mut self, t: Instant) {
        let d = t.since(self.now());
        if d > 0 {
            let mut p = self.0.borrow_mut();
            let t = p.now_ns() + d as u64 * NS_PER_TICK;
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
        .hw
        .monitor
        .set_limits(&drv.limits(), drv.inrush_cap());
    (plant, clock, drv)
}
