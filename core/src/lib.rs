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
