//! Closed-form physics of a switched coil: first-order rise and release, clamps (the RC snubber
//! second-order), energy, off-time and repetition limits, switch drive, hold PWM, heating, and
//! capacitive nodes.

pub mod circuit;
pub mod clamp;
pub mod coil;
pub mod domain;
pub mod drive;
pub mod first_order;
pub mod heating;
pub mod hold;
mod ln;
pub mod off_time;
pub mod rc_node;
pub mod release;
pub mod repetition;
mod root;
pub mod snubber;
