//! What the simulated hardware really is (**invented**): each coil of the scenario as built, a
//! little off its nominal values, at a 25 °C greenhouse morning, with a moving armature whose
//! spring lets it pull in at about three quarters of the datasheet pull-in current (a coil pulls
//! in below its must-operate rating; the rating is the guaranteed figure).
//!
//! The numbers feed the numerical plant of `coilwise-host-tests`, which integrates the circuit and
//! the armature in time and shares no formula with the core's closed forms.

use coilwise_host_tests::{
    Armature, ChannelParams, Clamp, Coil, CoupledLoop, DiodeLaw, Magnetics, Mechanics, Switch,
    Topology,
};

/// Winding temperature of the simulated coils, °C.
pub const WINDING_CELSIUS: f64 = 25.0;

/// Copper temperature coefficient used to put the simulated windings at
/// [`WINDING_CELSIUS`] (annealed copper, IEC 60028: 0.003 93 /K at 20 °C).
const COPPER_ALPHA: f64 = 0.003_93;

/// The deviations of one simulated coil from its datasheet values.
#[derive(Clone, Copy, Debug)]
pub struct AsBuilt {
    /// Winding resistance at 20 °C, Ω (datasheet value × part spread).
    pub r20: f64,
    /// Inductance released / operated, H.
    pub l_released: f64,
    /// Inductance operated, H.
    pub l_operated: f64,
    /// Cable resistance, Ω.
    pub wiring: f64,
    /// Shunt, Ω.
    pub shunt: f64,
    /// Current at which the armature starts to move, A.
    pub pull_in_amps: f64,
    /// Armature stroke, m.
    pub stroke: f64,
    /// Moving mass, kg.
    pub mass: f64,
    /// Spring rate, N/m.
    pub spring_rate: f64,
    /// Viscous damping, N·s/m.
    pub damping: f64,
}

/// Spring preload that balances the magnetic force `½·i²·dL/dp` at `pull_in_amps` with the
/// armature released: `dL/dp|₀ = k·L_rel²/(L_op·stroke)`, `k = L_op/L_rel − 1` (the plant's
/// one-gap reluctance law at x = 0).
fn preload(b: &AsBuilt) -> f64 {
    let k = b.l_operated / b.l_released - 1.0;
    let dl_dp = k * b.l_released * b.l_released / (b.l_operated * b.stroke);
    0.5 * b.pull_in_amps * b.pull_in_amps * dl_dp
}

fn params(b: &AsBuilt, switch: Switch, clamp: Clamp) -> ChannelParams {
    ChannelParams {
        coil: Coil {
            resistance_ohms: b.r20 * (1.0 + COPPER_ALPHA * (WINDING_CELSIUS - 20.0)),
            inductance_released_henries: b.l_released,
            inductance_operated_henries: b.l_operated,
            wiring_ohms: b.wiring,
        },
        mechanics: Mechanics::Moving(Armature {
            stroke_m: b.stroke,
            mass_kg: b.mass,
            preload_newtons: preload(b),
            spring_newtons_per_m: b.spring_rate,
            damping_newton_s_per_m: b.damping,
            restitution: 0.0,
        }),
        switch,
        sense_ohms: b.shunt,
        clamp,
        snubber: None,
        topology: Topology::LowSide,
    }
}

fn mosfet() -> Switch {
    Switch::Mosfet {
        on_ohms: 0.05,
        breakdown_volts: 60.0,
        avalanche_ohms: 0.2,
        body_diode_volts: 0.7,
    }
}

/// Valve A as built: +2 % winding, −3 % inductance, pulls in at 0.75 × 16.8/72 A.
pub const VALVE_A: AsBuilt = AsBuilt {
    r20: 72.0 * 1.02,
    l_released: 0.30 * 0.97,
    l_operated: 0.45 * 0.97,
    wiring: 0.5,
    shunt: 0.1,
    pull_in_amps: 0.75 * 16.8 / 72.0,
    stroke: 1.0e-3,
    mass: 5e-3,
    spring_rate: 150.0,
    damping: 0.4,
};

/// Valve B as built: −3 % winding, +4 % inductance.
pub const VALVE_B: AsBuilt = AsBuilt {
    r20: 82.0 * 0.97,
    l_released: 0.36 * 1.04,
    l_operated: 0.52 * 1.04,
    wiring: 1.2,
    shunt: 0.1,
    pull_in_amps: 0.75 * 17.0 / 82.0,
    stroke: 1.0e-3,
    mass: 5e-3,
    spring_rate: 150.0,
    damping: 0.4,
};

/// Valve C as built: +1 % winding, +2 % inductance.
pub const VALVE_C: AsBuilt = AsBuilt {
    r20: 60.0 * 1.01,
    l_released: 0.22 * 1.02,
    l_operated: 0.34 * 1.02,
    wiring: 0.5,
    shunt: 0.1,
    pull_in_amps: 0.75 * 16.0 / 60.0,
    stroke: 1.0e-3,
    mass: 5e-3,
    spring_rate: 150.0,
    damping: 0.4,
};

/// Pump relay as built: +3 % winding, −5 % inductance; a light clapper armature.
pub const PUMP: AsBuilt = AsBuilt {
    r20: 150.0 * 1.03,
    l_released: 0.10 * 0.95,
    l_operated: 0.16 * 0.95,
    wiring: 0.3,
    shunt: 1.0,
    pull_in_amps: 0.75 * 7.8 / 150.0,
    stroke: 0.5e-3,
    mass: 2e-3,
    spring_rate: 300.0,
    damping: 0.2,
};

/// Simulated channel `ch` in the scenario's channel order (valves A, B, C, pump relay).
pub fn channel(ch: usize) -> Option<ChannelParams> {
    let zener = |v: f64| Clamp::DiodeZener {
        diode: DiodeLaw::rectifier(),
        zener_volts: v,
        zener_ohms: 1.0,
    };
    Some(match ch {
        0 => params(&VALVE_A, mosfet(), zener(24.0)),
        1 => params(
            &VALVE_B,
            mosfet(),
            Clamp::DiodeResistor {
                diode: DiodeLaw::rectifier(),
                ohms: 47.0,
            },
        ),
        2 => params(&VALVE_C, mosfet(), Clamp::Diode(DiodeLaw::rectifier())),
        3 => params(
            &PUMP,
            Switch::Bipolar {
                saturation_volts: 0.2,
                saturation_ohms: 0.5,
                breakdown_volts: 45.0,
                avalanche_ohms: 0.5,
            },
            zener(15.0),
        ),
        _ => return None,
    })
}

/// The channel with a strong eddy-current path (the pump relay: invented, a solid,
/// unlaminated iron core and yoke).
pub const EDDY_CHANNEL: usize = 3;

/// Its eddy path: a fast mode taking `x` of the current with a time constant `r` of the coil's,
/// which the driver must not mistake for a fault. Built as the simulator's coupled loop (as the
/// field campaign does): coupling `k² = x/(r + x)`, loop time constant `r·τ/(1 − k²)` (the fast
/// eigenvalue of two coupled RL loops with a weak secondary), loop inductance 2 % of the coil's.
pub const EDDY: (f64, f64) = (0.05, 0.20);

/// The magnetic extras of simulated channel `ch` (eddy path, saturation): [`EDDY_CHANNEL`] has
/// an eddy path ([`EDDY`]); the others are linear.
pub fn magnetics(ch: usize) -> Magnetics {
    if ch != EDDY_CHANNEL {
        return Magnetics::LINEAR;
    }
    let (x, r) = EDDY;
    let b = [&VALVE_A, &VALVE_B, &VALVE_C, &PUMP][ch];
    let r_w = b.r20 * (1.0 + COPPER_ALPHA * (WINDING_CELSIUS - 20.0));
    // On-loop resistance of the rise: winding, cable, shunt, switch (about 0.05 ohm or more).
    let tau = b.l_released / (r_w + b.wiring + b.shunt + 0.05);
    let k2 = x / (r + x);
    let l_e = 0.02 * b.l_released;
    let tau_e = r * tau / (1.0 - k2);
    Magnetics {
        eddy: Some(CoupledLoop {
            ohms: l_e / tau_e,
            henries: l_e,
            coupling: libm::sqrt(k2),
        }),
        saturation: None,
    }
}
