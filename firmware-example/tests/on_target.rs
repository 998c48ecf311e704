//! On-device checks of the core, run under QEMU with defmt-test:
//! `cargo test --release --target thumbv7em-none-eabihf` (or `thumbv6m-none-eabi`) in
//! `firmware-example/`.
//!
//! Every expected value comes from outside the firmware: the self-check's reference values, the
//! scheduler's documented rules applied by hand, and a resistor-inductor circuit worked by hand
//! (47.5 Ω winding + 0.5 Ω shunt, ideal switch, 0.24 H, 24 V: `I∞ = 0.5 A`, `τ = 5 ms`, time to
//! 0.25 A `= τ·ln 2 = 3.4657 ms`).
#![no_std]
#![no_main]

use coilwise_firmware_example as _; // logger, panic handler (exit 101), exits
use cortex_m as _;

use coilwise::diagnosis::verdict::{judge_threshold, judge_trace};
use coilwise::diagnosis::{
    fit_rise, Conditions, Criteria, Expected, Finding, FitOptions, Sampling, ThresholdBand,
    ThresholdReading,
};
use coilwise::schedule::{
    Admission, ChannelId, ChannelLimits, DelayReason, PinAction, PinEvent, Refusal, Request,
    Scheduler,
};
use coilwise::{
    Amps, Celsius, Circuit, Clamp, Coil, DriverDesign, Henries, Instant, Ohms, Seconds,
    SupplyRange, Switch, TemperatureRange, TickRate, Ticks, Tolerances, Topology, Volts,
};
/// The hand-worked circuit as a design: supply 24 V ± 1 %, winding 15…25 °C, parts ± 2 %.
fn hand_design() -> DriverDesign {
    let coil = Coil::new(
        Ohms::new(47.5),
        Celsius::new(20.0),
        Henries::new(0.24),
        Henries::new(0.24),
        Volts::new(12.0),
        Volts::new(2.0),
    )
    .unwrap();
    let circuit = Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(0.0),
            breakdown: Volts::new(100.0),
        },
        Topology::LowSide,
        Ohms::new(0.5),
        Ohms::new(0.0),
        Clamp::diode_zener(Volts::new(0.7), Volts::new(23.75)).unwrap(),
    )
    .unwrap();
    let mut d = DriverDesign::new(
        circuit,
        SupplyRange::with_tolerance(Volts::new(24.0), 0.01).unwrap(),
        TemperatureRange::new(Celsius::new(15.0), Celsius::new(25.0)).unwrap(),
        TickRate::new(1_000_000).unwrap(),
    );
    d.tolerances = Tolerances {
        resistance: 0.02,
        inductance: 0.02,
        sense: 0.0,
    };
    d
}

/// 64 samples, 100 µs apart from 100 µs, of `i∞·(1 − e^(−t/τ))` in counts of 0.25 mA.
fn trace(i_inf: f32, tau: f32) -> [u16; 64] {
    let mut c = [0u16; 64];
    for (k, x) in c.iter_mut().enumerate() {
        let t = (k as f32 + 1.0) * 1e-4;
        *x = libm::roundf(i_inf * (1.0 - libm::expf(-t / tau)) / 2.5e-4) as u16;
    }
    c
}

fn sampling() -> Sampling {
    let p = Seconds::from_micros(100.0);
    Sampling::new(p, 2.5e-4)
        .unwrap()
        .with_first_sample(p)
        .unwrap()
}

#[defmt_test::tests]
mod tests {
    use super::*;
    use coilwise_driver::selfcheck as vectors;

    #[test]
    fn self_check_vectors_hold() {
        for v in vectors::compute().iter() {
            defmt::assert!(v.holds(), "{=str}: {=f32} vs {=f32}", v.what, v.got, v.want);
        }
    }

    #[test]
    fn fit_recovers_the_hand_circuit() {
        // Hand values: I∞ = 24/48 = 0.5 A, τ = 0.24/48 = 5 ms.
        let f = fit_rise(&trace(0.5, 5e-3), &sampling(), &FitOptions::default()).unwrap();
        defmt::assert!((f.tau.value() - 5e-3).abs() < 0.005 * 5e-3);
        defmt::assert!((f.final_current.value() - 0.5).abs() < 0.005 * 0.5);
    }

    #[test]
    fn verdicts_on_synthetic_traces() {
        let d = hand_design();
        let e = Expected::new(&d, &Conditions::default()).unwrap();
        let (c, o) = (Criteria::default(), FitOptions::default());
        let v = judge_trace(&trace(0.5, 5e-3), &sampling(), &e, &c, &o);
        defmt::assert_eq!(v.finding, Finding::Healthy);
        // 30 % of the turns shorted: R × 0.7, L × 0.7² (inductance goes with turns squared):
        // R_on = 33.25 + 0.5 = 33.75 Ω, I∞ = 0.711 A, τ = 0.1176/33.75 = 3.48 ms.
        let v = judge_trace(
            &trace(24.0 / 33.75, 0.1176 / 33.75),
            &sampling(),
            &e,
            &c,
            &o,
        );
        defmt::assert_eq!(v.finding, Finding::ShortedTurns);
        // No current at all: an open wire.
        let v = judge_trace(&[0u16; 64], &sampling(), &e, &c, &o);
        defmt::assert_eq!(v.finding, Finding::OpenCircuit);
    }

    #[test]
    fn comparator_band_and_verdicts() {
        let d = hand_design();
        let cond = Conditions::default();
        let e = Expected::new(&d, &cond).unwrap();
        let band = ThresholdBand::new(&d, &cond, Amps::new(0.25)).unwrap();
        // The nominal crossing τ·ln 2 = 3.4657 ms (worked by hand) lies inside the band, whose
        // ends are the extreme corners of t = (L/R_on)·ln(I∞/(I∞ − 0.25 A)) over R ± 2 %,
        // 15…25 °C (copper α = 0.00393/K), L ± 2 %, 23.76…24.24 V, evaluated in f64 off the
        // device (Python): 3.292911 ms and 3.652592 ms.
        defmt::assert!(band.time.min.value() < 3.4657e-3 && 3.4657e-3 < band.time.max.value());
        defmt::assert!((band.time.min.value() - 3.292_911e-3).abs() < 1e-4 * 3.29e-3);
        defmt::assert!((band.time.max.value() - 3.652_592e-3).abs() < 1e-4 * 3.65e-3);
        let c = Criteria::default();
        let j = |r| judge_threshold(r, &band, None, &e, &c).finding;
        defmt::assert_eq!(
            j(ThresholdReading::Crossed(Seconds::new(3.4657e-3))),
            Finding::Healthy
        );
        defmt::assert_eq!(
            j(ThresholdReading::Crossed(Seconds::new(2.0e-3))),
            Finding::ShortedTurns
        );
        defmt::assert_eq!(
            j(ThresholdReading::NotCrossed {
                waited: Seconds::new(0.02)
            }),
            Finding::OpenCircuit
        );
    }

    #[test]
    fn scheduler_sequence_follows_its_rules() {
        // Two channels (invented): on ≥ 40 ticks, off ≥ 60 ticks, pull-in (inrush) window 25
        // ticks, at most one coil pulling in at once. Expected values by hand from the rules.
        let l = ChannelLimits::new(Ticks(40), Ticks(60))
            .unwrap()
            .with_inrush_window(Ticks(25))
            .unwrap();
        let mut s: Scheduler<2, 8> = Scheduler::new([l; 2], 1, Instant(0)).unwrap();
        let a = s.submit(Instant(0), Request::now(ChannelId(0), Ticks(100)));
        defmt::assert_eq!(a, Ok(Admission::Accepted { start: Instant(0) }));
        // B at the same tick waits for A's 25-tick window.
        let b = s.submit(Instant(0), Request::now(ChannelId(1), Ticks(100)));
        defmt::assert_eq!(
            b,
            Ok(Admission::Delayed {
                reason: DelayReason::Inrush,
                until: Instant(25)
            })
        );
        // A again: after its off edge at 100 and 60 ticks off, at 160.
        let a2 = s.submit(Instant(0), Request::now(ChannelId(0), Ticks(50)));
        defmt::assert_eq!(a2.map(|x| x.start()), Ok(Instant(160)));
        // Shorter than the minimum on-time: refused.
        let short = s.submit(Instant(0), Request::now(ChannelId(1), Ticks(10)));
        defmt::assert_eq!(short, Err(Refusal::BelowMinOn { min_on: Ticks(40) }));
        // The edges, polled at the ticks the scheduler asks for.
        let mut all: heapless::Vec<PinEvent, 8> = heapless::Vec::new();
        let mut now = Instant(0);
        for _ in 0..8 {
            let mut out: heapless::Vec<PinEvent, 4> = heapless::Vec::new();
            let w = s.poll(now, &mut out).unwrap();
            for e in out {
                let _ = all.push(e);
            }
            now = w.at;
        }
        let want = [
            (0u8, 0u32, PinAction::On),
            (1, 25, PinAction::On),
            (0, 100, PinAction::Off),
            (1, 125, PinAction::Off),
            (0, 160, PinAction::On),
            (0, 210, PinAction::Off),
        ];
        defmt::assert_eq!(all.len(), want.len());
        for (e, (ch, at, action)) in all.iter().zip(want.iter()) {
            defmt::assert_eq!(e.channel, ChannelId(*ch));
            defmt::assert_eq!(e.at, Instant(*at));
            defmt::assert_eq!(e.action, *action);
        }
    }

    /// The board's flash page keeps NOR rules (common practice, no source: erase sets all bits,
    /// programming only clears them) and keeps a baseline record byte-exact; the core's decode
    /// refuses the record after one flipped bit (a CRC-32 detects every single-bit error, common
    /// practice, no source) and an erased slot (no marker).
    #[test]
    fn flash_page_keeps_a_baseline_record_byte_exact() {
        use coilwise::diagnosis::baseline::RECORD_LEN;
        use coilwise::diagnosis::{Baseline, RecordError};
        use coilwise_firmware_example::board::flash::{FlashError, SimFlash, PAGE_BYTES};
        let mut f = SimFlash::new();
        let mut b = [0u8; 8];
        f.read(0, &mut b).unwrap();
        defmt::assert_eq!(b, [0xFF; 8]);
        f.program(0, &[0xF0, 0x0F]).unwrap();
        // 0xF0 -> 0xFF needs bits set: refused, nothing written.
        defmt::assert_eq!(
            f.program(0, &[0xFF]),
            Err(FlashError::NotErased { offset: 0 })
        );
        // Clearing more bits is allowed without an erase.
        f.program(1, &[0x0E]).unwrap();
        f.read(0, &mut b[..2]).unwrap();
        defmt::assert_eq!(b[..2], [0xF0, 0x0E]);
        defmt::assert_eq!(
            f.program(PAGE_BYTES - 1, &[0, 0]),
            Err(FlashError::OutOfPage)
        );
        f.erase();
        defmt::assert_eq!(f.erases(), 1);
        // A record in the core's layout (marker, version, 3 pulses, L 0.3 H, R 72 ohm, tau).
        let mut r = [0u8; RECORD_LEN];
        r[..2].copy_from_slice(&[0xC0, 0x11]);
        r[2] = coilwise::diagnosis::baseline::RECORD_VERSION;
        r[4] = 3;
        r[8..12].copy_from_slice(&0.3f32.to_le_bytes());
        r[12..16].copy_from_slice(&72.0f32.to_le_bytes());
        r[32..36].copy_from_slice(&0.004f32.to_le_bytes());
        let crc = coilwise::diagnosis::baseline::crc32(&r[..36]);
        r[36..].copy_from_slice(&crc.to_le_bytes());
        f.program(RECORD_LEN, &r).unwrap();
        let mut back = [0u8; RECORD_LEN];
        f.read(RECORD_LEN, &mut back).unwrap();
        defmt::assert_eq!(back, r);
        let base = Baseline::decode(&back).unwrap();
        defmt::assert_eq!(base.encode(), r);
        f.disturb(RECORD_LEN + 9, 0x04);
        f.read(RECORD_LEN, &mut back).unwrap();
        defmt::assert!(matches!(
            Baseline::decode(&back),
            Err(RecordError::Checksum { .. })
        ));
        f.read(0, &mut back).unwrap();
        defmt::assert_eq!(Baseline::decode(&back), Err(RecordError::NoMarker));
    }
}
