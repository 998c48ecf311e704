//! The greenhouse rig of the host tests: the same parts as the QEMU firmware, from
//! `coilwise-rig` (the designs the driver is given, `coilwise_rig::scenario`, and the coils as
//! built that the numerical plant simulates, `coilwise_rig::parts`, fitted by
//! `coilwise_rig::hardware`). Every value is invented for
//! the demo and stands for no real part.
//!
//! One difference from the firmware: the host rig's plant is linear (no eddy path on the pump
//! relay, no saturation), and the channels are declared so ([`linear_build`]).
#![allow(dead_code)]

pub use coilwise_rig::scenario::{CHANNELS, INRUSH_CAP, TICK_HZ};

use coilwise_rig::scenario::{channel, ChannelSpec};

/// Channel `i`'s spec (valves A, B, C, pump relay).
fn spec(i: usize) -> ChannelSpec {
    channel(i).expect("rig channel").expect("rig design")
}

/// Design and driver options of channel `i` as the firmware's scenario gives them (valves on
/// supply group 0 with a peak-and-hold economiser at 55 % of pull-in; the pump on group 1 at full
/// drive with a winding heat rating), declared with the rig's [`linear_build`].
pub fn channel_config(i: usize) -> coilwise_driver::ChannelConfig {
    let s = spec(i);
    let options = s.options().with_criteria(linear_build());
    coilwise_driver::ChannelConfig::from_design(&s.design, &options).expect("rig config")
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
