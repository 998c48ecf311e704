//! Set-up and misuse: bad configurations are refused with a reason, calls out of order or with
//! time going backwards change nothing, on hardware that does nothing (no plant needed).

mod sim;

use core::convert::Infallible;

use coilwise::schedule::{ChannelLimits, LimitsError};
use coilwise::{Instant, TickRate, Ticks};
use coilwise_driver::*;

struct Pin;
impl embedded_hal::digital::ErrorType for Pin {
    type Error = Infallible;
}
impl embedded_hal::digital::OutputPin for Pin {
    fn set_low(&mut self) -> Result<(), Infallible> {
        Ok(())
    }
    fn set_high(&mut self) -> Result<(), Infallible> {
        Ok(())
    }
}
impl embedded_hal::pwm::ErrorType for Pin {
    type Error = Infallible;
}
impl embedded_hal::pwm::SetDutyCycle for Pin {
    fn max_duty_cycle(&self) -> u16 {
        1000
    }
    fn set_duty_cycle(&mut self, _: u16) -> Result<(), Infallible> {
        Ok(())
    }
}

/// A converter of `M` samples at most that reads zero.
struct Adc<const M: usize>;
impl<const M: usize> CurrentSense for Adc<M> {
    type Error = SenseErrorKind;
    const MAX_SAMPLES: usize = M;
    fn scale(&self) -> SenseScale {
        SenseScale {
            amps_per_count: 2e-4,
            offset_counts: 0,
            full_scale_counts: 4095,
        }
    }
    fn sample_now(&mut self) -> Result<u16, SenseErrorKind> {
        Ok(0)
    }
    fn arm(&mut self, _: &SensePlan) -> Result<(), SenseErrorKind> {
        Ok(())
    }
    fn samples(&mut self, _: &mut [u16]) -> Result<Option<Capture>, SenseErrorKind> {
        Ok(None)
    }
    fn crossing(&mut self) -> Result<Crossing, SenseErrorKind> {
        Ok(Crossing::NotYet)
    }
}

fn rate() -> TickRate {
    TickRate::new(1_000_000).unwrap()
}

/// The tool's constants for the greenhouse valve (`coilwise constants
/// examples/greenhouse-valve.toml`, 1 MHz ticks).
fn valve_limits() -> ChannelLimits {
    ChannelLimits::new(Ticks(19_285), Ticks(23_704)).unwrap()
}

#[test]
fn bad_configurations_are_refused_with_a_reason() {
    let cfg = [ChannelConfig::from_limits(valve_limits(), 0)];
    let mut st = DriverState::<1>::new();
    let r = Driver::new(
        &cfg,
        &mut st,
        [ChannelHw::new(Pin, Pin, Adc::<64>)],
        rate(),
        Instant(0),
        0,
    );
    assert!(matches!(
        r,
        Err(SetupError::Limits {
            error: LimitsError::ZeroInrushCap,
            ..
        })
    ));
    let cfg = [ChannelConfig::from_limits(valve_limits(), 1)];
    let r = Driver::new(
        &cfg,
        &mut st,
        [ChannelHw::new(Pin, Pin, Adc::<64>)],
        rate(),
        Instant(0),
        1,
    );
    assert!(matches!(r, Err(SetupError::SupplyGroup { channel: 0 })));
    // A diagnosed channel needs a 64-sample capture.
    let diag = [sim::parts::channel_config(0)];
    let r = Driver::new(
        &diag,
        &mut st,
        [ChannelHw::new(Pin, Pin, Adc::<32>)],
        rate(),
        Instant(0),
        1,
    );
    assert!(matches!(r, Err(SetupError::Capture { channel: 0 })));
    // Options outside their domain.
    let design = coilwise_rig::scenario::valve_design(1_000_000).unwrap();
    let mut o = ChannelOptions::new(Ticks(100));
    o.trip_fraction = 1.0;
    assert!(matches!(
        ChannelConfig::from_design(&design, &o),
        Err(SetupError::Capture { .. })
    ));
    let mut o = ChannelOptions::new(Ticks(0));
    o.noise_counts = 0.6;
    assert!(ChannelConfig::from_design(&design, &o).is_err());
    let mut o = ChannelOptions::new(Ticks(100));
    o.noise_counts = f32::NAN;
    assert!(ChannelConfig::from_design(&design, &o).is_err());
}

#[test]
fn calls_out_of_order_or_backwards_in_time_change_nothing() {
    let cfg = [ChannelConfig::from_limits(valve_limits(), 0)];
    let mut st = DriverState::<1, 4, 4>::new();
    let hw = [ChannelHw::new(Pin, Pin, Adc::<64>)];
    let mut drv = Driver::new(&cfg, &mut st, hw, rate(), Instant(1_000), 1).unwrap();
    assert_eq!(
        drv.request(Instant(1_000), 0, Pulse::now(Ticks(50_000))),
        Err(Refused::NotCommissioned)
    );
    drv.commission(Instant(1_000)).unwrap();
    assert_eq!(
        drv.commission(Instant(1_000)).unwrap_err().kind,
        ErrorKind::Phase
    );
    assert_eq!(drv.phase(), Phase::Ready);
    assert_eq!(
        drv.reenable(Instant(1_000), 0).unwrap_err().kind,
        ErrorKind::NotIsolated
    );
    assert!(drv
        .request(Instant(1_000), 0, Pulse::now(Ticks(50_000)))
        .is_ok());
    drv.service(Instant(2_000)).unwrap();
    assert!(drv.status(0).unwrap().on);
    // Time going backwards: refused, nothing applied.
    assert_eq!(
        drv.service(Instant(1_500)).unwrap_err().kind,
        ErrorKind::TimeWentBackwards
    );
    assert_eq!(
        drv.request(Instant(1_500), 0, Pulse::now(Ticks(50_000))),
        Err(Refused::Schedule(
            coilwise::schedule::Refusal::TimeWentBackwards
        ))
    );
    assert!(drv.status(0).unwrap().on);
    assert_eq!(
        drv.cancel(Instant(1_999), 0).unwrap_err().kind,
        ErrorKind::TimeWentBackwards
    );
    // Unknown channels.
    assert_eq!(
        drv.cancel(Instant(3_000), 1).unwrap_err().kind,
        ErrorKind::UnknownChannel
    );
    assert!(drv.status(1).is_none());
    // Released before its minimum on-time: stays on until then.
    let s = drv.release(Instant(3_000), 0).unwrap();
    assert!(matches!(
        s,
        coilwise::schedule::Stopping::Ending { off_at, .. } if off_at == Instant(1_000 + 19_285)
    ));
    let next = drv.service(Instant(3_000)).unwrap();
    assert_eq!(next, Instant(1_000 + 19_285));
    drv.service(next).unwrap();
    assert!(!drv.status(0).unwrap().on);
    assert!(drv.idle());
    // Every event emitted is either popped or counted as lost (the properties test overflow).
    let mut lost = 0;
    let mut seen = 0;
    while let Some(e) = drv.pop_event() {
        match e.kind {
            EventKind::Lost { count } => lost += count,
            _ => seen += 1,
        }
    }
    assert_eq!(lost, drv.events().lost());
    assert_eq!(seen + lost, drv.events().emitted());
    // Refused (not commissioned), Commissioned, Accepted, Refused (time went backwards).
    assert_eq!(drv.events().emitted(), 4);
    let hw = drv.free();
    assert_eq!(hw.len(), 1);
}
