//! Tests of the second-order RC snubber release.

use super::*;

/// Invented demo values: the 24 V valve's operated coil (0.45 H, 181 Ω loop) with a snubber.
fn snub(rs: f32, c: f32, i0: f32, v0: f32) -> Result<SnubberRelease, Error> {
    SnubberRelease::new(
        Henries::new(0.45),
        Ohms::new(181.0),
        Ohms::new(rs),
        Farads::new(c),
        Amps::new(i0),
        Volts::new(v0),
    )
}

/// Textbook two-exponential solution in f64 (from memory: series RLC, real roots
/// `s = (−R ± √(R² − 4L/C))/(2L)`, `A + B = I₀`, `A·s₁ + B·s₂ = i'(0)`).
fn two_exp(l: f64, r: f64, c: f64, i0: f64, v0: f64, t: f64) -> f64 {
    let d = (r * r - 4.0 * l / c).sqrt();
    let s1 = (-r + d) / (2.0 * l);
    let s2 = (-r - d) / (2.0 * l);
    let di0 = (v0 - r * i0) / l;
    let a = (di0 - s2 * i0) / (s1 - s2);
    let b = i0 - a;
    a * (s1 * t).exp() + b * (s2 * t).exp()
}

#[test]
fn matches_the_two_exponential_form_in_f64() {
    // i(t) = A·e^(s₁t) + B·e^(s₂t), s₁,₂ the roots of L·s² + (R + R_s)·s + 1/C = 0 (derived by hand
    // from the series RLC loop, textbook second-order circuit, from memory), evaluated in f64 on
    // invented values.
    let i0 = 0.1326;
    for (rs, c) in [(1000.0, 10.0e-6), (5000.0, 0.2e-6), (300.0, 100.0e-6)] {
        let s = snub(rs, c, i0, i0 * 181.0).unwrap();
        let tau = s.slow_time_constant().value() as f64;
        for k in 0..=40 {
            let t = tau * k as f64 / 8.0;
            let exact = two_exp(
                0.45,
                181.0 + rs as f64,
                c as f64,
                i0 as f64,
                i0 as f64 * 181.0,
                t,
            );
            let got = s.current_at(Seconds::new(t as f32)).unwrap().value() as f64;
            assert!(
                (got - exact).abs() < 2e-6 * i0 as f64,
                "{rs} {c} t={t}: {got} vs {exact}"
            );
        }
    }
}

#[test]
fn critical_damping_is_the_limit_of_the_overdamped_form() {
    // (R + R_s)² = 4L/C  ⇔  C = 4L/(R + R_s)²; critical case i = (I₀ + k·t)·e^(−αt)
    // (derived by hand from the series RLC loop, textbook second-order circuit, from memory).
    let rs = 1019.0f32;
    let c = 4.0 * 0.45 / (1200.0f32 * 1200.0);
    let s = snub(rs, c, 0.13, 0.13 * 181.0).unwrap();
    assert!((s.damping_ratio() - 1.0).abs() < 1e-3);
    let alpha = 1200.0f64 / 0.9;
    let k = 0.13 * 181.0 / 0.45 - alpha * 0.13;
    for n in 0..30 {
        let t = n as f64 * 2.0e-4;
        let exact = (0.13 + k * t) * (-alpha * t).exp();
        let got = s.current_at(Seconds::new(t as f32)).unwrap().value() as f64;
        assert!((got - exact).abs() < 1e-5, "t={t}: {got} vs {exact}");
    }
    // Just overdamped: no jump.
    let near = snub(rs, c * 1.001, 0.13, 0.13 * 181.0).unwrap();
    let a = s.current_at(Seconds::new(2.0e-3)).unwrap().value();
    let b = near.current_at(Seconds::new(2.0e-3)).unwrap().value();
    assert!((a - b).abs() < 1e-3 * 0.13);
}

#[test]
fn underdamped_snubber_is_outside_the_model() {
    assert_eq!(
        snub(1000.0, 1.0e-6, 0.13, 23.5),
        Err(Error::OutsideModel(Limit::SnubberUnderdamped))
    );
    assert!(snub(0.0, 1e-6, 0.1, 1.0).is_err());
    assert!(snub(100.0, f32::NAN, 0.1, 1.0).is_err());
    assert!(snub(100.0, 1e-3, -0.1, 1.0).is_err());
    assert!(snub(100.0, 1e-3, 0.1, f32::INFINITY).is_err());
}

#[test]
fn times_invert_the_current() {
    for (rs, c) in [(1000.0, 10.0e-6), (5000.0, 0.2e-6)] {
        let s = snub(rs, c, 0.13, 0.13 * 181.0).unwrap();
        for k in 1..20 {
            let target = 0.13 * k as f32 / 20.0;
            let t = s.time_to_current(Amps::new(target)).unwrap();
            let back = s.current_at(t).unwrap().value();
            assert!(
                back <= target + 1e-7 && back > target - 2e-5 * 0.13,
                "{back} {target}"
            );
            // Never early: a hair before, the current is still above the target.
            let before = s
                .current_at(Seconds::new(t.value() * 0.999))
                .unwrap()
                .value();
            assert!(before > target - 1e-7);
        }
        assert_eq!(s.time_to_current(Amps::new(0.2)).unwrap().value(), 0.0);
    }
}

#[test]
fn reverse_lobe_when_r_times_rs_is_below_l_over_c() {
    // Reverse lobe exactly when R·R_s < L/C for a settled pre-charge (derived by hand from the
    // series RLC loop, textbook second-order circuit, from memory): R·R_s = 181·5000 = 9.05e5 < L/C
    // = 2.25e6, so the current swings through zero.
    let s = snub(5000.0, 0.2e-6, 0.13, 0.13 * 181.0).unwrap();
    let t0 = s.time_to_current(Amps::new(0.0)).unwrap();
    assert!(s.current_at(t0).unwrap().value().abs() < 1e-6);
    let lobe = s.reverse_current_peak().value();
    assert!(lobe > 0.0);
    let rest = s.time_to_rest().unwrap();
    assert!(rest > t0);
    // After "rest" the current stays within e⁻⁵·I₀ (sampled).
    for k in 0..200 {
        let t = rest.value() * (1.0 + k as f32 * 0.05);
        let i = s.current_at(Seconds::new(t)).unwrap().value();
        assert!(i.abs() <= FIVE_TAU_RESIDUAL * 0.13 * 1.0001, "{t}: {i}");
    }
    // R·R_s > L/C: no crossing, time to exactly zero is unreachable, rest is finite.
    let m = snub(1000.0, 10.0e-6, 0.13, 0.13 * 181.0).unwrap();
    assert_eq!(m.reverse_current_peak().value(), 0.0);
    assert!(matches!(
        m.time_to_current(Amps::new(0.0)),
        Err(Error::Unreachable { .. })
    ));
    assert!(m.time_to_rest().unwrap().value() > 0.0);
    assert!(matches!(
        m.settle_time(Amps::new(0.0)),
        Err(Error::Unreachable { .. })
    ));
}

#[test]
fn peak_reverse_voltage_is_the_sampled_maximum() {
    // Reference: the maximum of the closed form sampled densely (independent of the extremum
    // solver it checks).
    for (rs, c) in [
        (1000.0, 10.0e-6),
        (5000.0, 0.2e-6),
        (200.0, 200.0e-6),
        (3000.0, 0.5e-6),
    ] {
        let s = snub(rs, c, 0.13, 0.13 * 181.0).unwrap();
        let peak = s.peak_reverse_voltage().value();
        let tau = s.slow_time_constant().value();
        let mut sampled = 0.0f32;
        for k in 0..20_000 {
            let t = tau * 10.0 * k as f32 / 20_000.0;
            sampled = sampled.max(s.reverse_voltage_at(Seconds::new(t)).unwrap().value());
        }
        assert!(
            peak >= sampled - 1e-4 * peak.abs().max(1.0),
            "{rs}: {peak} < {sampled}"
        );
        assert!(peak <= sampled * 1.001 + 1e-3, "{rs}: {peak} > {sampled}");
    }
}

#[test]
fn energy_balances_and_splits_by_resistance() {
    let s = snub(1000.0, 10.0e-6, 0.13, 0.13 * 181.0).unwrap();
    let e = s.energy();
    let lhs = e.snubber_resistor.value() + e.winding.value();
    let rhs = e.stored.value() + e.capacitor.value();
    // Textbook, from memory: conservation of energy; one series current through both
    // resistances splits the loss in proportion to resistance.
    assert!((lhs - rhs).abs() < 1e-6 * rhs);
    assert!((e.snubber_resistor.value() / e.winding.value() - 1000.0 / 181.0).abs() < 1e-4);
    // The snubber-resistor share, integrated from the closed-form current (trapezoid, f64).
    let tau = s.slow_time_constant().value() as f64;
    let n = 200_000;
    let h = 30.0 * tau / n as f64;
    let mut sum = 0.0f64;
    for k in 0..=n {
        let i = s
            .current_at(Seconds::new((k as f64 * h) as f32))
            .unwrap()
            .value() as f64;
        sum += if k == 0 || k == n { 0.5 } else { 1.0 } * i * i;
    }
    let e_rs = 1000.0 * sum * h;
    assert!(
        (e_rs - e.snubber_resistor.value() as f64).abs() < 2e-3 * e_rs,
        "{e_rs}"
    );
}

#[test]
fn big_capacitor_starts_like_a_resistor_clamp() {
    // C → ∞: the fast root tends to −(R + R_s)/L, the resistor clamp (derived by hand from the
    // series RLC loop, textbook second-order circuit, from memory).
    let s = snub(1000.0, 0.1, 0.13, 0.0).unwrap();
    let fast = s.fast_time_constant().value();
    assert!((fast - 0.45 / 1181.0).abs() < 1e-3 * fast);
    assert!(s.slow_time_constant().value() > 100.0);
}

#[test]
fn bad_times_are_errors() {
    let s = snub(1000.0, 10.0e-6, 0.13, 23.5).unwrap();
    assert!(s.current_at(Seconds::new(f32::NAN)).is_err());
    assert!(s.current_at(Seconds::new(-1.0)).is_err());
    assert_eq!(
        s.current_at(Seconds::new(f32::INFINITY)).unwrap().value(),
        0.0
    );
    assert!(s.time_to_current(Amps::new(f32::NAN)).is_err());
    assert!(s.time_to_current(Amps::new(-0.1)).is_err());
}

#[test]
fn switched_off_mid_rise_the_current_first_rises() {
    // Small I₀ with the capacitor near the full drive voltage: i'(0) > 0, one maximum, then
    // the fall; the time to a target below I₀ is after the maximum.
    let s = snub(1000.0, 10.0e-6, 0.02, 23.9).unwrap();
    assert!(s.initial_slope() > 0.0);
    let target = 0.015;
    let t = s.time_to_current(Amps::new(target)).unwrap().value();
    assert!(t > 0.0);
    let at = s.current_at(Seconds::new(t)).unwrap().value();
    assert!((at - target).abs() < 1e-6, "{at}");
    let mut peak = 0.0f32;
    for k in 0..1000 {
        let i = s
            .current_at(Seconds::new(t * k as f32 / 1000.0))
            .unwrap()
            .value();
        assert!(i > target - 1e-7, "crossed early at step {k}: {i}");
        peak = peak.max(i);
    }
    assert!(peak > 0.02);
    assert!(s.slope_at(Seconds::new(t)).unwrap() < 0.0);
    let rest = s.time_to_rest().unwrap();
    assert!(rest.value() > t);
}
