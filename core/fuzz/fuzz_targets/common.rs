//! Shared pieces of the fuzz targets: a byte reader and the invariants every verdict must keep.
#![allow(dead_code)] // each target uses a part of this module

use coilwise::diagnosis::{Movement, RiseFit, Verdict};
use coilwise::{
    Celsius, Circuit, Clamp, Coil, DriverDesign, Henries, Ohms, Seconds, SupplyRange, Switch,
    TemperatureRange, TickRate, Tolerances, Topology, Volts,
};
use std::fmt::Debug;

pub struct Bytes<'a>(pub &'a [u8]);

impl Bytes<'_> {
    pub fn u8(&mut self) -> u8 {
        match self.0.split_first() {
            Some((b, rest)) => {
                self.0 = rest;
                *b
            }
            None => 0,
        }
    }
    pub fn u32(&mut self) -> u32 {
        u32::from_le_bytes([self.u8(), self.u8(), self.u8(), self.u8()])
    }
    /// Any f32 bit pattern: NaN, ±∞, subnormals, negative zero included.
    pub fn f32(&mut self) -> f32 {
        f32::from_bits(self.u32())
    }
    /// A float that is usually sane: the low bit of a selector picks raw bits or a scaled value.
    pub fn mostly(&mut self, scale: f32) -> f32 {
        if self.u8() & 1 == 0 {
            self.f32()
        } else {
            scale * (self.u8() as f32 + 1.0) / 64.0
        }
    }
}

/// Every field of an output, found through its Debug text (so a field added later is covered
/// too): no NaN, no ±∞, no negative time (`Seconds(-x)`) or energy (`Joules(-x)`); −0.0 counts
/// as zero.
pub fn all_finite(what: &str, v: &dyn Debug) {
    let s = format!("{v:?}");
    let b = s.as_bytes();
    for pat in ["NaN", "inf"] {
        for (i, _) in s.match_indices(pat) {
            let before = i == 0 || !b[i - 1].is_ascii_alphanumeric();
            let end = i + pat.len();
            let after = end >= b.len() || !b[end].is_ascii_alphanumeric();
            assert!(!(before && after), "{what}: non-finite field in {s}");
        }
    }
    for pat in ["Seconds(-", "Joules(-"] {
        for (i, _) in s.match_indices(pat) {
            assert!(
                s[i + pat.len()..].starts_with("0.0)"),
                "{what}: negative time or energy in {s}"
            );
        }
    }
}

/// The movement estimate: every field finite, times ≥ 0, the valley after the peak, depth ≥ 0.
pub fn check_movement(m: &Movement) {
    all_finite("movement", m);
    match *m {
        Movement::Moved {
            at,
            seated,
            peak,
            depth,
        } => {
            assert!(at.value() >= 0.0 && seated >= at, "{m:?}");
            assert!(depth.value() >= 0.0 && peak.value().is_finite(), "{m:?}");
        }
        Movement::NotSeen { by } => assert!(by.value() >= 0.0, "{m:?}"),
    }
}

/// The fit: every field finite, τ > 0, `I∞ = s·τ` to f32 rounding, relative errors ≥ 0.
pub fn check_fit(f: &RiseFit) {
    all_finite("fit", f);
    assert!(f.tau.value() > 0.0, "{f:?}");
    let q = f.quality;
    for x in [q.noise_ratio, q.rel_sd_slope, q.rel_sd_tau, q.rel_sd_final] {
        assert!(x >= 0.0, "{f:?}");
    }
    assert!((-1.0..=1.0).contains(&q.correlation), "{f:?}");
}

pub fn check(v: &Verdict) {
    all_finite("verdict", v);
    let e = &v.estimates;
    for x in [
        e.final_current.map(|a| a.value()),
        e.tau.map(|t| t.value()),
        e.resistance.map(|r| r.value()),
        e.inductance.map(|l| l.value()),
        e.temperature.map(|t| t.value()),
    ]
    .into_iter()
    .flatten()
    {
        assert!(x.is_finite(), "non-finite estimate in {v:?}");
    }
    if let Some(q) = e.quality {
        for x in [
            q.noise_ratio,
            q.rel_sd_slope,
            q.rel_sd_tau,
            q.rel_sd_final,
            q.correlation,
            q.rise_covered,
            q.rms_residual.value(),
            q.peak.value(),
        ] {
            assert!(x.is_finite(), "non-finite quality in {v:?}");
        }
    }
}

/// Invented demo design: a greenhouse controller's 24 V valve (180 Ω, 0.30/0.45 H).
pub fn design() -> DriverDesign {
    let coil = Coil::new(
        Ohms::new(180.0),
        Celsius::new(20.0),
        Henries::new(0.30),
        Henries::new(0.45),
        Volts::new(15.0),
        Volts::new(2.4),
    )
    .unwrap();
    let circuit = Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(0.1),
            breakdown: Volts::new(60.0),
        },
        Topology::LowSide,
        Ohms::new(0.5),
        Ohms::new(0.4),
        Clamp::diode(Volts::new(0.8)).unwrap(),
    )
    .unwrap();
    let mut d = DriverDesign::new(
        circuit,
        SupplyRange::with_tolerance(Volts::new(24.0), 0.1).unwrap(),
        TemperatureRange::new(Celsius::new(-40.0), Celsius::new(85.0)).unwrap(),
        TickRate::new(1_000_000).unwrap(),
    );
    d.tolerances = Tolerances {
        resistance: 0.1,
        inductance: 0.1,
        sense: 0.01,
    };
    d.operate_allowance = Seconds::from_millis(8.0);
    d
}
