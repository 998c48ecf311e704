//! The demo scenario: a small greenhouse controller (**invented**). Three 24 V solenoid valves
//! (irrigation zones) and a 12 V pump relay, each with its own coil, clamp and tolerance data.
//!
//! Every value here is invented for the demo and stands for no real part; a real design takes its
//! values from the component datasheets. Coils store energy and the switch sees the clamp voltage
//! on top of the supply: check any real design against the datasheets, local electrical codes and
//! licensed practice.
//!
//! This module holds what the *firmware* knows about its hardware (the datasheet view). What the
//! simulated hardware really is (each coil a little off nominal, at 25 °C, with its own armature)
//! lives in [`crate::parts`].

use coilwise::schedule::{HeatRating, HeatRatings, HoldPlan};
use coilwise::{
    Amps, Celsius, Circuit, Clamp, Coil, DriverDesign, Error, Henries, Hertz, Ohms, Seconds,
    SupplyRange, Switch, TemperatureRange, TickRate, Ticks, Tolerances, Topology, Volts, Watts,
};
use coilwise_driver::{ChannelConfig, ChannelOptions, SetupError};

/// Number of coil channels of the controller.
pub const CHANNELS: usize = 4;

/// The channels' names for the log, in channel order (all the run needs of the specs).
pub type Names = [&'static str; CHANNELS];

/// Scheduler and measurement tick rate, Hz (1 µs per tick).
pub const TICK_HZ: u32 = 1_000_000;

/// Supply group of the 24 V valve rail (the driver's `ChannelOptions::supply_group`).
pub const VALVE_RAIL: u8 = 0;
/// Supply group of the 12 V pump-relay rail.
pub const PUMP_RAIL: u8 = 1;

/// A supply group's name for the log.
pub fn rail_name(group: u8) -> &'static str {
    match group {
        VALVE_RAIL => "24 V valve rail",
        PUMP_RAIL => "12 V pump rail",
        _ => "supply rail",
    }
}

/// At most this many coils in their pull-in (inrush) window at once.
pub const INRUSH_CAP: u8 = 1;

/// Hold PWM frequency the economiser duty is computed for, Hz (the board's PWM carrier).
pub const HOLD_HZ: f32 = 2_000.0;

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

/// Everything the firmware knows about one channel.
#[derive(Clone, Copy, Debug)]
pub struct ChannelSpec {
    /// Short name for the log.
    pub name: &'static str,
    /// Supply group (rail): [`VALVE_RAIL`] or [`PUMP_RAIL`].
    pub rail: u8,
    /// Coil, drive, clamp, ranges and tolerances.
    pub design: DriverDesign,
    /// Current sense.
    pub sense: SenseDesign,
    /// Peak-and-hold: the average current to hold the armature with, as a fraction of the
    /// pull-in current (`None`: no economiser, full drive for the whole pulse).
    pub hold_fraction: Option<f32>,
    /// Winding heat rating for the scheduler's thermal budget, (W, thermal time constant s).
    pub coil_rating: Option<(f32, f32)>,
    /// Sample period of the rise capture on a real pulse, ticks.
    pub rise_period: u32,
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

/// Channel `index` of the controller's four, in channel order: valves A, B, C, pump relay
/// (`None` past the last). One at a time, so a caller can build the set in place (e.g. in a
/// `static`) without a copy of all four on its stack.
///
/// Valves hold at PWM after pull-in (economiser, invented: 55 % of the pull-in current); the
/// pump relay runs at full drive and has a winding heat rating (invented: 0.6 W continuous,
/// 3 s thermal time constant), so back-to-back pump runs meet the scheduler's thermal budget.
#[inline(never)]
pub fn channel(index: usize) -> Option<Result<ChannelSpec, Error>> {
    let valve = |name, design: Result<DriverDesign, Error>, rise_period| {
        design.map(|design| ChannelSpec {
            name,
            rail: VALVE_RAIL,
            design,
            sense: VALVE_SENSE,
            hold_fraction: Some(0.55),
            coil_rating: None,
            rise_period,
        })
    };
    Some(match index {
        0 => valve("valve A", valve_design(TICK_HZ), 100),
        1 => valve("valve B", valve_b_design(), 100),
        2 => valve("valve C", valve_c_design(), 80),
        3 => pump_design().map(|design| ChannelSpec {
            name: "pump relay",
            rail: PUMP_RAIL,
            design,
            sense: PUMP_SENSE,
            hold_fraction: None,
            coil_rating: Some((0.6, 3.0)),
            rise_period: 8,
        }),
        _ => return None,
    })
}

impl ChannelSpec {
    /// What the driver is given for this channel: limits, healthy bands and diagnostic pulse
    /// from the design, the economiser at [`HOLD_HZ`], the thermal rating, the rise capture.
    ///
    /// # Errors
    /// As [`ChannelConfig::from_design`].
    #[inline(never)]
    pub fn config(&self) -> Result<ChannelConfig, SetupError> {
        ChannelConfig::from_design(&self.design, &self.options())
    }

    /// The driver options of [`ChannelSpec::config`]: supply group, converter noise, the
    /// economiser at [`HOLD_HZ`], the thermal rating, the rise capture period.
    pub fn options(&self) -> ChannelOptions {
        let mut o = ChannelOptions::new(Ticks(self.rise_period))
            .in_group(self.rail)
            .with_noise(self.sense.noise_counts);
        if let Some(f) = self.hold_fraction {
            o = o.with_hold(HoldPlan {
                current: Amps::new(f * self.design.circuit.coil().pull_in_current().value()),
                frequency: Hertz::new(HOLD_HZ),
            });
        }
        if let Some((p, tau)) = self.coil_rating {
            o = o.with_heat(HeatRatings {
                clamp: None,
                coil: Some(HeatRating {
                    power: Watts::new(p),
                    time_constant: Seconds::new(tau),
                }),
            });
        }
        o
    }
}
