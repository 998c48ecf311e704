//! The greenhouse rig of the host tests (**invented**, the same parts as the QEMU firmware's
//! scenario): the designs the driver is given (`firmware-example/src/scenario.rs`) and the coils
//! as built that the numerical plant simulates (`firmware-example/src/board/parts.rs`).
//! Every value is invented for the demo and stands for no real part.
#![allow(dead_code)]

use coilwise::{
    Celsius, Circuit, Clamp, Coil, DriverDesign, Error, Henries, Ohms, Seconds, SupplyRange,
    Switch, TemperatureRange, TickRate, Tolerances, Topology, Volts,
};

/// Number of coil channels of the controller.
pub const CHANNELS: usize = 4;

/// Scheduler and measurement tick rate, Hz (1 µs per tick).
pub const TICK_HZ: u32 = 1_000_000;

/// Current sense of one channel as the board is built (invented): shunt, amplifier gain and a
/// 12-bit converter on a 3.3 V reference, `amps_per_count = V_ref / (2¹² · G · R_s)`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SenseDesign {
    /// Shunt resistance, Ω (the same resistor the design puts in the switch path).
    pub shunt: f32,
    /// Amplifier gain.
    pub gain: f32,
    /// Converter reference, V.
    pub reference: f32,
    /// Converter noise the diagnosis assumes, counts RMS (quantisation excluded).
    pub noise_counts: f32,
}

impl SenseDesign {
    /// Current per converter count, A: `V_ref / (4096 · G · R_s)`.
    pub fn amps_per_count(&self) -> f32 {
        self.reference / (4096.0 * self.gain * self.shunt)
    }
}

/// The 24 V valve rail (invented 24 V ± 10 % supply).
fn valve_supply() -> Result<SupplyRange, Error> {
    SupplyRange::with_tolerance(Volts::new(24.0), 0.10)
}

/// Valve tolerances (invented): winding ± 5 %, inductance ± 10 %, shunt ± 1 %.
const VALVE_TOLERANCES: Tolerances = Tolerances {
    resistance: 0.05,
    inductance: 0.10,
    sense: 0.01,
};

/// Valve sense (invented): 0.1 Ω shunt, gain 40, 3.3 V reference → 0.2014 mA/count,
/// 0.825 A full scale (the coldest valve at the highest supply draws 0.54 A).
const VALVE_SENSE: SenseDesign = SenseDesign {
    shunt: 0.1,
    gain: 40.0,
    reference: 3.3,
    noise_counts: 0.6,
};

fn mosfet_60v() -> Switch {
    Switch::Mosfet {
        on_resistance: Ohms::new(0.05),
        breakdown: Volts::new(60.0),
    }
}

#[inline(never)]
fn valve(coil: Coil, wiring: f32, clamp: Clamp) -> Result<DriverDesign, Error> {
    let circuit = Circuit::new(
        coil,
        mosfet_60v(),
        Topology::LowSide,
        Ohms::new(VALVE_SENSE.shunt),
        Ohms::new(wiring),
        clamp,
    )?;
    let mut design = DriverDesign::new(
        circuit,
        valve_supply()?,
        TemperatureRange::new(Celsius::new(-20.0), Celsius::new(60.0))?,
        TickRate::new(TICK_HZ)?,
    );
    design.tolerances = VALVE_TOLERANCES;
    design.operate_allowance = Seconds::from_millis(8.0);
    design.release_allowance = Seconds::from_millis(10.0);
    Ok(design)
}

/// Valve A, zone 1 "seedling benches" (invented): 24 V DC coil, 72 Ω at 20 °C (≈ 8 W),
/// 0.30 H with the plunger out / 0.45 H in, must-operate 16.8 V (70 %), must-release 2.4 V;
/// low-side 60 V MOSFET (0.05 Ω), 0.1 Ω shunt, 0.5 Ω of cable; diode + 24 V zener clamp
/// (24.7 V across the coil, so the switch sees at most 26.4 + 24.7 = 51.1 V).
#[inline(never)]
pub fn valve_design(tick_hz: u32) -> Result<DriverDesign, Error> {
    let coil = Coil::new(
        Ohms::new(72.0),
        Celsius::new(20.0),
        Henries::new(0.30),
        Henries::new(0.45),
        Volts::new(16.8),
        Volts::new(2.4),
    )?;
    let mut d = valve(
        coil,
        0.5,
        Clamp::diode_zener(Volts::new(0.7), Volts::new(24.7))?,
    )?;
    d.tick_rate = TickRate::new(tick_hz)?;
    Ok(d)
}

/// Valve B, zone 2 "tomato rows" (invented): 82 Ω at 20 °C (≈ 7 W), 0.36 H / 0.52 H,
/// must-operate 17.0 V, must-release 3.0 V; 1.2 Ω of longer cable; diode + 47 Ω resistor clamp
/// (peak switch voltage 26.4 V + 0.41 A · 47 Ω + 0.7 V ≈ 46 V).
#[inline(never)]
pub fn valve_b_design() -> Result<DriverDesign, Error> {
    let coil = Coil::new(
        Ohms::new(82.0),
        Celsius::new(20.0),
        Henries::new(0.36),
        Henries::new(0.52),
        Volts::new(17.0),
        Volts::new(3.0),
    )?;
    valve(
        coil,
        1.2,
        Clamp::diode_resistor(Volts::new(0.7), Ohms::new(47.0))?,
    )
}

/// Valve C, zone 3 "misting line" (invented): 60 Ω at 20 °C (≈ 10 W), 0.22 H / 0.34 H,
/// must-operate 16.0 V, must-release 2.0 V; 0.5 Ω of cable; plain freewheel diode (0.8 V):
/// the slowest release of the three, hence the longest safe off-time.
#[inline(never)]
pub fn valve_c_design() -> Result<DriverDesign, Error> {
    let coil = Coil::new(
        Ohms::new(60.0),
        Celsius::new(20.0),
        Henries::new(0.22),
        Henries::new(0.34),
        Volts::new(16.0),
        Volts::new(2.0),
    )?;
    valve(coil, 0.5, Clamp::diode(Volts::new(0.8))?)
}

/// Pump relay sense (invented): 1 Ω shunt, gain 16, 3.3 V reference → 50.4 µA/count,
/// 0.206 A full scale (the relay draws at most 0.11 A).
const PUMP_SENSE: SenseDesign = SenseDesign {
    shunt: 1.0,
    gain: 16.0,
    reference: 3.3,
    noise_counts: 0.6,
};

/// Pump relay (invented): 12 V DC relay coil, 150 Ω at 20 °C (≈ 1 W), 0.10 H / 0.16 H,
/// must-operate 7.8 V (65 %), must-release 1.2 V; low-side NPN (0.2 V saturation, 45 V), 1 Ω
/// shunt, 0.3 Ω of wiring; diode + 15 V zener clamp (15.7 V). Supply 12 V ± 10 %, winding
/// −20…+60 °C (inside the pump housing), winding ± 8 %, inductance ± 15 %, shunt ± 1 %;
/// 5 ms operate and 5 ms release allowance.
#[inline(never)]
pub fn pump_design() -> Result<DriverDesign, Error> {
    let coil = Coil::new(
        Ohms::new(150.0),
        Celsius::new(20.0),
        Henries::new(0.10),
        Henries::new(0.16),
        Volts::new(7.8),
        Volts::new(1.2),
    )?;
    let circuit = Circuit::new(
        coil,
        Switch::Bipolar {
            saturation: Volts::new(0.2),
            breakdown: Volts::new(45.0),
        },
        Topology::LowSide,
        Ohms::new(PUMP_SENSE.shunt),
        Ohms::new(0.3),
        Clamp::diode_zener(Volts::new(0.7), Volts::new(15.7))?,
    )?;
    let mut design = DriverDesign::new(
        circuit,
        SupplyRange::with_tolerance(Volts::new(12.0), 0.10)?,
        TemperatureRange::new(Celsius::new(-20.0), Celsius::new(60.0))?,
        TickRate::new(TICK_HZ)?,
    );
    design.tolerances = Tolerances {
        resistance: 0.08,
        inductance: 0.15,
        sense: 0.01,
    };
    design.operate_allowance = Seconds::from_millis(5.0);
    design.release_allowance = Seconds::from_millis(5.0);
    Ok(design)
}

/// The coils as built (the plant's view).
pub mod built {
    use coilwise_host_tests::{
        Armature, ChannelParams, Clamp, Coil, DiodeLaw, Mechanics, Switch, Topology,
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
}

/// Scheduler inrush cap of the rig: one coil pulling in at a time.
pub const INRUSH_CAP: u8 = 1;

/// Hold PWM carrier, Hz (the plant's PWM runs at the same rate).
pub const HOLD_HZ: f32 = 2_000.0;

/// Design and driver options of channel `i` (valves A, B, C, pump relay): valves on supply group
/// 0 with a peak-and-hold economiser at 55 % of pull-in; the pump on group 1 at full drive with a
/// winding heat rating of 0.6 W, 3 s (invented).
pub fn channel_config(i: usize) -> coilwise_driver::ChannelConfig {
    use coilwise::schedule::{HeatRating, HeatRatings, HoldPlan};
    use coilwise::{Amps, Hertz, Seconds, Ticks, Watts};
    use coilwise_driver::{ChannelConfig, ChannelOptions};
    let design = match i {
        0 => valve_design(TICK_HZ),
        1 => valve_b_design(),
        2 => valve_c_design(),
        _ => pump_design(),
    }
    .expect("rig design");
    let hold = |d: &DriverDesign| HoldPlan {
        current: Amps::new(0.55 * d.circuit.coil().pull_in_current().value()),
        frequency: Hertz::new(HOLD_HZ),
    };
    let options = match i {
        0 | 1 => ChannelOptions::new(Ticks(100)).with_hold(hold(&design)),
        2 => ChannelOptions::new(Ticks(80)).with_hold(hold(&design)),
        _ => ChannelOptions::new(Ticks(8))
            .in_group(1)
            .with_heat(HeatRatings {
                clamp: None,
                coil: Some(HeatRating {
                    power: Watts::new(0.6),
                    time_constant: Seconds::new(3.0),
                }),
            }),
    }
    .with_noise(0.6)
    .with_criteria(linear_build());
    ChannelConfig::from_design(&design, &options).expect("rig config")
}

/// The rig's simulated coils have neither an eddy-current path nor saturation (the plant's
/// linear magnetics), and are declared so: no eddy or saturation envelope, so the verdicts keep
/// their full resistance sensitivity.
fn linear_build() -> coilwise::diagnosis::Criteria {
    let mut c = coilwise::diagnosis::Criteria::default();
    c.fast_slope = 0.0;
    c.fast_tau = 0.0;
    c.slow_tau = 0.0;
    c.slow_slope = 0.0;
    c
}

/// Amperes per count of channel `i`'s converter.
pub fn amps_per_count(i: usize) -> f32 {
    if i == 3 {
        PUMP_SENSE.amps_per_count()
    } else {
        VALVE_SENSE.amps_per_count()
    }
}

/// Supply group of channel `i`.
pub fn group(i: usize) -> usize {
    usize::from(i == 3)
}
