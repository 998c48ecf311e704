//! Start-up self-check, part 1: the core's calculations against values that do not come from
//! this firmware — textbook constants, a resistor-inductor circuit worked by hand, the copper
//! standard, and IEEE 754 facts — so that a miscompiled float path, a wrong FPU mode (rounding,
//! flush-to-zero) or a broken libm is caught on the device before any coil is driven.
//!
//! Every input goes through `black_box`, so the compiler cannot fold a check into a constant.
//!
//! **The hand-worked circuit** (used by vectors 4–7): a 47.5 Ω winding at 20 °C plus a 0.5 Ω
//! shunt, an ideal switch (0 Ω) and no cable: `R_on = 48 Ω`; `L = 0.24 H` in both armature
//! states; 24 V. Then `I∞ = 24/48 = 0.5 A`, `τ = L/R_on = 0.24/48 = 5 ms`,
//! `i(10 ms) = 0.5·(1 − e^−2) = 0.5·0.864 664 7 = 0.432 332 4 A`, the time to 0.25 A is
//! `τ·ln 2 = 3.465 736 ms`. Switched off from 0.5 A into a clamp of 23.75 V across the coil,
//! the freewheel loop is the winding alone (47.5 Ω, the shunt is outside it):
//! `τ_off = 0.24/47.5 = 5.052 632 ms`, `a = 23.75/47.5 = 0.5 A`,
//! `t₀ = τ_off·ln(1 + I₀/a) = τ_off·ln 2 = 3.502 216 ms`; the stored `½·L·I₀² = 30 mJ` leaves
//! through clamp and winding together.

use core::hint::black_box;

use coilwise::diagnosis::{fit_rise, FitOptions, Sampling};
use coilwise::{
    Amps, Armature, Celsius, Circuit, Clamp, Coil, FirstOrder, Henries, Ohms, OperatingPoint,
    Seconds, Switch, TickRate, Topology, Volts,
};

/// One check: what, where the expected value comes from, the value computed on this device, the
/// expected value and the allowed absolute difference.
#[derive(Clone, Copy, Debug)]
pub struct Vector {
    /// What is computed.
    pub what: &'static str,
    /// Where the expected value comes from.
    pub source: &'static str,
    /// The device's result (NaN when the computation returned an error).
    pub got: f32,
    /// The reference value.
    pub want: f32,
    /// Allowed |got − want|.
    pub tolerance: f32,
}

impl Vector {
    /// Whether the result is within tolerance (false for NaN).
    pub fn holds(&self) -> bool {
        (self.got - self.want).abs() <= self.tolerance
    }
}

/// Number of check vectors.
pub const COUNT: usize = 12;

fn or_nan<T>(r: Result<T, coilwise::Error>, f: impl FnOnce(T) -> f32) -> f32 {
    match r {
        Ok(v) => f(v),
        Err(_) => f32::NAN,
    }
}

/// The hand-worked circuit of the module docs.
fn hand_circuit() -> Result<Circuit, coilwise::Error> {
    let coil = Coil::new(
        Ohms::new(black_box(47.5)),
        Celsius::new(20.0),
        Henries::new(black_box(0.24)),
        Henries::new(black_box(0.24)),
        Volts::new(12.0),
        Volts::new(2.0),
    )?;
    Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(0.0),
            breakdown: Volts::new(100.0),
        },
        Topology::LowSide,
        Ohms::new(black_box(0.5)),
        Ohms::new(0.0),
        Clamp::diode_zener(Volts::new(0.7), Volts::new(black_box(23.75)))?,
    )
}

/// Computes every check vector on this device.
// The reference values are typed in from their sources on purpose: the point is to compare the
// device's arithmetic with numbers that do not come from this toolchain (not `core::f32::consts`).
#[allow(clippy::approx_constant)]
#[inline(never)]
pub fn compute() -> [Vector; COUNT] {
    let op = OperatingPoint::new(Volts::new(black_box(24.0)), Celsius::new(20.0));
    let circuit = hand_circuit();
    let rise = circuit
        .as_ref()
        .map_err(|e| *e)
        .and_then(|c| c.energize(&op, Armature::Released, Amps::new(0.0)));
    let release = circuit
        .as_ref()
        .map_err(|e| *e)
        .and_then(|c| c.release(&op, Amps::new(0.5)));
    let unit = FirstOrder::new(0.0, 1.0, Seconds::new(black_box(1.0)));
    let copper = Coil::new(
        Ohms::new(black_box(100.0)),
        Celsius::new(20.0),
        Henries::new(0.1),
        Henries::new(0.1),
        Volts::new(10.0),
        Volts::new(1.0),
    );
    let tick = TickRate::new(black_box(1_000_000));
    let one = black_box(1.0f32);
    [
        Vector {
            what: "libm expf(-1)",
            source: "e^-1 = 0.36787944 (table of the exponential, from memory)",
            got: libm::expf(black_box(-1.0)),
            want: 0.367_879_44,
            tolerance: 1e-7,
        },
        Vector {
            what: "libm sqrtf(2)",
            source: "sqrt 2 = 1.41421356 (from memory)",
            got: libm::sqrtf(black_box(2.0)),
            want: 1.414_213_5,
            tolerance: 1e-7,
        },
        Vector {
            what: "f32 rounding: 1 + 0.75 ulp",
            source: "IEEE 754 round-to-nearest gives 1 + 1 ulp (1.00000012)",
            got: one + black_box(0.75 * f32::EPSILON),
            want: 1.0 + f32::EPSILON,
            tolerance: 0.0,
        },
        Vector {
            what: "f32 gradual underflow: 1e-38 * 1e-2",
            source: "IEEE 754 subnormal 1e-40 (not flushed to zero)",
            got: black_box(1.0e-38f32) * black_box(1.0e-2f32) * 1.0e20 * 1.0e20,
            want: 1.0,
            tolerance: 1e-3,
        },
        Vector {
            what: "first-order rise after 5 tau",
            source: "1 - e^-5 = 0.99326205 (5-tau settling, common practice)",
            got: or_nan(unit, |u| {
                u.value_at(Seconds::new(black_box(5.0))).unwrap_or(f32::NAN)
            }),
            want: 0.993_262_05,
            tolerance: 1e-6,
        },
        Vector {
            what: "first-order time to half",
            source: "ln 2 = 0.69314718 (from memory)",
            got: or_nan(unit, |u| u.time_to(0.5).map_or(f32::NAN, |t| t.value())),
            want: 0.693_147_2,
            tolerance: 1e-6,
        },
        Vector {
            what: "RL by hand: i(10 ms), A",
            source: "0.5*(1 - e^-2) = 0.43233236 A (worked by hand, module docs)",
            got: or_nan(rise, |r| {
                r.value_at(Seconds::new(0.010)).unwrap_or(f32::NAN)
            }),
            want: 0.432_332_36,
            tolerance: 2e-6,
        },
        Vector {
            what: "RL by hand: time to 0.25 A, ms",
            source: "tau*ln 2 = 3.465736 ms (worked by hand)",
            got: or_nan(rise, |r| {
                r.time_to(0.25).map_or(f32::NAN, |t| t.as_millis())
            }),
            want: 3.465_736,
            tolerance: 1e-4,
        },
        Vector {
            what: "RL by hand: release to zero, ms",
            source: "tau_off*ln 2 = 3.502216 ms (worked by hand)",
            got: or_nan(release, |r| {
                r.time_to_zero().map_or(f32::NAN, |t| t.as_millis())
            }),
            want: 3.502_216,
            tolerance: 1e-4,
        },
        Vector {
            what: "RL by hand: clamp + winding energy, mJ",
            source: "1/2 L I0^2 = 30 mJ (conservation of energy)",
            got: or_nan(release.and_then(|r| r.energy()), |e| {
                (e.clamp.value() + e.winding.value()) * 1e3
            }),
            want: 30.0,
            tolerance: 1e-3,
        },
        Vector {
            what: "copper: 100 ohm at 20 C, at 85 C",
            source: "IEC 60028: alpha20 = 0.00393/K -> 125.545 ohm",
            got: or_nan(
                copper.and_then(|c| c.resistance_at(Celsius::new(85.0))),
                |r| r.value(),
            ),
            want: 125.545,
            tolerance: 1e-3,
        },
        Vector {
            what: "fit of a 64-sample trace: tau, ms",
            source: "trace of the hand circuit: tau = L/R = 5 ms",
            got: fit_hand_trace(tick.ok()),
            want: 5.0,
            tolerance: 0.02,
        },
    ]
}

/// The hand circuit's rise sampled like an ADC would (12-bit counts of 0.25 mA, 64 samples 100 µs
/// apart, the first at 100 µs; `e^x` from libm, checked above), fitted; returns τ in ms.
fn fit_hand_trace(tick: Option<TickRate>) -> f32 {
    let Some(tick) = tick else { return f32::NAN };
    let apc = 0.5 / 2000.0;
    let mut counts = [0u16; 64];
    for (k, c) in counts.iter_mut().enumerate() {
        let t = (k as f32 + 1.0) * 1.0e-4;
        let i = 0.5 * (1.0 - libm::expf(-t / black_box(0.005)));
        *c = libm::roundf(i / apc) as u16;
    }
    let period = tick.seconds(coilwise::Ticks(100));
    let Ok(s) = Sampling::new(period, apc).and_then(|s| s.with_first_sample(period)) else {
        return f32::NAN;
    };
    match fit_rise(&counts, &s, &FitOptions::default()) {
        Ok(f) => f.tau.as_millis(),
        Err(_) => f32::NAN,
    }
}

/// Whether every vector of [`compute`] holds (out of line: the vectors stay in this frame).
#[inline(never)]
pub fn holds() -> bool {
    compute().iter().all(Vector::holds)
}
