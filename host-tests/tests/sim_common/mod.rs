//! Helpers shared by the simulator's own tests. All part values are
//! invented for the tests.
#![allow(dead_code)]

use coilwise_host_tests::{
    Bench, ChannelParams, Clamp, Coil, DiodeLaw, Mechanics, SolverSettings, Supply, Switch,
    Topology,
};

/// Invented MOSFET on-resistance, ohms.
pub const RON: f64 = 0.05;
/// Invented shunt, ohms.
pub const RSENSE: f64 = 0.5;
/// Invented wiring, ohms.
pub const RWIRE: f64 = 1.5;
/// Invented winding, ohms.
pub const RCOIL: f64 = 180.0;
/// Invented inductance, henries.
pub const LCOIL: f64 = 0.35;

/// A coil with a fixed armature (constant inductance) on a low-side MOSFET.
pub fn fixed_channel(r: f64, l: f64, clamp: Clamp) -> ChannelParams {
    ChannelParams {
        coil: Coil::fixed(r, l, RWIRE),
        mechanics: Mechanics::Fixed { position: 0.0 },
        switch: Switch::Mosfet {
            on_ohms: RON,
            breakdown_volts: 68.0,
            avalanche_ohms: 0.0,
            body_diode_volts: 0.7,
        },
        sense_ohms: RSENSE,
        clamp,
        snubber: None,
        topology: Topology::LowSide,
    }
}

pub fn diode() -> Clamp {
    Clamp::Diode(DiodeLaw::rectifier())
}

pub fn bench1(v: f64, ch: ChannelParams) -> Bench<1> {
    Bench::single(Supply::ideal(v), ch, SolverSettings::default()).unwrap()
}

/// Loop resistance with the switch on.
pub fn r_on_loop(r: f64) -> f64 {
    r + RWIRE + RON + RSENSE
}

pub fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}
