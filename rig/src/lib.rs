//! The greenhouse test rig (**invented**): one controller with three 24 V solenoid valves and a
//! 12 V pump relay, shared by the QEMU example firmware and the driver library's host tests so
//! that both run the same parts and check the same constraints.
//!
//! - [`scenario`]: what the firmware knows of its hardware (the datasheet view): each channel's
//!   [`coilwise::DriverDesign`], current sense and driver options;
//! - [`parts`]: what the simulated hardware really is (each coil a little off nominal, with its
//!   armature and, for the pump relay, an eddy-current path) for the numerical plant of
//!   `coilwise-host-tests`;
//! - [`hardware`]: the simulated channel hardware (plant, converter, comparator, drive, rise
//!   capture) both wrap in their own handles;
//! - [`monitor`]: an independent check of the edges the pins really made against the limits the
//!   scheduler was given and against what the simulated coils did.
//!
//! Every value is invented for the demo and stands for no real part. Coils store energy and the
//! switch sees the clamp voltage on top of the supply: check any real design against the
//! datasheets, local electrical codes and licensed practice.
//!
//! `no_std`, no heap. Feature `defmt`: `defmt::Format` on the monitor's types.

#![no_std]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod hardware;
pub mod monitor;
pub mod parts;
pub mod scenario;
