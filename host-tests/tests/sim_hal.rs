//! The embedded-hal face of the plant: clock, pins, PWM, ADC, several
//! channels on one supply, and a user driver under test.

mod sim_common;
use sim_common::*;

use coilwise_host_tests::{demo, AdcConfig, Bench, Rig, SensePoint, SolverSettings, Supply};
use embedded_hal::delay::DelayNs;
use embedded_hal::digital::{OutputPin, StatefulOutputPin};
use embedded_hal::pwm::SetDutyCycle;

#[test]
fn clock_advances_exactly_and_pin_drives_gate() {
    let rig = Rig::new(bench1(24.0, fixed_channel(RCOIL, LCOIL, diode())));
    let mut clock = rig.clock();
    let mut pin = rig.gate(0).unwrap();
    assert!(rig.gate(1).is_err());
    clock.delay_ns(1);
    clock.delay_us(3);
    clock.delay_ms(2);
    assert_eq!(clock.now_ns(), 2_003_001);
    pin.set_high().unwrap();
    assert!(pin.is_set_high().unwrap());
    assert!(rig.bench().gate_on(0).unwrap());
    clock.delay_ms(1);
    assert!(rig.bench().probe(0).unwrap().coil_amps > 0.0);
    pin.set_low().unwrap();
    assert!(pin.is_set_low().unwrap());
    assert_eq!(rig.bench().stats(0).unwrap().last_on_ns, Some(2_003_001));
    assert_eq!(rig.bench().stats(0).unwrap().last_off_ns, Some(3_003_001));
}

/// Ideal quantiser: `code = round(I/I_fs·2^bits)` (textbook ADC transfer
/// function, from memory); a timed capture samples the RL rise
/// `I∞(1 − e^(−t/τ))` at `k·Δt` (textbook, from memory) to within ±1 LSB.
#[test]
fn adc_quantises_and_captures_equally_spaced_samples() {
    let rig = Rig::new(bench1(24.0, fixed_channel(RCOIL, LCOIL, diode())));
    let cfg = AdcConfig::from_shunt(RSENSE, 3.3, 20.0); // 0.33 A full scale
    assert!(rel(cfg.full_scale_amps, 0.33) < 1e-12);
    let mut adc = rig.adc(0, cfg).unwrap();
    assert_eq!(adc.read(), 0);
    rig.gate(0).unwrap().set_high().unwrap();
    let mut buf = [0u16; 64];
    adc.capture(&mut buf, 50_000);
    assert_eq!(rig.bench().now_ns(), 63 * 50_000);
    let r = r_on_loop(RCOIL);
    let tau = LCOIL / r;
    for (k, &c) in buf.iter().enumerate() {
        let t = k as f64 * 50e-6;
        let i = 24.0 / r * (1.0 - (-t / tau).exp());
        let ideal = (i / 0.33 * 4096.0).round();
        assert!((c as f64 - ideal).abs() <= 1.0, "k={k}: {c} vs {ideal}");
    }
    assert!(buf.windows(2).all(|w| w[1] >= w[0]));
    let last = adc.counts_to_amps(buf[63]);
    assert!((last - rig.bench().probe(0).unwrap().coil_amps).abs() <= cfg.amps_per_count());
}

/// Gaussian noise: sample mean and standard deviation match the configured
/// values within the usual sampling error (σ/√n for the mean, ≈ σ/√(2n) for
/// σ; statistics textbook, from memory); the same seed repeats exactly.
#[test]
fn adc_noise_statistics_and_determinism() {
    let rig = Rig::new(bench1(24.0, fixed_channel(RCOIL, LCOIL, diode())));
    rig.gate(0).unwrap().set_high().unwrap();
    rig.clock().delay_ms(30);
    let cfg = AdcConfig::new(0.33).with_noise(3.0, 42);
    let mut adc = rig.adc(0, cfg).unwrap();
    let n = 20_000;
    let v: Vec<f64> = (0..n).map(|_| adc.read() as f64).collect();
    let mean = v.iter().sum::<f64>() / n as f64;
    let sd = (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt();
    let i = rig.bench().probe(0).unwrap().switch_amps;
    let ideal = i / 0.33 * 4096.0;
    // Rounding adds 1/12 LSB² of variance (uniform quantisation noise).
    let sd_expect = (9.0f64 + 1.0 / 12.0).sqrt();
    eprintln!("noise: mean {mean:.3} vs {ideal:.3}, sd {sd:.3} vs {sd_expect:.3}");
    assert!((mean - ideal).abs() < 5.0 * 3.0 / (n as f64).sqrt());
    assert!((sd - sd_expect).abs() < 5.0 * sd_expect / (2.0 * n as f64).sqrt());
    let mut again = rig.adc(0, cfg).unwrap();
    let w: Vec<f64> = (0..n).map(|_| again.read() as f64).collect();
    assert_eq!(v, w);
    let mut other = rig.adc(0, cfg.with_noise(3.0, 43)).unwrap();
    let u: Vec<f64> = (0..100).map(|_| other.read() as f64).collect();
    assert_ne!(&v[..100], &u[..]);
}

/// A shunt in the switch path sees nothing while the clamp carries the
/// decaying current; an in-line coil sensor sees the decay (common
/// practice, no source).
#[test]
fn switch_shunt_is_blind_during_decay() {
    let rig = Rig::new(bench1(24.0, fixed_channel(RCOIL, LCOIL, diode())));
    let mut pin = rig.gate(0).unwrap();
    pin.set_high().unwrap();
    rig.clock().delay_ms(20);
    pin.set_low().unwrap();
    rig.clock().delay_ms(1);
    let mut shunt = rig.adc(0, AdcConfig::new(0.33)).unwrap();
    let mut inline = rig
        .adc(0, AdcConfig::new(0.33).with_sense(SensePoint::Coil))
        .unwrap();
    assert_eq!(shunt.read(), 0);
    assert!(inline.read() > 500);
}

/// Peak-and-hold through `SetDutyCycle` with real switching at 20 kHz and a
/// diode freewheel. Textbook (from memory) steady state of a PWM-driven RL
/// load with a freewheel diode: mean coil voltage
/// `D·(V − I·R_on) − (1 − D)·V_d = I·R`, and peak-to-peak ripple
/// `ΔI = (V + V_d)·D·(1 − D)/(L·f)` for `τ ≫ 1/f`.
#[test]
fn pwm_hold_current_and_ripple() {
    let v = 24.0;
    let rig = Rig::new(bench1(v, fixed_channel(RCOIL, LCOIL, diode())));
    let mut pwm = rig.pwm(0, 20_000.0, 1000).unwrap();
    assert_eq!(pwm.period_ns(), 50_000);
    let mut clock = rig.clock();
    pwm.set_duty_cycle_fully_on().unwrap();
    clock.delay_ms(20);
    pwm.set_duty_cycle_percent(40).unwrap();
    clock.delay_ms(40); // ≫ 5τ
    rig.bench_mut().start_recording(500);
    clock.delay_ms(1); // 20 periods, 100 samples each
    let b = rig.bench();
    let rec = b.recording().unwrap();
    let xs: Vec<f64> = rec.channel(0).map(|s| s.coil_amps).collect();
    let n = xs.len() - 1; // whole periods
    let mean = xs[..n].iter().sum::<f64>() / n as f64;
    let ripple = xs.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
        - xs.iter().cloned().fold(f64::INFINITY, f64::min);
    let d = 0.4;
    let vd = coilwise_host_tests::DiodeLaw::rectifier().volts_at(mean);
    let r_coil = RCOIL + RWIRE;
    let i_expect = (d * v - (1.0 - d) * vd) / (r_coil + d * (RON + RSENSE));
    let ripple_expect = (v + vd) * d * (1.0 - d) / (LCOIL * 20_000.0);
    eprintln!(
        "hold: mean {mean:.6} vs {i_expect:.6} A, ripple {ripple:.3e} vs {ripple_expect:.3e} A"
    );
    assert!(rel(mean, i_expect) < 0.005);
    assert!(rel(ripple, ripple_expect) < 0.03);
    // The switch really switched: the shunt saw zero during the off-times.
    assert!(rec.channel(0).any(|s| s.switch_amps == 0.0));
}

/// Three valves switched on together sag a supply with source resistance:
/// at steady state the rail is `V/(1 + n·Rs/R_ch)` (Ohm's law, textbook, from memory).
#[test]
fn simultaneous_turn_on_sags_shared_rail() {
    let supply = demo::supply_24v();
    let mut b = Bench::new(supply, [demo::valve_24v(); 3], SolverSettings::default()).unwrap();
    for c in 0..3 {
        b.set_gate(c, true).unwrap();
    }
    b.advance_ns(60_000_000);
    let p = demo::valve_24v();
    let r_ch = p.coil.resistance_ohms + p.coil.wiring_ohms + 0.05 + p.sense_ohms;
    let expect = supply.volts / (1.0 + 3.0 * supply.source_ohms / r_ch);
    let got = b.rail_volts();
    eprintln!("rail with 3 valves on: {got:.6} V vs {expect:.6} V");
    assert!((got - expect).abs() < 1e-6);
    // Staggered turn-on sags it less at any instant than simultaneous.
    let mut single = Bench::new(supply, [demo::valve_24v(); 3], SolverSettings::default()).unwrap();
    single.set_gate(0, true).unwrap();
    single.advance_ns(60_000_000);
    assert!(single.rail_volts() > got);
}

/// A user's driver written against embedded-hal traits: energise, wait,
/// release, and enforce an off-time. The plant tells whether the off-time
/// was long enough for the armature to drop out.
fn pulse_train<P: OutputPin, D: DelayNs>(
    pin: &mut P,
    delay: &mut D,
    on_ms: u32,
    off_ms: u32,
    n: u32,
) -> Result<(), P::Error> {
    for _ in 0..n {
        pin.set_high()?;
        delay.delay_ms(on_ms);
        pin.set_low()?;
        delay.delay_ms(off_ms);
    }
    Ok(())
}

fn run_driver(off_ms: u32) -> (bool, f64) {
    let bench = Bench::single(
        Supply::ideal(24.0),
        demo::valve_24v(),
        SolverSettings::default(),
    )
    .unwrap();
    let rig = Rig::new(bench);
    rig.bench_mut().start_recording(50_000);
    let mut pin = rig.gate(0).unwrap();
    let mut clock = rig.clock();
    pulse_train(&mut pin, &mut clock, 30, off_ms, 1).unwrap();
    let b = rig.bench();
    let rec = b.recording().unwrap();
    let next_pulse = b.now_ns();
    (
        rec.released_before(0, next_pulse),
        b.stats(0).unwrap().peak_switch_volts,
    )
}

/// Too short an off-time: the demo valve (diode clamp, releases ≈ 10 ms
/// after switch-off here) is still operated when the next pulse would
/// start; a long enough one passes. Peak switch voltage stays at supply +
/// one diode drop (common practice, no source).
#[test]
fn driver_off_time_check_can_fail_and_pass() {
    let (ok_short, _) = run_driver(3);
    let (ok_long, peak) = run_driver(25);
    assert!(!ok_short, "3 ms is too short to release");
    assert!(ok_long, "25 ms is long enough");
    assert!(peak < 24.0 + 1.0);
}
