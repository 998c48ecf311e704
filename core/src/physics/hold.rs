//! Hold economiser (peak-and-hold): after pull-in, PWM the switch so the coil carries only the
//! current it needs to stay operated.
//!
//! On phase (duty D of the period T = 1/f): `L·di/dt = V_drive − R_on·i`, towards `I_on = V_drive/R_on`
//! with `τ_on = L/R_on`. Off phase: the clamp recirculates, `L·di/dt = −V − R_off·i`, towards `−a`
//! (`a = V/R_off`) with `τ_off = L/R_off` — exactly the release of [`super::clamp`] restarted each
//! period (plain diode: V = V_F and R_off = winding + wiring). L is the operated inductance.
//!
//! **Duty.** Over one steady period `∮L·di = 0`, so the average applied voltage equals the
//! average resistive drop: `D·V_drive − (1 − D)·V = D·R_on·ī_on + (1 − D)·R_off·ī_off`. Taking both
//! phase means equal to the hold current I_h gives
//!
//! `D = (V + I_h·R_off)/(V_drive + V − I_h·(R_on − R_off))`,
//!
//! exact for the average current when `R_on = R_off`, otherwise off by a fraction of order
//! `|R_on − R_off|/R_off · ΔI/I_h` (the exact average is reported, see [`Hold::average`]).
//! `D < 1` exactly when `I_h < I_on`.
//!
//! **Ripple.** Exact steady periodic solution of the two exponential segments, with
//! `e_on = e^(−DT/τ_on)`, `e_off = e^(−(1−D)T/τ_off)`:
//!
//! `i_valley = (I_on·(1 − e_on)·e_off − a·(1 − e_off))/(1 − e_on·e_off)`,
//! `i_peak = I_on·(1 − e_on) + i_valley·e_on`. For T ≪ τ this tends to the small-ripple
//! `ΔI ≈ (V_drive − R_on·I_h)·D·T/L`.

use super::circuit::{Circuit, OperatingPoint};
use super::coil::Armature;
use crate::error::{positive, result, Error, Limit, Param};
use crate::units::{Amps, Hertz, Watts};

/// A steady hold PWM and the current it produces.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Hold {
    /// PWM duty (on fraction), 0 < D < 1.
    pub duty: f32,
    /// PWM frequency, Hz.
    pub frequency: Hertz,
    /// Lowest current in the period (end of the off phase), A.
    pub valley: Amps,
    /// Highest current in the period (end of the on phase), A.
    pub peak: Amps,
    /// Peak-to-peak ripple `peak − valley`, A.
    pub ripple: Amps,
    /// Exact time-average current over the period, A.
    pub average: Amps,
    /// Winding dissipation while holding, `R_w·(ī² + ΔI²/12)`, W (the ripple treated as a
    /// triangle; the exact exponential segments differ by a term of order ΔI²·T/τ).
    pub winding_power: Watts,
    /// Clamp dissipation while holding: the clamp carries the coil current in every off phase,
    /// `(1 − D)·(V_element·ī_off + R_clamp·(ī_off² + ΔI²/12))`, W, with ī_off the mean current of
    /// the off phase (ripple treated as a triangle). Large for a zener clamp: the price of fast
    /// release is paid in every PWM period, not only at the final switch-off.
    pub clamp_power: Watts,
}

impl Circuit {
    /// The hold PWM for `hold_current` (A, > 0) at `frequency` (Hz, > 0) at an operating point;
    /// formulas in the module docs.
    ///
    /// # Errors
    /// [`Error::Unreachable`] when `I_h ≥ I_on = V_drive/R_on` (the coil cannot be held there even
    /// at 100 %); [`Limit::NotFirstOrder`] for the RC snubber; [`Limit::DiscontinuousConduction`]
    /// when the current would reach zero in the off phase (PWM too slow); [`Limit::Resolution`]
    /// when the duty rounds to 0 or 1 in f32 (a clamp so strong that the off fraction is below
    /// rounding) or the ripple is below rounding against the current; invalid inputs. An `Ok`
    /// always has 0 < D < 1, ripple ≥ 0 and every figure finite.
    pub fn hold(
        &self,
        op: &OperatingPoint,
        hold_current: Amps,
        frequency: Hertz,
    ) -> Result<Hold, Error> {
        let ih = positive(hold_current.value(), Param::Current)?;
        let f = positive(frequency.value(), Param::Frequency)?;
        let on = self.energize(op, Armature::Operated, Amps::new(0.0))?;
        let i_on = on.asymptote();
        if ih >= i_on {
            return Err(Error::Unreachable {
                target: ih,
                asymptote: i_on,
            });
        }
        let release = self.release(op, hold_current)?;
        if release.snubber().is_some() {
            return Err(Error::OutsideModel(Limit::NotFirstOrder));
        }
        let tau_on = on.tau().value();
        let tau_off = release.tau().value();
        let a = -release.curve().asymptote();
        // R·τ = L for both loops, so the duty can be written with rates (1/τ) instead of ohms.
        let r_on = 1.0 / tau_on; // ∝ R_on
        let r_off = 1.0 / tau_off; // ∝ R_off
        let den = r_on * (i_on - ih) + r_off * (a + ih);
        let duty = result(r_off * (a + ih) / den)?;
        // The off fraction from its own expression, not 1 − D: with a clamp voltage far above the
        // supply 1 − D is tiny and `1.0 - duty` would keep none of its digits. D < 1 exactly when
        // I_h < I_on, but a clamp that stops the current almost at once (huge V/R_off) leaves an
        // off fraction below f32 rounding: D rounds to 1 and the contract 0 < D < 1 cannot be met.
        let off = result(r_on * (i_on - ih) / den)?;
        if !(duty > 0.0 && duty < 1.0 && off > 0.0) {
            return Err(Error::OutsideModel(Limit::Resolution));
        }
        let period = result(1.0 / f)?;
        let x_on = duty * period / tau_on;
        let x_off = off * period / tau_off;
        let m_on = -libm::expm1f(-x_on);
        let m_off = -libm::expm1f(-x_off);
        let m_tot = -libm::expm1f(-(x_on + x_off));
        if m_tot <= 0.0 {
            return Err(Error::OutsideModel(Limit::Overflow));
        }
        let valley = (i_on * m_on * (1.0 - m_off) - a * m_off) / m_tot;
        if valley < 0.0 {
            return Err(Error::OutsideModel(Limit::DiscontinuousConduction));
        }
        let ripple = (i_on - valley) * m_on;
        if ripple.is_nan() || ripple < 0.0 {
            // valley ≤ I_on in exact arithmetic; above it only by rounding of a vanishing ripple.
            return Err(Error::OutsideModel(Limit::Resolution));
        }
        let peak = valley + ripple;
        let mean_on = valley + (i_on - valley) * mean_fraction(x_on);
        let mean_off = peak - (peak + a) * mean_fraction(x_off);
        let average = result(duty * mean_on + off * mean_off)?;
        let winding = self.resolve(op)?.winding.value();
        Ok(Hold {
            duty,
            frequency: Hertz::new(f),
            valley: Amps::new(valley),
            peak: Amps::new(peak),
            ripple: Amps::new(ripple),
            average: Amps::new(average),
            winding_power: Watts::new(result(
                winding * (average * average + ripple * ripple / 12.0),
            )?),
            clamp_power: Watts::new(result(off * release.clamp_power_at(mean_off, ripple))?),
        })
    }
}

/// `φ(x) = 1 − (1 − e^(−x))/x`: the mean progress of a first-order step over x time constants
/// (φ → x/2 for small x, → 1 for large x). Series below 0.25 (truncation < 1e-9 relative).
fn mean_fraction(x: f32) -> f32 {
    if x < 0.25 {
        // x/2 − x²/6 + x³/24 − x⁴/120 + x⁵/720 − x⁶/5040 + x⁷/40320
        let mut term = x;
        let mut sum = 0.0f32;
        let mut fact = 1.0f32;
        let mut n = 1u32;
        while n <= 7 {
            fact *= (n + 1) as f32;
            let t = term / fact;
            sum += if n % 2 == 1 { t } else { -t };
            term *= x;
            n += 1;
        }
        sum
    } else {
        (x + libm::expm1f(-x)) / x
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::circuit::tests::valve;
    use crate::physics::clamp::Clamp;
    use crate::units::{Celsius, Farads, Ohms, Seconds, Volts};

    fn op() -> OperatingPoint {
        OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0))
    }

    /// Brute-force reference: step the two exact segments from zero until the period repeats.
    fn simulate(c: &Circuit, h: &Hold) -> (f32, f32, f32) {
        let (lo, hi, avg, _) = simulate_with_clamp(c, h, 0.0, 0.0);
        (lo, hi, avg)
    }

    /// [`simulate`], plus the clamp's mean power over a period by midpoint quadrature of
    /// `v_element·i + r_clamp·i²` along the last off segment (2 000 steps).
    fn simulate_with_clamp(
        c: &Circuit,
        h: &Hold,
        v_element: f32,
        r_clamp: f32,
    ) -> (f32, f32, f32, f32) {
        let period = 1.0 / h.frequency.value();
        let mut i = 0.0f32;
        let (mut lo, mut hi, mut avg) = (0.0, 0.0, 0.0);
        let mut last_top = 0.0f32;
        for _ in 0..5000 {
            let on = c.energize(&op(), Armature::Operated, Amps::new(i)).unwrap();
            let t_on = Seconds::new(h.duty * period);
            let t_off = Seconds::new((1.0 - h.duty) * period);
            let top = on.value_at(t_on).unwrap();
            let rel = c.release(&op(), Amps::new(top)).unwrap();
            let bottom = rel.curve().value_at(t_off).unwrap();
            avg =
                (on.integral_to(t_on).unwrap() + rel.curve().integral_to(t_off).unwrap()) / period;
            lo = bottom;
            hi = top;
            i = bottom;
            last_top = top;
        }
        let rel = c.release(&op(), Amps::new(last_top)).unwrap();
        let t_off = (1.0 - h.duty) * period;
        let steps = 2000;
        let mut energy = 0.0f64;
        for k in 0..steps {
            let t = (k as f32 + 0.5) * t_off / steps as f32;
            let i = rel.curve().value_at(Seconds::new(t)).unwrap() as f64;
            energy +=
                (v_element as f64 * i + r_clamp as f64 * i * i) * (t_off / steps as f32) as f64;
        }
        (lo, hi, avg, (energy / period as f64) as f32)
    }

    #[test]
    fn duty_balances_the_average_voltage() {
        // Textbook, from memory: volt-second balance of a PWM-driven inductor in steady state.
        // Plain diode: D·V_drive − (1 − D)·V_F = I_h·R when R_on = R_off (here they differ by the
        // sense resistor and MOSFET, 0.6 Ω of 181 Ω).
        let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
        let ih = 0.05;
        let h = c.hold(&op(), Amps::new(ih), Hertz::new(20_000.0)).unwrap();
        let d = h.duty;
        let expect = (0.8 + ih * 180.4) / (24.0 + 0.8 - ih * 0.6);
        assert!((d - expect).abs() < 1e-6, "{d} vs {expect}");
        assert!((h.average.value() - ih).abs() < 1e-3 * ih);
        // Textbook, from memory: small-ripple approximation ΔI ≈ V_L·t_on/L.
        // Small ripple at 20 kHz: ΔI ≈ (V − R_on·I_h)·D·T/L.
        let approx = (24.0 - 181.0 * ih) * d / 20_000.0 / 0.45;
        assert!((h.ripple.value() - approx).abs() < 0.01 * approx);
    }

    #[test]
    fn clamp_power_while_holding_matches_quadrature() {
        // Reference: numerical quadrature of the clamp's instantaneous power v·i + R·i² along the
        // exact off segment of the periodic steady state (independent of the closed form's
        // triangle-ripple treatment).
        for (clamp, v_el, r_cl) in [
            (Clamp::diode(Volts::new(0.8)).unwrap(), 0.8, 0.0),
            (
                Clamp::diode_zener(Volts::new(0.8), Volts::new(20.0)).unwrap(),
                20.0,
                0.0,
            ),
            (
                Clamp::diode_resistor(Volts::new(0.8), Ohms::new(100.0)).unwrap(),
                0.8,
                100.0,
            ),
        ] {
            let c = valve(clamp);
            for f in [1_000.0, 5_000.0] {
                let h = c.hold(&op(), Amps::new(0.05), Hertz::new(f)).unwrap();
                let (.., p) = simulate_with_clamp(&c, &h, v_el, r_cl);
                let got = h.clamp_power.value();
                assert!((got - p).abs() < 1e-4 * p, "{clamp:?} {f}: {got} vs {p}");
            }
        }
    }

    #[test]
    fn exact_ripple_matches_stepping_the_segments() {
        // Reference: brute-force stepping of the two exact segments from zero until the period
        // repeats ([`simulate`]), independent of the periodic closed form.
        for clamp in [
            Clamp::diode(Volts::new(0.8)).unwrap(),
            Clamp::diode_zener(Volts::new(0.8), Volts::new(20.0)).unwrap(),
            Clamp::diode_resistor(Volts::new(0.8), Ohms::new(100.0)).unwrap(),
        ] {
            let c = valve(clamp);
            for f in [1_000.0, 5_000.0] {
                let h = c.hold(&op(), Amps::new(0.05), Hertz::new(f)).unwrap();
                let (lo, hi, avg) = simulate(&c, &h);
                assert!(
                    (h.valley.value() - lo).abs() < 2e-5,
                    "{clamp:?} {f}: {h:?} {lo}"
                );
                assert!(
                    (h.peak.value() - hi).abs() < 2e-5,
                    "{clamp:?} {f}: {h:?} {hi}"
                );
                assert!(
                    (h.average.value() - avg).abs() < 2e-5,
                    "{clamp:?} {f}: {avg}"
                );
            }
        }
    }

    #[test]
    fn impossible_holds_are_errors() {
        let c = valve(Clamp::diode(Volts::new(0.8)).unwrap());
        assert!(matches!(
            c.hold(&op(), Amps::new(0.2), Hertz::new(1e3)),
            Err(Error::Unreachable { .. })
        ));
        // 0.5 Hz: the current dies away in every off phase.
        let z = valve(Clamp::diode_zener(Volts::new(0.8), Volts::new(40.0)).unwrap());
        assert_eq!(
            z.hold(&op(), Amps::new(0.03), Hertz::new(0.5)),
            Err(Error::OutsideModel(Limit::DiscontinuousConduction))
        );
        let s = valve(Clamp::rc_snubber(Ohms::new(1000.0), Farads::from_micro(10.0)).unwrap());
        assert_eq!(
            s.hold(&op(), Amps::new(0.05), Hertz::new(1e3)),
            Err(Error::OutsideModel(Limit::NotFirstOrder))
        );
        assert!(c.hold(&op(), Amps::new(0.0), Hertz::new(1e3)).is_err());
        assert!(c
            .hold(&op(), Amps::new(0.05), Hertz::new(f32::NAN))
            .is_err());
    }

    #[test]
    fn a_clamp_far_above_the_supply_keeps_the_off_interval_and_the_contract() {
        // Reference: the module's steady periodic solution written out in f64 (volt-second
        // balance and the two exact exponential segments, textbook, from memory). Valve circuit:
        // R_on = 180.5 + 0.5 + 0.05 Ω (winding 180 + wiring 0.4 + sense 0.5 + R_DS 0.1 at 20 °C
        // as in `valve`), read back from the core's own loop resistances.
        let c = valve(Clamp::diode_zener(Volts::new(0.8), Volts::new(1.0e5)).unwrap());
        let (f, ih) = (20_000.0f64, 0.06f64);
        let h = c
            .hold(&op(), Amps::new(ih as f32), Hertz::new(f as f32))
            .unwrap();
        let r = c.resolve(&op()).unwrap();
        let (r_on, r_off) = (r.on_loop.value() as f64, r.off_loop.value() as f64);
        let l = r.inductance_operated as f64;
        let (i_on, a) = (24.0 / r_on, 1.0e5 / r_off);
        let den = r_on * (i_on - ih) + r_off * (a + ih);
        let (duty, off) = (r_off * (a + ih) / den, r_on * (i_on - ih) / den);
        let (x_on, x_off) = (duty * r_on * l.recip() / f, off * r_off * l.recip() / f);
        let (m_on, m_off, m_tot) = (
            -(-x_on).exp_m1(),
            -(-x_off).exp_m1(),
            -(-(x_on + x_off)).exp_m1(),
        );
        let valley = (i_on * m_on * (1.0 - m_off) - a * m_off) / m_tot;
        let ripple = (i_on - valley) * m_on;
        assert!((h.duty as f64 - duty).abs() < 1e-7, "{} vs {duty}", h.duty);
        assert!(h.duty < 1.0);
        let got = h.ripple.value() as f64;
        assert!((got - ripple).abs() < 1e-3 * ripple, "{got} vs {ripple}");
        assert!((h.valley.value() as f64 - valley).abs() < 1e-5 * valley);
        // At the largest clamp voltage the model accepts (100 kV) the off interval is tiny: an
        // Ok keeps 0 < D < 1 with a positive ripple, or the duty is refused; never D = 1.
        let huge = valve(Clamp::diode_zener(Volts::new(0.8), Volts::new(1.0e5)).unwrap());
        match huge.hold(&op(), Amps::new(0.06), Hertz::new(20e3)) {
            Ok(h) => assert!(
                h.duty > 0.0 && h.duty < 1.0 && h.ripple.value() >= 0.0,
                "{h:?}"
            ),
            Err(e) => assert_eq!(e, Error::OutsideModel(Limit::Resolution)),
        }
    }

    #[test]
    fn mean_fraction_is_continuous_at_the_switchover() {
        let direct = |x: f64| 1.0 - (1.0 - (-x).exp()) / x;
        for x in [0.2499f32, 0.2501] {
            let exact = direct(x as f64);
            assert!((mean_fraction(x) as f64 - exact).abs() < 1e-6 * exact);
        }
        assert!((mean_fraction(0.1) as f64 - direct(0.1)).abs() < 1e-7);
        assert!((mean_fraction(3.0) as f64 - direct(3.0)).abs() < 1e-6);
    }

    /// Checks the documented contract of one hold: 0 < D < 1, every figure finite, ripple ≥ 0,
    /// 0 ≤ valley ≤ peak, the average between them, powers ≥ 0.
    fn assert_contract(h: &Hold, what: &str) {
        assert!(h.duty > 0.0 && h.duty < 1.0, "{what}: {h:?}");
        for x in [
            h.frequency.value(),
            h.valley.value(),
            h.peak.value(),
            h.ripple.value(),
            h.average.value(),
            h.winding_power.value(),
            h.clamp_power.value(),
        ] {
            assert!(x.is_finite(), "{what}: {h:?}");
        }
        assert!(h.ripple.value() >= 0.0, "{what}: {h:?}");
        assert!(
            h.valley.value() >= 0.0 && h.valley <= h.peak,
            "{what}: {h:?}"
        );
        // The mean lies between valley and peak, to f32 rounding of the three sums (a few ulp).
        let ulps = 4.0 * f32::EPSILON * h.peak.value();
        assert!(
            h.valley.value() - ulps <= h.average.value(),
            "{what}: {h:?}"
        );
        assert!(h.average.value() <= h.peak.value() + ulps, "{what}: {h:?}");
        assert!(h.winding_power.value() >= 0.0 && h.clamp_power.value() >= 0.0);
    }

    /// Issue 11 item 13: extreme clamp values gave duty = 1.0 and a negative ripple inside `Ok`.
    #[test]
    fn extreme_clamps_keep_the_duty_and_ripple_contract() {
        let mut clamps = std::vec::Vec::new();
        for v in (0..39)
            .map(|k| libm::powf(10.0, k as f32))
            .chain([3.0e38, f32::MAX])
        {
            // Clamp voltages above 100 kV and resistors above 1 GΩ are outside the model.
            clamps.extend(Clamp::diode_zener(Volts::new(0.8), Volts::new(v)).ok());
            clamps.extend(Clamp::diode_resistor(Volts::new(0.8), Ohms::new(v)).ok());
            clamps.extend(Clamp::diode(Volts::new(v)).ok());
            let across = Clamp::AcrossSwitch {
                clamp_voltage: Volts::new(v),
            };
            clamps.extend(across.validate().ok().map(|()| across));
            clamps.push(Clamp::Unclamped);
        }
        for (k, clamp) in clamps.into_iter().enumerate() {
            // The unclamped switch avalanches at its breakdown: sweep it with the clamp values.
            let breakdown = libm::fmaxf(60.0, libm::powf(10.0, (k / 5).min(38) as f32));
            let c = Circuit::new(
                *valve(clamp).coil(),
                crate::physics::circuit::Switch::Mosfet {
                    on_resistance: Ohms::new(0.1),
                    breakdown: Volts::new(breakdown),
                },
                crate::physics::circuit::Topology::LowSide,
                Ohms::new(0.5),
                Ohms::new(0.4),
                clamp,
            )
            .unwrap();
            for f in (-10..39).map(|k| libm::powf(10.0, k as f32)) {
                for ih in [
                    1.0e-40f32, 1.0e-30, 1.0e-12, 1.0e-6, 0.01, 0.05, 0.1, 0.13, 0.1325,
                ] {
                    if let Ok(h) = c.hold(&op(), Amps::new(ih), Hertz::new(f)) {
                        assert_contract(&h, &std::format!("{clamp:?} {f} Hz {ih} A"));
                    }
                }
            }
        }
    }
}
