//! Invented demo parts for the greenhouse-controller scenario (a small
//! irrigation-and-pump controller: several 24 V solenoid valves and a 12 V
//! pump relay).
//!
//! **All values here are invented** to be of a plausible order. They do not
//! describe any real part; for real designs use the datasheets.

use crate::params::{
    Armature, ChannelParams, Clamp, Coil, DiodeLaw, Mechanics, Supply, Switch, Topology,
};

/// Invented 24 V solenoid valve coil: 180 Ω, 0.35 H released, 0.70 H
/// operated, 1.5 Ω wiring; 1.2 mm stroke, 6 g plunger, 0.45 N preload,
/// 250 N/m spring. Low-side MOSFET, 0.5 Ω shunt, plain rectifier clamp.
pub fn valve_24v() -> ChannelParams {
    ChannelParams {
        coil: Coil {
            resistance_ohms: 180.0,
            inductance_released_henries: 0.35,
            inductance_operated_henries: 0.70,
            wiring_ohms: 1.5,
        },
        mechanics: Mechanics::Moving(valve_armature()),
        switch: Switch::small_mosfet(),
        sense_ohms: 0.5,
        clamp: Clamp::Diode(DiodeLaw::rectifier()),
        snubber: None,
        topology: Topology::LowSide,
    }
}

/// The invented valve plunger of [`valve_24v`].
pub const fn valve_armature() -> Armature {
    Armature {
        stroke_m: 1.2e-3,
        mass_kg: 6e-3,
        preload_newtons: 0.45,
        spring_newtons_per_m: 250.0,
        damping_newton_s_per_m: 0.5,
        restitution: 0.0,
    }
}

/// Invented 12 V pump relay coil: 160 Ω, 0.12 H released, 0.20 H operated,
/// 1.0 Ω wiring; 0.6 mm armature travel, 2 g, 0.15 N preload, 400 N/m.
/// Low-side NPN, 1 Ω shunt, rectifier + 18 V zener clamp.
pub fn pump_relay_12v() -> ChannelParams {
    ChannelParams {
        coil: Coil {
            resistance_ohms: 160.0,
            inductance_released_henries: 0.12,
            inductance_operated_henries: 0.20,
            wiring_ohms: 1.0,
        },
        mechanics: Mechanics::Moving(Armature {
            stroke_m: 0.6e-3,
            mass_kg: 2e-3,
            preload_newtons: 0.15,
            spring_newtons_per_m: 400.0,
            damping_newton_s_per_m: 0.2,
            restitution: 0.0,
        }),
        switch: Switch::small_npn(),
        sense_ohms: 1.0,
        clamp: Clamp::DiodeZener {
            diode: DiodeLaw::rectifier(),
            zener_volts: 18.0,
            zener_ohms: 2.0,
        },
        snubber: None,
        topology: Topology::LowSide,
    }
}

/// Invented 24 V controller supply: 0.3 Ω source resistance, 470 µF bulk.
pub const fn supply_24v() -> Supply {
    Supply {
        volts: 24.0,
        source_ohms: 0.3,
        bulk_farads: 470e-6,
    }
}
