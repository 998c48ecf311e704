//! Fuzz the bands and the comparator / steady-current verdicts: any supply reading, temperature
//! window, threshold, times (as f32 and as wrapping u32 instants) and currents. Invariant: no
//! panic; every field of the bands, probe, reading and verdicts finite; bands ordered.
#![no_main]

use coilwise::diagnosis::verdict::{judge_steady, judge_threshold};
use coilwise::diagnosis::{
    Conditions, Criteria, Expected, Probe, SupplyReading, ThresholdBand, ThresholdReading,
};
use coilwise::{Amps, Celsius, Instant, Seconds, TemperatureRange, TickRate, Volts};
use libfuzzer_sys::fuzz_target;

mod common;
use common::{all_finite, check, design, Bytes};

fuzz_target!(|data: &[u8]| {
    let mut b = Bytes(data);
    let mode = b.u8();
    let mut cond = Conditions::default();
    if mode & 1 != 0 {
        cond.supply = SupplyReading::new(Volts::new(b.mostly(24.0)), b.mostly(0.01)).ok();
    }
    if mode & 2 != 0 {
        let lo = b.mostly(20.0) - 60.0;
        let hi = lo + b.mostly(10.0);
        cond.winding_temperature = TemperatureRange::new(Celsius::new(lo), Celsius::new(hi)).ok();
    }
    let mut d = design();
    if mode & 4 != 0 {
        d.tolerances.resistance = b.mostly(0.1);
        d.tolerances.inductance = b.mostly(0.1);
        d.tolerances.sense = b.mostly(0.01);
        d.operate_allowance = Seconds::new(b.mostly(0.008));
    }
    let Ok(expected) = Expected::new(&d, &cond) else {
        return;
    };
    all_finite("expected", &expected);
    assert!(expected.final_current.min.value() <= expected.final_current.max.value());
    assert!(expected.tau.min.value() <= expected.tau.max.value());
    assert!(expected.slope.min <= expected.slope.max);
    assert!(expected.loop_resistance.min <= expected.loop_resistance.max);
    assert!(expected.inductance.min <= expected.inductance.max);
    assert!(expected.sensed_drive.min <= expected.sensed_drive.max);
    if let Ok(p) = Probe::new(&d, b.mostly(0.5)) {
        all_finite("probe", &p);
        assert!(p.length.get() > 0 && p.duration.value() > 0.0, "{p:?}");
    }
    let criteria = Criteria::default();
    let steady = if mode & 8 != 0 {
        Some(Amps::new(b.mostly(0.13)))
    } else {
        None
    };
    check(&judge_steady(Amps::new(b.f32()), &expected, &criteria));
    let Ok(band) = ThresholdBand::new(&d, &cond, Amps::new(b.mostly(0.05))) else {
        return;
    };
    all_finite("band", &band);
    assert!(band.time.min.value() <= band.time.max.value());
    assert!(band.time.min.value() >= 0.0);
    let reading = if mode & 16 != 0 {
        let rate = TickRate::new(b.u32().max(1)).unwrap();
        let on = Instant(b.u32());
        let crossing = (mode & 32 != 0).then(|| Instant(b.u32()));
        match ThresholdReading::from_instants(rate, on, crossing, Instant(b.u32())) {
            Ok(r) => {
                all_finite("reading", &r);
                r
            }
            Err(_) => return,
        }
    } else if mode & 32 != 0 {
        ThresholdReading::Crossed(Seconds::new(b.mostly(1e-3)))
    } else {
        ThresholdReading::NotCrossed {
            waited: Seconds::new(b.mostly(1e-2)),
        }
    };
    check(&judge_threshold(
        reading, &band, steady, &expected, &criteria,
    ));
});
