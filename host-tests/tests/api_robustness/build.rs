//! Builders of random parts, circuits, designs, traces and samplings (each construction is a
//! call of its own).

use super::*;

pub(crate) fn coil(g: &mut Gen) -> Result<Coil, Error> {
    let r = g.ohms(180.0);
    let t = Celsius::new(g.around(20.0, 60.0));
    let (l1, l2) = (Henries::new(g.val(0.3)), Henries::new(g.val(0.45)));
    let (vop, vrel) = (g.volts(16.8), g.volts(2.4));
    g.log("Coil::new", &(r, t, l1, l2, vop, vrel));
    let c = Coil::new(r, t, l1, l2, vop, vrel)?;
    if g.rng.chance(0.2) {
        let a = PerKelvin::new(g.val(0.004));
        g.log("Coil::with_temperature_coefficient", &a);
        return c.with_temperature_coefficient(a);
    }
    Ok(c)
}

pub(crate) fn switch(g: &mut Gen) -> Switch {
    if g.rng.chance(0.5) {
        Switch::Mosfet {
            on_resistance: g.ohms(0.1),
            breakdown: g.volts(60.0),
        }
    } else {
        Switch::Bipolar {
            saturation: g.volts(0.2),
            breakdown: g.volts(60.0),
        }
    }
}

pub(crate) fn clamp(g: &mut Gen) -> Result<Clamp, Error> {
    let vf = g.volts(0.8);
    match g.rng.below(7) {
        0 => {
            g.log("Clamp::diode", &vf);
            Clamp::diode(vf)
        }
        1 => {
            let vc = g.volts(30.0);
            g.log("Clamp::diode_zener", &(vf, vc));
            Clamp::diode_zener(vf, vc)
        }
        2 => {
            let r = g.ohms(200.0);
            g.log("Clamp::diode_resistor", &(vf, r));
            Clamp::diode_resistor(vf, r)
        }
        3 => {
            let (r, c) = (g.ohms(1000.0), Farads::new(g.val(1.0e-5)));
            g.log("Clamp::rc_snubber", &(r, c));
            Clamp::rc_snubber(r, c)
        }
        4 => {
            let c = Clamp::AcrossSwitch {
                clamp_voltage: g.volts(47.0),
            };
            g.log("Clamp::validate", &c);
            c.validate().map(|()| c)
        }
        5 => {
            let (vc, vs) = (g.volts(36.0), g.volts(30.0));
            g.log("Clamp::tvs_across_coil", &(vc, vs));
            Clamp::tvs_across_coil(vc, vs)
        }
        _ => Ok(Clamp::Unclamped),
    }
}

pub(crate) fn circuit(g: &mut Gen) -> Result<Circuit, Error> {
    let coil = coil(g)?;
    let sw = switch(g);
    g.log("Switch::validate", &sw);
    sw.validate()?;
    let cl = clamp(g)?;
    let top = if g.rng.chance(0.5) {
        Topology::LowSide
    } else {
        Topology::HighSide
    };
    let (sense, wiring) = (g.ohms(0.5), g.ohms(0.4));
    g.log("Circuit::new", &(sw, top, sense, wiring, cl));
    Circuit::new(coil, sw, top, sense, wiring, cl)
}

pub(crate) fn point(g: &mut Gen) -> OperatingPoint {
    OperatingPoint {
        supply: g.volts(24.0),
        temperature: Celsius::new(g.around(20.0, 80.0)),
        resistance_factor: g.around(1.0, 0.2),
        inductance_factor: g.around(1.0, 0.2),
        sense_factor: g.around(1.0, 0.05),
    }
}

pub(crate) fn design(g: &mut Gen) -> Result<DriverDesign, Error> {
    let c = circuit(g)?;
    let nominal = g.val(24.0);
    let tol = g.around(0.1, 0.1);
    g.log("SupplyRange::with_tolerance", &(nominal, tol));
    let supply = SupplyRange::with_tolerance(Volts::new(nominal), tol)?;
    let (lo, hi) = (g.around(-20.0, 40.0), g.around(60.0, 40.0));
    g.log("TemperatureRange::new", &(lo, hi));
    let temp = TemperatureRange::new(Celsius::new(lo), Celsius::new(hi))?;
    let hz = [1_000, 32_768, 1_000_000, 80_000_000, 1, u32::MAX][g.rng.below(6) as usize];
    g.log("TickRate::new", &hz);
    let rate = TickRate::new(hz)?;
    let mut d = DriverDesign::new(c, supply, temp, rate);
    d.tolerances = Tolerances {
        resistance: g.around(0.05, 0.05),
        inductance: g.around(0.1, 0.1),
        sense: g.around(0.01, 0.01),
    };
    d.operate_allowance = g.secs(5.0e-3);
    d.release_allowance = g.secs(5.0e-3);
    d.residual_current = Amps::new(if g.rng.chance(0.5) {
        0.0
    } else {
        g.val(1.0e-3)
    });
    if g.rng.chance(0.5) {
        d.duty = Some((g.secs(0.05), Hertz::new(g.val(2.0))));
    }
    if g.rng.chance(0.5) {
        d.clamp_rating = Some(Watts::new(g.val(0.25)));
    }
    Ok(d)
}

/// A trace of `n` samples: a first-order rise (with a dip, noise, offset or saturation), random
/// garbage, or nasty values.
pub(crate) fn trace(g: &mut Gen, n: usize, top: f32) -> Vec<f32> {
    let kind = g.rng.below(4);
    let tau = 5.0 + 40.0 * g.rng.unit();
    let noise = 3.0 * g.rng.unit();
    let dip = g.rng.chance(0.5);
    (0..n)
        .map(|k| match kind {
            0 | 1 => {
                let k = k as f32;
                let mut x = top * 0.8 * (1.0 - (-k / tau).exp());
                if dip && k > 2.0 * tau && k < 3.0 * tau {
                    x -= 0.1 * top * ((k - 2.0 * tau) / tau * std::f32::consts::PI).sin();
                }
                x + noise * (g.rng.unit() - 0.5)
            }
            2 => top * g.rng.unit(),
            _ => {
                if g.rng.chance(0.3) {
                    g.wild()
                } else {
                    top * g.rng.unit()
                }
            }
        })
        .collect()
}

/// A sampling from random settings: `Ok(None)` when refused, `Err` for an accepted one with a
/// non-finite field (full scale may be +∞: "no saturation"; the period must be > 0).
pub(crate) fn sampling(g: &mut Gen) -> Result<Option<Sampling>, String> {
    let Ok(s) = try_sampling(g) else {
        return Ok(None);
    };
    let fields = [
        s.period().value(),
        s.first().value(),
        s.amps_per_count(),
        s.zero(),
        s.noise(),
    ];
    if fields.iter().any(|x| !x.is_finite()) || s.full_scale().is_nan() || s.period().value() <= 0.0
    {
        return Err(format!("Sampling accepted a non-finite field: {s:?}"));
    }
    Ok(Some(s))
}

pub(crate) fn try_sampling(g: &mut Gen) -> Result<Sampling, Error> {
    let period = g.secs(1e-4);
    let mut s = if g.rng.chance(0.5) {
        let bits = g.rng.below(27) as u8;
        let fs = g.amps(0.4);
        g.log("Sampling::adc", &(period, bits, fs));
        Sampling::adc(period, bits, fs)?
    } else {
        let apc = g.val(1e-4);
        g.log("Sampling::new", &(period, apc));
        Sampling::new(period, apc)?
    };
    if g.rng.chance(0.3) {
        let first = g.secs(1e-4);
        g.log("Sampling::with_first_sample", &first);
        s = s.with_first_sample(first)?;
    }
    if g.rng.chance(0.3) {
        let z = g.around(0.0, 20.0);
        g.log("Sampling::with_zero", &z);
        s = s.with_zero(z)?;
    }
    if g.rng.chance(0.3) {
        let fs = g.val(4000.0);
        g.log("Sampling::with_full_scale", &fs);
        s = s.with_full_scale(fs)?;
    }
    if g.rng.chance(0.3) {
        let n = g.val(1.0);
        g.log("Sampling::with_noise", &n);
        s = s.with_noise(n)?;
    }
    Ok(s)
}
