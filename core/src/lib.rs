//! # coilwise
//!
//! Timing, energy and stress of a transistor-switched coil (relay, solenoid valve, contactor), in
//! closed form, for firmware: `no_std`, no heap, no panics, f32.
//!
//! Layers, each using only the ones above it:
//!
//! - [`units`], [`error`], [`time`]: SI newtypes, the error type, timer ticks;
//! - [`physics`]: the coil and its drive circuit, rise, release per clamp, energy, off-time,
//!   switch drive check, hold PWM, coil heating, capacitive nodes;
//! - [`design`]: one call for a whole driver design's timing budget;
//! - [`diagnosis`]: coil faults from the measured current rise (bands, fit, verdicts);
//! - [`schedule`]: a fixed-capacity pulse scheduler on integer ticks that keeps every channel's limits.
//!
//! # Cargo features
//!
//! A firmware pays in flash only for what it uses: what it never calls the linker drops; what is
//! chosen at run time — the clamp type, the scheduler's thermal buckets — has a feature each. A
//! feature that is off refuses, never guesses: a clamp type left out gives
//! `Error::Invalid { param: Param::ClampType, why: Why::FeatureDisabled }` from
//! [`Clamp::validate`] (and so from every clamp constructor and [`Circuit::new`]);
//! a thermal bucket or heat rating without `thermal-budget` gives
//! [`schedule::LimitsError::FeatureDisabled`]. [`ClampKind::is_built`] tells which clamp types a
//! build has. The enum variants exist in every build.
//!
//! | feature | default | adds |
//! |---|---|---|
//! | `defmt` | off | `defmt::Format` on every public type |
//! | `all-clamps` | on | every `clamp-…` feature below |
//! | `clamp-diode` | on (`all-clamps`) | [`Clamp::Diode`] |
//! | `clamp-diode-zener` | on (`all-clamps`) | [`Clamp::DiodeZener`] |
//! | `clamp-diode-resistor` | on (`all-clamps`) | [`Clamp::DiodeResistor`] |
//! | `clamp-across-switch` | on (`all-clamps`) | [`Clamp::AcrossSwitch`] |
//! | `clamp-unclamped` | on (`all-clamps`) | [`Clamp::Unclamped`] |
//! | `clamp-tvs-across-coil` | on (`all-clamps`) | [`Clamp::TvsAcrossCoil`] |
//! | `clamp-rc-snubber` | on (`all-clamps`) | [`Clamp::RcSnubber`] and its second-order release ([`SnubberRelease`] through [`Release::snubber`]) |
//! | `thermal-budget` | on | the scheduler's thermal buckets ([`schedule::ChannelLimits::with_clamp_heat`], [`schedule::ChannelLimits::with_coil_heat`], heat ratings in [`schedule::ChannelLimits::from_budget`]) |
//!
//! All results are engineering estimates from first-order models. They do not replace the
//! component datasheets, local electrical codes, or licensed practice.
#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod design;
pub mod diagnosis;
pub mod error;
pub mod physics;
pub mod schedule;
pub mod time;
pub mod units;
mod wide;

pub use design::{DriverDesign, Figures, TickBudget, TimingBudget, CORNER_COUNT};
pub use diagnosis::{Finding, Verdict};
pub use error::{Error, Limit, Param, Why};
pub use physics::circuit::{
    Circuit, OperatingPoint, SupplyRange, Switch, TemperatureRange, Tolerances, Topology,
};
pub use physics::clamp::{Clamp, ClampKind, EnergySplit, Release};
pub use physics::coil::{Armature, Coil};
pub use physics::drive::{
    check_bipolar, check_mosfet, BaseDrive, BipolarCheck, GateDrive, MosfetCheck, COMMON_OVERDRIVE,
};
pub use physics::first_order::FirstOrder;
pub use physics::heating::SelfHeating;
pub use physics::hold::Hold;
pub use physics::rc_node::{RcNode, SwitchOffEdge};
pub use physics::snubber::{SnubberEnergy, SnubberRelease};
pub use time::{Instant, TickRate, Ticks};
pub use units::*;
