//! Closed-form physics of a switched coil: first-order rise and release, clamps, energy,
//! off-time and repetition limits.

pub mod circuit;
pub mod clamp;
pub mod coil;
pub mod first_order;
pub mod off_time;
pub mod repetition;
